//! `leadline sound`: what the monitor would play, rendered to a WAV file by the same renderer
//! that feeds the sound card.

use std::path::PathBuf;

use clap::Args;

use super::BadInput;
use super::args::*;
use super::num;
use crate::analysis::rate::RateState;
use crate::analysis::readout::Readout;
use crate::dsp::chain::{Chain, ChainSettings};
use crate::sound::{Renderer, SoundSettings, wav};
use anyhow::{Context, Result};

/// Options of `leadline sound`.
#[derive(Debug, Clone, Args)]
pub struct SoundArgs {
    #[command(flatten)]
    pub src: InputArgs,
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Signal to follow: 0-based index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// A tone on each beat (the default when neither --tone nor --signal is given).
    #[arg(long)]
    pub tone: bool,
    /// The filtered signal itself.
    #[arg(long)]
    pub signal: bool,
    /// Tone pitch, Hz (200–4000).
    #[arg(value_parser = num::real(200.0, 4000.0, "Hz"), long, default_value_t = 1000.0, value_name = "HZ")]
    pub pitch: f64,
    /// Tone volume, 0–1 of full scale.
    #[arg(value_parser = num::real(0.0, 1.0, ""), long, default_value_t = 0.3, value_name = "V")]
    pub volume: f64,
    /// Tone length, ms.
    #[arg(value_parser = num::real(5.0, 1000.0, "ms"), long, default_value_t = 60.0, value_name = "MS")]
    pub tone_ms: f64,
    /// Signal gain: 1 mV is full scale × this (a limiter keeps peaks under 0.9).
    #[arg(value_parser = num::real(0.01, 1000.0, ""), long, default_value_t = 1.0, value_name = "G")]
    pub signal_gain: f64,
    /// Output rate, Hz.
    #[arg(value_parser = num::whole::<u32>(8000, 192_000), long, default_value_t = crate::sound::DEFAULT_RATE_HZ, value_name = "HZ")]
    pub rate: u32,
    /// The WAV file (16-bit PCM mono).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
}

/// Runs the command.
///
/// # Errors
/// A bad or unreadable input, a chain that cannot be built, an unwritable output.
pub fn run(a: &SoundArgs) -> Result<()> {
    let (rec, ch) = a.src.load(&a.channel)?;
    let setup = a.src.setup()?;
    a.chain.check_notch(false)?;
    let chain = match (&setup, a.chain.any_stage()) {
        (Some(s), false) => s.chain,
        (None, false) => ChainSettings::default(),
        _ => a.chain.settings(),
    };
    let fs = rec.fs_hz;
    if !(1000..=192_000).contains(&a.rate) {
        return Err(BadInput(format!(
            "output rate {} Hz is outside 1000–192000 Hz",
            a.rate
        ))
        .into());
    }
    let x = &rec.channels[ch];
    let mut filter = Chain::new(chain, fs, 1).map_err(|e| BadInput(e.to_string()))?;
    let mut readout = Readout::new(fs).map_err(|e| BadInput(e.to_string()))?;
    let settings = SoundSettings {
        tone: a.tone || !a.signal,
        signal: a.signal,
        pitch_hz: a.pitch,
        volume: a.volume,
        tone_ms: a.tone_ms,
        signal_gain: a.signal_gain,
    };
    let mut renderer = Renderer::new(fs, f64::from(a.rate), settings);
    let (mut beats, mut evals) = (Vec::new(), Vec::new());
    let mut audio = Vec::with_capacity((x.len() as f64 * f64::from(a.rate) / fs) as usize + 1);
    let mut buf = Vec::new();
    // The monitor's blocks: 10 ms.
    let block = ((fs / 100.0).round() as usize).max(1);
    if let Some(&x0) = x.first() {
        filter.settle(0, x0);
    }
    for chunk in x.chunks(block) {
        beats.clear();
        readout.process(chunk, &[], &mut beats, &mut evals);
        let unreliable = matches!(readout.shown(), RateState::Unreliable(_));
        for b in &beats {
            renderer.beat(b.decided, unreliable);
        }
        buf.clear();
        buf.extend_from_slice(chunk);
        filter.process_channel(0, &mut buf);
        renderer.push(&buf, &mut audio);
    }
    let mut out = Vec::new();
    wav::write(&mut out, &audio, a.rate)?;
    std::fs::write(&a.out, out).with_context(|| format!("cannot write {}", a.out.display()))?;
    let (sounded, silenced) = renderer.counts();
    eprintln!(
        "{:.1} s of audio at {} Hz: {sounded} beat tones{}{}",
        audio.len() as f64 / f64::from(a.rate),
        a.rate,
        if silenced > 0 {
            format!(", {silenced} beats left silent (readout unreliable)")
        } else {
            String::new()
        },
        if settings.signal {
            ", with the filtered signal"
        } else {
            ""
        }
    );
    Ok(())
}
