//! Heart rate from RR intervals, and heart-rate variability.
//!
//! Averaging (disclosed, as monitor standards ask): the rate is 60 / the mean of the last 8
//! accepted RR intervals. An interval is accepted when it lies within 70–130 % of the median of the
//! last 8 accepted ones, which rejects the short and long intervals of a missed or an extra beat.
//! Three rejected intervals in a row that agree within 15 % replace the history: the rate has really
//! changed (a step from 80 to 120 bpm shows after 3–4 beats). The number is updated on every beat
//! and re-judged at least once a second. Instead of a number the state says "settling" (fewer than
//! 3 accepted intervals), "no beat for N s" (nothing for max(3 s, 2 × the mean RR)) or
//! "signal unreliable" (the quality check failed). Rates outside 30–250 bpm are not shown.

use std::collections::VecDeque;

use serde::Serialize;

/// What the heart-rate readout shows.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum RateState {
    /// Not enough beats yet.
    Settling,
    /// A trustworthy rate, bpm.
    Rate(f64),
    /// No beat for this many seconds.
    NoBeat(f64),
    /// The signal is not good enough to count beats.
    Unreliable,
}

impl RateState {
    /// The readout text.
    pub fn text(&self) -> String {
        match self {
            RateState::Settling => "settling".into(),
            RateState::Rate(b) => format!("{b:.0} bpm"),
            RateState::NoBeat(s) => format!("no beat for {s:.0} s"),
            RateState::Unreliable => "signal unreliable".into(),
        }
    }
}

/// Variability figures over the accepted (normal-to-normal) intervals.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Hrv {
    /// Intervals used.
    pub count: usize,
    /// Mean RR, ms.
    pub mean_rr_ms: f64,
    /// Standard deviation of the intervals, ms.
    pub sdnn_ms: f64,
    /// Root mean square of successive differences, ms.
    pub rmssd_ms: f64,
    /// Share of successive differences above 50 ms, %.
    pub pnn50: f64,
}

/// HRV of a list of NN intervals in seconds (None for fewer than 3).
pub fn hrv(nn_s: &[f64]) -> Option<Hrv> {
    if nn_s.len() < 3 {
        return None;
    }
    let n = nn_s.len() as f64;
    let mean = nn_s.iter().sum::<f64>() / n;
    let sd = (nn_s.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    let diffs: Vec<f64> = nn_s.windows(2).map(|w| w[1] - w[0]).collect();
    let rmssd = (diffs.iter().map(|d| d * d).sum::<f64>() / diffs.len() as f64).sqrt();
    let pnn50 =
        100.0 * diffs.iter().filter(|d| d.abs() > 0.050).count() as f64 / diffs.len() as f64;
    Some(Hrv {
        count: nn_s.len(),
        mean_rr_ms: mean * 1e3,
        sdnn_ms: sd * 1e3,
        rmssd_ms: rmssd * 1e3,
        pnn50,
    })
}

/// Longest NN history kept for HRV (about 5 minutes at 120 bpm).
const NN_KEEP: usize = 600;

/// The running heart-rate meter.
#[derive(Debug, Clone)]
pub struct RateMeter {
    fs: f64,
    last_beat: Option<u64>,
    accepted: VecDeque<f64>,
    rejected_run: Vec<f64>,
    nn: VecDeque<f64>,
    unreliable: bool,
}

fn median(v: &VecDeque<f64>) -> f64 {
    let mut s: Vec<f64> = v.iter().copied().collect();
    s.sort_by(f64::total_cmp);
    let m = s.len() / 2;
    if s.len() % 2 == 1 {
        s[m]
    } else {
        0.5 * (s[m - 1] + s[m])
    }
}

impl RateMeter {
    /// A meter for beats given as sample indices at `fs`.
    pub fn new(fs: f64) -> Self {
        Self {
            fs,
            last_beat: None,
            accepted: VecDeque::with_capacity(8),
            rejected_run: Vec::new(),
            nn: VecDeque::new(),
            unreliable: false,
        }
    }

    /// Marks the signal as (un)reliable (from the quality check).
    pub fn set_unreliable(&mut self, u: bool) {
        self.unreliable = u;
    }

    fn push_accepted(&mut self, rr: f64) {
        if self.accepted.len() == 8 {
            self.accepted.pop_front();
        }
        self.accepted.push_back(rr);
        if self.nn.len() == NN_KEEP {
            self.nn.pop_front();
        }
        self.nn.push_back(rr);
    }

    /// A beat at sample `s`.
    pub fn on_beat(&mut self, s: u64) {
        if let Some(last) = self.last_beat
            && s > last
        {
            let rr = (s - last) as f64 / self.fs;
            // 0.24–2 s is 30–250 bpm; anything else is not an RR interval of a heart.
            if (0.24..=2.0).contains(&rr) {
                if self.accepted.len() < 3 {
                    self.push_accepted(rr);
                } else {
                    let m = median(&self.accepted);
                    if rr >= 0.7 * m && rr <= 1.3 * m {
                        self.rejected_run.clear();
                        self.push_accepted(rr);
                    } else {
                        self.rejected_run.push(rr);
                        let n = self.rejected_run.len();
                        if n >= 3 {
                            let tail = &self.rejected_run[n - 3..];
                            let lo = tail.iter().copied().fold(f64::MAX, f64::min);
                            let hi = tail.iter().copied().fold(f64::MIN, f64::max);
                            if hi <= 1.15 * lo {
                                let keep: Vec<f64> = tail.to_vec();
                                self.accepted.clear();
                                self.rejected_run.clear();
                                for v in keep {
                                    self.push_accepted(v);
                                }
                            }
                        }
                    }
                }
            } else {
                self.rejected_run.clear();
            }
        }
        self.last_beat = Some(s);
    }

    /// The readout at sample `now`.
    pub fn state(&self, now: u64) -> RateState {
        if self.unreliable {
            return RateState::Unreliable;
        }
        let mean_rr = (!self.accepted.is_empty())
            .then(|| self.accepted.iter().sum::<f64>() / self.accepted.len() as f64);
        let since = match self.last_beat {
            Some(b) => now.saturating_sub(b) as f64 / self.fs,
            None => now as f64 / self.fs,
        };
        let limit = mean_rr.map_or(3.0, |m| (2.0 * m).max(3.0));
        if since > limit {
            return RateState::NoBeat(since);
        }
        match mean_rr {
            Some(m) if self.accepted.len() >= 3 => {
                let bpm = 60.0 / m;
                if (30.0..=250.0).contains(&bpm) {
                    RateState::Rate(bpm)
                } else {
                    RateState::Settling
                }
            }
            _ => RateState::Settling,
        }
    }

    /// HRV over the accepted intervals kept (up to about five minutes).
    pub fn hrv(&self) -> Option<Hrv> {
        let v: Vec<f64> = self.nn.iter().copied().collect();
        hrv(&v)
    }

    /// The accepted intervals kept, s (for the tachogram).
    pub fn nn_intervals(&self) -> impl Iterator<Item = f64> + '_ {
        self.nn.iter().copied()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rate_from_rr_check_values() {
        // REFERENCE.md §9 #13 [C]: 60000/RR: 750 ms → 80 bpm, 500 → 120, 2000 → 30, 240 → 250.
        for (rr_ms, bpm) in [
            (750.0, 80.0),
            (500.0, 120.0),
            (2000.0, 30.0),
            (240.0, 250.0),
        ] {
            let mut m = RateMeter::new(1000.0);
            for k in 0..6u64 {
                m.on_beat(k * rr_ms as u64);
            }
            match m.state(5 * rr_ms as u64) {
                RateState::Rate(b) => assert!((b - bpm).abs() < 1e-9, "{rr_ms} ms: {b}"),
                s => panic!("{rr_ms} ms: {s:?}"),
            }
        }
    }

    #[test]
    fn a_missed_beat_is_rejected_and_a_real_change_followed() {
        let mut m = RateMeter::new(1000.0);
        let mut t = 0;
        for _ in 0..8 {
            t += 750;
            m.on_beat(t);
        }
        t += 1500; // one beat missed
        m.on_beat(t);
        assert_eq!(m.state(t), RateState::Rate(80.0));
        for k in 1..=4 {
            t += 500;
            m.on_beat(t);
            if k >= 3 {
                assert_eq!(m.state(t), RateState::Rate(120.0), "after {k} beats at 120");
            }
        }
        assert!(matches!(m.state(t + 3100), RateState::NoBeat(s) if s > 3.0));
        m.set_unreliable(true);
        assert_eq!(m.state(t), RateState::Unreliable);
    }

    #[test]
    fn hrv_figures_by_hand() {
        // RR 800, 810, 790, 860 ms: mean 815, successive differences 10, −20, 70.
        let h = hrv(&[0.800, 0.810, 0.790, 0.860]).unwrap();
        assert!((h.mean_rr_ms - 815.0).abs() < 1e-9);
        assert!((h.rmssd_ms - ((100.0 + 400.0 + 4900.0) / 3.0f64).sqrt()).abs() < 1e-9);
        assert!((h.pnn50 - 100.0 / 3.0).abs() < 1e-9);
        let sd = ((225.0 + 25.0 + 625.0 + 2025.0) / 3.0f64).sqrt();
        assert!((h.sdnn_ms - sd).abs() < 1e-9);
    }
}
