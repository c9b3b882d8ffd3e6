//! Welch power spectral density, defined and scaled as scipy.signal.welch with its defaults:
//! periodic Hann window, 50 % overlap, the mean removed from each segment (`detrend='constant'`),
//! one-sided density (`scaling='density'`, unit²/Hz), segments averaged by the mean.
//! The FFT plan, window and buffers are made once; an update allocates nothing.

use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};

/// Why a spectrum cannot be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SpectrumError {
    /// Segment lengths are powers of two from 256 to 16384.
    #[error("segment length {0} must be a power of two from 256 to 16384")]
    Segment(usize),
    /// The record must hold at least one segment.
    #[error("{len} samples are fewer than one segment of {segment}")]
    TooShort { len: usize, segment: usize },
    /// The sample rate must be positive.
    #[error("sample rate {0} Hz must be a positive number")]
    SampleRate(f64),
}

/// A reusable Welch estimator for one segment length.
pub struct Welch {
    n: usize,
    fft: Arc<dyn RealToComplex<f64>>,
    window: Vec<f64>,
    /// Σw² (density scaling) and Σw (amplitude scaling).
    win_sq_sum: f64,
    win_sum: f64,
    input: Vec<f64>,
    output: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
    acc: Vec<f64>,
}

impl std::fmt::Debug for Welch {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Welch").field("segment", &self.n).finish()
    }
}

/// The spectrum of one record.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Psd {
    /// Bin frequencies, Hz: k · fs / n for k = 0 … n/2.
    pub freqs_hz: Vec<f64>,
    /// One-sided density, unit²/Hz.
    pub density: Vec<f64>,
    /// Segments averaged.
    pub segments: usize,
    /// fs / n, Hz.
    pub bin_hz: f64,
    /// Σw² / (Σw)²·fs … the factor that turns density into a power spectrum (unit² per bin).
    pub density_to_power: f64,
}

impl Psd {
    /// The amplitude spectrum in RMS units: a sine of RMS a reads a at its bin (scipy's
    /// `scaling='spectrum'`, square-rooted).
    pub fn rms(&self) -> Vec<f64> {
        self.density
            .iter()
            .map(|d| (d * self.density_to_power).sqrt())
            .collect()
    }

    /// Power between `lo` and `hi` Hz (unit²): the density summed over those bins × bin width.
    pub fn band_power(&self, lo: f64, hi: f64, skip: impl Fn(f64) -> bool) -> f64 {
        self.freqs_hz
            .iter()
            .zip(&self.density)
            .filter(|(f, _)| **f >= lo && **f < hi && !skip(**f))
            .map(|(_, d)| d * self.bin_hz)
            .sum()
    }
}

impl Welch {
    /// An estimator for segments of `n` samples.
    ///
    /// # Errors
    /// [`SpectrumError::Segment`] unless n is a power of two in 256 … 16384.
    pub fn new(n: usize) -> Result<Self, SpectrumError> {
        if !(n.is_power_of_two() && (256..=16384).contains(&n)) {
            return Err(SpectrumError::Segment(n));
        }
        let fft = RealFftPlanner::<f64>::new().plan_fft_forward(n);
        // Periodic Hann (scipy.signal.get_window('hann', n), i.e. sym=False).
        let window: Vec<f64> = (0..n)
            .map(|i| 0.5 - 0.5 * (std::f64::consts::TAU * i as f64 / n as f64).cos())
            .collect();
        let win_sq_sum = window.iter().map(|w| w * w).sum();
        let win_sum = window.iter().sum();
        Ok(Self {
            n,
            input: fft.make_input_vec(),
            output: fft.make_output_vec(),
            scratch: fft.make_scratch_vec(),
            acc: vec![0.0; n / 2 + 1],
            fft,
            window,
            win_sq_sum,
            win_sum,
        })
    }

    /// Segment length.
    pub fn segment(&self) -> usize {
        self.n
    }

    /// The PSD of `x` at `fs`, written into `out` (its vectors are reused).
    ///
    /// # Errors
    /// Fewer samples than a segment, or a bad rate.
    pub fn compute_into(&mut self, x: &[f64], fs: f64, out: &mut Psd) -> Result<(), SpectrumError> {
        if !(fs.is_finite() && fs > 0.0) {
            return Err(SpectrumError::SampleRate(fs));
        }
        let n = self.n;
        if x.len() < n {
            return Err(SpectrumError::TooShort {
                len: x.len(),
                segment: n,
            });
        }
        let step = n - n / 2;
        let segments = (x.len() - n) / step + 1;
        self.acc.iter_mut().for_each(|a| *a = 0.0);
        for s in 0..segments {
            let seg = &x[s * step..s * step + n];
            let mean = seg.iter().sum::<f64>() / n as f64;
            for ((i, v), w) in self.input.iter_mut().zip(seg).zip(&self.window) {
                *i = (v - mean) * w;
            }
            // Lengths come from the plan itself, so this cannot fail.
            let _ =
                self.fft
                    .process_with_scratch(&mut self.input, &mut self.output, &mut self.scratch);
            for (a, c) in self.acc.iter_mut().zip(&self.output) {
                *a += c.norm_sqr();
            }
        }
        let scale = 1.0 / (fs * self.win_sq_sum * segments as f64);
        out.freqs_hz.clear();
        out.density.clear();
        let last = n / 2;
        for (k, a) in self.acc.iter().enumerate() {
            // One-sided: every bin but DC and Nyquist carries its negative-frequency twin.
            let twice = if k == 0 || k == last { 1.0 } else { 2.0 };
            out.freqs_hz.push(k as f64 * fs / n as f64);
            out.density.push(a * scale * twice);
        }
        out.segments = segments;
        out.bin_hz = fs / n as f64;
        out.density_to_power = fs * self.win_sq_sum / (self.win_sum * self.win_sum);
        Ok(())
    }

    /// The PSD of `x` at `fs`.
    ///
    /// # Errors
    /// As [`Self::compute_into`].
    pub fn compute(&mut self, x: &[f64], fs: f64) -> Result<Psd, SpectrumError> {
        let mut out = Psd::default();
        self.compute_into(x, fs, &mut out)?;
        Ok(out)
    }
}

/// The power-of-two segment (256 … 16384) nearest to `seconds` at `fs`.
pub fn segment_for(fs: f64, seconds: f64) -> usize {
    let want = fs * seconds;
    if !want.is_finite() {
        return 256;
    }
    let want = want.clamp(256.0, 16384.0);
    1usize << (want.log2().round() as u32)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parseval_and_a_sine_of_known_rms() {
        let fs = 1000.0;
        let mut rng = crate::rng::Rng::new(5);
        let x: Vec<f64> = (0..20_000)
            .map(|i| {
                10.0 * rng.normal() + 50.0 * (std::f64::consts::TAU * 125.0 * i as f64 / fs).sin()
            })
            .collect();
        let mut w = Welch::new(1024).unwrap();
        let p = w.compute(&x, fs).unwrap();
        let mean = x.iter().sum::<f64>() / x.len() as f64;
        let var = x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / x.len() as f64;
        let total = p.band_power(0.0, fs, |_| false);
        assert!(
            (total - var).abs() < 0.01 * var,
            "∫PSD {total} vs variance {var}"
        );
        // 125 Hz sits exactly on bin 128: the RMS spectrum reads 50/√2.
        let rms = p.rms();
        assert!(
            (rms[128] - 50.0 / 2f64.sqrt()).abs() < 0.02 * 35.36,
            "{}",
            rms[128]
        );
        assert!(matches!(
            Welch::new(1000),
            Err(SpectrumError::Segment(1000))
        ));
        assert!(matches!(
            w.compute(&x[..100], fs),
            Err(SpectrumError::TooShort { .. })
        ));
        assert_eq!(segment_for(500.0, 4.0), 2048);
        assert_eq!(segment_for(4000.0, 10.0), 16384);
        assert_eq!(segment_for(125.0, 1.0), 256);
    }
}
