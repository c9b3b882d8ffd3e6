//! What the GUI remembers: the user's settings, and the latest view of the data.

use std::path::PathBuf;

use crate::dsp::chain::ChainSettings;
use crate::msg::Snapshot;
use crate::scale::FrontEnd;
use crate::setup::{Setup, SourceKind, SourceSetup, Theme, ViewSetup, WireChoice};
use crate::source::SynthSettings;

/// What the strip under the traces shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LowerView {
    /// The averaged beat and the RR tachogram.
    Beats,
    /// The running spectrum with the mains measurement.
    #[default]
    Spectrum,
    /// The chain's magnitude, phase and group delay.
    Response,
    /// The chain realised with standard parts.
    Parts,
    /// Measuring the built front end: response, stepped sine, noise, CMRR.
    Measure,
    /// Surface EMG: envelope, moving RMS, contractions, median-frequency trend.
    Muscle,
    /// Nothing: the traces take the whole height.
    Hidden,
}

impl LowerView {
    /// The name in setup files.
    pub fn name(self) -> &'static str {
        match self {
            LowerView::Beats => "beats",
            LowerView::Spectrum => "spectrum",
            LowerView::Response => "response",
            LowerView::Parts => "parts",
            LowerView::Measure => "measure",
            LowerView::Muscle => "emg",
            LowerView::Hidden => "traces",
        }
    }

    /// From the name in setup files (unknown: the spectrum).
    pub fn from_name(n: &str) -> Self {
        match n {
            "beats" => LowerView::Beats,
            "response" => LowerView::Response,
            "parts" => LowerView::Parts,
            "measure" => LowerView::Measure,
            "emg" => LowerView::Muscle,
            "traces" => LowerView::Hidden,
            _ => LowerView::Spectrum,
        }
    }
}

/// Unit of the trace axes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TraceUnit {
    Microvolts,
    Millivolts,
}

impl TraceUnit {
    /// Factor from µV and the axis text.
    pub fn factor_and_label(self) -> (f64, &'static str) {
        (self.factor(), self.axis_label())
    }

    /// Display units per µV.
    pub fn factor(self) -> f64 {
        match self {
            TraceUnit::Microvolts => 1.0,
            TraceUnit::Millivolts => 1e-3,
        }
    }

    /// The unit's symbol.
    pub fn symbol(self) -> &'static str {
        match self {
            TraceUnit::Microvolts => "µV",
            TraceUnit::Millivolts => "mV",
        }
    }

    /// The axis title.
    fn axis_label(self) -> &'static str {
        match self {
            TraceUnit::Microvolts => "µV at the electrodes",
            TraceUnit::Millivolts => "mV at the electrodes",
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
    /// A network board (a UDP or TCP source) instead of the simulator.
    pub net: Option<crate::source::SourceSpec>,
    /// The board's front end per channel (entry k for channel k, the last for the rest).
    pub front_ends: Vec<FrontEnd>,
    /// The user's own board, saved with "save as my board".
    pub my_board: Option<FrontEnd>,
    /// Colours.
    pub theme: Theme,
    /// Vertical scale of the traces: 0 = automatic, else ± this many µV around the centre.
    pub fixed_range_uv: f64,
    /// Sweep (wrap-around) display instead of scrolling.
    pub sweep: bool,
    /// The strip under the traces.
    pub lower: LowerView,
    /// Anti-aliased lines (costly with software OpenGL).
    pub smooth_lines: bool,
    /// Muscle signals (EMG) instead of the heart's: the 20–450 Hz chain and the EMG view.
    pub emg_mode: bool,
    /// The chain in force before EMG mode, restored when it ends.
    pub ecg_chain: Option<ChainSettings>,
}

/// The EMG preset: 20–450 Hz band-pass (2nd-order Butterworth each side; SENIAM, Hermens et
/// al. 2000, see `analysis::emg`) with the mains notch of `current` kept on, harmonics too. The
/// upper corner is held under 0.45·fs.
pub fn emg_chain(current: &ChainSettings, fs: f64) -> ChainSettings {
    let mut c = ChainSettings::band(Some((20.0, 2)), Some((450.0f64.min(0.45 * fs), 2)));
    c.notch = current.notch;
    c.notch.enabled = true;
    // Mains harmonics fall inside the EMG band: notch the first three of them too.
    c.notch.harmonics = c.notch.harmonics.max(3);
    c
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
            net: None,
            front_ends: vec![FrontEnd::default()],
            my_board: None,
            theme: Theme::Dark,
            fixed_range_uv: 0.0,
            sweep: false,
            lower: LowerView::Spectrum,
            emg_mode: false,
            ecg_chain: None,
            smooth_lines: false,
        }
    }
}

impl Settings {
    /// The settings a setup describes.
    ///
    /// # Errors
    /// A message when its source cannot be used.
    pub fn from_setup(s: &Setup) -> Result<Self, String> {
        use crate::source::SourceSpec;
        let (serial, file, net) = match s.source_spec()? {
            SourceSpec::Serial(spec) => (Some(spec), None, None),
            SourceSpec::File(f) => (None, Some(f), None),
            SourceSpec::Synth(_) => (None, None, None),
            n @ (SourceSpec::Udp(_) | SourceSpec::Tcp(_)) => (None, None, Some(n)),
        };
        Ok(Self {
            chain: s.chain,
            synth: s.synth.clone(),
            window_s: s.view.window_s,
            unit: if s.view.unit == "uV" {
                TraceUnit::Microvolts
            } else {
                TraceUnit::Millivolts
            },
            channel: s.view.channel,
            display_hz: s.view.display_hz,
            serial,
            file,
            net,
            front_ends: s.front_end.per_channel(s.scale),
            my_board: s.front_end.my_board.first().copied(),
            theme: s.view.theme,
            fixed_range_uv: s.view.fixed_range_uv,
            sweep: s.view.sweep,
            lower: LowerView::from_name(&s.view.lower),
            smooth_lines: s.view.smooth_lines,
            emg_mode: false,
            ecg_chain: None,
        })
    }

    /// These settings as a setup file says them.
    pub fn to_setup(&self) -> Setup {
        let mut source = SourceSetup::default();
        if let Some(sp) = &self.serial {
            source.kind = SourceKind::Serial;
            source.port = sp.path.clone();
            source.baud = sp.baud;
            source.wire = match sp.format {
                None => WireChoice::Auto,
                Some(crate::wire::Format::Text) => WireChoice::Ascii,
                Some(crate::wire::Format::Binary) => WireChoice::Binary,
            };
            source.fs_hz = sp.fs_hz.unwrap_or(0.0);
            source.uv_per_unit = sp.physical_to_uv;
        } else if let Some(n) = &self.net {
            source.kind = SourceKind::Network;
            source.network = crate::source::net::spec_text(n);
        } else if let Some(f) = &self.file {
            source.kind = SourceKind::File;
            source.file = f.path.display().to_string();
            source.fs_hz = f.read.fs_hz.unwrap_or(0.0);
            source.file_unit = f.read.unit.name().into();
        }
        let first = self.front_ends.first().copied().unwrap_or_default();
        Setup {
            source,
            scale: first.adc,
            front_end: crate::setup::FrontEndSetup {
                values: first.values,
                channels: self.front_ends.iter().skip(1).copied().collect(),
                my_board: self.my_board.into_iter().collect(),
            },
            chain: self.chain,
            synth: self.synth.clone(),
            view: ViewSetup {
                window_s: self.window_s,
                unit: match self.unit {
                    TraceUnit::Microvolts => "uV".into(),
                    TraceUnit::Millivolts => "mV".into(),
                },
                channel: self.channel,
                display_hz: self.display_hz,
                lower: self.lower.name().into(),
                theme: self.theme,
                fixed_range_uv: self.fixed_range_uv,
                sweep: self.sweep,
                smooth_lines: self.smooth_lines,
            },
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
