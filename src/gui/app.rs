//! The monitor application: the shell around the state. Each frame it takes the newest
//! snapshot, draws ([`super::layout`]), feeds the actions drawn to the reducer
//! ([`super::model::apply`]) and carries out the effects: controls to the DSP thread, source
//! restarts, and file jobs on the [`JobRunner`].

use std::path::PathBuf;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use anyhow::Result;
use eframe::egui;

use super::action::{Action, RecordAction};
use super::jobs::JobRunner;
use super::layout::{Live, Widgets};
use super::model::{AppState, Effect};
use super::state::{LowerView, Settings};
use crate::msg::Control;
use crate::pipeline::{Pipeline, PipelineConfig, PipelineError};
use crate::process::Notify;
use crate::source::Pacing;

/// Start-up options that are not settings.
#[derive(Debug, Clone, Default)]
pub struct AppOptions {
    /// Close after this many seconds.
    pub exit_after_s: Option<f64>,
    /// Save a PNG of the last frame before closing.
    pub screenshot: Option<PathBuf>,
    /// Show the first-start caution.
    pub show_caution: bool,
    /// Keep the setup in the configuration folder as it changes (restored at the next start).
    pub remember_setup: bool,
    /// Start with the traces frozen.
    pub start_paused: bool,
    /// Measure for this many seconds (after a warm-up), report, and close.
    pub bench_s: Option<f64>,
    /// Name of the view measured (for the report).
    pub bench_view: String,
    /// Where the bench report goes.
    pub bench_report: Arc<Mutex<Option<super::bench::BenchReport>>>,
    /// Sound on during the bench (rendered and discarded without a card).
    pub bench_sound: bool,
    /// Set while the window is minimised or covered: the repaint request of each new snapshot
    /// then waits a second instead of none (the display path slows with it).
    pub unseen: Arc<std::sync::atomic::AtomicBool>,
}

/// The monitor.
pub struct LeadlineApp {
    /// What the window knows and shows; changed only by the reducer.
    pub state: AppState,
    /// The panels' own scratch and caches.
    pub widgets: Widgets,
    /// The running stream.
    pub pipeline: Pipeline,
    notify: Notify,
    opts: AppOptions,
    /// The scripted end of an `--exit-after` run (and its screenshot).
    exit: super::screenshot::ScriptedExit,
    /// All file work runs here, off the UI thread.
    jobs: JobRunner,
    /// The setup as last written to the configuration folder, and when.
    remembered: Option<(crate::setup::Setup, Instant)>,
    theme_applied: Option<crate::setup::Theme>,
    bench: Option<super::bench::BenchRun>,
    /// Time spent in `logic` and `ui` of the current and the previous frame, ms.
    app_ms: (f64, Option<f64>),
}

fn start_pipeline(settings: &Settings, notify: Notify) -> Result<Pipeline, PipelineError> {
    Pipeline::start(
        PipelineConfig {
            source: settings
                .setup
                .source_spec()
                .map_err(PipelineError::Source)?,
            chain: settings.setup.chain,
            window_s: settings.setup.view.window_s,
            display_hz: settings.setup.view.display_hz,
            // The board's front end applies to a board; the simulator models its own.
            front_end: settings
                .setup
                .from_board()
                .then(|| settings.setup.front_ends()),
            lead_set: settings.setup.lead_set(),
            pacing: Pacing::RealTime,
            limit_s: None,
            record: false,
            recorder: true,
        },
        notify,
    )
}

impl LeadlineApp {
    /// Starts the pipeline for `settings`. `outcome` receives the result of an `--exit-after` run.
    ///
    /// # Errors
    /// [`PipelineError`] when the source cannot start.
    pub fn new(
        settings: Settings,
        notify: Notify,
        opts: AppOptions,
        outcome: Arc<Mutex<Result<()>>>,
    ) -> Result<Self, PipelineError> {
        let pipeline = start_pipeline(&settings, Arc::clone(&notify))?;
        let paused = opts.start_paused;
        if paused {
            pipeline.control(Control::DisplayPaused(true));
        }
        let bench = opts
            .bench_s
            .map(|s| super::bench::BenchRun::new(s, &opts.bench_view, paused));
        let mut widgets = Widgets::default();
        if settings.emg_mode {
            let notch = settings.setup.chain.notch;
            widgets.emg.notch_hz = notch.enabled.then_some(notch.mains_hz);
            pipeline.control(Control::Emg(Some(widgets.emg)));
        }
        if opts.bench_sound {
            let sound = &mut widgets.sound;
            sound.discard = true;
            sound.settings.tone = true;
            sound.settings.signal = true;
            pipeline.control(sound.control());
        }
        let state = AppState {
            paused,
            caution_open: opts.show_caution,
            ..AppState::new(settings)
        };
        Ok(Self {
            state,
            widgets,
            pipeline,
            notify,
            opts,
            exit: super::screenshot::ScriptedExit::new(outcome),
            jobs: JobRunner::default(),
            remembered: None,
            theme_applied: None,
            bench,
            app_ms: (0.0, None),
        })
    }

    /// Takes the newest snapshot unless paused, and the design in force. Called from `logic`
    /// (and by tests); true when a snapshot was taken.
    pub fn poll(&mut self) -> bool {
        self.state.design = self.pipeline.design();
        let Some(s) = self.pipeline.latest_snapshot() else {
            return false;
        };
        if self.state.paused {
            return false;
        }
        if let Some(b) = &mut self.bench {
            b.on_snapshot(s.latency_ms, s.stats.snapshots_dropped);
        }
        // An automatic notch is moved by the DSP thread: show where it is now.
        let chain = &mut self.state.settings.setup.chain;
        if chain.notch.auto && s.chain.notch.auto {
            chain.notch.mains_hz = s.chain.notch.mains_hz;
            chain.notch.harmonics = s.chain.notch.harmonics;
        }
        self.state.view.snapshot = Some(s);
        self.state.view.snapshots_seen += 1;
        true
    }

    /// Carries out one action: the reducer changes the state, then its effects run.
    pub fn apply(&mut self, a: Action) {
        for e in super::model::apply(&mut self.state, a) {
            self.run(e);
        }
    }

    fn run(&mut self, e: Effect) {
        match e {
            Effect::Control(c) => self.pipeline.control(c),
            Effect::RestartSource => self.restart_source(),
            Effect::Synth(s) => self.pipeline.synth(s),
            Effect::Replay(c) => self.pipeline.replay(c),
            Effect::Recorder(c) => self.pipeline.recorder(c),
            Effect::Job(job) => {
                let wake = Arc::clone(&self.notify);
                self.jobs.start(job, move || wake());
            }
        }
    }

    fn restart_source(&mut self) {
        match start_pipeline(&self.state.settings, Arc::clone(&self.notify)) {
            Ok(p) => {
                // A recording in progress is closed properly before its stream goes.
                let _ = self.pipeline.finish_recording(Duration::from_secs(3));
                self.pipeline = p;
                self.state.view = Default::default();
                self.state.markers.clear();
                self.state.source_error = None;
                self.state.design = self.pipeline.design();
            }
            Err(e) => {
                // Keep the old stream; the Source section says why the new one did not start.
                self.state.source_error = Some(e.to_string());
            }
        }
    }

    /// Keyboard shortcuts (ignored while a text field has the keyboard).
    fn keys(&mut self, ctx: &egui::Context, live: &Live) -> Vec<Action> {
        let mut out = Vec::new();
        if ctx.egui_wants_keyboard_input() {
            return out;
        }
        let pressed = |k: egui::Key| ctx.input(|i| i.key_pressed(k));
        if pressed(egui::Key::Space) {
            out.push(Action::Pause(!self.state.paused));
        }
        if pressed(egui::Key::C) {
            out.push(Action::Trace(super::panels::trace::TraceEvent::Clear));
        }
        let question = ctx.input(|i| {
            i.events
                .iter()
                .any(|e| matches!(e, egui::Event::Text(t) if t == "?"))
        });
        if pressed(egui::Key::F1) || question {
            out.push(Action::Help(!self.state.help_open));
        }
        if pressed(egui::Key::R) {
            let recording = live.recorder.as_ref().is_some_and(|s| s.active.is_some());
            let chain = self.state.settings.setup.chain.describe();
            out.push(Action::Record(if recording {
                RecordAction::Stop
            } else {
                RecordAction::Start(self.widgets.record.request(&chain))
            }));
        }
        if pressed(egui::Key::M) {
            out.push(Action::Record(RecordAction::Marker(
                self.widgets.record.next_marker(),
            )));
        }
        if pressed(egui::Key::H) {
            out.push(Action::HoldSpectrum(true));
        }
        for (k, v) in [
            (egui::Key::Num1, LowerView::Beats),
            (egui::Key::Num2, LowerView::Spectrum),
            (egui::Key::Num3, LowerView::Response),
            (egui::Key::Num4, LowerView::Parts),
            (egui::Key::Num5, LowerView::Hidden),
        ] {
            if pressed(k) {
                out.push(Action::Lower(v));
            }
        }
        out
    }

    /// Writes the setup to the configuration folder when it changed (at most every 2 s).
    fn remember(&mut self, force: bool) {
        if !self.opts.remember_setup {
            return;
        }
        let now = self.state.settings.to_setup();
        let due = match &self.remembered {
            None => true,
            Some((old, at)) => *old != now && (force || at.elapsed() >= Duration::from_secs(2)),
        };
        if due {
            if let Some(p) = crate::setup::last_setup_path() {
                let job = super::jobs::Job::Remember(Box::new(now.clone()), p);
                if force {
                    // Closing: the process ends next, so the last setup is written before.
                    let _ = super::jobs::run(job);
                } else {
                    self.jobs.start(job, || {});
                }
            }
            self.remembered = Some((now, Instant::now()));
        }
    }

    fn apply_theme(&mut self, ctx: &egui::Context) {
        let smooth = self.state.settings.setup.view.smooth_lines;
        if ctx.tessellation_options(|o| o.feathering) != smooth {
            ctx.tessellation_options_mut(|o| o.feathering = smooth);
        }
        if self.theme_applied != Some(self.state.settings.setup.view.theme) {
            let mut visuals = match self.state.settings.setup.view.theme {
                crate::setup::Theme::Dark => egui::Visuals::dark(),
                crate::setup::Theme::Light => egui::Visuals::light(),
            };
            // Soft shadows are wide blended quads: under software OpenGL the caution window's
            // cost a tenth of a core at 30 frames/s. A frame line marks windows instead.
            visuals.window_shadow = egui::epaint::Shadow::NONE;
            visuals.popup_shadow = egui::epaint::Shadow::NONE;
            ctx.set_visuals(visuals);
            self.theme_applied = Some(self.state.settings.setup.view.theme);
        }
    }

    /// Draws the whole window, then applies what was asked for.
    pub fn show(&mut self, ui: &mut egui::Ui) {
        for done in self.jobs.finished().into_iter().filter(|d| !d.quiet) {
            self.apply(Action::JobDone(done));
        }
        if self.state.jobs_running > 0 {
            // Nothing else may wake the window (frozen, no data) when a job finishes.
            ui.ctx().request_repaint_after(Duration::from_millis(100));
        }
        let live = Live {
            label: self.pipeline.label().to_string(),
            recorder: self.pipeline.recorder_status(),
            serial: self.pipeline.serial_status(),
            net: self.pipeline.net_status(),
            replay: self.pipeline.replay_status(),
        };
        let mut actions = self.keys(&ui.ctx().clone(), &live);
        actions.extend(super::layout::window(
            ui,
            &self.state,
            &mut self.widgets,
            &live,
        ));
        if !actions.is_empty() {
            // What the actions change is drawn in the next frame.
            ui.ctx().request_repaint();
        }
        for a in actions {
            self.apply(a);
        }
    }
}

impl eframe::App for LeadlineApp {
    fn logic(&mut self, ctx: &egui::Context, frame: &mut eframe::Frame) {
        let t0 = Instant::now();
        let new_data = self.poll();
        let hidden = ctx.input(|i| {
            let v = i.viewport();
            v.minimized == Some(true) || v.occluded == Some(true)
        });
        self.opts
            .unseen
            .store(hidden, std::sync::atomic::Ordering::Relaxed);
        self.apply_theme(ctx);
        self.remember(false);
        let previous = self.app_ms.1.take();
        self.app_ms.0 = t0.elapsed().as_secs_f64() * 1e3;
        if let Some(b) = &mut self.bench {
            b.on_frame(previous, frame.info().cpu_usage, new_data);
            if b.finish_if_due() {
                if let Ok(mut g) = self.opts.bench_report.lock() {
                    *g = b.report.clone();
                }
                ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            } else if let Some(left) = b.remaining() {
                // Wake at the end even when nothing arrives (paused).
                ctx.request_repaint_after(left);
            }
        }
        self.exit.tick(ctx, &mut self.opts);
    }

    fn clear_color(&self, visuals: &egui::Visuals) -> [f32; 4] {
        // The panels draw no fill of their own: the clear colour is their background.
        visuals.panel_fill.to_normalized_gamma_f32()
    }

    fn on_exit(&mut self, _gl: Option<&eframe::glow::Context>) {
        // A recording still running is closed properly; the setup is kept for the next start.
        let _ = self.pipeline.finish_recording(Duration::from_secs(5));
        self.remember(true);
    }

    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        let t0 = Instant::now();
        self.show(ui);
        self.app_ms.1 = Some(self.app_ms.0 + t0.elapsed().as_secs_f64() * 1e3);
    }
}
