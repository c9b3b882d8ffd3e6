//! `leadline leads`: the standard leads of a recording of leads or electrode potentials, written
//! as EDF+/BDF+ (labels `ECG I`, `ECG II`, … as the EDF+ specification's standard texts have
//! them) or CSV, with a report: the leads written, the frontal QRS axis and the beats on lead II.

use std::path::PathBuf;

use clap::Args;
use serde::Serialize;

use super::BadInput;
use super::args::*;
use crate::leads::{FrontalAxis, LEAD_II, LeadSet, TWELVE};
use anyhow::{Context, Result};

/// Options of `leadline leads`.
#[derive(Debug, Clone, Args)]
pub struct LeadsArgs {
    #[command(flatten)]
    pub src: InputArgs,
    #[command(flatten)]
    pub leads: LeadArgs,
    /// The leads written: .edf (EDF+), .bdf (BDF+) or .csv (in --out-units).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Unit of a CSV output.
    #[arg(long, value_enum, default_value_t = FileUnitArg::Millivolts)]
    pub out_units: FileUnitArg,
    /// The report (JSON): leads, frontal_axis_deg with its method and words, the beats on II.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
}

/// What `--report` holds.
#[derive(Debug, Serialize)]
struct Report {
    input: String,
    out: String,
    /// The set the channels were read as.
    lead_set: &'static str,
    leads: Vec<String>,
    fs_hz: f64,
    seconds: f64,
    frontal_axis_deg: Option<f64>,
    axis: Option<FrontalAxis>,
    beats_lead: &'static str,
    /// R peaks found on lead II, samples.
    beats: Vec<u64>,
}

/// Runs the command.
///
/// # Errors
/// A file that cannot be read or is not leads (bad input), an output that cannot be written.
pub fn run(a: &LeadsArgs) -> Result<()> {
    let (rec, _, set) = a.leads.load_leads(&a.src, "0")?;
    let set: LeadSet = set.ok_or_else(|| {
            BadInput(format!(
                "{}: the channels ({}) are not lead or electrode names: give --lead-set limb2|leads8|electrodes9",
                a.src.input.display(),
                rec.names.join(", ")
            ))
        })?;
    let fs = rec.fs_hz;
    let beats = beats_on_ii(&rec.channels[LEAD_II], fs)?;
    let axis = axis(&rec.channels, &beats, fs);
    let mut out = rec.clone();
    if matches!(crate::store::extension_of(&a.out).as_str(), "edf" | "bdf") {
        // The EDF+ specification's standard texts for ECG leads.
        out.names = rec.names.iter().map(|n| format!("ECG {n}")).collect();
    }
    crate::store::write(&a.out, &out, a.out_units.unit())
        .with_context(|| format!("cannot write {}", a.out.display()))?;
    let report = Report {
        input: a.src.input.display().to_string(),
        out: a.out.display().to_string(),
        lead_set: set.name(),
        leads: rec.names.clone(),
        fs_hz: fs,
        seconds: rec.len() as f64 / fs,
        frontal_axis_deg: axis.as_ref().map(|x| x.degrees),
        axis: axis.clone(),
        beats_lead: TWELVE[LEAD_II],
        beats: beats.iter().map(|&b| b as u64).collect(),
    };
    if let Some(p) = &a.report {
        std::fs::write(p, serde_json::to_string_pretty(&report)? + "\n")
            .with_context(|| format!("cannot write {}", p.display()))?;
    }
    eprintln!(
        "wrote {} leads ({}) to {}; {} beats on II; frontal axis {}",
        rec.names.len(),
        rec.names.join(" "),
        a.out.display(),
        beats.len(),
        axis.map_or("not found".to_string(), |x| format!(
            "{:.0}° ({})",
            x.degrees, x.words
        ))
    );
    Ok(())
}

/// The beats the detector finds on lead II.
fn beats_on_ii(ii: &[f64], fs: f64) -> Result<Vec<usize>> {
    let mut d = crate::analysis::beats::Detector::new(fs).map_err(|e| BadInput(e.to_string()))?;
    let mut found = Vec::new();
    for chunk in ii.chunks(1024) {
        d.process(chunk, &mut found);
    }
    Ok(found.iter().map(|b| b.sample as usize).collect())
}

/// The frontal axis from leads I and aVF, after the monitoring chain run forward and backward
/// (no delay; baseline wander and mains out of the areas).
fn axis(leads: &[Vec<f64>], beats: &[usize], fs: f64) -> Option<FrontalAxis> {
    let design = crate::dsp::ChainSettings::default().design(fs).ok()?;
    let clean = |x: &[f64]| crate::dsp::chain::zero_phase(&design, x).ok();
    let (i, avf) = (clean(&leads[0])?, clean(&leads[5])?);
    crate::leads::frontal_axis(&i, &avf, beats, fs)
}
