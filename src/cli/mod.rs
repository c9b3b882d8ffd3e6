//! Command-line front door: argument types (clap) and one module per command.

pub mod beats;
pub mod bench;
pub mod conform;
pub mod emg;
pub mod export_c;
pub mod filter;
pub mod measure;
pub mod num;
pub mod parts;
pub mod record;
pub mod response;
pub mod simulate;
pub mod sos;
pub mod sound;
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
    after_help = CAUTION_HELP
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Option<Command>,
}

impl Cli {
    /// The command line's definition: negative numbers reach the range checks (so `--fs -1`
    /// says what range it wants instead of "unexpected argument").
    pub fn definition() -> clap::Command {
        fn negatives(c: clap::Command) -> clap::Command {
            // `-1` and `-inf` are values of a numeric option, for its range check to judge.
            c.allow_negative_numbers(true)
                .mut_args(|a| {
                    if num::is_numeric(a.get_value_parser()) {
                        a.allow_hyphen_values(true)
                    } else {
                        a
                    }
                })
                .mut_subcommands(negatives)
        }
        negatives(<Cli as clap::CommandFactory>::command())
    }

    /// Parses the process's arguments. A value out of its range is one line on stderr and exit 2;
    /// help and version print as usual.
    pub fn parse_args() -> Self {
        use clap::FromArgMatches as _;
        let parsed = Self::definition()
            .try_get_matches()
            .and_then(|m| Self::from_arg_matches(&m));
        match parsed {
            Ok(cli) => cli,
            Err(e) => {
                use clap::error::ErrorKind;
                if matches!(
                    e.kind(),
                    ErrorKind::ValueValidation | ErrorKind::InvalidValue
                ) {
                    let text = e.to_string();
                    let line = text.lines().next().unwrap_or_default();
                    eprintln!("leadline: {}", line.trim_start_matches("error: "));
                    std::process::exit(2);
                }
                e.exit()
            }
        }
    }
}

/// The caution every command that touches a person's signal prints in its help.
pub const CAUTION_HELP: &str = "Not a medical device; not for diagnosis. With electrodes on a person use only battery-powered or properly isolated equipment, and follow IEC 60601-1, local regulations and licensed practice.";

/// The commands. With none, the monitor opens on the simulator.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Open the live monitor window (the default).
    #[command(after_help = CAUTION_HELP)]
    Monitor(MonitorArgs),
    /// Generate a synthetic ECG stream as the modelled board would send it.
    #[command(after_help = CAUTION_HELP)]
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
    #[command(after_help = CAUTION_HELP)]
    Record(RecordArgs),
    /// Measure throughput on this machine (run a release build); the last line is JSON.
    Bench(BenchArgs),
    /// Check the chain against the ECG standards' impulse test, 0.67 Hz gain, upper corner and
    /// ST shift; writes a JSON report with pass/fail and advice.
    Conform(ConformArgs),
    /// Measure a built front end from a recording: response, stepped sine, noise or CMRR.
    #[command(after_help = CAUTION_HELP)]
    Measure(MeasureArgs),
    /// Write the chain as a self-contained C99 header (float32, Q15 or Q31) for firmware.
    #[command(name = "export-c")]
    ExportC(ExportCArgs),
    /// Surface EMG of a recording: envelope and moving RMS (CSV), contractions with their
    /// amplitude, mean and median frequency, the fatigue trend and %MVC (JSON).
    #[command(after_help = CAUTION_HELP)]
    Emg(EmgArgs),
    /// Render what the monitor would play to a WAV file: a tone on each beat when it is decided
    /// (silent while the readout is unreliable) and/or the filtered signal.
    #[command(after_help = CAUTION_HELP)]
    Sound(SoundArgs),
}

/// Options of `leadline sound`.
#[derive(Debug, Clone, Args)]
pub struct SoundArgs {
    #[command(flatten)]
    pub src: InputArgs,
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Signal to follow: 0-based index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// A tone on each beat (the default when neither --tone nor --signal is given).
    #[arg(long)]
    pub tone: bool,
    /// The filtered signal itself.
    #[arg(long)]
    pub signal: bool,
    /// Tone pitch, Hz (200–4000).
    #[arg(value_parser = num::real(200.0, 4000.0, "Hz"), long, default_value_t = 1000.0, value_name = "HZ")]
    pub pitch: f64,
    /// Tone volume, 0–1 of full scale.
    #[arg(value_parser = num::real(0.0, 1.0, ""), long, default_value_t = 0.3, value_name = "V")]
    pub volume: f64,
    /// Tone length, ms.
    #[arg(value_parser = num::real(5.0, 1000.0, "ms"), long, default_value_t = 60.0, value_name = "MS")]
    pub tone_ms: f64,
    /// Signal gain: 1 mV is full scale × this (a limiter keeps peaks under 0.9).
    #[arg(value_parser = num::real(0.01, 1000.0, ""), long, default_value_t = 1.0, value_name = "G")]
    pub signal_gain: f64,
    /// Output rate, Hz.
    #[arg(value_parser = num::whole::<u32>(8000, 192_000), long, default_value_t = crate::sound::DEFAULT_RATE_HZ, value_name = "HZ")]
    pub rate: u32,
    /// The WAV file (16-bit PCM mono).
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
}

/// Options of `leadline emg`.
#[derive(Debug, Clone, Args)]
pub struct EmgArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Signal to analyse: 0-based index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// Resting baseline for the onset threshold, s: START,END (default: the quietest second).
    #[arg(value_parser = num::time_s(), long, value_name = "START,END", value_delimiter = ',')]
    pub baseline: Option<Vec<f64>>,
    /// A maximum voluntary contraction, s: START,END; each contraction's RMS is then also
    /// given as % of it.
    #[arg(value_parser = num::time_s(), long, value_name = "START,END", value_delimiter = ',')]
    pub mvc: Option<Vec<f64>>,
    /// Linear envelope's low-pass corner, Hz (2–10).
    #[arg(value_parser = num::real(0.5, 50.0, "Hz"), long, default_value_t = 6.0, value_name = "HZ")]
    pub envelope_hz: f64,
    /// Moving-RMS window, ms (50–250).
    #[arg(value_parser = num::real(10.0, 2000.0, "ms"), long, default_value_t = 100.0, value_name = "MS")]
    pub rms_ms: f64,
    /// Onset threshold: baseline mean + K standard deviations.
    #[arg(value_parser = num::real(0.5, 20.0, ""), long, default_value_t = 3.0, value_name = "K")]
    pub k: f64,
    /// Band-pass corners, Hz: LOW,HIGH.
    #[arg(value_parser = num::corner_hz(), long, value_name = "LOW,HIGH", value_delimiter = ',', default_values_t = [20.0, 450.0])]
    pub band: Vec<f64>,
    /// Mains notch at this frequency and its harmonics in the band, Hz (50 or 60).
    #[arg(value_parser = num::mains_hz(), long, value_name = "HZ")]
    pub notch: Option<f64>,
    /// CSV: time_s,envelope_uv,rms_uv.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// JSON: bursts (on_s, off_s, peak_uv, rms_uv, mean_hz, median_hz, pct_mvc),
    /// median_hz_trend, baseline and threshold.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
}

/// Options of `leadline measure`.
#[derive(Debug, Clone, Args)]
pub struct MeasureArgs {
    #[command(subcommand)]
    pub what: MeasureWhat,
}

/// What `leadline measure` measures.
#[derive(Debug, Clone, Subcommand)]
pub enum MeasureWhat {
    /// Transfer function from a stimulus channel to an output channel (H1, coherence).
    Response(MeasureResponseArgs),
    /// A stepped sine on one channel: gain per steady step.
    Steps(MeasureStepsArgs),
    /// Input-referred noise with the inputs shorted: RMS, peak-to-peak, density, 1/f corner.
    Noise(MeasureNoiseArgs),
    /// Common-mode rejection from a common-mode sine of known amplitude.
    Cmrr(MeasureCmrrArgs),
}

/// Options of `measure response`.
#[derive(Debug, Clone, Args)]
pub struct MeasureResponseArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// The stimulus channel (generator or DAC), index or name.
    #[arg(long, value_name = "K|NAME")]
    pub stimulus: String,
    /// The front end's output channel, index or name.
    #[arg(long, value_name = "K|NAME")]
    pub output: String,
    /// Welch segment length (power of two, 256–16384); default about 8 s.
    #[arg(value_parser = num::whole::<usize>(256, 16_384), long, value_name = "N")]
    pub segment: Option<usize>,
    /// CSV: freq_hz,mag_db,phase_deg,coherence.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// JSON: corners_hz, passband_gain_db, coherent_range_hz.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// PNG of the measured response over the design (the chain flags).
    #[arg(long, value_name = "FILE")]
    pub png: Option<PathBuf>,
    /// The design to draw under the measurement.
    #[command(flatten)]
    pub chain: ChainArgs,
}

/// Options of `measure steps`.
#[derive(Debug, Clone, Args)]
pub struct MeasureStepsArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// The generator's amplitude at the electrodes, µV peak.
    #[arg(value_parser = num::real(0.1, 1e6, "µV"), long, value_name = "UV")]
    pub amplitude_uv: f64,
    /// Channel, index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// CSV: freq_hz,gain_db,amplitude_uv,start_s,end_s.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// PNG of the gains over the design (the chain flags).
    #[arg(long, value_name = "FILE")]
    pub png: Option<PathBuf>,
    #[command(flatten)]
    pub chain: ChainArgs,
}

/// Options of `measure noise`.
#[derive(Debug, Clone, Args)]
pub struct MeasureNoiseArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Band, Hz (zero-phase band-pass).
    #[arg(value_parser = num::corner_hz(), long, value_name = "LO,HI", value_delimiter = ',', default_values_t = [0.05, 150.0])]
    pub band: Vec<f64>,
    /// Channel, index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// Limit, µV peak-to-peak (default 30: recalled from memory of the ECG standards).
    #[arg(value_parser = num::real(0.1, 1e6, "µV"), long, default_value_t = 30.0, value_name = "UV")]
    pub limit_uv: f64,
    /// JSON: rms_uv, p2p_uv, density_uv_per_rthz, corner_hz, pass.
    #[arg(long, value_name = "FILE")]
    pub report: PathBuf,
}

/// Options of `measure cmrr`.
#[derive(Debug, Clone, Args)]
pub struct MeasureCmrrArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// The common-mode amplitude applied, µV RMS (1 V RMS = 1000000).
    #[arg(value_parser = num::real(1.0, 1e7, "µV"), long, value_name = "UV")]
    pub cm_uv: f64,
    /// Its frequency, Hz (default: the mains, 50).
    #[arg(value_parser = num::corner_hz(), long, default_value_t = 50.0, value_name = "HZ")]
    pub cm_hz: f64,
    /// The generator was stepped through frequencies by hand: one CMRR per steady step (the
    /// report gains `steps`).
    #[arg(long)]
    pub stepped: bool,
    /// Channel, index or name.
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// JSON: cmrr_db, diff_uv, uncertainty_db.
    #[arg(long, value_name = "FILE")]
    pub report: PathBuf,
}

/// Options of `leadline conform`.
#[derive(Debug, Clone, Args)]
pub struct ConformArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate the chain runs at, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
    /// Judge for diagnostic recording (0.67 Hz at −0.9 dB, 150 Hz) instead of monitoring
    /// (−3 dB, 40 Hz).
    #[arg(long)]
    pub diagnostic: bool,
    /// The chain runs forward and backward (recordings, `filter --zero-phase`).
    #[arg(long)]
    pub zero_phase: bool,
    /// Take the chain from this setup (TOML) when no stage flag is given.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// The report: impulse_undershoot_uv, impulse_slope_uv_per_s, gain_db_at_0_67_hz,
    /// upper_corner_hz, st_shift_uv, pass {item: bool}, advice.
    #[arg(long, value_name = "FILE")]
    pub report: PathBuf,
}

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

/// Options of `leadline parts`.
#[derive(Debug, Clone, Args)]
pub struct PartsArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate of the digital chain the parts stand in for, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
    /// Resistor series: E6, E12, E24, E48, E96, E192.
    #[arg(long, default_value = "E24", value_name = "SERIES")]
    pub series: String,
    /// A capacitor value you have, F (repeatable); default E6 values 1 nF–10 µF.
    #[arg(value_parser = num::real(1e-12, 0.01, "F"), long, value_name = "F")]
    pub capacitor: Vec<f64>,
    /// In-amp target gain.
    #[arg(value_parser = num::real(1.0, 10_000.0, "V/V"), long, value_name = "G")]
    pub inamp_gain: Option<f64>,
    /// In-amp constant K of G = 1 + K/Rg, ohms, from its datasheet.
    #[arg(value_parser = num::real(1.0, 1e7, "Ω"), long, value_name = "OHMS")]
    pub inamp_k: Option<f64>,
    /// Resistor tolerance, % (for the spread).
    #[arg(value_parser = num::real(0.0, 50.0, "%"), long, default_value_t = 1.0, value_name = "PCT")]
    pub r_tol: f64,
    /// Capacitor tolerance, %.
    #[arg(value_parser = num::real(0.0, 50.0, "%"), long, default_value_t = 5.0, value_name = "PCT")]
    pub c_tol: f64,
    /// Monte Carlo draws (at least 2000).
    #[arg(value_parser = num::whole::<usize>(100, 1_000_000), long, default_value_t = 2000, value_name = "N")]
    pub draws: usize,
    /// Output: parts.json.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Also write the gain budget (JSON) for this electrode offset.
    #[arg(long, value_name = "FILE")]
    pub budget: Option<PathBuf>,
    /// Electrode offset to tolerate, ± mV.
    #[arg(value_parser = num::real(0.0, 1000.0, "mV"), long, default_value_t = 300.0, value_name = "MV")]
    pub offset_mv: f64,
    /// Input bias current of your op-amps, A (for the offset it makes in the large resistors).
    #[arg(value_parser = num::real(0.0, 1e-3, "A"), long, default_value_t = 1e-9, value_name = "A")]
    pub bias_current: f64,
    /// Also write the schematic of the whole chain (SVG).
    #[arg(long, value_name = "FILE.svg")]
    pub schematic: Option<PathBuf>,
    /// Also write a SPICE netlist (VIN drives node in, the output is node out; ideal op-amps).
    #[arg(long, value_name = "FILE.cir")]
    pub netlist: Option<PathBuf>,
    /// Also write the bill of materials (CSV).
    #[arg(long, value_name = "FILE.csv")]
    pub bom: Option<PathBuf>,
    /// Also write the response of the chain built from these parts: freq_hz,mag_db,phase_deg.
    #[arg(long, value_name = "FILE.csv")]
    pub response: Option<PathBuf>,
}

/// Options of `leadline record`.
#[derive(Debug, Clone, Args)]
pub struct RecordArgs {
    /// Source: synth, serial:PATH[@BAUD][:ascii|:binary], udp:[ADDR:]PORT[?from=HOST[:PORT]],
    /// tcp:HOST:PORT or file:PATH (default: the --config setup's source, else the simulator).
    /// The last line on stdout is a JSON summary (frames, lost, duplicate, late, foreign, gaps,
    /// reconnects).
    #[arg(long, value_name = "SPEC")]
    pub source: Option<String>,
    /// Take the source, scaling, simulator and chain from this setup (TOML); --source and any
    /// filter flag given on the command line win.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// How long to record, s (the command exits after this even if nothing arrived).
    #[arg(value_parser = num::seconds(), long, value_name = "S")]
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
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: Option<f64>,
    /// The board's front end (a serial source's counts are scaled by it).
    #[command(flatten)]
    pub scale: ScaleArgs,
}

/// The recording an offline command reads, and what the file may not say about itself.
#[derive(Debug, Clone, Args)]
pub struct InputArgs {
    /// Recording: .csv/.txt (a time column, a `# fs=` line or --fs), .edf/.bdf (EDF, EDF+, BDF),
    /// .f32/.f64 raw little-endian (--fs, --channels), or a WFDB record's .hea.
    #[arg(long, value_name = "FILE")]
    pub input: PathBuf,
    /// Sample rate, Hz, for files that do not carry one.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: Option<f64>,
    /// Channels per frame of a raw input.
    #[arg(value_parser = num::whole::<usize>(1, 64), long, default_value_t = 1, value_name = "N")]
    pub channels: usize,
    /// Unit of the input values (and of a filtered output): V, mV, uV, or counts (ADC counts of
    /// a CSV or raw file, scaled by the --adc-* options or the --config setup's front end).
    #[arg(long, value_enum, default_value_t = FileUnitArg::Millivolts)]
    pub units: FileUnitArg,
    #[command(flatten)]
    pub scale: ScaleArgs,
    /// Take the front-end scaling (and, for `filter` without stage flags, the chain) from this
    /// setup (TOML).
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
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

    /// The setup of `--config`, if given (its unknown keys are reported on stderr).
    ///
    /// # Errors
    /// A setup that cannot be read or used is bad input.
    pub fn setup(&self) -> anyhow::Result<Option<crate::setup::Setup>> {
        load_setup(self.config.as_deref())
    }

    /// Reads the input and picks the signal `channel` names (index or name): a malformed file
    /// or a missing signal is bad input (exit 2), an unreadable one an I/O failure (exit 1).
    /// Counts are scaled to input-referred µV by the front end of the options or the setup.
    /// Signals the reader left out are named on stderr.
    ///
    /// # Errors
    /// As described.
    pub fn load(&self, channel: &str) -> anyhow::Result<(crate::store::Recording, usize)> {
        let setup = self.setup()?;
        let (mut rec, ch) = load_channel(&self.input, &self.read_options(), channel)?;
        if self.units == FileUnitArg::Counts {
            if !matches!(
                crate::store::extension_of(&self.input).as_str(),
                "csv" | "txt" | "tsv" | "f32" | "f64"
            ) {
                return Err(BadInput(format!(
                    "--units counts: {} carries physical units already; counts apply to CSV and raw files",
                    self.input.display()
                ))
                .into());
            }
            let base = setup.as_ref().map(|s| s.front_end.per_channel(s.scale));
            let fes = self.scale.front_ends(base)?.ok_or_else(|| {
                BadInput(
                    "--units counts needs the board: --adc-bits N --adc-vref V --frontend-gain G [--adc-zero mid|bipolar|COUNTS], or --config FILE".into(),
                )
            })?;
            for (k, c) in rec.channels.iter_mut().enumerate() {
                if let Some(fe) = crate::scale::for_channel(&fes, k) {
                    let fe = crate::scale::FrontEnd {
                        values: crate::scale::ValueKind::Counts,
                        ..*fe
                    };
                    for v in c.iter_mut() {
                        *v = fe.to_uv(*v, false);
                    }
                }
            }
            eprintln!(
                "counts scaled as {}",
                crate::scale::for_channel(&fes, ch).map_or(String::new(), |f| {
                    crate::scale::FrontEnd {
                        values: crate::scale::ValueKind::Counts,
                        ..*f
                    }
                    .describe()
                })
            );
        } else if self.scale.any() {
            return Err(BadInput(
                "--adc-* and --frontend-gain scale counts: add --units counts".into(),
            )
            .into());
        }
        for n in &rec.notes {
            eprintln!(
                "{}: {n}; --channel with its index or name reads it",
                self.input.display()
            );
        }
        Ok((rec, ch))
    }
}

/// Reads a setup for a command (unknown keys reported on stderr).
///
/// # Errors
/// A setup that cannot be read or used is bad input.
pub fn load_setup(path: Option<&std::path::Path>) -> anyhow::Result<Option<crate::setup::Setup>> {
    let Some(path) = path else { return Ok(None) };
    let loaded = crate::setup::Setup::load(path).map_err(|e| BadInput(e.to_string()))?;
    for w in &loaded.warnings {
        eprintln!("leadline: {}: {w}", path.display());
    }
    Ok(Some(loaded.setup))
}

/// The board's front end on the command line. Each option takes one value for every channel or
/// a comma-separated value per channel (`--frontend-gain 1000,1`).
#[derive(Debug, Clone, Args, Default)]
pub struct ScaleArgs {
    /// ADC resolution, bits (8–24).
    #[arg(value_parser = num::whole::<u32>(8, 24), long, value_name = "N", value_delimiter = ',')]
    pub adc_bits: Vec<u32>,
    /// ADC reference, V: a unipolar converter spans 0…V, a bipolar one −V…+V.
    #[arg(value_parser = num::real(0.01, 100.0, "V"), long, value_name = "V", value_delimiter = ',')]
    pub adc_vref: Vec<f64>,
    /// Count of a zero signal: mid (mid-scale, single-supply boards; the default), bipolar
    /// (two's-complement counts; 0 means the same), or a count.
    #[arg(value_parser = num::zero, long, value_name = "COUNTS|mid|bipolar", value_delimiter = ',')]
    pub adc_zero: Vec<num::ZeroArg>,
    /// Total gain from the electrodes to the ADC pin, V/V (in-amp × later stages).
    #[arg(value_parser = num::gain(), long, value_name = "G", value_delimiter = ',')]
    pub frontend_gain: Vec<f64>,
}

impl ScaleArgs {
    /// True when any option was given.
    pub fn any(&self) -> bool {
        !(self.adc_bits.is_empty()
            && self.adc_vref.is_empty()
            && self.adc_zero.is_empty()
            && self.frontend_gain.is_empty())
    }

    /// The front end per channel: `base` (from a setup) with these options on top. None when
    /// neither gives one.
    ///
    /// # Errors
    /// A missing option (with no setup to take it from), a bad zero, or an impossible converter.
    pub fn front_ends(
        &self,
        base: Option<Vec<crate::scale::FrontEnd>>,
    ) -> Result<Option<Vec<crate::scale::FrontEnd>>, BadInput> {
        use crate::scale::{FrontEnd, InputScale, ValueKind};
        if !self.any() {
            return Ok(base);
        }
        let n = [
            self.adc_bits.len(),
            self.adc_vref.len(),
            self.adc_zero.len(),
            self.frontend_gain.len(),
            base.as_ref().map_or(0, Vec::len),
        ]
        .into_iter()
        .max()
        .unwrap_or(1)
        .max(1);
        fn nth<T: Copy>(v: &[T], k: usize) -> Option<T> {
            v.get(k).or_else(|| v.last()).copied()
        }
        let mut out = Vec::with_capacity(n);
        for k in 0..n {
            let from = base
                .as_deref()
                .and_then(|b| crate::scale::for_channel(b, k))
                .copied();
            let need = |what: &str| {
                BadInput(format!(
                    "{what} is missing: counts need --adc-bits, --adc-vref and --frontend-gain (or --config)"
                ))
            };
            let bits = nth(&self.adc_bits, k)
                .or(from.map(|f| f.adc.bits))
                .ok_or_else(|| need("--adc-bits"))?;
            let vref = nth(&self.adc_vref, k)
                .or(from.map(|f| f.adc.vref_v))
                .ok_or_else(|| need("--adc-vref"))?;
            let gain = nth(&self.frontend_gain, k)
                .or(from.map(|f| f.adc.gain))
                .ok_or_else(|| need("--frontend-gain"))?;
            let zero = self.adc_zero.get(k).or_else(|| self.adc_zero.last());
            let mut adc = InputScale {
                bits,
                vref_v: vref,
                offset_counts: 0.0,
                gain,
                bipolar: from.is_some_and(|f| f.adc.bipolar),
            };
            match zero {
                None => {
                    adc.offset_counts = match from {
                        Some(f) if f.adc.bits == bits => f.adc.offset_counts,
                        _ => adc.default_zero(),
                    }
                }
                Some(num::ZeroArg::Mid) => {
                    adc.bipolar = false;
                    adc.offset_counts = adc.default_zero();
                }
                Some(num::ZeroArg::Bipolar) => {
                    adc.bipolar = true;
                    adc.offset_counts = 0.0;
                }
                Some(&num::ZeroArg::Counts(c)) => {
                    adc.bipolar = false;
                    adc.offset_counts = c;
                }
            }
            adc.validate()
                .map_err(|e| BadInput(format!("front end of channel {}: {e}", k + 1)))?;
            out.push(FrontEnd {
                values: ValueKind::Counts,
                adc,
            });
        }
        Ok(Some(out))
    }
}

/// Options of `leadline beats`.
#[derive(Debug, Clone, Args)]
pub struct BeatsArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Signal to analyse: 0-based index or name (every signal of an EDF/BDF, whatever its rate).
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
    /// Beats: CSV with sample,time_s,r_uv,search_back,decided_s.
    #[arg(long, value_name = "FILE")]
    pub out: PathBuf,
    /// Summary (JSON): beat count, mean heart rate, HRV (mean RR, SDNN, RMSSD, pNN50).
    #[arg(long, value_name = "FILE")]
    pub summary: Option<PathBuf>,
    /// The heart-rate readout once a second, as the monitor shows it: CSV with
    /// time_s,bpm,state,reason (state: settling, ok, no_beat, unreliable; bpm empty when no
    /// number is shown), quality_pct (the signal quality the monitor shows with it: noise,
    /// artefact, clipping) and regularity_pct (the share of successive intervals within 12 %;
    /// the rhythm, kept apart from the quality).
    #[arg(long, value_name = "FILE")]
    pub rate_out: Option<PathBuf>,
}

/// Options of `leadline spectrum`.
#[derive(Debug, Clone, Args)]
pub struct SpectrumArgs {
    #[command(flatten)]
    pub src: InputArgs,
    /// Welch segment length (power of two, 256–16384); default about 4 s of signal.
    #[arg(value_parser = num::whole::<usize>(256, 16_384), long, value_name = "N")]
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
    /// Signal to analyse: 0-based index or name (every signal of an EDF/BDF, whatever its rate).
    #[arg(long, default_value = "0", value_name = "K|NAME")]
    pub channel: String,
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
    /// UDP: binary datagrams decoded and put back in order, frames/s against 8 ch × 4 kHz.
    Net,
    /// `measure response` on a 60 s two-channel 1 kHz recording (the analysis, in process).
    Measure,
    /// Sound: the renderer (beat tone and signal, 48 kHz) on 60 s of a 1 kHz stream in 10 ms
    /// blocks, as the DSP thread runs it; and the EMG view of 20 s at 1 kHz.
    Sound,
}

/// Options of `leadline bench`.
#[derive(Debug, Clone, Args)]
pub struct BenchArgs {
    /// The figure to measure.
    #[arg(value_enum)]
    pub what: BenchWhat,
    /// Samples to process.
    #[arg(value_parser = num::whole::<usize>(1, 1_000_000_000), long, default_value_t = 10_000_000, value_name = "N")]
    pub samples: usize,
    /// WFDB record (.hea) for `bench beats`; without it a simulated 30-minute record is used.
    #[arg(long, value_name = "FILE")]
    pub record: Option<PathBuf>,
    /// `bench beats`: a folder of annotated WFDB records (NAME.hea with NAME.beats.csv) for the
    /// in-sample and the three-against-two held-out figures.
    #[arg(long, value_name = "DIR", default_value = "tests/data/mitdb")]
    pub annotated: PathBuf,
}

/// The filter chain on the command line. Each stage is used only when its corner is given.
#[derive(Debug, Clone, Args, Default)]
pub struct ChainArgs {
    /// High-pass corner (−3 dB), Hz.
    #[arg(value_parser = num::corner_hz(), long, value_name = "HZ")]
    pub highpass: Option<f64>,
    /// High-pass Butterworth order (1–8).
    #[arg(value_parser = num::order(), long, default_value_t = 2, value_name = "N")]
    pub highpass_order: u32,
    /// Mains notch frequency, Hz, or `auto` (filter only): the frequency and harmonics measured
    /// in the input's own spectrum, printed on stderr.
    #[arg(value_parser = num::notch, long, value_name = "HZ|auto")]
    pub notch: Option<num::NotchArg>,
    /// Notch Q (−3 dB bandwidth = frequency / Q).
    #[arg(value_parser = num::q(), long, default_value_t = 30.0, value_name = "Q")]
    pub notch_q: f64,
    /// Extra notches at harmonics 2… (0–4).
    #[arg(value_parser = num::whole::<u32>(0, 4), long, default_value_t = 0, value_name = "N")]
    pub notch_harmonics: u32,
    /// Low-pass corner (−3 dB), Hz.
    #[arg(value_parser = num::corner_hz(), long, value_name = "HZ")]
    pub lowpass: Option<f64>,
    /// Low-pass Butterworth order (1–8).
    #[arg(value_parser = num::order(), long, default_value_t = 4, value_name = "N")]
    pub lowpass_order: u32,
    /// Plain gain after the filters, V/V.
    #[arg(value_parser = num::gain(), long, default_value_t = 1.0, value_name = "G")]
    pub gain: f64,
}

impl ChainArgs {
    /// The notch frequency given, or None for none or `auto`.
    fn notch_hz(&self) -> Option<f64> {
        match self.notch {
            Some(num::NotchArg::Hz(f)) => Some(f),
            _ => None,
        }
    }

    /// True when `--notch auto` was given.
    pub fn notch_auto(&self) -> bool {
        self.notch == Some(num::NotchArg::Auto)
    }

    /// True when any stage's flag was given.
    pub fn any_stage(&self) -> bool {
        self.highpass.is_some() || self.notch.is_some() || self.lowpass.is_some()
    }

    /// Checks `--notch auto`: it needs an input to measure.
    ///
    /// # Errors
    /// [`BadInput`] naming the value.
    pub fn check_notch(&self, auto_allowed: bool) -> Result<(), BadInput> {
        if self.notch_auto() && !auto_allowed {
            return Err(BadInput(
                "--notch auto measures the input's mains: it works with `filter`; give a frequency here".into(),
            ));
        }
        Ok(())
    }

    /// The chain these flags describe (an automatic notch starts at 50 Hz until measured).
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
                mains_hz: self.notch_hz().unwrap_or(50.0),
                q: self.notch_q,
                harmonics: self.notch_harmonics,
                auto: self.notch_auto(),
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
    pub fn design(&self, fs: f64) -> Result<crate::dsp::Design, BadInput> {
        self.check_notch(false)?;
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
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
}

/// Options of `leadline response`.
#[derive(Debug, Clone, Args)]
pub struct ResponseArgs {
    #[command(flatten)]
    pub chain: ChainArgs,
    /// Sample rate, Hz.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: f64,
    /// Number of log-spaced frequencies from 0.01 Hz to just below Nyquist.
    #[arg(
        value_parser = num::whole::<usize>(2, 100_000),
        long,
        default_value_t = 512,
        value_name = "N",
        conflicts_with = "freqs"
    )]
    pub points: usize,
    /// Explicit frequencies, Hz, comma-separated.
    #[arg(value_parser = num::corner_hz(), long, value_name = "F1,F2,..", value_delimiter = ',')]
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
    /// ADC counts (input only), scaled by the front end.
    #[value(name = "counts")]
    Counts,
}

impl FileUnitArg {
    /// The store's unit to read with (counts are read as plain numbers and scaled afterwards).
    pub fn unit(self) -> crate::store::FileUnit {
        match self {
            FileUnitArg::Volts => crate::store::FileUnit::Volts,
            FileUnitArg::Millivolts => crate::store::FileUnit::Millivolts,
            FileUnitArg::Microvolts | FileUnitArg::Counts => crate::store::FileUnit::Microvolts,
        }
    }

    /// The unit an output file is written in (scaled counts come out in mV).
    pub fn output_unit(self) -> crate::store::FileUnit {
        match self {
            FileUnitArg::Counts => crate::store::FileUnit::Millivolts,
            other => other.unit(),
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
    /// Signal source: synth (the built-in simulator), serial:PATH[@BAUD][:ascii|:binary],
    /// udp:[ADDR:]PORT[?from=HOST[:PORT]] (a Wi-Fi board sends to us), tcp:HOST:PORT (we connect
    /// to a board), or file:PATH (replay).
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
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: Option<f64>,
    /// Simulator channels (1–8).
    #[arg(value_parser = num::whole::<usize>(1, 8), long, value_name = "N")]
    pub channels: Option<usize>,
    /// Close the window after this many seconds and exit 0 (smoke tests, screenshots).
    #[arg(value_parser = num::seconds(), long, value_name = "SECONDS")]
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
    #[arg(value_parser = num::real(0.5, 3600.0, "s"), long, value_name = "SECONDS")]
    pub bench: Option<f64>,
    /// With --bench: the beat tone and the signal's sound on (rendered and discarded when
    /// there is no sound card), to measure what sound costs.
    #[arg(long, requires = "bench")]
    pub bench_sound: bool,
    /// Start with the traces frozen (with --bench: the idle cost).
    #[arg(long)]
    pub paused: bool,
    /// Window size in logical pixels, WIDTHxHEIGHT.
    #[arg(value_parser = num::window_size, long, value_name = "WxH", default_value = "1280x800")]
    pub size: num::WindowSize,
    /// The board's front end (a serial source's counts are scaled by it; also in the monitor's
    /// Front end section).
    #[command(flatten)]
    pub scale: ScaleArgs,
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
    /// Measuring the built front end.
    Measure,
    /// Surface EMG (switches the monitor to EMG: the 20–450 Hz chain and the EMG view).
    Emg,
    /// Traces only.
    Traces,
    /// Measurement preset: simulator at 1 kHz, 1 channel, 10 s window, spectrum strip.
    Default,
    /// Measurement preset: simulator 8 channels at 2 kHz, 30 s window, spectrum strip.
    Heavy,
}

/// The simulator's rhythm on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum RhythmArg {
    Sinus,
    VentricularBigeminy,
    SlowAlternatingBigeminy,
    RapidAlternatingBigeminy,
    BidirectionalSystoles,
}

impl RhythmArg {
    /// The simulator's rhythm.
    pub fn rhythm(self) -> crate::sim::rhythm::Rhythm {
        use crate::sim::rhythm::Rhythm;
        match self {
            RhythmArg::Sinus => Rhythm::Sinus,
            RhythmArg::VentricularBigeminy => Rhythm::VentricularBigeminy,
            RhythmArg::SlowAlternatingBigeminy => Rhythm::SlowAlternatingBigeminy,
            RhythmArg::RapidAlternatingBigeminy => Rhythm::RapidAlternatingBigeminy,
            RhythmArg::BidirectionalSystoles => Rhythm::BidirectionalSystoles,
        }
    }
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
    #[arg(value_parser = num::rate_hz(), long, default_value_t = 500.0, value_name = "HZ")]
    pub fs: f64,
    /// Length of the stream, s (default 10; with --pty, until stopped).
    #[arg(value_parser = num::seconds(), long, value_name = "S")]
    pub seconds: Option<f64>,
    /// Channels (1–8).
    #[arg(value_parser = num::whole::<usize>(1, 8), long, default_value_t = 1, value_name = "N")]
    pub channels: usize,
    /// Mean heart rate, bpm.
    #[arg(value_parser = num::real(20.0, 300.0, "bpm"), long, default_value_t = 72.0, value_name = "BPM")]
    pub hr: f64,
    /// Heart-rate variability (standard deviation), bpm.
    #[arg(value_parser = num::real(0.0, 50.0, "bpm"), long, default_value_t = 1.0, value_name = "BPM")]
    pub hrv: f64,
    /// Random seed: the same seed and options give the same bytes.
    #[arg(value_parser = num::whole::<u64>(0, 4_294_967_295), long, default_value_t = 1, value_name = "N")]
    pub seed: u64,
    /// Mains frequency, Hz.
    #[arg(value_parser = num::mains_hz(), long, default_value_t = 50.0, value_name = "HZ")]
    pub mains: f64,
    /// Mains fundamental, RMS µV.
    #[arg(value_parser = num::real(0.0, 1e5, "µV"), long, default_value_t = 30.0, value_name = "UV")]
    pub mains_uv: f64,
    /// Respiration-like baseline wander, RMS µV.
    #[arg(value_parser = num::real(0.0, 1e5, "µV"), long, default_value_t = 60.0, value_name = "UV")]
    pub wander_uv: f64,
    /// Slow electrode drift, RMS µV.
    #[arg(value_parser = num::real(0.0, 1e5, "µV"), long, default_value_t = 40.0, value_name = "UV")]
    pub drift_uv: f64,
    /// Broadband muscle-like noise, RMS µV.
    #[arg(value_parser = num::real(0.0, 1e5, "µV"), long, default_value_t = 8.0, value_name = "UV")]
    pub noise_uv: f64,
    /// Electrode offset, mV (DC).
    #[arg(value_parser = num::real(0.0, 1000.0, "mV"), long, default_value_t = 25.0, value_name = "MV")]
    pub offset_mv: f64,
    /// R-wave amplitude, mV.
    #[arg(value_parser = num::real(0.05, 10.0, "mV"), long, default_value_t = 1.2, value_name = "MV")]
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
    /// The heart's rhythm: sinus (the model, at --hr), or a standard irregular-rhythm case
    /// (expected readings: ventricular-bigeminy 80, slow-alternating-bigeminy 60,
    /// rapid-alternating-bigeminy 120, bidirectional-systoles 90 bpm).
    #[arg(long, value_enum, default_value_t = RhythmArg::Sinus)]
    pub rhythm: RhythmArg,
    /// A contracting muscle under the electrodes (surface EMG): contractions of --force % every
    /// --contract-s + --rest-s seconds, the heart's signal reduced to --ecg-share. Use --fs 1000
    /// or more.
    #[arg(long)]
    pub muscle: bool,
    /// Contraction force, % of maximum (RMS at 100 %: --full-uv).
    #[arg(value_parser = num::percent(), long, default_value_t = 40.0, value_name = "PCT")]
    pub force: f64,
    /// RMS of a full-force contraction at the electrodes, µV.
    #[arg(value_parser = num::real(1.0, 1e5, "µV"), long, default_value_t = 600.0, value_name = "UV")]
    pub full_uv: f64,
    /// Length of each contraction, s.
    #[arg(value_parser = num::real(0.1, 600.0, "s"), long, default_value_t = 2.0, value_name = "S")]
    pub contract_s: f64,
    /// Rest between contractions, s.
    #[arg(value_parser = num::real(0.0, 600.0, "s"), long, default_value_t = 3.0, value_name = "S")]
    pub rest_s: f64,
    /// Share of the heart's signal that reaches the electrodes with --muscle (0–1).
    #[arg(value_parser = num::real(0.0, 1.0, ""), long, default_value_t = 0.15, value_name = "SHARE")]
    pub ecg_share: f64,
    /// Fall of the muscle's upper spectral corner per contraction, % (fatigue).
    #[arg(value_parser = num::real(0.0, 50.0, "%"), long, default_value_t = 0.0, value_name = "PCT")]
    pub fatigue: f64,
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
    #[arg(value_parser = num::whole::<u32>(300, 4_000_000), long, default_value_t = 921_600, value_name = "B")]
    pub baud: u32,
    /// Send the stream in real time as UDP datagrams to HOST:PORT (binary frames unless
    /// --format ascii), as a Wi-Fi board would.
    #[arg(long, value_name = "HOST:PORT", conflicts_with_all = ["pty", "tcp_listen"])]
    pub udp: Option<String>,
    /// Listen on TCP PORT (loopback) and stream in real time to the client that connects, as a
    /// Wi-Fi board that listens would.
    #[arg(value_parser = num::whole::<u16>(1, 65_535), long, value_name = "PORT", conflicts_with = "pty")]
    pub tcp_listen: Option<u16>,
}

/// Reads a recording for an offline command and picks one channel: a malformed file or a missing
/// channel is bad input (exit 2), an unreadable one an I/O failure (exit 1).
///
/// # Errors
/// As described.
pub fn load_channel(
    input: &std::path::Path,
    opts: &crate::store::ReadOptions,
    channel: &str,
) -> anyhow::Result<(crate::store::Recording, usize)> {
    let as_input = |e: crate::store::StoreError| -> anyhow::Error {
        match e {
            crate::store::StoreError::Io { .. } => anyhow::Error::new(e),
            other => BadInput(other.to_string()).into(),
        }
    };
    let rec = crate::store::read(input, opts).map_err(as_input)?;
    let k = rec.find_signal(channel).map_err(BadInput)?;
    let list = rec.signal_list();
    if let Some(ch) = list[k].channel {
        return Ok((rec, ch));
    }
    // A signal at another rate (or not a voltage): read its own group.
    let rec = crate::store::edf::read_group(input, Some(k)).map_err(as_input)?;
    let ch = rec.signal_list()[k]
        .channel
        .ok_or_else(|| BadInput(format!("--channel {channel}: the signal could not be read")))?;
    Ok((rec, ch))
}

/// One signal of the input as the summaries list it.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SignalOut {
    /// 0-based index for `--channel`.
    pub index: usize,
    pub name: String,
    pub fs_hz: f64,
    pub unit: String,
    /// Read with the chosen channel (same rate and kind).
    pub loaded: bool,
}

/// Every signal of a recording, for the JSON summaries.
pub fn signals_out(rec: &crate::store::Recording) -> Vec<SignalOut> {
    rec.signal_list()
        .into_iter()
        .enumerate()
        .map(|(index, s)| SignalOut {
            index,
            name: s.name,
            fs_hz: s.fs_hz,
            unit: s.unit,
            loaded: s.channel.is_some(),
        })
        .collect()
}

/// A bad argument or input detected after parsing (exit code 2, like clap's own errors).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct BadInput(pub String);
