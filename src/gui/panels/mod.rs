//! One file per panel. Each reads settings/view and reports what the user changed.

pub mod beats;
pub mod caution;
pub mod chain;
pub mod display;
pub mod files;
pub mod front_end;
pub mod help;
pub mod measure;
pub mod muscle;
pub mod network;
pub mod parts;
pub mod record;
pub mod replay;
pub mod response;
pub mod simulator;
pub mod sound;
pub mod source;
pub mod spectrum;
pub mod status;
pub mod trace;
pub mod twelve;

use eframe::egui;

/// The sample-rate choice a stream panel offers: the stream's own, else estimated; or set.
pub(crate) fn rate_choice(
    ui: &mut egui::Ui,
    id: &str,
    rate_set: &mut bool,
    fs_hz: &mut f64,
    hover: &str,
) {
    const FROM_STREAM: &str = "from the stream, else estimated";
    egui::ComboBox::from_id_salt(id)
        .selected_text(if *rate_set { "set to" } else { FROM_STREAM })
        .show_ui(ui, |ui| {
            ui.selectable_value(rate_set, false, FROM_STREAM);
            ui.selectable_value(rate_set, true, "set to");
        })
        .response
        .on_hover_text(hover);
    if *rate_set {
        ui.add(
            egui::DragValue::new(fs_hz)
                .range(1.0..=100_000.0)
                .speed(1.0)
                .suffix(" Hz"),
        );
    }
}

/// A one-line text field with an accessible name (screen readers, and the tests that fill it).
pub(crate) fn named_field(
    ui: &mut egui::Ui,
    name: &str,
    text: &mut String,
    edit: impl FnOnce(egui::TextEdit<'_>) -> egui::TextEdit<'_>,
) -> egui::Response {
    let r = ui.add(edit(egui::TextEdit::singleline(text)));
    let value = text.clone();
    r.widget_info(|| {
        let mut i = egui::WidgetInfo::text_edit(true, &value, &value, "");
        i.label = Some(name.to_string());
        i
    });
    r
}
