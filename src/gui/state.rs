//! What the GUI remembers: the user's settings, and the latest view of the data.

use std::path::PathBuf;

use crate::dsp::chain::ChainSettings;
use crate::msg::Snapshot;
use crate::source::SynthSettings;

/// Unit of the trace axes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TraceUnit {
    Microvolts,
    Millivolts,
}

impl TraceUnit {
    /// Factor from µV and the axis text.
    pub fn factor_and_label(self) -> (f64, &'static str) {
        match self {
            TraceUnit::Microvolts => (1.0, "µV at the electrodes"),
            TraceUnit::Millivolts => (1e-3, "mV at the electrodes"),
        }
    }
}

/// The user's settings.
#[derive(Debug, Clone, PartialEq)]
pub struct Settings {
    /// The digital chain.
    pub chain: ChainSettings,
    /// The simulator.
    pub synth: SynthSettings,
    /// Trace window, s.
    pub window_s: f64,
    /// Trace unit.
    pub unit: TraceUnit,
    /// Channel shown (0-based).
    pub channel: usize,
    /// Most frames per second.
    pub display_hz: f64,
    /// A serial port instead of the simulator.
    pub serial: Option<crate::source::serial::SerialSpec>,
    /// A recording replayed instead of the simulator.
    pub file: Option<crate::source::replay::ReplaySpec>,
}

impl Default for Settings {
    fn default() -> Self {
        Self {
            chain: ChainSettings::default(),
            synth: SynthSettings::default(),
            window_s: 10.0,
            unit: TraceUnit::Millivolts,
            channel: 0,
            display_hz: 30.0,
            serial: None,
            file: None,
        }
    }
}

/// Latest data for drawing.
#[derive(Debug, Clone, Default)]
pub struct View {
    /// The newest snapshot taken (kept while paused).
    pub snapshot: Option<Snapshot>,
    /// Snapshots taken so far.
    pub snapshots_seen: u64,
}

static CONFIG_DIR_OVERRIDE: std::sync::Mutex<Option<PathBuf>> = std::sync::Mutex::new(None);

/// Uses `dir` instead of the user's configuration folder (tests, portable set-ups).
pub fn set_config_dir_override(dir: PathBuf) {
    if let Ok(mut g) = CONFIG_DIR_OVERRIDE.lock() {
        *g = Some(dir);
    }
}

fn config_dir() -> Option<PathBuf> {
    if let Some(d) = CONFIG_DIR_OVERRIDE.lock().ok().and_then(|g| g.clone()) {
        return Some(d);
    }
    if let Some(x) = std::env::var_os("XDG_CONFIG_HOME").filter(|v| !v.is_empty()) {
        return Some(PathBuf::from(x).join("leadline"));
    }
    std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".config").join("leadline"))
}

fn caution_marker() -> Option<PathBuf> {
    config_dir().map(|d| d.join("caution-acknowledged"))
}

/// True when the user has already confirmed the first-start caution on this machine.
pub fn caution_acknowledged() -> bool {
    caution_marker().is_some_and(|p| p.exists())
}

/// Remembers that the caution was read. A failure only means it is shown again next time.
pub fn acknowledge_caution() {
    if let Some(p) = caution_marker() {
        if let Some(d) = p.parent() {
            let _ = std::fs::create_dir_all(d);
        }
        let _ = std::fs::write(p, b"The leadline safety caution was acknowledged.\n");
    }
}
