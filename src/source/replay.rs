//! File replay: a recording streamed as if it were a device, at real-time pace times a speed
//! (×0.25–×16), with pause, seek and loop. Reads whatever [`crate::store::read`] reads (our CSV,
//! oscilloscope-style CSV, raw .f32/.f64, WFDB). The stream's sample index keeps counting across
//! a seek or a loop, and the block after one is marked as a gap.

use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use crossbeam_channel::{Receiver, Sender};

use crate::chan::send_blocking;
use crate::msg::{RawBlock, SampleUnit};
use crate::store::{self, ReadOptions};

/// What to replay.
#[derive(Debug, Clone, PartialEq)]
pub struct ReplaySpec {
    /// The file.
    pub path: PathBuf,
    /// How to read it.
    pub read: ReadOptions,
}

/// Commands while replaying.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ReplayCommand {
    /// Playback speed, 0.25–16.
    Speed(f64),
    /// Stop or resume the flow of samples.
    Pause(bool),
    /// Jump to this time in the file, s.
    Seek(f64),
    /// Start again at the end.
    Loop(bool),
    /// Replay the group of this signal instead (0-based among the file's signals): the signals
    /// at its rate, for files with mixed rates.
    Signal(usize),
}

/// Where the replay is, for the GUI.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ReplayStatus {
    /// File length, s.
    pub length_s: f64,
    /// Position, s.
    pub position_s: f64,
    /// Speed in force.
    pub speed: f64,
    /// Paused.
    pub paused: bool,
    /// Looping.
    pub looping: bool,
    /// Reached the end (not looping).
    pub ended: bool,
    /// Why the file could not be read, if it could not.
    pub error: Option<String>,
    /// Every signal of the file (name, rate, unit; `channel` set for the ones replayed).
    pub signals: Vec<crate::store::SignalInfo>,
    /// Signals not replayed with the others, and why.
    pub notes: Vec<String>,
}

/// Shared status handle.
pub type ReplayHandle = Arc<Mutex<ReplayStatus>>;

/// Runs until stopped, the receiver hangs up, or the file ends (not looping).
pub fn run(
    spec: ReplaySpec,
    out: Sender<RawBlock>,
    commands: Receiver<ReplayCommand>,
    stop: &AtomicBool,
    status: ReplayHandle,
) {
    let load = |group: Option<usize>| -> Result<store::Recording, String> {
        let r = match group {
            None => store::read(&spec.path, &spec.read),
            Some(k) => store::edf::read_group(&spec.path, Some(k)),
        }
        .map_err(|e| e.to_string())?;
        if r.is_empty() {
            return Err(format!("{}: no samples", spec.path.display()));
        }
        Ok(r)
    };
    let mut rec = match load(None) {
        Ok(r) => r,
        Err(e) => {
            if let Ok(mut s) = status.lock() {
                s.error = Some(e);
            }
            return;
        }
    };
    let mut fs = rec.fs_hz;
    let mut n = rec.len();
    let mut ch = rec.channels.len();
    let mut block = ((fs / 100.0).round() as usize).max(1);
    let mut signals = rec.signal_list();
    let (mut speed, mut paused, mut looping) = (1.0f64, false, false);
    let mut pos = 0usize;
    let mut stream = 0u64;
    let mut seq = 0u64;
    let mut gap = false;
    // Pace: `credit` samples may be sent now; it grows with time × fs × speed.
    let mut credit = 0.0f64;
    let mut last = Instant::now();
    loop {
        if stop.load(Ordering::Relaxed) {
            return;
        }
        while let Ok(c) = commands.try_recv() {
            match c {
                ReplayCommand::Speed(s) => speed = s.clamp(0.25, 16.0),
                ReplayCommand::Pause(p) => paused = p,
                ReplayCommand::Loop(l) => looping = l,
                ReplayCommand::Seek(t) => {
                    pos = ((t.max(0.0) * fs) as usize).min(n.saturating_sub(1));
                    gap = true;
                }
                ReplayCommand::Signal(k) => match load(Some(k)) {
                    Ok(r) => {
                        rec = r;
                        fs = rec.fs_hz;
                        n = rec.len();
                        ch = rec.channels.len();
                        block = ((fs / 100.0).round() as usize).max(1);
                        signals = rec.signal_list();
                        pos = 0;
                        gap = true;
                    }
                    Err(e) => {
                        if let Ok(mut s) = status.lock() {
                            s.error = Some(e);
                        }
                    }
                },
            }
        }
        let now = Instant::now();
        if !paused {
            credit += now.duration_since(last).as_secs_f64() * fs * speed;
        }
        last = now;
        if let Ok(mut s) = status.lock() {
            *s = ReplayStatus {
                length_s: n as f64 / fs,
                position_s: pos as f64 / fs,
                speed,
                paused,
                looping,
                ended: pos >= n && !looping,
                error: None,
                signals: signals.clone(),
                notes: rec.notes.clone(),
            };
        }
        if pos >= n {
            if looping {
                pos = 0;
                gap = true;
            } else {
                return;
            }
        }
        if paused || credit < block as f64 {
            std::thread::sleep(Duration::from_millis(5));
            continue;
        }
        let take = block.min(n - pos);
        credit -= take as f64;
        let mut data = Vec::with_capacity(take * ch);
        for i in pos..pos + take {
            data.extend(rec.channels.iter().map(|c| c[i]));
        }
        let b = RawBlock {
            seq,
            first_sample: stream,
            fs_hz: fs,
            channels: ch,
            unit: SampleUnit::Microvolts,
            data,
            made_at: now,
            gap_before: std::mem::take(&mut gap),
        };
        seq += 1;
        stream += take as u64;
        pos += take;
        if !send_blocking(&out, b, stop) {
            return;
        }
    }
}
