//! `leadline export-c`: the chain as a C99 header for firmware.

use std::path::PathBuf;

use clap::{Args, ValueEnum};

use super::BadInput;
use super::args::*;
use super::num;
use crate::export::c_header::{self, HeaderInfo};
use anyhow::{Context, Result};

/// Options of `leadline export-c`.
#[derive(Debug, Clone, Args)]
pub struct ExportCArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate the firmware runs the filter at, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
    /// Sample format: f32 (float), q15 (int16_t), q31 (int32_t).
    #[arg(long, value_enum, default_value_t = CFormatArg::F32)]
    pub format: CFormatArg,
    /// Output header file.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Prefix of every C name (type, functions, macros).
    #[arg(long, default_value = "leadline", value_name = "NAME")]
    pub prefix: String,
}

/// Sample format of an exported C filter.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CFormatArg {
    F32,
    Q15,
    Q31,
}

impl CFormatArg {
    /// The exporter's format.
    pub fn format(self) -> crate::export::c_header::CFormat {
        use crate::export::c_header::CFormat;
        match self {
            CFormatArg::F32 => CFormat::F32,
            CFormatArg::Q15 => CFormat::Q15,
            CFormatArg::Q31 => CFormat::Q31,
        }
    }
}

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
        canceller: a.chain.settings().cancel.enabled,
    };
    let text = c_header::header(&sections, &info).map_err(|e| BadInput(e.to_string()))?;
    std::fs::write(&a.out, text).with_context(|| format!("cannot write {}", a.out.display()))?;
    if a.chain.cancel.mains_cancel {
        eprintln!(
            "note: the adaptive mains canceller is not in the header (it runs in leadline only); the header says so"
        );
    }
    eprintln!(
        "wrote {} ({} sections, {} at {} Hz)",
        a.out.display(),
        sections.len(),
        info.format.name(),
        a.fs
    );
    Ok(())
}
