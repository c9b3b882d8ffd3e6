//! Surface EMG from a recording or the monitor's trace: band-pass, linear envelope, moving RMS,
//! contraction onsets and offsets, each contraction's amplitude and frequency, the median
//! frequency's trend (fatigue) and normalisation to a maximum voluntary contraction (%MVC).
//!
//! Sources:
//! - Band 20–450 Hz: within the SENIAM recommendations for surface EMG (Hermens et al., J
//!   Electromyogr Kinesiol 10(5):361–374, 2000; the exact corners there are recalled from memory
//!   as a 10–20 Hz high-pass and a ~500 Hz low-pass).
//! - Onsets: a threshold of mean + k·SD of a resting baseline on the rectified signal low-passed
//!   at 50 Hz, held for a minimum time (Hodges & Bui, Electroencephalogr Clin Neurophysiol
//!   101(6):511–519, 1996; their 50 Hz / 3 SD / 25 ms combination is recalled from memory).
//! - Mean and median frequency of the Welch PSD and the median frequency's fall as the sign of
//!   fatigue (De Luca, J Appl Biomech 13(2):135–163, 1997; recalled from memory).
//!
//! Offline everything is zero-phase (forward–backward, as scipy.signal.sosfiltfilt), so onsets
//! are not delayed by the filters.

use serde::Serialize;

use crate::dsp::chain::zero_phase;
use crate::dsp::design::Section;
use crate::dsp::design::{butterworth_highpass, butterworth_lowpass, notch};
use crate::dsp::spectrum::Welch;

/// The analysis settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EmgSettings {
    /// Band-pass corners, Hz (the upper one is held under 0.45·fs).
    pub band_hz: (f64, f64),
    /// Mains notch (with its harmonics in the band), Hz; `None` for no notch.
    pub notch_hz: Option<f64>,
    /// Linear envelope: low-pass corner after full-wave rectification, Hz (2–10).
    pub envelope_hz: f64,
    /// Moving-RMS window, ms (50–250).
    pub rms_ms: f64,
    /// Onset detector's low-pass after rectification, Hz.
    pub onset_hz: f64,
    /// Threshold: baseline mean + k·SD.
    pub k_sd: f64,
    /// The detector's signal must stay above the threshold this long for an onset, ms (a
    /// twitch or a QRS of the heart's signal is shorter).
    pub min_on_ms: f64,
    /// … and below it this long for an offset, ms.
    pub min_off_ms: f64,
    /// The resting baseline, s (start, end); by default the quietest second.
    pub baseline_s: Option<(f64, f64)>,
    /// The maximum voluntary contraction, s (start, end), for %MVC.
    pub mvc_s: Option<(f64, f64)>,
    /// A resting baseline measured before, (mean, SD) of the detector's signal, µV: used
    /// instead of `baseline_s` (the monitor keeps the rest the user marked this way).
    pub baseline_uv: Option<(f64, f64)>,
    /// A maximum contraction's RMS measured before, µV: used instead of `mvc_s`.
    pub mvc_rms_uv: Option<f64>,
}

impl Default for EmgSettings {
    fn default() -> Self {
        Self {
            band_hz: (20.0, 450.0),
            notch_hz: None,
            envelope_hz: 6.0,
            rms_ms: 100.0,
            onset_hz: 50.0,
            k_sd: 3.0,
            min_on_ms: 100.0,
            min_off_ms: 50.0,
            baseline_s: None,
            mvc_s: None,
            baseline_uv: None,
            mvc_rms_uv: None,
        }
    }
}

/// Why an EMG analysis cannot run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EmgError {
    /// A setting out of range.
    #[error("{0}")]
    Setting(String),
    /// Too little signal.
    #[error("{0}")]
    TooShort(String),
}

/// One contraction.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Burst {
    /// Onset, s.
    pub on_s: f64,
    /// Offset, s.
    pub off_s: f64,
    /// Largest moving RMS within the contraction, µV.
    pub peak_uv: f64,
    /// RMS of the band-passed signal over the contraction, µV.
    pub rms_uv: f64,
    /// Mean frequency of the contraction's Welch PSD, Hz (`None` under 256 samples).
    pub mean_hz: Option<f64>,
    /// Median frequency, Hz.
    pub median_hz: Option<f64>,
    /// RMS as a percentage of the marked maximum contraction's RMS.
    pub pct_mvc: Option<f64>,
}

/// The median frequency's straight-line trend over the contractions (fatigue: a fall).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Trend {
    /// Slope, Hz per second of recording.
    pub slope_hz_per_s: f64,
    /// The fitted median frequency at the first and the last contraction, Hz.
    pub first_hz: f64,
    pub last_hz: f64,
    /// Change from first to last fitted value, %.
    pub change_pct: f64,
    /// (contraction midpoint s, median Hz) pairs fitted.
    pub points: Vec<(f64, f64)>,
}

/// A whole analysis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EmgAnalysis {
    pub fs_hz: f64,
    pub settings: EmgSettings,
    /// Baseline used, s, and its detector mean and SD, µV.
    pub baseline_s: (f64, f64),
    pub baseline_mean_uv: f64,
    pub baseline_sd_uv: f64,
    /// Onset threshold, µV (on the detector's signal).
    pub threshold_uv: f64,
    /// RMS of the marked maximum contraction, µV.
    pub mvc_rms_uv: Option<f64>,
    pub bursts: Vec<Burst>,
    pub median_hz_trend: Option<Trend>,
    /// The band-passed signal, µV.
    #[serde(skip)]
    pub filtered: Vec<f64>,
    /// Linear envelope, µV.
    #[serde(skip)]
    pub envelope: Vec<f64>,
    /// Moving RMS, µV.
    #[serde(skip)]
    pub rms: Vec<f64>,
}

/// Checks the settings at `fs`.
///
/// # Errors
/// A setting out of range, as one line.
pub fn check(s: &EmgSettings, fs: f64) -> Result<(), EmgError> {
    let bad = |m: String| Err(EmgError::Setting(m));
    if !(fs.is_finite() && fs >= 250.0) {
        return bad(format!(
            "EMG needs at least 250 Hz (1 kHz or more advised), not {fs} Hz"
        ));
    }
    if !(2.0..=10.0).contains(&s.envelope_hz) {
        return bad(format!(
            "envelope low-pass {} Hz is outside 2–10 Hz",
            s.envelope_hz
        ));
    }
    if !(50.0..=250.0).contains(&s.rms_ms) {
        return bad(format!("RMS window {} ms is outside 50–250 ms", s.rms_ms));
    }
    if !(s.k_sd.is_finite() && s.k_sd > 0.0) {
        return bad(format!(
            "threshold k = {} must be a positive number",
            s.k_sd
        ));
    }
    if !(s.band_hz.0 > 0.0 && s.band_hz.0 < s.band_hz.1) {
        return bad(format!(
            "band {}–{} Hz: the lower corner must be positive and under the upper",
            s.band_hz.0, s.band_hz.1
        ));
    }
    Ok(())
}

/// The band-pass's sections at `fs`: 2nd-order Butterworth high- and low-pass (the upper corner
/// held at 0.45·fs at most), then the mains notches (Q 30) at the fundamental and every
/// harmonic inside the band.
///
/// # Errors
/// Corners the design rejects.
pub fn band_sections(s: &EmgSettings, fs: f64) -> Result<Vec<Section>, EmgError> {
    let hi = s.band_hz.1.min(crate::dsp::highest_corner_hz(fs));
    let mut v = butterworth_highpass(2, s.band_hz.0, fs)
        .map_err(|e| EmgError::Setting(format!("band-pass: {e}")))?;
    v.extend(
        butterworth_lowpass(2, hi, fs).map_err(|e| EmgError::Setting(format!("band-pass: {e}")))?,
    );
    if let Some(f0) = s.notch_hz {
        if !(40.0..=70.0).contains(&f0) {
            return Err(EmgError::Setting(format!(
                "mains notch {f0} Hz is outside 40–70 Hz"
            )));
        }
        let mut k = 1.0;
        while k * f0 < hi.min(crate::dsp::highest_corner_hz(fs)) {
            v.push(notch(k * f0, 30.0, fs).map_err(|e| EmgError::Setting(format!("notch: {e}")))?);
            k += 1.0;
        }
    }
    Ok(v)
}

/// The band-pass (and notch) forward and backward over `x` extended by half a second of odd
/// reflection at each end: a Q-30 mains notch rings for a few tenths of a second, longer than
/// the filter's own edge padding, and at a record's ends that ringing would read as a
/// contraction. The extension is cut off again.
fn band_pass(sos: &[Section], x: &[f64], fs: f64) -> Result<Vec<f64>, EmgError> {
    let n = x.len();
    let pad = ((0.5 * fs) as usize).min(n.saturating_sub(1));
    if n == 0 {
        return Err(EmgError::TooShort("no samples".into()));
    }
    let mut ext = Vec::with_capacity(n + 2 * pad);
    ext.extend((1..=pad).rev().map(|i| 2.0 * x[0] - x[i]));
    ext.extend_from_slice(x);
    ext.extend((1..=pad).map(|i| 2.0 * x[n - 1] - x[n - 1 - i]));
    let y = zero_phase(sos, &ext).map_err(|e| EmgError::TooShort(e.to_string()))?;
    Ok(y[pad..pad + n].to_vec())
}

fn lowpass_zero_phase(x: &[f64], hz: f64, fs: f64) -> Result<Vec<f64>, EmgError> {
    let sos = butterworth_lowpass(2, hz, fs).map_err(|e| EmgError::Setting(e.to_string()))?;
    zero_phase(&sos, x).map_err(|e| EmgError::TooShort(e.to_string()))
}

/// The linear envelope: full-wave rectified, then a 2nd-order Butterworth low-pass at `hz`,
/// zero-phase.
///
/// # Errors
/// A bad corner, or a signal shorter than the filter's padding.
pub fn envelope(filtered: &[f64], hz: f64, fs: f64) -> Result<Vec<f64>, EmgError> {
    let rect: Vec<f64> = filtered.iter().map(|v| v.abs()).collect();
    lowpass_zero_phase(&rect, hz, fs)
}

/// Moving RMS over a centred window of `window` samples (shorter at the ends).
pub fn moving_rms(x: &[f64], window: usize) -> Vec<f64> {
    let w = window.max(1);
    let (before, after) = (w / 2, w - w / 2 - 1);
    // Prefix sums of squares: each value is a difference of two.
    let mut pre = Vec::with_capacity(x.len() + 1);
    pre.push(0.0);
    let mut acc = 0.0;
    for v in x {
        acc += v * v;
        pre.push(acc);
    }
    (0..x.len())
        .map(|i| {
            let a = i.saturating_sub(before);
            let b = (i + after + 1).min(x.len());
            ((pre[b] - pre[a]).max(0.0) / (b - a) as f64).sqrt()
        })
        .collect()
}

/// Mean and median frequency of a PSD (density against frequency): Σf·P/ΣP, and the frequency
/// below which half the power lies (linear between bins).
pub fn mean_median_hz(freqs: &[f64], density: &[f64]) -> Option<(f64, f64)> {
    let total: f64 = density.iter().sum();
    if total.is_nan() || total <= 0.0 {
        return None;
    }
    let mean = freqs.iter().zip(density).map(|(f, p)| f * p).sum::<f64>() / total;
    let half = total / 2.0;
    let mut acc = 0.0;
    for (k, &p) in density.iter().enumerate() {
        if acc + p >= half {
            // Within bin k: the cumulative power crosses half between f[k−1] and f[k].
            let f0 = if k == 0 { freqs[0] } else { freqs[k - 1] };
            let frac = if p > 0.0 { (half - acc) / p } else { 0.0 };
            return Some((mean, f0 + frac * (freqs[k] - f0)));
        }
        acc += p;
    }
    None
}

/// Mean and median frequency of `x` from its Welch PSD (256-sample segments, scipy's defaults).
pub fn frequencies(x: &[f64], fs: f64) -> Option<(f64, f64)> {
    let mut w = Welch::new(256).ok()?;
    let psd = w.compute(x, fs).ok()?;
    mean_median_hz(&psd.freqs_hz, &psd.density)
}

/// The quietest `len` samples of `det` (lowest mean, stepped by a tenth): the default baseline.
fn quietest(det: &[f64], len: usize) -> (usize, usize) {
    let len = len.min(det.len()).max(1);
    let step = (len / 10).max(1);
    let mut best = (0, len);
    let mut best_mean = f64::INFINITY;
    let mut start = 0;
    while start + len <= det.len() {
        let m = det[start..start + len].iter().sum::<f64>() / len as f64;
        if m < best_mean {
            best_mean = m;
            best = (start, start + len);
        }
        start += step;
    }
    best
}

fn span(s: (f64, f64), fs: f64, n: usize, what: &str) -> Result<(usize, usize), EmgError> {
    let a = (s.0 * fs).round();
    let b = (s.1 * fs).round();
    if !(a.is_finite() && b.is_finite() && a >= 0.0 && b > a) || b as usize > n {
        return Err(EmgError::Setting(format!(
            "{what} {}–{} s is not a stretch of the {:.1} s recording",
            s.0,
            s.1,
            n as f64 / fs
        )));
    }
    Ok((a as usize, b as usize))
}

/// Finds contractions on the detector's signal: above `thr` for at least `min_on` samples
/// starts one, below it for at least `min_off` samples ends it.
pub fn detect_bursts(det: &[f64], thr: f64, min_on: usize, min_off: usize) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut i = 0;
    let n = det.len();
    while i < n {
        if det[i] <= thr {
            i += 1;
            continue;
        }
        // A run above the threshold from i: long enough?
        let run_end = (i..n).find(|&j| det[j] <= thr).unwrap_or(n);
        if run_end - i < min_on {
            i = run_end;
            continue;
        }
        let on = i;
        // The offset: the first place from which the signal stays below for min_off.
        let mut j = run_end;
        let off = loop {
            if j >= n {
                break n;
            }
            let below_end = (j..n).find(|&k| det[k] > thr).unwrap_or(n);
            if below_end - j >= min_off || below_end == n {
                break j;
            }
            j = (below_end..n).find(|&k| det[k] <= thr).unwrap_or(n);
        };
        out.push((on, off));
        i = off.max(on + 1);
    }
    out
}

/// Straight-line fit y = a + b·x.
fn fit(points: &[(f64, f64)]) -> Option<(f64, f64)> {
    let n = points.len() as f64;
    if points.len() < 2 {
        return None;
    }
    let mx = points.iter().map(|p| p.0).sum::<f64>() / n;
    let my = points.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = points.iter().map(|p| (p.0 - mx).powi(2)).sum();
    let sxy: f64 = points.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    (sxx > 0.0).then(|| {
        let b = sxy / sxx;
        (my - b * mx, b)
    })
}

/// The onset and offset of one burst found by the detector `det` above `thr`, refined: joined
/// to earlier runs of at least `run_min` samples, then taken back (at most `back_max`) to where
/// the detector sat within 1 SD of the baseline (`near`); the offset the same way.
fn refine(
    det: &[f64],
    thr: f64,
    near: f64,
    (on, off): (usize, usize),
    run_min: usize,
    back_max: usize,
    min_off: usize,
) -> (usize, usize) {
    // In noise the first long run above the threshold can start inside the
    // contraction: earlier runs of at least 25 ms joined to it by gaps shorter than
    // the minimum off-time belong to it.
    let need = run_min;
    let (mut j, mut below, mut run, mut on) = (on, 0, 0, on);
    while j > 0 && below < min_off {
        j -= 1;
        if det[j] > thr {
            run += 1;
            below = 0;
            if run >= need {
                on = j;
            }
        } else {
            run = 0;
            below += 1;
        }
    }
    let lo = on.saturating_sub(back_max);
    let on = (lo..on)
        .rev()
        .find(|&j| det[j] <= near)
        .map_or(on, |j| j + 1);
    // The offset the same way seen backwards in time: the end of the last run above
    // the threshold at least 25 ms long (Hodges & Bui's window), then on (at most
    // 50 ms) to within 1 SD of the baseline. A shorter excursion of noise after the
    // contraction does not lengthen it.
    let need = run_min;
    let mut run = 0;
    let mut end = off;
    for j in (on..off).rev() {
        if det[j] > thr {
            run += 1;
            if run >= need {
                end = j + run;
                break;
            }
        } else {
            run = 0;
        }
    }
    let hi = (end + back_max).min(det.len());
    let off = (end..hi).find(|&j| det[j] <= near).unwrap_or(end);
    (on, off)
}

/// The straight line through the bursts' median frequencies (fatigue shows as a fall).
pub fn trend(bursts: &[Burst]) -> Option<Trend> {
    let points: Vec<(f64, f64)> = bursts
        .iter()
        .filter_map(|b| b.median_hz.map(|m| (0.5 * (b.on_s + b.off_s), m)))
        .collect();
    fit(&points).map(|(a, b)| {
        let first = a + b * points[0].0;
        let last = a + b * points[points.len() - 1].0;
        Trend {
            slope_hz_per_s: b,
            first_hz: first,
            last_hz: last,
            change_pct: if first != 0.0 {
                100.0 * (last - first) / first
            } else {
                0.0
            },
            points: points.clone(),
        }
    })
}

/// Analyses a recording `x` (µV) at `fs`.
///
/// # Errors
/// Settings out of range, a baseline or MVC stretch outside the recording, too short a record.
pub fn analyse(x: &[f64], fs: f64, s: &EmgSettings) -> Result<EmgAnalysis, EmgError> {
    check(s, fs)?;
    if let Some(i) = x.iter().position(|v| !v.is_finite()) {
        return Err(EmgError::Setting(format!(
            "sample {i} is not a number: EMG needs every sample"
        )));
    }
    let sos = band_sections(s, fs)?;
    let filtered = band_pass(&sos, x, fs)?;
    let env = envelope(&filtered, s.envelope_hz, fs)?;
    let rms = moving_rms(&filtered, ((s.rms_ms * 1e-3 * fs).round() as usize).max(1));
    let det = envelope(
        &filtered,
        s.onset_hz.min(crate::dsp::highest_corner_hz(fs)),
        fs,
    )?;
    let n = x.len();
    let (b0, b1) = match s.baseline_s {
        Some(b) => span(b, fs, n, "baseline")?,
        None => quietest(&det, fs.round() as usize),
    };
    let base = &det[b0..b1];
    let (mean, sd) = match s.baseline_uv {
        Some(b) if s.baseline_s.is_none() => b,
        _ => {
            let m = base.iter().sum::<f64>() / base.len() as f64;
            let v = base.iter().map(|v| (v - m).powi(2)).sum::<f64>() / base.len() as f64;
            (m, v.sqrt())
        }
    };
    let thr = mean + s.k_sd * sd;
    let ms = |m: f64| ((m * 1e-3 * fs).round() as usize).max(1);
    let mvc_rms = match s.mvc_s {
        Some(m) => {
            let (a, b) = span(m, fs, n, "MVC")?;
            let seg = &filtered[a..b];
            Some((seg.iter().map(|v| v * v).sum::<f64>() / seg.len() as f64).sqrt())
        }
        None => s.mvc_rms_uv,
    };
    // The threshold crossing lags the start of activity by the rise through k·SD: the onset is
    // taken back (at most 50 ms) to where the detector last sat within 1 SD of the baseline
    // mean (common practice).
    let near = mean + sd;
    let bursts: Vec<Burst> = detect_bursts(&det, thr, ms(s.min_on_ms), ms(s.min_off_ms))
        .into_iter()
        .map(|(on, off)| {
            let (on, off) = refine(
                &det,
                thr,
                near,
                (on, off),
                ms(25.0),
                ms(50.0),
                ms(s.min_off_ms),
            );
            let seg = &filtered[on..off];
            let r = (seg.iter().map(|v| v * v).sum::<f64>() / seg.len().max(1) as f64).sqrt();
            let f = frequencies(seg, fs);
            Burst {
                on_s: on as f64 / fs,
                off_s: off as f64 / fs,
                peak_uv: rms[on..off].iter().copied().fold(0.0, f64::max),
                rms_uv: r,
                mean_hz: f.map(|f| f.0),
                median_hz: f.map(|f| f.1),
                pct_mvc: mvc_rms.filter(|m| *m > 0.0).map(|m| 100.0 * r / m),
            }
        })
        .collect();
    let median_hz_trend = trend(&bursts);
    Ok(EmgAnalysis {
        fs_hz: fs,
        settings: *s,
        baseline_s: (b0 as f64 / fs, b1 as f64 / fs),
        baseline_mean_uv: mean,
        baseline_sd_uv: sd,
        threshold_uv: thr,
        mvc_rms_uv: mvc_rms,
        bursts,
        median_hz_trend,
        filtered,
        envelope: env,
        rms,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn moving_rms_of_a_constant_is_the_constant_and_of_a_sine_is_its_rms() {
        let c = moving_rms(&[3.0; 50], 10);
        assert!(c.iter().all(|v| (v - 3.0).abs() < 1e-12));
        let fs = 1000.0;
        let x: Vec<f64> = (0..2000)
            .map(|i| 10.0 * (std::f64::consts::TAU * 50.0 * i as f64 / fs).sin())
            .collect();
        // 100 ms holds five whole cycles: RMS 10/√2 (away from the ends).
        let r = moving_rms(&x, 100);
        assert!((r[1000] - 10.0 / 2f64.sqrt()).abs() < 1e-9, "{}", r[1000]);
    }

    #[test]
    fn median_of_a_flat_spectrum_is_its_middle() {
        let f: Vec<f64> = (0..=100).map(f64::from).collect();
        let p = vec![1.0; 101];
        let (mean, median) = mean_median_hz(&f, &p).unwrap();
        assert!((mean - 50.0).abs() < 1e-9);
        assert!((median - 49.5).abs() < 1.0, "{median}");
    }

    #[test]
    fn a_record_of_rest_and_mains_has_no_contraction_at_its_ends() {
        // 60 Hz pickup and a little noise, nothing else: the notch's ringing at the record's
        // ends must not read as a contraction.
        let fs = 2000.0;
        let mut rng = crate::rng::Rng::new(5);
        let x: Vec<f64> = (0..(6.0 * fs) as usize)
            .map(|i| {
                40.0 * (std::f64::consts::TAU * 60.0 * i as f64 / fs).sin() + 5.0 * rng.normal()
            })
            .collect();
        let s = EmgSettings {
            notch_hz: Some(60.0),
            ..EmgSettings::default()
        };
        let an = analyse(&x, fs, &s).unwrap();
        assert!(an.bursts.is_empty(), "{:?}", an.bursts);
    }

    #[test]
    fn bursts_need_their_minimum_times() {
        let mut d = vec![0.0; 1000];
        // 10 samples above: too short for 25.
        d[100..110].iter_mut().for_each(|v| *v = 5.0);
        // 200 above, a 20-sample dip (shorter than 50), 100 more above.
        d[300..500].iter_mut().for_each(|v| *v = 5.0);
        d[520..620].iter_mut().for_each(|v| *v = 5.0);
        let b = detect_bursts(&d, 1.0, 25, 50);
        assert_eq!(b, vec![(300, 620)]);
    }

    #[test]
    fn settings_out_of_range_are_one_clear_line() {
        let s = EmgSettings {
            envelope_hz: 20.0,
            ..EmgSettings::default()
        };
        let e = analyse(&[0.0; 5000], 1000.0, &s).unwrap_err().to_string();
        assert!(e.contains("2–10 Hz"), "{e}");
        let e = analyse(&[0.0; 5000], 200.0, &EmgSettings::default())
            .unwrap_err()
            .to_string();
        assert!(e.contains("250 Hz"), "{e}");
        let s = EmgSettings {
            baseline_s: Some((3.0, 9.0)),
            ..EmgSettings::default()
        };
        let e = analyse(&[0.0; 5000], 1000.0, &s).unwrap_err().to_string();
        assert!(e.contains("baseline 3–9 s"), "{e}");
        let mut x = vec![0.0; 5000];
        x[7] = f64::NAN;
        let e = analyse(&x, 1000.0, &EmgSettings::default())
            .unwrap_err()
            .to_string();
        assert!(e.contains("sample 7"), "{e}");
    }
}
