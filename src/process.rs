//! The DSP thread body: scale → chain → display columns → Snapshot, and every processed sample to
//! the recorder path.

use std::collections::VecDeque;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use crossbeam_channel::{Receiver, RecvTimeoutError, Sender};

use crate::analysis::beats::Beat;
use crate::analysis::mains;
use crate::analysis::readout::{RateSample, Readout};
use crate::analysis::template::TemplateBuilder;
use crate::chan::send_blocking;
use crate::dsp::chain::{Chain, ChainSettings};
use crate::dsp::spectrum::{Psd, Welch, segment_for};
use crate::msg::{
    BeatView, ChannelTrace, Columns, Control, RawBlock, RecordBlock, SampleUnit, Snapshot,
    SpectrumFrame, Stats,
};
use crate::scale::{self, FrontEnd, InputScale};

/// About one column per pixel of a wide trace; the GUI never draws more points than this.
pub const TARGET_COLUMNS: usize = 1200;
/// Longest display window, s: the ring buffers hold this much.
pub const MAX_WINDOW_S: f64 = 30.0;
/// Shortest display window, s.
pub const MIN_WINDOW_S: f64 = 2.0;

/// Seconds of signal behind each spectrum estimate (at least one segment).
pub const SPECTRUM_S: f64 = 10.0;
/// How often the spectrum is re-estimated.
const SPECTRUM_PERIOD: Duration = Duration::from_millis(1000);

/// The callback the DSP thread calls after each Snapshot (the GUI passes `request_repaint`).
pub type Notify = std::sync::Arc<dyn Fn() + Send + Sync>;

/// One trace's recent samples and their min/max columns, kept up to date sample by sample so a
/// snapshot costs the number of columns, not the number of samples in the window.
#[derive(Debug, Clone)]
struct TraceBuf {
    ring: VecDeque<f32>,
    ring_cap: usize,
    total: u64,
    spc: usize,
    keep_cols: usize,
    col_min: VecDeque<f32>,
    col_max: VecDeque<f32>,
    first_col: u64,
    cur_min: f32,
    cur_max: f32,
    cur_n: usize,
}

impl TraceBuf {
    fn new(fs: f64, window_s: f64) -> Self {
        let ring_cap = (MAX_WINDOW_S * fs).ceil() as usize + 1;
        let mut t = Self {
            ring: VecDeque::with_capacity(ring_cap),
            ring_cap,
            total: 0,
            spc: 1,
            keep_cols: 1,
            col_min: VecDeque::new(),
            col_max: VecDeque::new(),
            first_col: 0,
            cur_min: f32::INFINITY,
            cur_max: f32::NEG_INFINITY,
            cur_n: 0,
        };
        t.set_window(fs, window_s);
        t
    }

    fn set_window(&mut self, fs: f64, window_s: f64) {
        let window_samples = (window_s * fs).ceil().max(1.0);
        self.spc = ((window_samples / TARGET_COLUMNS as f64).ceil() as usize).max(1);
        self.keep_cols = (window_samples / self.spc as f64).ceil() as usize + 1;
        // Rebuild the columns from the samples we still hold, aligned to absolute sample indices.
        self.col_min.clear();
        self.col_max.clear();
        self.cur_n = 0;
        self.cur_min = f32::INFINITY;
        self.cur_max = f32::NEG_INFINITY;
        let start = self.total - self.ring.len() as u64;
        let aligned = start.div_ceil(self.spc as u64) * self.spc as u64;
        self.first_col = aligned / self.spc as u64;
        let ring = std::mem::take(&mut self.ring);
        let total = self.total;
        self.total = aligned;
        for &v in ring.iter().skip((aligned - start) as usize) {
            self.push_column_sample(v);
            self.total += 1;
        }
        debug_assert_eq!(self.total, total);
        self.total = total;
        self.ring = ring;
    }

    fn push_column_sample(&mut self, v: f32) {
        self.cur_min = self.cur_min.min(v);
        self.cur_max = self.cur_max.max(v);
        self.cur_n += 1;
        if self.cur_n == self.spc {
            self.col_min.push_back(self.cur_min);
            self.col_max.push_back(self.cur_max);
            self.cur_n = 0;
            self.cur_min = f32::INFINITY;
            self.cur_max = f32::NEG_INFINITY;
            while self.col_min.len() > self.keep_cols {
                self.col_min.pop_front();
                self.col_max.pop_front();
                self.first_col += 1;
            }
        }
    }

    fn push(&mut self, v: f32) {
        if self.ring.len() == self.ring_cap {
            self.ring.pop_front();
        }
        self.ring.push_back(v);
        self.push_column_sample(v);
        self.total += 1;
    }

    /// Samples `start .. start + len` (absolute indices), if the ring still holds them.
    fn window(&self, start: u64, len: usize) -> Option<Vec<f64>> {
        let first = self.total - self.ring.len() as u64;
        if start < first || start + len as u64 > self.total {
            return None;
        }
        let off = (start - first) as usize;
        Some(self.ring.range(off..off + len).map(|&v| v as f64).collect())
    }

    /// Copies the newest `n` samples (or all there are) into `out`.
    fn tail_into(&self, n: usize, out: &mut Vec<f64>) {
        out.clear();
        let skip = self.ring.len().saturating_sub(n);
        out.extend(self.ring.iter().skip(skip).map(|&v| v as f64));
    }

    fn columns(&self, fs: f64) -> Columns {
        let n = self.col_min.len() + usize::from(self.cur_n > 0);
        let mut min = Vec::with_capacity(n);
        let mut max = Vec::with_capacity(n);
        min.extend(self.col_min.iter());
        max.extend(self.col_max.iter());
        if self.cur_n > 0 {
            min.push(self.cur_min);
            max.push(self.cur_max);
        }
        Columns {
            t0_s: (self.first_col * self.spc as u64) as f64 / fs,
            dt_s: self.spc as f64 / fs,
            min,
            max,
        }
    }
}

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
}

/// The channels the DSP thread talks on. Policies are set where they are created (pipeline.rs).
pub struct DspPorts {
    pub raw_rx: Receiver<RawBlock>,
    pub control_rx: Receiver<Control>,
    pub snapshot_tx: Sender<Snapshot>,
    /// Second handle on the snapshot channel, used to drop the oldest snapshot when full.
    pub snapshot_drain: Receiver<Snapshot>,
    pub record_tx: Option<Sender<RecordBlock>>,
}

/// The spectrum estimator of the DSP thread: plan and buffers made once per rate and segment.
struct SpectrumState {
    channel: usize,
    segment_request: usize,
    welch: Option<Welch>,
    raw: Vec<f64>,
    filtered: Vec<f64>,
    last: Instant,
    serial: u64,
    frame: Option<Arc<SpectrumFrame>>,
}

impl SpectrumState {
    fn new() -> Self {
        Self {
            channel: 0,
            segment_request: 0,
            welch: None,
            raw: Vec::new(),
            filtered: Vec::new(),
            last: Instant::now(),
            serial: 0,
            frame: None,
        }
    }

    /// Re-estimates when a period has passed and a segment of data is there.
    fn update(&mut self, r: &Running) {
        if self.frame.is_some() && self.last.elapsed() < SPECTRUM_PERIOD {
            return;
        }
        let segment = if self.segment_request == 0 {
            segment_for(r.fs, 4.0)
        } else {
            self.segment_request
        };
        if self.welch.as_ref().is_none_or(|w| w.segment() != segment) {
            self.welch = Welch::new(segment).ok();
        }
        let Some(welch) = self.welch.as_mut() else {
            return;
        };
        let ch = self.channel.min(r.channels.saturating_sub(1));
        let want = ((SPECTRUM_S * r.fs) as usize).max(segment);
        r.raw[ch].tail_into(want, &mut self.raw);
        r.filtered[ch].tail_into(want, &mut self.filtered);
        if self.raw.len() < segment {
            return;
        }
        let (mut raw, mut filtered) = (Psd::default(), Psd::default());
        if welch.compute_into(&self.raw, r.fs, &mut raw).is_err()
            || welch
                .compute_into(&self.filtered, r.fs, &mut filtered)
                .is_err()
        {
            return;
        }
        self.serial += 1;
        self.last = Instant::now();
        self.frame = Some(Arc::new(SpectrumFrame {
            channel: ch,
            fs_hz: r.fs,
            seconds: self.raw.len() as f64 / r.fs,
            mains_raw: mains::analyse(&self.raw, r.fs, &raw).ok(),
            mains_filtered: mains::analyse(&self.filtered, r.fs, &filtered).ok(),
            raw,
            filtered,
            serial: self.serial,
        }));
    }
}

/// The heart-rate readout (detector, meter, quality) and the template of the followed channel.
struct BeatState {
    channel: usize,
    readout: Readout,
    template: TemplateBuilder,
    beats: VecDeque<u64>,
    waiting: VecDeque<u64>,
    found: Vec<Beat>,
    evals: Vec<RateSample>,
    values: Vec<f64>,
    rails: Vec<bool>,
    template_frame: Option<Arc<crate::analysis::template::Template>>,
    keep: u64,
}

impl BeatState {
    fn new(fs: f64, channel: usize) -> Option<Self> {
        Some(Self {
            channel,
            readout: Readout::new(fs).ok()?,
            template: TemplateBuilder::new(fs),
            beats: VecDeque::new(),
            waiting: VecDeque::new(),
            found: Vec::new(),
            evals: Vec::new(),
            values: Vec::new(),
            rails: Vec::new(),
            template_frame: None,
            keep: (120.0 * fs) as u64,
        })
    }

    /// One block of the followed channel (µV) with its rail flags.
    fn process(&mut self, uv: &[f64], rails: &[bool], channels: usize, r: &Running) {
        self.values.clear();
        self.values
            .extend(uv.iter().skip(self.channel).step_by(channels));
        self.rails.clear();
        self.rails
            .extend(rails.iter().skip(self.channel).step_by(channels));
        self.found.clear();
        self.evals.clear();
        self.readout
            .process(&self.values, &self.rails, &mut self.found, &mut self.evals);
        for b in &self.found {
            self.beats.push_back(b.sample);
            self.waiting.push_back(b.sample);
        }
        let now = self.readout.samples();
        while self.beats.front().is_some_and(|&b| b + self.keep < now) {
            self.beats.pop_front();
        }
        // Beats whose whole window has arrived go into the template.
        let (pre, post) = self.template.window();
        let mut added = false;
        while let Some(&b) = self.waiting.front() {
            if b + post as u64 >= now {
                break;
            }
            self.waiting.pop_front();
            let ch = self.channel.min(r.channels - 1);
            let len = pre + post + 1;
            if b >= pre as u64
                && let (Some(raw), Some(filt)) = (
                    r.raw[ch].window(b - pre as u64, len),
                    r.filtered[ch].window(b - pre as u64, len),
                )
            {
                self.template.add(raw, filt);
                added = true;
            }
        }
        if added {
            self.template_frame = self.template.template().map(Arc::new);
        }
    }

    fn view(&self) -> BeatView {
        BeatView {
            channel: self.channel,
            beats: self.beats.iter().copied().collect(),
            rate: self.readout.shown(),
            rate_at_s: self.readout.shown_at_s(),
            hrv: self.readout.meter().hrv(),
            quality: self.readout.quality().quality(),
            template: self.template_frame.clone(),
        }
    }
}

struct Running {
    fs: f64,
    channels: usize,
    chain: Chain,
    raw: Vec<TraceBuf>,
    filtered: Vec<TraceBuf>,
    last_uv: Vec<f64>,
    next_sample: u64,
}

/// Runs until `stop` is set or the source hangs up (then a last snapshot marks the end).
pub fn run(cfg: DspConfig, ports: DspPorts, stop: &AtomicBool, notify: Notify) {
    let DspConfig {
        mut chain,
        mut window_s,
        display_hz,
        mut front_end,
    } = cfg;
    let mut period = Duration::from_secs_f64(1.0 / display_hz.clamp(1.0, 240.0));
    let mut stats = Stats::default();
    let mut state: Option<Running> = None;
    let mut chain_error: Option<String> = None;
    let mut paused = false;
    let mut scale: Option<InputScale> = None;
    let mut last_snapshot = Instant::now() - period;
    let mut oldest_pending: Option<Instant> = None;
    let mut newest_pending: Option<Instant> = None;
    let mut latency_window_start = Instant::now();
    let mut latency_max_ms: f64 = 0.0;
    let mut spectrum = SpectrumState::new();
    let mut beat_state: Option<BeatState> = None;
    let mut follow = 0usize;
    let mut invert = false;
    let mut rails: Vec<bool> = Vec::new();
    let mut measured: Option<Arc<crate::measure::Measured>> = None;
    let mut sound: Option<(crate::sound::Renderer, Option<Sender<Vec<f32>>>)> = None;
    let mut sound_feed: Option<crate::msg::SoundFeed> = None;
    let mut emg: Option<crate::analysis::emg::EmgSettings> = None;
    let mut emg_view: Option<Arc<crate::analysis::emg::EmgView>> = None;
    let mut emg_at = Instant::now();
    let mut emg_error: Option<String> = None;
    let mut audio: Vec<f32> = Vec::new();

    loop {
        if stop.load(Ordering::Relaxed) {
            return;
        }
        while let Ok(c) = ports.control_rx.try_recv() {
            match c {
                Control::Chain(s) => {
                    // A chain that cannot be built is refused: the last good one keeps running
                    // (and is the one a new stream starts with), and the error is shown.
                    match state.as_mut().map(|r| r.chain.retune(s)) {
                        Some(Err(e)) => chain_error = Some(e.to_string()),
                        _ => {
                            chain = s;
                            chain_error = None;
                        }
                    }
                }
                Control::Window(w) => {
                    window_s = w.clamp(MIN_WINDOW_S, MAX_WINDOW_S);
                    if let Some(r) = state.as_mut() {
                        for t in r.raw.iter_mut().chain(r.filtered.iter_mut()) {
                            t.set_window(r.fs, window_s);
                        }
                    }
                }
                Control::DisplayPaused(p) => paused = p,
                Control::DisplayRate(hz) if hz.is_finite() => {
                    period = Duration::from_secs_f64(1.0 / hz.clamp(1.0, 120.0));
                }
                Control::DisplayRate(_) => {}
                Control::Channel(c) => {
                    spectrum.channel = c;
                    spectrum.frame = None;
                    follow = c;
                    beat_state = state
                        .as_ref()
                        .and_then(|r| BeatState::new(r.fs, c.min(r.channels - 1)));
                }
                Control::Invert(i) => invert = i,
                Control::SpectrumSegment(n) => {
                    spectrum.segment_request = n;
                    spectrum.frame = None;
                }
                Control::FrontEnd(f) => front_end = f,
                Control::Measure(req) => {
                    if let Some(r) = state.as_ref() {
                        // The raw traces' rings hold the newest 30 s of every channel.
                        let want = (MAX_WINDOW_S * r.fs) as usize;
                        let channels: Vec<Vec<f64>> = r
                            .raw
                            .iter()
                            .map(|t| {
                                let mut v = Vec::new();
                                t.tail_into(want, &mut v);
                                v
                            })
                            .collect();
                        let seconds = channels.first().map_or(0.0, |c| c.len() as f64 / r.fs);
                        measured = Some(Arc::new(crate::measure::Measured {
                            seconds,
                            result: crate::measure::run(&req, &channels, r.fs)
                                .map_err(|e| e.to_string()),
                        }));
                    }
                }
                Control::Sound(feed) => {
                    // Made afresh with the next block, at the stream's position.
                    sound = None;
                    sound_feed = feed;
                }
                Control::Emg(e) => {
                    // The marks made so far stay unless the new settings bring their own.
                    let keep = emg.map(|o| (o.baseline_uv, o.mvc_rms_uv));
                    emg = e.map(|mut n| {
                        if let Some((b, m)) = keep {
                            n.baseline_uv = n.baseline_uv.or(b);
                            n.mvc_rms_uv = n.mvc_rms_uv.or(m);
                        }
                        n
                    });
                    emg_view = None;
                }
                Control::EmgMark(m) => {
                    if let (Some(es), Some(r)) = (emg.as_mut(), state.as_ref()) {
                        let ch = follow.min(r.channels - 1);
                        let mut raw = Vec::new();
                        r.raw[ch].tail_into((20.0 * r.fs) as usize, &mut raw);
                        let result = crate::analysis::emg::mark(&raw, r.fs, es, m);
                        emg_view = None;
                        if let Err(e) = result {
                            emg_error = Some(e.to_string());
                        } else {
                            emg_error = None;
                        }
                    }
                }
                // Simulator settings go straight to the source thread.
                Control::Synth(_) => {}
            }
        }

        let block = match ports.raw_rx.recv_timeout(Duration::from_millis(20)) {
            Ok(b) => Some(b),
            Err(RecvTimeoutError::Timeout) => None,
            Err(RecvTimeoutError::Disconnected) => {
                if let Some(r) = &state {
                    spectrum.frame = None;
                    spectrum.update(r);
                    let snap = Snapshot {
                        beats: beat_state.as_ref().map(BeatState::view),
                        inverted: invert,
                        ..snapshot(
                            r,
                            window_s,
                            &chain_error,
                            scale,
                            &stats,
                            true,
                            &spectrum.frame,
                        )
                    };
                    offer(&ports, snap, &mut stats);
                    notify();
                }
                return;
            }
        };

        if let Some(block) = block {
            let fresh = match &state {
                Some(r) => r.fs != block.fs_hz || r.channels != block.channels,
                None => true,
            };
            if fresh {
                let built = Chain::new(chain, block.fs_hz, block.channels).or_else(|e| {
                    chain_error = Some(e.to_string());
                    // Run a pass-through chain rather than nothing until the user fixes it.
                    let bypass = ChainSettings {
                        highpass: crate::dsp::HighPass {
                            enabled: false,
                            ..chain.highpass
                        },
                        notch: crate::dsp::Notch {
                            enabled: false,
                            ..chain.notch
                        },
                        lowpass: crate::dsp::LowPass {
                            enabled: false,
                            ..chain.lowpass
                        },
                        gain: 1.0,
                    };
                    Chain::new(bypass, block.fs_hz, block.channels)
                });
                let Ok(c) = built else { return };
                state = Some(Running {
                    fs: block.fs_hz,
                    channels: block.channels,
                    chain: c,
                    raw: (0..block.channels)
                        .map(|_| TraceBuf::new(block.fs_hz, window_s))
                        .collect(),
                    filtered: (0..block.channels)
                        .map(|_| TraceBuf::new(block.fs_hz, window_s))
                        .collect(),
                    last_uv: vec![0.0; block.channels],
                    next_sample: block.first_sample,
                });
                beat_state = BeatState::new(block.fs_hz, follow.min(block.channels - 1));
                // A new stream (rate, channels): the renderer starts again at its rate.
                sound = None;
            }
            let Some(r) = state.as_mut() else { continue };
            if block.first_sample > r.next_sample {
                stats.frames_lost += block.first_sample - r.next_sample;
            }
            r.next_sample = block.first_sample + block.frames() as u64;
            stats.blocks += 1;
            if block.gap_before {
                stats.gaps += 1;
            }
            stats.frames += block.frames() as u64;
            oldest_pending.get_or_insert(block.made_at);
            newest_pending = Some(block.made_at);

            let mut uv = Vec::with_capacity(block.data.len());
            rails.clear();
            // The user's front end wins over the source's own scaling (never over files in µV).
            let user = |ch: usize| {
                front_end
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
            let fes: Vec<Option<FrontEnd>> = (0..r.channels).map(fe_of).collect();
            scale = fes
                .get(follow.min(r.channels - 1))
                .copied()
                .flatten()
                .and_then(|f| if decimal { None } else { f.scale() });
            for (i, &v) in block.data.iter().enumerate() {
                let ch = i % r.channels;
                let value = match &fes[ch] {
                    Some(fe) => {
                        let rail = fe.is_rail(v, decimal);
                        if rail {
                            stats.clipped += 1;
                        }
                        rails.push(rail);
                        fe.to_uv(v, decimal)
                    }
                    None => {
                        rails.push(false);
                        v
                    }
                };
                let value = if invert { -value } else { value };
                let value = if value.is_finite() {
                    value
                } else {
                    stats.bad_values += 1;
                    r.last_uv[ch]
                };
                r.last_uv[ch] = value;
                uv.push(value);
            }
            let mut filt = uv.clone();
            r.chain.process_interleaved(&mut filt);
            for (i, (&a, &b)) in uv.iter().zip(&filt).enumerate() {
                let ch = i % r.channels;
                r.raw[ch].push(a as f32);
                r.filtered[ch].push(b as f32);
            }
            if let Some(bs) = beat_state.as_mut() {
                bs.process(&uv, &rails, r.channels, r);
            }
            // Sound: the beats just decided, then the followed channel's filtered block.
            if sound.is_none()
                && let Some(f) = &sound_feed
            {
                // Beats count from the readout's start; the sound joins there.
                let frames = (uv.len() / r.channels) as u64;
                let from = beat_state
                    .as_ref()
                    .map_or(0, |b| b.readout.samples().saturating_sub(frames));
                sound = Some((
                    crate::sound::Renderer::joining(r.fs, f.rate_hz, f.settings, from),
                    f.tx.clone(),
                ));
            }
            if let Some((renderer, tx)) = sound.as_mut() {
                if let Some(bs) = beat_state.as_ref() {
                    let unreliable = matches!(
                        bs.readout.shown(),
                        crate::analysis::rate::RateState::Unreliable(_)
                    );
                    for b in &bs.found {
                        renderer.beat(b.decided, unreliable);
                    }
                }
                let ch = follow.min(r.channels - 1);
                let own: Vec<f64> = filt.iter().skip(ch).step_by(r.channels).copied().collect();
                audio.clear();
                renderer.push(&own, &mut audio);
                if let Some(tx) = tx {
                    // A full queue: the card fell behind; this block is dropped.
                    let _ = tx.try_send(std::mem::take(&mut audio));
                }
            }
            if let Some(tx) = &ports.record_tx {
                let rec = RecordBlock {
                    first_sample: block.first_sample,
                    fs_hz: block.fs_hz,
                    channels: block.channels,
                    raw_uv: uv,
                    filtered_uv: filt,
                    received: block.data,
                    gap_before: block.gap_before,
                    range_uv: scale.map(|s| s.range_uv()),
                };
                if !send_blocking(tx, rec, stop) {
                    return;
                }
            }
        }

        let now = Instant::now();
        if let (Some(r), false) = (&state, paused)
            && now.duration_since(last_snapshot) >= period
            && oldest_pending.is_some()
        {
            if let Some(t) = oldest_pending.take() {
                latency_max_ms = latency_max_ms.max(now.duration_since(t).as_secs_f64() * 1e3);
            }
            if now.duration_since(latency_window_start) >= Duration::from_secs(1) {
                stats.latency_ms = latency_max_ms;
                latency_max_ms = 0.0;
                latency_window_start = now;
            }
            spectrum.update(r);
            // An automatic notch follows the measured mains of the followed channel.
            if chain.notch.enabled
                && chain.notch.auto
                && let Some(next) = spectrum
                    .frame
                    .as_ref()
                    .and_then(|f| f.mains_raw.as_ref())
                    .and_then(|m| chain.notch.following(m))
            {
                let mut next_chain = chain;
                next_chain.notch = next;
                if let Some(run) = state.as_mut()
                    && run.chain.retune(next_chain).is_ok()
                {
                    chain = next_chain;
                }
            }
            let Some(r) = state.as_ref() else { continue };
            // The EMG view, four times a second, over the newest 20 s of the followed channel.
            if let Some(es) = &emg
                && (emg_view.is_none() || now.duration_since(emg_at) >= Duration::from_millis(250))
            {
                let ch = follow.min(r.channels - 1);
                let mut raw = Vec::new();
                r.raw[ch].tail_into((20.0 * r.fs) as usize, &mut raw);
                let t_end = r.next_sample as f64 / r.fs;
                let mut v = crate::analysis::emg::view(&raw, r.fs, t_end, es);
                v.note = emg_error.clone();
                emg_view = Some(Arc::new(v));
                emg_at = now;
            }
            let newest_age_ms = newest_pending
                .take()
                .map_or(0.0, |t| now.duration_since(t).as_secs_f64() * 1e3);
            let snap = Snapshot {
                beats: beat_state.as_ref().map(BeatState::view),
                scale_check: beat_state
                    .as_ref()
                    .and_then(|b| b.readout.quality().scale_check()),
                measured: measured.clone(),
                emg: emg_view.clone(),
                inverted: invert,
                latency_ms: newest_age_ms,
                ..snapshot(
                    r,
                    window_s,
                    &chain_error,
                    scale,
                    &stats,
                    false,
                    &spectrum.frame,
                )
            };
            offer(&ports, snap, &mut stats);
            // Keep the cadence: blocks arrive every few ms, so stepping by the period (rather
            // than restarting it at each snapshot) gives the display rate on average.
            last_snapshot = if now.duration_since(last_snapshot) < 2 * period {
                last_snapshot + period
            } else {
                now
            };
            notify();
        }
    }
}

fn snapshot(
    r: &Running,
    window_s: f64,
    chain_error: &Option<String>,
    scale: Option<InputScale>,
    stats: &Stats,
    done: bool,
    spectrum: &Option<Arc<SpectrumFrame>>,
) -> Snapshot {
    Snapshot {
        fs_hz: r.fs,
        t_end_s: r.next_sample as f64 / r.fs,
        window_s,
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
        sections: r.chain.sections().into(),
        chain_error: chain_error.clone(),
        scale,
        stats: stats.clone(),
        source_done: done,
        spectrum: spectrum.clone(),
        beats: None,
        emg: None,
        scale_check: None,
        measured: None,
        inverted: false,
        latency_ms: 0.0,
    }
}

/// Display path policy: never wait for the GUI; when it has not taken the previous snapshot,
/// drop that one (counted) and offer the new one.
fn offer(ports: &DspPorts, snap: Snapshot, stats: &mut Stats) {
    crate::chan::offer_newest(&ports.snapshot_tx, &ports.snapshot_drain, snap, |s| {
        stats.snapshots_dropped += 1;
        s.stats.snapshots_dropped = stats.snapshots_dropped;
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_hold_min_and_max_of_each_group() {
        let fs = 1000.0;
        let mut t = TraceBuf::new(fs, 2.4); // 2400 samples → 2 samples per column
        assert_eq!(t.spc, 2);
        for n in 0..5000 {
            t.push(n as f32);
        }
        let c = t.columns(fs);
        assert_eq!(c.min.len(), t.keep_cols);
        let last = c.min.len() - 1;
        assert_eq!((c.min[last], c.max[last]), (4998.0, 4999.0));
        assert!((c.t0_s + c.dt_s * last as f64 - 4.998).abs() < 1e-9);
        // A longer window is rebuilt from the ring with the same alignment.
        t.set_window(fs, 10.0);
        let c = t.columns(fs);
        assert_eq!(t.spc, 9);
        assert_eq!(c.max[c.max.len() - 1], 4999.0);
        assert_eq!(c.min[0] as u64 % 9, 0);
    }
}
