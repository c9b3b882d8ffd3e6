//! Files: setups (open/save), the chain as a C header for firmware, PNGs of the trace and
//! spectrum. Each writes where the user typed; the app carries the action out.

use eframe::egui;

pub use crate::gui::action::FilesAction;

use crate::export::c_header::CFormat;

/// What the user has typed.
#[derive(Debug, Clone, PartialEq)]
pub struct FilesPanel {
    pub setup_path: String,
    pub header_path: String,
    pub format: CFormat,
    pub prefix: String,
    pub trace_png: String,
    pub spectrum_png: String,
    pub twelve_png: String,
}

impl Default for FilesPanel {
    fn default() -> Self {
        Self {
            setup_path: "bench-setup.toml".into(),
            header_path: "filters.h".into(),
            format: CFormat::F32,
            prefix: "leadline".into(),
            trace_png: "trace.png".into(),
            spectrum_png: "spectrum.png".into(),
            twelve_png: "twelve-leads.png".into(),
        }
    }
}

fn path_row(ui: &mut egui::Ui, name: &str, text: &mut String, tip: &str) {
    super::named_field(ui, name, text, |t| t.desired_width(170.0)).on_hover_text(tip);
}

/// Draws the panel with the outcome of the last file work; returns the action asked for.
pub fn show(
    ui: &mut egui::Ui,
    p: &mut FilesPanel,
    report: &crate::gui::model::FileReport,
) -> Option<crate::gui::action::Action> {
    let action = files(ui, p).map(crate::gui::action::Action::Files);
    if !report.message.is_empty() {
        let c = if report.failed {
            ui.visuals().error_fg_color
        } else {
            ui.visuals().weak_text_color()
        };
        ui.colored_label(c, &report.message);
    }
    action
}

fn files(ui: &mut egui::Ui, p: &mut FilesPanel) -> Option<FilesAction> {
    let mut action = None;
    ui.label(egui::RichText::new("Setup").strong());
    ui.horizontal(|ui| {
        path_row(
            ui,
            "setup file",
            &mut p.setup_path,
            "A TOML file with the whole configuration: source, scaling, chain, simulator, views.",
        );
        if ui
            .button("Open")
            .on_hover_text("Load this setup: the source restarts with it.")
            .clicked()
        {
            action = Some(FilesAction::OpenSetup(p.setup_path.trim().into()));
        }
        if ui
            .button("Save")
            .on_hover_text("Write the configuration as it is now to this file.")
            .clicked()
        {
            action = Some(FilesAction::SaveSetup(p.setup_path.trim().into()));
        }
    });
    ui.add_space(4.0);
    ui.label(egui::RichText::new("Firmware filter (C header)").strong());
    ui.horizontal(|ui| {
        path_row(
            ui,
            "C header file",
            &mut p.header_path,
            "A self-contained C99 header with the chain as set now, at the stream's sample rate.",
        );
        egui::ComboBox::from_id_salt("c-format")
            .selected_text(p.format.name())
            .width(52.0)
            .show_ui(ui, |ui| {
                ui.selectable_value(&mut p.format, CFormat::F32, "f32")
                    .on_hover_text(
                        "float samples; state-variable sections, accurate at low corners.",
                    );
                ui.selectable_value(&mut p.format, CFormat::Q15, "q15")
                    .on_hover_text(
                        "int16_t samples; 32-bit coefficients and history, 64-bit accumulator.",
                    );
                ui.selectable_value(&mut p.format, CFormat::Q31, "q31")
                    .on_hover_text(
                        "int32_t samples; 32-bit coefficients and history, 64-bit accumulator.",
                    );
            })
            .response
            .on_hover_text("Sample format of the firmware filter.");
    });
    ui.horizontal(|ui| {
        ui.label("prefix");
        ui.add(egui::TextEdit::singleline(&mut p.prefix).desired_width(90.0))
            .on_hover_text("Prefix of the C names: PREFIX_state, PREFIX_init, PREFIX_process.");
        if ui
            .button("Write header")
            .on_hover_text("Write the header for the chain as set now.")
            .clicked()
        {
            action = Some(FilesAction::ExportC {
                path: p.header_path.trim().into(),
                format: p.format,
                prefix: p.prefix.trim().to_string(),
            });
        }
    });
    action.or(pictures(ui, p))
}

/// The PNGs: traces, spectrum, twelve leads.
fn pictures(ui: &mut egui::Ui, p: &mut FilesPanel) -> Option<FilesAction> {
    let mut action = None;
    ui.add_space(4.0);
    ui.label(egui::RichText::new("Pictures").strong());
    ui.horizontal(|ui| {
        path_row(
            ui,
            "trace PNG file",
            &mut p.trace_png,
            "PNG of the traces in the window now, before and after the chain, with markers.",
        );
        if ui.button("Save trace").clicked() {
            action = Some(FilesAction::TracePng(p.trace_png.trim().into()));
        }
    });
    ui.horizontal(|ui| {
        path_row(
            ui,
            "spectrum PNG file",
            &mut p.spectrum_png,
            "PNG of the latest spectrum after the chain, with the mains lines measured.",
        );
        if ui.button("Save spectrum").clicked() {
            action = Some(FilesAction::SpectrumPng(p.spectrum_png.trim().into()));
        }
    });
    ui.horizontal(|ui| {
        path_row(
            ui,
            "12-lead PNG file",
            &mut p.twelve_png,
            "PNG of the twelve leads as the 12 leads view shows them (25 mm/s, 10 mm/mV).",
        );
        if ui.button("Save 12 leads").clicked() {
            action = Some(FilesAction::TwelvePng(p.twelve_png.trim().into()));
        }
    });
    action
}
