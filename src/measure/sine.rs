//! Sines in a recording: a least-squares fit of amplitude and phase at a frequency, the
//! frequency refined by maximising the fitted amplitude (IEEE Std 1057's three-parameter fit
//! inside a one-dimensional search, recalled from memory), and steady steps of a generator that
//! a user steps by hand.

use serde::Serialize;

use super::MeasureError;

/// A fitted sine.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SineFit {
    pub freq_hz: f64,
    /// Peak amplitude, in the unit of the samples.
    pub amplitude: f64,
    /// RMS of what the sine and offset leave, in the unit of the samples.
    pub residual_rms: f64,
}

/// Three-parameter least-squares fit (a·cos + b·sin + c) at `f`: amplitude and residual RMS.
pub fn fit_at(x: &[f64], fs: f64, f: f64) -> SineFit {
    let w = std::f64::consts::TAU * f / fs;
    // Normal equations of [cos, sin, 1].
    let (mut cc, mut ss, mut cs, mut c1, mut s1) = (0.0, 0.0, 0.0, 0.0, 0.0);
    let (mut xc, mut xs, mut x1) = (0.0, 0.0, 0.0);
    for (i, &v) in x.iter().enumerate() {
        let (s, c) = (w * i as f64).sin_cos();
        cc += c * c;
        ss += s * s;
        cs += c * s;
        c1 += c;
        s1 += s;
        xc += v * c;
        xs += v * s;
        x1 += v;
    }
    let n = x.len() as f64;
    let m = [[cc, cs, c1], [cs, ss, s1], [c1, s1, n]];
    let r = [xc, xs, x1];
    let det = |m: &[[f64; 3]; 3]| {
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
            - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
            + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    };
    let d = det(&m);
    let solve = |col: usize| {
        let mut k = m;
        for (row, v) in r.iter().enumerate() {
            k[row][col] = *v;
        }
        det(&k) / d
    };
    let (a, b, c) = if d.abs() > 1e-300 {
        (solve(0), solve(1), solve(2))
    } else {
        (0.0, 0.0, x1 / n)
    };
    let mut res = 0.0;
    for (i, &v) in x.iter().enumerate() {
        let (s, co) = (w * i as f64).sin_cos();
        let e = v - a * co - b * s - c;
        res += e * e;
    }
    SineFit {
        freq_hz: f,
        amplitude: (a * a + b * b).sqrt(),
        residual_rms: (res / n).sqrt(),
    }
}

/// The strongest sine in `x`: the DFT peak (zero-padded eightfold), then the frequency that
/// maximises the fitted amplitude within a bin of it.
pub fn strongest(x: &[f64], fs: f64) -> SineFit {
    let n = x.len().max(2);
    let mean = x.iter().sum::<f64>() / n as f64;
    let pad = (8 * n).next_power_of_two();
    let fft = realfft::RealFftPlanner::<f64>::new().plan_fft_forward(pad);
    let mut buf = fft.make_input_vec();
    for (b, v) in buf.iter_mut().zip(x) {
        *b = v - mean;
    }
    let mut spec = fft.make_output_vec();
    let _ = fft.process(&mut buf, &mut spec);
    let k = spec
        .iter()
        .enumerate()
        .skip(1)
        .max_by(|a, b| a.1.norm_sqr().total_cmp(&b.1.norm_sqr()))
        .map_or(1, |(k, _)| k);
    let f0 = k as f64 * fs / pad as f64;
    let bin = fs / n as f64;
    let f = crate::numeric::golden_max((f0 - bin).max(1e-6), f0 + bin, |f| {
        fit_at(x, fs, f).amplitude
    });
    fit_at(x, fs, f)
}

/// One steady step of a stepped sine.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Step {
    pub freq_hz: f64,
    /// Fitted peak amplitude, µV.
    pub amplitude_uv: f64,
    pub start_s: f64,
    pub end_s: f64,
}

/// Steady steps in `x` (µV at `fs`): windows of a second (half a second apart) whose strongest
/// sine keeps its frequency (within 2 %) and amplitude (within 10 %) for at least `min_s`
/// seconds. Each step
/// is fitted over its whole length less a quarter second at either end (the step edges).
///
/// # Errors
/// [`MeasureError::NoSteps`] when no steady step is found.
pub fn steps(x: &[f64], fs: f64, min_s: f64) -> Result<Vec<Step>, MeasureError> {
    let win = fs.round() as usize;
    let hop = win / 2;
    if win < 8 || x.len() < 2 * win {
        return Err(MeasureError::TooShort {
            len: x.len(),
            segment: 2 * win,
        });
    }
    let fits: Vec<(usize, SineFit)> = (0..=(x.len() - win) / hop)
        .map(|k| (k * hop, strongest(&x[k * hop..k * hop + win], fs)))
        .collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < fits.len() {
        let (start, f) = fits[i];
        let mut j = i + 1;
        while j < fits.len()
            && (fits[j].1.freq_hz / f.freq_hz - 1.0).abs() < 0.02
            && (fits[j].1.amplitude / f.amplitude.max(1e-12) - 1.0).abs() < 0.1
        {
            j += 1;
        }
        let end = fits[j - 1].0 + win;
        let trim = (0.25 * fs) as usize;
        if (end - start) as f64 / fs >= min_s && end > start + 2 * trim + win / 2 {
            let seg = &x[start + trim..end - trim];
            let fit = strongest(seg, fs);
            out.push(Step {
                freq_hz: fit.freq_hz,
                amplitude_uv: fit.amplitude,
                start_s: (start + trim) as f64 / fs,
                end_s: (end - trim) as f64 / fs,
            });
        }
        i = j;
    }
    if out.is_empty() {
        return Err(MeasureError::NoSteps);
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_sine_is_fitted_exactly() {
        let fs = 1000.0;
        let x: Vec<f64> = (0..3000)
            .map(|i| 3.0 + 250.0 * (std::f64::consts::TAU * 12.34 * i as f64 / fs + 0.7).sin())
            .collect();
        let f = strongest(&x, fs);
        // The fitted amplitude is flat at its maximum, so the search stops within about
        // 2e-4 Hz; that leaves a residual of 0.06 % of the amplitude.
        assert!((f.freq_hz - 12.34).abs() < 1e-3, "{f:?}");
        assert!((f.amplitude - 250.0).abs() < 1e-2, "{f:?}");
        assert!(f.residual_rms < 0.5, "{f:?}");
    }
}
