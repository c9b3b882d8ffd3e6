//! The running spectrum of the followed channel: Welch before and after the chain, with the
//! mains measured, re-estimated once a second.

use std::sync::Arc;
use std::time::{Duration, Instant};

use super::Running;
use crate::analysis::mains;
use crate::dsp::spectrum::{Psd, Welch, segment_for};
use crate::msg::SpectrumFrame;

/// Seconds of signal behind each spectrum estimate (at least one segment).
pub const SPECTRUM_S: f64 = 10.0;
/// How often the spectrum is re-estimated.
const SPECTRUM_PERIOD: Duration = Duration::from_millis(1000);

/// The spectrum estimator of the DSP thread: plan and buffers made once per rate and segment.
pub(super) struct SpectrumState {
    pub(super) channel: usize,
    pub(super) segment_request: usize,
    welch: Option<Welch>,
    raw: Vec<f64>,
    filtered: Vec<f64>,
    last: Instant,
    serial: u64,
    pub(super) frame: Option<Arc<SpectrumFrame>>,
}

impl SpectrumState {
    pub(super) fn new() -> Self {
        Self {
            channel: 0,
            segment_request: 0,
            welch: None,
            raw: Vec::new(),
            filtered: Vec::new(),
            last: Instant::now(),
            serial: 0,
            frame: None,
        }
    }

    /// Re-estimates when a period has passed and a segment of data is there.
    pub(super) fn update(&mut self, r: &Running) {
        if self.frame.is_some() && self.last.elapsed() < SPECTRUM_PERIOD {
            return;
        }
        let segment = if self.segment_request == 0 {
            segment_for(r.fs, 4.0)
        } else {
            self.segment_request
        };
        if self.welch.as_ref().is_none_or(|w| w.segment() != segment) {
            self.welch = Welch::new(segment).ok();
        }
        let Some(welch) = self.welch.as_mut() else {
            return;
        };
        let ch = self.channel.min(r.channels.saturating_sub(1));
        let want = ((SPECTRUM_S * r.fs) as usize).max(segment);
        r.raw[ch].tail_into(want, &mut self.raw);
        r.filtered[ch].tail_into(want, &mut self.filtered);
        if self.raw.len() < segment {
            return;
        }
        let (mut raw, mut filtered) = (Psd::default(), Psd::default());
        if welch.compute_into(&self.raw, r.fs, &mut raw).is_err()
            || welch
                .compute_into(&self.filtered, r.fs, &mut filtered)
                .is_err()
        {
            return;
        }
        self.serial += 1;
        self.last = Instant::now();
        self.frame = Some(Arc::new(SpectrumFrame {
            channel: ch,
            fs_hz: r.fs,
            seconds: self.raw.len() as f64 / r.fs,
            mains_raw: mains::analyse(&self.raw, r.fs, &raw).ok(),
            mains_filtered: mains::analyse(&self.filtered, r.fs, &filtered).ok(),
            raw,
            filtered,
            serial: self.serial,
        }));
    }
}
