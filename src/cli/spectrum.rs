//! `leadline spectrum`: Welch PSD of a recording as CSV, the mains report as JSON, a PNG plot.

use std::path::PathBuf;

use clap::Args;

use super::BadInput;
use super::args::*;
use super::num;
use crate::analysis::mains::{self, MainsReport};
use crate::dsp::spectrum::{Welch, segment_for};
use crate::export::plot_png;
use anyhow::{Context, Result};
use serde::Serialize;
use std::fmt::Write as _;

/// Options of `leadline spectrum`.
#[derive(Debug, Clone, Args)]
pub struct SpectrumArgs {
    #[command(flatten)]
    pub src: InputArgs,
    #[command(flatten)]
    pub leads: LeadArgs,
    #[command(flatten)]
    pub cancel: CancelArgs,
    /// Welch segment length (power of two, 256–16384); default about 4 s of signal.
    #[arg(value_parser = num::whole::<usize>(256, 16_384), long, value_name = "N")]
    pub segment: Option<usize>,
    /// PSD output: CSV with freq_hz,psd (µV²/Hz at the electrodes).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Mains report (JSON): mains_hz, harmonics [{order, hz, rms_uv}], snr_db, band_power.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// Plot of the PSD with the mains lines (PNG).
    #[arg(long, value_name = "FILE")]
    pub png: Option<PathBuf>,
    /// Signal to analyse: 0-based index or name (every signal of an EDF/BDF, whatever its rate).
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
}

#[derive(Serialize)]
struct Report<'a> {
    input: String,
    channel: usize,
    channel_name: String,
    signals: Vec<super::SignalOut>,
    fs_hz: f64,
    segment: usize,
    segments: usize,
    seconds: f64,
    #[serde(flatten)]
    mains: &'a MainsReport,
}

/// Runs the command.
///
/// # Errors
/// A bad or unreadable input (exit 2 for bad input), or an output that cannot be written.
pub fn run(a: &SpectrumArgs) -> Result<()> {
    let (mut rec, ch) = a.leads.load(&a.src, &a.channel)?;
    let fs = rec.fs_hz;
    a.cancel.apply(&mut rec.channels[ch], fs);
    let x = &rec.channels[ch];
    let segment = a.segment.unwrap_or_else(|| {
        segment_for(rec.fs_hz, 4.0)
            .min(x.len().next_power_of_two() / 2)
            .max(256)
    });
    let mut welch = Welch::new(segment).map_err(|e| BadInput(e.to_string()))?;
    let psd = welch
        .compute(x, rec.fs_hz)
        .map_err(|e| BadInput(format!("{}: {e}", a.src.input.display())))?;

    let mut csv = String::from("freq_hz,psd\n");
    for (f, d) in psd.freqs_hz.iter().zip(&psd.density) {
        let _ = writeln!(csv, "{f},{d}");
    }
    std::fs::write(&a.out, csv).with_context(|| format!("cannot write {}", a.out.display()))?;

    let report = mains::analyse(x, rec.fs_hz, &psd);
    if let Some(path) = &a.report {
        let r = report
            .as_ref()
            .map_err(|e| BadInput(format!("no mains report: {e}")))?;
        let doc = Report {
            input: a.src.input.display().to_string(),
            channel: ch,
            channel_name: rec.names.get(ch).cloned().unwrap_or_default(),
            signals: super::signals_out(&rec),
            fs_hz: rec.fs_hz,
            segment,
            segments: psd.segments,
            seconds: x.len() as f64 / rec.fs_hz,
            mains: r,
        };
        std::fs::write(path, serde_json::to_string_pretty(&doc)? + "\n")
            .with_context(|| format!("cannot write {}", path.display()))?;
    }
    if let Some(path) = &a.png {
        let title = format!(
            "{} · {} · Welch, {} samples per segment",
            a.src.input.display(),
            rec.names.get(ch).map_or("ch1", String::as_str),
            segment
        );
        plot_png::psd_png(path, &psd, report.as_ref().ok(), &title)?;
    }
    match &report {
        Ok(r) if !r.present() => eprintln!(
            "no mains line stands out (largest near {:.0} Hz: {:.2} µV rms)",
            r.nominal_hz, r.harmonics[0].rms_uv
        ),
        Ok(r) => eprintln!(
            "mains {:.3} Hz, fundamental {:.2} µV rms{}",
            r.mains_hz,
            r.harmonics[0].rms_uv,
            r.snr_db
                .map_or(String::new(), |d| format!(", signal/mains {d:.1} dB"))
        ),
        Err(e) => eprintln!("no mains report: {e}"),
    }
    Ok(())
}
