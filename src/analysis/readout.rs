//! The heart-rate readout as one piece: QRS detector → rate meter, judged by the quality check,
//! evaluated once a second of stream time. The monitor's DSP thread and `leadline beats
//! --rate-out` both run this, so the number on the screen and the number in rate.csv are the
//! same number at the same instant.

use serde::Serialize;

use super::beats::{Beat, Detector, DetectorError, EVENTS_S};
use super::quality::QualityMonitor;
use super::rate::{RateMeter, RateState, Unreliable};
use super::shape::ShapeCheck;

/// QRS-like events faster than this per minute are an artefact (no heart beats at 260 bpm;
/// the standards' paediatric range ends at 250 bpm, recalled from memory).
pub const MAX_EVENTS_PER_MIN: f64 = 260.0;

/// Smallest R deflection counted as a beat, µV.
pub const MIN_R_UV: f64 = 100.0;

/// One evaluation of the readout.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RateSample {
    /// Stream time of the evaluation, s (a whole number of seconds from the first sample).
    pub time_s: f64,
    /// What the readout showed.
    pub state: RateState,
    /// The signal quality shown with it, % (noise, artefact, clipping; not the rhythm).
    pub quality_pct: f64,
    /// How regular the rhythm was, % of successive intervals within 12 % (None: too few).
    pub regularity_pct: Option<f64>,
}

/// Detector, meter and quality check of one channel.
#[derive(Debug, Clone)]
pub struct Readout {
    fs: f64,
    detector: Detector,
    meter: RateMeter,
    quality: QualityMonitor,
    last_quality: super::quality::Quality,
    /// Sample index of the next evaluation.
    next_eval: u64,
    /// Step between evaluations, samples (one second, rounded).
    eval_every: u64,
    shown: RateState,
    found: Vec<Beat>,
    /// Decision samples of the beats of the last 5 s.
    recent_beats: std::collections::VecDeque<u64>,
    /// The input of the last second, for the beats' shapes.
    input: std::collections::VecDeque<f64>,
    shape: ShapeCheck,
}

impl Readout {
    /// A readout at `fs`.
    ///
    /// # Errors
    /// [`DetectorError`] outside 125–2000 Hz.
    pub fn new(fs: f64) -> Result<Self, DetectorError> {
        let eval_every = fs.round().max(1.0) as u64;
        Ok(Self {
            fs,
            detector: Detector::new(fs)?,
            meter: RateMeter::new(fs),
            quality: QualityMonitor::new(fs),
            last_quality: super::quality::Quality {
                index: 0.0,
                problem: None,
                inverted: false,
            },
            next_eval: eval_every,
            eval_every,
            shown: RateState::Settling,
            found: Vec::new(),
            recent_beats: std::collections::VecDeque::new(),
            input: std::collections::VecDeque::with_capacity(fs as usize + 1),
            shape: ShapeCheck::new(fs),
        })
    }

    /// Sample rate, Hz.
    pub fn fs_hz(&self) -> f64 {
        self.fs
    }

    /// Samples consumed.
    pub fn samples(&self) -> u64 {
        self.detector.samples()
    }

    /// The readout as last evaluated.
    pub fn shown(&self) -> RateState {
        self.shown
    }

    /// Stream time of the last evaluation, s (0 before the first).
    pub fn shown_at_s(&self) -> f64 {
        (self.next_eval - self.eval_every) as f64 / self.fs
    }

    /// The meter (HRV, intervals).
    pub fn meter(&self) -> &RateMeter {
        &self.meter
    }

    /// The quality check.
    pub fn quality(&self) -> &QualityMonitor {
        &self.quality
    }

    /// The quality verdict of the last evaluation: the figure the readout shows.
    pub fn shown_quality(&self) -> super::quality::Quality {
        self.last_quality
    }

    /// One block of the channel (µV) and, per sample, whether it sat on an ADC rail (`rails`
    /// may be empty: none did). Decided beats are appended to `beats`, evaluations to `evals`.
    /// Any split of the same samples into blocks gives the same beats and evaluations.
    pub fn process(
        &mut self,
        uv: &[f64],
        rails: &[bool],
        beats: &mut Vec<Beat>,
        evals: &mut Vec<RateSample>,
    ) {
        let mut start = 0;
        while start < uv.len() {
            let now = self.detector.samples();
            let until = (self.next_eval - now) as usize;
            let end = (start + until).min(uv.len());
            let keep = self.fs as usize;
            for (i, &v) in uv[start..end].iter().enumerate() {
                self.quality
                    .push(v, rails.get(start + i).copied().unwrap_or(false));
                if self.input.len() == keep {
                    self.input.pop_front();
                }
                self.input.push_back(v);
            }
            self.found.clear();
            self.detector.process(&uv[start..end], &mut self.found);
            // Deflections under 0.1 mV are noise, not beats (common practice; the monitor
            // standards' noise-rejection amplitude, recalled from memory, is 0.15 mV).
            self.found.retain(|b| b.r_value.abs() >= MIN_R_UV);
            // Samples consumed so far, and the index of the oldest kept.
            let consumed = self.detector.samples();
            let oldest = consumed - self.input.len() as u64;
            let h = self.shape.half() as u64;
            for b in &self.found {
                self.meter.on_beat(b.sample);
                self.quality.push_beat(b.r_value);
                self.recent_beats.push_back(b.decided);
                if b.sample >= oldest + h && b.sample + h < consumed {
                    let from = (b.sample - h - oldest) as usize;
                    let window: Vec<f64> = self
                        .input
                        .range(from..from + 2 * h as usize + 1)
                        .copied()
                        .collect();
                    self.shape.judge(&window);
                }
            }
            beats.extend_from_slice(&self.found);
            self.quality.set_detector_snr(self.detector.snr());
            if self.detector.samples() == self.next_eval {
                // A flat line is "no beat", not an unreliable signal: there is nothing to count.
                let q = self.quality.quality();
                let flat = q.problem == Some(super::quality::Problem::Flat);
                let span = (EVENTS_S * self.fs) as u64;
                while self
                    .recent_beats
                    .front()
                    .is_some_and(|&b| b + span < self.next_eval)
                {
                    self.recent_beats.pop_front();
                }
                let events = self.detector.recent_events();
                let beats = self.recent_beats.len();
                // Noise that can hide or imitate beats: QRS-like energy between the beats (at
                // least 2 more events than beats in 5 s, and a quarter more), or two of the last
                // eight beats shaped like neither family of beats.
                let (odd, judged) = self.shape.unmatched();
                let (unrep, rep_judged) = self.meter.unrepeated();
                let noisy = (beats > 0 && events >= beats + 2 && 4 * events >= 5 * beats)
                    || (judged >= 6 && odd >= 2)
                    || (rep_judged >= 4 && unrep >= 2);
                self.meter.set_unreliable(if !q.usable() && !flat {
                    Some(Unreliable::Quality)
                } else if noisy {
                    Some(Unreliable::Noise)
                } else {
                    None
                });
                self.meter.set_too_fast(
                    events as f64 * 60.0 / EVENTS_S > MAX_EVENTS_PER_MIN,
                    self.next_eval,
                );
                self.shown = self.meter.state(self.next_eval);
                self.last_quality = q;
                evals.push(RateSample {
                    time_s: self.next_eval as f64 / self.fs,
                    state: self.shown,
                    quality_pct: 100.0 * q.index,
                    regularity_pct: self.meter.regularity().map(|r| 100.0 * r),
                });
                self.next_eval += self.eval_every;
            }
            start = end;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn any_block_split_gives_the_same_readout() {
        let fs = 360.0;
        let mut heart = crate::sim::rhythm::ScheduledHeart::new(
            fs,
            crate::sim::rhythm::Rhythm::VentricularBigeminy.pattern(1.0),
        );
        let x = heart.render_uv(30.0);
        let run = |block: usize| {
            let mut r = Readout::new(fs).unwrap();
            let (mut b, mut e) = (Vec::new(), Vec::new());
            for c in x.chunks(block) {
                r.process(c, &[], &mut b, &mut e);
            }
            (b, e)
        };
        let whole = run(x.len());
        assert_eq!(whole.1.len(), 30);
        for block in [1, 7, 64, 1000] {
            assert_eq!(run(block), whole, "blocks of {block}");
        }
    }
}
