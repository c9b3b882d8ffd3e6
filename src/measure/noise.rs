//! Input-referred noise with the inputs shorted (or through 51 kΩ ‖ 47 nF): RMS and
//! peak-to-peak in a band, the density and its 1/f corner.

use serde::Serialize;

use super::MeasureError;
use crate::dsp::chain::{self, ChainSettings};
use crate::dsp::spectrum::{Welch, segment_for};

/// Default band, Hz (the diagnostic ECG band; docs/REFERENCES.md §3).
pub const BAND_HZ: (f64, f64) = (0.05, 150.0);
/// Default limit, µV peak-to-peak (recalled from memory of the ECG standards: 30 µV p-v with
/// 51 kΩ ‖ 47 nF in the leads; docs/REFERENCES.md §3 marks it [M]).
pub const LIMIT_P2P_UV: f64 = 30.0;

/// The report of `measure noise` (its keys are the contract).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Noise {
    pub band_hz: (f64, f64),
    pub rms_uv: f64,
    /// Largest peak-to-peak over 10 s windows (the whole record if shorter).
    pub p2p_uv: f64,
    /// [freq_hz, µV/√Hz] pairs.
    pub density_uv_per_rthz: Vec<[f64; 2]>,
    /// Where the density falls to √2 × its white floor, Hz (None: no 1/f rise seen).
    pub corner_hz: Option<f64>,
    /// White floor (median density from 10 Hz to half the band's top), µV/√Hz.
    pub floor_uv_per_rthz: f64,
    pub limit_p2p_uv: f64,
    pub pass: bool,
}

/// Measures the noise of `x` (µV at `fs`) in `band`, against `limit_p2p_uv`: RMS from the
/// Welch density integrated over the band, peak-to-peak after a band-pass (high-pass order 2,
/// low-pass order 4) over 10 s windows.
///
/// # Errors
/// A band that cannot be designed at this rate, or a record shorter than 2 s.
pub fn measure(
    x: &[f64],
    fs: f64,
    band: (f64, f64),
    limit_p2p_uv: f64,
) -> Result<Noise, MeasureError> {
    if (x.len() as f64) < 2.0 * fs {
        return Err(MeasureError::TooShort {
            len: x.len(),
            segment: (2.0 * fs) as usize,
        });
    }
    let hi = band.1.min(crate::dsp::highest_corner_hz(fs));
    let settings = ChainSettings::band((band.0 > 0.0).then_some((band.0, 2)), Some((hi, 4)));
    let sections = settings
        .design(fs)
        .map_err(|e| MeasureError::Band(e.to_string()))?;
    // Peak-to-peak in the time domain: the band's chain run forward from the steady state of
    // the first sample (no start-up transient from an offset).
    let mut y: Vec<f64> = x.to_vec();
    chain::filter_settled(&sections, &mut y);
    let win = ((10.0 * fs) as usize).min(y.len()).max(1);
    let p2p = y
        .chunks(win)
        .filter(|c| c.len() == win || y.len() < win)
        .map(|c| {
            let (lo, hi) = c
                .iter()
                .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
            hi - lo
        })
        .fold(0.0f64, f64::max);
    let seg = segment_for(fs, 8.0)
        .min(y.len().next_power_of_two() / 2)
        .clamp(256, 16384);
    let psd = Welch::new(seg)
        .and_then(|mut w| w.compute(x, fs))
        .map_err(|e| MeasureError::Band(e.to_string()))?;
    // RMS in the band: the Welch density integrated from `lo` to `hi` (exact band edges, no
    // filter transients).
    let rms = psd
        .freqs_hz
        .iter()
        .zip(&psd.density)
        .filter(|(f, _)| **f >= band.0 && **f <= hi)
        .map(|(_, d)| d * psd.bin_hz)
        .sum::<f64>()
        .sqrt();
    let density: Vec<[f64; 2]> = psd
        .freqs_hz
        .iter()
        .zip(&psd.density)
        .skip(1)
        .filter(|(f, _)| **f <= hi)
        .map(|(f, d)| [*f, d.sqrt()])
        .collect();
    let mut white: Vec<f64> = density
        .iter()
        .filter(|p| p[0] >= 10.0 && p[0] <= 0.5 * hi)
        .map(|p| p[1])
        .collect();
    white.sort_by(f64::total_cmp);
    let floor = white.get(white.len() / 2).copied().unwrap_or(0.0);
    // The 1/f corner: the highest frequency below 10 Hz where the density, smoothed over five
    // bins, is still above √2 × the floor.
    let smooth: Vec<(f64, f64)> = density
        .windows(5)
        .map(|w| (w[2][0], w.iter().map(|p| p[1]).sum::<f64>() / 5.0))
        .collect();
    let corner = smooth
        .iter()
        .filter(|(f, d)| *f < 10.0 && *d > std::f64::consts::SQRT_2 * floor)
        .map(|(f, _)| *f)
        .fold(None, |m: Option<f64>, f| Some(m.map_or(f, |m| m.max(f))));
    Ok(Noise {
        band_hz: (band.0, hi),
        rms_uv: rms,
        p2p_uv: p2p,
        density_uv_per_rthz: density,
        corner_hz: corner,
        floor_uv_per_rthz: floor,
        limit_p2p_uv,
        pass: p2p <= limit_p2p_uv,
    })
}
