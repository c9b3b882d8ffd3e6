//! `leadline measure`: a built front end measured from a recording (response, stepped sine,
//! noise, CMRR), with reports, CSVs and a PNG over the design.

use std::path::PathBuf;

use clap::{Args, Subcommand};

use super::BadInput;
use super::args::*;
use super::num;
use crate::measure::{MeasureError, cmrr, noise, sine, transfer};
use anyhow::{Context, Result};
use std::fmt::Write as _;

/// Options of `leadline measure`.
#[derive(Debug, Clone, Args)]
pub struct MeasureArgs {
    #[command(subcommand)]
    pub what: MeasureWhat,
}

/// What `leadline measure` measures.
#[derive(Debug, Clone, Subcommand)]
pub enum MeasureWhat {
    /// Transfer function from a stimulus channel to an output channel (H1, coherence).
    Response(MeasureResponseArgs),
    /// A stepped sine on one channel: gain per steady step.
    Steps(MeasureStepsArgs),
    /// Input-referred noise with the inputs shorted: RMS, peak-to-peak, density, 1/f corner.
    Noise(MeasureNoiseArgs),
    /// Common-mode rejection from a common-mode sine of known amplitude.
    Cmrr(MeasureCmrrArgs),
}

/// Options of `measure response`.
#[derive(Debug, Clone, Args)]
pub struct MeasureResponseArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// The stimulus channel (generator or DAC), index or name.
    #[arg(long, value_name = "K|NAME")]
    pub stimulus: String,
    /// The front end's output channel, index or name.
    #[arg(long, value_name = "K|NAME")]
    pub output: String,
    /// Welch segment length (power of two, 256–16384); default about 8 s.
    #[arg(value_parser = num::whole::<usize>(256, 16_384), long, value_name = "N")]
    pub segment: Option<usize>,
    /// CSV: freq_hz,mag_db,phase_deg,coherence.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// JSON: corners_hz, passband_gain_db, coherent_range_hz.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// PNG of the measured response over the design (the chain flags).
    #[arg(long, value_name = "FILE")]
    pub png: Option<PathBuf>,
    /// The design to draw under the measurement.
    #[command(flatten)]
    pub chain: ChainArgs,
}

/// Options of `measure steps`.
#[derive(Debug, Clone, Args)]
pub struct MeasureStepsArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// The generator's amplitude at the electrodes, µV peak.
    #[arg(value_parser = num::real(0.1, 1e6, "µV"), long, value_name = "UV")]
    pub amplitude_uv: f64,
    /// Channel, index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// CSV: freq_hz,gain_db,amplitude_uv,start_s,end_s.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// PNG of the gains over the design (the chain flags).
    #[arg(long, value_name = "FILE")]
    pub png: Option<PathBuf>,
    #[command(flatten)]
    pub chain: ChainArgs,
}

/// Options of `measure noise`.
#[derive(Debug, Clone, Args)]
pub struct MeasureNoiseArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Band, Hz (zero-phase band-pass).
    #[arg(value_parser = num::corner_hz(), long, value_name = "LO,HI", value_delimiter = ',', default_values_t = [0.05, 150.0])]
    pub band: Vec<f64>,
    /// Channel, index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// Limit, µV peak-to-peak (default 30: recalled from memory of the ECG standards).
    #[arg(value_parser = num::real(0.1, 1e6, "µV"), long, default_value_t = 30.0, value_name = "UV")]
    pub limit_uv: f64,
    /// JSON: rms_uv, p2p_uv, density_uv_per_rthz, corner_hz, pass.
    #[arg(long, value_name = "FILE")]
    pub report: PathBuf,
}

/// Options of `measure cmrr`.
#[derive(Debug, Clone, Args)]
pub struct MeasureCmrrArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// The common-mode amplitude applied, µV RMS (1 V RMS = 1000000).
    #[arg(value_parser = num::real(1.0, 1e7, "µV"), long, value_name = "UV")]
    pub cm_uv: f64,
    /// Its frequency, Hz (default: the mains, 50).
    #[arg(value_parser = num::corner_hz(), long, default_value_t = 50.0, value_name = "HZ")]
    pub cm_hz: f64,
    /// The generator was stepped through frequencies by hand: one CMRR per steady step (the
    /// report gains `steps`).
    #[arg(long)]
    pub stepped: bool,
    /// Channel, index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// JSON: cmrr_db, diff_uv, uncertainty_db.
    #[arg(long, value_name = "FILE")]
    pub report: PathBuf,
}

fn bad(e: MeasureError) -> anyhow::Error {
    BadInput(e.to_string()).into()
}

fn write(path: &std::path::Path, text: String) -> Result<()> {
    std::fs::write(path, text).with_context(|| format!("cannot write {}", path.display()))
}

/// The design's gain at `f`, dB (None when no stage flag was given).
fn design_db(chain: &super::ChainArgs, fs: f64) -> Option<crate::dsp::Design> {
    chain
        .any_stage()
        .then(|| chain.settings().design(fs).ok())
        .flatten()
}

/// The design's highest gain, dB (over a log grid from 0.01 Hz to 0.45·fs).
fn design_peak_db(d: &[crate::dsp::Section], fs: f64) -> f64 {
    crate::dsp::response::log_frequencies(0.01, crate::dsp::highest_corner_hz(fs), 400)
        .into_iter()
        .map(|f| crate::numeric::db20(crate::dsp::response::magnitude(d, f, fs).max(1e-12)))
        .fold(f64::MIN, f64::max)
}

/// Runs the command.
///
/// # Errors
/// Bad input (a flat stimulus, low coherence, too short, no steps) or an unwritable output.
pub fn run(a: &MeasureArgs) -> Result<()> {
    match &a.what {
        MeasureWhat::Response(r) => response(r),
        MeasureWhat::Steps(r) => steps(r),
        MeasureWhat::Noise(r) => noise_floor(r),
        MeasureWhat::Cmrr(r) => cmrr_of(r),
    }
}

/// The transfer function from the stimulus to the output: CSV, report and PNG.
fn response(r: &MeasureResponseArgs) -> Result<()> {
    let (rec, x) = r.src.load(&r.stimulus)?;
    let k = rec.find_signal(&r.output).map_err(BadInput)?;
    let y = rec.signal_list()[k].channel.ok_or_else(|| {
        BadInput(format!(
            "--output {}: at another rate than the stimulus",
            r.output
        ))
    })?;
    let n = r.segment.unwrap_or_else(|| {
        crate::dsp::spectrum::segment_for(rec.fs_hz, 8.0)
            .min(rec.len().next_power_of_two() / 2)
            .clamp(256, 16384)
    });
    let t = transfer::estimate(&rec.channels[x], &rec.channels[y], rec.fs_hz, n).map_err(bad)?;
    let mut csv = String::from("freq_hz,mag_db,phase_deg,coherence\n");
    for p in &t.points {
        let _ = writeln!(
            csv,
            "{},{},{},{}",
            p.freq_hz, p.mag_db, p.phase_deg, p.coherence
        );
    }
    write(&r.out, csv)?;
    if let Some(path) = &r.report {
        let doc = serde_json::json!({
            "input": r.src.input.display().to_string(),
            "fs_hz": t.fs_hz,
            "segment": t.segment,
            "segments": t.segments,
            "corners_hz": t.corners_hz,
            "passband_gain_db": t.passband_gain_db,
            "coherent_range_hz": [t.coherent_range_hz.0, t.coherent_range_hz.1],
        });
        write(path, serde_json::to_string_pretty(&doc)? + "\n")?;
    }
    if let Some(png) = &r.png {
        let measured: Vec<(f64, f64, bool)> = t
            .points
            .iter()
            .map(|p| (p.freq_hz, p.mag_db, p.coherence >= transfer::MIN_COHERENCE))
            .collect();
        let design = design_db(&r.chain, rec.fs_hz);
        let offset = design
            .as_deref()
            .map_or(0.0, |d| t.passband_gain_db - design_peak_db(d, rec.fs_hz));
        crate::export::plot_png::response_png(
            png,
            &measured,
            design.as_deref().map(|d| (d, offset)),
            rec.fs_hz,
            &format!(
                "{}: measured response (H1, Welch {n})",
                r.src.input.display()
            ),
        )?;
    }
    eprintln!(
        "pass band {:.2} dB, corners {:?} Hz, coherent {:.2}–{:.1} Hz",
        t.passband_gain_db, t.corners_hz, t.coherent_range_hz.0, t.coherent_range_hz.1
    );
    Ok(())
}

/// The gain of every steady step of a stepped sine: CSV and PNG.
fn steps(r: &MeasureStepsArgs) -> Result<()> {
    let (rec, ch) = r.src.load(&r.channel)?;
    let steps = sine::steps(&rec.channels[ch], rec.fs_hz, 2.0).map_err(bad)?;
    let mut csv = String::from("freq_hz,gain_db,amplitude_uv,start_s,end_s\n");
    let mut pts = Vec::new();
    for s in &steps {
        let g = crate::numeric::db20(s.amplitude_uv / r.amplitude_uv);
        pts.push((s.freq_hz, g, true));
        let _ = writeln!(
            csv,
            "{},{},{},{},{}",
            s.freq_hz, g, s.amplitude_uv, s.start_s, s.end_s
        );
    }
    write(&r.out, csv)?;
    if let Some(png) = &r.png {
        let design = design_db(&r.chain, rec.fs_hz);
        // A stepped sine's gains are absolute: the design is drawn as it is.
        crate::export::plot_png::response_png(
            png,
            &pts,
            design.as_deref().map(|d| (d, 0.0)),
            rec.fs_hz,
            &format!(
                "{}: stepped sine, {} steps",
                r.src.input.display(),
                steps.len()
            ),
        )?;
    }
    eprintln!("{} steady steps", steps.len());
    Ok(())
}

/// Input-referred noise with the inputs shorted: the report.
fn noise_floor(r: &MeasureNoiseArgs) -> Result<()> {
    let (rec, ch) = r.src.load(&r.channel)?;
    let band = match r.band.as_slice() {
        [lo, hi] if lo < hi => (*lo, *hi),
        _ => return Err(BadInput("--band LO,HI with LO < HI".into()).into()),
    };
    let n = noise::measure(&rec.channels[ch], rec.fs_hz, band, r.limit_uv).map_err(bad)?;
    write(&r.report, serde_json::to_string_pretty(&n)? + "\n")?;
    eprintln!(
        "noise {:.2} µV rms, {:.1} µV p-p (limit {} µV p-p: {}), floor {:.3} µV/√Hz, 1/f corner {}",
        n.rms_uv,
        n.p2p_uv,
        n.limit_p2p_uv,
        if n.pass { "pass" } else { "FAIL" },
        n.floor_uv_per_rthz,
        n.corner_hz
            .map_or("not seen".into(), |f| format!("{f:.2} Hz"))
    );
    Ok(())
}

/// CMRR from a common-mode sine: the report.
fn cmrr_of(r: &MeasureCmrrArgs) -> Result<()> {
    let (rec, ch) = r.src.load(&r.channel)?;
    if r.stepped {
        let list = cmrr::stepped(&rec.channels[ch], rec.fs_hz, r.cm_uv).map_err(bad)?;
        for c in &list {
            eprintln!(
                "{:8.2} Hz: CMRR {:.1} ± {:.1} dB",
                c.cm_hz, c.cmrr_db, c.uncertainty_db
            );
        }
        let doc = serde_json::json!({ "steps": list });
        write(&r.report, serde_json::to_string_pretty(&doc)? + "\n")?;
        return Ok(());
    }
    let c = cmrr::measure(&rec.channels[ch], rec.fs_hz, r.cm_uv, r.cm_hz).map_err(bad)?;
    write(&r.report, serde_json::to_string_pretty(&c)? + "\n")?;
    eprintln!(
        "CMRR {:.1} ± {:.1} dB at {:.2} Hz ({:.3} µV rms leak)",
        c.cmrr_db, c.uncertainty_db, c.cm_hz, c.diff_uv
    );
    Ok(())
}
