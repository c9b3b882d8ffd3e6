//! The source thread body for the simulator, and what a pipeline is told about its source.

use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use crossbeam_channel::{Receiver, Sender};

use crate::chan::send_blocking;

use crate::msg::{RawBlock, SampleUnit};
use crate::sim::synth::{Synth, SynthSettings};

/// Where a pipeline's samples come from.
#[derive(Debug, Clone, PartialEq)]
pub enum SourceSpec {
    /// The built-in simulator.
    Synth(SynthSettings),
    /// A serial port (or pseudo-terminal).
    Serial(super::serial::SerialSpec),
    /// A recording replayed at real-time pace.
    File(super::replay::ReplaySpec),
    /// A Wi-Fi board sending datagrams to us.
    Udp(super::net::UdpSpec),
    /// A Wi-Fi board that listens; we connect.
    Tcp(super::net::TcpSpec),
}

impl SourceSpec {
    /// The rate the source is expected to run at, Hz, when it says before its first block.
    pub fn nominal_fs_hz(&self) -> Option<f64> {
        match self {
            SourceSpec::Synth(s) => Some(s.fs_hz),
            SourceSpec::Serial(s) => s.fs_hz,
            SourceSpec::Udp(u) => u.fs_hz,
            SourceSpec::Tcp(t) => t.fs_hz,
            SourceSpec::File(_) => None,
        }
    }
}

/// A trailing `:ascii` or `:binary` names the wire format (else it is detected).
fn strip_format(rest: &str) -> (&str, Option<crate::wire::Format>) {
    if let Some(r) = rest.strip_suffix(":ascii") {
        (r, Some(crate::wire::Format::Text))
    } else if let Some(r) = rest.strip_suffix(":binary") {
        (r, Some(crate::wire::Format::Binary))
    } else {
        (rest, None)
    }
}

/// A source text that cannot be understood.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error(
    "source {spec:?}: {reason} (expected synth, serial:PATH[@BAUD][:ascii|:binary], udp:[ADDR:]PORT[?from=HOST[:PORT]], tcp:HOST:PORT or file:PATH)"
)]
pub struct SpecError {
    pub spec: String,
    pub reason: String,
}

impl SourceSpec {
    /// Short text for the status line.
    pub fn label(&self) -> String {
        match self {
            SourceSpec::Synth(s) => format!("simulator ({} ch)", s.channels),
            SourceSpec::Serial(s) => format!("serial {} @ {}", s.path, s.baud),
            SourceSpec::File(f) => format!("replay {}", f.path.display()),
            SourceSpec::Udp(u) => format!("UDP {}", u.bind),
            SourceSpec::Tcp(t) => format!("TCP {}:{}", t.host, t.port),
        }
    }

    /// Parses `synth` or `serial:PATH[@BAUD][:ascii|:binary]`. `fs_hz` and `scale` apply to a
    /// serial stream; decimal values on the wire are taken as mV.
    ///
    /// # Errors
    /// [`SpecError`] naming what is wrong.
    pub fn parse(
        text: &str,
        fs_hz: Option<f64>,
        scale: crate::scale::InputScale,
    ) -> Result<Self, SpecError> {
        let err = |reason: &str| SpecError {
            spec: text.to_string(),
            reason: reason.to_string(),
        };
        if text == "synth" {
            let mut s = SynthSettings::default();
            if let Some(fs) = fs_hz {
                s.fs_hz = fs;
            }
            return Ok(SourceSpec::Synth(s));
        }
        if let Some(path) = text.strip_prefix("file:") {
            if path.is_empty() {
                return Err(err("no file path"));
            }
            return Ok(SourceSpec::File(super::replay::ReplaySpec {
                path: path.into(),
                read: crate::store::ReadOptions {
                    fs_hz,
                    ..Default::default()
                },
            }));
        }
        if let Some(rest) = text.strip_prefix("udp:") {
            return udp_spec(rest, fs_hz, scale).map_err(err);
        }
        if let Some(rest) = text.strip_prefix("tcp:") {
            let (rest, format) = strip_format(rest);
            let Some((host, port)) = rest.rsplit_once(':') else {
                return Err(err("expected tcp:HOST:PORT"));
            };
            let port = port
                .parse::<u16>()
                .map_err(|_| err("the port is not a number 1–65535"))?;
            if host.is_empty() || port == 0 {
                return Err(err("expected tcp:HOST:PORT"));
            }
            return Ok(SourceSpec::Tcp(super::net::TcpSpec {
                host: host.trim_matches(['[', ']']).to_string(),
                port,
                format,
                fs_hz,
                scale,
                physical_to_uv: 1e3,
            }));
        }
        let Some(rest) = text.strip_prefix("serial:") else {
            return Err(err("unknown source kind"));
        };
        let (rest, format) = strip_format(rest);
        let (path, baud) = match rest.rsplit_once('@') {
            Some((p, b)) => (
                p,
                b.parse::<u32>()
                    .map_err(|_| err("the baud rate is not a number"))?,
            ),
            None => (rest, 115_200),
        };
        if path.is_empty() {
            return Err(err("no device path"));
        }
        if !(9600..=4_000_000).contains(&baud) {
            return Err(err("baud rate outside 9600–4 000 000"));
        }
        Ok(SourceSpec::Serial(super::serial::SerialSpec {
            path: path.to_string(),
            baud,
            format,
            fs_hz,
            scale,
            physical_to_uv: 1e3,
        }))
    }
}

/// `udp:PORT` or `udp:ADDR:PORT`, with `?from=IP[:PORT]` to admit one sender only.
fn udp_spec(
    rest: &str,
    fs_hz: Option<f64>,
    scale: crate::scale::InputScale,
) -> Result<SourceSpec, &'static str> {
    let (addr, from) = match rest.split_once("?from=") {
        Some((a, f)) => (a, Some(f)),
        None => (rest, None),
    };
    let bind: std::net::SocketAddr = match addr.parse::<u16>() {
        Ok(port) => std::net::SocketAddr::from(([0, 0, 0, 0], port)),
        Err(_) => addr
            .parse()
            .map_err(|_| "expected udp:PORT or udp:ADDR:PORT with a numeric address")?,
    };
    let from = match from {
        None => None,
        Some(f) => Some(match f.parse::<std::net::SocketAddr>() {
            Ok(a) => super::net::Peer::Addr(a),
            Err(_) => super::net::Peer::Ip(
                f.parse()
                    .map_err(|_| "from= takes an IP address, or IP:PORT")?,
            ),
        }),
    };
    Ok(SourceSpec::Udp(super::net::UdpSpec {
        bind,
        from,
        fs_hz,
        scale,
        physical_to_uv: 1e3,
    }))
}

/// How fast a generated or replayed source runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pacing {
    /// As a real device: one second of samples per second.
    RealTime,
    /// As fast as the consumer takes them (tests, offline generation).
    Unpaced,
}

/// Blocks are 10 ms of samples: small enough for a responsive display, large enough to keep
/// per-block overhead negligible.
const BLOCK_S: f64 = 0.010;
/// Longest the simulator sleeps before looking at the stop flag again.
const POLL: Duration = Duration::from_millis(20);

/// Runs the simulator until `stop` is set, the receiver hangs up, or `limit_frames` frames have
/// been produced. New settings arriving on `settings_rx` apply from the next block.
pub fn run_synth(
    mut synth: Synth,
    out: Sender<RawBlock>,
    settings_rx: Receiver<SynthSettings>,
    stop: &AtomicBool,
    pacing: Pacing,
    limit_frames: Option<u64>,
) {
    let fs = synth.settings().fs_hz;
    let channels = synth.settings().channels;
    let block_frames = ((fs * BLOCK_S).round() as usize).max(1);
    let start = Instant::now();
    let mut seq = 0u64;
    loop {
        while let Ok(new) = settings_rx.try_recv() {
            // Out-of-range settings are refused by the GUI before they get here; keep running.
            let _ = synth.update(new);
        }
        let first = synth.sample_index();
        let frames = match limit_frames {
            Some(limit) if first >= limit => return,
            Some(limit) => block_frames.min((limit - first) as usize),
            None => block_frames,
        };
        if pacing == Pacing::RealTime {
            // Release the block when its last sample would have been converted.
            let due = start + Duration::from_secs_f64((first + frames as u64) as f64 / fs);
            loop {
                if stop.load(Ordering::Relaxed) {
                    return;
                }
                let now = Instant::now();
                if now >= due {
                    break;
                }
                std::thread::sleep((due - now).min(POLL));
            }
        }
        let mut data = Vec::with_capacity(frames * channels);
        synth.fill(frames, &mut data);
        let block = RawBlock {
            seq,
            first_sample: first,
            fs_hz: fs,
            channels,
            unit: SampleUnit::Counts(synth.scale()),
            data,
            made_at: Instant::now(),
            gap_before: false,
        };
        seq += 1;
        if !send_blocking(&out, block, stop) {
            return;
        }
    }
}
