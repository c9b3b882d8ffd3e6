//! `leadline beats`: QRS detection on a recording; beats as CSV, a summary as JSON.

use std::path::PathBuf;

use clap::Args;

use super::BadInput;
use super::args::*;
use crate::analysis::rate::{Hrv, hrv};
use crate::analysis::readout::Readout;
use anyhow::{Context, Result};
use serde::Serialize;
use std::fmt::Write as _;

/// Options of `leadline beats`.
#[derive(Debug, Clone, Args)]
pub struct BeatsArgs {
    #[command(flatten)]
    pub src: InputArgs,
    #[command(flatten)]
    pub leads: LeadArgs,
    #[command(flatten)]
    pub cancel: CancelArgs,
    /// Signal to analyse: 0-based index or name (every signal of an EDF/BDF, whatever its rate).
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// Beats: CSV with sample,time_s,r_uv,search_back,decided_s.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Summary (JSON): beat count, mean heart rate, HRV (mean RR, SDNN, RMSSD, pNN50).
    #[arg(long, value_name = "FILE")]
    pub summary: Option<PathBuf>,
    /// The heart-rate readout once a second, as the monitor shows it: CSV with
    /// time_s,bpm,state,reason (state: settling, ok, no_beat, unreliable; bpm empty when no
    /// number is shown), quality_pct (the signal quality the monitor shows with it: noise,
    /// artefact, clipping) and regularity_pct (the share of successive intervals within 12 %;
    /// the rhythm, kept apart from the quality).
    #[arg(long, value_name = "FILE")]
    pub rate_out: Option<PathBuf>,
}

#[derive(Serialize)]
struct Summary {
    input: String,
    channel: usize,
    channel_name: String,
    signals: Vec<super::SignalOut>,
    fs_hz: f64,
    duration_s: f64,
    beats: usize,
    mean_hr_bpm: Option<f64>,
    hrv: Option<Hrv>,
}

/// Runs the command. Returns the number of beats.
///
/// # Errors
/// A bad or unreadable input, a rate outside 125–2000 Hz, an unwritable output.
pub fn run(a: &BeatsArgs) -> Result<usize> {
    let (mut rec, ch) = a.leads.load(&a.src, &a.channel)?;
    let fs = rec.fs_hz;
    a.cancel.apply(&mut rec.channels[ch], fs);
    let x = &rec.channels[ch];
    // The monitor's readout, fed as the monitor feeds it (10 ms blocks; any split gives the
    // same result).
    let mut readout = Readout::new(rec.fs_hz).map_err(|e| BadInput(e.to_string()))?;
    let mut beats = Vec::new();
    let mut evals = Vec::new();
    let block = ((rec.fs_hz / 100.0).round() as usize).max(1);
    for chunk in x.chunks(block) {
        readout.process(chunk, &[], &mut beats, &mut evals);
    }
    let mut csv = String::from("sample,time_s,r_uv,search_back,decided_s\n");
    for b in &beats {
        let _ = writeln!(
            csv,
            "{},{:.6},{:.3},{},{:.6}",
            b.sample,
            b.sample as f64 / rec.fs_hz,
            b.r_value,
            u8::from(b.search_back),
            b.decided as f64 / rec.fs_hz
        );
    }
    let meter = readout.meter();
    if let Some(path) = &a.rate_out {
        let mut rate = String::from("time_s,bpm,state,reason,quality_pct,regularity_pct\n");
        for e in &evals {
            let _ = writeln!(
                rate,
                "{},{},{},{},{:.0},{}",
                e.time_s,
                e.state.bpm().map_or(String::new(), |b| format!("{b:.1}")),
                e.state.name(),
                e.state.reason(),
                e.quality_pct,
                e.regularity_pct
                    .map_or(String::new(), |r| format!("{r:.0}"))
            );
        }
        std::fs::write(path, rate).with_context(|| format!("cannot write {}", path.display()))?;
    }
    std::fs::write(&a.out, csv).with_context(|| format!("cannot write {}", a.out.display()))?;
    let rr: Vec<f64> = beats
        .windows(2)
        .map(|w| (w[1].sample - w[0].sample) as f64 / rec.fs_hz)
        .collect();
    let duration = x.len() as f64 / rec.fs_hz;
    let mean_hr = (!rr.is_empty()).then(|| 60.0 * rr.len() as f64 / rr.iter().sum::<f64>());
    if let Some(path) = &a.summary {
        let nn: Vec<f64> = meter.nn_intervals().collect();
        let doc = Summary {
            input: a.src.input.display().to_string(),
            channel: ch,
            channel_name: rec.names.get(ch).cloned().unwrap_or_default(),
            signals: super::signals_out(&rec),
            fs_hz: rec.fs_hz,
            duration_s: duration,
            beats: beats.len(),
            mean_hr_bpm: mean_hr,
            hrv: hrv(&nn),
        };
        std::fs::write(path, serde_json::to_string_pretty(&doc)? + "\n")
            .with_context(|| format!("cannot write {}", path.display()))?;
    }
    eprintln!(
        "{} beats in {:.1} s{}",
        beats.len(),
        duration,
        mean_hr.map_or(String::new(), |h| format!(", mean {h:.1} bpm"))
    );
    Ok(beats.len())
}
