//! `leadline bench`: throughput figures measured on this machine, the last line one JSON object.

use std::path::PathBuf;

use clap::{Args, ValueEnum};

use super::num;
use crate::dsp::Section;
use crate::dsp::chain::{Chain, ChainSettings, HighPass, LowPass, Notch};
use crate::rng::Rng;
use anyhow::{Context, Result};
use serde::Serialize;
use std::hint::black_box;
use std::time::Instant;

mod mains;
mod runs;

pub use runs::annotated;

/// What `leadline bench` measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BenchWhat {
    /// The 4-section chain (HP 0.5 Hz ×2, notch 60 Hz, LP 40 Hz ×4 at 1 kHz), one pass and in 64-sample blocks.
    Dsp,
    /// One Welch update of 10 s at 1 kHz (segment 2048), and the mains measurement on it.
    Spectrum,
    /// Offline beat detection of a 30-minute 360 Hz record (MIT-BIH 100, or a simulated one).
    Beats,
    /// Decoder throughput of the text and binary wire formats, MB/s.
    Wire,
    /// UDP: binary datagrams decoded and put back in order, frames/s against 8 ch × 4 kHz.
    Net,
    /// `measure response` on a 60 s two-channel 1 kHz recording (the analysis, in process).
    Measure,
    /// Sound: the renderer (beat tone and signal, 48 kHz) on 60 s of a 1 kHz stream in 10 ms
    /// blocks, as the DSP thread runs it; and the EMG view of 20 s at 1 kHz.
    Sound,
    /// The adaptive mains canceller against the Q 30 notch on the committed fixture (--mains):
    /// residual per harmonic, QRS error, ST shift, the impulse test.
    Mains,
}

/// Options of `leadline bench`.
#[derive(Debug, Clone, Args)]
pub struct BenchArgs {
    /// The figure to measure.
    #[arg(value_enum)]
    pub what: BenchWhat,
    /// Samples to process.
    #[arg(value_parser = num::whole::<usize>(1, 1_000_000_000), long, default_value_t = 10_000_000, value_name = "N")]
    pub samples: usize,
    /// WFDB record (.hea) for `bench beats`; without it a simulated 30-minute record is used.
    #[arg(long, value_name = "FILE")]
    pub record: Option<PathBuf>,
    /// `bench beats`: a folder of annotated WFDB records (NAME.hea with NAME.beats.csv) for the
    /// in-sample and the three-against-two held-out figures.
    #[arg(long, value_name = "DIR", default_value = "tests/data/mitdb")]
    pub annotated: PathBuf,
    /// `bench mains`: the folder of the mains fixture (mains60.f32, mains60.json).
    #[arg(long, value_name = "DIR", default_value = "tests/data/mains")]
    pub mains: PathBuf,
}

/// The benchmark chain: HP 2nd order 0.5 Hz + notch 60 Hz Q 30 + LP 4th order 40 Hz at 1 kHz.
pub fn bench_chain() -> ChainSettings {
    ChainSettings {
        highpass: HighPass {
            enabled: true,
            corner_hz: 0.5,
            order: 2,
        },
        notch: Notch {
            enabled: true,
            mains_hz: 60.0,
            q: 30.0,
            harmonics: 0,
            auto: false,
        },
        lowpass: LowPass {
            enabled: true,
            corner_hz: 40.0,
            order: 4,
        },
        gain: 1.0,
        cancel: Default::default(),
    }
}

/// The benchmark input: an ECG-band sine with mains and noise, fixed seed.
pub fn bench_signal(n: usize, fs: f64) -> Vec<f64> {
    let mut rng = Rng::new(2024);
    (0..n)
        .map(|i| {
            let t = i as f64 / fs;
            1000.0 * (std::f64::consts::TAU * 1.2 * t).sin()
                + 200.0 * (std::f64::consts::TAU * 60.0 * t).sin()
                + 20.0 * rng.normal()
        })
        .collect()
}

/// A hand-written transposed direct form II cascade: the yardstick the chain is held to.
pub fn direct_loop(sections: &[Section], x: &mut [f64]) {
    let mut st = vec![[0.0f64; 2]; sections.len()];
    for v in x.iter_mut() {
        let mut y = *v;
        for (s, z) in sections.iter().zip(st.iter_mut()) {
            let out = s.b0 * y + z[0];
            z[0] = s.b1 * y - s.a1 * out + z[1];
            z[1] = s.b2 * y - s.a2 * out;
            y = out;
        }
        *v = y;
    }
}

/// Best of `runs` timings of `f` on a fresh copy of `input` (the copy is not timed).
fn best_of<F: FnMut(&mut [f64])>(runs: usize, input: &[f64], mut f: F) -> f64 {
    let mut buf = input.to_vec();
    (0..runs)
        .map(|_| {
            buf.copy_from_slice(input);
            let t = Instant::now();
            f(&mut buf);
            let dt = t.elapsed().as_secs_f64();
            black_box(&buf);
            dt
        })
        .fold(f64::INFINITY, f64::min)
}

/// Runs the command.
///
/// # Errors
/// Only if the benchmark chain could not be designed.
pub fn run(a: &BenchArgs) -> Result<()> {
    // Each measurement prints its human lines, then its figures as one JSON line.
    fn report<F: Serialize>(f: &F, print: impl Fn(&F)) -> Result<()> {
        print(f);
        println!("{}", serde_json::to_string(f)?);
        Ok(())
    }
    match a.what {
        BenchWhat::Dsp => report(&runs::dsp(a.samples)?, |f| f.print()),
        BenchWhat::Beats => report(&runs::beats(a.record.as_deref(), &a.annotated)?, |f| {
            f.print()
        }),
        BenchWhat::Wire => report(&runs::wire()?, |f| f.print()),
        BenchWhat::Measure => report(&runs::measure()?, |f| f.print()),
        BenchWhat::Net => report(&runs::net()?, |f| f.print()),
        BenchWhat::Sound => report(&runs::sound()?, |f| f.print()),
        BenchWhat::Spectrum => report(&runs::spectrum()?, |f| f.print()),
        BenchWhat::Mains => report(&mains::mains(&a.mains)?, |f| f.print()),
    }
}
