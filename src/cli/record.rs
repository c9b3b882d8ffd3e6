//! `leadline record`: a source, headless, to a file for a fixed time; and `leadline ports`.

use std::fmt::Write as _;
use std::io::Write as _;
use std::sync::Arc;
use std::time::{Duration, Instant};

use anyhow::{Context, Result};

use super::{BadInput, RecordArgs, Units};
use crate::pipeline::{Pipeline, PipelineConfig};
use crate::scale::InputScale;
use crate::source::{Pacing, SourceSpec};
use crate::store::csv::time_text;

/// Lists serial ports.
///
/// # Errors
/// Never; an empty system prints a line saying so.
pub fn ports() -> Result<()> {
    let p = crate::source::serial::list_ports();
    if p.is_empty() {
        println!("no serial ports found");
    }
    for name in p {
        println!("{name}");
    }
    Ok(())
}

/// Runs the command.
///
/// # Errors
/// A bad source text or time, an unwritable output file (the message names it).
pub fn run(a: &RecordArgs) -> Result<()> {
    if !(a.seconds.is_finite() && a.seconds > 0.0) {
        return Err(BadInput(format!(
            "--seconds {}: must be a positive number",
            a.seconds
        ))
        .into());
    }
    let spec = SourceSpec::parse(&a.source, a.fs, InputScale::default())
        .map_err(|e| BadInput(e.to_string()))?;
    let mut pipeline = Pipeline::start(
        PipelineConfig {
            source: spec,
            pacing: Pacing::RealTime,
            record: true,
            display_hz: 2.0,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )?;
    let rx = pipeline
        .take_records()
        .context("the recorder path was not started")?;
    let file = std::fs::File::create(&a.out)
        .with_context(|| format!("cannot create {}", a.out.display()))?;
    let mut w = std::io::BufWriter::new(file);
    let deadline = Instant::now() + Duration::from_secs_f64(a.seconds);
    let mut header_done = false;
    let mut frames = 0u64;
    let mut last_flush = Instant::now();
    let mut text = String::new();
    while let Some(left) = deadline.checked_duration_since(Instant::now()) {
        let Ok(block) = rx.recv_timeout(left.min(Duration::from_millis(200))) else {
            continue;
        };
        text.clear();
        if !header_done {
            text.push_str("time_s");
            for k in 1..=block.channels {
                let _ = write!(text, ",ch{k}");
            }
            text.push('\n');
            header_done = true;
        }
        if block.gap_before {
            text.push_str("# gap: the device was lost and found again here\n");
        }
        let n = block.channels.max(1);
        let values: &[f64] = if a.units == Units::Counts {
            &block.received
        } else {
            &block.raw_uv
        };
        let factor = match a.units {
            Units::Counts => 1.0,
            Units::Volts => 1e-6,
            Units::Millivolts => 1e-3,
            Units::Microvolts => 1.0,
        };
        for (i, frame) in values.chunks_exact(n).enumerate() {
            text.push_str(&time_text(block.first_sample + i as u64, block.fs_hz));
            for v in frame {
                let _ = write!(text, ",{}", v * factor);
            }
            text.push('\n');
        }
        frames += (values.len() / n) as u64;
        w.write_all(text.as_bytes())
            .with_context(|| format!("writing {}", a.out.display()))?;
        // Data reach the disk at least once a second.
        if last_flush.elapsed() >= Duration::from_secs(1) {
            w.flush()
                .with_context(|| format!("writing {}", a.out.display()))?;
            last_flush = Instant::now();
        }
    }
    w.flush()
        .with_context(|| format!("writing {}", a.out.display()))?;
    let status = pipeline.serial_status();
    pipeline.shutdown();
    if frames == 0 {
        let why = status.map(|s| s.message).unwrap_or_default();
        eprintln!(
            "no samples arrived from {} in {} s{}",
            a.source,
            a.seconds,
            if why.is_empty() {
                String::new()
            } else {
                format!(" ({why})")
            }
        );
    } else {
        eprintln!("recorded {frames} frames to {}", a.out.display());
    }
    Ok(())
}
