//! `leadline simulate`: the simulator written to a file or standard output.

use clap::{Args, ValueEnum};

use super::Units;
use super::num;
use crate::source::{Synth, SynthSettings};
use crate::store::csv::time_text;
use crate::wire::ascii;
use anyhow::{Context, Result};
use std::fmt::Write as _;
use std::io::{self, Write};

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
    /// A board of many leads, the heart as a dipole seen by each (after Sameni et al. 2007):
    /// 2 (leads I, II), 8 (I, II, V1–V6), 9 (electrodes RA, LA, LL, V1–V6) channels as the board
    /// sends them, or 12: the twelve standard leads derived from the eight (CSV only, columns I …
    /// V6). Overrides --channels.
    #[arg(long, value_name = "N", value_parser = ["2", "8", "9", "12"])]
    pub leads: Option<String>,
    /// The frontal QRS axis of the many-lead heart, degrees (−180…180).
    #[arg(value_parser = num::real(-180.0, 180.0, "°"), long, default_value_t = 60.0, value_name = "DEG")]
    pub axis_deg: f64,
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

/// The board's lead set for `--leads` (12 is derived from the eight leads).
fn lead_set(a: &SimulateArgs) -> Option<crate::leads::LeadSet> {
    use crate::leads::LeadSet;
    match a.leads.as_deref() {
        Some("2") => Some(LeadSet::Limb2),
        Some("8" | "12") => Some(LeadSet::Leads8),
        Some("9") => Some(LeadSet::Electrodes9),
        _ => None,
    }
}

/// Simulator settings from the command line.
pub fn settings(a: &SimulateArgs) -> SynthSettings {
    let heart_leads = lead_set(a);
    SynthSettings {
        fs_hz: a.fs,
        channels: heart_leads.map_or(a.channels, |s| s.inputs().len()),
        heart_leads,
        axis_deg: a.axis_deg,
        seed: a.seed,
        hr_bpm: a.hr,
        hrv_bpm: a.hrv,
        r_mv: a.r_mv,
        mains_hz: a.mains,
        mains_uv: a.mains_uv,
        wander_uv: a.wander_uv,
        drift_uv: a.drift_uv,
        noise_uv: a.noise_uv,
        offset_mv: a.offset_mv,
        charger: a.charger,
        inverted: a.inverted,
        lead_off: a.lead_off,
        rhythm: a.rhythm.rhythm(),
        muscle: a.muscle.then_some(crate::sim::muscle::MuscleSettings {
            force_pct: a.force,
            full_uv: a.full_uv,
            on_s: a.contract_s,
            rest_s: a.rest_s,
            ecg_share: a.ecg_share,
            fatigue_pct: a.fatigue,
            ..Default::default()
        }),
        ..SynthSettings::default()
    }
}

/// The CSV columns: the leads' or electrodes' names with --leads, else ch1, ch2, …
fn column_names(a: &SimulateArgs, channels: usize) -> Vec<String> {
    match (a.leads.as_deref(), lead_set(a)) {
        (Some("12"), _) => crate::leads::TWELVE.iter().map(|s| s.to_string()).collect(),
        (_, Some(set)) => set.inputs().iter().map(|s| s.to_string()).collect(),
        _ => (1..=channels).map(|k| format!("ch{k}")).collect(),
    }
}

/// Writes the whole stream to `out`. Returns the number of frames written.
///
/// # Errors
/// Bad settings (as [`crate::source::SynthError`]) or a write failure.
pub fn write_stream(a: &SimulateArgs, out: &mut dyn Write) -> Result<u64> {
    let seconds = a.seconds.unwrap_or(10.0);
    if !(seconds.is_finite() && seconds > 0.0) {
        return Err(
            super::BadInput(format!("--seconds {seconds} must be a positive number")).into(),
        );
    }
    let s = settings(a);
    let mut synth = Synth::new(s.clone())?;
    let scale = synth.scale();
    let total = (seconds * s.fs_hz).round() as u64;
    let n_ch = s.channels;
    let mut text = String::new();
    match a.format {
        SimFormat::Ascii => {
            let note = format!(
                "leadline simulator seed={} hr={} mains={}Hz/{}uV charger={}",
                s.seed, s.hr_bpm, s.mains_hz, s.mains_uv, s.charger
            );
            text.push_str(&ascii::header(s.fs_hz, n_ch, &scale, &note));
        }
        SimFormat::Binary => {}
        SimFormat::Csv => {
            text.push_str("time_s");
            for name in column_names(a, n_ch) {
                let _ = write!(text, ",{name}");
            }
            text.push('\n');
        }
    }
    let twelve = a.leads.as_deref() == Some("12");
    if twelve && (a.format != SimFormat::Csv || a.units == Units::Counts) {
        return Err(super::BadInput(
            "--leads 12 writes the derived leads as CSV in volts; a board sends --leads 8 or 9"
                .into(),
        )
        .into());
    }
    let mut buf = Vec::new();
    let mut bin = Vec::new();
    let mut n = 0u64;
    while n < total {
        let frames = (total - n).min(4096);
        buf.clear();
        synth.fill(frames as usize, &mut buf);
        match a.format {
            SimFormat::Binary => {
                bin.clear();
                encode_binary(&buf, n_ch, n, &scale, &mut bin);
                out.write_all(&bin)?;
            }
            SimFormat::Ascii => ascii::encode_frames(&buf, n_ch, &mut text),
            SimFormat::Csv => {
                let mut derived = Vec::new();
                for (i, frame) in buf.chunks_exact(n_ch).enumerate() {
                    text.push_str(&time_text(n + i as u64, s.fs_hz));
                    let values: &[f64] = if twelve {
                        let uv: Vec<f64> = frame.iter().map(|&c| scale.counts_to_uv(c)).collect();
                        derived.clear();
                        crate::leads::LeadSet::Leads8.derive(&uv, &mut derived);
                        &derived
                    } else {
                        frame
                    };
                    for &c in values {
                        let uv = if twelve { c } else { scale.counts_to_uv(c) };
                        let _ = match a.units {
                            Units::Counts => write!(text, ",{}", c as i64),
                            Units::Volts => write!(text, ",{:.10}", uv * 1e-6),
                            Units::Millivolts => write!(text, ",{:.6}", uv * 1e-3),
                            Units::Microvolts => write!(text, ",{:.3}", uv),
                        };
                    }
                    text.push('\n');
                }
            }
        }
        out.write_all(text.as_bytes())?;
        text.clear();
        n += frames;
    }
    out.flush()?;
    Ok(total)
}

/// Binary frames for interleaved counts; frame k of the stream gets sequence number k mod 65536.
/// Counts go out as i16 for converters up to 16 bits, else i24.
pub fn encode_binary(
    counts: &[f64],
    channels: usize,
    first: u64,
    scale: &crate::scale::InputScale,
    out: &mut Vec<u8>,
) {
    let format = if scale.bits <= 16 {
        crate::wire::binary::FORMAT_I16
    } else {
        crate::wire::binary::FORMAT_I24
    };
    let mut s = Vec::with_capacity(channels);
    for (k, frame) in counts.chunks_exact(channels.max(1)).enumerate() {
        s.clear();
        s.extend(frame.iter().map(|&c| c as i32));
        crate::wire::binary::encode((first + k as u64) as u16, &s, format, out);
    }
}

/// Writes everything, waiting while nobody reads the other side (the buffer is full).
fn write_patiently(port: &mut serialport::TTYPort, mut bytes: &[u8]) -> Result<()> {
    while !bytes.is_empty() {
        match port.write(bytes) {
            Ok(n) => bytes = &bytes[n..],
            Err(e)
                if matches!(
                    e.kind(),
                    io::ErrorKind::TimedOut
                        | io::ErrorKind::WouldBlock
                        | io::ErrorKind::Interrupted
                ) => {}
            Err(e) => return Err(anyhow::Error::new(e).context("writing to the pseudo-terminal")),
        }
    }
    Ok(())
}

/// Streams into a pseudo-terminal in real time, printing its path first.
fn run_pty(a: &SimulateArgs) -> Result<()> {
    use std::time::Duration;
    let s = settings(a);
    // Check the settings before a pseudo-terminal is opened.
    Synth::new(s.clone())?;
    let (mut master, slave) =
        serialport::TTYPort::pair().context("cannot open a pseudo-terminal")?;
    let name = serialport::SerialPort::name(&slave).unwrap_or_else(|| "?".into());
    println!("{name}");
    io::stdout().flush()?;
    let fmt = if a.format == SimFormat::Csv {
        SimFormat::Ascii
    } else {
        a.format
    };
    let spec = format!(
        "serial:{name}@{}:{}",
        a.baud,
        if fmt == SimFormat::Binary {
            "binary"
        } else {
            "ascii"
        }
    );
    eprintln!("streaming the simulator into {name}; try: leadline monitor --source {spec}");
    let frame_bytes = match fmt {
        SimFormat::Binary => 8 + 2 * s.channels,
        _ => 5 * s.channels + 1,
    } as f64;
    let needed = frame_bytes * s.fs_hz * 10.0;
    if needed > a.baud as f64 {
        eprintln!(
            "warning: this stream needs about {needed:.0} baud; {} baud would not carry it",
            a.baud
        );
    }
    serialport::SerialPort::set_timeout(&mut master, Duration::from_millis(100))?;
    stream_real_time(a, fmt, |bytes| write_patiently(&mut master, bytes))?;
    drop(slave);
    Ok(())
}

/// Streams the simulator in real time, 10 ms of frames at a time, through `send` (a
/// pseudo-terminal, a datagram, a TCP connection). Text gets the `# key=value` header first.
fn stream_real_time(
    a: &SimulateArgs,
    fmt: SimFormat,
    mut send: impl FnMut(&[u8]) -> Result<()>,
) -> Result<()> {
    use std::time::{Duration, Instant};
    let s = settings(a);
    let mut synth = Synth::new(s.clone())?;
    let scale = synth.scale();
    if fmt == SimFormat::Ascii {
        let h = ascii::header(s.fs_hz, s.channels, &scale, "leadline simulator");
        send(h.as_bytes())?;
    }
    let start = Instant::now();
    let limit = a.seconds.map(|v| (v * s.fs_hz).round() as u64);
    let block = ((s.fs_hz / 100.0).round() as usize).max(1);
    let (mut counts, mut bytes, mut text) = (Vec::new(), Vec::new(), String::new());
    loop {
        let n = synth.sample_index();
        if limit.is_some_and(|l| n >= l) {
            break;
        }
        let due = start + Duration::from_secs_f64((n + block as u64) as f64 / s.fs_hz);
        if let Some(wait) = due.checked_duration_since(Instant::now()) {
            std::thread::sleep(wait);
        }
        counts.clear();
        synth.fill(block, &mut counts);
        bytes.clear();
        match fmt {
            SimFormat::Binary => encode_binary(&counts, s.channels, n, &scale, &mut bytes),
            _ => {
                text.clear();
                ascii::encode_frames(&counts, s.channels, &mut text);
                bytes.extend_from_slice(text.as_bytes());
            }
        }
        send(&bytes)?;
    }
    Ok(())
}

/// Sends the simulator as datagrams to HOST:PORT, one 10 ms block per datagram.
fn run_udp(a: &SimulateArgs, to: &str) -> Result<()> {
    let fmt = if a.format == SimFormat::Csv {
        SimFormat::Binary
    } else {
        a.format
    };
    let socket = std::net::UdpSocket::bind(("127.0.0.1", 0))
        .or_else(|_| std::net::UdpSocket::bind(("0.0.0.0", 0)))
        .context("cannot open a UDP socket")?;
    let addr = crate::source::net::resolve_addr(to).map_err(super::BadInput)?;
    eprintln!(
        "streaming the simulator to UDP {addr} ({}); try: leadline monitor --source udp:{}",
        if fmt == SimFormat::Binary {
            "binary frames"
        } else {
            "text lines"
        },
        addr.port()
    );
    stream_real_time(a, fmt, |bytes| {
        // A listener that is not there yet (ICMP "refused") is not a reason to stop.
        match socket.send_to(bytes, addr) {
            Ok(_) => Ok(()),
            Err(e) if e.kind() == io::ErrorKind::ConnectionRefused => Ok(()),
            Err(e) => Err(anyhow::Error::new(e).context(format!("sending to {addr}"))),
        }
    })
}

/// Listens on TCP PORT (loopback) and streams the simulator to each client that connects, one
/// at a time, until the stream's length is reached.
fn run_tcp_listen(a: &SimulateArgs, port: u16) -> Result<()> {
    let fmt = if a.format == SimFormat::Csv {
        SimFormat::Binary
    } else {
        a.format
    };
    let listener = std::net::TcpListener::bind(("127.0.0.1", port)).map_err(|e| {
        if e.kind() == io::ErrorKind::AddrInUse {
            anyhow::Error::new(super::BadInput(format!(
                "TCP port {port} is already in use"
            )))
        } else {
            anyhow::Error::new(e).context(format!("cannot listen on TCP 127.0.0.1:{port}"))
        }
    })?;
    eprintln!(
        "the simulator listens on TCP 127.0.0.1:{port}; try: leadline monitor --source tcp:127.0.0.1:{port}"
    );
    let (mut conn, peer) = listener.accept().context("accepting a TCP client")?;
    eprintln!("streaming to {peer}");
    let _ = conn.set_nodelay(true);
    stream_real_time(a, fmt, |bytes| {
        conn.write_all(bytes)
            .map_err(|e| anyhow::Error::new(e).context(format!("sending to {peer}")))
    })
}

/// Runs the command.
///
/// # Errors
/// Bad settings, an unwritable output.
pub fn run(a: &SimulateArgs) -> Result<()> {
    if a.pty {
        return run_pty(a);
    }
    if let Some(to) = &a.udp {
        return run_udp(a, to);
    }
    if let Some(port) = a.tcp_listen {
        return run_tcp_listen(a, port);
    }
    if a.out == "-" {
        let stdout = io::stdout();
        let mut lock = io::BufWriter::new(stdout.lock());
        match write_stream(a, &mut lock) {
            // A reader that stops early (`| head`) is not a failure of ours.
            Err(e) if is_broken_pipe(&e) => Ok(()),
            other => other.map(|_| ()),
        }
    } else {
        let f =
            std::fs::File::create(&a.out).with_context(|| format!("cannot create {}", a.out))?;
        let mut w = io::BufWriter::new(f);
        let n = write_stream(a, &mut w).with_context(|| format!("writing {}", a.out))?;
        eprintln!("wrote {n} frames to {}", a.out);
        Ok(())
    }
}

fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.downcast_ref::<io::Error>()
        .is_some_and(|e| e.kind() == io::ErrorKind::BrokenPipe)
}
