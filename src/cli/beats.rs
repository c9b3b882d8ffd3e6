//! `leadline beats`: QRS detection on a recording; beats as CSV, a summary as JSON.

use std::fmt::Write as _;

use anyhow::{Context, Result};
use serde::Serialize;

use super::{BadInput, BeatsArgs};
use crate::analysis::beats::Detector;
use crate::analysis::rate::{Hrv, RateMeter, hrv};

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
    let (rec, ch) = a.src.load(&a.channel)?;
    let x = &rec.channels[ch];
    let mut det = Detector::new(rec.fs_hz).map_err(|e| BadInput(e.to_string()))?;
    let mut beats = Vec::new();
    det.process(x, &mut beats);
    let mut csv = String::from("sample,time_s,r_uv,search_back\n");
    let mut meter = RateMeter::new(rec.fs_hz);
    for b in &beats {
        let _ = writeln!(
            csv,
            "{},{:.6},{:.3},{}",
            b.sample,
            b.sample as f64 / rec.fs_hz,
            b.r_value,
            u8::from(b.search_back)
        );
        meter.on_beat(b.sample);
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
