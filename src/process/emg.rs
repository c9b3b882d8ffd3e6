//! The live EMG view of the followed channel. It does what `analysis::emg::analyse` does to a
//! recording (band-pass with the mains notches, linear envelope, moving RMS, onset detector with
//! a baseline threshold, contractions with their RMS and median frequency), but causally and
//! sample by sample: each block costs time in proportion to its samples, and a view is made
//! from what is already kept (2000 points, the contractions of the last 20 s).
//!
//! Differences from the offline analysis, by nature of a live view: the filters run forwards
//! only (the envelope lags by its group delay, tens of ms), the moving RMS is a trailing window,
//! and the threshold follows the quietest second seen in the last 20 s.

use std::collections::VecDeque;

use crate::analysis::emg::{Burst, EmgSettings, band_sections, check, frequencies, trend};
use crate::dsp::design::butterworth_lowpass;
use crate::dsp::kernel::Cascade;

/// Seconds the view covers.
pub const VIEW_S: f64 = 20.0;
/// Points of the envelope and the RMS in a view.
const POINTS: f64 = 2000.0;

pub use crate::msg::{EmgView, Mark};

/// The onset detector's state.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Detect {
    Quiet,
    /// Above the threshold since this sample, not yet for the minimum on-time.
    Rising(u64),
    /// A contraction from `on`; `below` is where the detector last went under the threshold.
    Active {
        on: u64,
        below: Option<u64>,
        sum_sq: f64,
        count: u64,
        peak: f64,
    },
}

/// The filters and the kept history.
struct Filters {
    band: Cascade,
    envelope: Cascade,
    detector: Cascade,
}

/// The live analysis.
pub struct LiveEmg {
    fs: f64,
    settings: EmgSettings,
    error: Option<String>,
    filters: Option<Filters>,
    /// Samples seen.
    n: u64,
    last_finite: f64,
    /// Squares in the trailing RMS window, and their sum.
    squares: VecDeque<f64>,
    square_sum: f64,
    rms_len: usize,
    /// The last 20 s at full rate: the detector, the band-passed signal, the moving RMS.
    det: VecDeque<f64>,
    filtered: VecDeque<f64>,
    rms: VecDeque<f64>,
    keep: usize,
    /// Envelope and RMS reduced for drawing: the current stretch's maxima, and the points.
    step: usize,
    acc: (f32, f32, usize),
    points: VecDeque<(f32, f32)>,
    /// Detector sums over 0.1 s blocks (sum, sum of squares) for the quietest second.
    block_len: usize,
    block: (f64, f64, usize),
    blocks: VecDeque<(f64, f64)>,
    /// (mean, SD) of the detector at rest, and the threshold on it.
    baseline: Option<(f64, f64)>,
    state: Detect,
    bursts: VecDeque<Burst>,
    /// Where the last contraction ended (the onset search does not go back past it).
    last_off: u64,
    pub note: Option<String>,
}

impl LiveEmg {
    /// A fresh analysis at `fs` with `settings`.
    pub fn new(fs: f64, settings: EmgSettings) -> Self {
        let keep = (VIEW_S * fs) as usize;
        let mut me = Self {
            fs,
            settings,
            error: None,
            filters: None,
            n: 0,
            last_finite: 0.0,
            squares: VecDeque::new(),
            square_sum: 0.0,
            rms_len: ((settings.rms_ms * 1e-3 * fs).round() as usize).max(1),
            det: VecDeque::with_capacity(keep),
            filtered: VecDeque::with_capacity(keep),
            rms: VecDeque::with_capacity(keep),
            keep,
            step: ((keep as f64 / POINTS).round() as usize).max(1),
            acc: (0.0, 0.0, 0),
            points: VecDeque::new(),
            block_len: ((0.1 * fs).round() as usize).max(1),
            block: (0.0, 0.0, 0),
            blocks: VecDeque::new(),
            baseline: None,
            state: Detect::Quiet,
            bursts: VecDeque::new(),
            last_off: 0,
            note: None,
        };
        if let Err(e) = me.design() {
            me.error = Some(e);
        }
        me
    }

    fn design(&mut self) -> Result<(), String> {
        let (s, fs) = (&self.settings, self.fs);
        check(s, fs).map_err(|e| e.to_string())?;
        let band = band_sections(s, fs).map_err(|e| e.to_string())?;
        let lp = |hz: f64| butterworth_lowpass(2, hz, fs).map_err(|e| e.to_string());
        let env = lp(s.envelope_hz)?;
        let det = lp(s.onset_hz.min(crate::dsp::highest_corner_hz(fs)))?;
        self.filters = Some(Filters {
            band: Cascade::new(&band, 0.0),
            envelope: Cascade::new(&env, 0.0),
            detector: Cascade::new(&det, 0.0),
        });
        Ok(())
    }

    /// The settings in force (marks included).
    pub fn settings(&self) -> &EmgSettings {
        &self.settings
    }

    /// Takes the newest samples (µV) of the followed channel.
    pub fn push(&mut self, samples: impl IntoIterator<Item = f64>) {
        for x in samples {
            self.push_one(x);
        }
    }

    fn push_one(&mut self, x: f64) {
        // A sample that is not a number holds the last one: the filters' state stays finite.
        let x = if x.is_finite() { x } else { self.last_finite };
        self.last_finite = x;
        let first = self.n == 0;
        let Some(f) = self.filters.as_mut() else {
            return;
        };
        if first {
            // The band-pass starts in the steady state of the first sample: an electrode's
            // offset does not ring through it.
            f.band.settle(&f.band.design.clone(), x);
        }
        let y = f.band.run(x);
        let env = f.envelope.run(y.abs());
        let det = f.detector.run(y.abs());
        self.squares.push_back(y * y);
        self.square_sum += y * y;
        if self.squares.len() > self.rms_len {
            self.square_sum -= self.squares.pop_front().unwrap_or(0.0);
        }
        if self.n.is_multiple_of(4096) {
            // Re-sum now and then so rounding does not accumulate.
            self.square_sum = self.squares.iter().sum();
        }
        let rms = (self.square_sum.max(0.0) / self.squares.len() as f64).sqrt();
        for (q, v) in [
            (&mut self.det, det),
            (&mut self.filtered, y),
            (&mut self.rms, rms),
        ] {
            if q.len() == self.keep {
                q.pop_front();
            }
            q.push_back(v);
        }
        self.reduce(env, rms);
        self.baseline_block(det);
        self.detect(det, y, rms);
        self.n += 1;
    }

    /// The sample `i` of the kept history `q`, when still kept.
    fn at(&self, q: &VecDeque<f64>, i: u64) -> Option<f64> {
        let first = self.n + 1 - q.len() as u64;
        i.checked_sub(first)
            .and_then(|k| q.get(k as usize).copied())
    }

    fn reduce(&mut self, env: f64, rms: f64) {
        let a = &mut self.acc;
        a.0 = a.0.max(env as f32);
        a.1 = a.1.max(rms as f32);
        a.2 += 1;
        if a.2 == self.step {
            self.points.push_back((a.0, a.1));
            *a = (0.0, 0.0, 0);
            if self.points.len() > POINTS as usize {
                self.points.pop_front();
            }
        }
    }

    /// Adds the detector's sample to the 0.1 s block sums; a full block may move the baseline.
    fn baseline_block(&mut self, det: f64) {
        let b = &mut self.block;
        b.0 += det;
        b.1 += det * det;
        b.2 += 1;
        if b.2 < self.block_len {
            return;
        }
        self.blocks.push_back((b.0, b.1));
        *b = (0.0, 0.0, 0);
        if self.blocks.len() as f64 > VIEW_S * 10.0 {
            self.blocks.pop_front();
        }
        self.baseline = match self.settings.baseline_uv {
            Some(b) => Some(b),
            None => self.quietest_second(),
        };
    }

    /// (mean, SD) of the detector over the quietest second (ten blocks) kept.
    fn quietest_second(&self) -> Option<(f64, f64)> {
        let per = 10;
        if self.blocks.len() < per {
            return None;
        }
        let len = (per * self.block_len) as f64;
        let mut best: Option<(f64, f64)> = None;
        let (mut s, mut q) = (0.0, 0.0);
        for (k, b) in self.blocks.iter().enumerate() {
            s += b.0;
            q += b.1;
            if k >= per {
                s -= self.blocks[k - per].0;
                q -= self.blocks[k - per].1;
            }
            if k + 1 >= per {
                let mean = s / len;
                let sd = (q / len - mean * mean).max(0.0).sqrt();
                if best.is_none_or(|b| mean < b.0) {
                    best = Some((mean, sd));
                }
            }
        }
        best
    }

    fn thresholds(&self) -> Option<(f64, f64)> {
        self.baseline
            .map(|(m, sd)| (m + self.settings.k_sd * sd, m + sd))
    }

    fn ms(&self, ms: f64) -> u64 {
        ((ms * 1e-3 * self.fs).round() as u64).max(1)
    }

    /// One step of the onset detector at sample `self.n`.
    fn detect(&mut self, det: f64, y: f64, rms: f64) {
        let Some((thr, _)) = self.thresholds() else {
            return;
        };
        let i = self.n;
        self.state = match self.state {
            Detect::Quiet if det > thr => Detect::Rising(i),
            Detect::Quiet => Detect::Quiet,
            Detect::Rising(_) if det <= thr => Detect::Quiet,
            Detect::Rising(start) if i + 1 - start >= self.ms(self.settings.min_on_ms) => {
                self.onset(start)
            }
            s @ Detect::Rising(_) => s,
            Detect::Active {
                on,
                below,
                sum_sq,
                count,
                peak,
            } => {
                let below = if det > thr { None } else { below.or(Some(i)) };
                let (sum_sq, count, peak) = (sum_sq + y * y, count + 1, peak.max(rms));
                match below {
                    Some(b) if i + 1 - b >= self.ms(self.settings.min_off_ms) => {
                        self.offset(on, b);
                        Detect::Quiet
                    }
                    _ => Detect::Active {
                        on,
                        below,
                        sum_sq,
                        count,
                        peak,
                    },
                }
            }
        };
    }

    /// A contraction confirmed from the run that began at `start`: joined to earlier runs of at
    /// least 25 ms and taken back to within 1 SD of the baseline, as `analysis::emg` does.
    fn onset(&mut self, start: u64) -> Detect {
        let (thr, near) = self.thresholds().unwrap_or((f64::INFINITY, f64::INFINITY));
        let (run_min, back_max, min_off) = (
            self.ms(25.0),
            self.ms(50.0),
            self.ms(self.settings.min_off_ms),
        );
        let floor = self.last_off.max(self.n + 1 - self.det.len() as u64);
        let (mut j, mut below, mut run, mut on) = (start, 0, 0, start);
        while j > floor && below < min_off {
            j -= 1;
            if self.at(&self.det, j).is_some_and(|d| d > thr) {
                run += 1;
                below = 0;
                if run >= run_min {
                    on = j;
                }
            } else {
                run = 0;
                below += 1;
            }
        }
        let lo = on.saturating_sub(back_max).max(floor);
        let on = (lo..on)
            .rev()
            .find(|&j| self.at(&self.det, j).is_some_and(|d| d <= near))
            .map_or(on, |j| j + 1);
        // The sums so far over the contraction (once per contraction).
        let (mut sum_sq, mut count, mut peak) = (0.0, 0, 0.0f64);
        for k in on..self.n {
            if let (Some(y), Some(r)) = (self.at(&self.filtered, k), self.at(&self.rms, k)) {
                sum_sq += y * y;
                count += 1;
                peak = peak.max(r);
            }
        }
        Detect::Active {
            on,
            below: None,
            sum_sq,
            count,
            peak,
        }
    }

    /// The contraction from `on` ended where the detector went below the threshold at `below`:
    /// the end of its last run of 25 ms above, then on (at most 50 ms) to within 1 SD.
    fn offset(&mut self, on: u64, below: u64) {
        let (thr, near) = self.thresholds().unwrap_or((f64::INFINITY, f64::INFINITY));
        let (run_min, back_max) = (self.ms(25.0), self.ms(50.0));
        let mut run = 0;
        let mut end = below;
        for j in (on..below).rev() {
            if self.at(&self.det, j).is_some_and(|d| d > thr) {
                run += 1;
                if run >= run_min {
                    end = j + run;
                    break;
                }
            } else {
                run = 0;
            }
        }
        let hi = (end + back_max).min(self.n + 1);
        let off = (end..hi)
            .find(|&j| self.at(&self.det, j).is_some_and(|d| d <= near))
            .unwrap_or(end);
        let seg: Vec<f64> = (on..off)
            .filter_map(|k| self.at(&self.filtered, k))
            .collect();
        let peak = (on..off)
            .filter_map(|k| self.at(&self.rms, k))
            .fold(0.0, f64::max);
        let burst = self.burst(on, off, &seg, peak);
        self.bursts.push_back(burst);
        self.last_off = off;
        let oldest = self.n as f64 / self.fs - VIEW_S;
        while self.bursts.front().is_some_and(|b| b.off_s < oldest) {
            self.bursts.pop_front();
        }
    }

    fn burst(&self, on: u64, off: u64, seg: &[f64], peak: f64) -> Burst {
        let r = (seg.iter().map(|v| v * v).sum::<f64>() / seg.len().max(1) as f64).sqrt();
        let f = frequencies(seg, self.fs);
        Burst {
            on_s: on as f64 / self.fs,
            off_s: off as f64 / self.fs,
            peak_uv: peak,
            rms_uv: r,
            mean_hz: f.map(|f| f.0),
            median_hz: f.map(|f| f.1),
            pct_mvc: None,
        }
    }

    /// The contraction still running, if any, as it stands.
    fn running(&self) -> Option<Burst> {
        match self.state {
            Detect::Active {
                on,
                sum_sq,
                count,
                peak,
                ..
            } => Some(Burst {
                on_s: on as f64 / self.fs,
                off_s: self.n as f64 / self.fs,
                peak_uv: peak,
                rms_uv: (sum_sq / count.max(1) as f64).sqrt(),
                mean_hz: None,
                median_hz: None,
                pct_mvc: None,
            }),
            _ => None,
        }
    }

    /// Applies a mark from what the analysis holds now.
    ///
    /// # Errors
    /// Too little signal, or (MVC) no contraction in view, as one line.
    pub fn mark(&mut self, m: Mark) -> Result<(), String> {
        match m {
            Mark::Clear => {
                self.settings.baseline_uv = None;
                self.settings.mvc_rms_uv = None;
                self.baseline = self.quietest_second();
            }
            Mark::Rest => {
                let last: Vec<f64> = self
                    .det
                    .iter()
                    .rev()
                    .take(self.fs as usize)
                    .copied()
                    .collect();
                if last.len() < self.fs as usize {
                    return Err("mark rest after a second of signal".into());
                }
                let mean = last.iter().sum::<f64>() / last.len() as f64;
                let var = last.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / last.len() as f64;
                self.settings.baseline_uv = Some((mean, var.sqrt()));
                self.baseline = self.settings.baseline_uv;
            }
            Mark::Mvc => {
                let b = self
                    .running()
                    .or_else(|| self.bursts.back().copied())
                    .ok_or("no contraction in view to take as the maximum")?;
                self.settings.mvc_rms_uv = Some(b.rms_uv);
            }
        }
        Ok(())
    }

    /// The view as of now.
    pub fn view(&self) -> EmgView {
        let t_end = self.n as f64 / self.fs;
        let dt = self.step as f64 / self.fs;
        let t0 = (self.n / self.step as u64) as f64 * dt - self.points.len() as f64 * dt;
        let mut v = EmgView {
            t0_s: t0,
            dt_s: dt,
            envelope: self.points.iter().map(|p| p.0).collect(),
            rms: self.points.iter().map(|p| p.1).collect(),
            bursts: Vec::new(),
            threshold_uv: self.thresholds().map_or(0.0, |t| t.0),
            trend: Vec::new(),
            trend_change_pct: None,
            error: self.error.clone(),
            settings: self.settings,
            note: self.note.clone(),
        };
        if v.error.is_some() {
            return v;
        }
        if t_end < 2.0 {
            v.error = Some("EMG view: waiting for 2 s of signal".into());
            return v;
        }
        let mvc = self.settings.mvc_rms_uv.filter(|m| *m > 0.0);
        v.bursts = self
            .bursts
            .iter()
            .copied()
            .chain(self.running())
            .map(|b| Burst {
                pct_mvc: mvc.map(|m| 100.0 * b.rms_uv / m),
                ..b
            })
            .collect();
        if let Some(t) = trend(&v.bursts) {
            v.trend = t.points;
            v.trend_change_pct = Some(t.change_pct);
        }
        v
    }
}

impl super::Dsp {
    /// The EMG view on (with these settings) or off. The marks made so far stay unless the new
    /// settings bring their own.
    pub(super) fn set_emg(&mut self, e: Option<EmgSettings>) {
        let keep = self
            .emg
            .as_ref()
            .map(|o| (o.settings.baseline_uv, o.settings.mvc_rms_uv));
        self.emg = e.map(|mut n| {
            if let Some((b, m)) = keep {
                n.baseline_uv = n.baseline_uv.or(b);
                n.mvc_rms_uv = n.mvc_rms_uv.or(m);
            }
            super::Emg {
                settings: n,
                live: None,
                view: None,
                at: std::time::Instant::now(),
            }
        });
        self.restart_emg();
    }

    /// A fresh live EMG analysis of the followed channel, fed once with the newest 20 s it
    /// still has (after new settings, another channel or a new stream); from then on each
    /// block feeds it its own samples only.
    pub(super) fn restart_emg(&mut self) {
        let Some(e) = self.emg.as_mut() else { return };
        e.view = None;
        e.live = self.state.as_ref().map(|r| {
            let mut live = LiveEmg::new(r.fs, e.settings);
            live.push(r.raw_tail(self.follow, VIEW_S));
            live
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Rest with noise, then contractions at `bursts` (s), as µV at `fs`.
    fn record(fs: f64, seconds: f64, bursts: &[(f64, f64)], seed: u64) -> Vec<f64> {
        let mut rng = crate::rng::Rng::new(seed);
        (0..(seconds * fs) as usize)
            .map(|i| {
                let t = i as f64 / fs;
                let on = bursts.iter().any(|&(a, b)| t >= a && t < b);
                // An electrode offset, 60 Hz pickup, rest noise and, in a contraction, broadband
                // activity 20× the rest.
                300.0
                    + 20.0 * (std::f64::consts::TAU * 60.0 * t).sin()
                    + rng.normal() * if on { 100.0 } else { 5.0 }
            })
            .collect()
    }

    fn settings() -> EmgSettings {
        EmgSettings {
            notch_hz: Some(60.0),
            ..EmgSettings::default()
        }
    }

    #[test]
    fn contractions_are_found_where_they_are_and_measured_as_offline() {
        let fs = 1000.0;
        let truth = [(2.0, 4.0), (7.0, 9.5)];
        let x = record(fs, 14.0, &truth, 3);
        let mut live = LiveEmg::new(fs, settings());
        for block in x.chunks(37) {
            live.push(block.iter().copied());
        }
        let v = live.view();
        assert!(v.error.is_none(), "{:?}", v.error);
        assert_eq!(v.bursts.len(), 2, "{:?}", v.bursts);
        // The offline analysis of the same record (zero-phase, the whole record at once).
        let an = crate::analysis::emg::analyse(&x, fs, &settings()).unwrap();
        let mut causal = x.clone();
        crate::dsp::chain::filter_settled(&band_sections(&settings(), fs).unwrap(), &mut causal);
        for ((l, o), (on, off)) in v.bursts.iter().zip(&an.bursts).zip(truth) {
            // Onsets where the activity starts; offsets late by at most the minimum off-time
            // and the causal filters' lag.
            assert!((l.on_s - on).abs() < 0.03, "{l:?}");
            assert!(l.off_s >= off - 0.01 && l.off_s < off + 0.12, "{l:?}");
            // The RMS over the contraction's span of the whole record band-passed in one
            // causal pass (the same filter, run over the record at once).
            let span = &causal[(l.on_s * fs) as usize..(l.off_s * fs) as usize];
            let rms = (span.iter().map(|v| v * v).sum::<f64>() / span.len() as f64).sqrt();
            assert!((l.rms_uv / rms - 1.0).abs() < 0.05, "{} {rms}", l.rms_uv);
            let (lm, om) = (l.median_hz.unwrap(), o.median_hz.unwrap());
            assert!((lm - om).abs() < 0.1 * om, "{lm} {om}");
        }
    }

    #[test]
    fn block_size_does_not_change_the_view() {
        let fs = 1000.0;
        let x = record(fs, 8.0, &[(3.0, 5.0)], 8);
        let mut a = LiveEmg::new(fs, settings());
        let mut b = LiveEmg::new(fs, settings());
        a.push(x.iter().copied());
        for block in x.chunks(5) {
            b.push(block.iter().copied());
        }
        assert_eq!(a.view(), b.view());
    }

    #[test]
    fn history_stays_bounded_over_a_long_stream() {
        let fs = 2000.0;
        let mut live = LiveEmg::new(fs, settings());
        for k in 0..6 {
            live.push(record(fs, 10.0, &[(2.0, 3.0)], k));
        }
        let v = live.view();
        assert!(v.envelope.len() <= 2000);
        assert!(live.det.len() <= (VIEW_S * fs) as usize);
        // 60 s in: only the contractions of the last 20 s are listed (one per 10 s).
        assert_eq!(v.bursts.len(), 2, "{:?}", v.bursts);
        assert!((v.t0_s + v.dt_s * v.envelope.len() as f64 - 60.0).abs() < 0.02);
    }

    #[test]
    fn marks_take_the_newest_second_and_the_newest_contraction() {
        let fs = 1000.0;
        let mut live = LiveEmg::new(fs, settings());
        live.push(record(fs, 6.0, &[(2.0, 4.0)], 5));
        live.mark(Mark::Mvc).unwrap();
        let v = live.view();
        assert!((v.bursts[0].pct_mvc.unwrap() - 100.0).abs() < 1e-9);
        live.mark(Mark::Rest).unwrap();
        assert!(live.settings().baseline_uv.is_some());
        live.mark(Mark::Clear).unwrap();
        assert_eq!(live.settings().mvc_rms_uv, None);
        let mut fresh = LiveEmg::new(fs, settings());
        fresh.push(record(fs, 3.0, &[], 5));
        assert!(
            fresh
                .mark(Mark::Mvc)
                .unwrap_err()
                .contains("no contraction")
        );
    }

    #[test]
    fn nan_samples_and_bad_settings_give_a_view_not_a_panic() {
        let fs = 1000.0;
        let mut live = LiveEmg::new(fs, settings());
        let mut x = record(fs, 4.0, &[], 1);
        x[100] = f64::NAN;
        x[2000] = f64::INFINITY;
        live.push(x);
        let v = live.view();
        assert!(v.envelope.iter().all(|e| e.is_finite()));
        let bad = EmgSettings {
            envelope_hz: 30.0,
            ..settings()
        };
        let v = LiveEmg::new(fs, bad).view();
        assert!(v.error.unwrap().contains("2–10 Hz"));
    }
}
