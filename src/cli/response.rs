//! `leadline response`: magnitude, phase and group delay of the chain, as CSV.

use clap::Args;

use super::BadInput;
use super::args::*;
use super::num;
use crate::dsp::response;
use anyhow::{Context, Result};
use std::fmt::Write as _;

/// Options of `leadline response`.
#[derive(Debug, Clone, Args)]
pub struct ResponseArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
    /// Number of log-spaced frequencies from 0.01 Hz to just below Nyquist.
    #[arg(
        value_parser = num::whole::<usize>(2, 100_000),
        long,
        default_value_t = 512,
        value_name = "N",
        conflicts_with = "freqs"
    )]
    pub points: usize,
    /// Explicit frequencies, Hz, comma-separated.
    #[arg(value_parser = num::corner_hz(), long, value_name = "F1,F2,..", value_delimiter = ',')]
    pub freqs: Option<Vec<f64>>,
    /// Output CSV (freq_hz,mag_db,phase_deg,group_delay_s), or - for standard output.
    #[arg(long, default_value = "-", value_name = "FILE")]
    pub out: String,
}

/// The CSV text.
///
/// # Errors
/// A chain that cannot be built, or frequencies outside 0 … Nyquist.
pub fn csv(a: &ResponseArgs) -> Result<String> {
    let sections = a.chain.design(a.fs)?;
    let nyq = a.fs / 2.0;
    let freqs = match &a.freqs {
        Some(f) => {
            if let Some(bad) = f
                .iter()
                .find(|f| !(f.is_finite() && **f >= 0.0 && **f <= nyq))
            {
                return Err(BadInput(format!("--freqs: {bad} Hz is outside 0 … {nyq} Hz")).into());
            }
            f.clone()
        }
        None => {
            if a.points < 2 {
                return Err(BadInput("--points must be at least 2".into()).into());
            }
            response::log_frequencies(0.01_f64.min(nyq / 10.0), 0.999 * nyq, a.points)
        }
    };
    let mut out = String::from("freq_hz,mag_db,phase_deg,group_delay_s\n");
    for p in response::evaluate(&sections, &freqs, a.fs) {
        let _ = writeln!(
            out,
            "{},{},{},{}",
            p.freq_hz, p.mag_db, p.phase_deg, p.group_delay_s
        );
    }
    Ok(out)
}

/// Runs the command.
///
/// # Errors
/// As [`csv`], or the output cannot be written.
pub fn run(a: &ResponseArgs) -> Result<()> {
    let text = csv(a)?;
    if a.out == "-" {
        print!("{text}");
    } else {
        std::fs::write(&a.out, text).with_context(|| format!("cannot write {}", a.out))?;
    }
    Ok(())
}
