//! `leadline emg`: surface EMG of a recording — envelope and moving RMS as CSV, contractions and
//! the fatigue trend as JSON.

use std::path::PathBuf;

use clap::Args;

use super::BadInput;
use super::args::*;
use super::num;
use crate::analysis::emg::{EmgAnalysis, EmgSettings, analyse};
use anyhow::{Context, Result};
use serde::Serialize;
use std::fmt::Write as _;

/// Options of `leadline emg`.
#[derive(Debug, Clone, Args)]
pub struct EmgArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Signal to analyse: 0-based index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// Resting baseline for the onset threshold, s: START,END (default: the quietest second).
    #[arg(value_parser = num::time_s(), long, value_name = "START,END", value_delimiter = ',')]
    pub baseline: Option<Vec<f64>>,
    /// A maximum voluntary contraction, s: START,END; each contraction's RMS is then also
    /// given as % of it.
    #[arg(value_parser = num::time_s(), long, value_name = "START,END", value_delimiter = ',')]
    pub mvc: Option<Vec<f64>>,
    /// Linear envelope's low-pass corner, Hz (2–10).
    #[arg(value_parser = num::real(0.5, 50.0, "Hz"), long, default_value_t = 6.0, value_name = "HZ")]
    pub envelope_hz: f64,
    /// Moving-RMS window, ms (50–250).
    #[arg(value_parser = num::real(10.0, 2000.0, "ms"), long, default_value_t = 100.0, value_name = "MS")]
    pub rms_ms: f64,
    /// Onset threshold: baseline mean + K standard deviations.
    #[arg(value_parser = num::real(0.5, 20.0, ""), long, default_value_t = 3.0, value_name = "K")]
    pub k: f64,
    /// Band-pass corners, Hz: LOW,HIGH.
    #[arg(value_parser = num::corner_hz(), long, value_name = "LOW,HIGH", value_delimiter = ',', default_values_t = [20.0, 450.0])]
    pub band: Vec<f64>,
    /// Mains notch at this frequency and its harmonics in the band, Hz (50 or 60).
    #[arg(value_parser = num::mains_hz(), long, value_name = "HZ")]
    pub notch: Option<f64>,
    /// CSV: time_s,envelope_uv,rms_uv.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// JSON: bursts (on_s, off_s, peak_uv, rms_uv, mean_hz, median_hz, pct_mvc),
    /// median_hz_trend, baseline and threshold.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
}

#[derive(Serialize)]
struct Report<'a> {
    input: String,
    channel: usize,
    channel_name: String,
    duration_s: f64,
    #[serde(flatten)]
    analysis: &'a EmgAnalysis,
    /// Advice on the input, if any (a rate under 1 kHz).
    advice: Vec<String>,
}

/// A START,END pair of seconds, in order.
fn pair(v: Option<&Vec<f64>>, name: &str) -> Result<Option<(f64, f64)>, BadInput> {
    match v.map(Vec::as_slice) {
        None => Ok(None),
        Some(&[a, b]) if a < b => Ok(Some((a, b))),
        Some(_) => Err(BadInput(format!(
            "--{name}: expected START,END in seconds with START before END"
        ))),
    }
}

/// Runs the command.
///
/// # Errors
/// A bad or unreadable input, settings out of range, an unwritable output.
pub fn run(a: &EmgArgs) -> Result<()> {
    let (rec, ch) = a.src.load(&a.channel)?;
    let x = &rec.channels[ch];
    let fs = rec.fs_hz;
    let settings = EmgSettings {
        band_hz: match a.band.as_slice() {
            &[lo, hi] if lo < hi => (lo, hi),
            _ => {
                return Err(
                    BadInput("--band: expected LOW,HIGH in Hz with LOW below HIGH".into()).into(),
                );
            }
        },
        notch_hz: a.notch,
        envelope_hz: a.envelope_hz,
        rms_ms: a.rms_ms,
        k_sd: a.k,
        baseline_s: pair(a.baseline.as_ref(), "baseline")?,
        mvc_s: pair(a.mvc.as_ref(), "mvc")?,
        ..EmgSettings::default()
    };
    let an = analyse(x, fs, &settings).map_err(|e| BadInput(e.to_string()))?;
    let mut advice = Vec::new();
    if fs < 1000.0 {
        advice.push(format!(
            "{fs} Hz is under the 1 kHz advised for surface EMG: the band's upper corner is held at {:.0} Hz",
            settings.band_hz.1.min(crate::dsp::highest_corner_hz(fs))
        ));
    }
    let mut csv = String::with_capacity(x.len() * 32);
    csv.push_str("time_s,envelope_uv,rms_uv\n");
    for (i, (e, r)) in an.envelope.iter().zip(&an.rms).enumerate() {
        let _ = writeln!(csv, "{:.6},{e:.4},{r:.4}", i as f64 / fs);
    }
    std::fs::write(&a.out, csv).with_context(|| format!("cannot write {}", a.out.display()))?;
    if let Some(path) = &a.report {
        let doc = Report {
            input: a.src.input.display().to_string(),
            channel: ch,
            channel_name: rec.names.get(ch).cloned().unwrap_or_default(),
            duration_s: x.len() as f64 / fs,
            analysis: &an,
            advice: advice.clone(),
        };
        std::fs::write(path, serde_json::to_string_pretty(&doc)? + "\n")
            .with_context(|| format!("cannot write {}", path.display()))?;
    }
    for m in &advice {
        eprintln!("leadline: {m}");
    }
    let trend = an.median_hz_trend.as_ref().map_or(String::new(), |t| {
        format!(
            "; median frequency {:.1} → {:.1} Hz ({:+.1} %)",
            t.first_hz, t.last_hz, t.change_pct
        )
    });
    eprintln!(
        "{} contractions in {:.1} s (threshold {:.1} µV over a baseline at {:.1}–{:.1} s){trend}",
        an.bursts.len(),
        x.len() as f64 / fs,
        an.threshold_uv,
        an.baseline_s.0,
        an.baseline_s.1
    );
    Ok(())
}
