//! Sound: a short tone on each detected beat and the filtered signal made audible. One
//! [`Renderer`] turns the stream (filtered samples, decided beats, the readout's state) into audio
//! samples at the output's rate; the monitor sends them to the sound card ([`device`]) and
//! `leadline sound` writes them to a WAV file ([`wav`]), so the file is what the card plays.

pub mod device;
pub mod wav;

use serde::{Deserialize, Serialize};

/// What is heard.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SoundSettings {
    /// A tone on each beat, sounded when the beat is decided.
    pub tone: bool,
    /// The filtered channel itself.
    pub signal: bool,
    /// Tone pitch, Hz (200–4000).
    pub pitch_hz: f64,
    /// Tone volume, 0–1 of full scale.
    pub volume: f64,
    /// Tone length, ms.
    pub tone_ms: f64,
    /// Signal level: the output at this gain is 1 mV → full scale × gain.
    pub signal_gain: f64,
}

impl Default for SoundSettings {
    fn default() -> Self {
        Self {
            tone: true,
            signal: false,
            pitch_hz: 1000.0,
            volume: 0.3,
            tone_ms: 60.0,
            signal_gain: 1.0,
        }
    }
}

impl SoundSettings {
    /// The settings held to their ranges (a NaN falls back to the default).
    pub fn clamped(mut self) -> Self {
        let d = Self::default();
        let fix =
            |v: f64, lo: f64, hi: f64, def: f64| if v.is_finite() { v.clamp(lo, hi) } else { def };
        self.pitch_hz = fix(self.pitch_hz, 200.0, 4000.0, d.pitch_hz);
        self.volume = fix(self.volume, 0.0, 1.0, d.volume);
        self.tone_ms = fix(self.tone_ms, 10.0, 500.0, d.tone_ms);
        self.signal_gain = fix(self.signal_gain, 0.0, 1000.0, d.signal_gain);
        self
    }
}

/// Output rate of `leadline sound` and the rate asked of a sound card, Hz.
pub const DEFAULT_RATE_HZ: u32 = 48_000;
/// The limiter's ceiling (of full scale).
const CEILING: f64 = 0.9;
/// The limiter's release time constant, s.
const RELEASE_S: f64 = 0.1;
/// Tone attack and release, s (a click-free raised cosine).
const EDGE_S: f64 = 0.005;

/// Stream → audio samples.
#[derive(Debug, Clone)]
pub struct Renderer {
    in_fs: f64,
    out_fs: f64,
    settings: SoundSettings,
    /// Input samples consumed.
    consumed: u64,
    /// Audio samples produced.
    produced: u64,
    /// The last input sample (for interpolation across blocks).
    last: f64,
    /// Audio sample indices at which tones start (pending or sounding).
    tones: Vec<u64>,
    /// Tones started, and beats left silent because the readout was unreliable.
    sounded: u64,
    silenced: u64,
    limiter: f64,
    release: f64,
    scratch: Vec<f64>,
}

impl Renderer {
    /// A renderer for a stream at `in_fs` Hz to audio at `out_fs` Hz.
    pub fn new(in_fs: f64, out_fs: f64, settings: SoundSettings) -> Self {
        Self {
            in_fs,
            out_fs,
            settings: settings.clamped(),
            consumed: 0,
            produced: 0,
            last: 0.0,
            tones: Vec::new(),
            sounded: 0,
            silenced: 0,
            limiter: 1.0,
            release: 1.0 - (-1.0 / (RELEASE_S * out_fs)).exp(),
            scratch: Vec::new(),
        }
    }

    /// A renderer joining a stream whose first `consumed` samples went by unheard (sound
    /// switched on mid-stream): beat indices count from the stream's start.
    pub fn joining(in_fs: f64, out_fs: f64, settings: SoundSettings, consumed: u64) -> Self {
        let mut r = Self::new(in_fs, out_fs, settings);
        r.consumed = consumed;
        r.produced = if consumed == 0 {
            0
        } else {
            ((consumed - 1) as f64 * out_fs / in_fs).floor() as u64 + 1
        };
        r
    }

    /// New settings from the next sample.
    pub fn set(&mut self, settings: SoundSettings) {
        self.settings = settings.clamped();
    }

    /// Settings in force.
    pub fn settings(&self) -> SoundSettings {
        self.settings
    }

    /// Output rate, Hz.
    pub fn out_fs(&self) -> f64 {
        self.out_fs
    }

    /// A beat decided at input sample `decided`. `unreliable`: the readout shows no trustworthy
    /// rate now, so the beat stays silent.
    pub fn beat(&mut self, decided: u64, unreliable: bool) {
        if !self.settings.tone {
            return;
        }
        if unreliable {
            self.silenced += 1;
            return;
        }
        let at = (decided as f64 * self.out_fs / self.in_fs).round() as u64;
        self.tones.push(at.max(self.produced));
        self.sounded += 1;
    }

    /// Tones started and beats left silent so far.
    pub fn counts(&self) -> (u64, u64) {
        (self.sounded, self.silenced)
    }

    /// Renders the audio that spans the next input block `filtered` (µV), appending it to
    /// `out`: every audio sample whose time falls at or before the block's last sample.
    pub fn push(&mut self, filtered: &[f64], out: &mut Vec<f32>) {
        if filtered.is_empty() {
            return;
        }
        let first = self.consumed;
        self.consumed += filtered.len() as u64;
        let last_index = self.consumed - 1;
        let end = ((last_index as f64) * self.out_fs / self.in_fs).floor() as u64 + 1;
        let n = end.saturating_sub(self.produced) as usize;
        self.scratch.clear();
        self.scratch.resize(n, 0.0);
        if self.settings.signal {
            // Linear interpolation between input samples; the sample before the block is kept.
            let k = self.settings.signal_gain / 1000.0;
            for (j, y) in self.scratch.iter_mut().enumerate() {
                let t = (self.produced + j as u64) as f64 * self.in_fs / self.out_fs;
                let i0 = t.floor();
                let frac = t - i0;
                let at = |i: f64| -> f64 {
                    if i < first as f64 {
                        self.last
                    } else {
                        let idx = (i as u64 - first) as usize;
                        filtered[idx.min(filtered.len() - 1)]
                    }
                };
                let v = at(i0) * (1.0 - frac) + at(i0 + 1.0) * frac;
                *y = k * if v.is_finite() { v } else { 0.0 };
            }
            // Peak limiter: instant attack, 100 ms release.
            for y in self.scratch.iter_mut() {
                let released = self.limiter + self.release * (1.0 - self.limiter);
                self.limiter = if y.abs() * released > CEILING {
                    CEILING / y.abs()
                } else {
                    released
                };
                *y *= self.limiter;
            }
        }
        if let Some(&v) = filtered.last() {
            self.last = v;
        }
        let tone_len = (self.settings.tone_ms * 1e-3 * self.out_fs).round() as u64;
        let edge = (EDGE_S * self.out_fs).max(1.0);
        let w = std::f64::consts::TAU * self.settings.pitch_hz / self.out_fs;
        for &start in &self.tones {
            let from = start.max(self.produced);
            let to = (start + tone_len).min(end);
            for s in from..to {
                let t = (s - start) as f64;
                let left = (start + tone_len - s) as f64;
                let shape = |x: f64| {
                    if x >= edge {
                        1.0
                    } else {
                        0.5 - 0.5 * (std::f64::consts::PI * x / edge).cos()
                    }
                };
                self.scratch[(s - self.produced) as usize] +=
                    self.settings.volume * shape(t).min(shape(left)) * (w * t).sin();
            }
        }
        self.tones.retain(|&s| s + tone_len > end);
        out.extend(self.scratch.iter().map(|&y| y.clamp(-1.0, 1.0) as f32));
        self.produced = end;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn audio_keeps_time_with_the_stream_whatever_the_blocks() {
        let mut r = Renderer::new(500.0, 48_000.0, SoundSettings::default());
        let mut out = Vec::new();
        for _ in 0..100 {
            r.push(&[0.0; 7], &mut out);
        }
        // 700 input samples = 1.4 s; audio through the last sample's time (1.398 s).
        assert_eq!(out.len(), (699.0 * 96.0) as usize + 1);
    }

    #[test]
    fn a_tone_starts_at_its_beat_and_an_unreliable_beat_is_silent() {
        let mut r = Renderer::new(500.0, 48_000.0, SoundSettings::default());
        let mut out = Vec::new();
        r.push(&[0.0; 250], &mut out);
        r.beat(300, false);
        r.beat(400, true);
        r.push(&[0.0; 500], &mut out);
        let first = out.iter().position(|v| v.abs() > 1e-4).unwrap();
        // 300 / 500 Hz = 0.6 s = sample 28 800 (the raised-cosine edge makes the first
        // audible sample a few later).
        assert!((28_800..28_800 + 48).contains(&first), "{first}");
        let after = (28_800 + 48 * 70) as usize;
        assert!(out[after..].iter().all(|v| *v == 0.0));
        assert_eq!(r.counts(), (1, 1));
    }

    #[test]
    fn the_limiter_holds_a_huge_signal_under_full_scale() {
        let s = SoundSettings {
            tone: false,
            signal: true,
            signal_gain: 100.0,
            ..SoundSettings::default()
        };
        let mut r = Renderer::new(1000.0, 48_000.0, s);
        let x: Vec<f64> = (0..1000)
            .map(|i| 5000.0 * (std::f64::consts::TAU * 5.0 * i as f64 / 1000.0).sin())
            .collect();
        let mut out = Vec::new();
        r.push(&x, &mut out);
        let peak = out.iter().fold(0.0f32, |m, v| m.max(v.abs()));
        assert!(peak <= 0.9 + 1e-6 && peak > 0.5, "{peak}");
        assert!(out.iter().all(|v| v.is_finite()));
    }
}
