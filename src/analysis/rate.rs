//! Heart rate from RR intervals, and heart-rate variability.
//!
//! **How the readout averages** (disclosed, as the monitor standards ask: ANSI/AAMI EC13
//! §4.1.2.1 d, IEC 60601-2-27 201.7.9.2.9.101 b; clause numbers recalled from memory):
//! - The intervals are those between consecutive detected beats, of every beat (normal or not):
//!   the standards' expected readings for bigeminy are 60 / the mean of all intervals.
//! - The window: the most recent intervals that together span at most 10 s, at most 16 of them,
//!   an even number (so the two intervals of an alternating rhythm are always counted in pairs),
//!   at least 4.
//! - With 6 or more, the longest and the shortest are dropped (a missed beat or an extra one
//!   moves the mean by less than one interval in a dozen) and the rest averaged: rate = 60 / mean.
//! - The readout is re-evaluated once a second of stream time (the monitor and
//!   `leadline beats --rate-out` evaluate the same meter at the same instants).
//! - Instead of a number: *settling* (fewer than 4 intervals), *no beat* (nothing for
//!   max(3 s, 2 × the mean interval)), *unreliable* (the quality check failed, or two beats
//!   closer than 240 ms — faster than 250 bpm — in the last 5 s: an artefact, not a heart; the
//!   window then starts again after it). Rates outside 30–250 bpm are not shown. Beats whose R
//!   deflection is under 0.1 mV are not counted.
//!
//! HRV uses only normal-to-normal intervals: within 70–130 % of the median of the last 8 such.

use std::collections::VecDeque;

use serde::Serialize;

/// Why the readout shows no number although beats are coming.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Unreliable {
    /// The signal-quality check failed (electrode off, flat, clipping, heavy noise).
    Quality,
    /// Beats closer than a heart can beat: an artefact burst.
    TooFast,
    /// QRS-like energy arrives between the beats: noise that can hide or imitate beats.
    Noise,
    /// The averaged rate is outside 30–250 bpm.
    OutOfRange,
}

impl Unreliable {
    /// A few words for the readout and rate.csv.
    pub fn text(self) -> &'static str {
        match self {
            Unreliable::Quality => "signal quality",
            Unreliable::TooFast => "beats too close (artefact)",
            Unreliable::Noise => "QRS-like noise between beats",
            Unreliable::OutOfRange => "rate outside 30–250 bpm",
        }
    }
}

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
    Unreliable(Unreliable),
}

impl RateState {
    /// The readout text.
    pub fn text(&self) -> String {
        match self {
            RateState::Settling => "settling".into(),
            RateState::Rate(b) => format!("{b:.0} bpm"),
            RateState::NoBeat(s) => format!("no beat for {s:.0} s"),
            RateState::Unreliable(_) => "signal unreliable".into(),
        }
    }

    /// The state's name in rate.csv: settling, ok, no_beat or unreliable.
    pub fn name(&self) -> &'static str {
        match self {
            RateState::Settling => "settling",
            RateState::Rate(_) => "ok",
            RateState::NoBeat(_) => "no_beat",
            RateState::Unreliable(_) => "unreliable",
        }
    }

    /// The rate shown, if one is.
    pub fn bpm(&self) -> Option<f64> {
        match self {
            RateState::Rate(b) => Some(*b),
            _ => None,
        }
    }

    /// Why no number is shown, for rate.csv's reason column.
    pub fn reason(&self) -> &'static str {
        match self {
            RateState::Unreliable(u) => u.text(),
            RateState::NoBeat(_) => "no beat detected",
            RateState::Settling => "too few intervals yet",
            RateState::Rate(_) => "",
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

/// Window of the readout: at most this many intervals, s.
const WINDOW_S: f64 = 10.0;
/// At most this many intervals.
const WINDOW_MAX: usize = 16;
/// At least this many intervals before a number is shown.
const WINDOW_MIN: usize = 4;
/// Intervals shorter than this are not a heart's (250 bpm).
const MIN_RR_S: f64 = 0.24;
/// Intervals longer than this are a pause or a missed stretch (30 bpm).
const MAX_RR_S: f64 = 2.0;

/// The running heart-rate meter.
#[derive(Debug, Clone)]
pub struct RateMeter {
    fs: f64,
    last_beat: Option<u64>,
    /// Recent intervals: (end sample, length s), every one (also the implausible ones).
    recent: VecDeque<(u64, f64)>,
    accepted: VecDeque<f64>,
    nn: VecDeque<f64>,
    unreliable: Option<Unreliable>,
    too_fast: bool,
    /// Intervals that began before this sample are not averaged (an artefact ended here).
    cut: u64,
}

fn median(v: &VecDeque<f64>) -> f64 {
    crate::numeric::median(v)
}

impl RateMeter {
    /// A meter for beats given as sample indices at `fs`.
    pub fn new(fs: f64) -> Self {
        Self {
            fs,
            last_beat: None,
            recent: VecDeque::with_capacity(64),
            accepted: VecDeque::with_capacity(8),
            nn: VecDeque::new(),
            unreliable: None,
            too_fast: false,
            cut: 0,
        }
    }

    /// Marks the signal as (un)reliable (from the quality check), and why.
    pub fn set_unreliable(&mut self, u: Option<Unreliable>) {
        self.unreliable = u;
    }

    /// QRS-like events are arriving faster than a heart beats (from the detector) at sample
    /// `now`: an artefact burst, whatever the beats accepted look like. The readout's window
    /// starts again after it.
    pub fn set_too_fast(&mut self, f: bool, now: u64) {
        self.too_fast = f;
        if f {
            self.cut = now;
        }
    }

    /// A beat at sample `s`.
    pub fn on_beat(&mut self, s: u64) {
        if let Some(last) = self.last_beat
            && s > last
        {
            let rr = (s - last) as f64 / self.fs;
            if self.recent.len() == 64 {
                self.recent.pop_front();
            }
            self.recent.push_back((s, rr));
            if (MIN_RR_S..=MAX_RR_S).contains(&rr) {
                self.nn_candidate(rr);
            }
        }
        self.last_beat = Some(s);
    }

    /// HRV's normal-to-normal filter: within 70–130 % of the median of the last 8 accepted.
    fn nn_candidate(&mut self, rr: f64) {
        let normal = self.accepted.len() < 3 || {
            let m = median(&self.accepted);
            rr >= 0.7 * m && rr <= 1.3 * m
        };
        if !normal {
            return;
        }
        if self.accepted.len() == 8 {
            self.accepted.pop_front();
        }
        self.accepted.push_back(rr);
        if self.nn.len() == NN_KEEP {
            self.nn.pop_front();
        }
        self.nn.push_back(rr);
    }

    /// The intervals the readout averages (see the module doc), newest last, and whether the
    /// run of usable intervals was cut short by one too short for a heart.
    fn window(&self) -> (Vec<f64>, bool) {
        let mut w = Vec::with_capacity(WINDOW_MAX);
        let mut span = 0.0;
        let mut cut_by_short = false;
        for &(end, rr) in self.recent.iter().rev() {
            if !(MIN_RR_S..=MAX_RR_S).contains(&rr) {
                // A pause or an artefact ends the run of usable intervals.
                cut_by_short = rr < MIN_RR_S;
                break;
            }
            if (end as f64) - rr * self.fs < self.cut as f64 {
                cut_by_short = true;
                break;
            }
            if w.len() == WINDOW_MAX || span + rr > WINDOW_S {
                break;
            }
            span += rr;
            w.push(rr);
        }
        if w.len() % 2 == 1 && w.len() > WINDOW_MIN {
            w.pop();
        }
        w.reverse();
        (w, cut_by_short)
    }

    /// How many of the window's intervals repeat neither the interval before nor the one two
    /// before within 20 % of the window's median (and how many were judged). A regular rhythm,
    /// or one alternating two intervals (bigeminy), repeats; a beat invented or lost in noise
    /// leaves intervals that do not.
    pub fn unrepeated(&self) -> (usize, usize) {
        let (w, _) = self.window();
        if w.len() < 4 {
            return (0, 0);
        }
        let mut sorted = w.clone();
        sorted.sort_by(f64::total_cmp);
        let med = sorted[sorted.len() / 2];
        let odd = (2..w.len())
            .filter(|&k| (w[k] - w[k - 1]).abs() > 0.2 * med && (w[k] - w[k - 2]).abs() > 0.2 * med)
            .count();
        (odd, w.len() - 2)
    }

    /// How regular the rhythm is, 0–1: the share of successive intervals in the averaging
    /// window that differ by at most 12 % (a sinus rhythm's breathing moves them less; a
    /// bigeminy alternates by far more). None with fewer than 4 intervals. Reported beside the
    /// signal quality, never folded into it.
    pub fn regularity(&self) -> Option<f64> {
        let (w, _) = self.window();
        if w.len() < 4 {
            return None;
        }
        let near = w
            .windows(2)
            .filter(|p| (p[1] - p[0]).abs() <= 0.12 * p[0].max(p[1]))
            .count();
        Some(near as f64 / (w.len() - 1) as f64)
    }

    /// The averaged rate over the window, bpm, and how many intervals it used.
    pub fn averaged_bpm(&self) -> Option<(f64, usize)> {
        let (mut w, _) = self.window();
        if w.len() < WINDOW_MIN {
            return None;
        }
        if w.len() >= 6 {
            w.sort_by(f64::total_cmp);
            w.remove(w.len() - 1);
            w.remove(0);
        }
        let mean = w.iter().sum::<f64>() / w.len() as f64;
        Some((60.0 / mean, w.len()))
    }

    /// The readout at sample `now`.
    pub fn state(&self, now: u64) -> RateState {
        if let Some(why) = self.unreliable {
            return RateState::Unreliable(why);
        }
        let since = match self.last_beat {
            Some(b) => now.saturating_sub(b) as f64 / self.fs,
            None => now as f64 / self.fs,
        };
        let avg = self.averaged_bpm();
        let limit = avg.map_or(3.0, |(bpm, _)| (2.0 * 60.0 / bpm).max(3.0));
        if since > limit {
            return RateState::NoBeat(since);
        }
        let recent_fast = self
            .recent
            .iter()
            .rev()
            .take_while(|(end, _)| now.saturating_sub(*end) as f64 <= 5.0 * self.fs)
            .filter(|(_, rr)| *rr < MIN_RR_S)
            .count();
        if recent_fast >= 1 || self.too_fast {
            return RateState::Unreliable(Unreliable::TooFast);
        }
        match avg {
            Some((bpm, _)) if (30.0..=250.0).contains(&bpm) => RateState::Rate(bpm),
            Some(_) => RateState::Unreliable(Unreliable::OutOfRange),
            // Refilling after an artefact is not the settling of a new stream.
            None if self.window().1 => RateState::Unreliable(Unreliable::TooFast),
            None => RateState::Settling,
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
        // docs/REFERENCES.md §9 #13 [C]: 60000/RR: 750 ms → 80 bpm, 500 → 120, 2000 → 30, 240 → 250.
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
    fn a_missed_beat_barely_moves_the_rate_and_a_step_is_followed() {
        let mut m = RateMeter::new(1000.0);
        let mut t = 0;
        for _ in 0..12 {
            t += 750;
            m.on_beat(t);
        }
        t += 1500; // one beat missed: the longest interval is dropped from the mean
        m.on_beat(t);
        assert_eq!(m.state(t), RateState::Rate(80.0));
        // A step to 120 bpm: within 10 % (108–132) after a few beats, exactly after the window.
        let mut reached = None;
        for k in 1..=24 {
            t += 500;
            m.on_beat(t);
            if let RateState::Rate(b) = m.state(t)
                && reached.is_none()
                && (b - 120.0).abs() <= 12.0
            {
                reached = Some(k);
            }
        }
        assert!(reached.is_some_and(|k| k <= 12), "{reached:?}");
        assert_eq!(m.state(t), RateState::Rate(120.0));
        assert!(matches!(m.state(t + 3100), RateState::NoBeat(s) if s > 3.0));
        m.set_unreliable(Some(Unreliable::Quality));
        assert_eq!(m.state(t), RateState::Unreliable(Unreliable::Quality));
    }

    #[test]
    fn alternating_intervals_average_to_the_expected_rate() {
        // Ventricular bigeminy: RR 550 and 947 ms alternate; expected 80 bpm (ANSI/AAMI EC13
        // fig. 3a, recalled from memory): 60 / 0.7485 = 80.16.
        let mut m = RateMeter::new(1000.0);
        let mut t = 0;
        for k in 0..40 {
            t += if k % 2 == 0 { 550 } else { 947 };
            m.on_beat(t);
            if k >= 8 {
                let b = m.state(t).bpm().unwrap();
                assert!((b - 80.16).abs() < 0.1, "after {k}: {b}");
            }
        }
    }

    #[test]
    fn beats_faster_than_a_heart_are_not_a_rate() {
        let mut m = RateMeter::new(1000.0);
        let mut t = 0;
        for _ in 0..10 {
            t += 800;
            m.on_beat(t);
        }
        for _ in 0..10 {
            t += 200; // 300 bpm of artefact
            m.on_beat(t);
        }
        assert_eq!(m.state(t), RateState::Unreliable(Unreliable::TooFast));
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
