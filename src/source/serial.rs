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

use super::framing::{Blocker, Decoding};
use crate::chan::send_blocking;
use crate::msg::RawBlock;
use crate::scale::InputScale;
use crate::wire::{Format, Frame, WireStats};

/// Read timeout: how long a read waits before the thread looks at the stop flag.
const READ_TIMEOUT: Duration = Duration::from_millis(50);
/// Retry period while the device is gone.
const REOPEN_EVERY: Duration = Duration::from_millis(500);

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

pub(crate) fn set_status(status: &StatusHandle, f: impl FnOnce(&mut SerialStatus)) {
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

/// Runs until `stop` is set or the receiver hangs up.
pub fn run(spec: SerialSpec, out: Sender<RawBlock>, stop: &AtomicBool, status: StatusHandle) {
    let mut decoding = Decoding::new(spec.format);
    let mut blocker = Blocker::new(spec.fs_hz, spec.scale, spec.physical_to_uv);
    let mut ever_connected = false;
    while !stop.load(Ordering::Relaxed) {
        let port = match open(&spec.path, spec.baud) {
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
            blocker.mark_gap();
            set_status(&status, |s| s.reconnects += 1);
        }
        ever_connected = true;
        set_status(&status, |s| {
            s.connected = true;
            s.message = format!("reading {} at {} baud", spec.path, spec.baud);
        });
        let ended = read_stream(port, &mut decoding, &mut blocker, &out, stop, &status);
        match ended {
            StreamEnd::Stopped => return,
            StreamEnd::Lost(why) => set_status(&status, |s| {
                s.connected = false;
                s.message = format!("device {} lost: {why}; waiting for it", spec.path);
            }),
        }
    }
}

/// How a stream ended.
#[derive(Debug)]
pub enum StreamEnd {
    /// The stop flag was set or the receiver hung up.
    Stopped,
    /// The device or peer went away (end of file or a read error).
    Lost(String),
}

/// Reads a byte stream (a serial port, a TCP connection, anything that reads with a short
/// timeout) until it ends, decoding frames and sending blocks; waits, never drops.
pub fn read_stream(
    mut reader: impl Read,
    decoding: &mut Decoding,
    blocker: &mut Blocker,
    out: &Sender<RawBlock>,
    stop: &AtomicBool,
    status: &StatusHandle,
) -> StreamEnd {
    let mut buf = vec![0u8; 8192];
    let mut frames: Vec<Frame> = Vec::new();
    let mut blocks = Vec::new();
    loop {
        if stop.load(Ordering::Relaxed) {
            return StreamEnd::Stopped;
        }
        let n = match reader.read(&mut buf) {
            Ok(0) => {
                // End of file: a pseudo-terminal whose other side closed, a peer that hung up.
                std::thread::sleep(Duration::from_millis(20));
                return StreamEnd::Lost("the other end closed".into());
            }
            Ok(n) => n,
            Err(e)
                if e.kind() == std::io::ErrorKind::TimedOut
                    || e.kind() == std::io::ErrorKind::WouldBlock
                    || e.kind() == std::io::ErrorKind::Interrupted =>
            {
                continue;
            }
            Err(e) => return StreamEnd::Lost(e.to_string()),
        };
        frames.clear();
        let fmt = decoding.push(&buf[..n], &mut frames);
        let now = Instant::now();
        let wire_stats = decoding.stats();
        set_status(status, |s| {
            s.format = fmt;
            s.wire = wire_stats;
        });
        blocks.clear();
        blocker.push(&mut frames, now, decoding.fs_hz(), &mut blocks);
        if let Some(r) = blocker.rate() {
            set_status(status, |s| {
                s.fs_hz = Some(r.fs_hz);
                s.estimated = r.estimated;
                s.spread_hz = r.spread_hz;
            });
        }
        for b in blocks.drain(..) {
            if !send_blocking(out, b, stop) {
                return StreamEnd::Stopped;
            }
        }
    }
}
