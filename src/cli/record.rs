//! `leadline record`: a source, headless, through the recorder thread to a file for a fixed time
//! (format by extension); and `leadline ports`.

use std::path::PathBuf;

use clap::Args;

use super::args::*;
use super::num;
use super::{BadInput, Units};
use crate::dsp::ChainSettings;
use crate::pipeline::{Pipeline, PipelineConfig};
use crate::recorder::{RecordFormat, RecordRequest, RecordValues, RecorderCommand};
use crate::scale::{FrontEnd, InputScale};
use crate::source::{Pacing, SourceSpec};
use anyhow::{Result, bail};
use std::sync::Arc;
use std::time::{Duration, Instant};

/// Options of `leadline record`.
#[derive(Debug, Clone, Args)]
pub struct RecordArgs {
    /// Source: synth, serial:PATH[@BAUD][:ascii|:binary], udp:[ADDR:]PORT[?from=HOST[:PORT]],
    /// tcp:HOST:PORT or file:PATH (default: the --config setup's source, else the simulator).
    /// The last line on stdout is a JSON summary (frames, lost, duplicate, late, foreign, gaps,
    /// reconnects).
    #[arg(long, value_name = "SPEC")]
    pub source: Option<String>,
    #[command(flatten)]
    pub leads: LeadArgs,
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

/// The JSON summary `record` prints last.
#[derive(Debug, serde::Serialize)]
struct Summary {
    out: String,
    /// Frames of data the file holds.
    frames: u64,
    /// Frames of padding after the data (EDF/BDF fill their last record; marked in the file).
    padded_frames: u64,
    lost: u64,
    duplicate: u64,
    late: u64,
    foreign: u64,
    gaps: u64,
    reconnects: u64,
    /// False for text over UDP (no sequence numbers).
    losses_countable: bool,
    /// The sender (UDP) or peer (TCP).
    peer: Option<String>,
}

/// Lists serial ports.
///
/// # Errors
/// Never; an empty system prints a line saying so.
pub fn ports() -> Result<()> {
    let p = crate::source::serial::list_ports();
    if p.is_empty() {
        println!("no serial ports found");
    }
    for name in p {
        println!("{name}");
    }
    Ok(())
}

/// The source, the chain (flags over the setup) and the board's front end.
fn source_and_chain(a: &RecordArgs) -> Result<(SourceSpec, ChainSettings, Option<Vec<FrontEnd>>)> {
    let setup = super::load_setup(a.config.as_deref())?;
    let front_ends = a
        .scale
        .front_ends(setup.as_ref().map(|s| s.front_end.per_channel(s.scale)))?;
    let scale = front_ends
        .as_ref()
        .and_then(|f| f.first())
        .map_or_else(InputScale::default, |f| f.adc);
    let spec = match (&a.source, &setup) {
        (Some(text), _) => SourceSpec::parse(text, a.fs, scale).map_err(|e| e.to_string()),
        (None, Some(s)) => s.source_spec(),
        (None, None) => SourceSpec::parse("synth", a.fs, scale).map_err(|e| e.to_string()),
    }
    .map_err(BadInput)?;
    a.chain.check_notch(true)?;
    let flags_given = a.chain.any_stage();
    let chain = match &setup {
        Some(s) if !flags_given => s.chain,
        _ => a.chain.settings(),
    };
    // The board's front end applies to a board; the simulator models its own.
    let front_end = front_ends.filter(|_| {
        matches!(
            spec,
            SourceSpec::Serial(_) | SourceSpec::Udp(_) | SourceSpec::Tcp(_)
        )
    });
    if a.scale.any() && front_end.is_none() {
        eprintln!(
            "leadline: the --adc-* and --frontend-gain options apply to a board's stream, not to {}",
            spec.label()
        );
    }
    Ok((spec, chain, front_end))
}

/// What the recorder is asked to write.
fn request(a: &RecordArgs, chain: &ChainSettings) -> RecordRequest {
    let mut req = RecordRequest::new(&a.out);
    req.values = match (a.units, a.filtered) {
        (Units::Counts, _) => RecordValues::Received,
        (_, true) => RecordValues::Filtered,
        (_, false) => RecordValues::Raw,
    };
    req.csv_uv_per_unit = match a.units {
        Units::Volts => 1e6,
        Units::Millivolts | Units::Counts => 1e3,
        Units::Microvolts => 1.0,
    };
    if a.filtered {
        req.prefilter = chain.describe();
    }
    req
}

/// Waits for the stream's first snapshot (at most 5 s): a lead set that needs more channels
/// than the source has is refused before anything is written.
fn refuse_a_lead_set_too_large(pipeline: &Pipeline) -> Result<()> {
    let deadline = Instant::now() + Duration::from_secs(5);
    while Instant::now() < deadline {
        if let Some(s) = pipeline.latest_snapshot() {
            if let Some(e) = s.lead_error {
                return Err(BadInput(e).into());
            }
            if s.leads.is_some() {
                return Ok(());
            }
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    Ok(())
}

/// The summary line of a finished recording: what the file holds and what the link lost.
fn summary(
    a: &RecordArgs,
    status: &crate::recorder::RecorderStatus,
    net: Option<&crate::source::net::NetStatus>,
    serial: Option<&crate::source::serial::SerialStatus>,
    stats: Option<&crate::msg::Stats>,
) -> Summary {
    Summary {
        out: a.out.display().to_string(),
        frames: status.frames,
        padded_frames: status.padded_frames,
        lost: match (net, serial) {
            (Some(n), _) => n.order.lost,
            (None, Some(s)) => s.wire.lost_frames,
            _ => stats.map_or(0, |s| s.frames_lost),
        },
        duplicate: net.map_or(0, |n| n.order.duplicate),
        late: net.map_or(0, |n| n.order.late),
        foreign: net.map_or(0, |n| n.foreign),
        gaps: stats.map_or(0, |s| s.gaps),
        reconnects: net
            .map(|n| n.reconnects)
            .or(serial.map(|s| s.reconnects))
            .unwrap_or(0),
        losses_countable: !net.is_some_and(|n| n.losses_uncountable),
        peer: net.and_then(|n| n.peer).map(|p| p.to_string()),
    }
}

/// Runs the command.
///
/// # Errors
/// A bad source text, time or file type (bad input); a file that cannot be written, or a write
/// that failed part-way (what was written before stays readable).
pub fn run(a: &RecordArgs) -> Result<()> {
    if !(a.seconds.is_finite() && a.seconds > 0.0) {
        return Err(BadInput(format!(
            "--seconds {}: must be a positive number",
            a.seconds
        ))
        .into());
    }
    let format = RecordFormat::from_path(&a.out).map_err(BadInput)?;
    if a.units == Units::Counts && matches!(format, RecordFormat::Edf | RecordFormat::Bdf) {
        return Err(BadInput(
            "--units counts: EDF/BDF store input-referred µV; write counts to .csv, .f32 or .f64"
                .into(),
        )
        .into());
    }
    let (spec, chain, front_end) = source_and_chain(a)?;
    let lead_set = match a.leads.lead_set {
        Some(s) => Some(s),
        None => super::load_setup(a.config.as_deref())?.and_then(|s| s.lead_set()),
    };
    let pipeline = Pipeline::start(
        PipelineConfig {
            source: spec,
            chain,
            front_end,
            lead_set,
            pacing: Pacing::RealTime,
            recorder: true,
            display_hz: 2.0,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )?;
    if lead_set.is_some() {
        refuse_a_lead_set_too_large(&pipeline)?;
    }
    let req = request(a, &chain);
    pipeline.recorder(RecorderCommand::Start(req));
    for m in &a.marker {
        pipeline.recorder(RecorderCommand::Marker(m.clone()));
    }
    let deadline = Instant::now() + Duration::from_secs_f64(a.seconds);
    let mut failed = None;
    while Instant::now() < deadline {
        std::thread::sleep(Duration::from_millis(50));
        if let Some(s) = pipeline.recorder_status()
            && s.failed
        {
            failed = Some(s.message);
            break;
        }
    }
    let status = pipeline.finish_recording(Duration::from_secs(10));
    let serial = pipeline.serial_status();
    let net = pipeline.net_status();
    let stats = pipeline.latest_snapshot().map(|s| s.stats);
    drop(pipeline);
    let status = status.unwrap_or_default();
    let summary = summary(a, &status, net.as_ref(), serial.as_ref(), stats.as_ref());
    // The last line on stdout, for every source and outcome a script can read.
    println!("{}", serde_json::to_string(&summary)?);
    if let Some(e) = net.as_ref().and_then(|n| n.error.clone()) {
        bail!("{e}");
    }
    if let Some(m) = failed.or(status.failed.then(|| status.message.clone())) {
        bail!("{m}");
    }
    if status.frames == 0 {
        let why = serial
            .map(|s| s.message)
            .or(net.map(|n| n.message))
            .unwrap_or_default();
        // Exit 1: a script must be able to tell. The (empty) file stays as written.
        bail!(
            "no samples arrived from {} in {} s{}; nothing was written to {}",
            a.source.as_deref().unwrap_or("the setup's source"),
            a.seconds,
            if why.is_empty() {
                String::new()
            } else {
                format!(" ({why})")
            },
            a.out.display()
        );
    } else {
        eprintln!("recorded {} frames: {}", status.frames, status.message);
    }
    Ok(())
}
