//! `leadline parts`: the chain realised with standard parts, as parts.json.

use std::path::PathBuf;

use clap::Args;

use super::BadInput;
use super::args::*;
use super::num;
use crate::analog::eseries::Series;
use crate::analog::gain_budget::{self, Budget};
use crate::analog::parts::{PartsOptions, realise};
use crate::analog::tolerance::Tolerances;
use anyhow::{Context, Result};
use std::fmt::Write as _;

/// Options of `leadline parts`.
#[derive(Debug, Clone, Args)]
pub struct PartsArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate of the digital chain the parts stand in for, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
    /// Resistor series: E6, E12, E24, E48, E96, E192.
    #[arg(long, default_value = "E24", value_name = "SERIES")]
    pub series: String,
    /// A capacitor value you have, F (repeatable); default E6 values 1 nF–10 µF.
    #[arg(value_parser = num::real(1e-12, 0.01, "F"), long, value_name = "F")]
    pub capacitor: Vec<f64>,
    /// In-amp target gain.
    #[arg(value_parser = num::real(1.0, 10_000.0, "V/V"), long, value_name = "G")]
    pub inamp_gain: Option<f64>,
    /// In-amp constant K of G = 1 + K/Rg, ohms, from its datasheet.
    #[arg(value_parser = num::real(1.0, 1e7, "Ω"), long, value_name = "OHMS")]
    pub inamp_k: Option<f64>,
    /// Resistor tolerance, % (for the spread).
    #[arg(value_parser = num::real(0.0, 50.0, "%"), long, default_value_t = 1.0, value_name = "PCT")]
    pub r_tol: f64,
    /// Capacitor tolerance, %.
    #[arg(value_parser = num::real(0.0, 50.0, "%"), long, default_value_t = 5.0, value_name = "PCT")]
    pub c_tol: f64,
    /// Monte Carlo draws (at least 2000).
    #[arg(value_parser = num::whole::<usize>(100, 1_000_000), long, default_value_t = 2000, value_name = "N")]
    pub draws: usize,
    /// Output: parts.json.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Also write the gain budget (JSON) for this electrode offset.
    #[arg(long, value_name = "FILE")]
    pub budget: Option<PathBuf>,
    /// Electrode offset to tolerate, ± mV.
    #[arg(value_parser = num::real(0.0, 1000.0, "mV"), long, default_value_t = 300.0, value_name = "MV")]
    pub offset_mv: f64,
    /// Input bias current of your op-amps, A (for the offset it makes in the large resistors).
    #[arg(value_parser = num::real(0.0, 1e-3, "A"), long, default_value_t = 1e-9, value_name = "A")]
    pub bias_current: f64,
    /// Also write the schematic of the whole chain (SVG).
    #[arg(long, value_name = "FILE.svg")]
    pub schematic: Option<PathBuf>,
    /// Also write a SPICE netlist (VIN drives node in, the output is node out; ideal op-amps).
    #[arg(long, value_name = "FILE.cir")]
    pub netlist: Option<PathBuf>,
    /// Also write the bill of materials (CSV).
    #[arg(long, value_name = "FILE.csv")]
    pub bom: Option<PathBuf>,
    /// Also write the response of the chain built from these parts: freq_hz,mag_db,phase_deg.
    #[arg(long, value_name = "FILE.csv")]
    pub response: Option<PathBuf>,
}

/// Runs the command.
///
/// # Errors
/// A bad series, capacitor or in-amp value (bad input); an unwritable output.
pub fn run(a: &PartsArgs) -> Result<()> {
    // The chain must be valid at this rate even though the parts are analog.
    a.chain.design(a.fs)?;
    let series = Series::parse(&a.series).ok_or_else(|| {
        BadInput(format!(
            "--series {}: use E6, E12, E24, E48, E96 or E192",
            a.series
        ))
    })?;
    let inamp = match (a.inamp_gain, a.inamp_k) {
        (Some(g), Some(k)) => Some((g, k)),
        (None, None) => None,
        _ => {
            return Err(BadInput(
                "--inamp-gain and --inamp-k go together (K from your in-amp's datasheet)".into(),
            )
            .into());
        }
    };
    let opts = PartsOptions {
        series,
        capacitors: a.capacitor.clone(),
        tolerances: Tolerances {
            resistor: a.r_tol / 100.0,
            capacitor: a.c_tol / 100.0,
            draws: a.draws.max(2000),
            seed: 1,
        },
        inamp,
        bias_current_a: a.bias_current,
    };
    let stages = realise(&a.chain.settings(), &opts).map_err(|e| BadInput(e.to_string()))?;
    write_files(a, &stages, series)?;
    std::fs::write(&a.out, serde_json::to_string_pretty(&stages)? + "\n")
        .with_context(|| format!("cannot write {}", a.out.display()))?;
    for s in &stages {
        let parts: Vec<String> = s
            .parts
            .iter()
            .map(|(k, v)| format!("{k}={}", engineering(*v, k)))
            .collect();
        match (s.design_hz, s.realised_hz) {
            (Some(d), Some(r)) => eprintln!(
                "{:<20} {d:>8.3} Hz → {r:>8.3} Hz ({:+.2} %)  {}",
                s.topology,
                s.error_pct,
                parts.join(" ")
            ),
            _ => eprintln!(
                "{:<20} gain {:.2} → {:.2}  {}",
                s.topology,
                s.design_gain.unwrap_or(0.0),
                s.realised_gain.unwrap_or(0.0),
                parts.join(" ")
            ),
        }
    }
    if let Some(path) = &a.budget {
        let r = gain_budget::compute(&Budget {
            offset_mv: a.offset_mv,
            ..Budget::default()
        });
        std::fs::write(path, serde_json::to_string_pretty(&r)? + "\n")
            .with_context(|| format!("cannot write {}", path.display()))?;
    }
    Ok(())
}

/// The schematic, netlist, BOM and realised response, as asked.
fn write_files(
    a: &PartsArgs,
    stages: &[crate::analog::parts::Stage],
    series: Series,
) -> Result<()> {
    use crate::analog::{circuit, schematic};
    let c = circuit::build(
        stages,
        series,
        circuit::Tol {
            resistor_pct: a.r_tol,
            capacitor_pct: a.c_tol,
        },
    );
    let title = format!("leadline parts: {}", a.chain.settings().describe());
    let write = |path: &std::path::Path, text: String| {
        std::fs::write(path, text).with_context(|| format!("cannot write {}", path.display()))
    };
    if let Some(p) = &a.schematic {
        write(p, schematic::svg(&schematic::draw(&c)))?;
    }
    if let Some(p) = &a.netlist {
        write(p, circuit::netlist(&c, &title))?;
    }
    if let Some(p) = &a.bom {
        write(p, circuit::bom(&c))?;
    }
    if let Some(p) = &a.response {
        let mut t = String::from("freq_hz,mag_db,phase_deg\n");
        for f in
            crate::dsp::response::log_frequencies(0.05, crate::dsp::highest_corner_hz(a.fs), 2000)
        {
            let h = circuit::response(&c, f);
            let mag = crate::numeric::db20((h.0 * h.0 + h.1 * h.1).sqrt().max(1e-300));
            let _ = writeln!(t, "{f},{mag},{}", h.1.atan2(h.0).to_degrees());
        }
        write(p, t)?;
    }
    Ok(())
}

pub use crate::analog::engineering;
