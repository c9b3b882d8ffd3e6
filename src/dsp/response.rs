//! Frequency response of a cascade of sections: magnitude (dB), phase (degrees, unwrapped along the
//! frequency list) and group delay (seconds), plus the −3 dB points of the whole chain.

use std::f64::consts::PI;

use super::design::Section;

/// Response at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Point {
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// |H| in dB (−inf at an exact zero).
    pub mag_db: f64,
    /// Phase in degrees, unwrapped along the list of frequencies.
    pub phase_deg: f64,
    /// Group delay −dφ/dω, s. NaN where |H| = 0 (undefined there).
    pub group_delay_s: f64,
}

/// Complex response H(e^jω) of the cascade, as (re, im).
pub fn h(sections: &[Section], freq_hz: f64, fs: f64) -> (f64, f64) {
    let w = 2.0 * PI * freq_hz / fs;
    sections.iter().fold((1.0, 0.0), |(ar, ai), s| {
        let (br, bi) = s.response(w);
        (ar * br - ai * bi, ar * bi + ai * br)
    })
}

/// |H| (linear) of the cascade.
pub fn magnitude(sections: &[Section], freq_hz: f64, fs: f64) -> f64 {
    let (r, i) = h(sections, freq_hz, fs);
    r.hypot(i)
}

/// Group delay of one polynomial c0 + c1 z⁻¹ + c2 z⁻² in samples: Re(Σ k c_k e^{−jωk} / Σ c_k e^{−jωk}).
fn poly_delay(c: [f64; 3], w: f64) -> Option<f64> {
    let (mut nr, mut ni, mut dr, mut di) = (0.0, 0.0, 0.0, 0.0);
    for (k, &ck) in c.iter().enumerate() {
        let (s, co) = (w * k as f64).sin_cos();
        dr += ck * co;
        di -= ck * s;
        nr += k as f64 * ck * co;
        ni -= k as f64 * ck * s;
    }
    let den = dr * dr + di * di;
    // Below this the polynomial has a zero on the unit circle here: the delay is undefined.
    if den < 1e-30 * c.iter().map(|v| v * v).sum::<f64>().max(1e-300) {
        return None;
    }
    Some((nr * dr + ni * di) / den)
}

/// Group delay of the cascade in seconds, or NaN at an exact zero of the response.
pub fn group_delay(sections: &[Section], freq_hz: f64, fs: f64) -> f64 {
    let w = 2.0 * PI * freq_hz / fs;
    let mut total = 0.0;
    for s in sections {
        let (Some(b), Some(a)) = (
            poly_delay([s.b0, s.b1, s.b2], w),
            poly_delay([1.0, s.a1, s.a2], w),
        ) else {
            return f64::NAN;
        };
        total += b - a;
    }
    total / fs
}

/// The response at each of `freqs_hz` (which should be increasing for the phase to unwrap well).
pub fn evaluate(sections: &[Section], freqs_hz: &[f64], fs: f64) -> Vec<Point> {
    let mut out = Vec::with_capacity(freqs_hz.len());
    let mut prev: Option<f64> = None;
    let mut offset = 0.0;
    for &f in freqs_hz {
        let (r, i) = h(sections, f, fs);
        let raw = i.atan2(r).to_degrees();
        if let Some(p) = prev {
            let d = raw + offset - p;
            offset -= 360.0 * (d / 360.0).round();
        }
        let phase = raw + offset;
        prev = Some(phase);
        out.push(Point {
            freq_hz: f,
            mag_db: crate::numeric::db20(r.hypot(i)),
            phase_deg: phase,
            group_delay_s: group_delay(sections, f, fs),
        });
    }
    out
}

/// `n` frequencies spaced evenly on a log axis from `lo` to `hi` Hz.
pub fn log_frequencies(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    let n = n.max(2);
    let (a, b) = (lo.ln(), hi.ln());
    (0..n)
        .map(|i| (a + (b - a) * i as f64 / (n - 1) as f64).exp())
        .collect()
}

/// Summary figures of a chain for the GUI.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Summary {
    /// Highest gain over 0 … Nyquist, dB.
    pub peak_db: f64,
    /// Lower −3 dB point (below the peak), Hz; None when the response stays up to 0 Hz.
    pub low_3db_hz: Option<f64>,
    /// Upper −3 dB point (above the peak), Hz; None when it stays up to Nyquist.
    pub high_3db_hz: Option<f64>,
    /// Group delay at 10 Hz, s (the QRS's main content), or NaN if 10 Hz is beyond Nyquist.
    pub delay_10hz_s: f64,
}

fn bisect(sections: &[Section], fs: f64, mut lo: f64, mut hi: f64, level: f64) -> f64 {
    // Log-domain bisection; the response is monotonic between the bracket ends here.
    let below_at_lo = magnitude(sections, lo, fs) < level;
    for _ in 0..80 {
        let mid = (lo * hi).sqrt();
        if (magnitude(sections, mid, fs) < level) == below_at_lo {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    (lo * hi).sqrt()
}

/// Peak gain, −3 dB points relative to the peak, and the delay at 10 Hz.
pub fn summary(sections: &[Section], fs: f64) -> Summary {
    let grid = log_frequencies(1e-3, 0.4999 * fs, 4000);
    let mags: Vec<f64> = grid.iter().map(|&f| magnitude(sections, f, fs)).collect();
    let (ipk, &pk) = mags
        .iter()
        .enumerate()
        .max_by(|a, b| a.1.total_cmp(b.1))
        .unwrap_or((0, &1.0));
    let level = pk / 2f64.sqrt();
    // Narrow notches dip below −3 dB too: take the outermost crossings of the main band, i.e.
    // the first crossing scanning outwards from the peak that stays below for the rest.
    let low = (0..ipk).rev().find(|&i| mags[i] < level).and_then(|i| {
        // Stay below level all the way down to the grid start, or it was a notch.
        if mags[..=i].iter().all(|&m| m < level * 1.0001) || i == 0 {
            Some(bisect(sections, fs, grid[i], grid[i + 1], level))
        } else {
            None
        }
    });
    let high = (ipk + 1..grid.len())
        .find(|&i| mags[i] < level && mags[i..].iter().all(|&m| m < level * 1.0001))
        .map(|i| bisect(sections, fs, grid[i - 1], grid[i], level));
    Summary {
        peak_db: crate::numeric::db20(pk),
        low_3db_hz: low,
        high_3db_hz: high,
        delay_10hz_s: if 10.0 < fs / 2.0 {
            group_delay(sections, 10.0, fs)
        } else {
            f64::NAN
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::chain::ChainSettings;
    use crate::dsp::design;

    #[test]
    fn group_delay_of_a_pure_delay_and_a_first_order_section() {
        // b = [0, 0, 1]: two samples of delay at every frequency.
        let d = Section {
            b0: 0.0,
            b1: 0.0,
            b2: 1.0,
            a1: 0.0,
            a2: 0.0,
        };
        assert!((group_delay(&[d], 7.0, 100.0) - 0.02).abs() < 1e-12);
        // A numerical derivative of the unwrapped phase agrees with the analytic delay.
        let lp = design::butterworth_lowpass(4, 40.0, 500.0).unwrap();
        let f = 10.0;
        let df = 1e-4;
        let p = evaluate(&lp, &[f - df, f + df], 500.0);
        let numeric = -(p[1].phase_deg - p[0].phase_deg).to_radians() / (2.0 * PI * 2.0 * df);
        assert!((numeric - group_delay(&lp, f, 500.0)).abs() < 1e-7);
    }

    #[test]
    fn summary_finds_the_band_edges_of_the_default_chain() {
        let s = ChainSettings::default().design(500.0).unwrap();
        let sum = summary(&s, 500.0);
        let (lo, hi) = (sum.low_3db_hz.unwrap(), sum.high_3db_hz.unwrap());
        // Separate corners 0.5 Hz and 40 Hz; each −3 dB point moves only slightly in the cascade.
        assert!((lo - 0.5).abs() < 0.01, "{lo}");
        assert!((hi - 40.0).abs() < 0.5, "{hi}");
        assert!(sum.peak_db.abs() < 0.01);
        assert!(sum.delay_10hz_s > 0.0 && sum.delay_10hz_s < 0.05);
        // The 50 Hz notch is not mistaken for the band edge, and phase unwraps continuously.
        let pts = evaluate(&s, &log_frequencies(0.1, 200.0, 500), 500.0);
        for w in pts.windows(2) {
            assert!((w[1].phase_deg - w[0].phase_deg).abs() < 180.0);
        }
    }
}
