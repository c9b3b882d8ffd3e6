//! `leadline conform`: the ECG standards' low- and high-frequency checks of a chain (impulse
//! test, gain at 0.67 Hz, upper corner, ST shift) as a JSON report, each with pass/fail.

use std::path::PathBuf;

use clap::Args;

use super::BadInput;
use super::args::*;
use super::num;
use crate::conform::{self, Mode};
use anyhow::{Context, Result};

/// Options of `leadline conform`.
#[derive(Debug, Clone, Args)]
pub struct ConformArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate the chain runs at, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
    /// Judge for diagnostic recording (0.67 Hz at −0.9 dB, 150 Hz) instead of monitoring
    /// (−3 dB, 40 Hz).
    #[arg(long)]
    pub diagnostic: bool,
    /// The chain runs forward and backward (recordings, `filter --zero-phase`).
    #[arg(long)]
    pub zero_phase: bool,
    /// Take the chain from this setup (TOML) when no stage flag is given.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// The report: impulse_undershoot_uv, impulse_slope_uv_per_s, gain_db_at_0_67_hz,
    /// upper_corner_hz, st_shift_uv, pass {item: bool}, advice.
    #[arg(long, value_name = "FILE")]
    pub report: PathBuf,
}

/// Runs the command; exits 0 whether or not the chain passes (the report says).
///
/// # Errors
/// A chain that cannot be built or a setup that cannot be read (bad input), an unwritable report.
pub fn run(a: &ConformArgs) -> Result<()> {
    a.chain.check_notch(false)?;
    let setup = super::load_setup(a.config.as_deref())?;
    let settings = match (&setup, a.chain.any_stage()) {
        (Some(s), false) => s.chain,
        _ => a.chain.settings(),
    };
    let mode = if a.diagnostic {
        Mode::Diagnostic
    } else {
        Mode::Monitoring
    };
    let bad = |e: crate::dsp::DesignError| BadInput(e.to_string());
    let design = settings.design(a.fs).map_err(bad)?;
    let report = conform::check(&design, mode, a.zero_phase).map_err(bad)?;
    std::fs::write(&a.report, serde_json::to_string_pretty(&report)? + "\n")
        .with_context(|| format!("cannot write {}", a.report.display()))?;
    let mark = |ok: bool| if ok { "pass" } else { "FAIL" };
    eprintln!(
        "{} at {} Hz ({:?}{})",
        report.chain,
        a.fs,
        mode,
        if a.zero_phase { ", zero phase" } else { "" }
    );
    eprintln!(
        "  impulse undershoot {:.1} µV (≤ 100): {}",
        report.impulse_undershoot_uv,
        mark(report.pass.impulse_undershoot)
    );
    eprintln!(
        "  impulse recovery slope {:.1} µV/s (≤ 300): {}",
        report.impulse_slope_uv_per_s,
        mark(report.pass.impulse_slope)
    );
    eprintln!(
        "  gain at 0.67 Hz {:.2} dB (≥ {} dB): {}",
        report.gain_db_at_0_67_hz,
        mode.min_gain_db(),
        mark(report.pass.gain_at_0_67_hz)
    );
    eprintln!(
        "  upper corner {} (≥ {} Hz): {}",
        report
            .upper_corner_hz
            .map_or("none below Nyquist".to_string(), |f| format!("{f:.1} Hz")),
        mode.upper_hz(),
        mark(report.pass.upper_corner)
    );
    eprintln!(
        "  ST shift {:.1} µV (within ±100): {}",
        report.st_shift_uv,
        mark(report.pass.st_shift)
    );
    for line in &report.advice {
        eprintln!("  advice: {line}");
    }
    Ok(())
}
