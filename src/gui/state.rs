//! What the GUI remembers: the user's settings, and the latest view of the data.

use std::path::PathBuf;

use crate::dsp::chain::ChainSettings;
use crate::msg::Snapshot;
pub use crate::setup::{LowerView, TraceUnit};
use crate::setup::{Setup, SourceKind};

/// The user's settings: the setup (what a setup file holds, and what is remembered between
/// runs) and the mode, which is not saved.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Settings {
    /// Source, scaling, chain, simulator and view.
    pub setup: Setup,
    /// Muscle signals (EMG) instead of the heart's: the 20–450 Hz chain and the EMG view.
    pub emg_mode: bool,
    /// The chain in force before EMG mode, restored when it ends.
    pub ecg_chain: Option<ChainSettings>,
}

/// The EMG preset: 20–450 Hz band-pass (2nd-order Butterworth each side; SENIAM, Hermens et
/// al. 2000, see `analysis::emg`) with the mains notch of `current` kept on, harmonics too. The
/// upper corner is held under 0.45·fs.
pub fn emg_chain(current: &ChainSettings, fs: f64) -> ChainSettings {
    let mut c = ChainSettings::band(
        Some((20.0, 2)),
        Some((450.0f64.min(crate::dsp::highest_corner_hz(fs)), 2)),
    );
    c.notch = current.notch;
    c.notch.enabled = true;
    // Mains harmonics fall inside the EMG band: notch the first three of them too.
    c.notch.harmonics = c.notch.harmonics.max(3);
    c
}

impl Settings {
    /// The settings a setup describes.
    ///
    /// # Errors
    /// A message when its source cannot be used.
    pub fn from_setup(s: &Setup) -> Result<Self, String> {
        s.source_spec()?;
        Ok(Self {
            setup: s.clone(),
            ..Self::default()
        })
    }

    /// These settings as a setup file says them.
    pub fn to_setup(&self) -> Setup {
        self.setup.clone()
    }

    /// True while the built-in simulator is the source.
    pub fn simulating(&self) -> bool {
        self.setup.source.kind == SourceKind::Synth
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

pub use crate::setup::{config_dir, set_config_dir_override};

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
