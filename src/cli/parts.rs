//! `leadline parts`: the chain realised with standard parts, as parts.json.

use std::fmt::Write as _;

use anyhow::{Context, Result};

use super::{BadInput, PartsArgs};
use crate::analog::eseries::Series;
use crate::analog::gain_budget::{self, Budget};
use crate::analog::parts::{PartsOptions, realise};
use crate::analog::tolerance::Tolerances;

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

/// 27000 → "27k", 1e-7 → "100n".
pub fn engineering(v: f64, key: &str) -> String {
    if key == "k" {
        return format!("{v:.4}");
    }
    let unit = if key.starts_with('C') { "F" } else { "Ω" };
    for (scale, prefix) in [
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
    ] {
        if v >= scale * 0.999 {
            let x = v / scale;
            let s = format!("{x:.3}");
            let s = s.trim_end_matches('0').trim_end_matches('.');
            return format!("{s}{prefix}{unit}");
        }
    }
    format!("{v:e}{unit}")
}
