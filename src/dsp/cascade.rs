//! The runtime filter chain: one cascade per channel.
//!
//! Retuning swaps coefficients and keeps each section's state, so a corner moved while the signal
//! runs does not click. When the number of sections changes (an order or a stage switched), the new
//! cascade starts in the steady state of the last input sample instead of from zero, so the DC
//! content of the signal does not ring through a freshly started high-pass.

use super::chain::{ChainSettings, Design};
use super::design::{DesignError, Section};
use super::kernel::Cascade;

/// The running chain for all channels.
#[derive(Debug, Clone)]
pub struct Chain {
    fs_hz: f64,
    settings: ChainSettings,
    design: std::sync::Arc<Design>,
    channels: Vec<Cascade>,
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
        Ok(Self {
            fs_hz,
            settings,
            channels: (0..channels).map(|_| Cascade::new(&design, 0.0)).collect(),
            design: std::sync::Arc::new(design),
            scratch: Vec::new(),
        })
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
        if design.len() == self.design.len() {
            for ch in &mut self.channels {
                ch.retune(&design);
            }
        } else {
            for ch in &mut self.channels {
                *ch = Cascade::new(&design, ch.last_input);
            }
        }
        self.design = std::sync::Arc::new(design);
        self.settings = settings;
        Ok(())
    }

    /// Puts one channel's sections in the steady state for a constant input `x0` (as if the
    /// signal had sat at that level forever), so a stream that starts away from zero does not
    /// begin with a step response.
    pub fn settle(&mut self, channel: usize, x0: f64) {
        if let Some(c) = self.channels.get_mut(channel) {
            let design = self.design.clone();
            c.settle(&design, x0);
            c.last_input = x0;
        }
    }

    /// Filters one channel's samples in place. State carries over between calls, so any block
    /// size gives the same output.
    pub fn process_channel(&mut self, channel: usize, samples: &mut [f64]) {
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
