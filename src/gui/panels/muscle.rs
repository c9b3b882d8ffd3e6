//! The EMG view: the followed channel's linear envelope and moving RMS with the contractions
//! found, the median frequency from contraction to contraction (fatigue), and a table of the
//! newest contractions.

use eframe::egui;
use egui_plot::{HLine, Legend, Line, Plot, PlotPoints, Points, Polygon};

use super::trace::{FILTERED_COLOUR, RAW_COLOUR};
use crate::analysis::emg::EmgView;

/// Contraction shading: a translucent violet of the project's palette.
const BURST_FILL: egui::Color32 = egui::Color32::from_rgba_premultiplied(70, 40, 90, 60);
/// The median-frequency points.
const TREND_COLOUR: egui::Color32 = egui::Color32::from_rgb(200, 120, 220);

/// The top-bar readout in EMG mode: the moving RMS now and whether a contraction is on.
pub fn readout(ui: &mut egui::Ui, view: Option<&EmgView>) {
    let now = view.and_then(|v| v.rms.last().map(|r| (v, f64::from(*r))));
    let (text, detail) = match now {
        Some((v, rms)) => {
            let end = v.t0_s + v.rms.len() as f64 * v.dt_s;
            let on = v.bursts.last().is_some_and(|b| b.off_s >= end - 0.2);
            (
                format!("{rms:.0} µV RMS"),
                if on { "contraction" } else { "at rest" }.to_string(),
            )
        }
        None => ("—".into(), "EMG: waiting for signal".into()),
    };
    ui.vertical(|ui| {
        ui.label(
            egui::RichText::new(text)
                .size(30.0)
                .strong()
                .color(super::beats::RATE_COLOUR),
        )
        .on_hover_text(
            "Moving RMS of the followed channel (window 100 ms), band-passed 20–450 Hz.",
        );
        ui.label(egui::RichText::new(detail).small());
    });
}

/// Draws the view. `fs`: the stream's rate (a rate under 1 kHz is advised against).
pub fn show(ui: &mut egui::Ui, view: Option<&EmgView>, fs: f64) {
    if fs > 0.0 && fs < 1000.0 {
        ui.colored_label(
            egui::Color32::from_rgb(230, 170, 70),
            format!("{fs:.0} Hz: surface EMG wants 1 kHz or more (its band reaches 450 Hz)"),
        );
    }
    let Some(v) = view else {
        ui.label("Waiting for the EMG analysis…");
        return;
    };
    if let Some(e) = &v.error {
        ui.label(e);
        return;
    }
    let last = v.bursts.last();
    ui.label(match last {
        Some(b) => format!(
            "{} contractions in view · newest {:.2} s long, RMS {:.0} µV, peak {:.0} µV, mean {} Hz, median {} Hz{}",
            v.bursts.len(),
            b.off_s - b.on_s,
            b.rms_uv,
            b.peak_uv,
            b.mean_hz.map_or("—".into(), |f| format!("{f:.0}")),
            b.median_hz.map_or("—".into(), |f| format!("{f:.0}")),
            v.trend_change_pct
                .map_or(String::new(), |c| format!(" · median frequency trend {c:+.1} %"))
        ),
        None => "no contraction in view (threshold: baseline mean + 3 SD over the quietest second)".into(),
    });
    let width = (ui.available_width() - 8.0).max(200.0);
    let height = (ui.available_height() - 4.0).max(100.0);
    ui.horizontal(|ui| {
        let pts = |y: &[f32]| -> Vec<[f64; 2]> {
            y.iter()
                .enumerate()
                .map(|(i, &u)| [v.t0_s + i as f64 * v.dt_s, f64::from(u)])
                .collect()
        };
        let top = v.rms.iter().copied().fold(0.0f32, f32::max).max(1.0) as f64;
        Plot::new("emg-envelope")
            .width(0.68 * width)
            .height(height)
            .legend(Legend::default())
            .x_axis_label("time (s)")
            .y_axis_label("µV")
            .include_y(0.0)
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .show(ui, |pu| {
                for b in &v.bursts {
                    pu.polygon(
                        Polygon::new(
                            "",
                            PlotPoints::new(vec![
                                [b.on_s, 0.0],
                                [b.off_s, 0.0],
                                [b.off_s, 1.05 * top],
                                [b.on_s, 1.05 * top],
                            ]),
                        )
                        .fill_color(BURST_FILL)
                        .stroke(egui::Stroke::NONE),
                    );
                }
                pu.line(Line::new("moving RMS", PlotPoints::new(pts(&v.rms))).color(RAW_COLOUR));
                pu.line(
                    Line::new("linear envelope", PlotPoints::new(pts(&v.envelope)))
                        .color(FILTERED_COLOUR)
                        .width(1.5),
                );
                pu.hline(
                    HLine::new("onset threshold", v.threshold_uv)
                        .color(egui::Color32::from_rgb(230, 170, 70)),
                );
            });
        let trend: Vec<[f64; 2]> = v.trend.iter().map(|p| [p.0, p.1]).collect();
        Plot::new("emg-median")
            .width(0.3 * width)
            .height(height)
            .x_axis_label("time (s)")
            .y_axis_label("median frequency (Hz)")
            .include_y(0.0)
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .show(ui, |pu| {
                pu.points(
                    Points::new("median frequency", PlotPoints::new(trend.clone()))
                        .radius(3.0)
                        .color(TREND_COLOUR),
                );
                pu.line(Line::new("", PlotPoints::new(trend)).color(TREND_COLOUR));
            });
    });
}
