//! `leadline measure`: a built front end measured from a recording (response, stepped sine,
//! noise, CMRR), with reports, CSVs and a PNG over the design.

use std::fmt::Write as _;

use anyhow::{Context, Result};

use super::{
    BadInput, MeasureArgs, MeasureCmrrArgs, MeasureNoiseArgs, MeasureResponseArgs,
    MeasureStepsArgs, MeasureWhat,
};
use crate::measure::{MeasureError, cmrr, noise, sine, transfer};

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
