//! The monitor application: owns the pipeline, takes snapshots in `logic`, draws in `ui`.

use std::path::PathBuf;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use anyhow::Result;
use eframe::egui;

use super::action::{Action, SourceChoice};
use super::panels;
use super::state::{Settings, TraceUnit, View};
use crate::msg::Control;
use crate::pipeline::{Pipeline, PipelineConfig, PipelineError};
use crate::process::{MAX_WINDOW_S, MIN_WINDOW_S, Notify};
use crate::setup::SourceKind;
use crate::source::{Pacing, SourceSpec};

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

type Shot = Arc<Mutex<Option<Arc<egui::ColorImage>>>>;
/// What a file job reports: the message for the Files section, or the error.
type JobResult = Result<String, String>;
type JobSender = crossbeam_channel::Sender<JobResult>;

/// The monitor.
pub struct LeadlineApp {
    settings: Settings,
    view: View,
    pipeline: Pipeline,
    notify: Notify,
    paused: bool,
    caution_open: bool,
    opts: AppOptions,
    started: Instant,
    shot: Shot,
    shot_requested: Option<Instant>,
    outcome: Arc<Mutex<Result<()>>>,
    pending: Vec<Control>,
    /// What the panels asked for in this frame, applied after drawing.
    actions: Vec<Action>,
    response: panels::response::ResponseCache,
    spectrum: panels::spectrum::SpectrumView,
    picker: panels::source::SourcePicker,
    front_end: panels::front_end::FrontEndPanel,
    net: panels::network::NetPicker,
    measure: panels::measure::MeasureView,
    sound: panels::sound::SoundPanel,
    /// Slow file work (setup save, C export, PNGs) runs on a worker thread and reports here.
    jobs: (JobSender, crossbeam_channel::Receiver<JobResult>),
    jobs_running: usize,
    emg: crate::analysis::emg::EmgSettings,
    /// Why the last source did not start (a port in use, say).
    source_error: Option<String>,
    file_path: String,
    parts: panels::parts::PartsView,
    record: panels::record::RecordPanel,
    files: panels::files::FilesPanel,
    /// Markers placed, at stream time (s), for drawing on the trace.
    markers: Vec<(f64, String)>,
    /// The setup as last written to the configuration folder, and when.
    remembered: Option<(crate::setup::Setup, Instant)>,
    theme_applied: Option<crate::setup::Theme>,
    bench: Option<super::bench::BenchRun>,
    trace: panels::trace::TraceState,
    help_open: bool,
    /// Time spent in `logic` and `ui` of the current and the previous frame, ms.
    app_ms: (f64, Option<f64>),
}

pub use super::state::LowerView;

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
            pacing: Pacing::RealTime,
            limit_s: None,
            record: false,
            recorder: true,
        },
        notify,
    )
}

fn settings_file_path(s: &Settings) -> String {
    let src = &s.setup.source;
    if src.kind == crate::setup::SourceKind::File {
        src.file.clone()
    } else {
        String::new()
    }
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
        let file_path = settings_file_path(&settings);
        let mut emg = crate::analysis::emg::EmgSettings::default();
        if settings.emg_mode {
            let notch = settings.setup.chain.notch;
            emg.notch_hz = notch.enabled.then_some(notch.mains_hz);
            pipeline.control(Control::Emg(Some(emg)));
        }
        let mut sound = panels::sound::SoundPanel::default();
        if opts.bench_sound {
            sound.discard = true;
            sound.settings.tone = true;
            sound.settings.signal = true;
            pipeline.control(sound.control());
        }
        Ok(Self {
            settings,
            view: View::default(),
            pipeline,
            notify,
            paused,
            caution_open: opts.show_caution,
            opts,
            started: Instant::now(),
            shot: Arc::new(Mutex::new(None)),
            shot_requested: None,
            outcome,
            pending: Vec::new(),
            actions: Vec::new(),
            response: Default::default(),
            spectrum: Default::default(),
            picker: Default::default(),
            front_end: Default::default(),
            net: Default::default(),
            measure: Default::default(),
            sound,
            jobs: crossbeam_channel::unbounded(),
            jobs_running: 0,
            emg,
            source_error: None,
            file_path,
            parts: Default::default(),
            record: Default::default(),
            files: Default::default(),
            markers: Vec::new(),
            remembered: None,
            theme_applied: None,
            bench,
            trace: Default::default(),
            help_open: false,
            app_ms: (0.0, None),
        })
    }

    /// Switches between heart (ECG) and muscle (EMG) signals: the chain preset, the view and
    /// the EMG analysis in the DSP thread.
    fn set_emg_mode(&mut self, on: bool, fs: f64) {
        self.settings.emg_mode = on;
        if on {
            if self.settings.ecg_chain.is_none() {
                self.settings.ecg_chain = Some(self.settings.setup.chain);
            }
            self.settings.setup.chain = super::state::emg_chain(&self.settings.setup.chain, fs);
            self.settings.setup.view.lower = LowerView::Muscle;
            let notch = self.settings.setup.chain.notch;
            self.pending
                .push(Control::Emg(Some(crate::analysis::emg::EmgSettings {
                    notch_hz: notch.enabled.then_some(notch.mains_hz),
                    ..Default::default()
                })));
        } else {
            if let Some(c) = self.settings.ecg_chain.take() {
                self.settings.setup.chain = c;
            }
            if self.settings.setup.view.lower == LowerView::Muscle {
                self.settings.setup.view.lower = LowerView::Beats;
            }
            self.pending.push(Control::Emg(None));
        }
        self.pending.push(Control::Chain(self.settings.setup.chain));
    }

    /// Current settings (tests read them).
    pub fn settings(&self) -> &Settings {
        &self.settings
    }

    /// True while the traces are frozen.
    pub fn paused(&self) -> bool {
        self.paused
    }

    /// Latest data (tests read it).
    pub fn view(&self) -> &View {
        &self.view
    }

    /// How often the slow plot data were rebuilt: the spectrum's curves (once per estimate) and
    /// the parts' realisation (once per chain). Frames without new data rebuild neither.
    pub fn rebuilds(&self) -> (u64, u64) {
        (self.spectrum.rebuilds, self.parts.realisations)
    }

    /// Takes the newest snapshot unless paused. Called from `logic` (and by tests).
    pub fn poll(&mut self) -> bool {
        if let Some(s) = self.pipeline.latest_snapshot()
            && !self.paused
        {
            if let Some(b) = &mut self.bench {
                b.on_snapshot(s.latency_ms, s.stats.snapshots_dropped);
            }
            // An automatic notch is moved by the DSP thread: show where it is now.
            if self.settings.setup.chain.notch.auto && s.chain.notch.auto {
                self.settings.setup.chain.notch.mains_hz = s.chain.notch.mains_hz;
                self.settings.setup.chain.notch.harmonics = s.chain.notch.harmonics;
            }
            self.view.snapshot = Some(s);
            self.view.snapshots_seen += 1;
            return true;
        }
        false
    }

    fn restart_source(&mut self) {
        match start_pipeline(&self.settings, Arc::clone(&self.notify)) {
            Ok(p) => {
                // A recording in progress is closed properly before its stream goes.
                let _ = self.pipeline.finish_recording(Duration::from_secs(3));
                self.pipeline = p;
                self.view = View::default();
                self.markers.clear();
                self.source_error = None;
            }
            Err(e) => {
                // Keep the old stream; the Source section says why the new one did not start.
                self.source_error = Some(e.to_string());
            }
        }
    }

    fn exit_logic(&mut self, ctx: &egui::Context) {
        let Some(limit) = self.opts.exit_after_s else {
            return;
        };
        let elapsed = self.started.elapsed().as_secs_f64();
        if elapsed < limit {
            ctx.request_repaint_after(Duration::from_secs_f64(limit - elapsed));
            return;
        }
        let Some(path) = self.opts.screenshot.clone() else {
            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            return;
        };
        let taken = self.shot.lock().ok().and_then(|mut g| g.take());
        if let Some(img) = taken {
            let r = super::screenshot::save_png(&img, &path);
            if r.is_ok() {
                eprintln!("screenshot saved to {}", path.display());
            }
            if let Ok(mut o) = self.outcome.lock() {
                *o = r;
            }
            self.opts.screenshot = None;
            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
        } else if let Some(t) = self.shot_requested {
            if t.elapsed() > Duration::from_secs(5) {
                if let Ok(mut o) = self.outcome.lock() {
                    *o = Err(anyhow::anyhow!("the window never delivered a screenshot"));
                }
                ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            }
            ctx.request_repaint_after(Duration::from_millis(50));
        } else {
            let slot = Arc::clone(&self.shot);
            let waker = ctx.clone();
            ctx.request_screenshot(move |img| {
                if let Ok(mut g) = slot.lock() {
                    *g = Some(img);
                }
                waker.request_repaint();
            });
            self.shot_requested = Some(Instant::now());
            ctx.request_repaint();
        }
    }

    /// Keyboard shortcuts (ignored while a text field has the keyboard).
    fn keys(&mut self, ctx: &egui::Context) {
        if ctx.egui_wants_keyboard_input() {
            return;
        }
        let pressed = |k: egui::Key| ctx.input(|i| i.key_pressed(k));
        let mut out = Vec::new();
        if pressed(egui::Key::Space) {
            out.push(Action::Pause(!self.paused));
        }
        if pressed(egui::Key::C) {
            self.trace.clear();
        }
        if pressed(egui::Key::F1)
            || ctx.input(|i| {
                i.events
                    .iter()
                    .any(|e| matches!(e, egui::Event::Text(t) if t == "?"))
            })
        {
            out.push(Action::Help(!self.help_open));
        }
        if pressed(egui::Key::R) {
            let recording = self
                .pipeline
                .recorder_status()
                .is_some_and(|s| s.active.is_some());
            out.push(Action::Record(if recording {
                panels::record::RecordAction::Stop
            } else {
                panels::record::RecordAction::Start(
                    self.record.request(&self.settings.setup.chain.describe()),
                )
            }));
        }
        if pressed(egui::Key::M) {
            out.push(Action::Record(panels::record::RecordAction::Marker(
                self.record.next_marker(),
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
        self.actions.extend(out);
    }

    /// Freezes or resumes the display; resuming also goes back to following the live data.
    fn set_paused(&mut self, paused: bool) {
        self.paused = paused;
        if !paused {
            self.trace.follow = true;
        }
        self.pending.push(Control::DisplayPaused(paused));
    }

    /// The trace panel's state (tests read the cursors).
    pub fn trace_state(&self) -> &panels::trace::TraceState {
        &self.trace
    }

    /// True when a spectrum is held as 'before' (tests).
    pub fn spectrum_held(&self) -> bool {
        self.spectrum.before.is_some()
    }

    /// True while the help panel is open.
    pub fn help_open(&self) -> bool {
        self.help_open
    }

    /// Carries out a recording request.
    fn record_action(&mut self, a: panels::record::RecordAction) {
        use crate::recorder::RecorderCommand;
        match a {
            panels::record::RecordAction::Start(req) => {
                self.pipeline.recorder(RecorderCommand::Start(req));
            }
            panels::record::RecordAction::Stop => {
                self.pipeline.recorder(RecorderCommand::Stop);
            }
            panels::record::RecordAction::Marker(text) => {
                let t = self.view.snapshot.as_ref().map_or(0.0, |s| s.t_end_s);
                self.markers.push((t, text.clone()));
                self.pipeline.recorder(RecorderCommand::Marker(text));
            }
        }
    }

    /// Markers placed, at stream time (tests read them).
    pub fn markers(&self) -> &[(f64, String)] {
        &self.markers
    }

    /// What the recorder is doing (tests read it).
    pub fn recorder_status(&self) -> Option<crate::recorder::RecorderStatus> {
        self.pipeline.recorder_status()
    }

    /// Replaces the settings with a setup's and restarts the source.
    ///
    /// # Errors
    /// A message when the setup's source cannot be used.
    fn apply_setup(&mut self, setup: &crate::setup::Setup) -> Result<(), String> {
        let s = Settings::from_setup(setup)?;
        self.settings = s;
        self.file_path = settings_file_path(&self.settings);
        self.restart_source();
        Ok(())
    }

    fn files_action(&mut self, a: panels::files::FilesAction) {
        use panels::files::FilesAction;
        let result: Result<String, String> = match a {
            FilesAction::OpenSetup(p) => match crate::setup::Setup::load(&p) {
                Ok(l) => self.apply_setup(&l.setup).map(|()| {
                    if l.warnings.is_empty() {
                        format!("loaded {}", p.display())
                    } else {
                        format!("loaded {}; {}", p.display(), l.warnings.join("; "))
                    }
                }),
                Err(e) => Err(e.to_string()),
            },
            FilesAction::SaveSetup(p) => {
                let setup = self.settings.to_setup();
                self.spawn_job(move || {
                    setup
                        .save(&p)
                        .map(|()| format!("saved {}", p.display()))
                        .map_err(|e| e.to_string())
                });
                return;
            }
            FilesAction::ExportC {
                path,
                format,
                prefix,
            } => {
                // The design in force: the header holds exactly what the monitor runs.
                match self.pipeline.design() {
                    Some(design) => {
                        let fs = design.fs_hz();
                        let info = crate::export::c_header::HeaderInfo {
                            fs_hz: fs,
                            chain: design.settings().describe(),
                            prefix,
                            format,
                        };
                        self.spawn_job(move || {
                            crate::export::c_header::header(&design, &info)
                                .map_err(|e| e.to_string())
                                .and_then(|text| {
                                    std::fs::write(&path, text)
                                        .map_err(|e| format!("{}: {e}", path.display()))
                                })
                                .map(|()| {
                                    format!(
                                        "wrote {} ({} at {fs} Hz)",
                                        path.display(),
                                        format.name()
                                    )
                                })
                        });
                        return;
                    }
                    None => Err("no chain runs yet: the source's sample rate is not known".into()),
                }
            }
            FilesAction::TracePng(p) => match self.trace_png_job(p) {
                Ok(job) => {
                    self.spawn_job(job);
                    return;
                }
                Err(e) => Err(e),
            },
            FilesAction::SpectrumPng(p) => match self.spectrum_png_job(p) {
                Ok(job) => {
                    self.spawn_job(job);
                    return;
                }
                Err(e) => Err(e),
            },
        };
        match result {
            Ok(m) => {
                self.files.message = m;
                self.files.failed = false;
            }
            Err(m) => {
                self.files.message = m;
                self.files.failed = true;
            }
        }
    }

    /// Writes the traces now in the window as a PNG.
    ///
    /// # Errors
    /// A message when there is nothing yet or the file cannot be written.
    /// Runs `job` on a worker thread; its message lands in the Files section when it is done.
    fn spawn_job(&mut self, job: impl FnOnce() -> Result<String, String> + Send + 'static) {
        let tx = self.jobs.0.clone();
        self.jobs_running += 1;
        self.files.message = "working…".into();
        self.files.failed = false;
        let back = tx.clone();
        if let Err(e) = std::thread::Builder::new()
            .name("leadline-files".into())
            .spawn(move || {
                let _ = tx.send(job());
            })
        {
            let _ = back.send(Err(format!("could not start the file job: {e}")));
        }
    }

    /// Takes the messages of finished jobs.
    fn collect_jobs(&mut self) {
        while let Ok(r) = self.jobs.1.try_recv() {
            self.jobs_running = self.jobs_running.saturating_sub(1);
            match r {
                Ok(m) => {
                    self.files.message = m;
                    self.files.failed = false;
                }
                Err(m) => {
                    self.files.message = m;
                    self.files.failed = true;
                }
            }
        }
    }

    /// The trace PNG as a job: the data it needs are copied now, the drawing runs later.
    fn trace_png_job(
        &self,
        path: std::path::PathBuf,
    ) -> Result<impl FnOnce() -> Result<String, String> + Send + 'static, String> {
        let snap = self.view.snapshot.as_ref().ok_or("no samples yet")?;
        let ch = self
            .settings
            .setup
            .view
            .channel
            .min(snap.traces.len().saturating_sub(1));
        let t = snap.traces.get(ch).ok_or("no samples yet")?.clone();
        // µV per display unit.
        let (k, unit) = (
            1.0 / self.settings.setup.view.unit.factor(),
            self.settings.setup.view.unit.symbol(),
        );
        let title = format!(
            "ch{} at {} Hz — chain {}",
            ch + 1,
            snap.fs_hz,
            self.settings.setup.chain.describe()
        );
        let markers = self.markers.clone();
        Ok(move || {
            use crate::export::plot_png::{TraceLine, trace_png};
            let raw = super::plot::RAW_COLOUR;
            trace_png(
                &path,
                &[
                    TraceLine {
                        label: "before the chain",
                        rgb: (raw.r(), raw.g(), raw.b()),
                        columns: &t.raw,
                    },
                    TraceLine {
                        label: "after the chain",
                        // The screen colour, darkened for a white page.
                        rgb: (0, 126, 112),
                        columns: &t.filtered,
                    },
                ],
                (unit, k),
                &markers,
                &title,
            )
            .map(|()| format!("saved {}", path.display()))
            .map_err(|e| e.to_string())
        })
    }

    /// The spectrum PNG as a job.
    fn spectrum_png_job(
        &self,
        path: std::path::PathBuf,
    ) -> Result<impl FnOnce() -> Result<String, String> + Send + 'static, String> {
        let f = self
            .view
            .snapshot
            .as_ref()
            .and_then(|s| s.spectrum.clone())
            .ok_or("no spectrum yet (it needs a few seconds of signal)")?;
        let title = format!(
            "ch{} after the chain {}, Welch over {:.0} s at {} Hz",
            f.channel + 1,
            self.settings.setup.chain.describe(),
            f.seconds,
            f.fs_hz
        );
        Ok(move || {
            crate::export::plot_png::psd_png(&path, &f.filtered, f.mains_filtered.as_ref(), &title)
                .map(|()| format!("saved {}", path.display()))
                .map_err(|e| e.to_string())
        })
    }

    /// Writes the setup to the configuration folder when it changed (at most every 2 s).
    fn remember(&mut self, force: bool) {
        if !self.opts.remember_setup {
            return;
        }
        let now = self.settings.to_setup();
        let due = match &self.remembered {
            None => true,
            Some((old, at)) => *old != now && (force || at.elapsed() >= Duration::from_secs(2)),
        };
        if due {
            if let Some(p) = crate::setup::last_setup_path() {
                // Not being able to remember only means defaults at the next start.
                let _ = now.save(&p);
            }
            self.remembered = Some((now, Instant::now()));
        }
    }

    fn apply_theme(&mut self, ctx: &egui::Context) {
        let smooth = self.settings.setup.view.smooth_lines;
        if ctx.tessellation_options(|o| o.feathering) != smooth {
            ctx.tessellation_options_mut(|o| o.feathering = smooth);
        }
        if self.theme_applied != Some(self.settings.setup.view.theme) {
            let mut visuals = match self.settings.setup.view.theme {
                crate::setup::Theme::Dark => egui::Visuals::dark(),
                crate::setup::Theme::Light => egui::Visuals::light(),
            };
            // Soft shadows are wide blended quads: under software OpenGL the caution window's
            // cost a tenth of a core at 30 frames/s. A frame line marks windows instead.
            visuals.window_shadow = egui::epaint::Shadow::NONE;
            visuals.popup_shadow = egui::epaint::Shadow::NONE;
            ctx.set_visuals(visuals);
            self.theme_applied = Some(self.settings.setup.view.theme);
        }
    }

    /// The top bar: freeze, record, marker, help, theme, window, unit, channel and the readout.
    fn top_bar(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
                ui.label(egui::RichText::new("leadline").strong().size(18.0));
                ui.separator();
                let label = if !self.trace.follow {
                    "Follow live"
                } else if self.paused {
                    "Resume"
                } else {
                    "Freeze"
                };
                if ui
                    .button(label)
                    .on_hover_text(
                        "Freeze the traces to look closely (Space); data keep flowing underneath and into any recording. While frozen: drag to pan, scroll to zoom, click to place the two cursors.",
                    )
                    .clicked()
                {
                    self.actions.push(Action::Pause(!self.paused));
                }
                let rec_status = self.pipeline.recorder_status();
                let chain_text = self.settings.setup.chain.describe();
                self.actions.extend(panels::record::top_bar(ui, &mut self.record, rec_status.as_ref(), &chain_text));
                if ui
                    .selectable_label(self.help_open, "Help")
                    .on_hover_text("Keyboard shortcuts and how to measure (F1 or ?).")
                    .clicked()
                {
                    self.actions.push(Action::Help(!self.help_open));
                }
                let dark = self.settings.setup.view.theme == crate::setup::Theme::Dark;
                if ui
                    .button(if dark { "Light" } else { "Dark" })
                    .on_hover_text("Switch between dark and light colours (light is easier to read on a bright bench or a projector).")
                    .clicked()
                {
                    self.actions.push(Action::Theme(if dark {
                        crate::setup::Theme::Light
                    } else {
                        crate::setup::Theme::Dark
                    }));
                }
                ui.separator();
                let w = ui
                    .add(
                        egui::Slider::new(&mut self.settings.setup.view.window_s, MIN_WINDOW_S..=MAX_WINDOW_S)
                            .text("Time window")
                            .suffix(" s")
                            .max_decimals(0),
                    )
                    .on_hover_text("How many seconds of signal the traces show.");
                if w.changed() {
                    self.actions.push(Action::Control(Control::Window(self.settings.setup.view.window_s)));
                }
                ui.separator();
                ui.selectable_value(&mut self.settings.setup.view.unit, TraceUnit::Millivolts, "mV")
                    .on_hover_text("Trace axes in millivolts at the electrodes (input-referred).");
                ui.selectable_value(&mut self.settings.setup.view.unit, TraceUnit::Microvolts, "µV")
                    .on_hover_text("Trace axes in microvolts at the electrodes (input-referred).");
                let n = self
                    .view
                    .snapshot
                    .as_ref()
                    .map_or(self.settings.setup.synth.channels, |s| s.traces.len());
                if n > 1 {
                    ui.separator();
                    let before = self.settings.setup.view.channel;
                    egui::ComboBox::from_id_salt("channel")
                        .selected_text(format!("ch{}", self.settings.setup.view.channel + 1))
                        .show_ui(ui, |ui| {
                            for k in 0..n {
                                ui.selectable_value(
                                    &mut self.settings.setup.view.channel,
                                    k,
                                    format!("ch{}", k + 1),
                                );
                            }
                        })
                        .response
                        .on_hover_text(
                            "Channel shown, analysed for beats and used for the spectrum.",
                        );
                    if self.settings.setup.view.channel != before {
                        self.actions.push(Action::Control(Control::Channel(self.settings.setup.view.channel)));
                    }
                }
                let beats = self.view.snapshot.as_ref().and_then(|s| s.beats.as_ref());
                let emg = self.view.snapshot.as_ref().and_then(|s| s.emg.as_deref());
                let emg_mode = self.settings.emg_mode;
                ui.allocate_ui_with_layout(
                    egui::vec2(ui.available_width(), 44.0),
                    egui::Layout::right_to_left(egui::Align::Center),
                    |ui| {
                        if emg_mode {
                            panels::muscle::readout(ui, emg);
                        } else {
                            panels::beats::rate_readout(ui, beats);
                        }
                    },
                );
            });
    }

    /// The status bar: the stream's counters, the link's state and the caution reminder.
    fn status_bar(&mut self, ui: &mut egui::Ui) {
        let rec = self.pipeline.recorder_status();
        panels::status::show(
            ui,
            &self.view,
            self.pipeline.label(),
            self.paused,
            rec.as_ref(),
        );
        if let Some(st) = self.pipeline.serial_status() {
            panels::status::serial_line(ui, &st);
        }
        if let Some(st) = self.pipeline.net_status() {
            panels::status::net_line(ui, &st);
        }
        panels::caution::reminder(ui);
    }

    /// The side panel: filters, source, front end, display, sound, recording, files, simulator.
    /// The side panel: filters, source, front end, display, sound, recording, files and the
    /// simulator, top to bottom.
    fn side_panel(&mut self, ui: &mut egui::Ui, fs: f64) {
        egui::ScrollArea::vertical().show(ui, |ui| {
            ui.heading("Filters");
            self.filters_section(ui, fs);
            ui.add_space(10.0);
            ui.heading("Source");
            self.source_section(ui);
            ui.add_space(6.0);
            self.settings_sections(ui);
        });
    }

    /// Invert, the chain, the mains check and a refused chain's reason.
    fn filters_section(&mut self, ui: &mut egui::Ui, fs: f64) {
        let snap = self.view.snapshot.as_ref();
        let inverted = snap.is_some_and(|s| s.inverted);
        let mut flip = inverted;
        if ui
            .checkbox(&mut flip, "Invert the signal")
            .on_hover_text(
                "Flip the sign of every channel before the filters (leads swapped on the board).",
            )
            .changed()
        {
            self.actions.push(Action::Control(Control::Invert(flip)));
        }
        let looks_inverted = snap
            .and_then(|s| s.beats.as_ref())
            .is_some_and(|b| b.quality.inverted);
        if looks_inverted && ui.button("Beats point down: flip").clicked() {
            self.actions
                .push(Action::Control(Control::Invert(!inverted)));
        }
        self.actions
            .extend(panels::chain::show(ui, &self.settings.setup.chain, fs));
        let mains = snap
            .and_then(|s| s.spectrum.as_ref())
            .and_then(|f| f.mains_raw.clone());
        let notch = self.settings.setup.chain.notch;
        if let Some(m) = mains.as_ref()
            && notch.enabled
            && !notch.auto
            && let Some(msg) = m.disagrees_with(notch.mains_hz)
        {
            ui.horizontal_wrapped(|ui| {
                ui.colored_label(ui.visuals().warn_fg_color, msg);
                if ui
                    .button(format!("Notch at {:.0} Hz", m.nominal_hz))
                    .on_hover_text("Move the notch to the measured mains region.")
                    .clicked()
                {
                    let mut c = self.settings.setup.chain;
                    c.notch.mains_hz = m.nominal_hz;
                    self.actions.push(Action::Chain(c));
                }
            });
        }
        if let Some(e) = snap.and_then(|s| s.chain_error.as_ref()) {
            ui.colored_label(ui.visuals().error_fg_color, format!("Not applied: {e}"));
        }
    }

    /// Serial port, network board, a file to replay and the replay's controls.
    fn source_section(&mut self, ui: &mut egui::Ui) {
        let s = &self.settings.setup;
        let active = (s.source.kind == SourceKind::Serial).then(|| s.source.port.clone());
        let simulating = self.settings.simulating();
        let net_active = s.source.kind == SourceKind::Network;
        let adc = s.scale;
        self.actions.extend(panels::source::show(
            ui,
            &mut self.picker,
            active.as_deref(),
            simulating,
            adc,
        ));
        // A Wi-Fi board and a recording to replay fold away while neither is the source: fewer
        // widgets to draw every frame (under software OpenGL the open section cost about a
        // tenth of a core) and a shorter panel.
        let replaying = self.pipeline.replay_status();
        egui::CollapsingHeader::new("Wi-Fi board or a recording")
            .id_salt("source-more")
            .open(if net_active || replaying.is_some() {
                Some(true)
            } else {
                None
            })
            .default_open(false)
            .show(ui, |ui| {
                self.actions.extend(panels::network::show(
                    ui,
                    &mut self.net,
                    net_active,
                    adc,
                    self.source_error.as_deref(),
                ));
                ui.horizontal(|ui| {
                    panels::named_field(ui, "recording to replay", &mut self.file_path, |t| {
                        t.hint_text("recording.edf / .csv / .hea").desired_width(170.0)
                    })
                    .on_hover_text("A recording to replay: EDF/EDF+/BDF, our CSV, a scope CSV with a time column, raw .f32/.f64 or a WFDB .hea.");
                    if ui
                        .add_enabled(!self.file_path.is_empty(), egui::Button::new("Replay"))
                        .clicked()
                    {
                        self.actions.push(Action::Source(SourceChoice::File(
                            self.file_path.clone().into(),
                        )));
                    }
                });
            });
        if let Some(st) = replaying {
            self.actions.extend(panels::replay::show(ui, &st));
        }
    }

    /// The folding sections: front end, display, sound, recording, files, and the simulator
    /// while it is the source.
    fn settings_sections(&mut self, ui: &mut egui::Ui) {
        let heading = |t: &str| egui::RichText::new(t).heading();
        // Open while a board is the source (its counts need the front end); folded on the
        // simulator, which models its own board.
        egui::CollapsingHeader::new(heading("Front end"))
            .default_open(!self.settings.simulating())
            .show(ui, |ui| {
                let board = self.settings.setup.from_board();
                let n = self.view.snapshot.as_ref().map_or(1, |s| s.traces.len());
                self.actions.extend(panels::front_end::show(
                    ui,
                    &mut self.front_end,
                    (
                        &self.settings.setup.front_ends(),
                        self.settings.setup.my_board(),
                    ),
                    n,
                    board,
                ));
            });
        ui.add_space(10.0);
        egui::CollapsingHeader::new(heading("Display"))
            .default_open(false)
            .show(ui, |ui| {
                self.actions
                    .extend(panels::display::show(ui, &mut self.settings.setup.view));
            });
        egui::CollapsingHeader::new(heading("Sound"))
            .default_open(false)
            .show(ui, |ui| {
                self.actions
                    .extend(panels::sound::show(ui, &mut self.sound));
            });
        egui::CollapsingHeader::new(heading("Recording"))
            .default_open(true)
            .show(ui, |ui| {
                let st = self.pipeline.recorder_status();
                panels::record::settings(ui, &mut self.record, st.as_ref());
            });
        egui::CollapsingHeader::new(heading("Files"))
            .default_open(false)
            .show(ui, |ui| {
                self.actions
                    .extend(panels::files::show(ui, &mut self.files));
            });
        if self.settings.simulating() {
            ui.add_space(10.0);
            ui.heading("Simulated bench");
            self.actions
                .extend(panels::simulator::show(ui, &self.settings.setup.synth));
        }
    }

    /// Carries out one action (panels return them; tests send them).
    pub fn apply(&mut self, a: Action) {
        let fs = self
            .view
            .snapshot
            .as_ref()
            .map_or(self.settings.setup.synth.fs_hz, |s| s.fs_hz);
        match a {
            Action::Control(c) => self.pending.push(c),
            Action::Chain(c) => {
                self.settings.setup.chain = c;
                self.pending.push(Control::Chain(c));
            }
            Action::Source(choice) => {
                let spec = match choice {
                    SourceChoice::Simulator => SourceSpec::Synth(self.settings.setup.synth.clone()),
                    SourceChoice::Serial(spec) => SourceSpec::Serial(spec),
                    SourceChoice::Network(spec) => spec,
                    SourceChoice::File(path) => {
                        SourceSpec::File(crate::source::replay::ReplaySpec {
                            path,
                            read: crate::store::ReadOptions::default(),
                        })
                    }
                };
                self.settings.setup.set_source(&spec);
                self.settings.setup.view.channel = 0;
                self.restart_source();
            }
            Action::Synth { settings, restart } => {
                self.settings.setup.synth = settings;
                if restart {
                    self.settings.setup.view.channel = self
                        .settings
                        .setup
                        .view
                        .channel
                        .min(self.settings.setup.synth.channels - 1);
                    self.restart_source();
                } else {
                    self.pipeline.synth(self.settings.setup.synth.clone());
                }
            }
            Action::FrontEnds { front_ends, live } => {
                self.settings.setup.set_front_ends(&front_ends);
                if live {
                    self.pending.push(Control::FrontEnd(Some(front_ends)));
                }
            }
            Action::MyBoard(b) => self.settings.setup.set_my_board(b),
            Action::Replay(c) => self.pipeline.replay(c),
            Action::Record(r) => self.record_action(r),
            Action::Files(f) => self.files_action(f),
            Action::Pause(p) => self.set_paused(p),
            Action::HoldSpectrum(hold) => {
                self.spectrum.before = hold
                    .then(|| self.view.snapshot.as_ref().and_then(|s| s.spectrum.clone()))
                    .flatten();
            }
            Action::Lower(l) => self.settings.setup.view.lower = l,
            Action::Theme(t) => self.settings.setup.view.theme = t,
            Action::EmgMode(on) => self.set_emg_mode(on, fs),
            Action::Help(open) => self.help_open = open,
            Action::CautionConfirmed => {
                self.caution_open = false;
                super::state::acknowledge_caution();
            }
        }
    }

    /// The traces and the lower strip under them.
    fn central(&mut self, ui: &mut egui::Ui, fs: f64) {
        let total = ui.available_height();
        let lower_h = if self.settings.setup.view.lower == LowerView::Hidden {
            0.0
        } else {
            (0.42 * total).clamp(150.0, 360.0)
        };
        let trace_h = total - lower_h - 30.0;
        ui.allocate_ui(egui::vec2(ui.available_width(), trace_h), |ui| {
            let left_live = panels::trace::show(
                ui,
                &self.view,
                &self.settings,
                &self.markers,
                &mut self.trace,
            );
            self.actions.extend(left_live.filter(|_| !self.paused));
        });
        self.view_tabs(ui);
        self.lower_strip(ui, fs);
    }

    /// Heart or muscle signals, and the choice of the strip under the traces.
    fn view_tabs(&mut self, ui: &mut egui::Ui) {
        ui.horizontal(|ui| {
                let mut emg = self.settings.emg_mode;
                ui.selectable_value(&mut emg, false, "ECG")
                    .on_hover_text("Heart signals: the ECG chain, beats and heart rate.");
                ui.selectable_value(&mut emg, true, "EMG")
                    .on_hover_text("Muscle signals: a 20–450 Hz band-pass with the mains notch, the envelope, contractions and the median-frequency trend. Use 1 kHz or more.");
                if emg != self.settings.emg_mode {
                    self.actions.push(Action::EmgMode(emg));
                }
                ui.separator();
                ui.selectable_value(&mut self.settings.setup.view.lower, LowerView::Beats, "Beats")
                    .on_hover_text("The averaged beat before and after the chain, HRV and the RR tachogram.");
                ui.selectable_value(&mut self.settings.setup.view.lower, LowerView::Spectrum, "Spectrum")
                    .on_hover_text("Running Welch PSD before and after the chain, with the mains lines measured.");
                ui.selectable_value(&mut self.settings.setup.view.lower, LowerView::Response, "Chain response")
                    .on_hover_text(
                        "Magnitude, phase and group delay of the digital chain as set now.",
                    );
                ui.selectable_value(&mut self.settings.setup.view.lower, LowerView::Parts, "Parts")
                    .on_hover_text("The chain built from standard parts: resistors from an E series, your capacitors, the tolerance spread.");
                ui.selectable_value(&mut self.settings.setup.view.lower, LowerView::Measure, "Measure")
                    .on_hover_text("Measure the built front end on the live stream: response from a stimulus channel, a stepped sine, noise, CMRR.");
                if self.settings.emg_mode {
                    ui.selectable_value(&mut self.settings.setup.view.lower, LowerView::Muscle, "Muscle")
                        .on_hover_text("Envelope, moving RMS and contractions of the followed channel, with each contraction's median frequency.");
                }
                ui.selectable_value(&mut self.settings.setup.view.lower, LowerView::Hidden, "Traces only")
                    .on_hover_text("Hide the lower strip: the traces take the whole height.");
            });
    }

    /// The strip under the traces, as chosen.
    fn lower_strip(&mut self, ui: &mut egui::Ui, fs: f64) {
        match self.settings.setup.view.lower {
            LowerView::Response => {
                let ctx = ui.ctx().clone();
                let design = self.pipeline.design();
                self.parts
                    .update(&self.settings.setup.chain, design, move || {
                        ctx.request_repaint()
                    });
                panels::response::show(
                    ui,
                    &self.response,
                    &self.settings.setup.chain,
                    super::plot::FILTERED_COLOUR,
                    self.parts.stages(),
                );
            }
            LowerView::Spectrum => {
                let frame = self
                    .view
                    .snapshot
                    .as_ref()
                    .and_then(|s| s.spectrum.as_ref());
                // The design the DSP thread ran for this estimate.
                let design = self.view.snapshot.as_ref().map(|s| Arc::clone(&s.design));
                if let Some(c) = panels::spectrum::show(
                    ui,
                    frame,
                    design.as_deref().map(|d| d.sections()),
                    &mut self.spectrum,
                ) {
                    self.actions.push(c);
                }
            }
            LowerView::Beats => {
                let b = self.view.snapshot.as_ref().and_then(|s| s.beats.as_ref());
                panels::beats::show(ui, b, fs);
            }
            LowerView::Parts => {
                let design = self.pipeline.design();
                panels::parts::show(ui, &mut self.parts, &self.settings.setup.chain, design);
            }
            LowerView::Measure => {
                let ctx = ui.ctx().clone();
                let design = self.pipeline.design();
                self.parts
                    .update(&self.settings.setup.chain, design.clone(), move || {
                        ctx.request_repaint()
                    });
                let snap = self.view.snapshot.as_ref();
                let n = snap.map_or(1, |s| s.traces.len());
                if let Some(c) = panels::measure::show(
                    ui,
                    &mut self.measure,
                    snap.and_then(|s| s.measured.as_ref()),
                    design.as_deref().map(|d| d.sections()),
                    self.parts.stages(),
                    n,
                    fs,
                ) {
                    self.actions.push(c);
                }
            }
            LowerView::Muscle => {
                let snap = self.view.snapshot.as_ref();
                let v = snap.and_then(|s| s.emg.as_deref());
                let trace = snap
                    .and_then(|s| {
                        s.traces.get(
                            self.settings
                                .setup
                                .view
                                .channel
                                .min(s.traces.len().saturating_sub(1)),
                        )
                    })
                    .map(|t| &t.filtered);
                self.actions
                    .extend(panels::muscle::show(ui, v, trace, &mut self.emg, fs));
            }
            LowerView::Hidden => {}
        }
    }

    /// Draws the whole window and queues the resulting Controls.
    pub fn show(&mut self, ui: &mut egui::Ui) {
        self.keys(&ui.ctx().clone());
        self.collect_jobs();
        if self.jobs_running > 0 {
            // Nothing else may wake the window (frozen, no data) when a job finishes.
            ui.ctx().request_repaint_after(Duration::from_millis(100));
        }
        let fs = self
            .view
            .snapshot
            .as_ref()
            .map_or(self.settings.setup.synth.fs_hz, |s| s.fs_hz);

        // Panels draw no background of their own: the window is cleared to the panel colour
        // anyway, and with software OpenGL every full-window layer costs CPU at each frame.
        let style = ui.style().clone();
        let bare = |f: egui::Frame| f.fill(egui::Color32::TRANSPARENT);
        egui::Panel::top("top-bar")
            .frame(bare(egui::Frame::side_top_panel(&style)))
            .show(ui, |ui| {
                self.top_bar(ui);
            });

        egui::Panel::bottom("status-bar")
            .frame(bare(egui::Frame::side_top_panel(&style)))
            .show(ui, |ui| {
                self.status_bar(ui);
            });

        egui::Panel::left("controls")
            .frame(bare(egui::Frame::side_top_panel(&style)))
            .default_size(300.0)
            .show(ui, |ui| {
                self.side_panel(ui, fs);
            });

        // The response of the design in force (the DSP thread's: before the first block, at
        // the source's expected rate).
        let refused = self
            .view
            .snapshot
            .as_ref()
            .and_then(|s| s.chain_error.clone());
        self.response
            .update_running(self.pipeline.design().as_deref(), refused.as_deref());
        egui::CentralPanel::default_margins()
            .frame(bare(egui::Frame::central_panel(&style)))
            .show(ui, |ui| {
                self.central(ui, fs);
            });

        self.actions
            .extend(panels::help::show(ui.ctx(), self.help_open));
        self.actions
            .extend(panels::caution::first_start(ui.ctx(), self.caution_open));

        let actions = std::mem::take(&mut self.actions);
        if !actions.is_empty() {
            // What the actions change is drawn in the next frame.
            ui.ctx().request_repaint();
        }
        for a in actions {
            self.apply(a);
        }
        for c in self.pending.drain(..) {
            self.pipeline.control(c);
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
        self.exit_logic(ctx);
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
