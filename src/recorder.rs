//! The recorder: takes every processed block from the DSP thread (never dropping one) and, while a
//! recording runs, writes it to an EDF+, BDF+, CSV or raw file chosen by the file's extension.
//!
//! It runs on its own thread (started by [`crate::pipeline`]) so a slow disk never holds up the
//! display. A write that fails (disk full, drive removed) stops the recording with a message in
//! [`RecorderStatus`]; blocks keep being taken, so the monitor runs on.

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use crossbeam_channel::{Receiver, select};

use crate::msg::RecordBlock;
use crate::store::csv::CsvSink;
use crate::store::edf::{EdfKind, EdfSpec, EdfWriter, GAP};
use crate::store::raw::RawSink;
use crate::store::{Finished, Sink, StoreError};

/// File formats the recorder writes, named by extension.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RecordFormat {
    Edf,
    Bdf,
    Csv,
    F32,
    F64,
}

impl RecordFormat {
    /// The format an output path's extension names.
    ///
    /// # Errors
    /// A message listing the extensions when it names none.
    pub fn from_path(path: &Path) -> Result<Self, String> {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .unwrap_or("")
            .to_ascii_lowercase();
        Ok(match ext.as_str() {
            "edf" => Self::Edf,
            "bdf" => Self::Bdf,
            "csv" | "txt" => Self::Csv,
            "f32" => Self::F32,
            "f64" => Self::F64,
            _ => {
                return Err(format!(
                    "{}: unknown recording type (expected .edf, .bdf, .csv, .f32 or .f64)",
                    path.display()
                ));
            }
        })
    }
}

/// Which values go to the file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RecordValues {
    /// Input-referred µV before the digital chain (what the board delivered).
    #[default]
    Raw,
    /// Input-referred µV after the digital chain.
    Filtered,
    /// The source's numbers as received (ADC counts); CSV and raw files only.
    Received,
}

/// A request to start recording.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordRequest {
    pub path: PathBuf,
    pub values: RecordValues,
    /// µV per CSV/raw unit (1000 = mV); ignored for EDF/BDF (always µV) and received values.
    pub csv_uv_per_unit: f64,
    /// Prefiltering text for the EDF header (e.g. the chain when recording filtered values).
    pub prefilter: String,
}

impl RecordRequest {
    /// Raw µV to `path`, CSV in mV.
    pub fn new(path: impl Into<PathBuf>) -> Self {
        Self {
            path: path.into(),
            values: RecordValues::Raw,
            csv_uv_per_unit: 1e3,
            prefilter: String::new(),
        }
    }
}

/// What the recorder is told.
#[derive(Debug, Clone, PartialEq)]
pub enum RecorderCommand {
    Start(RecordRequest),
    Stop,
    /// An event marker at the latest sample, with a short text.
    Marker(String),
}

/// What the recorder is doing, for the status bar and the record command.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RecorderStatus {
    /// The file being written, while recording.
    pub active: Option<PathBuf>,
    /// Seconds of data in the current (or last) file.
    pub elapsed_s: f64,
    /// Bytes in the current (or last) file.
    pub bytes: u64,
    /// Frames in the current (or last) file: what the file holds (after a failed write, the
    /// whole frames that reached it).
    pub frames: u64,
    /// Frames of padding after the data in the last file (EDF/BDF fill their last record).
    pub padded_frames: u64,
    /// Markers placed in the current (or last) file.
    pub markers: u64,
    /// Samples held at the file's range ends (EDF/BDF).
    pub clipped: u64,
    /// The last thing worth telling (finished, or why it stopped).
    pub message: String,
    /// True when the last recording stopped because of an error.
    pub failed: bool,
    /// Frames the recorder has seen since the pipeline started (recording or not).
    pub seen_frames: u64,
}

/// Shared status.
pub type StatusHandle = Arc<Mutex<RecorderStatus>>;

struct Active {
    req: RecordRequest,
    format: RecordFormat,
    sink: Option<Box<dyn Sink>>,
    /// Frames written.
    frames: u64,
    fs_hz: f64,
    channels: usize,
    markers: u64,
    /// Markers that arrived before the first block.
    early: Vec<String>,
    /// The stream's index of the frame expected next (to notice frames lost on the wire).
    next_sample: Option<u64>,
    /// The rate the file's times count in (the stream's, or the whole rate EDF stores).
    time_fs: f64,
}

impl Active {
    fn open(&mut self, b: &RecordBlock) -> Result<(), StoreError> {
        let path = self.req.path.clone();
        self.fs_hz = b.fs_hz;
        self.time_fs = b.fs_hz;
        self.channels = b.channels;
        let labels: Vec<String> = match &b.names {
            // Derived leads carry the EDF+ specification's standard texts (ECG I, ECG II, …).
            Some(n) if matches!(self.format, RecordFormat::Edf | RecordFormat::Bdf) => {
                n.iter().map(|n| format!("ECG {n}")).collect()
            }
            Some(n) => n.to_vec(),
            None => (1..=b.channels).map(|k| format!("ch{k}")).collect(),
        };
        let sink = match self.format {
            RecordFormat::Edf | RecordFormat::Bdf => {
                let kind = if self.format == RecordFormat::Edf {
                    EdfKind::Edf
                } else {
                    EdfKind::Bdf
                };
                // The converter's whole span when it is known (so nothing the board can send
                // clips), else ±10 mV; filtered values get twice the span for overshoot.
                let (lo, hi) = b.range_uv.unwrap_or((-10_000.0, 10_000.0));
                let half = lo.abs().max(hi.abs())
                    * if self.req.values == RecordValues::Filtered {
                        2.0
                    } else {
                        1.0
                    };
                // A rate estimated from arrival times (498.73 Hz) has no whole number of samples
                // per record: store the nearest whole rate and say so in the file.
                let fits = crate::store::edf::rate_fits(b.fs_hz, b.channels, kind);
                let stored = if fits {
                    b.fs_hz
                } else {
                    b.fs_hz.round().max(1.0)
                };
                let mut spec = EdfSpec::new(kind, stored, labels, (-half, half));
                spec.prefilter = self.req.prefilter.clone();
                spec.durable = true;
                let mut w = EdfWriter::create(&path, &spec)?;
                self.time_fs = stored;
                if !fits {
                    w.annotate(
                        0.0,
                        None,
                        &format!(
                            "sample rate {:.4} Hz (estimated) stored as {stored} Hz",
                            b.fs_hz
                        ),
                    );
                }
                Box::new(w) as Box<dyn Sink>
            }
            RecordFormat::Csv => {
                let note = match self.req.values {
                    RecordValues::Received => "the source's own units (counts)",
                    _ if self.req.csv_uv_per_unit == 1.0 => "uV (input-referred)",
                    _ if self.req.csv_uv_per_unit == 1e6 => "V (input-referred)",
                    _ => "mV (input-referred)",
                };
                Box::new(CsvSink::create(&path, b.fs_hz, b.channels, note)?)
            }
            RecordFormat::F32 | RecordFormat::F64 => Box::new(RawSink::create(
                &path,
                self.format == RecordFormat::F32,
                b.channels,
            )?),
        };
        self.sink = Some(sink);
        for text in std::mem::take(&mut self.early) {
            self.marker(&text);
        }
        Ok(())
    }

    fn now_s(&self) -> f64 {
        if self.time_fs > 0.0 {
            self.frames as f64 / self.time_fs
        } else {
            0.0
        }
    }

    fn marker(&mut self, text: &str) {
        let t = self.now_s();
        let Some(sink) = self.sink.as_mut() else {
            self.early.push(text.to_string());
            return;
        };
        self.markers += 1;
        sink.note(t, text);
    }

    fn write(&mut self, b: &RecordBlock) -> Result<(), StoreError> {
        if self.sink.is_none() {
            self.open(b)?;
        }
        if b.channels != self.channels || (b.fs_hz - self.fs_hz).abs() > 1e-9 * self.fs_hz {
            return Err(StoreError::malformed(
                &self.req.path,
                format!(
                    "the stream changed from {} channel(s) at {} Hz to {} at {} Hz; recording stopped (start a new file)",
                    self.channels, self.fs_hz, b.channels, b.fs_hz
                ),
            ));
        }
        let now = self.now_s();
        let path = self.req.path.clone();
        let lost = self
            .next_sample
            .map_or(0, |n| b.first_sample.saturating_sub(n));
        self.next_sample = Some(b.first_sample + b.frames_count());
        let lost_note = (lost > 0).then(|| {
            format!("{lost} frames lost on the link here (the file runs on without them)")
        });
        let values: &[f64] = match self.req.values {
            RecordValues::Raw => &b.raw_uv,
            RecordValues::Filtered => &b.filtered_uv,
            RecordValues::Received => &b.received,
        };
        let frames = (values.len() / b.channels.max(1)) as u64;
        if self.req.values == RecordValues::Received
            && matches!(self.format, RecordFormat::Edf | RecordFormat::Bdf)
        {
            return Err(StoreError::malformed(
                &path,
                "EDF/BDF store input-referred µV; counts go to .csv, .f32 or .f64",
            ));
        }
        let Some(sink) = self.sink.as_mut() else {
            return Ok(());
        };
        for text in [b.gap_before.then(|| GAP.to_string()), lost_note.clone()]
            .into_iter()
            .flatten()
        {
            sink.note(now, &text);
        }
        // CSV and raw files are in the unit asked for (counts as received); EDF in µV.
        let k = match self.format {
            RecordFormat::Csv | RecordFormat::F32 | RecordFormat::F64
                if self.req.values != RecordValues::Received =>
            {
                1.0 / self.req.csv_uv_per_unit
            }
            _ => 1.0,
        };
        if k == 1.0 {
            sink.push(values)?;
        } else {
            let scaled: Vec<f64> = values.iter().map(|v| v * k).collect();
            sink.push(&scaled)?;
        }
        self.frames += frames;
        Ok(())
    }

    fn bytes(&self) -> u64 {
        self.sink.as_ref().map_or(0, |s| s.bytes())
    }

    fn clipped(&self) -> u64 {
        self.sink.as_ref().map_or(0, |s| s.clipped())
    }

    /// Closes the file. After a failed write (`failed`) nothing more is written: the file is
    /// cut back to its whole frames. Returns what the file holds, and the error if closing
    /// failed.
    fn finish(self, failed: bool) -> (Finished, Option<StoreError>) {
        let Some(mut sink) = self.sink else {
            return (Finished::default(), None);
        };
        if failed {
            sink.cut_to_held();
            let held = Finished {
                bytes: sink.bytes(),
                frames: sink.frames_held(),
                padded_frames: 0,
            };
            return (held, None);
        }
        match sink.finish() {
            Ok(f) => (f, None),
            Err(e) => (
                Finished {
                    bytes: sink.bytes(),
                    frames: sink.frames_held(),
                    padded_frames: 0,
                },
                Some(e),
            ),
        }
    }
}

fn human_bytes(b: u64) -> String {
    if b >= 10 << 20 {
        format!("{:.0} MB", b as f64 / 1048576.0)
    } else if b >= 1 << 20 {
        format!("{:.1} MB", b as f64 / 1048576.0)
    } else {
        format!("{:.0} kB", b as f64 / 1024.0)
    }
}

/// Finishes a recording and says how it ended (`why`: the write error that stopped it).
fn end(status: &StatusHandle, a: Active, why: Option<String>) {
    let path = a.req.path.clone();
    let (markers, clipped, fs) = (a.markers, a.clipped(), a.time_fs);
    let (held, error) = a.finish(why.is_some());
    let elapsed = if fs > 0.0 {
        held.frames as f64 / fs
    } else {
        0.0
    };
    set(status, &|s| {
        s.active = None;
        s.frames = held.frames;
        s.padded_frames = held.padded_frames;
        s.markers = markers;
        s.elapsed_s = elapsed;
        s.clipped = clipped;
        s.bytes = held.bytes;
        match (&error, &why) {
            (None, None) => {
                s.failed = false;
                s.message = format!(
                    "saved {} ({elapsed:.1} s, {}){}{}",
                    path.display(),
                    human_bytes(held.bytes),
                    if held.padded_frames > 0 {
                        format!(
                            "; the last record is filled with {} frames of padding after the data's end (marked in the file)",
                            held.padded_frames
                        )
                    } else {
                        String::new()
                    },
                    if clipped > 0 {
                        format!(
                            "; {clipped} samples were outside the file's range and held at its ends"
                        )
                    } else {
                        String::new()
                    }
                );
            }
            (_, Some(w)) => {
                s.failed = true;
                s.message = format!(
                    "recording stopped: {w}; the file keeps the {} whole frames written before",
                    held.frames
                );
            }
            (Some(e), None) => {
                s.failed = true;
                s.message = format!(
                    "recording stopped: {e}; the file keeps the {} whole frames written before",
                    held.frames
                );
            }
        }
    });
}

/// Changes the status under its lock (a poisoned lock only loses the status line).
fn set(status: &StatusHandle, f: &dyn Fn(&mut RecorderStatus)) {
    if let Ok(mut s) = status.lock() {
        f(&mut s);
    }
}

/// Starts a recording (the format from the file's extension) or says why it cannot.
fn start(status: &StatusHandle, req: RecordRequest) -> Option<Active> {
    match RecordFormat::from_path(&req.path) {
        Ok(format) => {
            let path = req.path.clone();
            set(status, &|s| {
                *s = RecorderStatus {
                    active: Some(path.clone()),
                    seen_frames: s.seen_frames,
                    message: format!("recording to {}", path.display()),
                    ..RecorderStatus::default()
                };
            });
            Some(Active {
                req,
                format,
                sink: None,
                frames: 0,
                fs_hz: 0.0,
                channels: 0,
                markers: 0,
                early: Vec::new(),
                next_sample: None,
                time_fs: 0.0,
            })
        }
        Err(m) => {
            set(status, &|s| {
                s.failed = true;
                s.message = m.clone();
            });
            None
        }
    }
}

/// The recorder's loop: runs until `stop` is set or the DSP thread hangs up. A recording still
/// running then is finished properly.
pub fn run(
    blocks: Receiver<RecordBlock>,
    commands: Receiver<RecorderCommand>,
    stop: &AtomicBool,
    status: StatusHandle,
) {
    let mut active: Option<Active> = None;
    let set = |f: &dyn Fn(&mut RecorderStatus)| set(&status, f);
    let end = |a: Active, why: Option<String>| end(&status, a, why);
    loop {
        if stop.load(Ordering::Relaxed) {
            break;
        }
        select! {
            recv(blocks) -> b => {
                let Ok(b) = b else { break };
                let frames = b.frames_count();
                if let Some(a) = active.as_mut() {
                    match a.write(&b) {
                        Ok(()) => {
                            let (el, by, fr, mk, cl) = (a.now_s(), a.bytes(), a.frames, a.markers, a.clipped());
                            set(&|s| {
                                s.elapsed_s = el;
                                s.bytes = by;
                                s.frames = fr;
                                s.markers = mk;
                                s.clipped = cl;
                            });
                        }
                        Err(e) => {
                            if let Some(a) = active.take() {
                                end(a, Some(e.to_string()));
                            }
                        }
                    }
                }
                set(&|s| s.seen_frames += frames);
            }
            recv(commands) -> c => {
                let Ok(c) = c else { continue };
                match c {
                    RecorderCommand::Start(req) => {
                        if let Some(a) = active.take() {
                            end(a, None);
                        }
                        active = start(&status, req);
                    }
                    RecorderCommand::Stop => {
                        if let Some(a) = active.take() {
                            end(a, None);
                        }
                    }
                    RecorderCommand::Marker(text) => {
                        if let Some(a) = active.as_mut() {
                            a.marker(&text);
                            let mk = a.markers;
                            set(&|s| s.markers = mk);
                        }
                    }
                }
            }
            default(Duration::from_millis(100)) => {}
        }
    }
    // Whatever is queued belongs in the file too.
    if let Some(mut a) = active.take() {
        while let Ok(b) = blocks.try_recv() {
            if a.write(&b).is_err() {
                break;
            }
        }
        end(a, None);
    }
}

impl RecordBlock {
    /// Frames in the block.
    pub fn frames_count(&self) -> u64 {
        (self.raw_uv.len() / self.channels.max(1)) as u64
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crossbeam_channel::unbounded;

    fn block(first: u64, n: usize, fs: f64) -> RecordBlock {
        let v: Vec<f64> = (0..n).map(|i| ((first as usize + i) % 50) as f64).collect();
        RecordBlock {
            first_sample: first,
            fs_hz: fs,
            channels: 1,
            raw_uv: v.clone(),
            filtered_uv: v.clone(),
            received: v,
            gap_before: false,
            range_uv: Some((-3300.0, 3300.0)),
            names: None,
        }
    }

    /// Runs the recorder over `blocks` into `path` and returns the final status.
    fn record(path: &Path, blocks: Vec<RecordBlock>) -> RecorderStatus {
        let (btx, brx) = unbounded();
        let (ctx, crx) = unbounded();
        let status: StatusHandle = Default::default();
        let stop = AtomicBool::new(false);
        std::thread::scope(|s| {
            s.spawn(|| run(brx, crx, &stop, Arc::clone(&status)));
            ctx.send(RecorderCommand::Start(RecordRequest::new(path)))
                .unwrap();
            std::thread::sleep(Duration::from_millis(50));
            for b in blocks {
                btx.send(b).unwrap();
            }
            std::thread::sleep(Duration::from_millis(100));
            ctx.send(RecorderCommand::Stop).unwrap();
            let t = std::time::Instant::now();
            while status.lock().unwrap().active.is_some() && t.elapsed() < Duration::from_secs(5) {
                std::thread::sleep(Duration::from_millis(10));
            }
            stop.store(true, Ordering::Relaxed);
        });
        status.lock().unwrap().clone()
    }

    #[test]
    fn an_estimated_rate_is_stored_whole_and_lost_frames_are_noted() {
        let path = std::env::temp_dir().join(format!("leadline-rec-{}.edf", std::process::id()));
        let fs = 498.734;
        // 600 frames, then 20 lost on the link, then 400 more.
        let st = record(&path, vec![block(0, 600, fs), block(620, 400, fs)]);
        assert!(!st.failed, "{}", st.message);
        assert_eq!(st.frames, 1000);
        let rec = crate::store::edf::read(&path).unwrap();
        assert_eq!(rec.fs_hz, 499.0);
        assert_eq!(rec.len(), 1000);
        let texts: Vec<&str> = rec.events.iter().map(|e| e.text.as_str()).collect();
        assert!(
            texts
                .iter()
                .any(|t| t.contains("498.7340 Hz (estimated) stored as 499 Hz")),
            "{texts:?}"
        );
        let lost = rec
            .events
            .iter()
            .find(|e| e.text.starts_with("20 frames lost"))
            .unwrap();
        assert!(
            (lost.onset_s - 600.0 / 499.0).abs() < 1e-6,
            "{}",
            lost.onset_s
        );
    }
}
