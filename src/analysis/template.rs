//! The beat template: the average of recent beats aligned on their R peaks, before and after the
//! chain, and what the chain does to the beat: R amplitude change, QRS width change and ST-level
//! shift. A high-pass corner set too high shows up as an ST shift and a smaller R; a low-pass
//! corner set too low as a smaller R and a wider QRS.

use std::collections::VecDeque;

use serde::Serialize;

/// Beats averaged.
const BEATS: usize = 16;
/// Window before and after the R peak, s.
pub const PRE_S: f64 = 0.25;
pub const POST_S: f64 = 0.45;

/// Measurements of one template (µV, ms).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BeatMeasures {
    /// Isoelectric level (PR segment), µV.
    pub iso_uv: f64,
    /// R amplitude above the isoelectric level, µV (signed).
    pub r_uv: f64,
    /// QRS duration, ms.
    pub qrs_ms: f64,
    /// ST level 60 ms after the end of the QRS, relative to the isoelectric level, µV.
    pub st_uv: f64,
}

/// The averaged beat.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Template {
    /// Sample rate, Hz.
    pub fs_hz: f64,
    /// Samples before the R peak (the R peak is at this index).
    pub pre: usize,
    /// Beats in the average.
    pub beats: usize,
    /// Average before the chain, µV.
    pub raw: Vec<f64>,
    /// Average after the chain, µV.
    pub filtered: Vec<f64>,
    /// Measures of the raw template.
    pub raw_measures: BeatMeasures,
    /// Measures of the filtered template.
    pub filtered_measures: BeatMeasures,
    /// (R after − R before) / R before, %.
    pub r_change_pct: f64,
    /// QRS width after − before, ms.
    pub qrs_change_ms: f64,
    /// ST level after − before, µV.
    pub st_shift_uv: f64,
}

/// Measures a template whose R peak is near index `pre`.
pub fn measure(y: &[f64], pre: usize, fs: f64) -> BeatMeasures {
    let ms = |m: f64| (m * 1e-3 * fs).round() as usize;
    let seg = |a: usize, b: usize| &y[a.min(y.len())..b.min(y.len())];
    // PR segment: 90–60 ms before R.
    let pr = seg(
        pre.saturating_sub(ms(90.0)),
        pre.saturating_sub(ms(60.0)).max(1),
    );
    let iso = if pr.is_empty() {
        0.0
    } else {
        pr.iter().sum::<f64>() / pr.len() as f64
    };
    // R: the largest deviation within ±40 ms.
    let (lo, hi) = (
        pre.saturating_sub(ms(40.0)),
        (pre + ms(40.0)).min(y.len().saturating_sub(1)),
    );
    let mut r_idx = pre.min(y.len().saturating_sub(1));
    for i in lo..=hi {
        if (y[i] - iso).abs() > (y[r_idx] - iso).abs() {
            r_idx = i;
        }
    }
    let r = y[r_idx] - iso;
    // QRS edges by slope: where the slope falls below 6 % of the steepest, scanning out from R.
    let slope = |i: usize| {
        if i == 0 || i + 1 >= y.len() {
            0.0
        } else {
            (y[i + 1] - y[i - 1]).abs()
        }
    };
    let (a, b) = (
        r_idx.saturating_sub(ms(120.0)).max(1),
        (r_idx + ms(150.0)).min(y.len() - 2),
    );
    let max_s = (a..=b).map(slope).fold(0.0, f64::max).max(1e-12);
    let quiet = |i: usize| slope(i) < 0.06 * max_s && (y[i] - iso).abs() < 0.2 * r.abs();
    let onset = (a..r_idx).rev().find(|&i| quiet(i)).unwrap_or(a);
    let offset = ((r_idx + ms(20.0)).min(b)..=b)
        .find(|&i| quiet(i))
        .unwrap_or(b);
    let st_idx = (offset + ms(60.0)).min(y.len() - 1);
    BeatMeasures {
        iso_uv: iso,
        r_uv: r,
        qrs_ms: (offset - onset) as f64 / fs * 1e3,
        st_uv: y[st_idx] - iso,
    }
}

/// Collects aligned beats and averages them.
#[derive(Debug, Clone)]
pub struct TemplateBuilder {
    fs: f64,
    pre: usize,
    post: usize,
    beats: VecDeque<(Vec<f64>, Vec<f64>)>,
}

impl TemplateBuilder {
    /// A builder at `fs`.
    pub fn new(fs: f64) -> Self {
        Self {
            fs,
            pre: (PRE_S * fs).round() as usize,
            post: (POST_S * fs).round() as usize,
            beats: VecDeque::with_capacity(BEATS),
        }
    }

    /// Samples in a beat window.
    pub fn len(&self) -> usize {
        self.pre + self.post + 1
    }

    /// True before any beat was added.
    pub fn is_empty(&self) -> bool {
        self.beats.is_empty()
    }

    /// Samples needed before the R peak, after it.
    pub fn window(&self) -> (usize, usize) {
        (self.pre, self.post)
    }

    /// Adds one beat: `raw` and `filtered` windows of [`Self::len`] samples, R at `pre`.
    pub fn add(&mut self, raw: Vec<f64>, filtered: Vec<f64>) {
        if raw.len() != self.len() || filtered.len() != self.len() {
            return;
        }
        if self.beats.len() == BEATS {
            self.beats.pop_front();
        }
        self.beats.push_back((raw, filtered));
    }

    /// The current template (None before 3 beats).
    pub fn template(&self) -> Option<Template> {
        if self.beats.len() < 3 {
            return None;
        }
        let n = self.len();
        let k = self.beats.len() as f64;
        let mut raw = vec![0.0; n];
        let mut filtered = vec![0.0; n];
        for (r, f) in &self.beats {
            for i in 0..n {
                raw[i] += r[i] / k;
                filtered[i] += f[i] / k;
            }
        }
        let rm = measure(&raw, self.pre, self.fs);
        let fm = measure(&filtered, self.pre, self.fs);
        Some(Template {
            fs_hz: self.fs,
            pre: self.pre,
            beats: self.beats.len(),
            r_change_pct: if rm.r_uv.abs() > 1e-9 {
                100.0 * (fm.r_uv / rm.r_uv - 1.0)
            } else {
                0.0
            },
            qrs_change_ms: fm.qrs_ms - rm.qrs_ms,
            st_shift_uv: fm.st_uv - rm.st_uv,
            raw,
            filtered,
            raw_measures: rm,
            filtered_measures: fm,
        })
    }
}
