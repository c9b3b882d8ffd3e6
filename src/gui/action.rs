//! What the user asked for in a frame. Panels draw and return actions; after drawing, the app
//! hands them to the reducer ([`super::model::apply`]) one by one, so no panel reaches into the
//! pipeline or the state.

use std::path::PathBuf;

use crate::dsp::ChainSettings;
use crate::msg::Control;
use crate::scale::FrontEnd;
use crate::setup::Theme;
use crate::source::replay::ReplayCommand;
use crate::source::serial::SerialSpec;
use crate::source::{SourceSpec, SynthSettings};

use crate::export::c_header::CFormat;
use crate::setup::LowerView;

/// Where the samples should come from.
#[derive(Debug, Clone)]
pub enum SourceChoice {
    /// The built-in simulator.
    Simulator,
    /// A board on a serial port.
    Serial(SerialSpec),
    /// A board on the network (a UDP or TCP source).
    Network(SourceSpec),
    /// A recording replayed.
    File(PathBuf),
}

/// One thing to do.
#[derive(Debug, Clone)]
pub enum Action {
    /// Straight to the DSP thread.
    Control(Control),
    /// The chain as edited: kept and sent to the DSP thread.
    Chain(ChainSettings),
    /// Another source (the old stream stays when the new one cannot start).
    Source(SourceChoice),
    /// The simulator's settings; `restart` when the stream's rate or channels changed.
    Synth {
        settings: SynthSettings,
        restart: bool,
    },
    /// The board's front ends per channel; `live` sends them to the running stream.
    FrontEnds {
        front_ends: Vec<FrontEnd>,
        live: bool,
    },
    /// The user's own board kept as a preset.
    MyBoard(Option<FrontEnd>),
    /// To the replay thread.
    Replay(ReplayCommand),
    /// The recording path as typed in the source section.
    ReplayPath(String),
    /// What the source's channels are (leads or electrodes), or plain channels.
    LeadSet(Option<crate::leads::LeadSet>),
    /// Start, stop or mark a recording.
    Record(RecordAction),
    /// Open or save a setup, export C, save a PNG.
    Files(FilesAction),
    /// A file job finished.
    JobDone(super::jobs::JobDone),
    /// Cursors placed or cleared, or the traces zoomed or panned.
    Trace(super::panels::trace::TraceEvent),
    /// The view section as edited (window, unit, channel, display settings).
    View(crate::setup::ViewSetup),
    /// Freeze or resume the traces.
    Pause(bool),
    /// The twelve-lead sheet's paper grid on or off.
    PaperGrid(bool),
    /// Keep (or drop) the current spectrum as "before".
    HoldSpectrum(bool),
    /// The strip under the traces.
    Lower(LowerView),
    /// Colours.
    Theme(Theme),
    /// Muscle (EMG) signals instead of the heart's.
    EmgMode(bool),
    /// Open or close the help.
    Help(bool),
    /// The first-start caution was read and confirmed.
    CautionConfirmed,
}

/// What the user asked of the recorder.
#[derive(Debug, Clone, PartialEq)]
pub enum RecordAction {
    Start(crate::recorder::RecordRequest),
    Stop,
    Marker(String),
}

/// What the user asked of the Files section: each writes where the user typed.
#[derive(Debug, Clone, PartialEq)]
pub enum FilesAction {
    OpenSetup(PathBuf),
    SaveSetup(PathBuf),
    ExportC {
        path: PathBuf,
        format: CFormat,
        prefix: String,
    },
    TracePng(PathBuf),
    SpectrumPng(PathBuf),
    TwelvePng(PathBuf),
    /// The parts view's schematic (.svg), SPICE netlist (.cir) and parts list (-bom.csv).
    PartsFiles {
        base: String,
        circuit: Box<crate::analog::circuit::Circuit>,
        title: String,
    },
}
