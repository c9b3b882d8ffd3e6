//! The safety caution: a window on first start, and a line that is always visible.

use eframe::egui;

/// Shows the first-start caution while `open`; the action when the user confirmed it.
pub fn first_start(ctx: &egui::Context, open: bool) -> Option<crate::gui::action::Action> {
    if !open {
        return None;
    }
    let mut confirmed = false;
    egui::Window::new("Before you connect electrodes")
        .collapsible(false)
        .resizable(false)
        .anchor(egui::Align2::CENTER_CENTER, [0.0, 0.0])
        .default_width(460.0)
        .show(ctx, |ui| {
            ui.label(egui::RichText::new("Safety").strong().size(16.0));
            ui.label("• leadline is not a medical device. Do not use it for diagnosis or to monitor a patient.");
            ui.label("• With electrodes on a person, the whole set-up must be battery-powered or properly isolated: unplug the laptop's charger or use an isolated USB link.");
            ui.label("• Follow IEC 60601-1, your local regulations and licensed practice.");
            ui.add_space(8.0);
            if ui.button("I understand").clicked() {
                confirmed = true;
            }
        });
    confirmed.then_some(crate::gui::action::Action::CautionConfirmed)
}

/// The one-line reminder in the status bar.
pub fn reminder(ui: &mut egui::Ui) {
    ui.label(
        egui::RichText::new("Not a medical device · not for diagnosis · electrodes on a person: battery or isolated equipment only")
            .small()
            .weak(),
    )
    .on_hover_text(crate::CAUTION);
}
