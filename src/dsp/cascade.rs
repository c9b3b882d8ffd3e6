//! The runtime filter chain: one cascade per channel.
//!
//! Retuning swaps coefficients and keeps each section's state, so a corner moved while the signal
//! runs does not click. When the number of sections changes (an order or a stage switched), the new
//! cascade starts in the steady state of the last input sample instead of from zero, so the DC
//! content of the signal does not ring through a freshly started high-pass.

use super::canceller::{CancelState, Canceller};
use super::chain::{ChainSettings, Design};
use super::design::{DesignError, Section};
use super::kernel::Cascade;

/// The chain with the mains canceller in it: per channel the high-pass sections, the
/// canceller, then the other sections. The section states carry over from the plain cascade
/// and back, so switching the canceller on or off never steps the output.
#[derive(Debug, Clone)]
struct CancelPath {
    split: usize,
    pre: Vec<Cascade>,
    post: Vec<Cascade>,
    cancel: Vec<Canceller>,
}

/// One cascade as two: the first `split` sections and the rest, states kept.
fn split(c: &Cascade, design: &[Section], split: usize) -> (Cascade, Cascade) {
    let split = split.min(design.len());
    let mut pre = Cascade::new(&design[..split], 0.0);
    let mut post = Cascade::new(&design[split..], 0.0);
    for (dst, src) in pre
        .sections
        .iter_mut()
        .chain(post.sections.iter_mut())
        .zip(&c.sections)
    {
        (dst.s1, dst.s2) = (src.s1, src.s2);
    }
    pre.last_input = c.last_input;
    post.last_input = c.last_input;
    (pre, post)
}

/// Two cascades joined back into one over `design`, states kept.
fn join(pre: &Cascade, post: &Cascade, design: &[Section]) -> Cascade {
    let mut c = Cascade::new(design, 0.0);
    for (dst, src) in c
        .sections
        .iter_mut()
        .zip(pre.sections.iter().chain(&post.sections))
    {
        (dst.s1, dst.s2) = (src.s1, src.s2);
    }
    c.last_input = pre.last_input;
    c
}

/// The running chain for all channels.
#[derive(Debug, Clone)]
pub struct Chain {
    fs_hz: f64,
    settings: ChainSettings,
    design: std::sync::Arc<Design>,
    channels: Vec<Cascade>,
    /// While the canceller runs (or fades out): the channels split around it.
    cancel: Option<CancelPath>,
    /// One channel's samples, gathered from an interleaved block.
    scratch: Vec<f64>,
}

impl Chain {
    /// Interleaved blocks of at least this many frames take the block kernel.
    pub const KERNEL_FRAMES: usize = 16;

    /// A chain for `channels` channels at `fs_hz`.
    ///
    /// # Errors
    /// [`DesignError`] when the settings cannot be built at this rate.
    pub fn new(settings: ChainSettings, fs_hz: f64, channels: usize) -> Result<Self, DesignError> {
        let design = settings.design(fs_hz)?;
        let mut chain = Self {
            fs_hz,
            settings,
            channels: (0..channels).map(|_| Cascade::new(&design, 0.0)).collect(),
            design: std::sync::Arc::new(design),
            cancel: None,
            scratch: Vec::new(),
        };
        chain.place_canceller(None);
        Ok(chain)
    }

    /// Starts, retunes or fades out the canceller for the settings in force (`old`: the settings
    /// before a retune).
    fn place_canceller(&mut self, old: Option<&ChainSettings>) {
        let s = self.settings;
        let at = s.highpass_sections();
        let fresh = || {
            let mut c = Canceller::new(self.fs_hz, s.notch.mains_hz, s.cancel.harmonics);
            // Faded in from nothing: the first output is the plain chain's.
            c.fade_in();
            c
        };
        match (&mut self.cancel, s.cancel.enabled) {
            (None, false) => {}
            (None, true) => {
                let (mut pre, mut post) = (Vec::new(), Vec::new());
                for c in &self.channels {
                    let (a, b) = split(c, &self.design, at);
                    pre.push(a);
                    post.push(b);
                }
                self.cancel = Some(CancelPath {
                    split: at,
                    pre,
                    post,
                    cancel: (0..self.channels.len()).map(|_| fresh()).collect(),
                });
            }
            (Some(path), on) => {
                let same = old.is_some_and(|o| {
                    o.notch.mains_hz == s.notch.mains_hz && o.cancel.harmonics == s.cancel.harmonics
                });
                if on && !same {
                    path.cancel = (0..self.channels.len()).map(|_| fresh()).collect();
                }
                for c in &mut path.cancel {
                    c.set_active(on);
                }
            }
        }
    }

    /// What the canceller of `channel` has found, while it runs.
    pub fn cancel_state(&self, channel: usize) -> Option<CancelState> {
        let path = self.cancel.as_ref()?;
        self.settings
            .cancel
            .enabled
            .then(|| path.cancel.get(channel).map(Canceller::state))?
    }

    /// Once the canceller has faded out, the channels become one cascade again.
    fn drop_faded_canceller(&mut self) {
        let done = self.cancel.as_ref().is_some_and(|p| {
            !self.settings.cancel.enabled && p.cancel.iter().all(|c| !c.subtracting())
        });
        if done && let Some(p) = self.cancel.take() {
            for (c, (a, b)) in self.channels.iter_mut().zip(p.pre.iter().zip(&p.post)) {
                *c = join(a, b, &self.design);
            }
        }
    }

    /// Settings in force.
    pub fn settings(&self) -> &ChainSettings {
        &self.settings
    }

    /// Sections in force, in processing order.
    pub fn sections(&self) -> &[Section] {
        &self.design
    }

    /// The design in force (shared: snapshots carry it).
    pub fn design(&self) -> &std::sync::Arc<Design> {
        &self.design
    }

    /// Sample rate the chain was designed for.
    pub fn fs_hz(&self) -> f64 {
        self.fs_hz
    }

    /// Retunes to new settings while running. On error the old chain keeps running.
    ///
    /// # Errors
    /// [`DesignError`] when the new settings cannot be built.
    pub fn retune(&mut self, settings: ChainSettings) -> Result<(), DesignError> {
        let design = settings.design(self.fs_hz)?;
        if let Some(path) = &mut self.cancel {
            let at = settings.highpass_sections();
            for (k, c) in self.channels.iter_mut().enumerate() {
                *c = join(&path.pre[k], &path.post[k], &self.design);
            }
            path.split = at;
            self.retune_plain(&design);
            let path = self.cancel.as_mut().map(|p| {
                for (k, c) in self.channels.iter().enumerate() {
                    (p.pre[k], p.post[k]) = split(c, &design, p.split);
                }
            });
            let _ = path;
        } else {
            self.retune_plain(&design);
        }
        let old = self.settings;
        self.design = std::sync::Arc::new(design);
        self.settings = settings;
        self.place_canceller(Some(&old));
        Ok(())
    }

    /// The plain cascades to `design`: coefficients swapped when the section count is the same,
    /// else started afresh in the steady state of the last input.
    fn retune_plain(&mut self, design: &Design) {
        if design.len() == self.design.len() {
            for ch in &mut self.channels {
                ch.retune(design);
            }
        } else {
            for ch in &mut self.channels {
                *ch = Cascade::new(design, ch.last_input);
            }
        }
    }

    /// Puts one channel's sections in the steady state for a constant input `x0` (as if the
    /// signal had sat at that level forever), so a stream that starts away from zero does not
    /// begin with a step response.
    pub fn settle(&mut self, channel: usize, x0: f64) {
        let design = self.design.clone();
        if let Some(p) = &mut self.cancel
            && channel < p.pre.len()
        {
            let mut c = join(&p.pre[channel], &p.post[channel], &design);
            c.settle(&design, x0);
            c.last_input = x0;
            (p.pre[channel], p.post[channel]) = split(&c, &design, p.split);
            return;
        }
        if let Some(c) = self.channels.get_mut(channel) {
            c.settle(&design, x0);
            c.last_input = x0;
        }
    }

    /// Filters one channel's samples in place. State carries over between calls, so any block
    /// size gives the same output.
    pub fn process_channel(&mut self, channel: usize, samples: &mut [f64]) {
        if let Some(p) = &mut self.cancel {
            if channel < p.pre.len() {
                p.pre[channel].process_block(samples);
                p.cancel[channel].run_block(samples);
                p.post[channel].process_block(samples);
            }
            if channel + 1 == self.channels.len() {
                self.drop_faded_canceller();
            }
            return;
        }
        if let Some(c) = self.channels.get_mut(channel) {
            c.process_block(samples);
        }
    }

    /// Filters one interleaved frame-major block in place (the DSP thread's call). A block of
    /// at least [`Self::KERNEL_FRAMES`] frames goes channel by channel through the block kernel
    /// (bit-identical to sample by sample); a shorter one frame by frame, where the kernel's
    /// fill and drain and the gathering of a channel cost more than they save (`leadline bench
    /// dsp` measures both).
    pub fn process_interleaved(&mut self, data: &mut [f64]) {
        let n = self.channels.len();
        if n == 0 {
            return;
        }
        let frames = data.len() / n;
        if self.cancel.is_some() {
            let mut lane = std::mem::take(&mut self.scratch);
            lane.resize(frames, 0.0);
            for k in 0..n {
                for (v, frame) in lane.iter_mut().zip(data.chunks_exact(n)) {
                    *v = frame[k];
                }
                self.process_channel(k, &mut lane);
                for (v, frame) in lane.iter().zip(data.chunks_exact_mut(n)) {
                    frame[k] = *v;
                }
            }
            self.scratch = lane;
            return;
        }
        if frames < Self::KERNEL_FRAMES {
            for frame in data.chunks_exact_mut(n) {
                for (x, c) in frame.iter_mut().zip(&mut self.channels) {
                    *x = c.run(*x);
                }
            }
            return;
        }
        if n == 1 {
            self.channels[0].process_block(data);
            return;
        }
        let mut lane = std::mem::take(&mut self.scratch);
        lane.resize(frames, 0.0);
        for (k, c) in self.channels.iter_mut().enumerate() {
            for (v, frame) in lane.iter_mut().zip(data.chunks_exact(n)) {
                *v = frame[k];
            }
            c.process_block(&mut lane);
            for (v, frame) in lane.iter().zip(data.chunks_exact_mut(n)) {
                frame[k] = *v;
            }
        }
        self.scratch = lane;
    }
}
