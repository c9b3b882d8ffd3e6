//! Mains interference measured, not guessed: which mains (50 or 60 Hz region), its exact
//! frequency, the RMS of the fundamental and harmonics 2–5 in input-referred µV, and where the
//! rest of the power sits (ECG band 0.5–40 Hz, baseline wander below 0.5 Hz, muscle band above
//! 40 Hz without the mains lines), with a signal-to-mains ratio.
//!
//! The Welch PSD finds the region and the peak bin; the frequency is then refined by maximising
//! the magnitude of a Hann-windowed DFT of the whole record (golden-section search inside ±1 bin),
//! which resolves far finer than the bin width, and the amplitudes are read from that DFT
//! (coherent gain of the window removed).

use serde::Serialize;

use crate::dsp::spectrum::Psd;

/// Lines within this distance of a mains harmonic are left out of the muscle band, Hz.
const MAINS_GUARD_HZ: f64 = 1.0;
/// Search half-width around 50/60 Hz for the fundamental, Hz (EN 50160 allows −6 … +4 %).
const SEARCH_HZ: f64 = 3.0;

/// Why there is no report.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MainsError {
    /// 50 Hz must lie below Nyquist with room for the search.
    #[error("sample rate {0} Hz is too low to see 50/60 Hz mains")]
    RateTooLow(f64),
    /// The record is empty or shorter than the spectrum's segment.
    #[error("the record is too short for a mains measurement")]
    TooShort,
}

/// One line of the mains series.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Harmonic {
    /// 1 for the fundamental, 2… for harmonics.
    pub order: u32,
    /// Frequency, Hz.
    pub hz: f64,
    /// RMS at the electrodes, µV.
    pub rms_uv: f64,
}

/// Power by band, µV².
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BandPower {
    /// Baseline wander: above 0 Hz and below 0.5 Hz.
    pub wander_uv2: f64,
    /// ECG band: 0.5–40 Hz.
    pub ecg_uv2: f64,
    /// Muscle band: above 40 Hz, mains lines (±1 Hz) excluded.
    pub muscle_uv2: f64,
    /// All mains lines found (sum of the harmonics' RMS²).
    pub mains_uv2: f64,
}

/// The measurement.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MainsReport {
    /// Nominal region, 50 or 60 Hz.
    pub nominal_hz: f64,
    /// Measured fundamental, Hz.
    pub mains_hz: f64,
    /// Fundamental first, then harmonics 2… below Nyquist.
    pub harmonics: Vec<Harmonic>,
    /// Band powers.
    pub band_power: BandPower,
    /// ECG-band power over mains power, dB; None when either is nil (a flat or mains-free input
    /// has no such ratio).
    pub snr_db: Option<f64>,
    /// How far the fundamental's PSD peak stands above the median PSD within ±3 Hz of it, dB.
    pub prominence_db: f64,
}

impl MainsReport {
    /// Mains is really there: a peak at least 10 dB above its neighbourhood and 0.5 µV rms or
    /// more at the electrodes (common practice: below that, a notch has nothing to remove).
    pub fn present(&self) -> bool {
        self.prominence_db >= 10.0 && self.harmonics.first().is_some_and(|h| h.rms_uv >= 0.5)
    }

    /// Harmonics (order ≥ 2) standing out enough to be worth a notch of their own: at least
    /// a tenth of the fundamental's amplitude.
    pub fn strong_harmonics(&self) -> u32 {
        let f = self.harmonics.first().map_or(0.0, |h| h.rms_uv);
        let mut n = 0;
        for h in self.harmonics.iter().skip(1) {
            if h.rms_uv >= 0.1 * f {
                n = h.order - 1;
            }
        }
        n.min(4)
    }

    /// The notch this measurement asks for: the measured fundamental (held within ±1 Hz of the
    /// 50 or 60 Hz region) and the strong harmonics. None when no mains is present.
    pub fn notch_hz(&self) -> Option<(f64, u32)> {
        self.present().then(|| {
            (
                self.mains_hz
                    .clamp(self.nominal_hz - 1.0, self.nominal_hz + 1.0),
                self.strong_harmonics(),
            )
        })
    }

    /// "mains measured at 60.0 Hz, notch at 50 Hz" when the notch sits in the other region.
    pub fn disagrees_with(&self, notch_hz: f64) -> Option<String> {
        (self.present() && (notch_hz - self.nominal_hz).abs() > 5.0).then(|| {
            format!(
                "mains measured at {:.1} Hz, notch at {} Hz",
                self.mains_hz,
                crate::scale::sig3(notch_hz)
            )
        })
    }
}

/// Magnitude of the DFT of `xw` (already windowed) at `f`, by a rotating phasor.
fn dft_mag(xw: &[f64], f: f64, fs: f64) -> f64 {
    let (s, c) = (std::f64::consts::TAU * f / fs).sin_cos();
    let (mut pr, mut pi) = (1.0f64, 0.0f64);
    let (mut re, mut im) = (0.0, 0.0);
    for (n, &v) in xw.iter().enumerate() {
        re += v * pr;
        im -= v * pi;
        let nr = pr * c - pi * s;
        pi = pr * s + pi * c;
        pr = nr;
        // Renormalise now and then so rounding never lets the phasor drift off the unit circle.
        if n % 4096 == 4095 {
            let m = (pr * pr + pi * pi).sqrt();
            pr /= m;
            pi /= m;
        }
    }
    (re * re + im * im).sqrt()
}

/// Measures the mains in `x_uv` (input-referred µV at `fs`), given its Welch PSD.
///
/// # Errors
/// [`MainsError`] when the rate is too low or the record too short.
pub fn analyse(x_uv: &[f64], fs: f64, psd: &Psd) -> Result<MainsReport, MainsError> {
    if fs / 2.0 < 50.0 + SEARCH_HZ {
        return Err(MainsError::RateTooLow(fs));
    }
    if x_uv.len() < 16 || psd.density.len() < 4 {
        return Err(MainsError::TooShort);
    }
    let region = |f0: f64| psd.band_power(f0 - SEARCH_HZ, f0 + SEARCH_HZ, |_| false);
    let nominal = if fs / 2.0 > 60.0 + SEARCH_HZ && region(60.0) > region(50.0) {
        60.0
    } else {
        50.0
    };
    let (peak_bin, _) = psd
        .freqs_hz
        .iter()
        .zip(&psd.density)
        .enumerate()
        .filter(|(_, (f, _))| (**f - nominal).abs() <= SEARCH_HZ)
        .max_by(|a, b| a.1.1.total_cmp(b.1.1))
        .map(|(i, (f, d))| (i, (*f, *d)))
        .ok_or(MainsError::TooShort)?;
    let f_peak = psd.freqs_hz[peak_bin];

    // Whole-record Hann window, mean removed.
    let n = x_uv.len();
    let mean = x_uv.iter().sum::<f64>() / n as f64;
    let w = |i: usize| 0.5 - 0.5 * (std::f64::consts::TAU * i as f64 / n as f64).cos();
    let xw: Vec<f64> = x_uv
        .iter()
        .enumerate()
        .map(|(i, v)| (v - mean) * w(i))
        .collect();
    let wsum: f64 = (0..n).map(w).sum();
    let f0 = crate::numeric::golden_max(f_peak - psd.bin_hz, f_peak + psd.bin_hz, |f| {
        dft_mag(&xw, f, fs)
    });
    let rms_at = |f: f64| 2.0 * dft_mag(&xw, f, fs) / wsum / std::f64::consts::SQRT_2;

    let mut harmonics = Vec::with_capacity(5);
    for order in 1..=5u32 {
        let hz = f0 * order as f64;
        if hz >= 0.49 * fs {
            break;
        }
        harmonics.push(Harmonic {
            order,
            hz,
            rms_uv: rms_at(hz),
        });
    }
    if harmonics.is_empty() || !f0.is_finite() {
        // The fundamental sits at or above Nyquist's guard (a rate just over 100 Hz), or the
        // signal holds values that are not numbers.
        return Err(MainsError::RateTooLow(fs));
    }
    let near_mains = |f: f64| {
        harmonics
            .iter()
            .any(|h| (f - h.hz).abs() <= MAINS_GUARD_HZ.max(2.0 * psd.bin_hz))
    };
    let band_power = BandPower {
        wander_uv2: psd.band_power(psd.bin_hz * 0.5, 0.5, |_| false),
        ecg_uv2: psd.band_power(0.5, 40.0, |_| false),
        muscle_uv2: psd.band_power(40.0, fs / 2.0 + psd.bin_hz, near_mains),
        mains_uv2: harmonics.iter().map(|h| h.rms_uv * h.rms_uv).sum(),
    };
    // Below 1e-6 µV² (1 nV rms) a band is empty: no ratio is given.
    let snr_db = (band_power.ecg_uv2 > 1e-6 && band_power.mains_uv2 > 1e-6)
        .then(|| crate::numeric::db10(band_power.ecg_uv2 / band_power.mains_uv2));
    let mut around: Vec<f64> = psd
        .freqs_hz
        .iter()
        .zip(&psd.density)
        .filter(|(f, _)| {
            let d = (**f - f_peak).abs();
            d <= SEARCH_HZ && d > MAINS_GUARD_HZ.max(2.0 * psd.bin_hz)
        })
        .map(|(_, d)| *d)
        .collect();
    around.sort_by(f64::total_cmp);
    let floor = around.get(around.len() / 2).copied().unwrap_or(0.0);
    let peak = psd.density[peak_bin];
    let prominence_db = if peak > 0.0 && floor > 0.0 {
        crate::numeric::db10(peak / floor)
    } else if peak > 0.0 {
        f64::INFINITY.min(300.0)
    } else {
        0.0
    };
    Ok(MainsReport {
        nominal_hz: nominal,
        mains_hz: f0,
        harmonics,
        band_power,
        snr_db,
        prominence_db,
    })
}
impl MainsReport {
    /// The notch `current` moved to what this measurement asks for, if it asks for a change
    /// bigger than 0.05 Hz or other harmonics (the automatic notch).
    pub fn notch_for(&self, current: &crate::dsp::Notch) -> Option<crate::dsp::Notch> {
        let (hz, harmonics) = self.notch_hz()?;
        ((hz - current.mains_hz).abs() > 0.05 || harmonics != current.harmonics).then_some(
            crate::dsp::Notch {
                mains_hz: hz,
                harmonics,
                ..*current
            },
        )
    }
}
