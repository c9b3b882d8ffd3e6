//! The adaptive mains canceller: adaptive noise cancelling with an internal sinusoidal reference
//! (Widrow et al., "Adaptive noise cancelling: principles and applications", Proc. IEEE
//! 63(12):1692–1716, 1975; docs/REFERENCES.md §14), one pair of LMS weights (cos, sin) per
//! harmonic, whose reference frequency follows the fundamental.
//!
//! The canceller estimates the interference m(n) = Σₕ aₕ cos(hθ) + bₕ sin(hθ) and subtracts it;
//! the weights adapt by LMS on the error e = x − m (time constant 0.35 s for the fundamental,
//! √h times shorter for harmonic h). A pure sinusoid is removed; a signal that does
//! not repeat at the mains frequency (the QRS) only disturbs the weights a little, far less than a
//! fixed notch of the same depth rings. When the mains frequency differs from the reference by δ,
//! the fundamental's phasor a₁ − j·b₁ turns at 2πδ rad/s: every 25 ms the turn is measured and
//! the reference frequency moved by half of it, plus a slowly learned rate of change (a
//! second-order phase-locked loop on the weights, so a drifting grid is followed without a
//! standing error), within ±1 Hz of the nominal 50 or 60 Hz.
//!
//! Switching on or off fades the subtraction over 100 ms (the weights keep adapting), so the
//! output never steps. A step in the input far steeper than its usual change (a calibration
//! pulse, an electrode pop) stops the learning for 150 ms, so the canceller does not learn the
//! step's own content at the mains frequencies and give it back afterwards.

use serde::{Deserialize, Serialize};
use std::f64::consts::TAU;

/// Harmonics the canceller can follow (the fundamental and 2–5).
pub const MAX_HARMONICS: u32 = 5;
/// The LMS time constant, s: 40 dB of cancellation within 2 s of a cold start (common
/// practice for the trade-off; our choice).
const TAU_S: f64 = 0.35;
/// How often the frequency is corrected, s, and the share of the measured error applied.
const TRACK_S: f64 = 0.025;
const TRACK_GAIN: f64 = 0.5;
/// The share of the measured error that goes into the frequency's rate of change (a second
/// integrator: a drifting mains is followed without a standing error).
const TRACK_RATE_GAIN: f64 = 0.003;
/// Corrections in a row under 0.02 Hz before the rate is learnt.
const LOCKED_CORRECTIONS: usize = 20;
/// The reference stays within this of the nominal frequency, Hz.
const TRACK_RANGE_HZ: f64 = 1.0;
/// The fade when switched on or off, s.
const FADE_S: f64 = 0.1;
/// A step in the input far steeper than its usual change (ten times its running mean
/// sample-to-sample change, and at least 50 µV per millisecond) stops the learning for 150 ms:
/// a calibration pulse or an electrode pop teaches the weights nothing, while the mains itself
/// and the QRS change far less steeply (our choice).
const EDGE_K: f64 = 10.0;
const EDGE_FLOOR_UV_PER_MS: f64 = 50.0;
const EDGE_HOLD_S: f64 = 0.15;
/// Below this amplitude (µV) of the fundamental the frequency is not corrected: there is no
/// mains to lock on.
const LOCK_MIN_UV: f64 = 0.5;

/// The canceller's settings, part of the chain.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct MainsCancel {
    /// In use (in place of the notch or with it).
    pub enabled: bool,
    /// The fundamental and harmonics up to this order (1–5), where below 0.45·fs.
    pub harmonics: u32,
}

impl Default for MainsCancel {
    fn default() -> Self {
        Self {
            enabled: false,
            harmonics: MAX_HARMONICS,
        }
    }
}

/// What the canceller has found, for the views.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CancelState {
    /// The tracked fundamental, Hz.
    pub hz: f64,
    /// The removed amplitude (RMS) per harmonic, fundamental first, µV.
    pub rms_uv: Vec<f64>,
}

/// One channel's canceller.
#[derive(Debug, Clone)]
pub struct Canceller {
    fs: f64,
    nominal_hz: f64,
    hz: f64,
    /// Reference phase θ, rad, in [0, 2π).
    phase: f64,
    /// (a, b) per harmonic.
    w: Vec<[f64; 2]>,
    mu: f64,
    track_every: usize,
    since_track: usize,
    last_angle: Option<f64>,
    /// The frequency's rate of change, Hz per correction, and the corrections in a row that
    /// were small.
    rate_hz: f64,
    locked: usize,
    mix: f64,
    target: f64,
    fade_step: f64,
    /// The last input, the running mean of its sample-to-sample change, its smoothing factor,
    /// and the samples the learning still waits after a step.
    x_last: f64,
    dx_mean: f64,
    dx_alpha: f64,
    edge_floor: f64,
    hold: usize,
    hold_len: usize,
    /// Samples left of the first quarter second, in which the usual change is learnt and
    /// nothing is held.
    warm: usize,
}

impl Canceller {
    /// A canceller at `fs` for mains at `nominal_hz` (50 or 60) and `harmonics` orders, on.
    pub fn new(fs: f64, nominal_hz: f64, harmonics: u32) -> Self {
        let top = crate::dsp::highest_corner_hz(fs);
        let n = (1..=harmonics.clamp(1, MAX_HARMONICS))
            .take_while(|h| f64::from(*h) * (nominal_hz + TRACK_RANGE_HZ) < top)
            .count();
        Self {
            fs,
            nominal_hz,
            hz: nominal_hz,
            phase: 0.0,
            w: vec![[0.0; 2]; n],
            mu: 1.0 / (TAU_S * fs),
            track_every: ((TRACK_S * fs).round() as usize).max(1),
            since_track: 0,
            last_angle: None,
            rate_hz: 0.0,
            locked: 0,
            mix: 1.0,
            target: 1.0,
            fade_step: 1.0 / (FADE_S * fs).max(1.0),
            x_last: f64::NAN,
            dx_mean: 0.0,
            dx_alpha: 1.0 / fs.max(1.0),
            edge_floor: EDGE_FLOOR_UV_PER_MS * 1000.0 / fs,
            hold: 0,
            hold_len: (EDGE_HOLD_S * fs).round() as usize,
            warm: (0.25 * fs) as usize,
        }
    }

    /// Starts from no subtraction and fades in.
    pub fn fade_in(&mut self) {
        self.mix = 0.0;
        self.target = 1.0;
    }

    /// Fades the subtraction in or out (the weights keep adapting either way).
    pub fn set_active(&mut self, on: bool) {
        self.target = if on { 1.0 } else { 0.0 };
    }

    /// True while it subtracts anything (on, or still fading out).
    pub fn subtracting(&self) -> bool {
        self.target > 0.0 || self.mix > 0.0
    }

    /// The harmonics it follows (fewer than asked when they would pass 0.45·fs).
    pub fn harmonics(&self) -> usize {
        self.w.len()
    }

    /// One sample in, one out.
    #[inline]
    pub fn run(&mut self, x: f64) -> f64 {
        if !x.is_finite() {
            return x;
        }
        let mut m = 0.0;
        let mut refs = [[0.0; 2]; MAX_HARMONICS as usize];
        // The harmonics' references by rotation from the fundamental's: one sin_cos a sample.
        let (s1, c1) = self.phase.sin_cos();
        let (mut s, mut c) = (s1, c1);
        for (h, r) in refs.iter_mut().enumerate().take(self.w.len()) {
            if h > 0 {
                (s, c) = (s * c1 + c * s1, c * c1 - s * s1);
            }
            *r = [c, s];
            m += self.w[h][0] * c + self.w[h][1] * s;
        }
        let e = x - m;
        if self.stepped(x) {
            self.advance();
            return self.output(x, m);
        }
        // Harmonic h turns h times faster for a given frequency error: its weights adapt √h
        // times faster, a balance between its lag and the ECG it would otherwise take out.
        let g = 2.0 * self.mu * e;
        for (h, (w, r)) in self.w.iter_mut().zip(&refs).enumerate() {
            let gh = g * ((h + 1) as f64).sqrt();
            w[0] += gh * r[0];
            w[1] += gh * r[1];
        }
        self.advance();
        self.output(x, m)
    }

    /// True while the input has just stepped far more steeply than it usually changes.
    fn stepped(&mut self, x: f64) -> bool {
        let dx = if self.x_last.is_nan() {
            0.0
        } else {
            (x - self.x_last).abs()
        };
        self.x_last = x;
        if self.warm > 0 {
            self.warm -= 1;
            self.dx_mean += (dx - self.dx_mean) * 10.0 * self.dx_alpha;
            return false;
        }
        let limit = (EDGE_K * self.dx_mean).max(self.edge_floor);
        if dx > limit {
            self.hold = self.hold_len;
        }
        self.dx_mean += (dx.min(limit) - self.dx_mean) * self.dx_alpha;
        if self.hold > 0 {
            self.hold -= 1;
            return true;
        }
        false
    }

    /// The reference phase one sample on, and the frequency corrected when due.
    fn advance(&mut self) {
        self.phase = (self.phase + TAU * self.hz / self.fs).rem_euclid(TAU);
        self.since_track += 1;
        if self.since_track == self.track_every {
            self.since_track = 0;
            self.track();
        }
    }

    /// The output for input `x` and estimate `m`, with the fade.
    fn output(&mut self, x: f64, m: f64) -> f64 {
        if self.mix != self.target {
            self.mix = if self.mix < self.target {
                (self.mix + self.fade_step).min(self.target)
            } else {
                (self.mix - self.fade_step).max(self.target)
            };
        }
        x - self.mix * m
    }

    /// Moves the reference frequency by part of the fundamental phasor's turn since last time.
    fn track(&mut self) {
        let [a, b] = self.w.first().copied().unwrap_or([0.0; 2]);
        if a.hypot(b) < LOCK_MIN_UV {
            self.last_angle = None;
            return;
        }
        let angle = (-b).atan2(a);
        if let Some(last) = self.last_angle {
            let turn = (angle - last + std::f64::consts::PI).rem_euclid(TAU) - std::f64::consts::PI;
            let delta_hz = turn / (TAU * TRACK_S);
            // The rate is learnt only once locked (half a second of small corrections): while
            // the loop pulls in, it would only overshoot.
            self.locked = if delta_hz.abs() < 0.02 {
                self.locked + 1
            } else {
                0
            };
            if self.locked >= LOCKED_CORRECTIONS {
                self.rate_hz = (self.rate_hz + TRACK_RATE_GAIN * delta_hz).clamp(-0.01, 0.01);
            }
            self.hz = (self.hz + TRACK_GAIN * delta_hz + self.rate_hz).clamp(
                self.nominal_hz - TRACK_RANGE_HZ,
                self.nominal_hz + TRACK_RANGE_HZ,
            );
        }
        self.last_angle = Some(angle);
    }

    /// The tracked frequency and the removed amplitudes.
    pub fn state(&self) -> CancelState {
        CancelState {
            hz: self.hz,
            rms_uv: self
                .w
                .iter()
                .map(|w| w[0].hypot(w[1]) / std::f64::consts::SQRT_2)
                .collect(),
        }
    }

    /// Filters a whole signal in place.
    pub fn run_block(&mut self, x: &mut [f64]) {
        for v in x {
            *v = self.run(*v);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Mains at `f0` (drifting by `drift_hz_per_s`), amplitude `a` µV peak, harmonics 2–5 at
    /// `rel` of it, for `secs` at `fs`.
    fn mains(fs: f64, secs: f64, f0: f64, drift_hz_per_s: f64, a: f64, rel: f64) -> Vec<f64> {
        let mut ph = 0.0;
        (0..(secs * fs) as usize)
            .map(|i| {
                let f = f0 + drift_hz_per_s * i as f64 / fs;
                ph += TAU * f / fs;
                a * (ph.sin()
                    + (2..=5)
                        .map(|h| rel * (h as f64 * ph + 0.3 * h as f64).sin())
                        .sum::<f64>())
            })
            .collect()
    }

    fn rms(x: &[f64]) -> f64 {
        (x.iter().map(|v| v * v).sum::<f64>() / x.len() as f64).sqrt()
    }

    #[test]
    fn a_cold_start_cancels_40_db_within_2_s_and_a_flat_input_gives_zero() {
        let fs = 1000.0;
        let x = mains(fs, 6.0, 60.0, 0.0, 200.0, 0.1);
        let mut c = Canceller::new(fs, 60.0, 5);
        let mut y = x.clone();
        c.run_block(&mut y);
        let after = rms(&y[2000..]);
        assert!(after < rms(&x) * 0.01, "{after}");
        let flat = vec![0.0; 4000];
        let mut c = Canceller::new(fs, 50.0, 5);
        let mut y = flat.clone();
        c.run_block(&mut y);
        assert!(y.iter().all(|v| *v == 0.0));
    }

    #[test]
    fn a_frequency_step_of_half_a_hertz_is_followed() {
        let fs = 1000.0;
        let mut x = mains(fs, 5.0, 60.0, 0.0, 200.0, 0.0);
        x.extend(mains(fs, 5.0, 60.5, 0.0, 200.0, 0.0));
        let mut c = Canceller::new(fs, 60.0, 1);
        let mut y = x.clone();
        c.run_block(&mut y);
        assert!((c.state().hz - 60.5).abs() < 0.02, "{}", c.state().hz);
        assert!(rms(&y[8000..]) < 2.0, "{}", rms(&y[8000..]));
    }

    #[test]
    fn switching_fades_and_never_outputs_nan() {
        let fs = 1000.0;
        let x = mains(fs, 4.0, 50.0, 0.0, 100.0, 0.0);
        let mut c = Canceller::new(fs, 50.0, 3);
        let mut y = Vec::new();
        for (i, &v) in x.iter().enumerate() {
            if i == 3000 {
                c.set_active(false);
            }
            y.push(c.run(v));
        }
        assert!(y.iter().all(|v| v.is_finite()));
        // No step larger than the interference's own sample-to-sample change.
        let max_step = y
            .windows(2)
            .map(|w| (w[1] - w[0]).abs())
            .fold(0.0, f64::max);
        let raw_step = x
            .windows(2)
            .map(|w| (w[1] - w[0]).abs())
            .fold(0.0, f64::max);
        assert!(max_step <= raw_step * 1.05, "{max_step} {raw_step}");
        assert!(!c.subtracting());
        assert!(rms(&y[3200..]) > 60.0, "off: the mains is back");
    }
}
