//! The rolling trace: before and after the filters, stacked, sharing the time axis.

use eframe::egui;
use egui_plot::{Legend, Line, Plot, PlotPoints, VLine};

use crate::gui::state::{Settings, View};
use crate::msg::Columns;

/// Colour of the unfiltered trace.
pub const RAW_COLOUR: egui::Color32 = egui::Color32::from_rgb(132, 146, 166);
/// Colour of the filtered trace.
pub const FILTERED_COLOUR: egui::Color32 = egui::Color32::from_rgb(0, 168, 150);

/// Colour of event markers.
pub const MARKER_COLOUR: egui::Color32 = egui::Color32::from_rgb(190, 90, 200);

/// Colour of the beat markers.
pub const BEAT_COLOUR: egui::Color32 = egui::Color32::from_rgba_premultiplied(120, 70, 40, 90);

/// Turns min/max columns into one polyline that visits both ends of every column, so a column
/// holding a QRS still reaches its full height at any zoom.
pub fn column_points(c: &Columns, scale: f64) -> Vec<[f64; 2]> {
    let mut pts = Vec::with_capacity(c.min.len() * 2);
    for (i, (&lo, &hi)) in c.min.iter().zip(&c.max).enumerate() {
        let x = c.t0_s + (i as f64 + 0.5) * c.dt_s;
        let (a, b) = if i % 2 == 0 { (lo, hi) } else { (hi, lo) };
        pts.push([x, a as f64 * scale]);
        if hi != lo {
            pts.push([x, b as f64 * scale]);
        }
    }
    pts
}

/// Draws both traces into the space given.
pub fn show(ui: &mut egui::Ui, view: &View, settings: &Settings, markers: &[(f64, String)]) {
    let Some(snap) = &view.snapshot else {
        ui.centered_and_justified(|ui| ui.label("Waiting for the first samples…"));
        return;
    };
    let ch = settings.channel.min(snap.traces.len().saturating_sub(1));
    let Some(trace) = snap.traces.get(ch) else {
        return;
    };
    let (factor, unit) = settings.unit.factor_and_label();
    let x_max = snap.t_end_s.max(snap.window_s);
    let x_min = x_max - snap.window_s;
    let height = ((ui.available_height() - 12.0) / 2.0).max(80.0);
    let link = egui::Id::unique("trace-time-axis");
    let beat_times: Vec<f64> = snap
        .beats
        .as_ref()
        .filter(|b| b.channel == ch)
        .map(|b| {
            b.beats
                .iter()
                .map(|&s| s as f64 / snap.fs_hz)
                .filter(|&t| t >= x_min)
                .collect()
        })
        .unwrap_or_default();
    for (title, id, cols, colour) in [
        ("before the filters", "raw-trace", &trace.raw, RAW_COLOUR),
        (
            "after the filters",
            "filtered-trace",
            &trace.filtered,
            FILTERED_COLOUR,
        ),
    ] {
        let name = format!("ch{} {title}", ch + 1);
        Plot::new(id)
            .height(height)
            .legend(Legend::default())
            .x_axis_label("time (s)")
            .y_axis_label(unit)
            .link_axis(link, [true, false])
            .allow_drag(false)
            .allow_zoom(false)
            .allow_scroll(false)
            .allow_boxed_zoom(false)
            .show(ui, |pu| {
                pu.set_plot_bounds_x(x_min..=x_max);
                if id == "filtered-trace" {
                    for &t in &beat_times {
                        pu.vline(VLine::new("", t).color(BEAT_COLOUR).width(1.0));
                    }
                }
                for (t, text) in markers.iter().filter(|(t, _)| *t >= x_min) {
                    pu.vline(
                        VLine::new(text.as_str(), *t)
                            .color(MARKER_COLOUR)
                            .width(1.5),
                    );
                }
                pu.line(
                    Line::new(name, PlotPoints::new(column_points(cols, factor)))
                        .color(colour)
                        .width(1.5),
                );
            });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn each_column_contributes_its_extremes() {
        let c = Columns {
            t0_s: 1.0,
            dt_s: 0.5,
            min: vec![-1.0, 0.0, 2.0],
            max: vec![1.0, 3.0, 2.0],
        };
        let p = column_points(&c, 1000.0);
        assert_eq!(
            p,
            vec![
                [1.25, -1000.0],
                [1.25, 1000.0],
                [1.75, 3000.0],
                [1.75, 0.0],
                [2.25, 2000.0]
            ]
        );
    }
}
