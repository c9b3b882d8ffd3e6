//! Command-line front door: argument types (clap) and one module per command.

pub mod beats;
pub mod bench;
pub mod export_c;
pub mod filter;
pub mod parts;
pub mod record;
pub mod response;
pub mod simulate;
pub mod sos;
pub mod spectrum;

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

/// leadline: live view, filter tuning and measurement for ECG and biopotential front ends.
///
/// Not a medical device; not for diagnosis. Electrodes on a person: battery-powered or isolated
/// equipment only.
#[derive(Debug, Parser)]
#[command(
    name = "leadline",
    version,
    about,
    long_about = None,
    after_help = "Not a medical device; not for diagnosis. With electrodes on a person use only battery-powered or properly isolated equipment (IEC 60601-1, local regulations)."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Option<Command>,
}

/// The commands. With none, the monitor opens on the simulator.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Open the live monitor window (the default).
    Monitor(MonitorArgs),
    /// Generate a synthetic ECG stream as the modelled board would send it.
    Simulate(SimulateArgs),
    /// Print the chain's second-order sections as JSON ([b0,b1,b2,a0,a1,a2] rows, scipy's sos layout).
    Sos(SosArgs),
    /// Write the chain's frequency response (magnitude, phase, group delay) to CSV.
    Response(ResponseArgs),
    /// Filter a recorded file through the chain (or convert it, with no stage given).
    Filter(FilterArgs),
    /// Detect beats in a recording: beats.csv (sample,time_s,…) and a summary with HR and HRV.
    Beats(BeatsArgs),
    /// Welch PSD of a recording (CSV), the mains report (JSON) and a plot (PNG).
    Spectrum(SpectrumArgs),
    /// Realise the chain with standard parts (E-series resistors, your capacitors): parts.json.
    Parts(PartsArgs),
    /// List the serial ports the system offers.
    Ports,
    /// Record a source headless to a file for a fixed time.
    Record(RecordArgs),
    /// Measure throughput on this machine (run a release build); the last line is JSON.
    Bench(BenchArgs),
    /// Write the chain as a self-contained C99 header (float32, Q15 or Q31) for firmware.
    #[command(name = "export-c")]
    ExportC(ExportCArgs),
}

/// Options of `leadline export-c`.
#[derive(Debug, Clone, Args)]
pub struct ExportCArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate the firmware runs the filter at, Hz.
    #[arg(long, value_name = "HZ")]
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

/// Options of `leadline parts`.
#[derive(Debug, Clone, Args)]
pub struct PartsArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate of the digital chain the parts stand in for, Hz.
    #[arg(long, value_name = "HZ")]
    pub fs: f64,
    /// Resistor series: E6, E12, E24, E48, E96, E192.
    #[arg(long, default_value = "E24", value_name = "SERIES")]
    pub series: String,
    /// A capacitor value you have, F (repeatable); default E6 values 1 nF–10 µF.
    #[arg(long, value_name = "F")]
    pub capacitor: Vec<f64>,
    /// In-amp target gain.
    #[arg(long, value_name = "G")]
    pub inamp_gain: Option<f64>,
    /// In-amp constant K of G = 1 + K/Rg, ohms, from its datasheet.
    #[arg(long, value_name = "OHMS")]
    pub inamp_k: Option<f64>,
    /// Resistor tolerance, % (for the spread).
    #[arg(long, default_value_t = 1.0, value_name = "PCT")]
    pub r_tol: f64,
    /// Capacitor tolerance, %.
    #[arg(long, default_value_t = 5.0, value_name = "PCT")]
    pub c_tol: f64,
    /// Monte Carlo draws (at least 2000).
    #[arg(long, default_value_t = 2000, value_name = "N")]
    pub draws: usize,
    /// Output: parts.json.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Also write the gain budget (JSON) for this electrode offset.
    #[arg(long, value_name = "FILE")]
    pub budget: Option<PathBuf>,
    /// Electrode offset to tolerate, ± mV.
    #[arg(long, default_value_t = 300.0, value_name = "MV")]
    pub offset_mv: f64,
}

/// Options of `leadline record`.
#[derive(Debug, Clone, Args)]
pub struct RecordArgs {
    /// Source: synth, serial:PATH[@BAUD][:ascii|:binary] or file:PATH (default: the --config
    /// setup's source, else the simulator).
    #[arg(long, value_name = "SPEC")]
    pub source: Option<String>,
    /// Take the source, scaling, simulator and chain from this setup (TOML); --source and any
    /// filter flag given on the command line win.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// How long to record, s (the command exits after this even if nothing arrived).
    #[arg(long, value_name = "S")]
    pub seconds: f64,
    /// Output file; its extension chooses the format: .edf (EDF+, 16-bit), .bdf (BDF+, 24-bit),
    /// .csv, or raw little-endian .f32/.f64.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Units of CSV and raw values: counts writes them exactly as received (EDF/BDF: always µV).
    #[arg(long, value_enum, default_value_t = Units::Millivolts)]
    pub units: Units,
    /// Record the output of the chain given by the filter flags instead of the raw input.
    #[arg(long)]
    pub filtered: bool,
    /// Place an event marker with this text at the start (repeatable; markers at later times
    /// come from the monitor).
    #[arg(long, value_name = "TEXT")]
    pub marker: Vec<String>,
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate, Hz, when the source does not say (else estimated from arrival).
    #[arg(long, value_name = "HZ")]
    pub fs: Option<f64>,
}

/// The recording an offline command reads, and what the file may not say about itself.
#[derive(Debug, Clone, Args)]
pub struct InputArgs {
    /// Recording: .csv/.txt (a time column, a `# fs=` line or --fs), .edf/.bdf (EDF, EDF+, BDF),
    /// .f32/.f64 raw little-endian (--fs, --channels), or a WFDB record's .hea.
    #[arg(long, value_name = "FILE")]
    pub input: PathBuf,
    /// Sample rate, Hz, for files that do not carry one.
    #[arg(long, value_name = "HZ")]
    pub fs: Option<f64>,
    /// Channels per frame of a raw input.
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub channels: usize,
    /// Unit of the input values (and of a filtered output).
    #[arg(long, value_enum, default_value_t = FileUnitArg::Millivolts)]
    pub units: FileUnitArg,
}

impl InputArgs {
    /// The reader's options.
    pub fn read_options(&self) -> crate::store::ReadOptions {
        crate::store::ReadOptions {
            fs_hz: self.fs,
            unit: self.units.unit(),
            channels: self.channels,
        }
    }
}

/// Options of `leadline beats`.
#[derive(Debug, Clone, Args)]
pub struct BeatsArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Channel to analyse (0-based).
    #[arg(long, default_value_t = 0, value_name = "K")]
    pub channel: usize,
    /// Beats: CSV with sample,time_s,r_uv,search_back.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Summary (JSON): beat count, mean heart rate, HRV (mean RR, SDNN, RMSSD, pNN50).
    #[arg(long, value_name = "FILE")]
    pub summary: Option<PathBuf>,
}

/// Options of `leadline spectrum`.
#[derive(Debug, Clone, Args)]
pub struct SpectrumArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Welch segment length (power of two, 256–16384); default about 4 s of signal.
    #[arg(long, value_name = "N")]
    pub segment: Option<usize>,
    /// PSD output: CSV with freq_hz,psd (µV²/Hz at the electrodes).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Mains report (JSON): mains_hz, harmonics [{order, hz, rms_uv}], snr_db, band_power.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// Plot of the PSD with the mains lines (PNG).
    #[arg(long, value_name = "FILE")]
    pub png: Option<PathBuf>,
    /// Channel to analyse (0-based).
    #[arg(long, default_value_t = 0, value_name = "K")]
    pub channel: usize,
}

/// What `leadline bench` measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BenchWhat {
    /// The 4-section chain (HP 0.5 Hz ×2, notch 60 Hz, LP 40 Hz ×4 at 1 kHz), one pass and in 64-sample blocks.
    Dsp,
    /// One Welch update of 10 s at 1 kHz (segment 2048), and the mains measurement on it.
    Spectrum,
    /// Offline beat detection of a 30-minute 360 Hz record (MIT-BIH 100, or a simulated one).
    Beats,
    /// Decoder throughput of the text and binary wire formats, MB/s.
    Wire,
}

/// Options of `leadline bench`.
#[derive(Debug, Clone, Args)]
pub struct BenchArgs {
    /// The figure to measure.
    #[arg(value_enum)]
    pub what: BenchWhat,
    /// Samples to process.
    #[arg(long, default_value_t = 10_000_000, value_name = "N")]
    pub samples: usize,
    /// WFDB record (.hea) for `bench beats`; without it a simulated 30-minute record is used.
    #[arg(long, value_name = "FILE")]
    pub record: Option<PathBuf>,
}

/// The filter chain on the command line. Each stage is used only when its corner is given.
#[derive(Debug, Clone, Args, Default)]
pub struct ChainArgs {
    /// High-pass corner (−3 dB), Hz.
    #[arg(long, value_name = "HZ")]
    pub highpass: Option<f64>,
    /// High-pass Butterworth order (1–8).
    #[arg(long, default_value_t = 2, value_name = "N")]
    pub highpass_order: u32,
    /// Mains notch frequency, Hz.
    #[arg(long, value_name = "HZ")]
    pub notch: Option<f64>,
    /// Notch Q (−3 dB bandwidth = frequency / Q).
    #[arg(long, default_value_t = 30.0, value_name = "Q")]
    pub notch_q: f64,
    /// Extra notches at harmonics 2… (0–4).
    #[arg(long, default_value_t = 0, value_name = "N")]
    pub notch_harmonics: u32,
    /// Low-pass corner (−3 dB), Hz.
    #[arg(long, value_name = "HZ")]
    pub lowpass: Option<f64>,
    /// Low-pass Butterworth order (1–8).
    #[arg(long, default_value_t = 4, value_name = "N")]
    pub lowpass_order: u32,
    /// Plain gain after the filters, V/V.
    #[arg(long, default_value_t = 1.0, value_name = "G")]
    pub gain: f64,
}

impl ChainArgs {
    /// The chain these flags describe.
    pub fn settings(&self) -> crate::dsp::ChainSettings {
        use crate::dsp::{ChainSettings, HighPass, LowPass, Notch};
        ChainSettings {
            highpass: HighPass {
                enabled: self.highpass.is_some(),
                corner_hz: self.highpass.unwrap_or(0.5),
                order: self.highpass_order,
            },
            notch: Notch {
                enabled: self.notch.is_some(),
                mains_hz: self.notch.unwrap_or(50.0),
                q: self.notch_q,
                harmonics: self.notch_harmonics,
            },
            lowpass: LowPass {
                enabled: self.lowpass.is_some(),
                corner_hz: self.lowpass.unwrap_or(40.0),
                order: self.lowpass_order,
            },
            gain: self.gain,
        }
    }

    /// The sections at `fs`, with a bad design reported as bad input (exit code 2).
    ///
    /// # Errors
    /// [`BadInput`] with the design error's message.
    pub fn design(&self, fs: f64) -> Result<Vec<crate::dsp::Section>, BadInput> {
        self.settings()
            .design(fs)
            .map_err(|e| BadInput(e.to_string()))
    }
}

/// Options of `leadline sos`.
#[derive(Debug, Clone, Args)]
pub struct SosArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate, Hz.
    #[arg(long, value_name = "HZ")]
    pub fs: f64,
}

/// Options of `leadline response`.
#[derive(Debug, Clone, Args)]
pub struct ResponseArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate, Hz.
    #[arg(long, value_name = "HZ")]
    pub fs: f64,
    /// Number of log-spaced frequencies from 0.01 Hz to just below Nyquist.
    #[arg(
        long,
        default_value_t = 512,
        value_name = "N",
        conflicts_with = "freqs"
    )]
    pub points: usize,
    /// Explicit frequencies, Hz, comma-separated.
    #[arg(long, value_name = "F1,F2,..", value_delimiter = ',')]
    pub freqs: Option<Vec<f64>>,
    /// Output CSV (freq_hz,mag_db,phase_deg,group_delay_s), or - for standard output.
    #[arg(long, default_value = "-", value_name = "FILE")]
    pub out: String,
}

/// Unit of the values in an input or output file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FileUnitArg {
    #[value(name = "V")]
    Volts,
    #[value(name = "mV")]
    Millivolts,
    #[value(name = "uV")]
    Microvolts,
}

impl FileUnitArg {
    /// The store's unit.
    pub fn unit(self) -> crate::store::FileUnit {
        match self {
            FileUnitArg::Volts => crate::store::FileUnit::Volts,
            FileUnitArg::Millivolts => crate::store::FileUnit::Millivolts,
            FileUnitArg::Microvolts => crate::store::FileUnit::Microvolts,
        }
    }
}

/// Options of `leadline filter`.
#[derive(Debug, Clone, Args)]
pub struct FilterArgs {
    #[command(flatten)]
    pub src: InputArgs,
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Output file; its extension chooses the format (.csv, .edf, .bdf, .f32, .f64). With no
    /// filter flags the data pass unchanged, so this converts between formats.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Filter forward and backward: no phase shift, |H|² magnitude (recorded data only).
    #[arg(long)]
    pub zero_phase: bool,
    /// Also plot the first channel before and after the chain to this PNG.
    #[arg(long, value_name = "PNG")]
    pub png: Option<PathBuf>,
}

/// Options of `leadline monitor`.
#[derive(Debug, Clone, Args, Default)]
pub struct MonitorArgs {
    /// Signal source: synth (the built-in simulator), serial:PATH[@BAUD][:ascii|:binary], or file:PATH (replay).
    /// Default: the setup's source (see --config), else the simulator.
    #[arg(long, value_name = "SPEC")]
    pub source: Option<String>,
    /// Start from this setup (TOML) instead of the one remembered from the last run.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// Start from the defaults: ignore (and do not overwrite) the remembered setup.
    #[arg(long, conflicts_with = "config")]
    pub fresh: bool,
    /// Simulator sample rate, Hz (125–4000).
    #[arg(long, value_name = "HZ")]
    pub fs: Option<f64>,
    /// Simulator channels (1–8).
    #[arg(long, value_name = "N")]
    pub channels: Option<usize>,
    /// Close the window after this many seconds and exit 0 (smoke tests, screenshots).
    #[arg(long, value_name = "SECONDS")]
    pub exit_after: Option<f64>,
    /// Save a PNG of the window just before exiting (needs --exit-after).
    #[arg(long, value_name = "PNG", requires = "exit_after")]
    pub screenshot: Option<PathBuf>,
    /// What the strip under the traces shows at start; `default` and `heavy` are the presets
    /// `--bench` measures (1 kHz × 1 ch, 10 s window / 2 kHz × 8 ch, 30 s window).
    #[arg(long, value_enum)]
    pub view: Option<StartView>,
    /// Run the real window for SECONDS (after a 2 s warm-up), then print frame rate, app time
    /// per frame, latency, CPU and memory; the last line is JSON.
    #[arg(long, value_name = "SECONDS")]
    pub bench: Option<f64>,
    /// Start with the traces frozen (with --bench: the idle cost).
    #[arg(long)]
    pub paused: bool,
    /// Window size in logical pixels, WIDTHxHEIGHT.
    #[arg(long, value_name = "WxH", default_value = "1280x800")]
    pub size: String,
}

/// The lower strip of the monitor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum, Default)]
pub enum StartView {
    /// Averaged beat and RR tachogram.
    Beats,
    /// Running spectrum and mains measurement.
    #[default]
    Spectrum,
    /// Magnitude, phase and group delay of the chain.
    Response,
    /// The chain realised with standard parts.
    Parts,
    /// Traces only.
    Traces,
    /// Measurement preset: simulator at 1 kHz, 1 channel, 10 s window, spectrum strip.
    Default,
    /// Measurement preset: simulator 8 channels at 2 kHz, 30 s window, spectrum strip.
    Heavy,
}

/// Output format of `leadline simulate`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SimFormat {
    /// `time_s` then one column per channel, in --units.
    Csv,
    /// The text-line wire format: ADC counts, `# key=value` metadata first.
    Ascii,
    /// The binary wire format: sync word, sequence counter, i16 counts, CRC-16.
    Binary,
}

/// Units of CSV output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Units {
    /// ADC counts exactly as produced.
    Counts,
    /// Volts at the electrodes.
    #[value(name = "V")]
    Volts,
    /// Millivolts at the electrodes.
    #[value(name = "mV")]
    Millivolts,
    /// Microvolts at the electrodes.
    #[value(name = "uV")]
    Microvolts,
}

/// Options of `leadline simulate`. Levels are RMS at the electrodes.
#[derive(Debug, Clone, Args)]
pub struct SimulateArgs {
    /// Sample rate, Hz (125–4000).
    #[arg(long, default_value_t = 500.0, value_name = "HZ")]
    pub fs: f64,
    /// Length of the stream, s (default 10; with --pty, until stopped).
    #[arg(long, value_name = "S")]
    pub seconds: Option<f64>,
    /// Channels (1–8).
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub channels: usize,
    /// Mean heart rate, bpm.
    #[arg(long, default_value_t = 72.0, value_name = "BPM")]
    pub hr: f64,
    /// Heart-rate variability (standard deviation), bpm.
    #[arg(long, default_value_t = 1.0, value_name = "BPM")]
    pub hrv: f64,
    /// Random seed: the same seed and options give the same bytes.
    #[arg(long, default_value_t = 1, value_name = "N")]
    pub seed: u64,
    /// Mains frequency, Hz.
    #[arg(long, default_value_t = 50.0, value_name = "HZ")]
    pub mains: f64,
    /// Mains fundamental, RMS µV.
    #[arg(long, default_value_t = 30.0, value_name = "UV")]
    pub mains_uv: f64,
    /// Respiration-like baseline wander, RMS µV.
    #[arg(long, default_value_t = 60.0, value_name = "UV")]
    pub wander_uv: f64,
    /// Slow electrode drift, RMS µV.
    #[arg(long, default_value_t = 40.0, value_name = "UV")]
    pub drift_uv: f64,
    /// Broadband muscle-like noise, RMS µV.
    #[arg(long, default_value_t = 8.0, value_name = "UV")]
    pub noise_uv: f64,
    /// Electrode offset, mV (DC).
    #[arg(long, default_value_t = 25.0, value_name = "MV")]
    pub offset_mv: f64,
    /// R-wave amplitude, mV.
    #[arg(long, default_value_t = 1.2, value_name = "MV")]
    pub r_mv: f64,
    /// The reading laptop is on its mains charger (stronger mains coupling).
    #[arg(long)]
    pub charger: bool,
    /// Electrodes swapped (inverted signal).
    #[arg(long)]
    pub inverted: bool,
    /// An electrode is off: the input floats to the rails.
    #[arg(long)]
    pub lead_off: bool,
    /// Output format.
    #[arg(long, value_enum, default_value_t = SimFormat::Csv)]
    pub format: SimFormat,
    /// Units of CSV values (input-referred unless counts).
    #[arg(long, value_enum, default_value_t = Units::Millivolts)]
    pub units: Units,
    /// Output file, or - for standard output.
    #[arg(long, default_value = "-", value_name = "PATH")]
    pub out: String,
    /// Open a pseudo-terminal, print its device path and stream into it in real time.
    #[arg(long)]
    pub pty: bool,
    /// Baud rate the stream must fit (for --pty; the pseudo-terminal itself ignores it).
    #[arg(long, default_value_t = 921_600, value_name = "B")]
    pub baud: u32,
}

/// Reads a recording for an offline command and picks one channel: a malformed file or a missing
/// channel is bad input (exit 2), an unreadable one an I/O failure (exit 1).
///
/// # Errors
/// As described.
pub fn load_channel(
    input: &std::path::Path,
    opts: &crate::store::ReadOptions,
    channel: usize,
) -> anyhow::Result<(crate::store::Recording, usize)> {
    let rec = crate::store::read(input, opts).map_err(|e| match e {
        crate::store::StoreError::Io { .. } => anyhow::Error::new(e),
        other => BadInput(other.to_string()).into(),
    })?;
    if channel >= rec.channels.len() {
        return Err(BadInput(format!(
            "--channel {channel}: the file has {} channel(s) (0-based)",
            rec.channels.len()
        ))
        .into());
    }
    Ok((rec, channel))
}

/// A bad argument or input detected after parsing (exit code 2, like clap's own errors).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct BadInput(pub String);
