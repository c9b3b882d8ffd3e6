//! The serial source: a microcontroller on a USB serial port (or a pseudo-terminal), read on its
//! own thread with a short timeout, decoded by [`crate::wire`], survived through unplugging.
//!
//! When the device vanishes the thread says "waiting for device", tries the same path again every
//! half second, and marks the gap on the next block (the recording shows it). The sample rate
//! comes from the user, else from a `# fs=` metadata line, else it is estimated from the arrival
//! of the first two seconds of frames (and shown as estimated, with its spread). The binary
//! sequence counter makes the sample index jump over lost frames, so the DSP thread counts them.

use std::io::Read;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use crossbeam_channel::Sender;

use super::run::send_blocking;
use crate::msg::{RawBlock, SampleUnit};
use crate::scale::InputScale;
use crate::wire::{self, Format, Frame, Values, WireStats, ascii, binary};

/// Read timeout: how long a read waits before the thread looks at the stop flag.
const READ_TIMEOUT: Duration = Duration::from_millis(50);
/// Retry period while the device is gone.
const REOPEN_EVERY: Duration = Duration::from_millis(500);
/// Arrival time used to estimate an unknown sample rate.
const ESTIMATE_S: f64 = 2.0;

/// What to open.
#[derive(Debug, Clone, PartialEq)]
pub struct SerialSpec {
    /// Device path (`/dev/ttyACM0`, `/dev/pts/3`, …).
    pub path: String,
    /// Baud rate, 9600–4 000 000 (a pseudo-terminal ignores it).
    pub baud: u32,
    /// Wire format; None detects it from the first bytes.
    pub format: Option<Format>,
    /// Sample rate if known.
    pub fs_hz: Option<f64>,
    /// Scale for integer (count) samples.
    pub scale: InputScale,
    /// µV per unit of decimal samples (1000 for mV).
    pub physical_to_uv: f64,
}

/// What the serial thread is doing, for the status bar.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SerialStatus {
    /// Open and reading.
    pub connected: bool,
    /// Plain words: "reading /dev/…", "waiting for device …".
    pub message: String,
    /// The format in use, once known.
    pub format: Option<Format>,
    /// Sample rate in use and whether it was estimated.
    pub fs_hz: Option<f64>,
    /// The rate was estimated from arrival times.
    pub estimated: bool,
    /// Spread of the estimate (standard deviation of per-read rates), Hz.
    pub spread_hz: f64,
    /// Decoder counters (bad CRC, malformed lines, lost frames …).
    pub wire: WireStats,
    /// Times the device vanished and came back.
    pub reconnects: u64,
}

/// Shared status handle.
pub type StatusHandle = Arc<Mutex<SerialStatus>>;

fn set_status(status: &StatusHandle, f: impl FnOnce(&mut SerialStatus)) {
    if let Ok(mut s) = status.lock() {
        f(&mut s);
    }
}

/// Opens a serial port with the read timeout.
///
/// # Errors
/// The OS error (missing device, permission denied, busy).
pub fn open(path: &str, baud: u32) -> Result<Box<dyn serialport::SerialPort>, serialport::Error> {
    serialport::new(path, baud).timeout(READ_TIMEOUT).open()
}

/// Names of the serial ports the OS lists (without udev: from sysfs).
pub fn list_ports() -> Vec<String> {
    // serialport's sysfs scan panics if the folder is missing (e.g. in some containers).
    if !std::path::Path::new("/sys/class/tty").exists() && cfg!(target_os = "linux") {
        return Vec::new();
    }
    serialport::available_ports()
        .map(|v| v.into_iter().map(|p| p.port_name).collect())
        .unwrap_or_default()
}

enum Decoding {
    Unknown(Vec<u8>),
    Text(ascii::Decoder),
    Binary(binary::Decoder),
}

impl Decoding {
    fn push(&mut self, bytes: &[u8], out: &mut Vec<Frame>) -> Option<Format> {
        match self {
            Decoding::Unknown(buf) => {
                buf.extend_from_slice(bytes);
                let fmt =
                    wire::detect(buf).or_else(|| (buf.len() > 4096).then_some(Format::Text))?;
                let pending = std::mem::take(buf);
                *self = match fmt {
                    Format::Text => Decoding::Text(ascii::Decoder::new()),
                    Format::Binary => Decoding::Binary(binary::Decoder::new()),
                };
                self.push(&pending, out);
                Some(fmt)
            }
            Decoding::Text(d) => {
                d.push(bytes, out);
                Some(Format::Text)
            }
            Decoding::Binary(d) => {
                d.push(bytes, out);
                Some(Format::Binary)
            }
        }
    }

    fn stats(&self) -> WireStats {
        match self {
            Decoding::Unknown(_) => WireStats::default(),
            Decoding::Text(d) => d.stats(),
            Decoding::Binary(d) => d.stats(),
        }
    }

    fn fs_hz(&self) -> Option<f64> {
        match self {
            Decoding::Text(d) => d.fs_hz(),
            _ => None,
        }
    }
}

/// The sample rate from arrival times: the least-squares slope of the running frame count
/// against time, and its standard error (Hz). `arrivals` holds (time, frames that arrived then).
///
/// A read returns whatever the OS buffered, so single reads give wildly different rates (a
/// 1 ms read of 4 frames "is" 4000 Hz); the slope over two seconds of reads does not care how the
/// frames were grouped, and its standard error is small for a steady clock.
pub fn estimate_rate(arrivals: &[(Instant, usize)]) -> (f64, f64) {
    let Some(&(t0, _)) = arrivals.first() else {
        return (0.0, f64::INFINITY);
    };
    // The count *after* each read, against the time of that read.
    let mut total = 0.0;
    let points: Vec<(f64, f64)> = arrivals
        .iter()
        .map(|&(t, n)| {
            total += n as f64;
            (t.duration_since(t0).as_secs_f64(), total)
        })
        .collect();
    let n = points.len() as f64;
    if points.len() < 3 {
        let span = points.last().map_or(0.0, |p| p.0).max(1e-3);
        return (total / span, f64::INFINITY);
    }
    let mt = points.iter().map(|p| p.0).sum::<f64>() / n;
    let mc = points.iter().map(|p| p.1).sum::<f64>() / n;
    let stt: f64 = points.iter().map(|p| (p.0 - mt).powi(2)).sum();
    let stc: f64 = points.iter().map(|p| (p.0 - mt) * (p.1 - mc)).sum();
    if stt <= 0.0 {
        return (0.0, f64::INFINITY);
    }
    let slope = stc / stt;
    let resid: f64 = points
        .iter()
        .map(|p| (p.1 - mc - slope * (p.0 - mt)).powi(2))
        .sum();
    let se = (resid / (n - 2.0) / stt).sqrt();
    (slope, se)
}

/// Runs until `stop` is set or the receiver hangs up.
pub fn run(spec: SerialSpec, out: Sender<RawBlock>, stop: &AtomicBool, status: StatusHandle) {
    let mut decoding = match spec.format {
        Some(Format::Text) => Decoding::Text(ascii::Decoder::new()),
        Some(Format::Binary) => Decoding::Binary(binary::Decoder::new()),
        None => Decoding::Unknown(Vec::new()),
    };
    let mut fs = spec.fs_hz;
    let mut channels: Option<usize> = None;
    let mut next_sample = 0u64;
    let mut seq = 0u64;
    let mut gap = false;
    let mut frames: Vec<Frame> = Vec::new();
    // Frames held while the rate is being estimated: (arrival, count).
    let mut held: Vec<Frame> = Vec::new();
    let mut arrivals: Vec<(Instant, usize)> = Vec::new();
    let mut buf = vec![0u8; 8192];
    let mut ever_connected = false;

    while !stop.load(Ordering::Relaxed) {
        let mut port = match open(&spec.path, spec.baud) {
            Ok(p) => p,
            Err(e) => {
                set_status(&status, |s| {
                    s.connected = false;
                    s.message = format!("waiting for device {}: {e}", spec.path);
                });
                let until = Instant::now() + REOPEN_EVERY;
                while Instant::now() < until && !stop.load(Ordering::Relaxed) {
                    std::thread::sleep(Duration::from_millis(20));
                }
                continue;
            }
        };
        if ever_connected {
            gap = true;
            set_status(&status, |s| s.reconnects += 1);
        }
        ever_connected = true;
        set_status(&status, |s| {
            s.connected = true;
            s.message = format!("reading {} at {} baud", spec.path, spec.baud);
        });
        loop {
            if stop.load(Ordering::Relaxed) {
                return;
            }
            let n = match port.read(&mut buf) {
                Ok(0) => {
                    // End of file on a pseudo-terminal whose other side closed.
                    std::thread::sleep(Duration::from_millis(20));
                    break;
                }
                Ok(n) => n,
                Err(e)
                    if e.kind() == std::io::ErrorKind::TimedOut
                        || e.kind() == std::io::ErrorKind::Interrupted =>
                {
                    continue;
                }
                Err(e) => {
                    set_status(&status, |s| {
                        s.connected = false;
                        s.message = format!("device {} lost: {e}; waiting for it", spec.path);
                    });
                    break;
                }
            };
            frames.clear();
            let fmt = decoding.push(&buf[..n], &mut frames);
            let now = Instant::now();
            let wire_stats = decoding.stats();
            set_status(&status, |s| {
                s.format = fmt;
                s.wire = wire_stats;
            });
            // The stream's channel count is that of its first frame; other frames are dropped
            // (the decoder already counted malformed text lines; binary ones are counted here).
            let ch = *channels.get_or_insert_with(|| frames.first().map_or(0, |f| f.samples.len()));
            if ch == 0 {
                channels = None;
                continue;
            }
            frames.retain(|f| f.samples.len() == ch);
            if fs.is_none() {
                fs = decoding.fs_hz();
            }
            if fs.is_none() {
                arrivals.push((now, frames.len()));
                held.append(&mut frames);
                // The first half second may be a backlog from the OS buffer: leave it out.
                let t_start = arrivals[0].0 + Duration::from_millis(500);
                let span = now.saturating_duration_since(t_start).as_secs_f64();
                if span >= ESTIMATE_S && held.len() > 10 {
                    let first = arrivals.iter().position(|a| a.0 > t_start).unwrap_or(0);
                    let (est, spread) = estimate_rate(&arrivals[first..]);
                    fs = Some(est);
                    set_status(&status, |s| {
                        s.estimated = true;
                        s.spread_hz = spread;
                    });
                    frames = std::mem::take(&mut held);
                } else {
                    continue;
                }
            }
            let Some(rate) = fs else { continue };
            set_status(&status, |s| s.fs_hz = Some(rate));
            // Split where the value kind changes or frames were lost, so each block is uniform.
            let mut start = 0;
            while start < frames.len() {
                let kind = frames[start].values;
                let mut end = start + 1;
                while end < frames.len()
                    && frames[end].values == kind
                    && frames[end].lost_before == 0
                {
                    end += 1;
                }
                next_sample += frames[start].lost_before;
                let mut data = Vec::with_capacity((end - start) * ch);
                for f in &frames[start..end] {
                    data.extend_from_slice(&f.samples);
                }
                let block = RawBlock {
                    seq,
                    first_sample: next_sample,
                    fs_hz: rate,
                    channels: ch,
                    unit: match kind {
                        Values::Counts => SampleUnit::Counts(spec.scale),
                        Values::Physical => SampleUnit::Decimal(spec.physical_to_uv),
                    },
                    data,
                    made_at: now,
                    gap_before: std::mem::take(&mut gap),
                };
                seq += 1;
                next_sample += (end - start) as u64;
                if !send_blocking(&out, block, stop) {
                    return;
                }
                start = end;
            }
        }
    }
}
