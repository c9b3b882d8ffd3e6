//! The chain as the user sets it (high-pass → mains notch(es) → low-pass → gain) and its
//! design for a rate. The running cascade is in [`super::cascade`], the block kernel in
//! [`super::kernel`], the passes over a recording in [`super::offline`]; their items are
//! re-exported here.

use serde::{Deserialize, Serialize};

pub use super::cascade::Chain;
use super::design::{self, DesignError, Section};
pub use super::offline::{TooShort, filter_once, filter_settled, zero_phase, zero_phase_padlen};

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
    /// The adaptive mains canceller after the high-pass, at the notch's mains frequency (not a
    /// set of sections: it runs beside them and is not in the [`Design`]).
    pub cancel: super::canceller::MainsCancel,
}

impl Default for ChainSettings {
    fn default() -> Self {
        Self {
            highpass: HighPass::default(),
            notch: Notch::default(),
            lowpass: LowPass::default(),
            gain: 1.0,
            cancel: super::canceller::MainsCancel::default(),
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
            cancel: Default::default(),
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
        if self.cancel.enabled {
            parts.push(format!(
                "C:{}Hz({}h)",
                self.notch.mains_hz, self.cancel.harmonics
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

    /// How many of the design's sections are the high-pass (the canceller runs after them).
    pub fn highpass_sections(&self) -> usize {
        if self.highpass.enabled {
            self.highpass.order.div_ceil(2) as usize
        } else {
            0
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

#[cfg(test)]
mod tests {
    use super::super::kernel::coeffs;
    use biquad::{Biquad, DirectForm2Transposed};
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
