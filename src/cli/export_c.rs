//! `leadline export-c`: the chain as a C99 header for firmware.

use anyhow::{Context, Result};

use super::{BadInput, ExportCArgs};
use crate::export::c_header::{self, HeaderInfo};

/// Runs the command.
///
/// # Errors
/// A chain that cannot be built or exported in the format (bad input), an unwritable file.
pub fn run(a: &ExportCArgs) -> Result<()> {
    let sections = a.chain.design(a.fs)?;
    let info = HeaderInfo {
        fs_hz: a.fs,
        chain: a.chain.settings().describe(),
        prefix: a.prefix.clone(),
        format: a.format.format(),
    };
    let text = c_header::header(&sections, &info).map_err(|e| BadInput(e.to_string()))?;
    std::fs::write(&a.out, text).with_context(|| format!("cannot write {}", a.out.display()))?;
    eprintln!(
        "wrote {} ({} sections, {} at {} Hz)",
        a.out.display(),
        sections.len(),
        info.format.name(),
        a.fs
    );
    Ok(())
}
