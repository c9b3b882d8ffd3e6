//! The lead stage of the DSP thread: a board's leads or electrode potentials become the standard
//! leads before the chain, and electrodes that look off are named.

use std::sync::Arc;

use crate::leads::{LeadSet, electrodes_off};

/// What the stage does to each block.
#[derive(Debug, Default)]
pub(super) struct LeadStage {
    set: Option<LeadSet>,
    /// Why the set is not applied (the source has too few channels).
    pub(super) error: Option<String>,
    /// The derived leads' names, while the set applies.
    pub(super) names: Option<Arc<Vec<String>>>,
    /// Electrodes that look off, named, as of the last second.
    pub(super) off: Vec<&'static str>,
    watch: Watch,
}

/// Per-electrode sums over about a second: at a rail, and the AC level (mostly mains pickup
/// when an electrode floats).
#[derive(Debug, Default)]
struct Watch {
    n: usize,
    sum: Vec<f64>,
    sq: Vec<f64>,
    rail: Vec<bool>,
}

impl LeadStage {
    pub(super) fn new(set: Option<LeadSet>) -> Self {
        Self {
            set,
            ..Self::default()
        }
    }

    /// The channels a stream of `channels` inputs has after the stage.
    pub(super) fn outputs(&self, channels: usize) -> usize {
        match self.set {
            Some(s) if s.check(channels).is_ok() => s.outputs().len(),
            _ => channels,
        }
    }

    /// One block of `channels` inputs (µV, interleaved) with its rail flags: the derived leads
    /// and their rail flags (a lead is at a rail when any of its inputs is), or the block as it
    /// came when no set applies.
    pub(super) fn apply(
        &mut self,
        uv: Vec<f64>,
        rails: Vec<bool>,
        channels: usize,
        fs: f64,
    ) -> (Vec<f64>, Vec<bool>) {
        let Some(set) = self.set else {
            return (uv, rails);
        };
        if let Err(e) = set.check(channels) {
            self.error = Some(e.to_string());
            self.names = None;
            return (uv, rails);
        }
        self.error = None;
        if self.names.is_none() {
            self.names = Some(Arc::new(set.output_names()));
        }
        self.watch(set, &uv, &rails, channels, fs);
        let out = set.derive_block(&uv, channels);
        let m = set.outputs().len();
        let derived_rails = rails
            .chunks_exact(channels)
            .flat_map(|f| std::iter::repeat_n(f.iter().any(|&r| r), m))
            .collect();
        (out, derived_rails)
    }

    fn watch(&mut self, set: LeadSet, uv: &[f64], rails: &[bool], channels: usize, fs: f64) {
        if set != LeadSet::Electrodes9 {
            return;
        }
        let k = set.inputs().len();
        let w = &mut self.watch;
        if w.sum.len() != k {
            *w = Watch {
                n: 0,
                sum: vec![0.0; k],
                sq: vec![0.0; k],
                rail: vec![false; k],
            };
        }
        for (f, r) in uv.chunks_exact(channels).zip(rails.chunks_exact(channels)) {
            for e in 0..k {
                w.sum[e] += f[e];
                w.sq[e] += f[e] * f[e];
                w.rail[e] |= r[e];
            }
            w.n += 1;
        }
        if (w.n as f64) < fs {
            return;
        }
        let n = w.n as f64;
        let ac: Vec<f64> = (0..k)
            .map(|e| {
                let m = w.sum[e] / n;
                (w.sq[e] / n - m * m).max(0.0).sqrt()
            })
            .collect();
        self.off = electrodes_off(set, &w.rail, &ac);
        *w = Watch::default();
    }
}

impl super::Dsp {
    /// The frontal QRS axis over the beats of the last 10 s, while the twelve leads are derived
    /// (leads I and aVF before the chain: the chain's delay would move the QRS out of the
    /// net-area window).
    pub(super) fn frontal_axis(&self, r: &super::Running) -> Option<crate::leads::FrontalAxis> {
        self.leads.names.as_ref()?;
        let beats = self.beats.as_ref()?.beat_samples();
        let (i, avf) = (r.raw_tail(0, 10.0), r.raw_tail(5, 10.0));
        let first = r.next_sample.saturating_sub(i.len() as u64);
        let rel: Vec<usize> = beats
            .iter()
            .filter(|&&b| b >= first)
            .map(|&b| (b - first) as usize)
            .collect();
        crate::leads::frontal_axis(&i, &avf, &rel, r.fs)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_floating_electrode_is_named_within_a_second() {
        let fs = 500.0;
        let mut stage = LeadStage::new(Some(LeadSet::Electrodes9));
        let mut uv = Vec::new();
        for i in 0..600 {
            let hum = 2000.0 * (std::f64::consts::TAU * 50.0 * i as f64 / fs).sin();
            for e in 0..9 {
                uv.push(if e == 1 { hum } else { 10.0 * (i % 7) as f64 });
            }
        }
        let rails = vec![false; uv.len()];
        let (out, out_rails) = stage.apply(uv, rails, 9, fs);
        assert_eq!(out.len(), 600 * 12);
        assert_eq!(out_rails.len(), 600 * 12);
        assert_eq!(stage.off, vec!["LA"]);
        assert_eq!(stage.names.as_ref().map(|n| n.len()), Some(12));
    }

    #[test]
    fn too_few_channels_pass_through_with_the_reason() {
        let mut stage = LeadStage::new(Some(LeadSet::Leads8));
        let (out, _) = stage.apply(vec![1.0, 2.0], vec![false; 2], 2, 500.0);
        assert_eq!(out, vec![1.0, 2.0]);
        assert_eq!(
            stage.error.as_deref(),
            Some("lead set leads8 needs 8 channels; the source has 2")
        );
        assert_eq!(stage.outputs(2), 2);
        assert_eq!(stage.outputs(8), 12);
    }
}
