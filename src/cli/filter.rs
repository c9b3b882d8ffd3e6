//! `leadline filter`: a recorded file through the chain, causal or zero-phase, written in the
//! format the output's extension names, on the input's own time base. The causal pass starts in
//! the steady state of each channel's first sample (no start-up transient from a DC offset).

use std::path::PathBuf;

use clap::Args;

use super::BadInput;
use super::args::*;
use crate::dsp::chain;
use crate::store::{self, StoreError};
use anyhow::Result;

/// Options of `leadline filter`.
#[derive(Debug, Clone, Args)]
pub struct FilterArgs {
    #[command(flatten)]
    pub src: InputArgs,
    #[command(flatten)]
    pub leads: LeadArgs,
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Output file; its extension chooses the format (.csv, .edf, .bdf, .f32, .f64). With no
    /// filter flags the data pass unchanged, so this converts between formats.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Filter forward and backward: no phase shift, |H|² magnitude (recorded data only).
    #[arg(long)]
    pub zero_phase: bool,
    /// Also plot the first channel before and after the chain to this PNG.
    #[arg(long, value_name = "PNG")]
    pub png: Option<PathBuf>,
}

/// The notch `--notch auto` chooses: the mains measured in the first channel's spectrum (the
/// region, the frequency within ±1 Hz of it, the strong harmonics), printed on stderr. With no
/// mains in the input the notch is left out.
///
/// # Errors
/// A recording too short or too slow for a mains measurement.
fn auto_notch(rec: &store::Recording, notch: crate::dsp::Notch) -> Result<crate::dsp::Notch> {
    use crate::analysis::mains;
    use crate::dsp::spectrum::{Welch, segment_for};
    let x = rec.channels.first().map(Vec::as_slice).unwrap_or_default();
    let segment = segment_for(rec.fs_hz, 4.0)
        .min(x.len().next_power_of_two() / 2)
        .max(256);
    let psd = Welch::new(segment)
        .and_then(|mut w| w.compute(x, rec.fs_hz))
        .map_err(|e| BadInput(format!("--notch auto: {e}")))?;
    let report =
        mains::analyse(x, rec.fs_hz, &psd).map_err(|e| BadInput(format!("--notch auto: {e}")))?;
    match report.notch_hz() {
        Some((hz, harmonics)) => {
            eprintln!(
                "--notch auto: mains measured at {:.2} Hz ({:.1} µV rms, {} strong harmonic(s)) → notch {:.2} Hz{}",
                report.mains_hz,
                report.harmonics[0].rms_uv,
                harmonics,
                hz,
                if harmonics > 0 {
                    format!(" and harmonics 2–{}", harmonics + 1)
                } else {
                    String::new()
                }
            );
            Ok(crate::dsp::Notch {
                mains_hz: hz,
                harmonics,
                ..notch
            })
        }
        None => {
            eprintln!(
                "--notch auto: no mains line stands out in the input (largest near {:.0} Hz: {:.2} µV rms); no notch",
                report.nominal_hz, report.harmonics[0].rms_uv
            );
            Ok(crate::dsp::Notch {
                enabled: false,
                ..notch
            })
        }
    }
}

/// Runs the command. Returns the number of frames written.
///
/// # Errors
/// An unreadable or malformed input (bad input), a chain that cannot be built, a failed write.
pub fn run(a: &FilterArgs) -> Result<usize> {
    let (mut rec, _) = a.leads.load(&a.src, "0")?;
    let setup = a.src.setup()?;
    a.chain.check_notch(true)?;
    let mut settings = match (&setup, a.chain.any_stage()) {
        (Some(s), false) => s.chain,
        _ => a.chain.settings(),
    };
    if settings.notch.enabled && settings.notch.auto {
        settings.notch = auto_notch(&rec, settings.notch)?;
    }
    let sections = settings
        .design(rec.fs_hz)
        .map_err(|e| BadInput(e.to_string()))?;
    let before = a.png.as_ref().and_then(|_| rec.channels.first().cloned());
    for ch in &mut rec.channels {
        if a.zero_phase {
            *ch = chain::zero_phase(&sections, ch)
                .map_err(|e| BadInput(format!("{}: {e}", a.src.input.display())))?;
        } else {
            chain::filter_settled(&sections, ch);
        }
    }
    store::write(&a.out, &rec, a.src.units.output_unit()).map_err(|e| match e {
        StoreError::UnknownType { .. } => BadInput(e.to_string()).into(),
        other => anyhow::Error::new(other),
    })?;
    if let (Some(png), Some(raw)) = (&a.png, before) {
        use crate::export::plot_png::{TraceLine, columns_of, trace_png};
        let n = 1400;
        let (c_raw, c_out) = (
            columns_of(&raw, rec.fs_hz, n),
            columns_of(&rec.channels[0], rec.fs_hz, n),
        );
        let markers: Vec<(f64, String)> = rec
            .events
            .iter()
            .map(|e| (e.onset_s, e.text.clone()))
            .collect();
        let title = format!(
            "{}: {} — chain {}",
            a.src.input.display(),
            rec.names.first().map_or("ch1", String::as_str),
            settings.describe()
        );
        trace_png(
            png,
            &[
                TraceLine {
                    label: "before the chain",
                    rgb: (150, 150, 150),
                    columns: &c_raw,
                },
                TraceLine {
                    label: "after the chain",
                    rgb: (0, 110, 160),
                    columns: &c_out,
                },
            ],
            ("mV", 1e3),
            &markers,
            &title,
        )?;
        eprintln!("plot saved to {}", png.display());
    }
    eprintln!(
        "filtered {} frames × {} channels at {:.6} Hz into {}",
        rec.len(),
        rec.channels.len(),
        rec.fs_hz,
        a.out.display()
    );
    Ok(rec.len())
}
