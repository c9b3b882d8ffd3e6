//! `leadline sos`: the chain's sections as JSON, rows [b0, b1, b2, a0, a1, a2] with a0 = 1
//! (the layout of scipy.signal's `sos` arrays, so `sosfilt(json.load(f), x)` works as is).

use clap::Args;

use super::args::*;
use super::num;
use anyhow::Result;

/// Options of `leadline sos`.
#[derive(Debug, Clone, Args)]
pub struct SosArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
}

/// The JSON text for the chain at the given rate.
///
/// # Errors
/// A chain that cannot be built (bad input).
pub fn json(a: &SosArgs) -> Result<String> {
    let rows: Vec<[f64; 6]> = a
        .chain
        .design(a.fs)?
        .iter()
        .map(|s| [s.b0, s.b1, s.b2, 1.0, s.a1, s.a2])
        .collect();
    Ok(serde_json::to_string(&rows)?)
}

/// Runs the command.
///
/// # Errors
/// A chain that cannot be built.
pub fn run(a: &SosArgs) -> Result<()> {
    println!("{}", json(a)?);
    Ok(())
}
