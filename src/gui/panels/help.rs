//! The help panel: keyboard shortcuts and how to measure.

use eframe::egui;

/// The shortcuts, as listed in the help panel and the README.
pub const SHORTCUTS: &[(&str, &str)] = &[
    (
        "Space",
        "freeze / resume the traces (resume also follows live data again)",
    ),
    ("R", "start / stop recording to the file under Recording"),
    (
        "M",
        "drop an event marker (its text: Marker text, under Recording)",
    ),
    ("H", "hold the spectrum now as 'before' to compare with"),
    ("C", "clear the measurement cursors"),
    (
        "1 … 5",
        "lower strip: beats, spectrum, chain response, parts, traces only",
    ),
    ("F1 or ?", "this help"),
];

/// Draws the help window while `open`; the action that closes it when its close button is
/// pressed.
pub fn show(ctx: &egui::Context, open: bool) -> Option<crate::gui::action::Action> {
    if !open {
        return None;
    }
    let mut still_open = true;
    egui::Window::new("Help")
        .open(&mut still_open)
        .collapsible(false)
        .resizable(false)
        .default_width(440.0)
        .show(ctx, |ui| {
            ui.label(egui::RichText::new("Keys").strong());
            egui::Grid::new("help-keys").striped(true).show(ui, |ui| {
                for (k, what) in SHORTCUTS {
                    ui.label(egui::RichText::new(*k).monospace());
                    ui.label(*what);
                    ui.end_row();
                }
            });
            ui.add_space(6.0);
            ui.label(egui::RichText::new("Measuring on the trace").strong());
            ui.label("Click a trace to place cursor 1, click again for cursor 2: the line above the traces gives Δt, ΔV and 1/Δt per minute (two R peaks: the heart rate of that interval). Drag to pan and scroll to zoom: the display freezes; Follow live (or Space) goes back.");
            ui.add_space(6.0);
            ui.label(egui::RichText::new("Mains coupling").strong());
            ui.label("Open Spectrum, press H (Hold as before), change the bench (charger, grounding), and read the change of each mains line in dB.");
        });
    (!still_open).then_some(crate::gui::action::Action::Help(false))
}
