//! The DSP core: scale → chain → display columns → Snapshot, and every processed sample to the
//! recorder path. [`Dsp`] holds the state and is driven by three calls — [`Dsp::apply`] a
//! control, [`Dsp::push`] a raw block, [`Dsp::snapshot`] when the display is due — so tests run it
//! without threads; [`run`] is the thread body, a short loop around it.
//!
//! Parts in their own files: the display traces ([`trace`]), the running spectrum
//! ([`spectrum`]) and the heart-rate readout with the averaged beat ([`beats`]).

mod beats;
pub mod emg;
mod leads;
mod spectrum;
mod thread;
mod trace;

pub use thread::run;

use std::sync::Arc;
use std::time::{Duration, Instant};

use crossbeam_channel::{Receiver, Sender};

use self::beats::BeatState;
pub use self::spectrum::SPECTRUM_S;
use self::spectrum::SpectrumState;
use self::trace::TraceBuf;
use crate::analysis::emg::EmgSettings;
use crate::analysis::rate::RateState;
use crate::dsp::chain::{Chain, ChainSettings};
use crate::msg::{
    ChannelTrace, Control, RawBlock, RecordBlock, SampleUnit, Snapshot, SoundFeed, Stats,
};
use crate::scale::{self, FrontEnd, InputScale};
use crate::sound::Renderer;
use emg::{EmgView, LiveEmg};

/// About one column per pixel of a wide trace; the GUI never draws more points than this.
pub const TARGET_COLUMNS: usize = 1200;
/// Longest display window, s: the ring buffers hold this much.
pub const MAX_WINDOW_S: f64 = 30.0;
/// Shortest display window, s.
pub const MIN_WINDOW_S: f64 = 2.0;
/// How often the EMG view is made again.
const EMG_PERIOD: Duration = Duration::from_millis(250);

/// The callback the DSP thread calls after each Snapshot (the GUI passes `request_repaint`).
pub type Notify = std::sync::Arc<dyn Fn() + Send + Sync>;

/// Everything the DSP thread is started with.
pub struct DspConfig {
    /// Chain to start with.
    pub chain: ChainSettings,
    /// Display window, s.
    pub window_s: f64,
    /// Most snapshots per second.
    pub display_hz: f64,
    /// The user's front end per channel (None: the source's own scaling).
    pub front_end: Option<Vec<FrontEnd>>,
    /// What the source's channels are (the standard leads are derived before the chain).
    pub lead_set: Option<crate::leads::LeadSet>,
    /// The rate the source is expected to run at, if it says (the simulator, a board given its
    /// rate): the chain is designed at it before the first block, so the views can show it.
    pub nominal_fs_hz: Option<f64>,
    /// Where the design in force is published for the views (shared with the pipeline).
    pub design_slot: DesignSlot,
}

/// The chain's design in force, published by the DSP thread on every change: the one designed
/// value every view, export and check of the monitor takes.
pub type DesignSlot = Arc<std::sync::Mutex<Option<Arc<crate::dsp::Design>>>>;

/// The channels the DSP thread talks on. Policies are set where they are created (pipeline.rs).
pub struct DspPorts {
    pub raw_rx: Receiver<RawBlock>,
    pub control_rx: Receiver<Control>,
    pub snapshot_tx: Sender<Snapshot>,
    /// Second handle on the snapshot channel, used to drop the oldest snapshot when full.
    pub snapshot_drain: Receiver<Snapshot>,
    pub record_tx: Option<Sender<RecordBlock>>,
}

/// The stream being processed: its shape, the chain that runs and the display traces.
struct Running {
    fs: f64,
    /// The source's channels, and the stream's after the lead stage.
    inputs: usize,
    channels: usize,
    chain: Chain,
    raw: Vec<TraceBuf>,
    filtered: Vec<TraceBuf>,
    last_uv: Vec<f64>,
    next_sample: u64,
}

impl Running {
    /// The newest `seconds` of channel `ch` before the chain.
    fn raw_tail(&self, ch: usize, seconds: f64) -> Vec<f64> {
        let mut v = Vec::new();
        self.raw[ch.min(self.channels - 1)].tail_into((seconds * self.fs) as usize, &mut v);
        v
    }
}

/// Sound on: the renderer (made with the first block after the request) and where it sends.
struct Sound {
    feed: SoundFeed,
    renderer: Option<Renderer>,
    audio: Vec<f32>,
}

/// The EMG view: its settings (with the user's marks), the live analysis of the followed
/// channel (once a stream runs), the newest view and when it was made.
struct Emg {
    settings: EmgSettings,
    live: Option<LiveEmg>,
    view: Option<Arc<EmgView>>,
    at: Instant,
}

/// The DSP core's state.
pub struct Dsp {
    /// The last chain that could be built (a new stream starts with it).
    chain: ChainSettings,
    chain_error: Option<String>,
    window_s: f64,
    period: Duration,
    front_end: Option<Vec<FrontEnd>>,
    stats: Stats,
    state: Option<Running>,
    paused: bool,
    scale: Option<InputScale>,
    last_snapshot: Instant,
    oldest_pending: Option<Instant>,
    newest_pending: Option<Instant>,
    latency_window_start: Instant,
    latency_max_ms: f64,
    spectrum: SpectrumState,
    beats: Option<BeatState>,
    follow: usize,
    invert: bool,
    rails: Vec<bool>,
    measured: Option<Arc<crate::measure::Measured>>,
    sound: Option<Sound>,
    emg: Option<Emg>,
    leads: leads::LeadStage,
    /// The source's expected rate, for designing before the first block.
    nominal_fs: Option<f64>,
    design_slot: DesignSlot,
}

impl Dsp {
    /// The core as configured, before any block.
    pub fn new(cfg: DspConfig) -> Self {
        let period = Duration::from_secs_f64(1.0 / cfg.display_hz.clamp(1.0, 240.0));
        let mut dsp = Self {
            chain: cfg.chain,
            chain_error: None,
            window_s: cfg.window_s,
            period,
            front_end: cfg.front_end,
            stats: Stats::default(),
            state: None,
            paused: false,
            scale: None,
            last_snapshot: Instant::now() - period,
            oldest_pending: None,
            newest_pending: None,
            latency_window_start: Instant::now(),
            latency_max_ms: 0.0,
            spectrum: SpectrumState::new(),
            beats: None,
            follow: 0,
            invert: false,
            rails: Vec::new(),
            measured: None,
            sound: None,
            emg: None,
            leads: leads::LeadStage::new(cfg.lead_set),
            nominal_fs: cfg.nominal_fs_hz,
            design_slot: cfg.design_slot,
        };
        dsp.preview(cfg.chain);
        dsp
    }

    /// Publishes `design` as the one in force.
    fn publish(&self, design: &Arc<crate::dsp::Design>) {
        if let Ok(mut g) = self.design_slot.lock() {
            *g = Some(Arc::clone(design));
        }
    }

    /// Before any stream: designs `chain` at the nominal rate (if known) and publishes it; a
    /// chain that cannot be built there is refused like a running one.
    fn preview(&mut self, chain: ChainSettings) {
        let Some(fs) = self.nominal_fs else {
            self.chain = chain;
            return;
        };
        match chain.design(fs) {
            Ok(d) => {
                self.chain = chain;
                self.chain_error = None;
                self.publish(&Arc::new(d));
            }
            Err(e) => self.chain_error = Some(e.to_string()),
        }
    }

    /// Counters so far.
    pub fn stats(&self) -> &Stats {
        &self.stats
    }

    /// Applies a control from the next block (a chain that cannot be built is refused: the
    /// last good one keeps running, and the error rides on the snapshots).
    pub fn apply(&mut self, c: Control) {
        match c {
            Control::Chain(s) => match self.state.as_mut().map(|r| r.chain.retune(s)) {
                Some(Err(e)) => self.chain_error = Some(e.to_string()),
                Some(Ok(())) => {
                    self.chain = s;
                    self.chain_error = None;
                    if let Some(r) = &self.state {
                        self.publish(r.chain.design());
                    }
                }
                None => self.preview(s),
            },
            Control::Window(w) => {
                self.window_s = w.clamp(MIN_WINDOW_S, MAX_WINDOW_S);
                if let Some(r) = self.state.as_mut() {
                    for t in r.raw.iter_mut().chain(r.filtered.iter_mut()) {
                        t.set_window(r.fs, self.window_s);
                    }
                }
            }
            Control::DisplayPaused(p) => self.paused = p,
            Control::DisplayRate(hz) if hz.is_finite() => {
                self.period = Duration::from_secs_f64(1.0 / hz.clamp(1.0, 120.0));
            }
            Control::DisplayRate(_) => {}
            Control::Channel(c) => {
                self.spectrum.channel = c;
                self.spectrum.frame = None;
                self.follow = c;
                self.beats = self
                    .state
                    .as_ref()
                    .and_then(|r| BeatState::new(r.fs, c.min(r.channels - 1)));
                self.restart_emg();
            }
            Control::Invert(i) => self.invert = i,
            Control::SpectrumSegment(n) => {
                self.spectrum.segment_request = n;
                self.spectrum.frame = None;
            }
            Control::FrontEnd(f) => self.front_end = f,
            Control::Measure(req) => {
                if let Some(r) = self.state.as_ref() {
                    // The raw traces' rings hold the newest 30 s of every channel.
                    let channels: Vec<Vec<f64>> = (0..r.channels)
                        .map(|ch| r.raw_tail(ch, MAX_WINDOW_S))
                        .collect();
                    let seconds = channels.first().map_or(0.0, |c| c.len() as f64 / r.fs);
                    self.measured = Some(Arc::new(crate::measure::Measured {
                        seconds,
                        result: crate::measure::run(&req, &channels, r.fs)
                            .map_err(|e| e.to_string()),
                    }));
                }
            }
            // Made afresh with the next block, at the stream's position.
            Control::Sound(feed) => {
                self.sound = feed.map(|feed| Sound {
                    feed,
                    renderer: None,
                    audio: Vec::new(),
                });
            }
            Control::Emg(e) => self.set_emg(e),
            Control::LeadSet(set) => {
                // The stream's shape changes: it starts again with the next block.
                self.leads = leads::LeadStage::new(set);
                self.state = None;
            }
            Control::EmgMark(m) => {
                if let Some(e) = self.emg.as_mut()
                    && let Some(l) = e.live.as_mut()
                {
                    l.note = l.mark(m).err();
                    e.settings = *l.settings();
                    e.view = None;
                }
            }
        }
    }

    /// A stream of a new shape (rate, channels) starts: the last good chain at its rate (or a
    /// pass-through while it cannot be built there), fresh traces, a fresh readout.
    fn start_stream(&mut self, block: &RawBlock) -> bool {
        let channels = self.leads.outputs(block.channels);
        let built = Chain::new(self.chain, block.fs_hz, channels).or_else(|e| {
            self.chain_error = Some(e.to_string());
            Chain::new(ChainSettings::band(None, None), block.fs_hz, channels)
        });
        let Ok(chain) = built else { return false };
        let traces = || {
            (0..channels)
                .map(|_| TraceBuf::new(block.fs_hz, self.window_s))
                .collect()
        };
        self.publish(chain.design());
        self.state = Some(Running {
            fs: block.fs_hz,
            inputs: block.channels,
            channels,
            chain,
            raw: traces(),
            filtered: traces(),
            last_uv: vec![0.0; block.channels],
            next_sample: block.first_sample,
        });
        self.beats = BeatState::new(block.fs_hz, self.follow.min(channels - 1));
        if let Some(s) = self.sound.as_mut() {
            s.renderer = None;
        }
        self.restart_emg();
        true
    }

    /// The block in input-referred µV (the user's front end wins over the source's own
    /// scaling, never over files in µV), with the rail flags in `self.rails`.
    fn scale_block(&mut self, block: &RawBlock, channels: usize, last_uv: &mut [f64]) -> Vec<f64> {
        let user = |ch: usize| {
            self.front_end
                .as_deref()
                .and_then(|l| scale::for_channel(l, ch))
                .copied()
        };
        let fe_of = |ch: usize| -> Option<FrontEnd> {
            match block.unit {
                SampleUnit::Microvolts => None,
                SampleUnit::Counts(s) => Some(user(ch).unwrap_or(FrontEnd::counts(s))),
                SampleUnit::Decimal(k) => Some(user(ch).unwrap_or(FrontEnd {
                    values: if k == 1e6 {
                        scale::ValueKind::Volts
                    } else if k == 1.0 {
                        scale::ValueKind::Microvolts
                    } else {
                        scale::ValueKind::Millivolts
                    },
                    adc: InputScale::default(),
                })),
            }
        };
        let decimal = matches!(block.unit, SampleUnit::Decimal(_));
        let fes: Vec<Option<FrontEnd>> = (0..channels).map(fe_of).collect();
        self.scale = fes
            .get(self.follow.min(channels - 1))
            .copied()
            .flatten()
            .and_then(|f| if decimal { None } else { f.scale() });
        self.rails.clear();
        let mut uv = Vec::with_capacity(block.data.len());
        for (i, &v) in block.data.iter().enumerate() {
            let ch = i % channels;
            let value = match &fes[ch] {
                Some(fe) => {
                    let rail = fe.is_rail(v, decimal);
                    if rail {
                        self.stats.clipped += 1;
                    }
                    self.rails.push(rail);
                    fe.to_uv(v, decimal)
                }
                None => {
                    self.rails.push(false);
                    v
                }
            };
            let value = if self.invert { -value } else { value };
            let value = if value.is_finite() {
                value
            } else {
                self.stats.bad_values += 1;
                last_uv[ch]
            };
            last_uv[ch] = value;
            uv.push(value);
        }
        uv
    }

    /// Processes one raw block. Returns what the recorder path gets (every sample, never
    /// dropped), or `None` when no stream could be started.
    pub fn push(&mut self, block: RawBlock) -> Option<RecordBlock> {
        let fresh = self.state.as_ref().is_none_or(|r| {
            r.fs != block.fs_hz
                || r.inputs != block.channels
                || r.channels != self.leads.outputs(block.channels)
        });
        if fresh && !self.start_stream(&block) {
            return None;
        }
        let mut r = self.state.take()?;
        if block.first_sample > r.next_sample {
            self.stats.frames_lost += block.first_sample - r.next_sample;
        }
        r.next_sample = block.first_sample + block.frames() as u64;
        self.stats.blocks += 1;
        if block.gap_before {
            self.stats.gaps += 1;
        }
        self.stats.frames += block.frames() as u64;
        self.oldest_pending.get_or_insert(block.made_at);
        self.newest_pending = Some(block.made_at);

        let mut last_uv = std::mem::take(&mut r.last_uv);
        let uv = self.scale_block(&block, r.inputs, &mut last_uv);
        r.last_uv = last_uv;
        let rails = std::mem::take(&mut self.rails);
        let (uv, rails) = self.leads.apply(uv, rails, r.inputs, r.fs);
        self.rails = rails;
        let derived = self.leads.names.is_some();
        let mut filt = uv.clone();
        r.chain.process_interleaved(&mut filt);
        for (i, (&a, &b)) in uv.iter().zip(&filt).enumerate() {
            let ch = i % r.channels;
            r.raw[ch].push(a as f32);
            r.filtered[ch].push(b as f32);
        }
        if let Some(bs) = self.beats.as_mut() {
            bs.process(&uv, &self.rails, r.channels, &r);
        }
        if let Some(l) = self.emg.as_mut().and_then(|e| e.live.as_mut()) {
            let ch = self.follow.min(r.channels - 1);
            l.push(uv.iter().skip(ch).step_by(r.channels).copied());
        }
        self.sound_block(&r, &filt, (uv.len() / r.channels) as u64);
        let range_uv = self.scale.map(|s| s.range_uv());
        self.state = Some(r);
        Some(RecordBlock {
            first_sample: block.first_sample,
            fs_hz: block.fs_hz,
            channels: self.state.as_ref().map_or(block.channels, |r| r.channels),
            // Derived leads have no counts of their own: they are recorded in µV.
            received: if derived { uv.clone() } else { block.data },
            raw_uv: uv,
            filtered_uv: filt,
            gap_before: block.gap_before,
            range_uv,
            names: self.leads.names.clone(),
        })
    }

    /// Sound for one block: the beats just decided, then the followed channel after the chain.
    fn sound_block(&mut self, r: &Running, filt: &[f64], frames: u64) {
        let Some(s) = self.sound.as_mut() else { return };
        let renderer = s.renderer.get_or_insert_with(|| {
            // Beats count from the readout's start; the sound joins there.
            let from = self
                .beats
                .as_ref()
                .map_or(0, |b| b.readout.samples().saturating_sub(frames));
            Renderer::joining(r.fs, s.feed.rate_hz, s.feed.settings, from)
        });
        if let Some(bs) = self.beats.as_ref() {
            let unreliable = matches!(bs.readout.shown(), RateState::Unreliable(_));
            for b in &bs.found {
                renderer.beat(b.decided, unreliable);
            }
        }
        let ch = self.follow.min(r.channels - 1);
        let own: Vec<f64> = filt.iter().skip(ch).step_by(r.channels).copied().collect();
        s.audio.clear();
        renderer.push(&own, &mut s.audio);
        if let Some(tx) = &s.feed.tx {
            // A full queue: the card fell behind; this block is dropped.
            let _ = tx.try_send(std::mem::take(&mut s.audio));
        }
    }

    /// True when a snapshot is due at `now` (new data, not frozen, a display period passed).
    pub fn due(&self, now: Instant) -> bool {
        self.state.is_some()
            && !self.paused
            && now.duration_since(self.last_snapshot) >= self.period
            && self.oldest_pending.is_some()
    }

    /// The snapshot of now (the spectrum, the automatic notch and the EMG view brought up to
    /// date first); `done` marks the last one of a stream. `None` before any block.
    pub fn snapshot(&mut self, now: Instant, done: bool) -> Option<Snapshot> {
        if let Some(t) = self.oldest_pending.take() {
            self.latency_max_ms = self
                .latency_max_ms
                .max(now.duration_since(t).as_secs_f64() * 1e3);
        }
        if now.duration_since(self.latency_window_start) >= Duration::from_secs(1) {
            self.stats.latency_ms = self.latency_max_ms;
            self.latency_max_ms = 0.0;
            self.latency_window_start = now;
        }
        let frontal_axis = self.state.as_ref().and_then(|r| self.frontal_axis(r));
        let r = self.state.as_mut()?;
        if done {
            self.spectrum.frame = None;
        }
        self.spectrum.update(r);
        // An automatic notch follows the measured mains of the followed channel.
        if self.chain.notch.enabled
            && self.chain.notch.auto
            && let Some(next) = self
                .spectrum
                .frame
                .as_ref()
                .and_then(|f| f.mains_raw.as_ref())
                .and_then(|m| m.notch_for(&self.chain.notch))
        {
            let mut next_chain = self.chain;
            next_chain.notch = next;
            if r.chain.retune(next_chain).is_ok() {
                self.chain = next_chain;
            }
        }
        if let Some(e) = self.emg.as_mut()
            && let Some(l) = &e.live
            && (e.view.is_none() || now.duration_since(e.at) >= EMG_PERIOD)
        {
            e.view = Some(Arc::new(l.view()));
            e.at = now;
        }
        let newest_age_ms = self
            .newest_pending
            .take()
            .map_or(0.0, |t| now.duration_since(t).as_secs_f64() * 1e3);
        // Keep the cadence: blocks arrive every few ms, so stepping by the period (rather than
        // restarting it at each snapshot) gives the display rate on average.
        self.last_snapshot = if now.duration_since(self.last_snapshot) < 2 * self.period {
            self.last_snapshot + self.period
        } else {
            now
        };
        Some(Snapshot {
            fs_hz: r.fs,
            t_end_s: r.next_sample as f64 / r.fs,
            window_s: self.window_s,
            traces: r
                .raw
                .iter()
                .zip(&r.filtered)
                .map(|(a, b)| ChannelTrace {
                    raw: a.columns(r.fs),
                    filtered: b.columns(r.fs),
                })
                .collect(),
            chain: *r.chain.settings(),
            design: Arc::clone(r.chain.design()),
            chain_error: self.chain_error.clone(),
            scale: self.scale,
            scale_check: self
                .beats
                .as_ref()
                .and_then(|b| b.readout.quality().scale_check()),
            measured: self.measured.clone(),
            stats: self.stats.clone(),
            source_done: done,
            spectrum: self.spectrum.frame.clone(),
            beats: self.beats.as_ref().map(BeatState::view),
            emg: self.emg.as_ref().and_then(|e| e.view.clone()),
            inverted: self.invert,
            latency_ms: newest_age_ms,
            leads: self.leads.names.clone(),
            lead_error: self.leads.error.clone(),
            electrodes_off: self.leads.off.clone(),
            frontal_axis,
            cancel: r.chain.cancel_state(self.follow.min(r.channels - 1)),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::msg::SampleUnit;

    fn block(first: u64, data: Vec<f64>, fs: f64) -> RawBlock {
        RawBlock {
            seq: first,
            first_sample: first,
            fs_hz: fs,
            channels: 1,
            data,
            unit: SampleUnit::Microvolts,
            gap_before: false,
            made_at: Instant::now(),
        }
    }

    fn core() -> Dsp {
        Dsp::new(DspConfig {
            chain: ChainSettings::default(),
            window_s: 10.0,
            display_hz: 30.0,
            front_end: None,
            lead_set: None,
            nominal_fs_hz: None,
            design_slot: DesignSlot::default(),
        })
    }

    #[test]
    fn the_core_runs_without_threads_and_counts_what_it_saw() {
        let mut d = core();
        let fs = 500.0;
        let x: Vec<f64> = (0..500)
            .map(|i| 1000.0 * (std::f64::consts::TAU * 1.2 * i as f64 / fs).sin())
            .collect();
        let rec = d.push(block(0, x[..250].to_vec(), fs)).unwrap();
        assert_eq!(rec.raw_uv, x[..250]);
        assert_eq!(rec.filtered_uv.len(), 250);
        // A gap of 50 frames, a NaN replaced by the previous value.
        let mut second = x[300..].to_vec();
        second[3] = f64::NAN;
        let rec = d.push(block(300, second, fs)).unwrap();
        assert_eq!(rec.raw_uv[3], rec.raw_uv[2]);
        assert_eq!(d.stats().frames_lost, 50);
        assert_eq!(d.stats().bad_values, 1);
        let now = Instant::now() + Duration::from_secs(1);
        assert!(d.due(now));
        let s = d.snapshot(now, false).unwrap();
        assert_eq!(s.stats.frames, 450);
        assert_eq!(s.t_end_s, 1.0);
        assert_eq!(*s.design, ChainSettings::default().design(fs).unwrap());
    }

    #[test]
    fn a_chain_that_cannot_be_built_is_refused_and_the_last_good_one_runs() {
        let mut d = core();
        let fs = 250.0;
        d.push(block(0, vec![0.0; 100], fs)).unwrap();
        let mut bad = ChainSettings::default();
        bad.lowpass.corner_hz = 200.0; // above Nyquist at 250 Hz
        d.apply(Control::Chain(bad));
        let s = d
            .snapshot(Instant::now() + Duration::from_secs(1), false)
            .unwrap();
        assert!(s.chain_error.as_deref().unwrap_or("").contains("Nyquist"));
        assert_eq!(s.chain, ChainSettings::default());
        // A new stream (another rate) starts with the last good chain, not the refused one.
        d.push(block(0, vec![0.0; 100], 500.0)).unwrap();
        let s = d
            .snapshot(Instant::now() + Duration::from_secs(2), false)
            .unwrap();
        assert_eq!(s.chain, ChainSettings::default());
    }

    #[test]
    fn frozen_display_makes_no_snapshot_due() {
        let mut d = core();
        d.push(block(0, vec![1.0; 100], 500.0)).unwrap();
        d.apply(Control::DisplayPaused(true));
        assert!(!d.due(Instant::now() + Duration::from_secs(1)));
        d.apply(Control::DisplayPaused(false));
        assert!(d.due(Instant::now() + Duration::from_secs(1)));
    }
}
