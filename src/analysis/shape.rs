//! Does each detected beat look like the beats before it? A noise transient that the detector
//! takes for a QRS rarely has a QRS's shape; real beats repeat theirs. Two shapes are kept, so an
//! alternating rhythm (a normal and a ventricular beat, or beats of alternating polarity) is two
//! families of matching beats, not noise.
//!
//! The shape is the input ±60 ms around R, mean removed; the match is the correlation
//! coefficient with a running average of each family (common practice in beat classifiers;
//! the 0.8 threshold is our choice, tested on the simulator's rhythms and noisy fixtures).

use std::collections::VecDeque;

/// Correlation at or above which a beat belongs to a family.
pub const MATCH: f64 = 0.8;
/// Beats judged in the recent share.
const RECENT: usize = 8;

/// The two families and the verdicts on the recent beats.
#[derive(Debug, Clone)]
pub struct ShapeCheck {
    half: usize,
    families: Vec<(Vec<f64>, u32)>,
    recent: VecDeque<bool>,
}

fn centred(x: &[f64]) -> Vec<f64> {
    let m = x.iter().sum::<f64>() / x.len().max(1) as f64;
    x.iter().map(|v| v - m).collect()
}

fn correlation(a: &[f64], b: &[f64]) -> f64 {
    let (mut ab, mut aa, mut bb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        ab += x * y;
        aa += x * x;
        bb += y * y;
    }
    if aa <= 0.0 || bb <= 0.0 {
        return 0.0;
    }
    ab / (aa * bb).sqrt()
}

impl ShapeCheck {
    /// A check at `fs`.
    pub fn new(fs: f64) -> Self {
        Self {
            half: (0.06 * fs).round().max(2.0) as usize,
            families: Vec::with_capacity(2),
            recent: VecDeque::with_capacity(RECENT),
        }
    }

    /// Samples before (and after) R that a window must hold: the window is 2·half + 1 long.
    pub fn half(&self) -> usize {
        self.half
    }

    /// Judges one beat's window (2·half + 1 samples centred on R); returns whether it matched.
    pub fn judge(&mut self, window: &[f64]) -> bool {
        let w = centred(window);
        let best = self
            .families
            .iter()
            .enumerate()
            .map(|(k, (t, _))| (k, correlation(&w, t)))
            .max_by(|a, b| a.1.total_cmp(&b.1));
        let matched = match best {
            Some((k, r)) if r >= MATCH => {
                let (t, n) = &mut self.families[k];
                *n += 1;
                // A running average that settles over about eight beats.
                let a = 1.0 / f64::from((*n).min(8));
                t.iter_mut().zip(&w).for_each(|(t, v)| *t += a * (v - *t));
                true
            }
            _ => {
                // A new family: while fewer than two exist, or in place of the weaker one.
                if self.families.len() < 2 {
                    self.families.push((w, 1));
                } else if let Some(weak) = self
                    .families
                    .iter_mut()
                    .min_by_key(|f| f.1)
                    .filter(|f| f.1 <= 2)
                {
                    *weak = (w, 1);
                } else {
                    // Both families are established: age them so a lasting new shape can
                    // take over one of them.
                    for f in &mut self.families {
                        f.1 = f.1.saturating_sub(1);
                    }
                }
                // The first beats of a stream define the families: they are not noise.
                self.recent.len() < 2
            }
        };
        if self.recent.len() == RECENT {
            self.recent.pop_front();
        }
        self.recent.push_back(matched);
        matched
    }

    /// Of the recent beats, how many matched no family (and how many were judged).
    pub fn unmatched(&self) -> (usize, usize) {
        (
            self.recent.iter().filter(|m| !**m).count(),
            self.recent.len(),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::rhythm::BeatShape;

    fn window(shape: &BeatShape, fs: f64, half: usize) -> Vec<f64> {
        (0..=2 * half)
            .map(|i| shape.value_mv((i as f64 - half as f64) / fs))
            .collect()
    }

    #[test]
    fn alternating_families_match_and_a_spike_does_not() {
        let fs = 500.0;
        let mut c = ShapeCheck::new(fs);
        let h = c.half();
        let n = window(&BeatShape::normal(1.0), fs, h);
        let v = window(&BeatShape::ventricular(1.0), fs, h);
        for _ in 0..10 {
            c.judge(&n);
            c.judge(&v);
        }
        assert_eq!(c.unmatched(), (0, 8));
        // A narrow biphasic transient, 20 ms wide, off centre.
        let spike: Vec<f64> = (0..=2 * h)
            .map(|i| {
                let u = ((i as f64 - 0.7 * h as f64) / fs) / 0.02;
                u * (-0.5 * u * u).exp()
            })
            .collect();
        assert!(!c.judge(&spike));
        assert_eq!(c.unmatched().0, 1);
    }
}
