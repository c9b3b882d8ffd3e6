//! The monitor's widgets, driven headless with egui_kittest: a moved slider reaches the DSP thread.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use eframe::egui::Role;
use egui_kittest::Harness;
use egui_kittest::kittest::Queryable;
use leadline::gui::state::Settings;
use leadline::gui::{AppOptions, LeadlineApp};

fn app() -> LeadlineApp {
    LeadlineApp::new(
        Settings::default(),
        Arc::new(|| {}),
        AppOptions::default(),
        Arc::new(Mutex::new(Ok(()))),
    )
    .unwrap()
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
    assert_eq!(h.state().settings().chain.highpass.corner_hz, 1.5);
    let deadline = Instant::now() + Duration::from_secs(10);
    loop {
        h.run_steps(1);
        let applied = h
            .state()
            .view()
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
    assert!(!h.state().paused());
    h.key_press(eframe::egui::Key::Space);
    h.run_steps(2);
    assert!(h.state().paused(), "Space freezes the traces");
    h.get_by_role_and_label(Role::Button, "Resume").click();
    h.run_steps(2);
    assert!(!h.state().paused(), "the button resumes");
}

fn tmp(name: &str) -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!("leadline-gui-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d.join(name)
}

fn run_until(h: &mut Harness<'static, LeadlineApp>, what: &str, f: impl Fn(&LeadlineApp) -> bool) {
    let deadline = Instant::now() + Duration::from_secs(10);
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
    let mut a = app();
    a.record_panel_mut().path = path.display().to_string();
    a.record_panel_mut().marker_text = "charger plugged in".into();
    let mut h = harness(a);
    run_until(&mut h, "the first snapshot", |a| {
        a.view().snapshot.is_some()
    });
    h.get_by_role_and_label(Role::Button, "Record").click();
    run_until(&mut h, "the recording to start", |a| {
        a.recorder_status()
            .is_some_and(|s| s.active.is_some() && s.frames > 0)
    });
    h.key_press(eframe::egui::Key::M);
    h.run_steps(2);
    assert_eq!(
        h.state().markers().len(),
        1,
        "the marker is drawn on the trace"
    );
    assert_eq!(h.state().markers()[0].1, "charger plugged in");
    run_until(&mut h, "1.2 s of data", |a| {
        a.recorder_status().is_some_and(|s| s.elapsed_s >= 1.2)
    });
    // The readout shows the elapsed time while recording.
    assert!(h.query_by_label_contains("REC 00:00:01").is_some());
    h.get_by_role_and_label(Role::Button, "Stop recording")
        .click();
    run_until(&mut h, "the file to close", |a| {
        a.recorder_status().is_some_and(|s| s.active.is_none())
    });
    let status = h.state().recorder_status().unwrap();
    assert!(!status.failed, "{}", status.message);
    let rec = leadline::store::read(&path, &leadline::store::ReadOptions::default()).unwrap();
    assert_eq!(rec.len() as u64, status.frames);
    assert_eq!(rec.events.len(), 1);
    assert_eq!(rec.events[0].text, "charger plugged in");
}

#[test]
fn setup_save_and_open_restore_the_chain_and_view() {
    let path = tmp("gui-setup.toml");
    let mut a = app();
    a.files_panel_mut().setup_path = path.display().to_string();
    a.settings_mut().chain.lowpass.corner_hz = 35.0;
    a.settings_mut().theme = leadline::setup::Theme::Light;
    // Tall enough that the side panel's Files section is on screen without scrolling.
    let mut h = harness_sized(a, [1280.0, 1600.0]);
    h.run_steps(2);
    // The Files section starts folded.
    h.get_by_label("Files").click();
    h.run_steps(2);
    h.get_by_role_and_label(Role::Button, "Save").click();
    h.run_steps(2);
    assert!(path.exists());
    let saved = h.state().settings().clone();
    h.state_mut().settings_mut().chain.lowpass.corner_hz = 100.0;
    h.state_mut().settings_mut().theme = leadline::setup::Theme::Dark;
    h.run_steps(1);
    h.get_by_role_and_label(Role::Button, "Open").click();
    h.run_steps(2);
    assert_eq!(h.state().settings().chain.lowpass.corner_hz, 35.0);
    assert_eq!(h.state().settings().theme, leadline::setup::Theme::Light);
    assert_eq!(h.state().settings().to_setup(), saved.to_setup());
}
