//! Network sources: a Wi-Fi board streaming over UDP (leadline listens) or TCP (leadline
//! connects; it never listens on TCP). Both carry the serial wire formats, detected from the
//! first bytes, and go through the same decoders and [`Blocker`] as serial.
//!
//! UDP: a datagram holds one or more whole frames (binary frames or text lines). Binary frames
//! are put back in order by [`Reorder`] (lost, duplicate and late frames counted; a loss is a gap
//! in the sample index, as on serial). Text lines carry no sequence number, so losses cannot be
//! counted there (the status says so). Only one sender is heard: the one given, or the first
//! that sends; datagrams from anyone else are counted as foreign and ignored.
//!
//! TCP: when the link drops, leadline reconnects every 0.5 s and marks the gap.

use std::io::ErrorKind;
use std::net::{IpAddr, SocketAddr, TcpStream, ToSocketAddrs, UdpSocket};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use crossbeam_channel::Sender;

use super::framing::Blocker;
use super::link::{self, Decoded, Link, StreamFormat};
use crate::chan::send_blocking;
use crate::msg::RawBlock;
use crate::scale::InputScale;
use crate::wire::reorder::{Reorder, ReorderStats};
use crate::wire::{Format, WireStats, ascii, binary};

/// How long a frame may wait for the ones before it.
pub const REORDER_WINDOW: Duration = Duration::from_millis(50);
/// Read timeout: how often the threads look at the stop flag.
const READ_TIMEOUT: Duration = Duration::from_millis(20);
/// Largest datagram read (the UDP maximum).
const DATAGRAM_MAX: usize = 65_536;

/// A UDP source.
#[derive(Debug, Clone, PartialEq)]
pub struct UdpSpec {
    /// Address to listen on (all interfaces by default).
    pub bind: SocketAddr,
    /// The only sender heard: an address, or an IP (any port). None: the first that sends.
    pub from: Option<Peer>,
    /// Sample rate if known.
    pub fs_hz: Option<f64>,
    /// Scale for integer (count) samples.
    pub scale: InputScale,
    /// µV per unit of decimal samples (1000 for mV).
    pub physical_to_uv: f64,
}

/// Who may send.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Peer {
    /// This address and port.
    Addr(SocketAddr),
    /// This host, any port.
    Ip(IpAddr),
}

impl Peer {
    fn admits(&self, a: SocketAddr) -> bool {
        match self {
            Peer::Addr(x) => *x == a,
            Peer::Ip(ip) => *ip == a.ip(),
        }
    }
}

/// A TCP source: a board that listens.
#[derive(Debug, Clone, PartialEq)]
pub struct TcpSpec {
    /// Host name or address.
    pub host: String,
    /// Port.
    pub port: u16,
    /// Wire format; None detects it.
    pub format: Option<Format>,
    /// Sample rate if known.
    pub fs_hz: Option<f64>,
    /// Scale for integer (count) samples.
    pub scale: InputScale,
    /// µV per unit of decimal samples.
    pub physical_to_uv: f64,
}

/// What a network source is doing, for the status bar and `record`'s summary.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NetStatus {
    /// Receiving (UDP: a sender is streaming; TCP: connected).
    pub connected: bool,
    /// Plain words: "listening on 0.0.0.0:5005", "connected to …", "cannot resolve …".
    pub message: String,
    /// A failure that ended the source (port in use, name that does not resolve).
    pub error: Option<String>,
    /// The sender streaming (UDP) or the peer (TCP).
    pub peer: Option<SocketAddr>,
    /// Datagrams taken (UDP).
    pub datagrams: u64,
    /// Bytes taken.
    pub bytes: u64,
    /// Datagrams from another sender, ignored.
    pub foreign: u64,
    /// Datagrams with no frame in them (empty, garbage, too large).
    pub empty: u64,
    /// Ordering counters (UDP binary frames).
    pub order: ReorderStats,
    /// Decoder counters.
    pub wire: WireStats,
    /// The format in use, once known.
    pub format: Option<Format>,
    /// Text over UDP: frames carry no sequence number, so losses cannot be counted.
    pub losses_uncountable: bool,
    /// Sample rate in use, and whether it was estimated, with its spread.
    pub fs_hz: Option<f64>,
    pub estimated: bool,
    pub spread_hz: f64,
    /// Times a TCP link dropped and came back.
    pub reconnects: u64,
}

/// Shared status handle.
pub type NetHandle = Arc<Mutex<NetStatus>>;

fn set(status: &NetHandle, f: impl FnOnce(&mut NetStatus)) {
    if let Ok(mut s) = status.lock() {
        f(&mut s);
    }
}

/// Opens the UDP socket (separately, so the caller can report a port in use at once).
///
/// # Errors
/// The OS's reason, with the address.
pub fn bind_udp(addr: SocketAddr) -> Result<UdpSocket, String> {
    let s = UdpSocket::bind(addr).map_err(|e| match e.kind() {
        ErrorKind::AddrInUse => format!(
            "UDP port {} is already in use by another program",
            addr.port()
        ),
        _ => format!("cannot listen on UDP {addr}: {e}"),
    })?;
    s.set_read_timeout(Some(READ_TIMEOUT))
        .map_err(|e| format!("UDP {addr}: {e}"))?;
    Ok(s)
}

/// Runs the UDP source until stopped or the receiver hangs up.
pub fn run_udp(
    spec: UdpSpec,
    socket: UdpSocket,
    out: Sender<RawBlock>,
    stop: &AtomicBool,
    status: NetHandle,
) {
    let local = socket
        .local_addr()
        .map_or(spec.bind.to_string(), |a| a.to_string());
    set(&status, |s| s.message = format!("listening on UDP {local}"));
    let mut buf = vec![0u8; DATAGRAM_MAX];
    let mut reorder = Reorder::new(REORDER_WINDOW);
    let mut blocker = Blocker::new(spec.fs_hz, spec.scale, spec.physical_to_uv);
    let mut text = ascii::Decoder::new();
    let mut wire_stats = WireStats::default();
    let mut format: Option<Format> = None;
    let mut sender = spec.from;
    let (mut frames, mut ordered, mut blocks) = (Vec::new(), Vec::new(), Vec::new());
    while !stop.load(Ordering::Relaxed) {
        let now;
        match socket.recv_from(&mut buf) {
            Ok((n, from)) => {
                now = Instant::now();
                let admitted = sender.is_none_or(|s| s.admits(from));
                if !admitted {
                    set(&status, |s| s.foreign += 1);
                    continue;
                }
                if sender.is_none() {
                    sender = Some(Peer::Addr(from));
                }
                let bytes = &buf[..n];
                let fmt = *format.get_or_insert_with(|| {
                    if binary::contains_valid_frame(bytes) {
                        Format::Binary
                    } else {
                        Format::Text
                    }
                });
                frames.clear();
                decode(bytes, fmt, &mut text, &mut frames, &mut wire_stats);
                let empty = frames.is_empty();
                for f in frames.drain(..) {
                    reorder.push(f, now, &mut ordered);
                }
                set(&status, |s| {
                    s.connected = true;
                    s.peer = Some(from);
                    s.datagrams += 1;
                    s.bytes += n as u64;
                    s.empty += u64::from(empty);
                    s.format = Some(fmt);
                    s.losses_uncountable = fmt == Format::Text;
                    s.message = format!("receiving from {from} on UDP {local}");
                });
            }
            Err(e)
                if matches!(
                    e.kind(),
                    ErrorKind::WouldBlock | ErrorKind::TimedOut | ErrorKind::Interrupted
                ) =>
            {
                now = Instant::now();
            }
            Err(e) => {
                // A datagram larger than the buffer, an ICMP error on some systems: skip it.
                now = Instant::now();
                set(&status, |s| {
                    s.empty += 1;
                    s.message = format!("UDP {local}: {e}");
                });
            }
        }
        reorder.release(now, &mut ordered);
        blocks.clear();
        if !ordered.is_empty() {
            blocker.push(&mut ordered, now, text.fs_hz(), &mut blocks);
            ordered.clear();
        }
        let order = reorder.stats();
        let rate = blocker.rate();
        set(&status, |s| {
            s.order = order;
            s.wire = wire_stats;
            if let Some(r) = rate {
                s.fs_hz = Some(r.fs_hz);
                s.estimated = r.estimated;
                s.spread_hz = r.spread_hz;
            }
        });
        for b in blocks.drain(..) {
            if !send_blocking(&out, b, stop) {
                return;
            }
        }
    }
}

/// One datagram's frames, in its format.
fn decode(
    bytes: &[u8],
    fmt: Format,
    text: &mut ascii::Decoder,
    frames: &mut Vec<crate::wire::Frame>,
    wire_stats: &mut WireStats,
) {
    match fmt {
        Format::Binary => binary::decode_datagram(bytes, frames, wire_stats),
        Format::Text => {
            text.push(bytes, frames);
            // A datagram is whole lines: a last line without its end is complete.
            if bytes.last().is_some_and(|&b| b != b'\n') {
                text.push(b"\n", frames);
            }
            *wire_stats = text.stats();
        }
    }
}

/// Resolves "HOST:PORT".
///
/// # Errors
/// A text that is not HOST:PORT, or a host that does not resolve.
pub fn resolve_addr(text: &str) -> Result<SocketAddr, String> {
    let Some((host, port)) = text.rsplit_once(':') else {
        return Err(format!("{text}: expected HOST:PORT"));
    };
    let port = port
        .parse::<u16>()
        .map_err(|_| format!("{text}: the port is not a number 1–65535"))?;
    resolve(host.trim_matches(['[', ']']), port)
}

/// Resolves a TCP peer.
///
/// # Errors
/// "cannot resolve HOST" with the OS's reason.
pub fn resolve(host: &str, port: u16) -> Result<SocketAddr, String> {
    (host, port)
        .to_socket_addrs()
        .map_err(|e| format!("cannot resolve {host}: {e}"))?
        .next()
        .ok_or_else(|| format!("cannot resolve {host}: no address"))
}

/// A TCP connection to a board as a [`Link`]: connected again every half second while it is
/// down.
struct TcpLink {
    spec: TcpSpec,
    status: NetHandle,
    peer: Option<SocketAddr>,
}

impl Link for TcpLink {
    type Stream = TcpStream;

    fn open(&mut self) -> Result<TcpStream, String> {
        let addr = resolve(&self.spec.host, self.spec.port).inspect_err(|e| {
            set(&self.status, |s| {
                s.connected = false;
                s.message.clone_from(e);
                s.error = Some(e.clone());
            });
        })?;
        let stream = TcpStream::connect_timeout(&addr, Duration::from_secs(2)).map_err(|e| {
            let why = format!("waiting for {addr}: {e}");
            set(&self.status, |s| {
                s.connected = false;
                s.message.clone_from(&why);
            });
            why
        })?;
        let _ = stream.set_read_timeout(Some(READ_TIMEOUT));
        let _ = stream.set_nodelay(true);
        self.peer = Some(addr);
        Ok(stream)
    }

    fn opened(&mut self, again: bool) {
        let peer = self.peer;
        set(&self.status, |s| {
            s.reconnects += u64::from(again);
            s.connected = true;
            s.error = None;
            s.peer = peer;
            s.message = format!(
                "connected to {}",
                peer.map_or(String::new(), |p| p.to_string())
            );
        });
    }

    fn lost(&mut self, why: &str) {
        let peer = self.peer.map_or(String::new(), |p| p.to_string());
        set(&self.status, |s| {
            s.connected = false;
            s.message = format!("link to {peer} lost: {why}; reconnecting");
        });
    }

    fn decoded(&mut self, d: &Decoded) {
        set(&self.status, |s| {
            s.bytes += d.bytes as u64;
            s.wire = d.wire;
            s.format = d.format;
            if let Some(r) = d.rate {
                s.fs_hz = Some(r.fs_hz);
                s.estimated = r.estimated;
                s.spread_hz = r.spread_hz;
            }
        });
    }
}

/// Runs the TCP source: connects, reads until the link drops, reconnects every 0.5 s.
pub fn run_tcp(spec: TcpSpec, out: Sender<RawBlock>, stop: &AtomicBool, status: NetHandle) {
    let how = StreamFormat {
        format: spec.format,
        fs_hz: spec.fs_hz,
        scale: spec.scale,
        physical_to_uv: spec.physical_to_uv,
    };
    link::run(
        &mut TcpLink {
            spec,
            status,
            peer: None,
        },
        how,
        &out,
        stop,
    );
}

/// The source text of a network source, as `--source` and setups write it.
pub fn spec_text(spec: &super::SourceSpec) -> String {
    match spec {
        super::SourceSpec::Udp(u) => {
            let addr = if u.bind.ip().is_unspecified() {
                u.bind.port().to_string()
            } else {
                u.bind.to_string()
            };
            match u.from {
                Some(Peer::Addr(a)) => format!("udp:{addr}?from={a}"),
                Some(Peer::Ip(ip)) => format!("udp:{addr}?from={ip}"),
                None => format!("udp:{addr}"),
            }
        }
        super::SourceSpec::Tcp(t) => format!("tcp:{}:{}", t.host, t.port),
        other => other.label(),
    }
}
