//! The heart-rate readout and the averaged beat of the followed channel.

use std::collections::VecDeque;
use std::sync::Arc;

use super::Running;
use crate::analysis::beats::Beat;
use crate::analysis::readout::{RateSample, Readout};
use crate::analysis::template::TemplateBuilder;
use crate::msg::BeatView;

/// The heart-rate readout (detector, meter, quality) and the template of the followed channel.
pub(super) struct BeatState {
    channel: usize,
    pub(super) readout: Readout,
    template: TemplateBuilder,
    beats: VecDeque<u64>,
    waiting: VecDeque<u64>,
    pub(super) found: Vec<Beat>,
    evals: Vec<RateSample>,
    values: Vec<f64>,
    rails: Vec<bool>,
    template_frame: Option<Arc<crate::analysis::template::Template>>,
    keep: u64,
}

impl BeatState {
    pub(super) fn new(fs: f64, channel: usize) -> Option<Self> {
        Some(Self {
            channel,
            readout: Readout::new(fs).ok()?,
            template: TemplateBuilder::new(fs),
            beats: VecDeque::new(),
            waiting: VecDeque::new(),
            found: Vec::new(),
            evals: Vec::new(),
            values: Vec::new(),
            rails: Vec::new(),
            template_frame: None,
            keep: (120.0 * fs) as u64,
        })
    }

    /// One block of the followed channel (µV) with its rail flags.
    pub(super) fn process(&mut self, uv: &[f64], rails: &[bool], channels: usize, r: &Running) {
        self.values.clear();
        self.values
            .extend(uv.iter().skip(self.channel).step_by(channels));
        self.rails.clear();
        self.rails
            .extend(rails.iter().skip(self.channel).step_by(channels));
        self.found.clear();
        self.evals.clear();
        self.readout
            .process(&self.values, &self.rails, &mut self.found, &mut self.evals);
        for b in &self.found {
            self.beats.push_back(b.sample);
            self.waiting.push_back(b.sample);
        }
        let now = self.readout.samples();
        while self.beats.front().is_some_and(|&b| b + self.keep < now) {
            self.beats.pop_front();
        }
        // Beats whose whole window has arrived go into the template.
        let (pre, post) = self.template.window();
        let mut added = false;
        while let Some(&b) = self.waiting.front() {
            if b + post as u64 >= now {
                break;
            }
            self.waiting.pop_front();
            let ch = self.channel.min(r.channels - 1);
            let len = pre + post + 1;
            if b >= pre as u64
                && let (Some(raw), Some(filt)) = (
                    r.raw[ch].window(b - pre as u64, len),
                    r.filtered[ch].window(b - pre as u64, len),
                )
            {
                self.template.add(raw, filt);
                added = true;
            }
        }
        if added {
            self.template_frame = self.template.template().map(Arc::new);
        }
    }

    /// The R peaks kept (samples since the stream started).
    pub(super) fn beat_samples(&self) -> Vec<u64> {
        self.beats.iter().copied().collect()
    }

    pub(super) fn view(&self) -> BeatView {
        BeatView {
            channel: self.channel,
            beats: self.beats.iter().copied().collect(),
            rate: self.readout.shown(),
            rate_at_s: self.readout.shown_at_s(),
            hrv: self.readout.meter().hrv(),
            quality: self.readout.shown_quality(),
            regularity: self.readout.meter().regularity(),
            template: self.template_frame.clone(),
        }
    }
}
