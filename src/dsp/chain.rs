//! The runtime filter chain: high-pass → mains notch(es) → low-pass → gain, one cascade per
//! channel, on the `biquad` crate's transposed direct form II sections in f64.
//!
//! Retuning swaps coefficients and keeps each section's state, so a corner moved while the signal
//! runs does not click. When the number of sections changes (an order or a stage switched), the new
//! cascade starts in the steady state of the last input sample instead of from zero, so the DC
//! content of the signal does not ring through a freshly started high-pass.

use biquad::{Biquad, Coefficients, DirectForm2Transposed};
use serde::{Deserialize, Serialize};

use super::design::{self, DesignError, Section};

/// High-pass stage settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct HighPass {
    /// Stage in use (bypassed when false; the values are kept).
    pub enabled: bool,
    /// −3 dB corner, Hz.
    pub corner_hz: f64,
    /// Butterworth order 1–8.
    pub order: u32,
}

impl Default for HighPass {
    fn default() -> Self {
        Self {
            enabled: true,
            corner_hz: 0.5,
            order: 2,
        }
    }
}

/// Low-pass stage settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct LowPass {
    /// Stage in use.
    pub enabled: bool,
    /// −3 dB corner, Hz.
    pub corner_hz: f64,
    /// Butterworth order 1–8.
    pub order: u32,
}

impl Default for LowPass {
    fn default() -> Self {
        Self {
            enabled: true,
            corner_hz: 40.0,
            order: 4,
        }
    }
}

/// Mains notch settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Notch {
    /// Stage in use.
    pub enabled: bool,
    /// Mains fundamental, Hz.
    pub mains_hz: f64,
    /// Quality factor: −3 dB bandwidth = mains_hz / q.
    pub q: f64,
    /// Extra notches at harmonics 2… (0–4), where below Nyquist.
    pub harmonics: u32,
    /// Follow the measured mains: the 50/60 Hz region, the exact frequency within ±1 Hz of it and
    /// the strong harmonics (the monitor retunes from each spectrum estimate).
    pub auto: bool,
}

impl Default for Notch {
    fn default() -> Self {
        Self {
            enabled: true,
            mains_hz: 50.0,
            q: 30.0,
            harmonics: 0,
            auto: false,
        }
    }
}

/// The whole chain as the user sets it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ChainSettings {
    pub highpass: HighPass,
    pub notch: Notch,
    pub lowpass: LowPass,
    /// Plain gain after the filters, V/V.
    pub gain: f64,
}

impl Default for ChainSettings {
    fn default() -> Self {
        Self {
            highpass: HighPass::default(),
            notch: Notch::default(),
            lowpass: LowPass::default(),
            gain: 1.0,
        }
    }
}

impl ChainSettings {
    /// A plain band: Butterworth high-pass and low-pass, each `(corner_hz, order)` or off,
    /// no notch, unity gain.
    pub fn band(highpass: Option<(f64, u32)>, lowpass: Option<(f64, u32)>) -> Self {
        let hp = HighPass::default();
        let lp = LowPass::default();
        Self {
            highpass: highpass.map_or(
                HighPass {
                    enabled: false,
                    ..hp
                },
                |(corner_hz, order)| HighPass {
                    enabled: true,
                    corner_hz,
                    order,
                },
            ),
            notch: Notch {
                enabled: false,
                ..Notch::default()
            },
            lowpass: lowpass.map_or(
                LowPass {
                    enabled: false,
                    ..lp
                },
                |(corner_hz, order)| LowPass {
                    enabled: true,
                    corner_hz,
                    order,
                },
            ),
            gain: 1.0,
        }
    }

    /// The chain in processing order, in the style of EDF's prefiltering field
    /// ("HP:0.5Hz(o2) N:50Hz(Q30) LP:40Hz(o4)"); "none" when every stage is bypassed.
    pub fn describe(&self) -> String {
        let mut parts = Vec::new();
        if self.highpass.enabled {
            parts.push(format!(
                "HP:{}Hz(o{})",
                self.highpass.corner_hz, self.highpass.order
            ));
        }
        if self.notch.enabled {
            parts.push(format!(
                "N:{}Hz(Q{}{})",
                self.notch.mains_hz,
                self.notch.q,
                if self.notch.harmonics > 0 {
                    format!("+{}h", self.notch.harmonics)
                } else {
                    String::new()
                }
            ));
        }
        if self.lowpass.enabled {
            parts.push(format!(
                "LP:{}Hz(o{})",
                self.lowpass.corner_hz, self.lowpass.order
            ));
        }
        if self.gain != 1.0 {
            parts.push(format!("G:{}", self.gain));
        }
        if parts.is_empty() {
            "none".into()
        } else {
            parts.join(" ")
        }
    }

    /// The chain designed at `fs`: its sections in processing order, with the settings and the
    /// rate they were made for. The one place a chain is designed; every view, export and check
    /// takes the [`Design`] (the monitor's from the DSP thread).
    ///
    /// # Errors
    /// [`DesignError`] for any stage that cannot be built (a corner at or above
    /// [`HIGHEST_CORNER_SHARE`] of the rate among them), or a high-pass corner at or above the
    /// low-pass corner when both are in use.
    pub fn design(&self, fs: f64) -> Result<Design, DesignError> {
        Ok(Design {
            settings: *self,
            fs_hz: fs,
            sections: self.sections(fs)?,
        })
    }

    fn sections(&self, fs: f64) -> Result<Vec<Section>, DesignError> {
        let mut out = Vec::new();
        let hp = self.highpass;
        let lp = self.lowpass;
        if hp.enabled && lp.enabled && hp.corner_hz >= lp.corner_hz {
            return Err(DesignError::Crossed {
                hp: hp.corner_hz,
                lp: lp.corner_hz,
            });
        }
        if hp.enabled {
            out.extend(design::butterworth_highpass(hp.order, hp.corner_hz, fs)?);
        }
        if self.notch.enabled {
            let n = self.notch;
            out.extend(design::mains_notches(n.mains_hz, n.q, n.harmonics, fs)?);
        }
        if lp.enabled {
            out.extend(design::butterworth_lowpass(lp.order, lp.corner_hz, fs)?);
        }
        if !self.gain.is_finite() {
            return Err(DesignError::Gain(self.gain));
        }
        if self.gain != 1.0 {
            out.push(Section::gain(self.gain));
        }
        Ok(out)
    }
}

/// The highest corner a chain takes, as a share of the sample rate: above it a digital
/// Butterworth section departs too far from its analog model (common practice).
pub const HIGHEST_CORNER_SHARE: f64 = 0.45;

/// The highest corner at `fs`, Hz.
pub fn highest_corner_hz(fs: f64) -> f64 {
    HIGHEST_CORNER_SHARE * fs
}

/// A chain designed for a rate: the settings, the rate and the sections, made once by
/// [`ChainSettings::design`]. It reads as its sections (`&design` is a `&[Section]`).
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    settings: ChainSettings,
    fs_hz: f64,
    sections: Vec<Section>,
}

impl Design {
    /// The settings designed.
    pub fn settings(&self) -> &ChainSettings {
        &self.settings
    }

    /// The rate designed for, Hz.
    pub fn fs_hz(&self) -> f64 {
        self.fs_hz
    }

    /// The sections, in processing order.
    pub fn sections(&self) -> &[Section] {
        &self.sections
    }
}

impl std::ops::Deref for Design {
    type Target = [Section];

    fn deref(&self) -> &[Section] {
        &self.sections
    }
}

fn coeffs(s: &Section) -> Coefficients<f64> {
    Coefficients {
        a1: s.a1,
        a2: s.a2,
        b0: s.b0,
        b1: s.b1,
        b2: s.b2,
    }
}

/// Sections processed side by side by the block kernel (see [`Lanes`]).
const LANES: usize = 4;

/// Four consecutive sections run as a skewed pipeline: at step t, lane k filters sample t − k
/// through section k, so the four lanes are independent within a step and the compiler can use
/// vector instructions for them. Every lane does exactly the arithmetic of the `biquad` crate's
/// `DirectForm2Transposed::run`, in the same order, so the result is bit-identical to filtering
/// sample by sample. Missing sections of the last group are identities (b0 = 1).
#[derive(Debug, Clone, Copy)]
struct Lanes {
    b0: [f64; LANES],
    b1: [f64; LANES],
    b2: [f64; LANES],
    a1: [f64; LANES],
    a2: [f64; LANES],
    s1: [f64; LANES],
    s2: [f64; LANES],
}

impl Lanes {
    fn gather(design: &[Section], state: &[DirectForm2Transposed<f64>]) -> Self {
        let mut l = Lanes {
            b0: [1.0; LANES],
            b1: [0.0; LANES],
            b2: [0.0; LANES],
            a1: [0.0; LANES],
            a2: [0.0; LANES],
            s1: [0.0; LANES],
            s2: [0.0; LANES],
        };
        for (k, (d, st)) in design.iter().zip(state).enumerate() {
            l.b0[k] = d.b0;
            l.b1[k] = d.b1;
            l.b2[k] = d.b2;
            l.a1[k] = d.a1;
            l.a2[k] = d.a2;
            l.s1[k] = st.s1;
            l.s2[k] = st.s2;
        }
        l
    }

    fn scatter(&self, state: &mut [DirectForm2Transposed<f64>]) {
        for (k, st) in state.iter_mut().enumerate() {
            st.s1 = self.s1[k];
            st.s2 = self.s2[k];
        }
    }

    /// One step with only the lanes that hold a real sample (start and end of a block).
    #[inline]
    fn step_masked(&mut self, t: usize, n: usize, x_in: f64, carry: &[f64; LANES]) -> [f64; LANES] {
        let mut out = *carry;
        for k in 0..LANES {
            if t >= k && t - k < n {
                let inp = if k == 0 { x_in } else { carry[k - 1] };
                out[k] = self.s1[k] + self.b0[k] * inp;
                self.s1[k] = self.s2[k] + self.b1[k] * inp - self.a1[k] * out[k];
                self.s2[k] = self.b2[k] * inp - self.a2[k] * out[k];
            }
        }
        out
    }

    /// The full-width body over local arrays: straight-line code the compiler vectorises.
    fn body(&mut self, x: &mut [f64], lag: usize, carry: [f64; LANES]) -> [f64; LANES] {
        let (b0, b1, b2, a1, a2) = (self.b0, self.b1, self.b2, self.a1, self.a2);
        let (mut s1, mut s2, mut c) = (self.s1, self.s2, carry);
        for t in lag..x.len() {
            let inp = [x[t], c[0], c[1], c[2]];
            let mut out = [0.0; LANES];
            for k in 0..LANES {
                out[k] = s1[k] + b0[k] * inp[k];
                s1[k] = s2[k] + b1[k] * inp[k] - a1[k] * out[k];
                s2[k] = b2[k] * inp[k] - a2[k] * out[k];
            }
            x[t - lag] = out[LANES - 1];
            c = out;
        }
        self.s1 = s1;
        self.s2 = s2;
        c
    }

    /// Filters `x` in place through the four lanes: a masked fill, the full-width body, a
    /// masked drain. Output sample t − 3 leaves the last lane at step t.
    fn run(&mut self, x: &mut [f64]) {
        let n = x.len();
        let lag = LANES - 1;
        let mut carry = [0.0; LANES];
        for t in 0..lag {
            let x_in = x.get(t).copied().unwrap_or(0.0);
            carry = self.step_masked(t, n, x_in, &carry);
        }
        if n > lag {
            carry = self.body(x, lag, carry);
        }
        for t in n.max(lag)..n + lag {
            carry = self.step_masked(t, n, 0.0, &carry);
            if t >= lag {
                x[t - lag] = carry[LANES - 1];
            }
        }
    }
}

/// A cascade of sections for one channel.
#[derive(Debug, Clone)]
struct Cascade {
    sections: Vec<DirectForm2Transposed<f64>>,
    design: Vec<Section>,
    last_input: f64,
}

impl Cascade {
    fn new(design: &[Section], settle_at: f64) -> Self {
        let mut c = Self {
            sections: design
                .iter()
                .map(|s| DirectForm2Transposed::<f64>::new(coeffs(s)))
                .collect(),
            design: design.to_vec(),
            last_input: settle_at,
        };
        c.settle(design, settle_at);
        c
    }

    /// Puts every section in the steady state for a constant input `x`.
    fn settle(&mut self, design: &[Section], mut x: f64) {
        for (st, s) in self.sections.iter_mut().zip(design) {
            let y = s.dc_gain() * x;
            // DF2T steady state: y = b0 x + s1, s1 = b1 x − a1 y + s2, s2 = b2 x − a2 y.
            st.s2 = s.b2 * x - s.a2 * y;
            st.s1 = y - s.b0 * x;
            x = y;
        }
    }

    #[inline]
    fn run(&mut self, x: f64) -> f64 {
        self.last_input = x;
        self.sections.iter_mut().fold(x, |v, s| s.run(v))
    }

    /// Blocks shorter than this go sample by sample: the pipeline's fill and drain would dominate.
    const BLOCK_MIN: usize = 2 * LANES;

    /// Filters a block in place; the same output as [`Self::run`] on each sample in turn.
    fn process_block(&mut self, x: &mut [f64]) {
        let Some(&last) = x.last() else { return };
        if x.len() < Self::BLOCK_MIN {
            for v in x.iter_mut() {
                *v = self.run(*v);
            }
            return;
        }
        // Recordings: two halves side by side (exact to rounding, see `halves`).
        if super::halves::run(&self.design, &mut self.sections, x) {
            self.last_input = last;
            return;
        }
        for (design, state) in self
            .design
            .chunks(LANES)
            .zip(self.sections.chunks_mut(LANES))
        {
            let mut lanes = Lanes::gather(design, state);
            // Moderate chunks keep the pipeline's loop short and its data in L1.
            for chunk in x.chunks_mut(256) {
                lanes.run(chunk);
            }
            lanes.scatter(state);
        }
        self.last_input = last;
    }

    fn retune(&mut self, design: &[Section]) {
        for (st, s) in self.sections.iter_mut().zip(design) {
            st.update_coefficients(coeffs(s));
        }
        self.design.clear();
        self.design.extend_from_slice(design);
    }
}

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

/// A record too short for forward–backward filtering with edge padding.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("zero-phase filtering needs more than {padlen} samples; the record has {len}")]
pub struct TooShort {
    pub len: usize,
    pub padlen: usize,
}

/// Filters `x` in place with a fresh cascade (zero initial state), one pass, on the block
/// kernels.
pub fn filter_once(sections: &[Section], x: &mut [f64]) {
    let mut c = Cascade::new(sections, 0.0);
    c.sections.iter_mut().for_each(|s| s.reset_state());
    c.process_block(x);
}

/// Filters `x` in place, one pass, starting in the steady state of its first sample, so a DC
/// offset in a recording does not ring through the high-pass at the start. Runs on the block
/// kernels (`leadline filter`).
pub fn filter_settled(sections: &[Section], x: &mut [f64]) {
    let Some(&first) = x.first() else { return };
    Cascade::new(sections, first).process_block(x);
}

/// Edge padding used by [`zero_phase`]: 3 × (2·sections + 1 − trailing zero taps), as
/// scipy.signal.sosfiltfilt computes it by default.
pub fn zero_phase_padlen(sections: &[Section]) -> usize {
    let b2_zero = sections.iter().filter(|s| s.b2 == 0.0).count();
    let a2_zero = sections.iter().filter(|s| s.a2 == 0.0).count();
    3 * (2 * sections.len() + 1 - b2_zero.min(a2_zero))
}

/// Forward–backward (zero-phase) filtering of a recorded signal: odd extension at both ends,
/// each pass started in the steady state of its first sample. The magnitude response is |H|², the
/// phase is zero. Same definition as scipy.signal.sosfiltfilt with its defaults.
///
/// # Errors
/// [`TooShort`] when `x` is not longer than the padding.
pub fn zero_phase(sections: &[Section], x: &[f64]) -> Result<Vec<f64>, TooShort> {
    let padlen = zero_phase_padlen(sections);
    let n = x.len();
    if n <= padlen {
        return Err(TooShort { len: n, padlen });
    }
    let mut ext = Vec::with_capacity(n + 2 * padlen);
    ext.extend((1..=padlen).rev().map(|i| 2.0 * x[0] - x[i]));
    ext.extend_from_slice(x);
    ext.extend((1..=padlen).map(|i| 2.0 * x[n - 1] - x[n - 1 - i]));
    Cascade::new(sections, ext[0]).process_block(&mut ext);
    ext.reverse();
    Cascade::new(sections, ext[0]).process_block(&mut ext);
    ext.reverse();
    Ok(ext[padlen..padlen + n].to_vec())
}

#[cfg(test)]
mod tests {
    #[test]
    fn the_description_lists_the_stages_in_processing_order() {
        let mut c = ChainSettings::default();
        assert_eq!(c.describe(), "HP:0.5Hz(o2) N:50Hz(Q30) LP:40Hz(o4)");
        c.notch.harmonics = 2;
        c.gain = 2.0;
        c.lowpass.enabled = false;
        assert_eq!(c.describe(), "HP:0.5Hz(o2) N:50Hz(Q30+2h) G:2");
        c.highpass.enabled = false;
        c.notch.enabled = false;
        c.gain = 1.0;
        assert_eq!(c.describe(), "none");
    }

    use super::*;

    #[test]
    fn block_size_does_not_change_the_output() {
        let fs = 500.0;
        let x: Vec<f64> = (0..5000)
            .map(|n| {
                let t = n as f64 / fs;
                1000.0 * (7.0 * t).sin()
                    + 300.0 * (2.0 * std::f64::consts::PI * 50.0 * t).sin()
                    + 50.0
            })
            .collect();
        // The default chain (4 sections, one pipeline group) and a 9-section one (three groups,
        // the last padded), against a sample-by-sample run through the biquad crate's sections.
        let mut long = ChainSettings::default();
        long.highpass.order = 5;
        long.notch.harmonics = 2;
        long.lowpass.order = 6;
        for settings in [ChainSettings::default(), long] {
            let sections = settings.design(fs).unwrap();
            let mut bq: Vec<DirectForm2Transposed<f64>> = sections
                .iter()
                .map(|s| DirectForm2Transposed::<f64>::new(coeffs(s)))
                .collect();
            let reference: Vec<f64> = x
                .iter()
                .map(|&v| bq.iter_mut().fold(v, |a, s| s.run(a)))
                .collect();
            for block in [1, 7, 64, 1024] {
                let mut chain = Chain::new(settings, fs, 1).unwrap();
                let mut y = x.clone();
                for chunk in y.chunks_mut(block) {
                    chain.process_channel(0, chunk);
                }
                assert_eq!(
                    y,
                    reference,
                    "{} sections, block size {block}",
                    sections.len()
                );
            }
            // Interleaved channels: each channel as if alone, in blocks that take the block
            // kernel (50 frames) and blocks that go frame by frame (5 frames).
            for frames in [50, 5, Chain::KERNEL_FRAMES] {
                let mut chain = Chain::new(settings, fs, 3).unwrap();
                let mut inter: Vec<f64> = x.iter().flat_map(|&v| [v, -v, 0.5 * v]).collect();
                for chunk in inter.chunks_mut(3 * frames) {
                    chain.process_interleaved(chunk);
                }
                let ch0: Vec<f64> = inter.iter().step_by(3).copied().collect();
                assert_eq!(ch0, reference, "interleaved, {frames} frames a block");
                let ch1: Vec<f64> = inter.iter().skip(1).step_by(3).map(|v| -v).collect();
                assert_eq!(
                    ch1, reference,
                    "interleaved channel 2, {frames} frames a block"
                );
            }
        }
    }

    #[test]
    fn retune_keeps_running_without_a_jump() {
        let fs = 500.0;
        let mut chain = Chain::new(ChainSettings::default(), fs, 1).unwrap();
        let sig =
            |n: usize| 800.0 * (2.0 * std::f64::consts::PI * 1.2 * n as f64 / fs).sin() + 2000.0;
        let mut before = Vec::new();
        for n in 0..5000 {
            let mut v = [sig(n)];
            chain.process_channel(0, &mut v);
            before.push(v[0]);
        }
        let range = before[2500..].iter().fold(0.0f64, |m, v| m.max(v.abs()));
        // Same structure (corner moves) and new structure (order change) both stay bounded.
        let mut s = ChainSettings::default();
        s.highpass.corner_hz = 2.0;
        chain.retune(s).unwrap();
        s.lowpass.order = 7;
        chain.retune(s).unwrap();
        for n in 5000..7000 {
            let mut v = [sig(n)];
            chain.process_channel(0, &mut v);
            assert!(
                v[0].abs() <= 1.5 * range,
                "sample {n}: {} vs range {range}",
                v[0]
            );
        }
        assert_eq!(chain.settings().lowpass.order, 7);
    }

    #[test]
    fn zero_phase_leaves_no_delay_and_refuses_short_records() {
        let fs = 500.0;
        let s = ChainSettings::default().design(fs).unwrap();
        // A 5 Hz tone in the pass band comes back in phase (a causal pass would delay it).
        let x: Vec<f64> = (0..5000)
            .map(|n| (2.0 * std::f64::consts::PI * 5.0 * n as f64 / fs).sin())
            .collect();
        let y = zero_phase(&s, &x).unwrap();
        let err = x[1000..4000]
            .iter()
            .zip(&y[1000..4000])
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        assert!(err < 0.01, "{err}");
        let e = zero_phase(&s, &x[..10]).unwrap_err();
        assert_eq!(e.padlen, zero_phase_padlen(&s));
        assert!(e.to_string().contains("more than"));
    }

    #[test]
    fn crossed_corners_are_refused_and_old_chain_kept() {
        let mut chain = Chain::new(ChainSettings::default(), 500.0, 2).unwrap();
        let mut s = ChainSettings::default();
        s.highpass.corner_hz = 45.0;
        let e = chain.retune(s).unwrap_err();
        assert_eq!(e, DesignError::Crossed { hp: 45.0, lp: 40.0 });
        assert_eq!(chain.settings().highpass.corner_hz, 0.5);
    }
}
