//! The monitor's widgets, driven headless with egui_kittest: a moved slider reaches the DSP thread.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use eframe::egui::Role;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use leadline::gui::action::Action;
use leadline::gui::state::Settings;
use leadline::gui::{AppOptions, LeadlineApp};

fn app() -> LeadlineApp {
    app_with(Settings::default())
}

/// The monitor on `settings`, with the default start options.
fn app_with(settings: Settings) -> LeadlineApp {
    LeadlineApp::new(
        settings,
        Arc::new(|| {}),
        AppOptions::default(),
        Arc::new(Mutex::new(Ok(()))),
    )
    .unwrap()
}

/// Runs frames until the snapshot holds `seconds` of stream (at most 20 s of waiting).
fn run_until_stream(h: &mut Harness<'static, LeadlineApp>, seconds: f64) {
    let deadline = Instant::now() + Duration::from_secs(20);
    while h
        .state()
        .state
        .view
        .snapshot
        .as_ref()
        .is_none_or(|s| s.t_end_s < seconds)
    {
        assert!(Instant::now() < deadline, "no data");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(50));
    }
}

/// Types `text` into the text field named `name`, as a person would: focus, select all, type,
/// and leave the field (Escape) so the keys work on the monitor again.
fn fill(h: &mut Harness<'static, LeadlineApp>, name: &str, text: &str) {
    use eframe::egui::{Key, Modifiers};
    h.get_by_role_and_label(Role::TextInput, name).focus();
    h.run_steps(1);
    h.key_press_modifiers(Modifiers::COMMAND, Key::A);
    h.get_by_role_and_label(Role::TextInput, name)
        .type_text(text);
    h.run_steps(1);
    h.key_press(Key::Escape);
    h.run_steps(1);
    assert_eq!(
        h.get_by_role_and_label(Role::TextInput, name)
            .value()
            .as_deref(),
        Some(text),
        "the field {name} took the text"
    );
}

/// How often the slow plot data were rebuilt: the spectrum's curves and the parts' realisation.
fn rebuilds(a: &LeadlineApp) -> (u64, u64) {
    (a.widgets.spectrum.rebuilds, a.widgets.parts.realisations)
}

fn harness(app: LeadlineApp) -> Harness<'static, LeadlineApp> {
    harness_sized(app, [1280.0, 800.0])
}

fn harness_sized(app: LeadlineApp, size: [f32; 2]) -> Harness<'static, LeadlineApp> {
    Harness::builder().with_size(size).build_ui_state(
        |ui, app: &mut LeadlineApp| {
            app.poll();
            app.show(ui);
        },
        app,
    )
}

#[test]
fn moving_the_high_pass_slider_retunes_the_dsp_thread() {
    let mut h = harness(app());
    h.run_steps(3);
    h.get_by_role_and_label(Role::Slider, "High-pass corner")
        .set_value_accesskit(1.5);
    h.run_steps(2);
    assert_eq!(h.state().state.settings.setup.chain.highpass.corner_hz, 1.5);
    let deadline = Instant::now() + Duration::from_secs(10);
    loop {
        h.run_steps(1);
        let applied = h
            .state()
            .state
            .view
            .snapshot
            .as_ref()
            .map(|s| s.chain.highpass.corner_hz);
        if applied == Some(1.5) {
            break;
        }
        assert!(
            Instant::now() < deadline,
            "DSP thread still runs {applied:?}"
        );
        std::thread::sleep(Duration::from_millis(30));
    }
}

#[test]
fn first_start_caution_is_shown_until_confirmed() {
    let opts = AppOptions {
        show_caution: true,
        ..AppOptions::default()
    };
    let app = LeadlineApp::new(
        Settings::default(),
        Arc::new(|| {}),
        opts,
        Arc::new(Mutex::new(Ok(()))),
    )
    .unwrap();
    // Keep the test from writing the real marker file.
    let dir = std::env::temp_dir().join(format!("leadline-caution-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    leadline::gui::state::set_config_dir_override(dir.clone());
    let mut h = harness(app);
    h.run_steps(2);
    assert!(h.query_by_label_contains("not a medical device").is_some());
    h.get_by_role_and_label(Role::Button, "I understand")
        .click();
    h.run_steps(3);
    assert!(
        h.query_by_label_contains("Do not use it for diagnosis")
            .is_none()
    );
    // The always-visible reminder stays.
    assert!(h.query_by_label_contains("Not a medical device").is_some());
    assert!(
        dir.join("caution-acknowledged").exists(),
        "confirmation remembered"
    );
}

#[test]
fn space_freezes_and_the_freeze_button_resumes() {
    let mut h = harness(app());
    h.run_steps(2);
    assert!(!h.state().state.paused);
    h.key_press(eframe::egui::Key::Space);
    h.run_steps(2);
    assert!(h.state().state.paused, "Space freezes the traces");
    h.get_by_role_and_label(Role::Button, "Resume").click();
    h.run_steps(2);
    assert!(!h.state().state.paused, "the button resumes");
}

fn tmp(name: &str) -> std::path::PathBuf {
    crate::common::tmp("gui", name)
}

fn run_until(h: &mut Harness<'static, LeadlineApp>, what: &str, f: impl Fn(&LeadlineApp) -> bool) {
    let deadline = Instant::now() + Duration::from_secs(20);
    while !f(h.state()) {
        assert!(Instant::now() < deadline, "timed out waiting for {what}");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(20));
    }
}

#[test]
fn record_button_records_the_m_key_marks_and_stop_closes_the_file() {
    let path = tmp("gui-recording.edf");
    let _ = std::fs::remove_file(&path);
    // Tall enough that the Recording section is on screen without scrolling.
    let mut h = harness_sized(app(), [1280.0, 1600.0]);
    h.run_steps(2);
    fill(&mut h, "recording file", &path.display().to_string());
    fill(&mut h, "marker text", "charger plugged in");
    run_until(&mut h, "the first snapshot", |a| {
        a.state.view.snapshot.is_some()
    });
    h.get_by_role_and_label(Role::Button, "Record").click();
    run_until(&mut h, "the recording to start", |a| {
        a.pipeline
            .recorder_status()
            .is_some_and(|s| s.active.is_some() && s.frames > 0)
    });
    h.key_press(eframe::egui::Key::M);
    h.run_steps(2);
    assert_eq!(
        h.state().state.markers.len(),
        1,
        "the marker is drawn on the trace"
    );
    assert_eq!(h.state().state.markers[0].1, "charger plugged in");
    run_until(&mut h, "1.2 s of data", |a| {
        a.pipeline
            .recorder_status()
            .is_some_and(|s| s.elapsed_s >= 1.2)
    });
    // The readout shows the elapsed time while recording.
    assert!(h.query_by_label_contains("REC 00:00:01").is_some());
    h.get_by_role_and_label(Role::Button, "Stop recording")
        .click();
    run_until(&mut h, "the file to close", |a| {
        a.pipeline
            .recorder_status()
            .is_some_and(|s| s.active.is_none())
    });
    let status = h.state().pipeline.recorder_status().unwrap();
    assert!(!status.failed, "{}", status.message);
    let rec = leadline::store::read(&path, &leadline::store::ReadOptions::default()).unwrap();
    assert_eq!(rec.len() as u64, status.frames);
    assert_eq!(rec.events.len(), 1);
    assert_eq!(rec.events[0].text, "charger plugged in");
}

#[test]
fn setup_save_and_open_restore_the_chain_and_view() {
    let path = tmp("gui-setup.toml");
    // Tall enough that the side panel's Files section is on screen without scrolling.
    let mut h = harness_sized(app(), [1280.0, 1600.0]);
    h.run_steps(2);
    let mut chain = h.state().state.settings.setup.chain;
    chain.lowpass.corner_hz = 35.0;
    h.state_mut().apply(Action::Chain(chain));
    h.state_mut()
        .apply(Action::Theme(leadline::setup::Theme::Light));
    // The Files section starts folded.
    h.get_by_label("Files").click();
    h.run_steps(2);
    fill(&mut h, "setup file", &path.display().to_string());
    h.get_by_role_and_label(Role::Button, "Save").click();
    h.run_steps(2);
    // Saving runs off the UI thread and reports in the Files section.
    let deadline = Instant::now() + Duration::from_secs(10);
    while h.query_by_label_contains("saved ").is_none() {
        assert!(Instant::now() < deadline, "setup save did not report");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(20));
    }
    assert!(path.exists());
    let saved = h.state().state.settings.clone();
    chain.lowpass.corner_hz = 100.0;
    h.state_mut().apply(Action::Chain(chain));
    h.state_mut()
        .apply(Action::Theme(leadline::setup::Theme::Dark));
    h.run_steps(1);
    h.get_by_role_and_label(Role::Button, "Open").click();
    h.run_steps(2);
    // Opening runs on the job runner too.
    let deadline = Instant::now() + Duration::from_secs(10);
    while h.query_by_label_contains("loaded ").is_none() {
        assert!(Instant::now() < deadline, "setup open did not report");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(20));
    }
    assert_eq!(h.state().state.settings.setup.chain.lowpass.corner_hz, 35.0);
    assert_eq!(
        h.state().state.settings.setup.view.theme,
        leadline::setup::Theme::Light
    );
    assert_eq!(h.state().state.settings.to_setup(), saved.to_setup());
}

/// Waits until the DSP thread runs a chain that `ok` accepts.
fn wait_applied(
    h: &mut Harness<'static, LeadlineApp>,
    what: &str,
    ok: impl Fn(&leadline::dsp::ChainSettings) -> bool,
) {
    run_until(h, what, |a| {
        a.state.view.snapshot.as_ref().is_some_and(|s| ok(&s.chain))
    });
}

#[test]
fn the_notch_q_and_the_low_pass_corner_reach_the_dsp_thread() {
    let mut h = harness(app());
    h.run_steps(3);
    h.get_by_role_and_label(Role::Slider, "Notch Q")
        .set_value_accesskit(12.0);
    h.run_steps(2);
    wait_applied(&mut h, "notch Q 12", |c| c.notch.q == 12.0);
    h.get_by_role_and_label(Role::Slider, "Low-pass corner")
        .set_value_accesskit(25.0);
    h.run_steps(2);
    wait_applied(&mut h, "low-pass 25 Hz", |c| c.lowpass.corner_hz == 25.0);
    // The notch's mains button comes first (the simulator's mains setting is further down).
    h.get_all_by_role_and_label(Role::Button, "60 Hz")
        .next()
        .unwrap()
        .click();
    h.run_steps(2);
    wait_applied(&mut h, "notch at 60 Hz", |c| c.notch.mains_hz == 60.0);
}

#[test]
fn replaying_a_file_switches_the_source() {
    // A recording of our own simulator, made here.
    let path = tmp("replay-source.csv");
    let rec = leadline::store::Recording {
        fs_hz: 250.0,
        names: vec!["ch1".into()],
        time_s: None,
        channels: vec![
            (0..2500)
                .map(|i| 500.0 * ((i as f64) * 0.05).sin())
                .collect(),
        ],
        events: vec![],
        ..Default::default()
    };
    leadline::store::write(&path, &rec, leadline::store::FileUnit::Millivolts).unwrap();
    let mut h = harness(app());
    run_until(&mut h, "the simulator's first snapshot", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .is_some_and(|s| s.fs_hz == 500.0)
    });
    // The recording's field folds away with the Wi-Fi board's: open it as a person would.
    h.get_by_label("Wi-Fi board or a recording").click();
    h.run_steps(2);
    fill(&mut h, "recording to replay", &path.display().to_string());
    h.get_by_role_and_label(Role::Button, "Replay").click();
    h.run_steps(2);
    assert_eq!(
        h.state().state.settings.setup.source.kind,
        leadline::setup::SourceKind::File
    );
    run_until(&mut h, "a snapshot from the file at 250 Hz", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .is_some_and(|s| s.fs_hz == 250.0)
    });
}

#[test]
fn hold_as_before_keeps_the_spectrum() {
    let mut h = harness(app());
    run_until(&mut h, "a spectrum", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .is_some_and(|s| s.spectrum.is_some())
    });
    assert!(h.state().state.spectrum_before.is_none());
    h.get_by_role_and_label(Role::Button, "Hold as before")
        .click();
    h.run_steps(2);
    assert!(h.state().state.spectrum_before.is_some());
}

fn click_at(h: &mut Harness<'static, LeadlineApp>, x: f32, y: f32) {
    use eframe::egui::{Event, Modifiers, PointerButton, pos2};
    let pos = pos2(x, y);
    h.input_mut().events.push(Event::PointerMoved(pos));
    h.run_steps(1);
    for pressed in [true, false] {
        h.input_mut().events.push(Event::PointerButton {
            pos,
            button: PointerButton::Primary,
            pressed,
            modifiers: Modifiers::NONE,
        });
        h.run_steps(1);
    }
}

#[test]
fn two_clicks_on_the_trace_place_cursors_with_their_deltas() {
    let mut h = harness(app());
    run_until(&mut h, "two seconds of trace", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .is_some_and(|s| s.t_end_s > 2.0)
    });
    // Freeze first, as one does to measure; then click twice on the lower (filtered) trace.
    h.key_press(eframe::egui::Key::Space);
    h.run_steps(2);
    click_at(&mut h, 500.0, 330.0);
    click_at(&mut h, 700.0, 300.0);
    let c = h.state().state.trace.cursors;
    let (a, b) = (c[0].expect("cursor 1"), c[1].expect("cursor 2"));
    assert!(b[0] > a[0], "the second click is later: {a:?} {b:?}");
    // 200 px of a 10 s window about 900 px wide: about 2.2 s.
    let dt = b[0] - a[0];
    assert!(dt > 1.5 && dt < 3.0, "Δt {dt}");
    assert!(b[1] > a[1], "the second click is higher");
    h.run_steps(2);
    assert!(
        h.query_by_label_contains("Δt").is_some(),
        "the readout is shown"
    );
    h.key_press(eframe::egui::Key::C);
    h.run_steps(2);
    assert_eq!(h.state().state.trace.cursors, [None, None]);
}

#[test]
fn the_help_panel_lists_the_shortcuts() {
    let mut h = harness(app());
    h.run_steps(2);
    assert!(!h.state().state.help_open);
    h.get_by_role_and_label(Role::Button, "Help").click();
    // The click is applied after its frame is drawn; a new window takes a sizing frame.
    h.run_steps(3);
    assert!(h.state().state.help_open);
    assert!(
        h.query_by_label_contains("start / stop recording")
            .is_some()
    );
    h.key_press(eframe::egui::Key::F1);
    h.run_steps(2);
    assert!(!h.state().state.help_open);
}

#[test]
fn display_settings_and_the_trace_png_button() {
    let png = tmp("gui-trace.png");
    let _ = std::fs::remove_file(&png);
    let mut h = harness_sized(app(), [1280.0, 1800.0]);
    run_until(&mut h, "a snapshot", |a| a.state.view.snapshot.is_some());
    h.get_by_label("Display").click();
    h.run_steps(2);
    h.get_by_role_and_label(Role::CheckBox, "Sweep display")
        .click();
    h.get_by_role_and_label(Role::RadioButton, "Fixed").click();
    h.run_steps(2);
    assert!(h.state().state.settings.setup.view.sweep);
    assert!(h.state().state.settings.setup.view.fixed_range_uv > 0.0);
    h.get_by_label("Files").click();
    h.run_steps(2);
    fill(&mut h, "trace PNG file", &png.display().to_string());
    h.get_by_role_and_label(Role::Button, "Save trace").click();
    h.run_steps(2);
    // The PNG is drawn off the UI thread; the Files section says when it is saved.
    let deadline = Instant::now() + Duration::from_secs(20);
    while h.query_by_label_contains("saved ").is_none() {
        assert!(Instant::now() < deadline, "trace PNG did not report");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(20));
    }
    let bytes = std::fs::read(&png).unwrap();
    assert_eq!(&bytes[1..4], b"PNG");
}

#[test]
fn a_front_end_preset_rescales_a_board_live_without_reconnecting() {
    use serialport::{SerialPort, TTYPort};
    use std::io::Write;
    // A board on a pseudo-terminal sending count 717 then 512, 250 lines a second.
    let (mut master, slave) = TTYPort::pair().unwrap();
    let path = slave.name().unwrap();
    let stop = Arc::new(std::sync::atomic::AtomicBool::new(false));
    let writer_stop = Arc::clone(&stop);
    let writer = std::thread::Builder::new()
        .name("test-board".into())
        .spawn(move || {
            master.set_timeout(Duration::from_millis(200)).unwrap();
            let start = Instant::now();
            let mut k = 0u64;
            while !writer_stop.load(std::sync::atomic::Ordering::Relaxed) {
                let due = start + Duration::from_secs_f64(k as f64 / 250.0);
                if let Some(w) = due.checked_duration_since(Instant::now()) {
                    std::thread::sleep(w);
                }
                let v = if k.is_multiple_of(2) { 717 } else { 512 };
                if master.write_all(format!("{v}\n").as_bytes()).is_err() {
                    break;
                }
                k += 1;
            }
        })
        .unwrap();
    let mut settings = Settings::default();
    settings
        .setup
        .set_source(&leadline::source::SourceSpec::Serial(
            leadline::source::serial::SerialSpec {
                path: path.clone(),
                baud: 115_200,
                format: None,
                fs_hz: Some(250.0),
                scale: leadline::scale::InputScale::default(),
                physical_to_uv: 1e3,
            },
        ));
    let app = app_with(settings);
    // Tall enough that the whole control column (filters, source, front end) is on screen.
    let mut h = harness_sized(app, [1280.0, 1800.0]);
    let wait_for = |h: &mut Harness<'static, LeadlineApp>, bits: u32| {
        let deadline = Instant::now() + Duration::from_secs(15);
        loop {
            h.run_steps(1);
            let s = h.state().state.view.snapshot.as_ref();
            if let Some(s) = s
                && s.scale.map(|x| x.bits) == Some(bits)
            {
                return (s.stats.frames, s.stats.gaps);
            }
            assert!(Instant::now() < deadline, "scale never became {bits}-bit");
            std::thread::sleep(Duration::from_millis(30));
        }
    };
    // At first: the demo board's scaling (12-bit, 3.3 V, gain 500).
    let (frames_before, _) = wait_for(&mut h, 12);
    // A board is the source: the front end section is open.
    h.get_by_value("Preset…").click();
    h.run_steps(2);
    h.get_by_label("10-bit 5 V, mid-scale").click();
    h.run_steps(2);
    let fe = h.state().state.settings.setup.front_ends()[0];
    assert_eq!((fe.adc.bits, fe.adc.vref_v, fe.adc.gain), (10, 5.0, 1000.0));
    let (frames_after, gaps) = wait_for(&mut h, 10);
    // The same stream went on: no reconnect, no gap, the frame count kept growing.
    assert!(
        frames_after > frames_before,
        "{frames_before} → {frames_after}"
    );
    assert_eq!(gaps, 0);
    // The trace is in µV of the new board: 717 counts = 1000.977 µV (by hand, 10-bit 5 V ×1000).
    // The first snapshot at the new scale may hold a single new sample: wait for a tenth of a
    // second of the new board's samples before reading the peak.
    let deadline = Instant::now() + Duration::from_secs(15);
    let s = loop {
        h.run_steps(1);
        let s = h.state().state.view.snapshot.clone().unwrap();
        if s.stats.frames >= frames_after + 25 {
            break s;
        }
        assert!(
            Instant::now() < deadline,
            "the stream stopped after the rescale"
        );
        std::thread::sleep(Duration::from_millis(30));
    };
    let top = s.traces[0].raw.max.iter().copied().fold(f32::MIN, f32::max);
    assert!((f64::from(top) - 1_000.976_562_5).abs() < 0.01, "{top} µV");
    stop.store(true, std::sync::atomic::Ordering::Relaxed);
    drop(h);
    writer.join().unwrap();
    drop(slave);
}

#[test]
fn the_measure_view_measures_the_live_stream() {
    // Two simulated leads: the response from lead 1 to lead 2 is their lead factors' ratio in
    // the ECG band, where the leads share the heart's signal.
    let mut settings = Settings::default();
    settings.setup.synth.channels = 2;
    settings.setup.view.lower = leadline::gui::state::LowerView::Measure;
    let app = app_with(settings);
    let mut h = harness_sized(app, [1280.0, 1000.0]);
    run_until_stream(&mut h, 9.0);
    h.get_by_label("Measure the last 30 s").click();
    let deadline = Instant::now() + Duration::from_secs(10);
    loop {
        h.run_steps(1);
        let m = h
            .state()
            .state
            .view
            .snapshot
            .as_ref()
            .and_then(|s| s.measured.clone());
        if let Some(m) = m {
            match &m.result {
                Ok(leadline::measure::Outcome::Response(t)) => {
                    assert!(m.seconds >= 9.0, "{}", m.seconds);
                    assert!(t.points.iter().any(|p| p.coherence >= 0.9));
                    break;
                }
                other => panic!("{other:?}"),
            }
        }
        assert!(Instant::now() < deadline, "no measurement");
        std::thread::sleep(Duration::from_millis(30));
    }
    assert!(h.query_by_label_contains("segments of").is_some());
}

#[test]
fn emg_mode_sets_the_muscle_chain_and_shows_the_contractions() {
    // The simulator as a muscle at 1 kHz: contractions at 2–4 s and 7–9 s.
    let mut settings = Settings::default();
    settings.setup.synth.fs_hz = 1000.0;
    settings.setup.synth.muscle = Some(leadline::sim::muscle::MuscleSettings::default());
    let app = app_with(settings);
    let mut h = harness(app);
    h.run_steps(3);
    let ecg_chain = h.state().state.settings.setup.chain;
    h.get_by_label("EMG").click();
    h.run_steps(2);
    let c = h.state().state.settings.setup.chain;
    assert!(h.state().state.settings.emg_mode);
    assert_eq!((c.highpass.corner_hz, c.lowpass.corner_hz), (20.0, 450.0));
    assert!(c.notch.enabled);
    // The DSP thread runs the EMG chain and finds the first contraction (2–4 s).
    run_until(&mut h, "EMG chain applied", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .is_some_and(|s| s.chain.highpass.corner_hz == 20.0)
    });
    run_until(&mut h, "a contraction in the EMG view", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .and_then(|s| s.emg.as_ref())
            .is_some_and(|v| v.bursts.iter().any(|b| b.off_s > b.on_s + 1.5))
    });
    let snap = h.state().state.view.snapshot.clone().unwrap();
    let b = snap.emg.as_ref().unwrap().bursts[0];
    assert!((b.on_s - 2.0).abs() < 0.1, "{b:?}");
    assert!(h.query_by_label_contains("µV RMS").is_some());
    // The newest contraction marked as the maximum: it reads 100 % MVC.
    h.get_by_label("Newest contraction = maximum").click();
    run_until(&mut h, "% MVC in the EMG view", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .and_then(|s| s.emg.as_ref())
            .and_then(|v| v.bursts.first().and_then(|b| b.pct_mvc))
            .is_some_and(|p| (p - 100.0).abs() < 1.0)
    });
    // Back to ECG: the chain from before returns.
    h.get_by_label("ECG").click();
    h.run_steps(2);
    assert_eq!(h.state().state.settings.setup.chain, ecg_chain);
    assert!(!h.state().state.settings.emg_mode);
}

#[test]
fn sound_without_a_sound_card_says_so_and_the_monitor_runs_on() {
    // Tall enough for the side panel's Sound section to be on screen.
    let mut h = harness_sized(app(), [1280.0, 2400.0]);
    h.run_steps(3);
    h.get_by_label("Sound").click();
    h.run_steps(2);
    h.get_by_label("Tone on each beat").click();
    h.run_steps(3);
    let frames = h
        .state()
        .state
        .view
        .snapshot
        .as_ref()
        .map_or(0, |s| s.stats.frames);
    // This machine may or may not have a card: either it plays, or it says there is none.
    let said = h.query_by_label_contains("no sound device").is_some()
        || h.query_by_label_contains("sound card at").is_some();
    assert!(said, "the Sound section must say where the sound goes");
    run_until(&mut h, "frames keep arriving", |a| {
        a.state
            .view
            .snapshot
            .as_ref()
            .is_some_and(|s| s.stats.frames > frames + 500)
    });
}

/// The numbers painted right of the side panel, grouped into columns by their right edge: a
/// value axis is a column of numbers at different heights.
fn value_axis_columns(h: &Harness<'static, LeadlineApp>, min_x: f32) -> Vec<Vec<String>> {
    use eframe::egui::epaint::Shape;
    fn walk(s: &Shape, out: &mut Vec<(f32, f32, String)>) {
        match s {
            Shape::Text(t) => {
                let text = t.galley.text().trim().to_string();
                if text.parse::<f64>().is_ok() {
                    let r = t.visual_bounding_rect();
                    out.push((r.max.x, r.center().y, text));
                }
            }
            Shape::Vec(v) => v.iter().for_each(|s| walk(s, out)),
            _ => {}
        }
    }
    let mut texts = Vec::new();
    for cs in &h.output().shapes {
        walk(&cs.shape, &mut texts);
    }
    let mut cols: std::collections::BTreeMap<i32, Vec<(f32, String)>> = Default::default();
    for (right, y, text) in texts {
        if right >= min_x {
            cols.entry((right / 3.0).round() as i32)
                .or_default()
                .push((y, text));
        }
    }
    // Down one axis the values fall; where they rise again the next plot's axis begins.
    let mut axes = Vec::new();
    for mut c in cols.into_values() {
        c.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut axis: Vec<String> = Vec::new();
        let mut last = f64::INFINITY;
        for (_, text) in c {
            let v: f64 = text.parse().unwrap();
            if v >= last && !axis.is_empty() {
                axes.push(std::mem::take(&mut axis));
            }
            last = v;
            axis.push(text);
        }
        axes.push(axis);
    }
    axes
}

/// Every trace's value axis shows at least three labelled values, on a 1 mV signal and on a
/// 50 µV one (a ±450 µV trace once showed "0" alone).
#[test]
fn the_trace_axes_have_three_labels_on_a_millivolt_and_a_fifty_microvolt_signal() {
    for (r_mv, noise) in [(1.0, 8.0), (0.05, 1.0)] {
        let mut settings = Settings::default();
        settings.setup.synth.r_mv = r_mv;
        settings.setup.synth.noise_uv = noise;
        settings.setup.synth.mains_uv = 0.2 * noise;
        settings.setup.view.lower = leadline::gui::state::LowerView::Hidden;
        let app = app_with(settings);
        let mut h = harness_sized(app, [1280.0, 800.0]);
        run_until_stream(&mut h, 4.0);
        h.run_steps(2);
        // The side panel is about 300 px wide; the traces' axes are right of it.
        let cols = value_axis_columns(&h, 320.0);
        let axes: Vec<&Vec<String>> = cols.iter().filter(|c| c.len() >= 3).collect();
        println!("R {r_mv} mV: columns of numbers {cols:?}");
        // Two traces (before and after the filters), each with at least three values.
        assert!(axes.len() >= 2, "R {r_mv} mV: {cols:?}");
    }
}

/// Frames without new data rebuild no plot data: the spectrum's curves change once per
/// estimate and the parts' realisation once per chain, whatever the frame rate.
#[test]
fn plots_are_not_rebuilt_on_frames_without_new_data() {
    let mut h = harness(app());
    let deadline = Instant::now() + Duration::from_secs(20);
    while rebuilds(h.state()).0 == 0 {
        assert!(Instant::now() < deadline, "no spectrum");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(50));
    }
    h.state_mut().apply(Action::Pause(true));
    h.run_steps(2);
    let before = rebuilds(h.state());
    for _ in 0..30 {
        h.run_steps(1);
    }
    assert_eq!(rebuilds(h.state()), before, "30 frames without new data");
    // The parts view: realised once for the chain, then never again while it stands.
    h.state_mut()
        .apply(Action::Lower(leadline::gui::state::LowerView::Parts));
    let deadline = Instant::now() + Duration::from_secs(20);
    while rebuilds(h.state()).1 == 0 {
        assert!(Instant::now() < deadline, "no parts");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(20));
    }
    let realised = rebuilds(h.state()).1;
    for _ in 0..30 {
        h.run_steps(1);
    }
    assert_eq!(rebuilds(h.state()).1, realised);
}

/// The parts view's schematic, netlist and parts list are written by the app's job runner:
/// the button starts the job and the view says what was written.
#[test]
fn the_parts_files_are_written_by_the_job_runner() {
    let base = tmp("parts-files");
    let mut h = harness_sized(app(), [1280.0, 1400.0]);
    h.state_mut()
        .apply(Action::Lower(leadline::gui::state::LowerView::Parts));
    let deadline = Instant::now() + Duration::from_secs(20);
    while rebuilds(h.state()).1 == 0 {
        assert!(Instant::now() < deadline, "no parts");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(20));
    }
    h.run_steps(2);
    h.state_mut().widgets.parts.save_base = base.display().to_string();
    h.get_by_label("Save schematic, netlist, BOM").click();
    h.run_steps(1);
    let deadline = Instant::now() + Duration::from_secs(10);
    while h.query_by_label_contains("wrote ").is_none() {
        assert!(Instant::now() < deadline, "the parts files did not report");
        h.run_steps(1);
        std::thread::sleep(Duration::from_millis(20));
    }
    for ext in [".svg", ".cir", "-bom.csv"] {
        let p = format!("{}{ext}", base.display());
        assert!(std::fs::metadata(&p).is_ok_and(|m| m.len() > 50), "{p}");
    }
}
