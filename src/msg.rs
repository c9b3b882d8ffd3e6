//! Types that cross threads: blocks of samples in, snapshots for the display, control messages back.

use std::sync::Arc;

use crate::analysis::mains::MainsReport;
use crate::analysis::quality::Quality;
use crate::analysis::rate::{Hrv, RateState};
use crate::analysis::template::Template;
use crate::dsp::chain::ChainSettings;
use crate::dsp::spectrum::Psd;
use crate::scale::{FrontEnd, InputScale};

/// What the numbers in a [`RawBlock`] are.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SampleUnit {
    /// ADC counts as the source sent them. The scale is the source's own (the simulator's board,
    /// or the one the source was started with); a front end set by the user replaces it.
    Counts(InputScale),
    /// Decimal numbers as the source sent them, with the source's µV per unit (1000 for mV); a
    /// front end set by the user replaces it.
    Decimal(f64),
    /// Already input-referred microvolts (recordings): no front end applies.
    Microvolts,
}

/// A block of frames from a source, interleaved channel by channel.
#[derive(Debug, Clone, PartialEq)]
pub struct RawBlock {
    /// Block counter of the source, from 0.
    pub seq: u64,
    /// Index (from the start of the stream) of the first frame in the block.
    pub first_sample: u64,
    /// Sample rate, Hz.
    pub fs_hz: f64,
    /// Channels per frame.
    pub channels: usize,
    /// Unit of `data`.
    pub unit: SampleUnit,
    /// `frames × channels` values, frame-major.
    pub data: Vec<f64>,
    /// When the source produced the block (for latency figures).
    pub made_at: std::time::Instant,
    /// The device went away before this block and came back: the stream has a gap here.
    pub gap_before: bool,
}

impl RawBlock {
    /// Frames in the block.
    pub fn frames(&self) -> usize {
        self.data.len() / self.channels.max(1)
    }
}

/// Processed samples for the recorder: input-referred µV, raw and filtered, never dropped.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordBlock {
    /// Index of the first frame.
    pub first_sample: u64,
    /// Sample rate, Hz.
    pub fs_hz: f64,
    /// Channels per frame.
    pub channels: usize,
    /// Input-referred µV before the chain, frame-major.
    pub raw_uv: Vec<f64>,
    /// Input-referred µV after the chain, frame-major.
    pub filtered_uv: Vec<f64>,
    /// The source's values as received (counts or µV), frame-major.
    pub received: Vec<f64>,
    /// The stream has a gap (device lost and found again) just before this block.
    pub gap_before: bool,
    /// Input-referred µV of the converter's bottom and top counts, when the source sends counts.
    pub range_uv: Option<(f64, f64)>,
    /// The channels' names when they are derived leads (I, II, …), else `None` (ch1, ch2, …).
    pub names: Option<Arc<Vec<String>>>,
}

/// A min/max-per-column reduction of one trace over the display window.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Columns {
    /// Time of the first column's first sample, s since the stream started.
    pub t0_s: f64,
    /// Time covered by one column, s.
    pub dt_s: f64,
    /// Lowest value in each column, µV.
    pub min: Vec<f32>,
    /// Highest value in each column, µV.
    pub max: Vec<f32>,
}

/// One channel's display traces.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ChannelTrace {
    /// Before the chain.
    pub raw: Columns,
    /// After the chain.
    pub filtered: Columns,
}

/// Counters of the whole pipeline. All are totals since the pipeline started.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Stats {
    /// Frames that reached the DSP thread.
    pub frames: u64,
    /// Blocks that reached the DSP thread.
    pub blocks: u64,
    /// Frames missing between blocks (a gap in `first_sample`).
    pub frames_lost: u64,
    /// Snapshots the GUI had not taken when a newer one was ready (display only; no data lost).
    pub snapshots_dropped: u64,
    /// Samples at an ADC rail.
    pub clipped: u64,
    /// Samples that were NaN or infinite and were replaced by the previous value.
    pub bad_values: u64,
    /// Gaps in the stream (device lost and found again).
    pub gaps: u64,
    /// Worst source-to-snapshot latency seen in the last second, ms.
    pub latency_ms: f64,
}

/// The running spectrum of one channel, made about once a second.
#[derive(Debug, Clone, PartialEq)]
pub struct SpectrumFrame {
    /// Channel (0-based).
    pub channel: usize,
    /// Sample rate, Hz.
    pub fs_hz: f64,
    /// Seconds of signal the estimate covers.
    pub seconds: f64,
    /// Welch PSD before the chain, µV²/Hz.
    pub raw: Psd,
    /// Welch PSD after the chain, µV²/Hz.
    pub filtered: Psd,
    /// Mains measurement before the chain.
    pub mains_raw: Option<MainsReport>,
    /// Mains measurement after the chain.
    pub mains_filtered: Option<MainsReport>,
    /// Counter: a new number means a new estimate.
    pub serial: u64,
}

/// Beats and what follows from them, for the followed channel.
#[derive(Debug, Clone, PartialEq)]
pub struct BeatView {
    /// Channel (0-based).
    pub channel: usize,
    /// R-peak sample indices of the last two minutes.
    pub beats: Vec<u64>,
    /// The heart-rate readout, as evaluated at `rate_at_s`.
    pub rate: RateState,
    /// Stream time of that evaluation, s (the readout is evaluated once a second).
    pub rate_at_s: f64,
    /// Variability over the accepted intervals.
    pub hrv: Option<Hrv>,
    /// Signal quality (noise, artefact, clipping), as of the last evaluation.
    pub quality: Quality,
    /// How regular the rhythm is, 0–1 (None: too few intervals); never part of the quality.
    pub regularity: Option<f64>,
    /// The averaged beat, raw and filtered.
    pub template: Option<Arc<Template>>,
}

/// What the GUI gets, at most at the display rate.
#[derive(Debug, Clone, PartialEq)]
pub struct Snapshot {
    /// Sample rate, Hz.
    pub fs_hz: f64,
    /// Time of the newest sample, s since the stream started.
    pub t_end_s: f64,
    /// Window the traces cover, s.
    pub window_s: f64,
    /// Per-channel display traces.
    pub traces: Vec<ChannelTrace>,
    /// The chain the DSP thread is running now.
    pub chain: ChainSettings,
    /// Its sections at the stream's rate, in processing order: the views draw the chain that
    /// runs instead of designing it again.
    pub design: Arc<crate::dsp::Design>,
    /// Why the last requested chain was refused, if it was.
    pub chain_error: Option<String>,
    /// Input scale in force on the followed channel (None for sources that deliver µV).
    pub scale: Option<InputScale>,
    /// The scaling looks wrong: "check the front-end scaling: …" with the figure.
    pub scale_check: Option<String>,
    /// The last measurement asked for (the Measure view), kept until the next one.
    pub measured: Option<Arc<crate::measure::Measured>>,
    /// Counters.
    pub stats: Stats,
    /// The source has ended (a finite run or a file).
    pub source_done: bool,
    /// The newest spectrum (shared, so repeating it costs nothing).
    pub spectrum: Option<Arc<SpectrumFrame>>,
    /// Beats, heart rate and quality (None when the rate is outside 125–2000 Hz).
    pub beats: Option<BeatView>,
    /// The EMG view, when on.
    pub emg: Option<Arc<crate::process::emg::EmgView>>,
    /// Every channel is inverted before the chain.
    pub inverted: bool,
    /// Age of the newest sample in this snapshot when it was made, ms: from the source thread
    /// handing it over to the snapshot leaving the DSP thread (the display's leading edge).
    pub latency_ms: f64,
    /// The channels' names when they are the derived standard leads.
    pub leads: Option<Arc<Vec<String>>>,
    /// Why the lead set is not applied (too few channels), if so.
    pub lead_error: Option<String>,
    /// Electrodes that look off (electrode-potential inputs).
    pub electrodes_off: Vec<&'static str>,
    /// The frontal QRS axis over the last 10 s, while the leads are derived.
    pub frontal_axis: Option<crate::leads::FrontalAxis>,
    /// The mains canceller on the followed channel: tracked frequency, removed amplitudes.
    pub cancel: Option<crate::dsp::canceller::CancelState>,
}

/// Messages from the GUI (or CLI) to the threads. Tiny and rare: the channel is unbounded.
#[derive(Debug, Clone, PartialEq)]
pub enum Control {
    /// Run this chain from now on (state is kept where the structure allows).
    Chain(ChainSettings),
    /// Display window length, s (2–30).
    Window(f64),
    /// Stop sending snapshots (the data still flow to the recorder) or resume.
    DisplayPaused(bool),
    /// Channel whose spectrum, beats and heart rate are followed (0-based).
    Channel(usize),
    /// Invert every channel before the chain (leads swapped on the board).
    Invert(bool),
    /// Welch segment length (power of two, 256–16384); 0 picks about 4 s.
    SpectrumSegment(usize),
    /// Most snapshots per second (the display rate), 1–120.
    DisplayRate(f64),
    /// The front end per channel (one entry: every channel), applied from the next block without
    /// reconnecting; None goes back to the source's own scaling.
    FrontEnd(Option<Vec<FrontEnd>>),
    /// Measure the built front end on the newest samples (up to 30 s) of the raw traces.
    Measure(crate::measure::Request),
    /// Sound on (settings, the card's rate, where the audio goes; `None`: rendered and
    /// discarded, for the bench) or off.
    Sound(Option<SoundFeed>),
    /// EMG view on (its settings) or off.
    Emg(Option<crate::analysis::emg::EmgSettings>),
    /// A mark in the EMG view (rest, maximum contraction, clear).
    EmgMark(crate::process::emg::Mark),
    /// What the source's channels are (leads derived before the chain), or nothing.
    LeadSet(Option<crate::leads::LeadSet>),
}

/// What the DSP thread needs to make sound.
#[derive(Debug, Clone)]
pub struct SoundFeed {
    pub settings: crate::sound::SoundSettings,
    pub rate_hz: f64,
    pub tx: Option<crossbeam_channel::Sender<Vec<f32>>>,
}

impl PartialEq for SoundFeed {
    fn eq(&self, o: &Self) -> bool {
        self.settings == o.settings
            && self.rate_hz == o.rate_hz
            && match (&self.tx, &o.tx) {
                (Some(a), Some(b)) => a.same_channel(b),
                (None, None) => true,
                _ => false,
            }
    }
}

/// The EMG analysis of the followed channel over the newest stretch (up to 20 s).
#[derive(Debug, Clone, PartialEq)]
pub struct EmgView {
    /// Time of the first point, s since the stream started, and the spacing of the points, s.
    pub t0_s: f64,
    pub dt_s: f64,
    /// Linear envelope and moving RMS, µV, each point the largest of its stretch.
    pub envelope: Vec<f32>,
    pub rms: Vec<f32>,
    /// Contractions, with times since the stream started (the newest may still run).
    pub bursts: Vec<crate::analysis::emg::Burst>,
    /// Onset threshold on the detector's signal, µV.
    pub threshold_uv: f64,
    /// (contraction midpoint s, median Hz), and the fitted change, %.
    pub trend: Vec<(f64, f64)>,
    pub trend_change_pct: Option<f64>,
    /// Why there is no analysis (too short, a setting), if so.
    pub error: Option<String>,
    /// The settings it was made with (marks included).
    pub settings: crate::analysis::emg::EmgSettings,
    /// A message about the last mark (e.g. no contraction to take as the maximum).
    pub note: Option<String>,
}

/// What the user marks in the monitor's EMG view.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Mark {
    /// The newest second is rest: its level becomes the baseline.
    Rest,
    /// The newest contraction is the maximum: its RMS becomes 100 % MVC.
    Mvc,
    /// Back to the quietest second and no MVC.
    Clear,
}
