//! The QRS shapes the detector learns as it goes.

use super::{Detector, TPL_READY, TPL_SEARCH_S};

/// An averaged QRS shape (band-passed, around the R peak).
#[derive(Debug, Clone)]
pub(super) struct LearnedQrs {
    pub(super) v: Vec<f64>,
    pub(super) beats: usize,
    /// Beats in a row that did not match.
    pub(super) misses: usize,
}

impl LearnedQrs {
    pub(super) fn new(len: usize) -> Self {
        Self {
            v: vec![0.0; len],
            beats: 0,
            misses: 0,
        }
    }

    pub(super) fn ready(&self) -> bool {
        self.beats >= TPL_READY
    }

    /// Pearson correlation with a segment of the same length.
    pub(super) fn corr(&self, y: &[f64]) -> Option<f64> {
        let nf = self.v.len() as f64;
        let (sx, sy) = (self.v.iter().sum::<f64>(), y.iter().sum::<f64>());
        let vx = self.v.iter().map(|a| a * a).sum::<f64>() - sx * sx / nf;
        let vy = y.iter().map(|a| a * a).sum::<f64>() - sy * sy / nf;
        (vx > 0.0 && vy > 0.0).then(|| (dot(&self.v, y) - sx * sy / nf) / (vx * vy).sqrt())
    }

    /// Averages `y` in (weight 1/16 once sixteen beats are in).
    pub(super) fn add(&mut self, y: &[f64]) {
        self.beats += 1;
        let w = 1.0 / (self.beats.min(16) as f64);
        for (t, v) in self.v.iter_mut().zip(y) {
            *t += w * (v - *t);
        }
    }
}

/// Dot product with four running sums (the additions of one sum wait on each other).
pub(super) fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0; 4];
    let (a4, b4) = (a.chunks_exact(4), b.chunks_exact(4));
    let tail: f64 = a4
        .remainder()
        .iter()
        .zip(b4.remainder())
        .map(|(x, y)| x * y)
        .sum();
    for (x, y) in a4.zip(b4) {
        for k in 0..4 {
            acc[k] += x[k] * y[k];
        }
    }
    acc.iter().sum::<f64>() + tail
}

/// Where the learned shapes place and move the R peak.
impl Detector {
    /// The band-passed input around R peak `r`, the template's length (`None` where the
    /// history does not reach).
    pub(super) fn segment(&self, r: u64) -> Option<Vec<f64>> {
        let start = (r + self.delay_bp).checked_sub(self.tpl_half)?;
        (0..self.usual.v.len() as u64)
            .map(|k| self.bp_ring.get(start + k))
            .collect()
    }

    /// A better R peak for a beat first placed at `r`, if the template says so: the current
    /// place matches the usual QRS poorly (r < 0.7) and not the other recent shape either, and
    /// another place within ±300 ms (after the last beat's refractory period, and already seen)
    /// matches well (≥ 0.8) and clearly better (+0.25).
    pub(super) fn template_relocate(&self, r: u64, here: f64, base: f64) -> Option<(u64, f64)> {
        if !self.tuning.relocate || !self.usual.ready() || here >= 0.7 {
            return None;
        }
        let reach = (TPL_SEARCH_S * self.fs) as u64;
        let lo = (r.saturating_sub(reach)).max(self.last_r.map_or(0, |l| l + self.refractory));
        let newest = self.n.saturating_sub(1 + self.delay_bp + self.tpl_half);
        let hi = (r + reach).min(newest);
        if hi <= lo {
            return None;
        }
        // The stretch searched, contiguous, and the template's own sums: the input's sums then
        // slide along it and only the cross product is summed anew at each place.
        let start = (lo + self.delay_bp).checked_sub(self.tpl_half)?;
        let y: Vec<f64> = (start..=hi + self.delay_bp + self.tpl_half)
            .map(|j| self.bp_ring.get(j))
            .collect::<Option<_>>()?;
        let t = self.usual.v.as_slice();
        let n = t.len();
        let nf = n as f64;
        let st: f64 = t.iter().sum();
        let vt = t.iter().map(|v| v * v).sum::<f64>() - st * st / nf;
        if vt <= 0.0 {
            return None;
        }
        // Running sums of the input over the template's length, one per offset.
        let mut sums = Vec::with_capacity(y.len() + 1 - n);
        let (mut sy, mut syy) = y[..n]
            .iter()
            .fold((0.0, 0.0), |(a, b), v| (a + v, b + v * v));
        sums.push((sy, syy));
        for k in n..y.len() {
            let (new, old) = (y[k], y[k - n]);
            sy += new - old;
            syy += new * new - old * old;
            sums.push((sy, syy));
        }
        // Correlation at offset `off` into the stretch, if the amplitude is QRS-like (shape
        // alone is not enough: a small wiggle can have the QRS's shape).
        let corr = |off: usize| -> Option<f64> {
            let (sy, syy) = sums[off];
            let vy = syy - sy * sy / nf;
            let amp = (vy.max(0.0) / vt).sqrt();
            if !(0.5..=2.0).contains(&amp) {
                return None;
            }
            Some((dot(t, &y[off..off + n]) - st * sy / nf) / (vt * vy).sqrt())
        };
        // Every other place first (5.6 ms at 360 Hz, well inside a 15 Hz cycle), then the
        // neighbours of the best.
        let span = (hi - lo) as usize;
        let (mut best_off, mut best_c) = (None, here);
        // A QRS that matches has, at the template's centre, a band-passed value of the
        // template's size: places far below it are not worth the correlation.
        let centre = t[n / 2].abs();
        for off in (0..=span).step_by(2) {
            if y[off + n / 2].abs() < 0.3 * centre {
                continue;
            }
            if let Some(c) = corr(off)
                && c > best_c
            {
                best_off = Some(off);
                best_c = c;
            }
        }
        let coarse = best_off?;
        for off in [coarse.wrapping_sub(1), coarse + 1] {
            if off <= span
                && let Some(c) = corr(off)
                && c > best_c
            {
                best_off = Some(off);
                best_c = c;
            }
        }
        let best = lo + best_off.unwrap_or(coarse) as u64;
        if best == r || best_c < 0.8 || best_c < here + 0.25 {
            return None;
        }
        // The template aligns the band-passed QRS; the R peak is the input's extreme of the
        // template's polarity within ±30 ms of that place.
        let sign = if self.polarity.abs() >= 0.5 {
            self.polarity.signum()
        } else {
            1.0
        };
        let near = (0.03 * self.fs) as u64;
        (best.saturating_sub(near)..=best + near)
            .filter_map(|j| self.loc_ring.get(j).map(|v| (j, v - base)))
            .max_by(|a, b| (sign * a.1).total_cmp(&(sign * b.1)))
    }

    /// Sorts a beat's segment into the usual or the other shape by its correlations with them.
    /// A beat like neither starts the other shape afresh once that has missed eight beats in a
    /// row (or is still forming); the shape that collects beats faster while the usual one is
    /// still forming becomes the usual one.
    pub(super) fn learn_shape(&mut self, seg: &[f64], usual: f64, other: f64) {
        if self.usual.beats == 0 || usual >= 0.8 {
            self.usual.add(seg);
            self.other.misses += 1;
        } else if self.other.beats > 0 && other >= 0.8 {
            self.other.add(seg);
            self.other.misses = 0;
        } else {
            self.other.misses += 1;
            if !self.other.ready() || self.other.misses >= 8 {
                self.other = LearnedQrs::new(seg.len());
                self.other.add(seg);
            }
        }
        if !self.usual.ready() && self.other.beats > self.usual.beats {
            std::mem::swap(&mut self.usual, &mut self.other);
        }
    }
}
