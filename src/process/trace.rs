//! One trace's ring of recent samples and its min/max display columns.

use std::collections::VecDeque;

use super::{MAX_WINDOW_S, TARGET_COLUMNS};
use crate::msg::Columns;

/// One trace's recent samples and their min/max columns, kept up to date sample by sample so a
/// snapshot costs the number of columns, not the number of samples in the window.
#[derive(Debug, Clone)]
pub(super) struct TraceBuf {
    ring: VecDeque<f32>,
    ring_cap: usize,
    total: u64,
    spc: usize,
    keep_cols: usize,
    col_min: VecDeque<f32>,
    col_max: VecDeque<f32>,
    first_col: u64,
    cur_min: f32,
    cur_max: f32,
    cur_n: usize,
}

impl TraceBuf {
    pub(super) fn new(fs: f64, window_s: f64) -> Self {
        let ring_cap = (MAX_WINDOW_S * fs).ceil() as usize + 1;
        let mut t = Self {
            ring: VecDeque::with_capacity(ring_cap),
            ring_cap,
            total: 0,
            spc: 1,
            keep_cols: 1,
            col_min: VecDeque::new(),
            col_max: VecDeque::new(),
            first_col: 0,
            cur_min: f32::INFINITY,
            cur_max: f32::NEG_INFINITY,
            cur_n: 0,
        };
        t.set_window(fs, window_s);
        t
    }

    pub(super) fn set_window(&mut self, fs: f64, window_s: f64) {
        let window_samples = (window_s * fs).ceil().max(1.0);
        self.spc = ((window_samples / TARGET_COLUMNS as f64).ceil() as usize).max(1);
        self.keep_cols = (window_samples / self.spc as f64).ceil() as usize + 1;
        // Rebuild the columns from the samples we still hold, aligned to absolute sample indices.
        self.col_min.clear();
        self.col_max.clear();
        self.cur_n = 0;
        self.cur_min = f32::INFINITY;
        self.cur_max = f32::NEG_INFINITY;
        let start = self.total - self.ring.len() as u64;
        let aligned = start.div_ceil(self.spc as u64) * self.spc as u64;
        self.first_col = aligned / self.spc as u64;
        let ring = std::mem::take(&mut self.ring);
        let total = self.total;
        self.total = aligned;
        for &v in ring.iter().skip((aligned - start) as usize) {
            self.push_column_sample(v);
            self.total += 1;
        }
        debug_assert_eq!(self.total, total);
        self.total = total;
        self.ring = ring;
    }

    fn push_column_sample(&mut self, v: f32) {
        self.cur_min = self.cur_min.min(v);
        self.cur_max = self.cur_max.max(v);
        self.cur_n += 1;
        if self.cur_n == self.spc {
            self.col_min.push_back(self.cur_min);
            self.col_max.push_back(self.cur_max);
            self.cur_n = 0;
            self.cur_min = f32::INFINITY;
            self.cur_max = f32::NEG_INFINITY;
            while self.col_min.len() > self.keep_cols {
                self.col_min.pop_front();
                self.col_max.pop_front();
                self.first_col += 1;
            }
        }
    }

    pub(super) fn push(&mut self, v: f32) {
        if self.ring.len() == self.ring_cap {
            self.ring.pop_front();
        }
        self.ring.push_back(v);
        self.push_column_sample(v);
        self.total += 1;
    }

    /// Samples `start .. start + len` (absolute indices), if the ring still holds them.
    pub(super) fn window(&self, start: u64, len: usize) -> Option<Vec<f64>> {
        let first = self.total - self.ring.len() as u64;
        if start < first || start + len as u64 > self.total {
            return None;
        }
        let off = (start - first) as usize;
        Some(self.ring.range(off..off + len).map(|&v| v as f64).collect())
    }

    /// Copies the newest `n` samples (or all there are) into `out`.
    pub(super) fn tail_into(&self, n: usize, out: &mut Vec<f64>) {
        out.clear();
        let skip = self.ring.len().saturating_sub(n);
        out.extend(self.ring.iter().skip(skip).map(|&v| v as f64));
    }

    pub(super) fn columns(&self, fs: f64) -> Columns {
        let n = self.col_min.len() + usize::from(self.cur_n > 0);
        let mut min = Vec::with_capacity(n);
        let mut max = Vec::with_capacity(n);
        min.extend(self.col_min.iter());
        max.extend(self.col_max.iter());
        if self.cur_n > 0 {
            min.push(self.cur_min);
            max.push(self.cur_max);
        }
        Columns {
            t0_s: (self.first_col * self.spc as u64) as f64 / fs,
            dt_s: self.spc as f64 / fs,
            min,
            max,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_hold_min_and_max_of_each_group() {
        let fs = 1000.0;
        let mut t = TraceBuf::new(fs, 2.4); // 2400 samples → 2 samples per column
        assert_eq!(t.spc, 2);
        for n in 0..5000 {
            t.push(n as f32);
        }
        let c = t.columns(fs);
        assert_eq!(c.min.len(), t.keep_cols);
        let last = c.min.len() - 1;
        assert_eq!((c.min[last], c.max[last]), (4998.0, 4999.0));
        assert!((c.t0_s + c.dt_s * last as f64 - 4.998).abs() < 1e-9);
        // A longer window is rebuilt from the ring with the same alignment.
        t.set_window(fs, 10.0);
        let c = t.columns(fs);
        assert_eq!(t.spc, 9);
        assert_eq!(c.max[c.max.len() - 1], 4999.0);
        assert_eq!(c.min[0] as u64 % 9, 0);
    }
}
