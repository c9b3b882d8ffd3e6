//! The `leadline` binary: parse the command line, hand over to the GUI or one CLI command.

#![forbid(unsafe_code)]

use std::process::ExitCode;

use leadline::cli::{Cli, Command, MonitorArgs};

fn main() -> ExitCode {
    let cli = Cli::parse_args();
    let result = match cli.command {
        None => leadline::cli::monitor::run(&MonitorArgs::default()),
        Some(Command::Monitor(a)) => leadline::cli::monitor::run(&a),
        Some(Command::Simulate(a)) => leadline::cli::simulate::run(&a),
        Some(Command::Sos(a)) => leadline::cli::sos::run(&a),
        Some(Command::Response(a)) => leadline::cli::response::run(&a),
        Some(Command::Filter(a)) => leadline::cli::filter::run(&a).map(|_| ()),
        Some(Command::Beats(a)) => leadline::cli::beats::run(&a).map(|_| ()),
        Some(Command::Emg(a)) => leadline::cli::emg::run(&a),
        Some(Command::Leads(a)) => leadline::cli::leads::run(&a),
        Some(Command::Sound(a)) => leadline::cli::sound::run(&a),
        Some(Command::Spectrum(a)) => leadline::cli::spectrum::run(&a),
        Some(Command::Parts(a)) => leadline::cli::parts::run(&a),
        Some(Command::Ports) => leadline::cli::record::ports(),
        Some(Command::Record(a)) => leadline::cli::record::run(&a),
        Some(Command::Bench(a)) => leadline::cli::bench::run(&a),
        Some(Command::ExportC(a)) => leadline::cli::export_c::run(&a),
        Some(Command::Conform(a)) => leadline::cli::conform::run(&a),
        Some(Command::Measure(a)) => leadline::cli::measure::run(&a),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            // The causes, each once: an error whose text already holds its source's text (a
            // file error says "PATH: No such file…") does not repeat it.
            let mut text = e.to_string();
            for cause in e.chain().skip(1) {
                let c = cause.to_string();
                if !text.contains(&c) {
                    text = format!("{text}: {c}");
                }
            }
            eprintln!("leadline: {text}");
            if e.downcast_ref::<leadline::cli::BadInput>().is_some()
                || e.downcast_ref::<leadline::source::SynthError>().is_some()
            {
                ExitCode::from(2)
            } else {
                ExitCode::from(1)
            }
        }
    }
}
