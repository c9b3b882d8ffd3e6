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
    Harness::builder()
        .with_size([1280.0, 800.0])
        .build_ui_state(
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
