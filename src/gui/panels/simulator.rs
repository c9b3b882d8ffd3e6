//! Simulator controls: the signal at the electrodes and the bench conditions.

use crate::gui::action::Action;
use eframe::egui;

use crate::source::SynthSettings;

/// What the user changed.
#[derive(Debug, Default, Clone, Copy, PartialEq, Eq)]
pub struct Changed {
    /// Levels or switches: applied live.
    pub live: bool,
    /// Rate or channel count: the source must restart.
    pub restart: bool,
}

/// Draws the simulator controls.
pub fn show(ui: &mut egui::Ui, current: &SynthSettings) -> Option<Action> {
    let mut s = current.clone();
    let c = edit(ui, &mut s);
    (c.live || c.restart || s != *current).then_some(Action::Synth {
        settings: s,
        restart: c.restart,
    })
}

/// Wander, drift, noise and the electrodes' faults.
fn electrodes(ui: &mut egui::Ui, s: &mut SynthSettings) {
    ui.add(
        egui::Slider::new(&mut s.wander_uv, 0.0..=1000.0)
            .text("Breathing wander")
            .suffix(" µV rms")
            .max_decimals(0),
    )
    .on_hover_text("Respiration-like baseline wander (0.25 Hz).");
    ui.add(
        egui::Slider::new(&mut s.drift_uv, 0.0..=1000.0)
            .text("Electrode drift")
            .suffix(" µV rms")
            .max_decimals(0),
    )
    .on_hover_text("Slow random drift of the electrode half-cell potentials (below 0.05 Hz).");
    ui.add(
        egui::Slider::new(&mut s.noise_uv, 0.0..=200.0)
            .text("Muscle noise")
            .suffix(" µV rms")
            .max_decimals(0),
    )
    .on_hover_text("Broadband EMG-like noise above 20 Hz.");
    ui.add(
        egui::Slider::new(&mut s.offset_mv, -400.0..=400.0)
            .text("Electrode offset")
            .suffix(" mV")
            .max_decimals(0),
    )
    .on_hover_text(
        "DC difference between the electrodes. The in-amp (×10, ±1.4 V) saturates beyond ±140 mV.",
    );
    ui.checkbox(&mut s.inverted, "Electrodes swapped")
        .on_hover_text("Left and right electrodes exchanged: the ECG comes out upside down.");
    ui.checkbox(&mut s.lead_off, "Electrode off")
        .on_hover_text("One electrode has come off: the input floats, picks up mains and drives the amplifier to its rails.");
}

/// Muscle under the electrodes: force and fatigue.
fn muscle(ui: &mut egui::Ui, s: &mut SynthSettings) {
    let mut muscle = s.muscle.is_some();
    ui.checkbox(&mut muscle, "Muscle under the electrodes (EMG)")
        .on_hover_text("Surface-EMG-like contractions (2 s on, 3 s off) with a little of the heart's signal: switch the monitor to EMG to analyse them. Use 1 kHz or more.");
    if muscle != s.muscle.is_some() {
        s.muscle = muscle.then(crate::sim::muscle::MuscleSettings::default);
    }
    if let Some(m) = s.muscle.as_mut() {
        ui.add(
            egui::Slider::new(&mut m.force_pct, 0.0..=100.0)
                .text("Force")
                .suffix(" % of max")
                .max_decimals(0),
        )
        .on_hover_text("Contraction force: the contraction's RMS is this share of 600 µV.");
        ui.add(
            egui::Slider::new(&mut m.fatigue_pct, 0.0..=10.0)
                .text("Fatigue")
                .suffix(" % per contraction")
                .max_decimals(1),
        )
        .on_hover_text(
            "Each contraction's spectrum lower than the last: the median frequency falls.",
        );
    }
}

/// The controls; what changed.
fn edit(ui: &mut egui::Ui, s: &mut SynthSettings) -> Changed {
    let before = s.clone();
    ui.add(
        egui::Slider::new(&mut s.hr_bpm, 30.0..=220.0)
            .text("Heart rate")
            .suffix(" bpm")
            .max_decimals(0),
    )
    .on_hover_text("Mean heart rate of the simulated person.");
    ui.add(
        egui::Slider::new(&mut s.r_mv, 0.1..=4.0)
            .text("R amplitude")
            .suffix(" mV")
            .max_decimals(2),
    )
    .on_hover_text("Height of the R wave on channel 1, at the electrodes.");
    ui.separator();
    ui.horizontal(|ui| {
        ui.label("Mains");
        ui.selectable_value(&mut s.mains_hz, 50.0, "50 Hz");
        ui.selectable_value(&mut s.mains_hz, 60.0, "60 Hz");
    });
    ui.add(
        egui::Slider::new(&mut s.mains_uv, 0.0..=1000.0)
            .logarithmic(true)
            .text("Mains pickup")
            .suffix(" µV rms")
            .max_decimals(0),
    )
    .on_hover_text("RMS of the mains fundamental coupled into the leads (harmonics follow).");
    ui.checkbox(&mut s.charger, "Laptop on its charger")
        .on_hover_text("The reading laptop's switch-mode charger floats its ground: mains coupling rises about eightfold with stronger odd harmonics.");
    ui.separator();
    electrodes(ui, s);
    egui::ComboBox::from_label("Rhythm")
        .selected_text(s.rhythm.name())
        .show_ui(ui, |ui| {
            for r in crate::sim::rhythm::Rhythm::ALL {
                let label = match r.expected_bpm() {
                    Some(b) => format!("{} (reads {b:.0} bpm)", r.name()),
                    None => format!("{} (the set rate)", r.name()),
                };
                ui.selectable_value(&mut s.rhythm, r, label);
            }
        })
        .response
        .on_hover_text("The monitor standards' irregular-rhythm cases, made by the simulator: the readout should show the rate in brackets (±10 % or ±5 bpm).");
    ui.separator();
    muscle(ui, s);
    ui.separator();
    let mut restart = false;
    egui::ComboBox::from_label("Sample rate")
        .selected_text(format!("{} Hz", s.fs_hz))
        .show_ui(ui, |ui| {
            for fs in [250.0, 500.0, 1000.0, 2000.0] {
                restart |= ui
                    .selectable_value(&mut s.fs_hz, fs, format!("{fs} Hz"))
                    .changed();
            }
        });
    restart |= ui
        .add(egui::Slider::new(&mut s.channels, 1..=8).text("Channels"))
        .on_hover_text("Number of simulated leads (restarts the stream).")
        .changed();
    Changed {
        live: *s != before && !restart,
        restart,
    }
}
