//! The source thread body for the simulator, and what a pipeline is told about its source.

use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use crossbeam_channel::{Receiver, SendTimeoutError, Sender};

use super::synth::{Synth, SynthSettings};
use crate::msg::{RawBlock, SampleUnit};

/// Where a pipeline's samples come from.
#[derive(Debug, Clone, PartialEq)]
pub enum SourceSpec {
    /// The built-in simulator.
    Synth(SynthSettings),
}

impl SourceSpec {
    /// Short text for the status line.
    pub fn label(&self) -> String {
        match self {
            SourceSpec::Synth(s) => format!("simulator ({} ch)", s.channels),
        }
    }
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
/// Longest the thread waits before looking at the stop flag again.
const POLL: Duration = Duration::from_millis(20);

/// Sends `block` downstream, waiting while the DSP side is busy (this path never drops).
/// Returns false when the pipeline is stopping or the receiver is gone.
pub fn send_blocking<T>(tx: &Sender<T>, mut item: T, stop: &AtomicBool) -> bool {
    loop {
        if stop.load(Ordering::Relaxed) {
            return false;
        }
        match tx.send_timeout(item, POLL) {
            Ok(()) => return true,
            Err(SendTimeoutError::Timeout(back)) => item = back,
            Err(SendTimeoutError::Disconnected(_)) => return false,
        }
    }
}

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
        };
        seq += 1;
        if !send_blocking(&out, block, stop) {
            return;
        }
    }
}
