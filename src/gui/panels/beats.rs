//! The beats view: the averaged beat before and after the chain with what the chain does to it,
//! heart-rate variability, and the RR tachogram.

use eframe::egui;

use egui_plot::{Legend, Line, Plot, PlotPoints};

use crate::gui::plot::{FILTERED_COLOUR, RATE_COLOUR, RAW_COLOUR};
use crate::msg::BeatView;

/// The heart-rate readout: large, with its state in words.
pub fn rate_readout(ui: &mut egui::Ui, view: Option<&BeatView>) {
    let (text, colour, detail) = match view {
        None => (
            "—".to_string(),
            ui.visuals().weak_text_color(),
            "no beat detection at this rate".to_string(),
        ),
        Some(b) => {
            let q = b.quality;
            let rhythm = match b.regularity {
                Some(r) if r >= 0.75 => " · rhythm regular".to_string(),
                Some(r) => format!(
                    " · rhythm irregular ({:.0} % of intervals alike)",
                    100.0 * r
                ),
                None => String::new(),
            };
            let detail = match q.problem {
                Some(p) => p.text().to_string(),
                None => format!("signal quality {:.0} %{rhythm}", 100.0 * q.index),
            };
            match b.rate {
                crate::analysis::rate::RateState::Rate(_) => (b.rate.text(), RATE_COLOUR, detail),
                _ => (b.rate.text(), egui::Color32::from_rgb(230, 170, 70), detail),
            }
        }
    };
    ui.vertical(|ui| {
        ui.label(egui::RichText::new(text).size(30.0).strong().color(colour))
            .on_hover_text("Heart rate: 60 / mean of the last 8 accepted RR intervals (see README, \"Heart rate\").");
        ui.label(egui::RichText::new(detail).small());
    });
}

/// Draws the beats view.
pub fn show(
    ui: &mut egui::Ui,
    view: Option<&BeatView>,
    axis: Option<&crate::leads::FrontalAxis>,
    fs: f64,
) {
    if let Some(a) = axis {
        ui.label(format!(
            "frontal QRS axis {:+.0}° ({}), {} beats",
            a.degrees, a.words, a.beats
        ))
        .on_hover_text(a.method);
    }
    let Some(b) = view else {
        ui.label("Beat detection runs at 125–2000 Hz.");
        return;
    };
    let Some(t) = &b.template else {
        ui.label("Collecting beats for the template (3 beats needed)…");
        return;
    };
    let m = (&t.raw_measures, &t.filtered_measures);
    ui.label(format!(
        "what the chain does to the beat ({} beats): R {:+.1} % ({:.0} to {:.0} µV) · QRS {:+.0} ms ({:.0} to {:.0} ms) · ST shift {:+.0} µV",
        t.beats, t.r_change_pct, m.0.r_uv, m.1.r_uv, t.qrs_change_ms, m.0.qrs_ms, m.1.qrs_ms, t.st_shift_uv
    ))
    .on_hover_text("R: amplitude above the PR segment; QRS: width by slope; ST: level 60 ms after the QRS, relative to the PR segment.");
    if let Some(h) = &b.hrv {
        ui.label(format!(
            "HRV over {} intervals: mean RR {:.0} ms · SDNN {:.1} ms · RMSSD {:.1} ms · pNN50 {:.1} %",
            h.count, h.mean_rr_ms, h.sdnn_ms, h.rmssd_ms, h.pnn50
        ));
    }
    let width = ((ui.available_width() - 8.0) / 2.0).max(150.0);
    let height = (ui.available_height() - 4.0).max(100.0);
    ui.horizontal(|ui| {
        let to_ms = |i: usize| (i as f64 - t.pre as f64) / t.fs_hz * 1e3;
        let raw: Vec<[f64; 2]> = t
            .raw
            .iter()
            .enumerate()
            .map(|(i, &v)| [to_ms(i), v - t.raw_measures.iso_uv])
            .collect();
        let filt: Vec<[f64; 2]> = t
            .filtered
            .iter()
            .enumerate()
            .map(|(i, &v)| [to_ms(i), v - t.filtered_measures.iso_uv])
            .collect();
        Plot::new("beat-template")
            .show_background(false)
            .grid_spacing(crate::gui::plot::GRID_SPACING)
            .width(width)
            .height(height)
            .legend(Legend::default())
            .x_axis_label("time from R (ms)")
            .x_grid_spacer(egui_plot::uniform_grid_spacer(|_| [500.0, 100.0, 50.0]))
            .y_axis_label("µV from the PR level")
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .show(ui, |pu| {
                pu.line(Line::new("before the filters", PlotPoints::new(raw)).color(RAW_COLOUR));
                pu.line(
                    Line::new("after the filters", PlotPoints::new(filt))
                        .color(FILTERED_COLOUR)
                        .width(1.5),
                );
            });
        let rr: Vec<[f64; 2]> = b
            .beats
            .windows(2)
            .map(|w| [w[1] as f64 / fs, (w[1] - w[0]) as f64 / fs * 1e3])
            .collect();
        Plot::new("tachogram")
            .show_background(false)
            .grid_spacing(crate::gui::plot::GRID_SPACING)
            .width(width)
            .height(height)
            .x_axis_label("time (s)")
            .y_axis_label("RR interval (ms)")
            .include_y(0.0)
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .show(ui, |pu| {
                pu.line(Line::new("RR", PlotPoints::new(rr)).color(FILTERED_COLOUR));
            });
    });
}
