//! The status line: source, rate, counters.

use eframe::egui;

use crate::gui::state::View;

/// Draws the status line.
pub fn show(ui: &mut egui::Ui, view: &View, source: &str, paused: bool) {
    ui.horizontal_wrapped(|ui| {
        ui.label(format!("source: {source}"));
        match &view.snapshot {
            Some(s) => {
                ui.separator();
                ui.label(format!("{} Hz", s.fs_hz));
                ui.separator();
                ui.label(format!("frames {}", s.stats.frames));
                ui.separator();
                let lost = s.stats.frames_lost;
                ui.label(format!("lost {lost}")).on_hover_text("Frames missing from the stream.");
                ui.separator();
                ui.label(format!("display drops {}", s.stats.snapshots_dropped))
                    .on_hover_text("Screen updates skipped because drawing was slower than the data; no samples are lost.");
                ui.separator();
                let clip = ui.label(format!("at rails {}", s.stats.clipped));
                clip.on_hover_text("Samples at an ADC rail: the true signal may have been larger.");
                if let Some(sc) = s.scale {
                    ui.separator();
                    ui.label(format!("{:.3} µV/LSB", sc.uv_per_count()))
                        .on_hover_text("Input-referred resolution: ADC step divided by the front-end gain.");
                }
                if s.source_done {
                    ui.separator();
                    ui.label("source ended");
                }
            }
            None => {
                ui.separator();
                ui.label("waiting for data…");
            }
        }
        if paused {
            ui.separator();
            ui.label(egui::RichText::new("PAUSED").strong());
        }
    });
}
