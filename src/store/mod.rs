//! Files: reading recordings for replay and the offline commands, writing results.
//!
//! - [`csv`]: our CSV (`time_s`, one column per channel) and generic oscilloscope-style CSVs.
//! - [`raw`]: headerless little-endian f32/f64, frame-major.
//! - [`edf`]: EDF+ (16-bit) and BDF+ (24-bit), with annotations.
//! - [`wfdb`]: PhysioNet WFDB records (`.hea` + `.dat`, formats 212 and 16).
//!
//! A [`Recording`] holds input-referred µV per channel, whatever the file's unit.

pub mod csv;
pub mod edf;
pub mod raw;
pub mod sink;
pub mod wfdb;

pub use sink::{Finished, Sink};

use std::path::Path;

/// Unit of values in a file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileUnit {
    Volts,
    Millivolts,
    Microvolts,
}

impl FileUnit {
    /// µV per file unit.
    pub fn to_uv(self) -> f64 {
        match self {
            FileUnit::Volts => 1e6,
            FileUnit::Millivolts => 1e3,
            FileUnit::Microvolts => 1.0,
        }
    }

    /// The unit's name in headers and messages.
    pub fn name(self) -> &'static str {
        match self {
            FileUnit::Volts => "V",
            FileUnit::Millivolts => "mV",
            FileUnit::Microvolts => "uV",
        }
    }
}

/// Why a file could not be read or written. Messages name the file and, where known, the line.
#[derive(Debug, thiserror::Error)]
pub enum StoreError {
    /// The OS refused (missing file, permissions, full disk).
    #[error("{path}: {source}")]
    Io {
        path: String,
        #[source]
        source: std::io::Error,
    },
    /// The content is not what the format promises.
    #[error("{path}: {reason}")]
    Malformed { path: String, reason: String },
    /// The sample rate is neither in the file nor given.
    #[error("{path}: no sample rate: the file has no time column or fs= line; give --fs HZ")]
    NoRate { path: String },
    /// The extension names no format we read or write.
    #[error(
        "{path}: unknown file type (expected .csv, .txt, .edf, .bdf, .f32, .f64 or a WFDB .hea)"
    )]
    UnknownType { path: String },
}

impl StoreError {
    pub(crate) fn io(path: &Path, source: std::io::Error) -> Self {
        StoreError::Io {
            path: path.display().to_string(),
            source,
        }
    }

    pub(crate) fn malformed(path: &Path, reason: impl Into<String>) -> Self {
        StoreError::Malformed {
            path: path.display().to_string(),
            reason: reason.into(),
        }
    }
}

/// A recording in memory: channels of input-referred µV at one rate.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Recording {
    /// Sample rate, Hz.
    pub fs_hz: f64,
    /// Channel names (from the header, or ch1, ch2, …).
    pub names: Vec<String>,
    /// The file's own sample times, s, if it had a time column (kept so outputs share the time base).
    pub time_s: Option<Vec<f64>>,
    /// One vector per channel, µV.
    pub channels: Vec<Vec<f64>>,
    /// Markers and notes with their times (EDF+ annotations, CSV `# event` lines).
    pub events: Vec<Event>,
    /// Every signal the file holds, loaded or not (EDF/BDF with mixed rates); empty when every
    /// signal is in `channels` (see [`Recording::signal_list`]).
    pub signals: Vec<SignalInfo>,
    /// What the reader left out and why ("SpO2 (1 Hz) is at another rate: --channel SpO2").
    pub notes: Vec<String>,
}

/// One signal of a file, as listed to the user.
#[derive(Debug, Clone, PartialEq)]
pub struct SignalInfo {
    /// Label in the file.
    pub name: String,
    /// Its sample rate, Hz.
    pub fs_hz: f64,
    /// Physical unit as the file says it.
    pub unit: String,
    /// Index in `channels` when it was loaded.
    pub channel: Option<usize>,
}

/// A marker or note at a time in a recording.
#[derive(Debug, Clone, PartialEq)]
pub struct Event {
    /// Seconds from the recording's start.
    pub onset_s: f64,
    /// How long it lasts, s, if it is not an instant.
    pub duration_s: Option<f64>,
    /// What it says.
    pub text: String,
}

impl Recording {
    /// Frames in the recording.
    pub fn len(&self) -> usize {
        self.channels.first().map_or(0, Vec::len)
    }

    /// True when there are no frames.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Every signal of the file with name, rate and unit (the loaded channels when the reader
    /// had nothing more to say).
    pub fn signal_list(&self) -> Vec<SignalInfo> {
        if !self.signals.is_empty() {
            return self.signals.clone();
        }
        self.names
            .iter()
            .enumerate()
            .map(|(k, n)| SignalInfo {
                name: n.clone(),
                fs_hz: self.fs_hz,
                unit: "uV".into(),
                channel: Some(k),
            })
            .collect()
    }

    /// The signal `sel` names, as an index into [`Recording::signal_list`]: a 0-based index, or a
    /// name (exact, then case-insensitive).
    ///
    /// # Errors
    /// A one-line message listing what the file has.
    pub fn find_signal(&self, sel: &str) -> Result<usize, String> {
        let list = self.signal_list();
        let found = match sel.trim().parse::<usize>() {
            Ok(k) if k < list.len() => Some(k),
            Ok(_) => None,
            Err(_) => list
                .iter()
                .position(|s| s.name == sel)
                .or_else(|| list.iter().position(|s| s.name.eq_ignore_ascii_case(sel))),
        };
        found.ok_or_else(|| {
            let names: Vec<String> = list
                .iter()
                .enumerate()
                .map(|(k, s)| format!("{k} {} ({} Hz, {})", s.name, s.fs_hz, s.unit))
                .collect();
            format!(
                "--channel {sel}: the file has {} signal(s): {}",
                list.len(),
                names.join(", ")
            )
        })
    }

    /// Time of frame `i`, s: the file's own time base when it had one.
    pub fn time_of(&self, i: usize) -> f64 {
        match &self.time_s {
            Some(t) => t[i],
            None => i as f64 / self.fs_hz,
        }
    }
}

/// What the reader needs to know that a file may not say.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReadOptions {
    /// Sample rate if the file has none (required for raw files).
    pub fs_hz: Option<f64>,
    /// Unit of the values.
    pub unit: FileUnit,
    /// Channels per frame of a raw file.
    pub channels: usize,
}

impl Default for ReadOptions {
    fn default() -> Self {
        Self {
            fs_hz: None,
            unit: FileUnit::Millivolts,
            channels: 1,
        }
    }
}

/// The lower-case extension of a path ("" when none).
pub fn extension_of(path: &Path) -> String {
    extension(path)
}

fn extension(path: &Path) -> String {
    path.extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase()
}

/// Reads a recording, choosing the format by extension.
///
/// # Errors
/// [`StoreError`] with the file name and the reason.
pub fn read(path: &Path, opts: &ReadOptions) -> Result<Recording, StoreError> {
    match extension(path).as_str() {
        "csv" | "txt" | "tsv" => csv::read(path, opts),
        "f32" => raw::read(path, raw::Sample::F32, opts),
        "f64" => raw::read(path, raw::Sample::F64, opts),
        "hea" => wfdb::read(path),
        "edf" | "bdf" => edf::read(path),
        _ => Err(StoreError::UnknownType {
            path: path.display().to_string(),
        }),
    }
}

/// Writes a recording, choosing the format by extension (`unit` applies to CSV and raw files;
/// EDF/BDF always store µV with a range fitted to the data).
///
/// # Errors
/// [`StoreError`] when the file cannot be written.
pub fn write(path: &Path, rec: &Recording, unit: FileUnit) -> Result<(), StoreError> {
    match extension(path).as_str() {
        "csv" | "txt" => csv::write(path, rec, unit),
        "f32" => raw::write(path, rec, raw::Sample::F32, unit),
        "f64" => raw::write(path, rec, raw::Sample::F64, unit),
        "edf" => edf::write(path, rec, edf::EdfKind::Edf).map(|_| ()),
        "bdf" => edf::write(path, rec, edf::EdfKind::Bdf).map(|_| ()),
        _ => Err(StoreError::UnknownType {
            path: path.display().to_string(),
        }),
    }
}
