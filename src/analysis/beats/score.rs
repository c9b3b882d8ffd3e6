//! Scoring detections against reference annotations.

/// Beat-by-beat comparison with reference annotations, as ANSI/AAMI EC57 scores it: a detection
/// matches a reference beat within ±`tolerance` samples, each at most once.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Score {
    /// Reference beats matched.
    pub tp: usize,
    /// Reference beats missed.
    pub fn_: usize,
    /// Detections with no reference beat.
    pub fp: usize,
}

impl Score {
    /// Sensitivity TP / (TP + FN).
    pub fn se(&self) -> f64 {
        self.tp as f64 / (self.tp + self.fn_).max(1) as f64
    }
    /// Positive predictivity TP / (TP + FP).
    pub fn ppv(&self) -> f64 {
        self.tp as f64 / (self.tp + self.fp).max(1) as f64
    }
    /// Sum of two scores (gross statistics over records).
    pub fn add(&self, o: &Score) -> Score {
        Score {
            tp: self.tp + o.tp,
            fn_: self.fn_ + o.fn_,
            fp: self.fp + o.fp,
        }
    }
}

/// Scores `detected` against `reference` (both sorted sample indices), counting only beats in
/// `[from, to)`.
pub fn score(reference: &[u64], detected: &[u64], tolerance: u64, from: u64, to: u64) -> Score {
    let r: Vec<u64> = reference
        .iter()
        .copied()
        .filter(|&s| s >= from && s < to)
        .collect();
    let d: Vec<u64> = detected
        .iter()
        .copied()
        .filter(|&s| s >= from && s < to)
        .collect();
    let mut used = vec![false; d.len()];
    let mut tp = 0;
    let mut j0 = 0;
    for &ref_s in &r {
        while j0 < d.len() && d[j0] + tolerance < ref_s {
            j0 += 1;
        }
        let mut best: Option<usize> = None;
        let mut j = j0;
        while j < d.len() && d[j] <= ref_s + tolerance {
            if !used[j] && best.is_none_or(|b| d[j].abs_diff(ref_s) < d[b].abs_diff(ref_s)) {
                best = Some(j);
            }
            j += 1;
        }
        if let Some(b) = best {
            used[b] = true;
            tp += 1;
        }
    }
    Score {
        tp,
        fn_: r.len() - tp,
        fp: d.len() - tp,
    }
}
