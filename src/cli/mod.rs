//! Command-line front door: argument types (clap) and one module per command.

pub mod args;
pub mod beats;
pub mod bench;
pub mod conform;
pub mod emg;
pub mod export_c;
pub mod filter;
pub mod leads;
pub mod measure;
pub mod monitor;
pub mod num;
pub mod parts;
pub mod record;
pub mod response;
pub mod simulate;
pub mod sos;
pub mod sound;
pub mod spectrum;

use clap::{Parser, Subcommand};

pub use args::*;
pub use beats::BeatsArgs;
pub use bench::{BenchArgs, BenchWhat};
pub use conform::ConformArgs;
pub use emg::EmgArgs;
pub use export_c::{CFormatArg, ExportCArgs};
pub use filter::FilterArgs;
pub use measure::{
    MeasureArgs, MeasureCmrrArgs, MeasureNoiseArgs, MeasureResponseArgs, MeasureStepsArgs,
    MeasureWhat,
};
pub use monitor::{MonitorArgs, StartView};
pub use parts::PartsArgs;
pub use record::RecordArgs;
pub use response::ResponseArgs;
pub use simulate::{RhythmArg, SimFormat, SimulateArgs};
pub use sos::SosArgs;
pub use sound::SoundArgs;
pub use spectrum::SpectrumArgs;

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
    /// The standard leads of a recording of leads or electrode potentials (EDF+/BDF+/CSV), with
    /// the frontal QRS axis and the beats on lead II (JSON).
    #[command(after_help = CAUTION_HELP)]
    Leads(leads::LeadsArgs),
    /// Surface EMG of a recording: envelope and moving RMS (CSV), contractions with their
    /// amplitude, mean and median frequency, the fatigue trend and %MVC (JSON).
    #[command(after_help = CAUTION_HELP)]
    Emg(EmgArgs),
    /// Render what the monitor would play to a WAV file: a tone on each beat when it is decided
    /// (silent while the readout is unreliable) and/or the filtered signal.
    #[command(after_help = CAUTION_HELP)]
    Sound(SoundArgs),
}
