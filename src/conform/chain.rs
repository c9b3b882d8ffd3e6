//! Checks of a chain as set against the ECG standards' low- and high-frequency requirements.
//!
//! - **Impulse test**: a 3 mV × 100 ms pulse through the chain from rest. After the pulse the
//!   output may leave the baseline by at most 100 µV and recover with a slope of at most
//!   300 µV/s (Maji & Burke, IEEE TIM 69(3):825–835, 2020; docs/REFERENCES.md §3). Measured from
//!   150 ms after the pulse's end (the low-pass's ringing at the falling edge is over by then) to
//!   5 s after it.
//! - **Gain at 0.67 Hz**: at least −0.9 dB for diagnostic recordings, −3 dB for monitoring
//!   (docs/REFERENCES.md §3, from the J Electrocardiol 2009 note; the figures recalled from memory).
//! - **Upper corner**: the −3 dB frequency above the pass band, at or above 150 Hz (diagnostic)
//!   or 40 Hz (monitoring) (Kligfield et al. 2007; Prutchi & Norris table 2.1). The mains notch
//!   is left out of this figure (a narrow notch is allowed in both modes).
//! - **ST shift**: the change of the ST level (60 ms after the QRS, against the PR segment) the
//!   chain makes on the simulator's beat at 60 bpm; within ±100 µV (common practice: the
//!   impulse test's limit exists to keep ST distortion under 0.1 mV).
//!
//! With `zero_phase` the chain is run forward and backward (recordings only), as
//! `leadline filter --zero-phase` does.

use serde::Serialize;

use crate::dsp::chain::{self, ChainSettings};
use crate::dsp::design::DesignError;
use crate::dsp::response;
use crate::dsp::{Design, Notch, Section};
use crate::sim::rhythm::{BeatShape, ScheduledHeart};

/// What the chain is for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Mode {
    /// Bedside-style monitoring: 0.67 Hz at −3 dB, 40 Hz upper corner.
    Monitoring,
    /// Diagnostic recording: 0.67 Hz at −0.9 dB, 150 Hz upper corner.
    Diagnostic,
}

impl Mode {
    /// Least gain at 0.67 Hz, dB.
    pub fn min_gain_db(self) -> f64 {
        match self {
            Mode::Monitoring => -3.0,
            Mode::Diagnostic => -0.9,
        }
    }

    /// Least upper corner, Hz.
    pub fn upper_hz(self) -> f64 {
        match self {
            Mode::Monitoring => 40.0,
            Mode::Diagnostic => 150.0,
        }
    }
}

/// Pulse of the impulse test: height µV, length s, start s.
pub const PULSE_UV: f64 = 3000.0;
/// Length of the pulse, s.
pub const PULSE_S: f64 = 0.1;
const PULSE_START_S: f64 = 1.0;
/// The recovery is judged from this long after the pulse's end…
pub const JUDGE_FROM_S: f64 = 0.15;
/// …to this long after it.
pub const JUDGE_TO_S: f64 = 5.0;
/// Limits of the impulse test.
pub const UNDERSHOOT_LIMIT_UV: f64 = 100.0;
/// Limit of the recovery slope, µV/s.
pub const SLOPE_LIMIT_UV_PER_S: f64 = 300.0;
/// Limit of the ST shift, µV either way.
pub const ST_LIMIT_UV: f64 = 100.0;

/// Pass or fail of each item.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct Passes {
    pub impulse_undershoot: bool,
    pub impulse_slope: bool,
    pub gain_at_0_67_hz: bool,
    pub upper_corner: bool,
    pub st_shift: bool,
}

/// The report of `leadline conform` (its JSON keys are the contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Conformance {
    /// The chain, in processing order.
    pub chain: String,
    pub fs_hz: f64,
    pub mode: Mode,
    pub zero_phase: bool,
    /// Largest departure below (or above) the baseline after the pulse, µV.
    pub impulse_undershoot_uv: f64,
    /// Steepest slope of the recovery, µV/s.
    pub impulse_slope_uv_per_s: f64,
    /// Gain at 0.67 Hz, dB (|H|² in dB with zero phase).
    pub gain_db_at_0_67_hz: f64,
    /// Upper −3 dB corner without the notch, Hz (None: no drop below Nyquist).
    pub upper_corner_hz: Option<f64>,
    /// ST level after − before the chain on the simulator's beat, µV.
    pub st_shift_uv: f64,
    pub pass: Passes,
    /// What to change, one line per failed item.
    pub advice: Vec<String>,
}

/// `x` through the chain as it runs. With the mains canceller the live chain itself runs
/// (high-pass, canceller, the other sections); forward and backward, the canceller runs once,
/// forwards, before the sections.
fn run(design: &Design, x: &[f64], zero_phase: bool) -> Vec<f64> {
    let s = design.settings();
    let sections = design.sections();
    if zero_phase {
        let mut x = x.to_vec();
        if s.cancel.enabled {
            let mut c = crate::dsp::canceller::Canceller::new(
                design.fs_hz(),
                s.notch.mains_hz,
                s.cancel.harmonics,
            );
            c.run_block(&mut x);
        }
        // The signals here are seconds long: far longer than the padding.
        return chain::zero_phase(sections, &x).unwrap_or(x);
    }
    let mut y = x.to_vec();
    if s.cancel.enabled
        && let Ok(mut live) = chain::Chain::new(*s, design.fs_hz(), 1)
    {
        live.settle(0, y.first().copied().unwrap_or(0.0));
        live.process_channel(0, &mut y);
        return y;
    }
    chain::filter_settled(sections, &mut y);
    y
}

/// The impulse test's pulse at `fs`: zeros, 3 mV for 100 ms from 1 s, zeros for 5.5 s.
pub fn pulse(fs: f64) -> (Vec<f64>, usize) {
    let n0 = (PULSE_START_S * fs).round() as usize;
    let n1 = n0 + (PULSE_S * fs).round() as usize;
    let n = n1 + ((JUDGE_TO_S + 0.5) * fs).round() as usize;
    let x = (0..n)
        .map(|i| if (n0..n1).contains(&i) { PULSE_UV } else { 0.0 })
        .collect();
    (x, n1)
}

/// Undershoot (µV, the largest |departure| from 0) and slope (µV/s, the largest |first
/// difference| × fs) of `y` over the judged stretch after the pulse ending at `end`.
pub fn judge_recovery(y: &[f64], end: usize, fs: f64) -> (f64, f64) {
    let a = end + (JUDGE_FROM_S * fs).round() as usize;
    let b = (end + (JUDGE_TO_S * fs).round() as usize).min(y.len());
    let part = &y[a.min(b)..b];
    let undershoot = part.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let slope = part
        .windows(2)
        .fold(0.0f64, |m, w| m.max((w[1] - w[0]).abs() * fs));
    (undershoot, slope)
}

/// Runs every check on a designed chain.
///
/// # Errors
/// [`DesignError`] when the chain without its notch (for the upper corner) cannot be designed.
pub fn check(design: &Design, mode: Mode, zero_phase: bool) -> Result<Conformance, DesignError> {
    let (settings, fs) = (design.settings(), design.fs_hz());
    let sections = design.sections();
    let gain = settings.gain;
    // Impulse test, judged on the chain's own scale (its plain gain divided out).
    let (x, end) = pulse(fs);
    let y: Vec<f64> = run(design, &x, zero_phase)
        .iter()
        .map(|v| v / gain)
        .collect();
    let (undershoot, slope) = judge_recovery(&y, end, fs);

    let mag = |secs: &[Section], f: f64| {
        let m = response::magnitude(secs, f, fs) / gain.abs();
        if zero_phase { m * m } else { m }
    };
    let gain_db = crate::numeric::db20(mag(sections, 0.67));

    // Upper corner without the notch: first frequency above the pass band (10 Hz) where the
    // gain falls 3 dB below it.
    let no_notch = ChainSettings {
        notch: Notch {
            enabled: false,
            ..settings.notch
        },
        ..*settings
    };
    let plain = no_notch.design(fs)?;
    let reference = mag(&plain, 10.0);
    let mut upper = None;
    let mut f = 10.0;
    while f < 0.5 * fs {
        if mag(&plain, f) < reference / std::f64::consts::SQRT_2 {
            // Refine between the last two steps by bisection.
            let (mut lo, mut hi) = (f / 1.01, f);
            for _ in 0..40 {
                let mid = 0.5 * (lo + hi);
                if mag(&plain, mid) < reference / std::f64::consts::SQRT_2 {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            upper = Some(0.5 * (lo + hi));
            break;
        }
        f *= 1.01;
    }

    let st = st_shift(design, zero_phase) / gain;

    let pass = Passes {
        impulse_undershoot: undershoot <= UNDERSHOOT_LIMIT_UV,
        impulse_slope: slope <= SLOPE_LIMIT_UV_PER_S,
        gain_at_0_67_hz: gain_db >= mode.min_gain_db(),
        upper_corner: upper.is_none_or(|u| u >= mode.upper_hz()),
        st_shift: st.abs() <= ST_LIMIT_UV,
    };
    let mut advice = Vec::new();
    if !(pass.impulse_undershoot && pass.impulse_slope && pass.gain_at_0_67_hz && pass.st_shift) {
        advice.push(format!(
            "low frequencies: lower the high-pass corner (a first-order 0.05 Hz high-pass passes the impulse test{}), or filter recordings with zero phase (filter --zero-phase), which allows 0.67 Hz",
            if settings.highpass.enabled {
                format!("; this one is {} Hz, order {}", settings.highpass.corner_hz, settings.highpass.order)
            } else {
                String::new()
            }
        ));
    }
    if !pass.upper_corner {
        advice.push(format!(
            "high frequencies: the upper corner {:.1} Hz is below {} Hz for {} use: raise the low-pass corner",
            upper.unwrap_or(0.0),
            mode.upper_hz(),
            match mode {
                Mode::Monitoring => "monitoring",
                Mode::Diagnostic => "diagnostic",
            }
        ));
    }
    Ok(Conformance {
        chain: settings.describe(),
        fs_hz: fs,
        mode,
        zero_phase,
        impulse_undershoot_uv: undershoot,
        impulse_slope_uv_per_s: slope,
        gain_db_at_0_67_hz: gain_db,
        upper_corner_hz: upper,
        st_shift_uv: st,
        pass,
        advice,
    })
}

/// ST shift the chain makes on the simulator's beat (1 mV, 60 bpm, no noise), µV: the ST level
/// (60 ms after the end of the QRS) against the PR level (70 ms before R), after − before.
fn st_shift(design: &Design, zero_phase: bool) -> f64 {
    let fs = design.fs_hz();
    let beat = BeatShape::normal(1.0);
    let mut heart = ScheduledHeart::new(fs, vec![(1.0, beat)]);
    let x = heart.render_uv(20.0);
    let y = run(design, &x, zero_phase);
    // The beat at 15 s: well after any start-up, well before any end effect.
    let r = (15.0 * fs).round() as usize;
    let at = |v: &[f64], dt: f64| v[(r as f64 + dt * fs).round() as usize];
    let st_at = beat.qrs_s / 2.0 + 0.06;
    let level = |v: &[f64]| at(v, st_at) - at(v, -0.07);
    level(&y) - level(&x)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn only_highpass(corner_hz: f64, order: u32) -> ChainSettings {
        ChainSettings::band(Some((corner_hz, order)), None)
    }

    #[test]
    fn a_first_order_005_hz_high_pass_passes_by_hand() {
        // By hand for an analog first-order 0.05 Hz high-pass (τ = 3.183 s): right after the
        // pulse the output sits 3 mV × (1 − e^(−0.1/τ)) = 92.8 µV below zero, decaying with τ;
        // at +150 ms it is 92.8 · e^(−0.15/τ) = 88.5 µV and its slope 88.5 / τ = 27.8 µV/s.
        let c = check(
            &only_highpass(0.05, 1).design(1000.0).unwrap(),
            Mode::Diagnostic,
            false,
        )
        .unwrap();
        assert!((c.impulse_undershoot_uv - 88.5).abs() < 1.0, "{c:?}");
        assert!((c.impulse_slope_uv_per_s - 27.8).abs() < 1.0, "{c:?}");
        assert!(c.pass.impulse_undershoot && c.pass.impulse_slope, "{c:?}");
        // 0.67 Hz through a 0.05 Hz first-order high-pass: −0.024 dB.
        assert!((c.gain_db_at_0_67_hz + 0.024).abs() < 0.002, "{c:?}");
        assert_eq!(c.upper_corner_hz, None);
    }

    #[test]
    fn the_default_monitoring_chain_fails_the_impulse_test_and_says_what_to_do() {
        let c = check(
            &ChainSettings::default().design(500.0).unwrap(),
            Mode::Monitoring,
            false,
        )
        .unwrap();
        assert!(!c.pass.impulse_undershoot, "{c:?}");
        assert!(c.pass.gain_at_0_67_hz, "{c:?}");
        assert!(c.pass.upper_corner, "{c:?}");
        assert!((c.upper_corner_hz.unwrap() - 40.0).abs() < 0.1, "{c:?}");
        assert!(c.advice[0].contains("zero phase"), "{:?}", c.advice);
        let d = check(
            &ChainSettings::default().design(500.0).unwrap(),
            Mode::Diagnostic,
            false,
        )
        .unwrap();
        assert!(!d.pass.upper_corner && !d.pass.gain_at_0_67_hz, "{d:?}");
    }
}
