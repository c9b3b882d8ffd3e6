//! Filter controls: one group per stage, corners on logarithmic sliders.

use eframe::egui;

use crate::dsp::canceller::CancelState;
use crate::dsp::chain::ChainSettings;
use crate::gui::action::Action;

/// Draws the chain controls for `chain`, with what the mains canceller has found (`cancel`);
/// the edited chain when anything changed.
pub fn show(
    ui: &mut egui::Ui,
    chain: &ChainSettings,
    fs_hz: f64,
    cancel: Option<&CancelState>,
) -> Option<Action> {
    let mut c = *chain;
    (edit(ui, &mut c, fs_hz, cancel) || c != *chain).then_some(Action::Chain(c))
}

/// The mains canceller: on or off, its harmonics, and what it tracks and removes.
fn canceller(ui: &mut egui::Ui, chain: &mut ChainSettings, cancel: Option<&CancelState>) {
    ui.checkbox(&mut chain.cancel.enabled, "Adaptive mains canceller")
        .on_hover_text("Estimates the mains waveform and subtracts it (Widrow's adaptive noise canceller with an internal sinusoidal reference), following the frequency within ±1 Hz: deep at every harmonic without a notch's ringing. Alone or with the notch; fades in and out.");
    if !chain.cancel.enabled {
        return;
    }
    ui.add(egui::Slider::new(&mut chain.cancel.harmonics, 1..=5).text("Canceller harmonics"))
        .on_hover_text("The fundamental and its harmonics up to this order (those below 0.45·fs).");
    if let Some(c) = cancel {
        let amps: Vec<String> = c.rms_uv.iter().map(|a| format!("{a:.1}")).collect();
        ui.label(
            egui::RichText::new(format!(
                "tracking {:.2} Hz · removing {} µV RMS",
                c.hz,
                amps.join(" / ")
            ))
            .small(),
        )
        .on_hover_text("The tracked mains frequency, and the amplitude taken out at the fundamental and each harmonic on the followed channel.");
    }
}

/// The mains notch: on or off, 50/60 Hz or following the measured mains, Q and harmonics.
fn notch(ui: &mut egui::Ui, chain: &mut ChainSettings) {
    ui.checkbox(&mut chain.notch.enabled, "Mains notch")
        .on_hover_text("Second-order notch at the mains frequency (−3 dB bandwidth = f0/Q).");
    ui.add_enabled_ui(chain.notch.enabled, |ui| {
        ui.horizontal(|ui| {
            ui.add_enabled_ui(!chain.notch.auto, |ui| {
                ui.selectable_value(&mut chain.notch.mains_hz, 50.0, "50 Hz");
                ui.selectable_value(&mut chain.notch.mains_hz, 60.0, "60 Hz");
            });
            ui.checkbox(&mut chain.notch.auto, "auto")
                .on_hover_text("Follow the measured mains: its region (50/60 Hz), its exact frequency within ±1 Hz, and the harmonics that stand out. Retuned about once a second from the spectrum.");
        });
        if chain.notch.auto {
            ui.label(
                egui::RichText::new(format!(
                    "following the mains: {:.2} Hz{}",
                    chain.notch.mains_hz,
                    if chain.notch.harmonics > 0 {
                        format!(" + {} harmonic(s)", chain.notch.harmonics)
                    } else {
                        String::new()
                    }
                ))
                .small(),
            );
        }
        ui.add(
            egui::Slider::new(&mut chain.notch.q, 1.0..=100.0)
                .logarithmic(true)
                .text("Notch Q")
                .max_decimals(1),
        )
        .on_hover_text("Higher Q: narrower notch, less damage to the QRS, longer ringing, less tolerance of mains drift.");
        ui.label(format!("bandwidth {:.2} Hz", chain.notch.mains_hz / chain.notch.q));
        ui.add(egui::Slider::new(&mut chain.notch.harmonics, 0..=4).text("Harmonic notches"))
            .on_hover_text("Also notch harmonics 2… of the mains (those below Nyquist).");
    });
}

/// The controls; true when anything changed.
fn edit(
    ui: &mut egui::Ui,
    chain: &mut ChainSettings,
    fs_hz: f64,
    cancel: Option<&CancelState>,
) -> bool {
    let before = *chain;
    let nyq = fs_hz / 2.0;
    ui.horizontal(|ui| {
        if ui
            .button("Monitoring 0.67–40 Hz")
            .on_hover_text("Typical bedside-monitor band (common practice). A causal high-pass this high distorts the ST segment.")
            .clicked()
        {
            chain.highpass.corner_hz = 0.67;
            chain.lowpass.corner_hz = 40.0_f64.min(crate::dsp::highest_corner_hz(fs_hz));
        }
        if ui
            .button("Diagnostic 0.05–150 Hz")
            .on_hover_text("Diagnostic ECG band (Kligfield et al. 2007, AHA/ACCF/HRS).")
            .clicked()
        {
            chain.highpass.corner_hz = 0.05;
            chain.lowpass.corner_hz = 150.0_f64.min(crate::dsp::highest_corner_hz(fs_hz));
        }
    });
    ui.separator();

    ui.checkbox(&mut chain.highpass.enabled, "High-pass")
        .on_hover_text("Removes baseline wander and electrode drift below the corner.");
    ui.add_enabled_ui(chain.highpass.enabled, |ui| {
        ui.add(
            egui::Slider::new(&mut chain.highpass.corner_hz, 0.05..=50.0)
                .logarithmic(true)
                .text("High-pass corner")
                .suffix(" Hz")
                .max_decimals(2),
        )
        .on_hover_text("−3 dB frequency of the Butterworth high-pass.");
        ui.add(egui::Slider::new(&mut chain.highpass.order, 1..=8).text("High-pass order"))
            .on_hover_text(
                "Butterworth order: each step adds 6 dB/octave of roll-off and more phase shift.",
            );
    });
    ui.separator();

    notch(ui, chain);
    if !chain.notch.enabled {
        // The canceller's mains frequency, when the notch (which holds it) is off.
        ui.horizontal(|ui| {
            ui.label("Mains");
            ui.selectable_value(&mut chain.notch.mains_hz, 50.0, "50 Hz");
            ui.selectable_value(&mut chain.notch.mains_hz, 60.0, "60 Hz");
        });
    }
    canceller(ui, chain, cancel);
    ui.separator();

    ui.checkbox(&mut chain.lowpass.enabled, "Low-pass")
        .on_hover_text("Removes muscle noise and high-frequency hiss above the corner.");
    ui.add_enabled_ui(chain.lowpass.enabled, |ui| {
        ui.add(
            egui::Slider::new(
                &mut chain.lowpass.corner_hz,
                5.0..=(crate::dsp::highest_corner_hz(fs_hz)).max(6.0),
            )
            .logarithmic(true)
            .text("Low-pass corner")
            .suffix(" Hz")
            .max_decimals(1),
        )
        .on_hover_text(format!(
            "−3 dB frequency of the Butterworth low-pass (below Nyquist, {nyq} Hz)."
        ));
        ui.add(egui::Slider::new(&mut chain.lowpass.order, 1..=8).text("Low-pass order"))
            .on_hover_text("Butterworth order of the low-pass.");
    });
    *chain != before
}
