//! The monitor's state and its reducer. Everything the window shows that is not a widget's own
//! scratch (a half-typed path, a cached curve) lives in [`AppState`]; every change to it goes
//! through [`apply`], which is pure: it changes the state and returns the [`Effect`]s for the
//! app to carry out (messages to the DSP thread, a source restart, file work). The reducer runs
//! and is tested without a window.

use std::path::PathBuf;
use std::sync::Arc;

use super::action::{Action, FilesAction, RecordAction, SourceChoice};
use super::jobs::{Job, JobDone, TracePng};
use super::panels::trace::TraceState;
use super::state::{LowerView, Settings, View};
use crate::msg::{Control, SpectrumFrame};
use crate::recorder::RecorderCommand;
use crate::source::replay::ReplayCommand;
use crate::source::{SourceSpec, SynthSettings};

/// The outcome of the last file work, shown in the Files section.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FileReport {
    pub message: String,
    pub failed: bool,
}

impl FileReport {
    fn set(&mut self, r: Result<String, String>) {
        (self.message, self.failed) = match r {
            Ok(m) => (m, false),
            Err(m) => (m, true),
        };
    }
}

/// What the monitor knows and shows.
#[derive(Debug, Clone, Default)]
pub struct AppState {
    /// The setup (persisted) and the mode.
    pub settings: Settings,
    /// The newest data taken from the DSP thread.
    pub view: View,
    /// The design the DSP thread runs now (refreshed every frame; the C export writes it).
    pub design: Option<Arc<crate::dsp::Design>>,
    /// The traces are frozen.
    pub paused: bool,
    /// Cursors, and whether the traces follow the data.
    pub trace: TraceState,
    /// Markers placed, at stream time (s), for drawing on the trace.
    pub markers: Vec<(f64, String)>,
    /// The spectrum held as "before".
    pub spectrum_before: Option<Arc<SpectrumFrame>>,
    /// The recording path typed in the source section.
    pub replay_path: String,
    /// Why the last source did not start (a port in use, say).
    pub source_error: Option<String>,
    /// File jobs started and not yet reported.
    pub jobs_running: usize,
    pub files: FileReport,
    pub help_open: bool,
    /// The first-start caution is open.
    pub caution_open: bool,
    /// The twelve-lead sheet shows the paper grid.
    pub paper_grid: bool,
}

/// What the app must do after a change of state.
#[derive(Debug, Clone)]
pub enum Effect {
    /// To the DSP thread.
    Control(Control),
    /// Start the source the settings name (the old stream stays when it cannot start).
    RestartSource,
    /// New settings for the running simulator.
    Synth(SynthSettings),
    /// To the replay thread.
    Replay(ReplayCommand),
    /// To the recorder.
    Recorder(RecorderCommand),
    /// File work for the job runner.
    Job(Job),
}

impl AppState {
    /// The state of a monitor starting on `settings`.
    pub fn new(settings: Settings) -> Self {
        let replay_path = replay_path(&settings);
        Self {
            settings,
            replay_path,
            paper_grid: true,
            ..Self::default()
        }
    }

    /// The stream's sample rate (the simulator's until the first snapshot).
    pub fn fs_hz(&self) -> f64 {
        self.view
            .snapshot
            .as_ref()
            .map_or(self.settings.setup.synth.fs_hz, |s| s.fs_hz)
    }
}

/// The file a setup replays, for the source section's path field.
fn replay_path(s: &Settings) -> String {
    let src = &s.setup.source;
    if src.kind == crate::setup::SourceKind::File {
        src.file.clone()
    } else {
        String::new()
    }
}

/// Applies one action to the state; returns what the app must carry out.
pub fn apply(st: &mut AppState, a: Action) -> Vec<Effect> {
    let setup = &mut st.settings.setup;
    match a {
        Action::Control(c) => vec![Effect::Control(c)],
        Action::Chain(c) => {
            setup.chain = c;
            vec![Effect::Control(Control::Chain(c))]
        }
        Action::Source(choice) => {
            let spec = match choice {
                SourceChoice::Simulator => SourceSpec::Synth(setup.synth.clone()),
                SourceChoice::Serial(spec) => SourceSpec::Serial(spec),
                SourceChoice::Network(spec) => spec,
                SourceChoice::File(path) => SourceSpec::File(crate::source::replay::ReplaySpec {
                    path,
                    read: crate::store::ReadOptions::default(),
                }),
            };
            setup.set_source(&spec);
            setup.view.channel = 0;
            vec![Effect::RestartSource]
        }
        Action::Synth { settings, restart } => {
            setup.synth = settings;
            if restart {
                setup.view.channel = setup.view.channel.min(setup.synth.channels - 1);
                vec![Effect::RestartSource]
            } else {
                vec![Effect::Synth(setup.synth.clone())]
            }
        }
        Action::FrontEnds { front_ends, live } => {
            setup.set_front_ends(&front_ends);
            live.then(|| Effect::Control(Control::FrontEnd(Some(front_ends))))
                .into_iter()
                .collect()
        }
        Action::MyBoard(b) => {
            setup.set_my_board(b);
            Vec::new()
        }
        Action::Replay(c) => vec![Effect::Replay(c)],
        Action::ReplayPath(p) => {
            st.replay_path = p;
            Vec::new()
        }
        Action::LeadSet(set) => lead_set(st, set),
        Action::Record(r) => record(st, r),
        Action::Files(f) => files(st, f),
        Action::JobDone(done) => job_done(st, done),
        Action::Pause(paused) => {
            st.paused = paused;
            if !paused {
                st.trace.follow = true;
            }
            vec![Effect::Control(Control::DisplayPaused(paused))]
        }
        Action::Trace(e) => {
            st.trace.on(e);
            // Zooming or panning freezes the display.
            if e == super::panels::trace::TraceEvent::LeaveLive && !st.paused {
                return apply(st, Action::Pause(true));
            }
            Vec::new()
        }
        Action::PaperGrid(on) => {
            st.paper_grid = on;
            Vec::new()
        }
        Action::HoldSpectrum(hold) => {
            st.spectrum_before = hold
                .then(|| st.view.snapshot.as_ref().and_then(|s| s.spectrum.clone()))
                .flatten();
            Vec::new()
        }
        Action::View(v) => view(st, v),
        Action::Lower(l) => {
            setup.view.lower = l;
            Vec::new()
        }
        Action::Theme(t) => {
            setup.view.theme = t;
            Vec::new()
        }
        Action::EmgMode(on) => emg_mode(st, on),
        Action::Help(open) => {
            st.help_open = open;
            Vec::new()
        }
        Action::CautionConfirmed => {
            st.caution_open = false;
            vec![Effect::Job(Job::AcknowledgeCaution)]
        }
    }
}

/// The view section as edited: the DSP thread hears of a new window, channel or display rate.
fn view(st: &mut AppState, v: crate::setup::ViewSetup) -> Vec<Effect> {
    let old = std::mem::replace(&mut st.settings.setup.view, v);
    let new = &st.settings.setup.view;
    let mut out = Vec::new();
    if new.window_s != old.window_s {
        out.push(Effect::Control(Control::Window(new.window_s)));
    }
    if new.channel != old.channel {
        out.push(Effect::Control(Control::Channel(new.channel)));
    }
    if new.display_hz != old.display_hz {
        out.push(Effect::Control(Control::DisplayRate(new.display_hz)));
    }
    out
}

/// What the channels are. The simulator becomes a board of that many leads (a new stream);
/// another source keeps running and the DSP thread derives the leads from its next block.
fn lead_set(st: &mut AppState, set: Option<crate::leads::LeadSet>) -> Vec<Effect> {
    let simulating = st.settings.simulating();
    let setup = &mut st.settings.setup;
    setup.set_lead_set(set);
    if simulating {
        let synth = &mut setup.synth;
        synth.heart_leads = set;
        synth.channels = set.map_or(synth.channels.min(8), |s| s.inputs().len());
        if set.is_some() {
            synth.rhythm = crate::sim::rhythm::Rhythm::Sinus;
            synth.muscle = None;
        }
        setup.view.channel = set.map_or(0, |_| crate::leads::LEAD_II);
        return vec![Effect::RestartSource];
    }
    vec![Effect::Control(Control::LeadSet(set))]
}

/// Heart (ECG) or muscle (EMG) signals: the chain preset, the view and the EMG analysis.
fn emg_mode(st: &mut AppState, on: bool) -> Vec<Effect> {
    let fs = st.fs_hz();
    let s = &mut st.settings;
    s.emg_mode = on;
    let mut out = Vec::new();
    if on {
        if s.ecg_chain.is_none() {
            s.ecg_chain = Some(s.setup.chain);
        }
        s.setup.chain = super::state::emg_chain(&s.setup.chain, fs);
        s.setup.view.lower = LowerView::Muscle;
        let notch = s.setup.chain.notch;
        out.push(Effect::Control(Control::Emg(Some(
            crate::analysis::emg::EmgSettings {
                notch_hz: notch.enabled.then_some(notch.mains_hz),
                ..Default::default()
            },
        ))));
    } else {
        if let Some(c) = s.ecg_chain.take() {
            s.setup.chain = c;
        }
        if s.setup.view.lower == LowerView::Muscle {
            s.setup.view.lower = LowerView::Beats;
        }
        out.push(Effect::Control(Control::Emg(None)));
    }
    out.push(Effect::Control(Control::Chain(s.setup.chain)));
    out
}

fn record(st: &mut AppState, r: RecordAction) -> Vec<Effect> {
    let cmd = match r {
        RecordAction::Start(req) => RecorderCommand::Start(req),
        RecordAction::Stop => RecorderCommand::Stop,
        RecordAction::Marker(text) => {
            let t = st.view.snapshot.as_ref().map_or(0.0, |s| s.t_end_s);
            st.markers.push((t, text.clone()));
            RecorderCommand::Marker(text)
        }
    };
    vec![Effect::Recorder(cmd)]
}

/// A file action becomes a job with its data copied now, or a message saying why not.
fn files(st: &mut AppState, f: FilesAction) -> Vec<Effect> {
    let job = match f {
        FilesAction::OpenSetup(p) => Ok(Job::LoadSetup(p)),
        FilesAction::SaveSetup(p) => Ok(Job::SaveSetup(Box::new(st.settings.to_setup()), p)),
        FilesAction::ExportC {
            path,
            format,
            prefix,
        } => match &st.design {
            // The design in force: the header holds exactly what the monitor runs.
            Some(design) => Ok(Job::ExportC {
                path,
                info: crate::export::c_header::HeaderInfo {
                    fs_hz: design.fs_hz(),
                    chain: design.settings().describe(),
                    prefix,
                    format,
                    canceller: design.settings().cancel.enabled,
                },
                design: Arc::clone(design),
            }),
            None => Err("no chain runs yet: the source's sample rate is not known".to_string()),
        },
        FilesAction::TracePng(p) => trace_png(st, p).map(|t| Job::TracePng(Box::new(t))),
        FilesAction::SpectrumPng(path) => spectrum_png(st, path),
        FilesAction::TwelvePng(path) => twelve_png(st, path),
        FilesAction::PartsFiles {
            base,
            circuit,
            title,
        } => Ok(Job::PartsFiles {
            base,
            circuit,
            title,
        }),
    };
    match job {
        Ok(job) => {
            st.jobs_running += 1;
            st.files.set(Ok("working…".into()));
            vec![Effect::Job(job)]
        }
        Err(m) => {
            st.files.set(Err(m));
            Vec::new()
        }
    }
}

fn job_done(st: &mut AppState, done: JobDone) -> Vec<Effect> {
    st.jobs_running = st.jobs_running.saturating_sub(1);
    let Some(setup) = done.setup else {
        st.files.set(done.message);
        return Vec::new();
    };
    match Settings::from_setup(&setup) {
        Ok(s) => {
            st.settings = s;
            st.replay_path = replay_path(&st.settings);
            st.files.set(done.message);
            vec![Effect::RestartSource]
        }
        Err(m) => {
            st.files.set(Err(m));
            Vec::new()
        }
    }
}

/// The followed channel's traces, copied for the PNG job.
fn trace_png(st: &AppState, path: PathBuf) -> Result<TracePng, String> {
    let snap = st.view.snapshot.as_ref().ok_or("no samples yet")?;
    let v = &st.settings.setup.view;
    let ch = v.channel.min(snap.traces.len().saturating_sub(1));
    let trace = snap.traces.get(ch).ok_or("no samples yet")?.clone();
    Ok(TracePng {
        path,
        trace,
        // µV per display unit.
        unit: (v.unit.symbol(), 1.0 / v.unit.factor()),
        markers: st.markers.clone(),
        title: format!(
            "ch{} at {} Hz — chain {}",
            ch + 1,
            snap.fs_hz,
            st.settings.setup.chain.describe()
        ),
    })
}

/// The twelve-lead sheet now on screen, copied for the PNG job.
fn twelve_png(st: &AppState, path: PathBuf) -> Result<Job, String> {
    let snap = st.view.snapshot.as_ref().ok_or("no samples yet")?;
    let (pieces, _, span) = super::panels::twelve::sheet(snap);
    if pieces.is_empty() {
        return Err("no twelve leads: choose what the channels are in the Source section".into());
    }
    Ok(Job::TwelvePng(Box::new(super::jobs::TwelvePng {
        path,
        pieces,
        span_s: span,
        grid: st.paper_grid,
        title: format!(
            "12 leads at {} Hz, chain {} — 25 mm/s, 10 mm/mV",
            snap.fs_hz,
            st.settings.setup.chain.describe()
        ),
    })))
}

fn spectrum_png(st: &AppState, path: PathBuf) -> Result<Job, String> {
    let frame = st
        .view
        .snapshot
        .as_ref()
        .and_then(|s| s.spectrum.clone())
        .ok_or("no spectrum yet (it needs a few seconds of signal)")?;
    let title = format!(
        "ch{} after the chain {}, Welch over {:.0} s at {} Hz",
        frame.channel + 1,
        st.settings.setup.chain.describe(),
        frame.seconds,
        frame.fs_hz
    );
    Ok(Job::SpectrumPng { path, frame, title })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::gui::panels::trace::TraceEvent;

    fn controls(effects: &[Effect]) -> Vec<Control> {
        effects
            .iter()
            .filter_map(|e| match e {
                Effect::Control(c) => Some(c.clone()),
                _ => None,
            })
            .collect()
    }

    #[test]
    fn a_chain_is_kept_and_sent_to_the_dsp_thread() {
        let mut st = AppState::default();
        let mut c = st.settings.setup.chain;
        c.highpass.corner_hz = 0.67;
        let fx = apply(&mut st, Action::Chain(c));
        assert_eq!(st.settings.setup.chain.highpass.corner_hz, 0.67);
        assert_eq!(controls(&fx), vec![Control::Chain(c)]);
    }

    #[test]
    fn freezing_and_resuming_tell_the_dsp_thread_and_resume_follows_live() {
        let mut st = AppState::default();
        let fx = apply(&mut st, Action::Trace(TraceEvent::LeaveLive));
        assert!(st.paused && !st.trace.follow, "a pan freezes");
        assert_eq!(controls(&fx), vec![Control::DisplayPaused(true)]);
        // A second pan while frozen sends nothing more.
        assert!(apply(&mut st, Action::Trace(TraceEvent::LeaveLive)).is_empty());
        let fx = apply(&mut st, Action::Pause(false));
        assert!(!st.paused && st.trace.follow);
        assert_eq!(controls(&fx), vec![Control::DisplayPaused(false)]);
    }

    #[test]
    fn cursors_are_placed_in_turn_and_cleared() {
        let mut st = AppState::default();
        apply(&mut st, Action::Trace(TraceEvent::Place([1.0, 100.0])));
        apply(&mut st, Action::Trace(TraceEvent::Place([1.8, 50.0])));
        assert_eq!(st.trace.cursors, [Some([1.0, 100.0]), Some([1.8, 50.0])]);
        apply(&mut st, Action::Trace(TraceEvent::Clear));
        assert_eq!(st.trace.cursors, [None, None]);
    }

    #[test]
    fn the_view_section_sends_only_what_changed() {
        let mut st = AppState::default();
        let mut v = st.settings.setup.view.clone();
        v.window_s = 20.0;
        v.unit = crate::setup::TraceUnit::Microvolts;
        let fx = apply(&mut st, Action::View(v.clone()));
        assert_eq!(controls(&fx), vec![Control::Window(20.0)]);
        assert_eq!(st.settings.setup.view, v);
        v.channel = 2;
        v.display_hz = 20.0;
        let fx = apply(&mut st, Action::View(v));
        assert_eq!(
            controls(&fx),
            vec![Control::Channel(2), Control::DisplayRate(20.0)]
        );
    }

    #[test]
    fn a_new_source_restarts_on_channel_one() {
        let mut st = AppState::default();
        st.settings.setup.view.channel = 3;
        let fx = apply(
            &mut st,
            Action::Source(SourceChoice::File("take-3.edf".into())),
        );
        assert!(matches!(fx.as_slice(), [Effect::RestartSource]));
        assert_eq!(st.settings.setup.view.channel, 0);
        assert_eq!(st.settings.setup.source.file, "take-3.edf");
    }

    #[test]
    fn fewer_simulated_channels_clamp_the_followed_one() {
        let mut st = AppState::default();
        st.settings.setup.view.channel = 5;
        let mut synth = st.settings.setup.synth.clone();
        synth.channels = 2;
        let fx = apply(
            &mut st,
            Action::Synth {
                settings: synth.clone(),
                restart: true,
            },
        );
        assert!(matches!(fx.as_slice(), [Effect::RestartSource]));
        assert_eq!(st.settings.setup.view.channel, 1);
        synth.hr_bpm = 90.0;
        let fx = apply(
            &mut st,
            Action::Synth {
                settings: synth,
                restart: false,
            },
        );
        assert!(matches!(fx.as_slice(), [Effect::Synth(s)] if s.hr_bpm == 90.0));
    }

    #[test]
    fn emg_mode_keeps_the_ecg_chain_and_gives_it_back() {
        let mut st = AppState::default();
        let ecg = st.settings.setup.chain;
        let fx = apply(&mut st, Action::EmgMode(true));
        let emg = st.settings.setup.chain;
        assert_eq!(emg.highpass.corner_hz, 20.0);
        assert_eq!(st.settings.setup.view.lower, LowerView::Muscle);
        assert!(
            matches!(controls(&fx).as_slice(), [Control::Emg(Some(_)), Control::Chain(c)] if *c == emg)
        );
        let fx = apply(&mut st, Action::EmgMode(false));
        assert_eq!(st.settings.setup.chain, ecg);
        assert_eq!(st.settings.setup.view.lower, LowerView::Beats);
        assert_eq!(controls(&fx), vec![Control::Emg(None), Control::Chain(ecg)]);
    }

    #[test]
    fn a_marker_is_kept_at_stream_time_and_sent_to_the_recorder() {
        let mut st = AppState::default();
        let fx = apply(&mut st, Action::Record(RecordAction::Marker("m1".into())));
        assert_eq!(st.markers, vec![(0.0, "m1".to_string())]);
        assert!(
            matches!(fx.as_slice(), [Effect::Recorder(RecorderCommand::Marker(t))] if t == "m1")
        );
    }

    #[test]
    fn file_work_becomes_a_job_and_its_report_lands_in_the_files_section() {
        let mut st = AppState::default();
        let fx = apply(
            &mut st,
            Action::Files(FilesAction::SaveSetup("bench.toml".into())),
        );
        assert!(
            matches!(fx.as_slice(), [Effect::Job(Job::SaveSetup(_, p))] if p.as_os_str() == "bench.toml")
        );
        assert_eq!(
            (st.jobs_running, st.files.message.as_str()),
            (1, "working…")
        );
        apply(
            &mut st,
            Action::JobDone(JobDone {
                message: Err("bench.toml: disk full".into()),
                setup: None,
                quiet: false,
            }),
        );
        assert_eq!(st.jobs_running, 0);
        assert!(st.files.failed);
        assert_eq!(st.files.message, "bench.toml: disk full");
    }

    #[test]
    fn what_cannot_be_exported_yet_says_why_without_a_job() {
        let mut st = AppState::default();
        for f in [
            FilesAction::TracePng("t.png".into()),
            FilesAction::SpectrumPng("s.png".into()),
            FilesAction::ExportC {
                path: "f.h".into(),
                format: crate::export::c_header::CFormat::F32,
                prefix: "ll".into(),
            },
        ] {
            assert!(apply(&mut st, Action::Files(f)).is_empty());
            assert!(st.files.failed && !st.files.message.is_empty());
            assert_eq!(st.jobs_running, 0);
        }
    }

    #[test]
    fn a_loaded_setup_replaces_the_settings_and_restarts_the_source() {
        let mut st = AppState::default();
        let mut setup = crate::setup::Setup::default();
        setup.chain.lowpass.corner_hz = 35.0;
        setup.set_source(&SourceSpec::File(crate::source::replay::ReplaySpec {
            path: "take-3.edf".into(),
            read: crate::store::ReadOptions::default(),
        }));
        st.jobs_running = 1;
        let fx = apply(
            &mut st,
            Action::JobDone(JobDone {
                message: Ok("loaded bench.toml".into()),
                setup: Some(Box::new(setup)),
                quiet: false,
            }),
        );
        assert!(matches!(fx.as_slice(), [Effect::RestartSource]));
        assert_eq!(st.settings.setup.chain.lowpass.corner_hz, 35.0);
        assert_eq!(st.replay_path, "take-3.edf");
        assert_eq!(
            (st.files.message.as_str(), st.files.failed),
            ("loaded bench.toml", false)
        );
    }

    #[test]
    fn a_lead_set_makes_the_simulator_a_board_of_leads_and_follows_lead_ii() {
        let mut st = AppState::default();
        let set = Some(crate::leads::LeadSet::Leads8);
        let fx = apply(&mut st, Action::LeadSet(set));
        assert!(matches!(fx.as_slice(), [Effect::RestartSource]));
        let s = &st.settings.setup;
        assert_eq!((s.synth.channels, s.synth.heart_leads), (8, set));
        assert_eq!((s.lead_set(), s.view.channel), (set, 1));
        // A board: the DSP thread is told, the stream goes on.
        st.settings.setup.source.kind = crate::setup::SourceKind::Serial;
        let fx = apply(&mut st, Action::LeadSet(None));
        assert_eq!(controls(&fx), vec![Control::LeadSet(None)]);
        assert_eq!(st.settings.setup.lead_set(), None);
    }

    #[test]
    fn the_caution_closes_once_confirmed() {
        let mut st = AppState {
            caution_open: true,
            ..AppState::default()
        };
        let fx = apply(&mut st, Action::CautionConfirmed);
        assert!(!st.caution_open);
        assert!(matches!(
            fx.as_slice(),
            [Effect::Job(Job::AcknowledgeCaution)]
        ));
    }
}
