//! The only place that creates channels and starts threads.
//!
//! ```text
//! source thread ──RawBlock, bounded 64, blocking──▶ DSP thread ──Snapshot, bounded 2, drop-oldest──▶ GUI
//!      ▲                                               │
//!      └─ SynthSettings (unbounded, tiny) ◀─ Control ──┴──RecordBlock, bounded 256, blocking──▶ recorder
//! ```
//! The source never drops (it waits); the recorder path never drops; only the display path drops
//! snapshots, and counts them.

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::thread::JoinHandle;

use crossbeam_channel::{Receiver, Sender, bounded, unbounded};

use crate::dsp::chain::ChainSettings;
use crate::msg::{Control, RecordBlock, Snapshot};
use crate::process::{self, DspConfig, DspPorts, Notify};
use crate::recorder::RecorderCommand;
use crate::source::{Pacing, SourceSpec, Synth, SynthError, SynthSettings, run_synth};
use std::time::Duration;

/// Blocks of 10 ms: 64 of them let the DSP thread fall 0.64 s behind before the source waits.
const RAW_DEPTH: usize = 64;
/// The GUI only ever wants the newest snapshot; one spare lets it take one while the next is made.
const SNAPSHOT_DEPTH: usize = 2;
/// 2.5 s of blocks queued for a slow disk before the DSP thread waits.
const RECORD_DEPTH: usize = 256;

/// Why a pipeline did not start.
#[derive(Debug, thiserror::Error)]
pub enum PipelineError {
    /// The simulator refused its settings.
    #[error("simulator: {0}")]
    Synth(#[from] SynthError),
    /// The source could not start (a port in use, say).
    #[error("{0}")]
    Source(String),
    /// The OS would not start a thread.
    #[error("cannot start the {0} thread: {1}")]
    Spawn(&'static str, std::io::Error),
}

/// What to run.
#[derive(Debug, Clone)]
pub struct PipelineConfig {
    /// Where the samples come from.
    pub source: SourceSpec,
    /// The chain to start with.
    pub chain: ChainSettings,
    /// Display window, s.
    pub window_s: f64,
    /// Most snapshots per second (the display rate).
    pub display_hz: f64,
    /// The user's front end per channel; None uses the source's own scaling.
    pub front_end: Option<Vec<crate::scale::FrontEnd>>,
    /// What the source's channels are: the standard leads are derived from them.
    pub lead_set: Option<crate::leads::LeadSet>,
    /// Real time or as fast as possible.
    pub pacing: Pacing,
    /// Stop the source after this many seconds of signal (None: run until stopped).
    pub limit_s: Option<f64>,
    /// Deliver every processed sample on [`Pipeline::take_records`].
    pub record: bool,
    /// Run the recorder thread on every processed sample ([`Pipeline::recorder`]); wins over
    /// `record`.
    pub recorder: bool,
}

impl Default for PipelineConfig {
    fn default() -> Self {
        Self {
            source: SourceSpec::Synth(SynthSettings::default()),
            chain: ChainSettings::default(),
            window_s: 10.0,
            display_hz: 30.0,
            front_end: None,
            lead_set: None,
            pacing: Pacing::RealTime,
            limit_s: None,
            record: false,
            recorder: false,
        }
    }
}

/// The running threads. Dropping it stops and joins them.
pub struct Pipeline {
    control_tx: Sender<Control>,
    synth_tx: Sender<SynthSettings>,
    snapshots: Receiver<Snapshot>,
    records: Option<Receiver<RecordBlock>>,
    stop: Arc<AtomicBool>,
    threads: Vec<JoinHandle<()>>,
    label: String,
    serial_status: Option<crate::source::serial::StatusHandle>,
    net_status: Option<crate::source::net::NetHandle>,
    replay_tx: Option<Sender<crate::source::replay::ReplayCommand>>,
    replay_status: Option<crate::source::replay::ReplayHandle>,
    recorder_tx: Option<Sender<RecorderCommand>>,
    recorder_status: Option<crate::recorder::StatusHandle>,
    design_slot: crate::process::DesignSlot,
}

impl Pipeline {
    /// Starts the source and DSP threads. `notify` is called after every snapshot.
    ///
    /// # Errors
    /// [`PipelineError`] when the source refuses its settings or a thread cannot start.
    pub fn start(cfg: PipelineConfig, notify: Notify) -> Result<Self, PipelineError> {
        let stop = Arc::new(AtomicBool::new(false));
        let (raw_tx, raw_rx) = bounded(RAW_DEPTH);
        let (snapshot_tx, snapshot_rx) = bounded(SNAPSHOT_DEPTH);
        // Control messages are a few per second at most: unbounded cannot grow in practice.
        let (control_tx, control_rx) = unbounded();
        let (synth_tx, synth_rx) = unbounded();
        let (record_tx, mut record_rx) = if cfg.record || cfg.recorder {
            let (t, r) = bounded(RECORD_DEPTH);
            (Some(t), Some(r))
        } else {
            (None, None)
        };
        let label = cfg.source.label();

        let mut threads = Vec::new();
        let (mut recorder_tx, mut recorder_status) = (None, None);
        if cfg.recorder
            && let Some(blocks) = record_rx.take()
        {
            let status: crate::recorder::StatusHandle = Default::default();
            recorder_status = Some(Arc::clone(&status));
            // Start, stop and marker commands come from a person: a few per second at most.
            let (tx, rx) = unbounded();
            recorder_tx = Some(tx);
            let stop = Arc::clone(&stop);
            threads.push(
                std::thread::Builder::new()
                    .name("leadline-recorder".into())
                    .spawn(move || crate::recorder::run(blocks, rx, &stop, status))
                    .map_err(|e| PipelineError::Spawn("recorder", e))?,
            );
        }
        let limit = cfg.limit_s;
        let nominal_fs_hz = cfg.source.nominal_fs_hz();
        let (source_thread, links) =
            spawn_source(cfg.source, raw_tx, synth_rx, &stop, cfg.pacing, limit)?;
        threads.push(source_thread);
        let design_slot = crate::process::DesignSlot::default();
        let dsp_cfg = DspConfig {
            chain: cfg.chain,
            window_s: cfg.window_s,
            display_hz: cfg.display_hz,
            front_end: cfg.front_end,
            lead_set: cfg.lead_set,
            nominal_fs_hz,
            design_slot: Arc::clone(&design_slot),
        };
        let ports = DspPorts {
            raw_rx,
            control_rx,
            snapshot_tx,
            snapshot_drain: snapshot_rx.clone(),
            record_tx,
        };
        let dsp_stop = Arc::clone(&stop);
        let spawned = std::thread::Builder::new()
            .name("leadline-dsp".into())
            .spawn(move || process::run(dsp_cfg, ports, &dsp_stop, notify));
        match spawned {
            Ok(h) => threads.push(h),
            Err(e) => {
                stop.store(true, Ordering::Relaxed);
                for t in threads.drain(..) {
                    let _ = t.join();
                }
                return Err(PipelineError::Spawn("dsp", e));
            }
        }
        Ok(Self {
            control_tx,
            synth_tx,
            snapshots: snapshot_rx,
            records: record_rx,
            stop,
            threads,
            label,
            serial_status: links.serial_status,
            net_status: links.net_status,
            replay_tx: links.replay_tx,
            replay_status: links.replay_status,
            recorder_tx,
            recorder_status,
            design_slot,
        })
    }

    /// Sends a control message to the DSP thread.
    pub fn control(&self, c: Control) {
        // A send fails only when the thread has ended; then there is nothing left to control.
        let _ = self.control_tx.send(c);
    }

    /// New simulator settings, straight to the source thread (applied live).
    pub fn synth(&self, s: SynthSettings) {
        let _ = self.synth_tx.send(s);
    }

    /// The chain's design in force (the DSP thread's; before the first block, at the source's
    /// expected rate when it has one).
    pub fn design(&self) -> Option<Arc<crate::dsp::Design>> {
        self.design_slot.lock().ok().and_then(|g| g.clone())
    }

    /// The newest snapshot, if one arrived since the last call (older ones are skipped).
    pub fn latest_snapshot(&self) -> Option<Snapshot> {
        self.snapshots.try_iter().last()
    }

    /// The snapshot channel itself, for callers that wait on it.
    pub fn snapshots(&self) -> &Receiver<Snapshot> {
        &self.snapshots
    }

    /// The recorder path (only when started with `record: true`; once).
    pub fn take_records(&mut self) -> Option<Receiver<RecordBlock>> {
        self.records.take()
    }

    /// Sends a command to the recorder (ignored when it was not started).
    pub fn recorder(&self, c: RecorderCommand) {
        if let Some(tx) = &self.recorder_tx {
            let _ = tx.send(c);
        }
    }

    /// What the recorder is doing (None when it was not started).
    pub fn recorder_status(&self) -> Option<crate::recorder::RecorderStatus> {
        self.recorder_status
            .as_ref()
            .and_then(|s| s.lock().ok().map(|g| g.clone()))
    }

    /// Stops a running recording and waits (up to `timeout`) until its file is closed.
    /// Returns the final status.
    pub fn finish_recording(&self, timeout: Duration) -> Option<crate::recorder::RecorderStatus> {
        self.recorder(RecorderCommand::Stop);
        let deadline = std::time::Instant::now() + timeout;
        loop {
            let s = self.recorder_status()?;
            if s.active.is_none() || std::time::Instant::now() >= deadline {
                return Some(s);
            }
            std::thread::sleep(Duration::from_millis(10));
        }
    }

    /// What the serial thread is doing (None for other sources).
    pub fn serial_status(&self) -> Option<crate::source::serial::SerialStatus> {
        self.serial_status
            .as_ref()
            .and_then(|s| s.lock().ok().map(|g| g.clone()))
    }

    /// What a network source is doing (None for other sources).
    pub fn net_status(&self) -> Option<crate::source::net::NetStatus> {
        self.net_status
            .as_ref()
            .and_then(|s| s.lock().ok().map(|g| g.clone()))
    }

    /// Sends a command to a replay source (ignored for other sources).
    pub fn replay(&self, c: crate::source::replay::ReplayCommand) {
        if let Some(tx) = &self.replay_tx {
            let _ = tx.send(c);
        }
    }

    /// Where a replay source is (None for other sources).
    pub fn replay_status(&self) -> Option<crate::source::replay::ReplayStatus> {
        self.replay_status
            .as_ref()
            .and_then(|s| s.lock().ok().map(|g| g.clone()))
    }

    /// Short description of the source for the status line.
    pub fn label(&self) -> &str {
        &self.label
    }

    /// True once every thread has ended (a finite source ran out).
    pub fn is_finished(&self) -> bool {
        self.threads.iter().all(JoinHandle::is_finished)
    }

    /// Stops and joins the threads. Each thread looks at the stop flag at least every 20 ms.
    pub fn shutdown(&mut self) {
        self.stop.store(true, Ordering::Relaxed);
        for t in self.threads.drain(..) {
            // A panicked worker has already printed its message; shutting down goes on.
            let _ = t.join();
        }
    }
}

impl Drop for Pipeline {
    fn drop(&mut self) {
        self.shutdown();
    }
}
/// What the monitor keeps of a running source: its status and its command channel.
#[derive(Default)]
struct SourceLinks {
    serial_status: Option<crate::source::serial::StatusHandle>,
    net_status: Option<crate::source::net::NetHandle>,
    replay_tx: Option<Sender<crate::source::replay::ReplayCommand>>,
    replay_status: Option<crate::source::replay::ReplayHandle>,
}

/// Starts the source's thread.
fn spawn_source(
    source: SourceSpec,
    raw_tx: Sender<crate::msg::RawBlock>,
    synth_rx: Receiver<SynthSettings>,
    stop: &Arc<AtomicBool>,
    pacing: Pacing,
    limit_s: Option<f64>,
) -> Result<(JoinHandle<()>, SourceLinks), PipelineError> {
    let mut links = SourceLinks::default();
    let thread;
    match source {
        SourceSpec::File(spec) => {
            let status: crate::source::replay::ReplayHandle = Default::default();
            links.replay_status = Some(Arc::clone(&status));
            // Replay commands are a few per second at most.
            let (tx, rx) = unbounded();
            links.replay_tx = Some(tx);
            let stop = Arc::clone(stop);
            thread = std::thread::Builder::new()
                .name("leadline-replay".into())
                .spawn(move || crate::source::replay::run(spec, raw_tx, rx, &stop, status))
                .map_err(|e| PipelineError::Spawn("replay", e))?;
            drop(synth_rx);
        }
        SourceSpec::Udp(spec) => {
            // A port in use is reported at once, not from inside the thread.
            let socket = crate::source::net::bind_udp(spec.bind).map_err(PipelineError::Source)?;
            let status: crate::source::net::NetHandle = Default::default();
            links.net_status = Some(Arc::clone(&status));
            let stop = Arc::clone(stop);
            thread = std::thread::Builder::new()
                .name("leadline-udp".into())
                .spawn(move || crate::source::net::run_udp(spec, socket, raw_tx, &stop, status))
                .map_err(|e| PipelineError::Spawn("udp", e))?;
            drop(synth_rx);
        }
        SourceSpec::Tcp(spec) => {
            let status: crate::source::net::NetHandle = Default::default();
            links.net_status = Some(Arc::clone(&status));
            let stop = Arc::clone(stop);
            thread = std::thread::Builder::new()
                .name("leadline-tcp".into())
                .spawn(move || crate::source::net::run_tcp(spec, raw_tx, &stop, status))
                .map_err(|e| PipelineError::Spawn("tcp", e))?;
            drop(synth_rx);
        }
        SourceSpec::Serial(spec) => {
            let status: crate::source::serial::StatusHandle = Default::default();
            links.serial_status = Some(Arc::clone(&status));
            let stop = Arc::clone(stop);
            thread = std::thread::Builder::new()
                .name("leadline-serial".into())
                .spawn(move || crate::source::serial::run(spec, raw_tx, &stop, status))
                .map_err(|e| PipelineError::Spawn("serial", e))?;
            drop(synth_rx);
        }
        SourceSpec::Synth(settings) => {
            let limit = limit_s.map(|s| (s * settings.fs_hz).round() as u64);
            let synth = Synth::new(settings)?;
            let stop = Arc::clone(stop);
            thread = std::thread::Builder::new()
                .name("leadline-source".into())
                .spawn(move || run_synth(synth, raw_tx, synth_rx, &stop, pacing, limit))
                .map_err(|e| PipelineError::Spawn("source", e))?;
        }
    }
    Ok((thread, links))
}
