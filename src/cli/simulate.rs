//! `leadline simulate`: the simulator written to a file or standard output.

use std::fmt::Write as _;
use std::io::{self, Write};

use anyhow::{Context, Result};

use super::{SimFormat, SimulateArgs, Units};
use crate::source::{Synth, SynthSettings};
use crate::store::csv::time_text;
use crate::wire::ascii;

/// Simulator settings from the command line.
pub fn settings(a: &SimulateArgs) -> SynthSettings {
    SynthSettings {
        fs_hz: a.fs,
        channels: a.channels,
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
            for k in 1..=n_ch {
                let _ = write!(text, ",ch{k}");
            }
            text.push('\n');
        }
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
                for (i, frame) in buf.chunks_exact(n_ch).enumerate() {
                    text.push_str(&time_text(n + i as u64, s.fs_hz));
                    for &c in frame {
                        let uv = scale.counts_to_uv(c);
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
