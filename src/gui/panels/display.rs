//! Display settings: refresh rate, vertical scale, sweep or scroll, line smoothing.

use eframe::egui;

use crate::setup::ViewSetup;

/// Draws the settings; returns the view section as edited when anything changed.
pub fn show(ui: &mut egui::Ui, current: &ViewSetup) -> Option<crate::gui::action::Action> {
    let mut s = current.clone();
    controls(ui, &mut s);
    (s != *current).then_some(crate::gui::action::Action::View(s))
}

fn controls(ui: &mut egui::Ui, s: &mut ViewSetup) {
    ui
        .add(
            egui::Slider::new(&mut s.display_hz, 5.0..=60.0)
                .text("Display rate")
                .suffix(" /s")
                .max_decimals(0),
        )
        .on_hover_text("Screen updates per second. Drawing happens only when new data arrive; fewer updates cost less CPU.");
    ui.horizontal(|ui| {
        let mut fixed = s.fixed_range_uv > 0.0;
        if ui
            .radio_value(&mut fixed, false, "Auto scale")
            .on_hover_text("The vertical axis follows the signal in the window.")
            .changed()
            || ui
                .radio_value(&mut fixed, true, "Fixed")
                .on_hover_text("A fixed vertical span, like a scope's volts/division: amplitudes compare at a glance.")
                .changed()
        {
            s.fixed_range_uv = if fixed { 2000.0 } else { 0.0 };
        }
    });
    if s.fixed_range_uv > 0.0 {
        ui.add(
            egui::Slider::new(&mut s.fixed_range_uv, 50.0..=20_000.0)
                .logarithmic(true)
                .text("± span")
                .suffix(" µV")
                .max_decimals(0),
        )
        .on_hover_text("Half the vertical span, µV at the electrodes (the filtered trace is centred on 0, the raw one on its mid-level).");
    }
    ui.checkbox(&mut s.sweep, "Sweep display").on_hover_text(
        "Write over the window from left to right like a bedside monitor, instead of scrolling.",
    );
    ui.checkbox(&mut s.smooth_lines, "Smooth lines")
        .on_hover_text("Anti-aliased lines. Costs about a quarter of a CPU core more without a graphics card (software OpenGL).");
}
