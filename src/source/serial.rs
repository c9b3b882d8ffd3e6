//! The serial source: a microcontroller on a USB serial port (or a pseudo-terminal), read on its
//! own thread with a short timeout, decoded by [`crate::wire`], survived through unplugging.
//!
//! When the device vanishes the thread says "waiting for device", tries the same path again every
//! half second, and marks the gap on the next block (the recording shows it). The sample rate
//! comes from the user, else from a `# fs=` metadata line, else it is estimated from the arrival
//! of the first two seconds of frames (and shown as estimated, with its spread). The binary
//! sequence counter makes the sample index jump over lost frames, so the DSP thread counts them.

use std::sync::atomic::AtomicBool;
use std::sync::{Arc, Mutex};
use std::time::Duration;

use crossbeam_channel::Sender;

use super::link::{self, Decoded, Link, StreamFormat};
use crate::msg::RawBlock;
use crate::scale::InputScale;
use crate::wire::{Format, WireStats};

/// Read timeout: how long a read waits before the thread looks at the stop flag.
const READ_TIMEOUT: Duration = Duration::from_millis(50);

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

/// A serial port as a [`Link`]: opened again every half second while it is gone.
struct Port {
    spec: SerialSpec,
    status: StatusHandle,
}

impl Link for Port {
    type Stream = Box<dyn serialport::SerialPort>;

    fn open(&mut self) -> Result<Self::Stream, String> {
        open(&self.spec.path, self.spec.baud).map_err(|e| {
            let why = format!("waiting for device {}: {e}", self.spec.path);
            set_status(&self.status, |s| {
                s.connected = false;
                s.message.clone_from(&why);
            });
            why
        })
    }

    fn opened(&mut self, again: bool) {
        let (path, baud) = (&self.spec.path, self.spec.baud);
        set_status(&self.status, |s| {
            s.reconnects += u64::from(again);
            s.connected = true;
            s.message = format!("reading {path} at {baud} baud");
        });
    }

    fn lost(&mut self, why: &str) {
        let path = &self.spec.path;
        set_status(&self.status, |s| {
            s.connected = false;
            s.message = format!("device {path} lost: {why}; waiting for it");
        });
    }

    fn decoded(&mut self, d: &Decoded) {
        set_status(&self.status, |s| {
            s.format = d.format;
            s.wire = d.wire;
            if let Some(r) = d.rate {
                s.fs_hz = Some(r.fs_hz);
                s.estimated = r.estimated;
                s.spread_hz = r.spread_hz;
            }
        });
    }
}

/// Runs until `stop` is set or the receiver hangs up.
pub fn run(spec: SerialSpec, out: Sender<RawBlock>, stop: &AtomicBool, status: StatusHandle) {
    let how = StreamFormat {
        format: spec.format,
        fs_hz: spec.fs_hz,
        scale: spec.scale,
        physical_to_uv: spec.physical_to_uv,
    };
    link::run(&mut Port { spec, status }, how, &out, stop);
}
