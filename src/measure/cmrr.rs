//! Common-mode rejection of a built front end: a common-mode sine of known amplitude on both
//! inputs tied together; the channel's input-referred output at that frequency is what leaks
//! through. CMRR = 20·log10(V_cm / V_diff) (docs/REFERENCES.md §3 and §9 #23 for the dB equivalents).

use serde::Serialize;

use super::{MeasureError, sine};

/// The report of `measure cmrr` (its keys are the contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Cmrr {
    pub cm_uv: f64,
    pub cm_hz: f64,
    /// Input-referred differential amplitude at cm_hz, µV (the same measure as cm_uv).
    pub diff_uv: f64,
    pub cmrr_db: f64,
    /// What the noise floor leaves: ± dB (two standard errors of the fitted amplitude).
    pub uncertainty_db: f64,
}

/// CMRR from `x` (µV at the electrodes, at `fs`) for a common-mode sine of `cm_uv` at `cm_hz`
/// (same measure: both RMS, or both peak). The frequency is refined within ±1 %.
///
/// # Errors
/// A record shorter than a second, or nothing at cm_hz.
pub fn measure(x: &[f64], fs: f64, cm_uv: f64, cm_hz: f64) -> Result<Cmrr, MeasureError> {
    if (x.len() as f64) < fs {
        return Err(MeasureError::TooShort {
            len: x.len(),
            segment: fs as usize,
        });
    }
    let f = crate::numeric::golden_max(0.99 * cm_hz, 1.01 * cm_hz, |f| {
        sine::fit_at(x, fs, f).amplitude
    });
    let fit = sine::fit_at(x, fs, f);
    // Peak amplitude → the measure the user gave: the fit's peak over √2 is RMS; a user who
    // gives peak values gets peak (the ratio is the same either way).
    let diff = fit.amplitude / std::f64::consts::SQRT_2;
    if diff.is_nan() || diff <= 0.0 {
        return Err(MeasureError::NoSine(cm_hz));
    }
    // Standard error of the fitted amplitude ≈ σ·√(2/N) (white residual).
    let se = fit.residual_rms * (2.0 / x.len() as f64).sqrt() / std::f64::consts::SQRT_2;
    let cmrr = crate::numeric::db20(cm_uv / diff);
    let hi = crate::numeric::db20(cm_uv / (diff - 2.0 * se).max(diff * 1e-6));
    let lo = crate::numeric::db20(cm_uv / (diff + 2.0 * se));
    Ok(Cmrr {
        cm_uv,
        cm_hz: f,
        diff_uv: diff,
        cmrr_db: cmrr,
        uncertainty_db: (hi - cmrr).max(cmrr - lo),
    })
}

/// CMRR at each steady step of a common-mode generator stepped by hand (`cm_uv` RMS at every
/// step): one figure per frequency.
///
/// # Errors
/// No steady steps, or a record too short.
pub fn stepped(x: &[f64], fs: f64, cm_uv: f64) -> Result<Vec<Cmrr>, MeasureError> {
    let steps = sine::steps(x, fs, 2.0)?;
    steps
        .iter()
        .map(|s| {
            let a = (s.start_s * fs) as usize;
            let b = ((s.end_s * fs) as usize).min(x.len());
            measure(&x[a..b], fs, cm_uv, s.freq_hz)
        })
        .collect()
}
