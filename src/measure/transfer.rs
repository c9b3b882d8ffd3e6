//! The transfer function of a built front end from two channels: stimulus (A) and output (B).
//!
//! Welch averaging as scipy.signal.csd / welch / coherence define it with their defaults
//! (periodic Hann, 50 % overlap, the mean removed from each segment, one-sided density):
//! H1 = Pxy / Pxx, coherence γ² = |Pxy|² / (Pxx · Pyy). Phase is unwrapped from low to high
//! frequency; group delay is −dφ/dω. Points with coherence under 0.9 are kept but marked, and
//! left out of the pass-band gain and the −3 dB corners.

use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};
use serde::Serialize;

use super::MeasureError;

/// Coherence below which a point is greyed out and not used for corners.
pub const MIN_COHERENCE: f64 = 0.9;

/// One frequency of the estimate.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TfPoint {
    pub freq_hz: f64,
    pub mag_db: f64,
    pub phase_deg: f64,
    pub coherence: f64,
    /// Group delay, s (NaN at the ends).
    pub group_delay_s: f64,
}

/// The estimate and what follows from it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Transfer {
    pub fs_hz: f64,
    pub segment: usize,
    pub segments: usize,
    pub points: Vec<TfPoint>,
    /// Pass-band gain: the median of the coherent points within 1 dB of the highest, dB.
    pub passband_gain_db: f64,
    /// Frequencies where the gain crosses passband − 3 dB (coherent points only), Hz.
    pub corners_hz: Vec<f64>,
    /// Lowest and highest frequency with coherence ≥ 0.9, Hz.
    pub coherent_range_hz: (f64, f64),
}

/// Pxy, Pxx, Pyy (unscaled sums over segments) and the number of segments.
type Spectra = (Vec<Complex<f64>>, Vec<f64>, Vec<f64>, usize);

/// Cross- and auto-spectra of two equally long records (Welch, density scaling).
fn spectra(x: &[f64], y: &[f64], n: usize) -> Result<Spectra, MeasureError> {
    if x.len() < n || y.len() < n {
        return Err(MeasureError::TooShort {
            len: x.len().min(y.len()),
            segment: n,
        });
    }
    let fft: Arc<dyn RealToComplex<f64>> = RealFftPlanner::<f64>::new().plan_fft_forward(n);
    let window: Vec<f64> = (0..n)
        .map(|i| 0.5 - 0.5 * (std::f64::consts::TAU * i as f64 / n as f64).cos())
        .collect();
    let (mut bx, mut by) = (fft.make_input_vec(), fft.make_input_vec());
    let (mut fx, mut fy) = (fft.make_output_vec(), fft.make_output_vec());
    let mut scratch = fft.make_scratch_vec();
    let bins = n / 2 + 1;
    let mut pxy = vec![Complex::new(0.0, 0.0); bins];
    let (mut pxx, mut pyy) = (vec![0.0; bins], vec![0.0; bins]);
    let step = n - n / 2;
    let len = x.len().min(y.len());
    let segments = (len - n) / step + 1;
    for s in 0..segments {
        let (sx, sy) = (&x[s * step..s * step + n], &y[s * step..s * step + n]);
        let (mx, my) = (
            sx.iter().sum::<f64>() / n as f64,
            sy.iter().sum::<f64>() / n as f64,
        );
        for i in 0..n {
            bx[i] = (sx[i] - mx) * window[i];
            by[i] = (sy[i] - my) * window[i];
        }
        let _ = fft.process_with_scratch(&mut bx, &mut fx, &mut scratch);
        let _ = fft.process_with_scratch(&mut by, &mut fy, &mut scratch);
        for k in 0..bins {
            pxy[k] += fx[k].conj() * fy[k];
            pxx[k] += fx[k].norm_sqr();
            pyy[k] += fy[k].norm_sqr();
        }
    }
    Ok((pxy, pxx, pyy, segments))
}

/// Samples in flat tops at the record's extremes: runs of 5 or more equal samples at the
/// largest or smallest value, counted when there are three or more such runs (a converter at
/// its rail; a smooth signal dwells on its peak for a sample or two).
pub fn clipped_samples(x: &[f64]) -> usize {
    let (lo, hi) = x
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
    if hi.is_nan() || hi <= lo {
        return 0;
    }
    let (mut runs, mut samples, mut len) = (0usize, 0usize, 0usize);
    let mut prev = f64::NAN;
    for &v in x.iter().chain(std::iter::once(&f64::NAN)) {
        if v == prev && (v == lo || v == hi) {
            len += 1;
        } else {
            if len >= 5 {
                runs += 1;
                samples += len;
            }
            len = 1;
        }
        prev = v;
    }
    if runs >= 3 { samples } else { 0 }
}

/// Estimates the transfer function from `stimulus` to `output` at `fs` with segments of `n`.
///
/// # Errors
/// [`MeasureError`]: a recording shorter than a segment, a flat stimulus, coherence low
/// everywhere.
pub fn estimate(
    stimulus: &[f64],
    output: &[f64],
    fs: f64,
    n: usize,
) -> Result<Transfer, MeasureError> {
    for x in [stimulus, output] {
        let c = clipped_samples(x);
        if c > 0 {
            return Err(MeasureError::Clipped(c));
        }
    }
    let (pxy, pxx, pyy, segments) = spectra(stimulus, output, n)?;
    let total: f64 = pxx.iter().skip(1).sum();
    let peak = pxx.iter().skip(1).fold(0.0f64, |m, v| m.max(*v));
    if total.is_nan() || total <= 0.0 || peak <= 1e-18 * total.max(1e-300) {
        return Err(MeasureError::FlatStimulus);
    }
    let mut points = Vec::with_capacity(pxy.len());
    let mut phase_prev = 0.0f64;
    let mut unwrap = 0.0f64;
    for k in 1..pxy.len() {
        let f = k as f64 * fs / n as f64;
        let h = pxy[k] / pxx[k].max(1e-300);
        let coh = pxy[k].norm_sqr() / (pxx[k] * pyy[k]).max(1e-300);
        let ph = h.arg();
        if k > 1 {
            let mut d = ph - phase_prev;
            while d > std::f64::consts::PI {
                d -= std::f64::consts::TAU;
            }
            while d < -std::f64::consts::PI {
                d += std::f64::consts::TAU;
            }
            unwrap += d;
        } else {
            unwrap = ph;
        }
        phase_prev = ph;
        points.push(TfPoint {
            freq_hz: f,
            mag_db: crate::numeric::db20(h.norm().max(1e-300)),
            phase_deg: unwrap.to_degrees(),
            coherence: if coh.is_finite() { coh.min(1.0) } else { 0.0 },
            group_delay_s: f64::NAN,
        });
    }
    for k in 1..points.len().saturating_sub(1) {
        let dphi = (points[k + 1].phase_deg - points[k - 1].phase_deg).to_radians();
        let dw = std::f64::consts::TAU * (points[k + 1].freq_hz - points[k - 1].freq_hz);
        points[k].group_delay_s = -dphi / dw;
    }
    let good: Vec<&TfPoint> = points
        .iter()
        .filter(|p| p.coherence >= MIN_COHERENCE)
        .collect();
    let (Some(first), Some(last)) = (good.first(), good.last()) else {
        return Err(MeasureError::LowCoherence);
    };
    // The pass band: the median of the coherent points within 1 dB of the highest (the highest
    // alone sits on the estimate's ripple).
    let top = good.iter().fold(f64::MIN, |m, p| m.max(p.mag_db));
    let mut near: Vec<f64> = good
        .iter()
        .map(|p| p.mag_db)
        .filter(|m| *m >= top - 1.0)
        .collect();
    let passband = crate::numeric::percentile(&mut near, 50.0);
    let level = passband - 3.0;
    let mut corners = Vec::new();
    for w in good.windows(2) {
        let (a, b) = (w[0], w[1]);
        // Adjacent coherent bins only: a crossing over a greyed stretch is not trusted.
        if (b.freq_hz - a.freq_hz) > 1.5 * fs / n as f64 {
            continue;
        }
        if (a.mag_db - level) * (b.mag_db - level) < 0.0 {
            // Log-frequency interpolation of the crossing.
            let t = (level - a.mag_db) / (b.mag_db - a.mag_db);
            corners.push((a.freq_hz.ln() + t * (b.freq_hz.ln() - a.freq_hz.ln())).exp());
        }
    }
    Ok(Transfer {
        fs_hz: fs,
        segment: n,
        segments,
        passband_gain_db: passband,
        corners_hz: corners,
        coherent_range_hz: (first.freq_hz, last.freq_hz),
        points,
    })
}
