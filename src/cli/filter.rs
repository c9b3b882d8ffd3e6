//! `leadline filter`: a recorded file through the chain, causal or zero-phase, written in the
//! format the output's extension names, on the input's own time base. The causal pass starts in
//! the steady state of each channel's first sample (no start-up transient from a DC offset).

use anyhow::Result;

use super::{BadInput, FilterArgs};
use crate::dsp::chain;
use crate::store::{self, StoreError};


/// Runs the command. Returns the number of frames written.
///
/// # Errors
/// An unreadable or malformed input (bad input), a chain that cannot be built, a failed write.
pub fn run(a: &FilterArgs) -> Result<usize> {
    let (mut rec, _) = a.src.load("0")?;
    let setup = a.src.setup()?;
    let no_stage = a.chain.highpass.is_none() && a.chain.notch.is_none() && a.chain.lowpass.is_none();
    let settings = match (&setup, no_stage) {
        (Some(s), true) => s.chain,
        _ => a.chain.settings(),
    };
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
