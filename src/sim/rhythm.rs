//! Test rhythms: beats placed one by one on a schedule, for the heart-rate meter's tests and for
//! replaying the monitor standards' irregular-rhythm cases on the bench.
//!
//! The beat is the simulator's own: the five waves of the ECGSYN model (McSharry et al., IEEE
//! TBME 50(3):289–294, 2003) with their relative sizes and widths, written as Gaussians in time
//! around the R peak instead of on the model's phase circle (so each beat can have its own
//! interval and shape). A ventricular beat has no P wave, a QRS about three times as wide and
//! half again as tall, and a T wave of the opposite sign (common practice for a premature
//! ventricular beat). The rhythms follow the descriptions of the standards' irregular-rhythm
//! figures (ANSI/AAMI EC13 figure 3; docs/REFERENCES.md §3, recalled from memory); the intervals of
//! the slow and rapid cases are our own choice with the expected mean rate. No recording is
//! used.

use std::collections::VecDeque;

use serde::{Deserialize, Serialize};

/// The rhythm the simulator's heart follows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum Rhythm {
    /// The ECGSYN model: sinus rhythm with heart-rate variability at the set rate.
    #[default]
    Sinus,
    /// Normal and ventricular beats alternate, RR 550 ms then 947 ms: 80 bpm expected.
    VentricularBigeminy,
    /// Slow alternating bigeminy, RR 750 ms then 1250 ms: 60 bpm expected.
    SlowAlternatingBigeminy,
    /// Rapid alternating bigeminy, RR 400 ms then 600 ms: 120 bpm expected.
    RapidAlternatingBigeminy,
    /// Wide beats of alternating polarity every 667 ms: 90 bpm expected.
    BidirectionalSystoles,
}

impl Rhythm {
    /// Every rhythm, for pickers.
    pub const ALL: [Rhythm; 5] = [
        Rhythm::Sinus,
        Rhythm::VentricularBigeminy,
        Rhythm::SlowAlternatingBigeminy,
        Rhythm::RapidAlternatingBigeminy,
        Rhythm::BidirectionalSystoles,
    ];

    /// The name in the GUI and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Rhythm::Sinus => "sinus",
            Rhythm::VentricularBigeminy => "ventricular-bigeminy",
            Rhythm::SlowAlternatingBigeminy => "slow-alternating-bigeminy",
            Rhythm::RapidAlternatingBigeminy => "rapid-alternating-bigeminy",
            Rhythm::BidirectionalSystoles => "bidirectional-systoles",
        }
    }

    /// The heart rate a meter should read, bpm (None for sinus: the set rate).
    pub fn expected_bpm(self) -> Option<f64> {
        match self {
            Rhythm::Sinus => None,
            Rhythm::VentricularBigeminy => Some(80.0),
            Rhythm::SlowAlternatingBigeminy => Some(60.0),
            Rhythm::RapidAlternatingBigeminy => Some(120.0),
            Rhythm::BidirectionalSystoles => Some(90.0),
        }
    }

    /// One period of the rhythm: (interval before the beat, s; the beat).
    pub fn pattern(self, r_mv: f64) -> Vec<(f64, BeatShape)> {
        let n = BeatShape::normal(r_mv);
        let v = BeatShape::ventricular(r_mv);
        match self {
            Rhythm::Sinus => vec![(1.0, n)],
            Rhythm::VentricularBigeminy => vec![(0.947, n), (0.550, v)],
            Rhythm::SlowAlternatingBigeminy => vec![(1.25, n), (0.75, v)],
            Rhythm::RapidAlternatingBigeminy => vec![(0.60, n), (0.40, v)],
            Rhythm::BidirectionalSystoles => vec![
                (2.0 / 3.0, v),
                (
                    2.0 / 3.0,
                    BeatShape {
                        scale: -v.scale,
                        ..v
                    },
                ),
            ],
        }
    }
}

/// The shape of one beat.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BeatShape {
    /// R amplitude, mV (negative: the beat points down).
    pub scale: f64,
    /// QRS duration, s (about 0.09 s for a normal beat).
    pub qrs_s: f64,
    /// P wave present.
    pub p_wave: bool,
    /// T amplitude relative to R (ECGSYN's is 0.4; negative: inverted T).
    pub t_rel: f64,
}

impl BeatShape {
    /// A normal beat with this R amplitude.
    pub fn normal(r_mv: f64) -> Self {
        Self {
            scale: r_mv,
            qrs_s: 0.09,
            p_wave: true,
            t_rel: 0.4,
        }
    }

    /// A ventricular beat: no P, wide QRS, taller, T of the opposite sign.
    pub fn ventricular(r_mv: f64) -> Self {
        Self {
            scale: 1.5 * r_mv,
            qrs_s: 0.14,
            p_wave: false,
            t_rel: -0.35,
        }
    }

    /// The beat's value t seconds after its R peak, mV.
    pub fn value_mv(&self, t: f64) -> f64 {
        let g = |c: f64, w: f64| (-(t - c) * (t - c) / (2.0 * w * w)).exp();
        // ECGSYN's waves as Gaussians in time: relative sizes a·b² (normalised to R), widths
        // b/(2π) s at 60 bpm, Q and S at ±π/12 rad = ±42 ms for a 90 ms QRS.
        let k = self.qrs_s / 0.09;
        let qrs =
            -0.167 * g(-0.042 * k, 0.016 * k) + g(0.0, 0.016 * k) - 0.25 * g(0.042 * k, 0.016 * k);
        let p = if self.p_wave {
            0.25 * g(-0.2, 0.04)
        } else {
            0.0
        };
        let t_wave = self.t_rel * g(0.25 + 0.5 * (self.qrs_s - 0.09), 0.064);
        self.scale * (p + qrs + t_wave)
    }
}

/// Waves of a beat reach this far before and after its R peak, s.
const REACH_BEFORE_S: f64 = 0.35;
const REACH_AFTER_S: f64 = 0.6;

/// A heart that beats on a schedule: each beat with its own interval and shape.
#[derive(Debug, Clone)]
pub struct ScheduledHeart {
    fs: f64,
    n: u64,
    pattern: Vec<(f64, BeatShape)>,
    next: usize,
    /// Time of the next R peak not yet in `active`, s.
    next_r_s: f64,
    active: VecDeque<(f64, BeatShape)>,
    /// Beats (R time, s) whose peak has been output, for tests.
    r_times: VecDeque<f64>,
}

impl ScheduledHeart {
    /// A heart repeating `pattern` (interval before each beat, its shape) at `fs`; the first R
    /// peak comes after the first interval.
    pub fn new(fs: f64, pattern: Vec<(f64, BeatShape)>) -> Self {
        let first = pattern.first().map_or(1.0, |p| p.0).max(0.4);
        Self {
            fs,
            n: 0,
            pattern,
            next: 0,
            next_r_s: first,
            active: VecDeque::new(),
            r_times: VecDeque::new(),
        }
    }

    /// Time of sample n, s.
    fn t(&self) -> f64 {
        self.n as f64 / self.fs
    }

    /// The next sample, V, and whether an R peak falls on it.
    pub fn next_sample(&mut self) -> (f64, bool) {
        let t = self.t();
        while self.next_r_s - REACH_BEFORE_S <= t {
            let shape = self.pattern[self.next % self.pattern.len()].1;
            self.active.push_back((self.next_r_s, shape));
            self.next += 1;
            let rr = self.pattern[self.next % self.pattern.len()].0;
            self.next_r_s += rr.max(0.05);
        }
        while self.active.front().is_some_and(|b| b.0 + REACH_AFTER_S < t) {
            self.active.pop_front();
        }
        let mv: f64 = self.active.iter().map(|(r, s)| s.value_mv(t - r)).sum();
        // The R peak falls on the sample nearest to it.
        let r_now = self
            .active
            .iter()
            .any(|(r, _)| (r * self.fs).round() as u64 == self.n);
        if r_now {
            self.r_times.push_back(t);
            if self.r_times.len() > 4096 {
                self.r_times.pop_front();
            }
        }
        self.n += 1;
        (mv * 1e-3, r_now)
    }

    /// Renders `seconds` of signal in µV.
    pub fn render_uv(&mut self, seconds: f64) -> Vec<f64> {
        let n = (seconds * self.fs).round() as usize;
        (0..n).map(|_| self.next_sample().0 * 1e6).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn expected_rates_are_the_mean_interval() {
        // The standards' expected reading is 60 / the mean RR of one period (docs/REFERENCES.md §3,
        // recalled from memory: 80, 60, 120 and 90 bpm).
        for r in Rhythm::ALL.into_iter().skip(1) {
            let p = r.pattern(1.0);
            let mean = p.iter().map(|x| x.0).sum::<f64>() / p.len() as f64;
            let want = r.expected_bpm().unwrap();
            assert!((60.0 / mean - want).abs() < 0.3, "{r:?}: {}", 60.0 / mean);
        }
    }

    #[test]
    fn beats_come_on_schedule_with_their_shapes() {
        let fs = 500.0;
        let mut h = ScheduledHeart::new(fs, Rhythm::VentricularBigeminy.pattern(1.0));
        let x = h.render_uv(10.0);
        let r: Vec<f64> = h.r_times.iter().copied().collect();
        assert!(r.len() >= 12, "{r:?}");
        let rr: Vec<f64> = r.windows(2).map(|w| w[1] - w[0]).collect();
        for (k, d) in rr.iter().enumerate() {
            let want = if k % 2 == 0 { 0.550 } else { 0.947 };
            assert!((d - want).abs() <= 1.0 / fs + 1e-9, "interval {k}: {d}");
        }
        // A normal beat's R is 1 mV, a ventricular one's 1.5 mV (peak of the sum of waves).
        let at = |t: f64| x[(t * fs).round() as usize];
        assert!((at(r[0]) - 1000.0).abs() < 60.0, "{}", at(r[0]));
        assert!((at(r[1]) - 1500.0).abs() < 90.0, "{}", at(r[1]));
    }
}
