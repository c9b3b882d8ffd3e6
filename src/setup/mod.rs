//! Setups: the whole configuration (source, ADC and front-end scaling, chain, simulator, views)
//! as a TOML file. `leadline monitor --config FILE` and `record --config FILE` load one, the
//! monitor saves and opens them, and the last one used is restored at the next start.
//!
//! Every field is always written, so a saved file lists everything that can be set. Keys that
//! leadline does not know are reported with their line (and otherwise ignored); a value of the
//! wrong type is an error naming the line and the key.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::dsp::ChainSettings;
use crate::scale::{FrontEnd, InputScale, ValueKind};
use crate::source::SynthSettings;

mod view;
pub use view::{LowerView, Theme, TraceUnit, ViewSetup};

/// Where the samples come from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum SourceKind {
    /// The built-in simulator.
    #[default]
    Synth,
    /// A board on a serial port.
    Serial,
    /// A recording replayed.
    File,
    /// A Wi-Fi board over UDP or TCP (`network`).
    Network,
}

/// Wire format on a serial port.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum WireChoice {
    /// Detected from the first bytes.
    #[default]
    Auto,
    Ascii,
    Binary,
}

/// The source section.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SourceSetup {
    pub kind: SourceKind,
    /// Serial device path.
    pub port: String,
    /// Serial baud rate.
    pub baud: u32,
    pub wire: WireChoice,
    /// Sample rate of a serial stream or headerless file, Hz; 0 = from the stream or file.
    pub fs_hz: f64,
    /// µV per unit of decimal samples on the wire (1000: the board sends mV).
    pub uv_per_unit: f64,
    /// Recording to replay.
    pub file: String,
    /// Unit of the replayed file's values: "V", "mV" or "uV".
    pub file_unit: String,
    /// A network board: "udp:5005", "udp:5005?from=192.0.2.7" or "tcp:192.0.2.7:5006".
    pub network: String,
    /// What the channels are: "" (channels), "limb2" (I, II), "leads8" (I, II, V1–V6) or
    /// "electrodes9" (RA, LA, LL, V1–V6); the standard leads are derived from them.
    pub leads: String,
}

impl Default for SourceSetup {
    fn default() -> Self {
        Self {
            kind: SourceKind::Synth,
            port: String::new(),
            baud: 921_600,
            wire: WireChoice::Auto,
            fs_hz: 0.0,
            uv_per_unit: 1000.0,
            file: String::new(),
            file_unit: "mV".into(),
            network: String::new(),
            leads: String::new(),
        }
    }
}

/// What the numbers of a board's stream are, beyond the `[scale]` ADC model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default)]
pub struct FrontEndSetup {
    /// Channel 1 (and every channel not listed in `channels`): "counts" (through `[scale]`), or
    /// the values are already "V", "mV" or "uV".
    pub values: ValueKind,
    /// Channels 2, 3, … when they differ from channel 1: `[[front_end.channels]]` tables, each
    /// with `values` and an `adc` table like `[scale]`.
    pub channels: Vec<FrontEnd>,
    /// The user's own board, kept by "save as my board" in the monitor (at most one entry).
    pub my_board: Vec<FrontEnd>,
}

impl FrontEndSetup {
    /// The front end per channel (entry k for channel k; the last one for the rest).
    pub fn per_channel(&self, scale: InputScale) -> Vec<FrontEnd> {
        let mut v = vec![FrontEnd {
            values: self.values,
            adc: scale,
        }];
        v.extend(self.channels.iter().copied());
        v
    }
}

/// A whole setup.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, Default)]
#[serde(default)]
pub struct Setup {
    pub source: SourceSetup,
    /// ADC and front-end scaling of count samples (serial boards): channel 1, and every channel
    /// `[front_end]` does not list.
    pub scale: InputScale,
    /// What the numbers are, and channels with a front end of their own.
    pub front_end: FrontEndSetup,
    pub chain: ChainSettings,
    pub synth: SynthSettings,
    pub view: ViewSetup,
}

/// Why a setup could not be read or written.
#[derive(Debug, thiserror::Error)]
pub enum SetupError {
    #[error("{path}: {source}")]
    Io {
        path: String,
        #[source]
        source: std::io::Error,
    },
    /// Not TOML, or a value of the wrong type (the message names the line and the key).
    #[error("{path}: {message}")]
    Parse { path: String, message: String },
    /// A value of the right type but out of range.
    #[error("{path}: {message}")]
    Invalid { path: String, message: String },
}

/// A setup read from a file, with what was not understood.
#[derive(Debug, Clone, PartialEq)]
pub struct Loaded {
    pub setup: Setup,
    /// One line per unknown key: "line N: unknown key `a.b` (ignored)".
    pub warnings: Vec<String>,
}

const HEADER: &str = "# leadline setup: source, scaling, filter chain, simulator and views.\n\
# Every key is listed; delete any to use its default. Units are in the key names.\n\n";

impl Setup {
    /// The TOML text (every field).
    ///
    /// # Errors
    /// Only if a value cannot be represented in TOML (a NaN would be written as nan, so never).
    pub fn to_toml(&self) -> Result<String, toml::ser::Error> {
        Ok(format!("{HEADER}{}", toml::to_string(self)?))
    }

    /// Parses TOML text; `path` is only for messages.
    ///
    /// # Errors
    /// [`SetupError::Parse`] naming the line and key, [`SetupError::Invalid`] for ranges.
    pub fn from_toml(text: &str, path: &str) -> Result<Loaded, SetupError> {
        let table: toml::Table = toml::from_str(text).map_err(|e| SetupError::Parse {
            path: path.into(),
            message: one_line(&e.to_string()),
        })?;
        let setup: Setup = toml::from_str(text).map_err(|e| SetupError::Parse {
            path: path.into(),
            message: one_line(&e.to_string()),
        })?;
        let known = toml::Table::try_from(Setup::default()).unwrap_or_default();
        let mut unknown = Vec::new();
        unknown_keys(&table, &known, "", &mut unknown);
        let warnings = unknown
            .iter()
            .map(|k| match line_of(text, k) {
                Some(n) => format!("line {n}: unknown key `{k}` (ignored)"),
                None => format!("unknown key `{k}` (ignored)"),
            })
            .collect();
        setup.validate().map_err(|message| SetupError::Invalid {
            path: path.into(),
            message,
        })?;
        Ok(Loaded { setup, warnings })
    }

    /// Checks ranges the types do not.
    ///
    /// # Errors
    /// A message naming the key.
    pub fn validate(&self) -> Result<(), String> {
        if !self.source.leads.is_empty() && self.lead_set().is_none() {
            return Err(format!(
                "source.leads = {:?}: expected \"\", \"limb2\", \"leads8\" or \"electrodes9\"",
                self.source.leads
            ));
        }
        self.scale.validate().map_err(|e| format!("[scale]: {e}"))?;
        for (k, fe) in self.front_end.channels.iter().enumerate() {
            fe.validate()
                .map_err(|e| format!("[[front_end.channels]] entry {}: {e}", k + 1))?;
        }
        self.synth.validate().map_err(|e| format!("[synth]: {e}"))?;
        let v = &self.view;
        if !(v.window_s.is_finite() && (1.0..=60.0).contains(&v.window_s)) {
            return Err(format!("view.window_s = {}: must be 1–60 s", v.window_s));
        }
        if !(v.display_hz.is_finite() && (1.0..=120.0).contains(&v.display_hz)) {
            return Err(format!(
                "view.display_hz = {}: must be 1–120 frames/s",
                v.display_hz
            ));
        }
        if !(v.fixed_range_uv.is_finite() && v.fixed_range_uv >= 0.0) {
            return Err(format!(
                "view.fixed_range_uv = {}: must be 0 (automatic) or a positive µV",
                v.fixed_range_uv
            ));
        }
        let s = &self.source;
        if !(s.fs_hz.is_finite() && s.fs_hz >= 0.0) {
            return Err(format!("source.fs_hz = {}: must be 0 or positive", s.fs_hz));
        }
        if !matches!(s.file_unit.as_str(), "V" | "mV" | "uV") {
            return Err(format!(
                "source.file_unit = {:?}: must be \"V\", \"mV\" or \"uV\"",
                s.file_unit
            ));
        }
        if s.kind == SourceKind::Serial && s.port.is_empty() {
            return Err("source.kind = \"serial\" needs source.port".into());
        }
        if s.kind == SourceKind::File && s.file.is_empty() {
            return Err("source.kind = \"file\" needs source.file".into());
        }
        Ok(())
    }

    /// Reads a setup file.
    ///
    /// # Errors
    /// [`SetupError`] with the file name.
    pub fn load(path: &Path) -> Result<Loaded, SetupError> {
        let text = std::fs::read_to_string(path).map_err(|e| SetupError::Io {
            path: path.display().to_string(),
            source: e,
        })?;
        Self::from_toml(&text, &path.display().to_string())
    }

    /// Writes a setup file (to a temporary name first, so a failed write keeps the old file).
    ///
    /// # Errors
    /// [`SetupError::Io`] with the file name.
    pub fn save(&self, path: &Path) -> Result<(), SetupError> {
        let io = |e| SetupError::Io {
            path: path.display().to_string(),
            source: e,
        };
        let text = self
            .to_toml()
            .map_err(|e| io(std::io::Error::other(e.to_string())))?;
        if let Some(d) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
            std::fs::create_dir_all(d).map_err(io)?;
        }
        let tmp = path.with_extension("toml.partial");
        std::fs::write(&tmp, text).map_err(io)?;
        std::fs::rename(&tmp, path).map_err(io)
    }

    /// What the channels are, when they are leads or electrodes.
    pub fn lead_set(&self) -> Option<crate::leads::LeadSet> {
        crate::leads::LeadSet::ALL
            .into_iter()
            .find(|s| s.name() == self.source.leads)
    }

    /// Sets what the channels are (`None`: plain channels).
    pub fn set_lead_set(&mut self, set: Option<crate::leads::LeadSet>) {
        self.source.leads = set.map_or(String::new(), |s| s.name().to_string());
    }

    /// The front end per channel (entry k for channel k; the last one for the rest).
    pub fn front_ends(&self) -> Vec<FrontEnd> {
        self.front_end.per_channel(self.scale)
    }

    /// Sets the front end per channel: the first is `[scale]` with `front_end.values`, the rest
    /// `[[front_end.channels]]`.
    pub fn set_front_ends(&mut self, list: &[FrontEnd]) {
        let first = list.first().copied().unwrap_or_default();
        self.scale = first.adc;
        self.front_end.values = first.values;
        self.front_end.channels = list.iter().skip(1).copied().collect();
    }

    /// The user's own board, kept by "save as my board".
    pub fn my_board(&self) -> Option<FrontEnd> {
        self.front_end.my_board.first().copied()
    }

    /// Keeps (or forgets) the user's own board.
    pub fn set_my_board(&mut self, board: Option<FrontEnd>) {
        self.front_end.my_board = board.into_iter().collect();
    }

    /// True when the samples come from a board (serial or network): its front end applies.
    pub fn from_board(&self) -> bool {
        matches!(self.source.kind, SourceKind::Serial | SourceKind::Network)
    }

    /// Names `spec` as the source (the simulator's own settings stay in `[synth]`, a serial
    /// port's ADC model in `[scale]`).
    pub fn set_source(&mut self, spec: &crate::source::SourceSpec) {
        use crate::source::SourceSpec;
        let s = &mut self.source;
        match spec {
            SourceSpec::Synth(_) => s.kind = SourceKind::Synth,
            SourceSpec::Serial(sp) => {
                s.kind = SourceKind::Serial;
                s.port.clone_from(&sp.path);
                s.baud = sp.baud;
                s.wire = match sp.format {
                    None => WireChoice::Auto,
                    Some(crate::wire::Format::Text) => WireChoice::Ascii,
                    Some(crate::wire::Format::Binary) => WireChoice::Binary,
                };
                s.fs_hz = sp.fs_hz.unwrap_or(0.0);
                s.uv_per_unit = sp.physical_to_uv;
            }
            SourceSpec::Udp(_) | SourceSpec::Tcp(_) => {
                s.kind = SourceKind::Network;
                s.network = crate::source::net::spec_text(spec);
                let (fs, k) = match spec {
                    SourceSpec::Udp(u) => (u.fs_hz, u.physical_to_uv),
                    SourceSpec::Tcp(t) => (t.fs_hz, t.physical_to_uv),
                    _ => (None, s.uv_per_unit),
                };
                s.fs_hz = fs.unwrap_or(0.0);
                s.uv_per_unit = k;
            }
            SourceSpec::File(f) => {
                s.kind = SourceKind::File;
                s.file = f.path.display().to_string();
                s.fs_hz = f.read.fs_hz.unwrap_or(0.0);
                s.file_unit = f.read.unit.name().into();
            }
        }
    }

    /// The source this setup names, as the pipeline takes it.
    ///
    /// # Errors
    /// A message for a serial port or file setting that does not parse.
    pub fn source_spec(&self) -> Result<crate::source::SourceSpec, String> {
        use crate::source::SourceSpec;
        let s = &self.source;
        let fs = (s.fs_hz > 0.0).then_some(s.fs_hz);
        match s.kind {
            SourceKind::Synth => Ok(SourceSpec::Synth(self.synth.clone())),
            SourceKind::Serial => {
                let wire = match s.wire {
                    WireChoice::Auto => "",
                    WireChoice::Ascii => ":ascii",
                    WireChoice::Binary => ":binary",
                };
                let text = format!("serial:{}@{}{wire}", s.port, s.baud);
                let mut spec =
                    SourceSpec::parse(&text, fs, self.scale).map_err(|e| e.to_string())?;
                if let SourceSpec::Serial(ser) = &mut spec {
                    ser.physical_to_uv = s.uv_per_unit;
                }
                Ok(spec)
            }
            SourceKind::Network => {
                if !(s.network.starts_with("udp:") || s.network.starts_with("tcp:")) {
                    return Err(format!(
                        "source.network = {:?}: expected udp:PORT or tcp:HOST:PORT",
                        s.network
                    ));
                }
                let mut spec =
                    SourceSpec::parse(&s.network, fs, self.scale).map_err(|e| e.to_string())?;
                match &mut spec {
                    SourceSpec::Udp(u) => u.physical_to_uv = s.uv_per_unit,
                    SourceSpec::Tcp(t) => t.physical_to_uv = s.uv_per_unit,
                    _ => {}
                }
                Ok(spec)
            }
            SourceKind::File => {
                let mut spec = SourceSpec::parse(&format!("file:{}", s.file), fs, self.scale)
                    .map_err(|e| e.to_string())?;
                if let SourceSpec::File(f) = &mut spec {
                    f.read.unit = match s.file_unit.as_str() {
                        "V" => crate::store::FileUnit::Volts,
                        "uV" => crate::store::FileUnit::Microvolts,
                        _ => crate::store::FileUnit::Millivolts,
                    };
                }
                Ok(spec)
            }
        }
    }
}

/// Where the last setup is kept between runs.
pub fn last_setup_path() -> Option<PathBuf> {
    config_dir().map(|d| d.join("last-setup.toml"))
}

fn one_line(s: &str) -> String {
    // toml's messages span lines ("TOML parse error at line 3, column 5 | ... "): keep them
    // readable on one line for the status bar, without losing the line number or key.
    s.lines()
        .map(str::trim)
        .filter(|l| !l.is_empty() && *l != "|")
        .collect::<Vec<_>>()
        .join(" ")
}

fn unknown_keys(have: &toml::Table, known: &toml::Table, prefix: &str, out: &mut Vec<String>) {
    for (k, v) in have {
        let name = if prefix.is_empty() {
            k.clone()
        } else {
            format!("{prefix}.{k}")
        };
        match (v, known.get(k)) {
            (_, None) => out.push(name),
            (toml::Value::Table(t), Some(toml::Value::Table(kt))) => {
                unknown_keys(t, kt, &name, out);
            }
            _ => {}
        }
    }
}

/// The 1-based line where `dotted` (e.g. "chain.highpass.cornr") is set: the last part as a key
/// inside its [table] header, or the whole dotted key.
fn line_of(text: &str, dotted: &str) -> Option<usize> {
    let (table, key) = match dotted.rsplit_once('.') {
        Some((t, k)) => (t, k),
        None => ("", dotted),
    };
    let mut current = String::new();
    for (i, raw) in text.lines().enumerate() {
        let l = raw.trim();
        if let Some(h) = l.strip_prefix('[').and_then(|h| h.strip_suffix(']')) {
            current = h.trim().to_string();
            if current == dotted {
                return Some(i + 1);
            }
            continue;
        }
        let Some((lhs, _)) = l.split_once('=') else {
            continue;
        };
        let lhs = lhs.trim().trim_matches('"');
        let full = if current.is_empty() {
            lhs.to_string()
        } else {
            format!("{current}.{lhs}")
        };
        if full == dotted || (current == table && lhs == key) {
            return Some(i + 1);
        }
    }
    None
}

static CONFIG_DIR_OVERRIDE: std::sync::Mutex<Option<PathBuf>> = std::sync::Mutex::new(None);

/// Uses `dir` instead of the user's configuration folder (tests, portable set-ups).
pub fn set_config_dir_override(dir: PathBuf) {
    if let Ok(mut g) = CONFIG_DIR_OVERRIDE.lock() {
        *g = Some(dir);
    }
}

/// The folder for leadline's own files (the last setup, the caution marker): `$XDG_CONFIG_HOME/leadline` or `~/.config/leadline`.
pub fn config_dir() -> Option<PathBuf> {
    if let Some(d) = CONFIG_DIR_OVERRIDE.lock().ok().and_then(|g| g.clone()) {
        return Some(d);
    }
    if let Some(x) = std::env::var_os("XDG_CONFIG_HOME").filter(|v| !v.is_empty()) {
        return Some(PathBuf::from(x).join("leadline"));
    }
    std::env::var_os("HOME").map(|h| PathBuf::from(h).join(".config").join("leadline"))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn save_then_load_is_the_identity() {
        let mut s = Setup::default();
        s.chain.highpass.corner_hz = 0.67;
        s.chain.notch.mains_hz = 60.0;
        s.chain.notch.harmonics = 2;
        s.chain.lowpass.order = 6;
        s.chain.cancel.enabled = true;
        s.chain.cancel.harmonics = 3;
        s.synth.fs_hz = 1000.0;
        s.synth.channels = 3;
        s.synth.charger = true;
        s.scale = InputScale::new(16, 2.5, 1000.0).unwrap();
        s.source = SourceSetup {
            kind: SourceKind::Serial,
            port: "/dev/ttyACM0".into(),
            baud: 115_200,
            wire: WireChoice::Binary,
            fs_hz: 500.0,
            uv_per_unit: 1.0,
            file: String::new(),
            file_unit: "uV".into(),
            network: String::new(),
            leads: "leads8".into(),
        };
        s.view.theme = Theme::Light;
        s.view.window_s = 4.5;
        s.view.lower = LowerView::Beats;
        s.view.fixed_range_uv = 1500.0;
        s.view.sweep = true;
        s.view.smooth_lines = true;
        let text = s.to_toml().unwrap();
        let back = Setup::from_toml(&text, "mem").unwrap();
        assert!(back.warnings.is_empty(), "{:?}", back.warnings);
        assert_eq!(back.setup, s);
        // And the text itself is stable: save → load → save gives the same bytes.
        assert_eq!(back.setup.to_toml().unwrap(), text);
        let p = std::env::temp_dir().join(format!("leadline-setup-{}.toml", std::process::id()));
        s.save(&p).unwrap();
        assert_eq!(Setup::load(&p).unwrap().setup, s);
    }

    #[test]
    fn a_wrong_type_names_the_line_and_the_key() {
        let text = "[chain.highpass]\nenabled = true\ncorner_hz = \"half a hertz\"\n";
        let e = Setup::from_toml(text, "bench.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("bench.toml"), "{e}");
        assert!(e.contains("line 3"), "{e}");
        assert!(e.contains("corner_hz"), "{e}");
    }

    #[test]
    fn malformed_toml_names_the_line() {
        let text = "[view]\nwindow_s = 10\nunit = \"mV\n";
        let e = Setup::from_toml(text, "x.toml").unwrap_err().to_string();
        assert!(e.contains("line 3"), "{e}");
    }

    #[test]
    fn unknown_keys_are_reported_with_their_lines() {
        let text = "[chain.highpass]\ncornr_hz = 0.5\n\n[view]\ntheme = \"light\"\nzoom = 2\n\n[extras]\na = 1\n";
        let l = Setup::from_toml(text, "x.toml").unwrap();
        assert_eq!(
            l.warnings,
            vec![
                "line 2: unknown key `chain.highpass.cornr_hz` (ignored)".to_string(),
                "line 8: unknown key `extras` (ignored)".to_string(),
                "line 6: unknown key `view.zoom` (ignored)".to_string(),
            ]
        );
        assert_eq!(l.setup.view.theme, Theme::Light);
    }

    #[test]
    fn out_of_range_values_are_refused_by_name() {
        let e = Setup::from_toml("[view]\nwindow_s = 500\n", "x.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("view.window_s"), "{e}");
        let e = Setup::from_toml("[source]\nkind = \"serial\"\n", "x.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("source.port"), "{e}");
    }

    #[test]
    fn every_lower_view_and_unit_is_saved_and_read_back() {
        // The names a setup file uses; the EMG view's "emg" was once written and then refused.
        for (view, name) in [
            (LowerView::Beats, "beats"),
            (LowerView::Spectrum, "spectrum"),
            (LowerView::Response, "response"),
            (LowerView::Parts, "parts"),
            (LowerView::Measure, "measure"),
            (LowerView::Muscle, "emg"),
            (LowerView::Hidden, "traces"),
        ] {
            for unit in [TraceUnit::Microvolts, TraceUnit::Millivolts] {
                let mut s = Setup::default();
                s.view.lower = view;
                s.view.unit = unit;
                let text = s.to_toml().unwrap();
                assert!(text.contains(&format!("lower = \"{name}\"")), "{text}");
                let back = Setup::from_toml(&text, "x.toml").unwrap().setup;
                assert_eq!(back, s);
            }
        }
        let e = Setup::from_toml("[view]\nlower = \"sideways\"\n", "x.toml")
            .unwrap_err()
            .to_string();
        assert!(e.contains("sideways") && e.contains("line 2"), "{e}");
    }

    #[test]
    fn a_source_set_from_a_spec_names_the_same_source() {
        use crate::source::SourceSpec;
        for text in [
            "serial:/dev/ttyACM0@115200:binary",
            "udp:5005",
            "tcp:127.0.0.1:5006",
        ] {
            let spec = SourceSpec::parse(text, Some(500.0), InputScale::default()).unwrap();
            let mut s = Setup::default();
            s.set_source(&spec);
            assert_eq!(s.source_spec().unwrap(), spec, "{text}");
        }
    }
}
