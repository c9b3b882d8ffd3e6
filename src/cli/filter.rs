//! `leadline filter`: a recorded file through the chain, causal or zero-phase, written in the
//! format the output's extension names, on the input's own time base. The causal pass starts in
//! the steady state of each channel's first sample (no start-up transient from a DC offset).

use anyhow::Result;

use super::{BadInput, FilterArgs};
use crate::dsp::chain;
use crate::store::{self, StoreError};

fn bad(e: StoreError) -> anyhow::Error {
    match e {
        StoreError::Io { .. } => anyhow::Error::new(e),
        other => BadInput(other.to_string()).into(),
    }
}

/// Runs the command. Returns the number of frames written.
///
/// # Errors
/// An unreadable or malformed input (bad input), a chain that cannot be built, a failed write.
pub fn run(a: &FilterArgs) -> Result<usize> {
    let opts = a.src.read_options();
    let mut rec = store::read(&a.src.input, &opts).map_err(bad)?;
    let sections = a.chain.design(rec.fs_hz)?;
    for ch in &mut rec.channels {
        if a.zero_phase {
            *ch = chain::zero_phase(&sections, ch)
                .map_err(|e| BadInput(format!("{}: {e}", a.src.input.display())))?;
        } else {
            chain::filter_settled(&sections, ch);
        }
    }
    store::write(&a.out, &rec, a.src.units.unit()).map_err(|e| match e {
        StoreError::UnknownType { .. } => BadInput(e.to_string()).into(),
        other => anyhow::Error::new(other),
    })?;
    eprintln!(
        "filtered {} frames × {} channels at {:.6} Hz into {}",
        rec.len(),
        rec.channels.len(),
        rec.fs_hz,
        a.out.display()
    );
    Ok(rec.len())
}
