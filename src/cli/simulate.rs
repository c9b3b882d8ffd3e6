//! `leadline simulate`: the simulator written to a file or standard output.

use std::fmt::Write as _;
use std::io::{self, Write};

use anyhow::{Context, Result};

use super::{SimFormat, SimulateArgs, Units};
use crate::source::{Synth, SynthSettings};
use crate::store::csv::time_text;
use crate::wire::ascii;

/// Simulator settings from the command line.
pub fn settings(a: &SimulateArgs) -> SynthSettings {
    SynthSettings {
        fs_hz: a.fs,
        channels: a.channels,
        seed: a.seed,
        hr_bpm: a.hr,
        hrv_bpm: a.hrv,
        r_mv: a.r_mv,
        mains_hz: a.mains,
        mains_uv: a.mains_uv,
        wander_uv: a.wander_uv,
        drift_uv: a.drift_uv,
        noise_uv: a.noise_uv,
        offset_mv: a.offset_mv,
        charger: a.charger,
        inverted: a.inverted,
        lead_off: a.lead_off,
        ..SynthSettings::default()
    }
}

/// Writes the whole stream to `out`. Returns the number of frames written.
///
/// # Errors
/// Bad settings (as [`crate::source::SynthError`]) or a write failure.
pub fn write_stream(a: &SimulateArgs, out: &mut dyn Write) -> Result<u64> {
    if !(a.seconds.is_finite() && a.seconds > 0.0) {
        return Err(
            super::BadInput(format!("--seconds {} must be a positive number", a.seconds)).into(),
        );
    }
    let s = settings(a);
    let mut synth = Synth::new(s.clone())?;
    let scale = synth.scale();
    let total = (a.seconds * s.fs_hz).round() as u64;
    let n_ch = s.channels;
    let mut text = String::new();
    match a.format {
        SimFormat::Ascii => {
            let note = format!(
                "leadline simulator seed={} hr={} mains={}Hz/{}uV charger={}",
                s.seed, s.hr_bpm, s.mains_hz, s.mains_uv, s.charger
            );
            text.push_str(&ascii::header(s.fs_hz, n_ch, &scale, &note));
        }
        SimFormat::Csv => {
            text.push_str("time_s");
            for k in 1..=n_ch {
                let _ = write!(text, ",ch{k}");
            }
            text.push('\n');
        }
    }
    let mut buf = Vec::new();
    let mut n = 0u64;
    while n < total {
        let frames = (total - n).min(4096);
        buf.clear();
        synth.fill(frames as usize, &mut buf);
        match a.format {
            SimFormat::Ascii => ascii::encode_frames(&buf, n_ch, &mut text),
            SimFormat::Csv => {
                for (i, frame) in buf.chunks_exact(n_ch).enumerate() {
                    text.push_str(&time_text(n + i as u64, s.fs_hz));
                    for &c in frame {
                        let uv = scale.counts_to_uv(c);
                        let _ = match a.units {
                            Units::Counts => write!(text, ",{}", c as i64),
                            Units::Volts => write!(text, ",{:.10}", uv * 1e-6),
                            Units::Millivolts => write!(text, ",{:.6}", uv * 1e-3),
                            Units::Microvolts => write!(text, ",{:.3}", uv),
                        };
                    }
                    text.push('\n');
                }
            }
        }
        out.write_all(text.as_bytes())?;
        text.clear();
        n += frames;
    }
    out.flush()?;
    Ok(total)
}

/// Runs the command.
///
/// # Errors
/// Bad settings, an unwritable output.
pub fn run(a: &SimulateArgs) -> Result<()> {
    if a.out == "-" {
        let stdout = io::stdout();
        let mut lock = io::BufWriter::new(stdout.lock());
        match write_stream(a, &mut lock) {
            // A reader that stops early (`| head`) is not a failure of ours.
            Err(e) if is_broken_pipe(&e) => Ok(()),
            other => other.map(|_| ()),
        }
    } else {
        let f =
            std::fs::File::create(&a.out).with_context(|| format!("cannot create {}", a.out))?;
        let mut w = io::BufWriter::new(f);
        let n = write_stream(a, &mut w).with_context(|| format!("writing {}", a.out))?;
        eprintln!("wrote {n} frames to {}", a.out);
        Ok(())
    }
}

fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.downcast_ref::<io::Error>()
        .is_some_and(|e| e.kind() == io::ErrorKind::BrokenPipe)
}
