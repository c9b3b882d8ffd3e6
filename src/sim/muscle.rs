//! The simulator's muscle: surface-EMG-like noise in contractions of a chosen force.
//!
//! White Gaussian noise shaped by a 2nd-order Butterworth high-pass at 40 Hz and low-pass at
//! 150 Hz (a spectrum peaking near 80–100 Hz, the usual shape of surface EMG — common practice),
//! scaled to a set RMS and switched on in contractions with short linear ramps. With fatigue on,
//! each contraction's low-pass corner is lower than the last, so the median frequency falls from
//! contraction to contraction. Invented scenario data: no recording is copied.

use std::collections::VecDeque;

use serde::{Deserialize, Serialize};

use crate::dsp::design::{Section, butterworth_highpass, butterworth_lowpass};
use crate::rng::Rng;

/// Shaping corners, Hz.
const SHAPE_HP_HZ: f64 = 40.0;
const SHAPE_LP_HZ: f64 = 150.0;

/// The muscle's settings (contractions repeat: rest, on, rest, on …).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct MuscleSettings {
    /// Contraction force, % of maximum (0–100): the contraction's RMS is this share of
    /// `full_uv`.
    pub force_pct: f64,
    /// RMS at full force at the electrodes, µV.
    pub full_uv: f64,
    /// First onset, s.
    pub first_s: f64,
    /// Each contraction's length, s (from the start of the rise to the end of the fall).
    pub on_s: f64,
    /// Rest between contractions, s.
    pub rest_s: f64,
    /// Rise and fall, ms.
    pub ramp_ms: f64,
    /// The share of the heart's signal that reaches the electrodes (0–1): ECG contamination.
    pub ecg_share: f64,
    /// Fall of the shaping low-pass corner per contraction, % (fatigue; 0 for none).
    pub fatigue_pct: f64,
}

impl Default for MuscleSettings {
    /// The invented demo: a forearm flexor at 40 % force, 2 s on, 3 s off, some ECG.
    fn default() -> Self {
        Self {
            force_pct: 40.0,
            full_uv: 600.0,
            first_s: 2.0,
            on_s: 2.0,
            rest_s: 3.0,
            ramp_ms: 20.0,
            ecg_share: 0.15,
            fatigue_pct: 0.0,
        }
    }
}

impl MuscleSettings {
    /// The first setting out of range, as (name, value).
    pub fn invalid(&self) -> Option<(&'static str, f64)> {
        let checks = [
            ("force_pct", self.force_pct, 0.0, 100.0),
            ("full_uv", self.full_uv, 0.0, 1e5),
            ("first_s", self.first_s, 0.0, 1e6),
            ("on_s", self.on_s, 0.05, 1e6),
            ("rest_s", self.rest_s, 0.05, 1e6),
            ("ramp_ms", self.ramp_ms, 0.0, 1000.0),
            ("ecg_share", self.ecg_share, 0.0, 1.0),
            ("fatigue_pct", self.fatigue_pct, 0.0, 20.0),
        ];
        checks
            .into_iter()
            .find(|&(_, v, lo, hi)| !(v.is_finite() && v >= lo && v <= hi))
            .map(|(n, v, _, _)| (n, v))
    }
}

/// A 2nd-order section run directly (transposed form II).
#[derive(Debug, Clone)]
struct Biquad {
    s: Section,
    z1: f64,
    z2: f64,
}

impl Biquad {
    fn run(&mut self, x: f64) -> f64 {
        let y = self.s.b0 * x + self.z1;
        self.z1 = self.s.b1 * x - self.s.a1 * y + self.z2;
        self.z2 = self.s.b2 * x - self.s.a2 * y;
        y
    }
}

/// The running muscle of one channel.
#[derive(Debug, Clone)]
pub struct Muscle {
    fs: f64,
    settings: MuscleSettings,
    rng: Rng,
    shape: Vec<Biquad>,
    /// Scales the shaped noise to unit RMS.
    norm: f64,
    n: u64,
    contraction: u64,
    /// Truth: (onset, offset) sample indices of the contractions so far.
    truth: VecDeque<(u64, u64)>,
}

fn design(fs: f64, lp_hz: f64) -> (Vec<Biquad>, f64) {
    let mut sections = butterworth_highpass(2, SHAPE_HP_HZ.min(0.2 * fs), fs).unwrap_or_default();
    sections.extend(butterworth_lowpass(2, lp_hz.min(0.4 * fs), fs).unwrap_or_default());
    let mut shape: Vec<Biquad> = sections
        .into_iter()
        .map(|s| Biquad {
            s,
            z1: 0.0,
            z2: 0.0,
        })
        .collect();
    // Noise gain: the energy of the impulse response (2 s is long past its decay).
    let mut energy = 0.0;
    for i in 0..(2.0 * fs) as usize {
        let mut v = if i == 0 { 1.0 } else { 0.0 };
        for b in &mut shape {
            v = b.run(v);
        }
        energy += v * v;
    }
    for b in &mut shape {
        b.z1 = 0.0;
        b.z2 = 0.0;
    }
    (
        shape,
        if energy > 0.0 {
            energy.sqrt().recip()
        } else {
            0.0
        },
    )
}

impl Muscle {
    /// A muscle at `fs` Hz.
    pub fn new(fs: f64, settings: MuscleSettings, rng: Rng) -> Self {
        let (shape, norm) = design(fs, SHAPE_LP_HZ);
        Self {
            fs,
            settings,
            rng,
            shape,
            norm,
            n: 0,
            contraction: 0,
            truth: VecDeque::new(),
        }
    }

    /// Applies new settings from the next sample.
    pub fn update(&mut self, settings: MuscleSettings) {
        self.settings = settings;
    }

    /// Onsets and offsets (sample indices) of the recent contractions: the truth for tests.
    pub fn truth(&self) -> &VecDeque<(u64, u64)> {
        &self.truth
    }

    /// The activation (0–1) at sample `i`, and the index of its contraction.
    fn activation(&self, i: u64) -> (f64, Option<u64>) {
        let s = &self.settings;
        let t = i as f64 / self.fs - s.first_s;
        if t < 0.0 {
            return (0.0, None);
        }
        let period = s.on_s + s.rest_s;
        let k = (t / period).floor();
        let within = t - k * period;
        if within >= s.on_s {
            return (0.0, None);
        }
        let ramp = (s.ramp_ms * 1e-3).min(0.5 * s.on_s);
        let a = if ramp <= 0.0 {
            1.0
        } else {
            (within / ramp).min((s.on_s - within) / ramp).min(1.0)
        };
        (a, Some(k as u64))
    }

    /// The next sample, V at the electrodes.
    pub fn next_v(&mut self) -> f64 {
        let i = self.n;
        self.n += 1;
        let (a, k) = self.activation(i);
        if let Some(k) = k
            && k >= self.contraction
        {
            // A new contraction starts: record its truth and, with fatigue, reshape.
            let on = i;
            let off = on + (self.settings.on_s * self.fs).round() as u64;
            if self.truth.len() == 256 {
                self.truth.pop_front();
            }
            self.truth.push_back((on, off));
            self.contraction = k + 1;
            if self.settings.fatigue_pct > 0.0 {
                let lp = SHAPE_LP_HZ * (1.0 - self.settings.fatigue_pct / 100.0).powf(k as f64);
                let (shape, norm) = design(self.fs, lp.max(60.0));
                self.shape = shape;
                self.norm = norm;
            }
        }
        let mut v = self.rng.normal();
        for b in &mut self.shape {
            v = b.run(v);
        }
        let rms_v = self.settings.full_uv * 1e-6 * self.settings.force_pct / 100.0;
        a * rms_v * self.norm * v
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_contraction_has_the_set_rms_and_rest_is_silent() {
        let fs = 1000.0;
        let s = MuscleSettings {
            force_pct: 50.0,
            full_uv: 400.0,
            first_s: 1.0,
            on_s: 2.0,
            rest_s: 2.0,
            ..MuscleSettings::default()
        };
        let mut m = Muscle::new(fs, s, Rng::new(3));
        let x: Vec<f64> = (0..6000).map(|_| m.next_v() * 1e6).collect();
        assert!(x[..1000].iter().all(|v| *v == 0.0));
        let plateau = &x[1100..2900];
        let rms = (plateau.iter().map(|v| v * v).sum::<f64>() / plateau.len() as f64).sqrt();
        assert!((rms - 200.0).abs() < 10.0, "{rms}");
        assert!(x[3001..5000].iter().all(|v| *v == 0.0));
        let truth: Vec<_> = m.truth().iter().copied().collect();
        assert_eq!(truth, vec![(1000, 3000), (5000, 7000)]);
    }

    #[test]
    fn out_of_range_settings_are_named() {
        let s = MuscleSettings {
            force_pct: 120.0,
            ..MuscleSettings::default()
        };
        assert_eq!(s.invalid(), Some(("force_pct", 120.0)));
        assert_eq!(MuscleSettings::default().invalid(), None);
    }
}
