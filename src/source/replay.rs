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

/// The file being replayed and where the replay stands.
struct Player {
    rec: store::Recording,
    fs: f64,
    /// Frames in the file, channels, frames a block.
    n: usize,
    ch: usize,
    block: usize,
    signals: Vec<crate::store::SignalInfo>,
    speed: f64,
    paused: bool,
    looping: bool,
    /// Next frame of the file to send.
    pos: usize,
    /// Frames sent so far (the stream's sample index) and blocks sent.
    stream: u64,
    seq: u64,
    /// The next block follows a jump (seek, loop, another signal).
    gap: bool,
    /// Pace: `credit` frames may be sent now; it grows with time × fs × speed.
    credit: f64,
    last: Instant,
    /// Why the last command failed (shown until the next one works).
    error: Option<String>,
}

impl Player {
    fn new(rec: store::Recording) -> Self {
        let mut p = Self {
            fs: 0.0,
            n: 0,
            ch: 0,
            block: 1,
            signals: Vec::new(),
            rec,
            speed: 1.0,
            paused: false,
            looping: false,
            pos: 0,
            stream: 0,
            seq: 0,
            gap: false,
            credit: 0.0,
            last: Instant::now(),
            error: None,
        };
        p.take_file(None);
        p
    }

    /// Makes `self.rec` (or `rec`, when given) the file played, from its start.
    fn take_file(&mut self, rec: Option<store::Recording>) {
        if let Some(r) = rec {
            self.rec = r;
            self.pos = 0;
            self.gap = true;
        }
        self.fs = self.rec.fs_hz;
        self.n = self.rec.len();
        self.ch = self.rec.channels.len();
        self.block = ((self.fs / 100.0).round() as usize).max(1);
        self.signals = self.rec.signal_list();
    }

    /// Carries out a command; a signal that cannot be read leaves its message in the status.
    fn command(&mut self, c: ReplayCommand, spec: &ReplaySpec) {
        self.error = None;
        match c {
            ReplayCommand::Speed(s) => self.speed = s.clamp(0.25, 16.0),
            ReplayCommand::Pause(p) => self.paused = p,
            ReplayCommand::Loop(l) => self.looping = l,
            ReplayCommand::Seek(t) => {
                self.pos = ((t.max(0.0) * self.fs) as usize).min(self.n.saturating_sub(1));
                self.gap = true;
            }
            ReplayCommand::Signal(k) => match load(spec, Some(k)) {
                Ok(r) => self.take_file(Some(r)),
                Err(e) => self.error = Some(e),
            },
        }
    }

    fn status(&self) -> ReplayStatus {
        ReplayStatus {
            length_s: self.n as f64 / self.fs,
            position_s: self.pos as f64 / self.fs,
            speed: self.speed,
            paused: self.paused,
            looping: self.looping,
            ended: self.pos >= self.n && !self.looping,
            error: self.error.clone(),
            signals: self.signals.clone(),
            notes: self.rec.notes.clone(),
        }
    }

    /// The next block when its time has come.
    fn next_block(&mut self, now: Instant) -> Option<RawBlock> {
        if self.paused || self.credit < self.block as f64 {
            return None;
        }
        let take = self.block.min(self.n - self.pos);
        self.credit -= take as f64;
        let mut data = Vec::with_capacity(take * self.ch);
        for i in self.pos..self.pos + take {
            data.extend(self.rec.channels.iter().map(|c| c[i]));
        }
        let b = RawBlock {
            seq: self.seq,
            first_sample: self.stream,
            fs_hz: self.fs,
            channels: self.ch,
            unit: SampleUnit::Microvolts,
            data,
            made_at: now,
            gap_before: std::mem::take(&mut self.gap),
        };
        self.seq += 1;
        self.stream += take as u64;
        self.pos += take;
        Some(b)
    }
}

/// The file (or, for an EDF/BDF with signals at several rates, the group of signal `group`).
fn load(spec: &ReplaySpec, group: Option<usize>) -> Result<store::Recording, String> {
    let r = match group {
        None => store::read(&spec.path, &spec.read),
        Some(k) => store::edf::read_group(&spec.path, Some(k)),
    }
    .map_err(|e| e.to_string())?;
    if r.is_empty() {
        return Err(format!("{}: no samples", spec.path.display()));
    }
    Ok(r)
}

/// Runs until stopped, the receiver hangs up, or the file ends (not looping).
pub fn run(
    spec: ReplaySpec,
    out: Sender<RawBlock>,
    commands: Receiver<ReplayCommand>,
    stop: &AtomicBool,
    status: ReplayHandle,
) {
    let mut p = match load(&spec, None) {
        Ok(r) => Player::new(r),
        Err(e) => {
            if let Ok(mut s) = status.lock() {
                s.error = Some(e);
            }
            return;
        }
    };
    loop {
        if stop.load(Ordering::Relaxed) {
            return;
        }
        while let Ok(c) = commands.try_recv() {
            p.command(c, &spec);
        }
        let now = Instant::now();
        if !p.paused {
            p.credit += now.duration_since(p.last).as_secs_f64() * p.fs * p.speed;
        }
        p.last = now;
        if let Ok(mut s) = status.lock() {
            *s = p.status();
        }
        if p.pos >= p.n {
            if !p.looping {
                return;
            }
            p.pos = 0;
            p.gap = true;
        }
        match p.next_block(now) {
            Some(b) => {
                if !send_blocking(&out, b, stop) {
                    return;
                }
            }
            None => std::thread::sleep(Duration::from_millis(5)),
        }
    }
}
