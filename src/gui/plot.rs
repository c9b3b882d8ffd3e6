//! The palette and the plot helpers every panel shares.

use eframe::egui;
use egui_plot::{GridInput, GridMark, HoverPosition};

use crate::msg::Columns;

/// Colour of the unfiltered trace.
pub const RAW_COLOUR: egui::Color32 = egui::Color32::from_rgb(132, 146, 166);
/// Colour of the filtered trace.
pub const FILTERED_COLOUR: egui::Color32 = egui::Color32::from_rgb(0, 168, 150);

/// Colour of the measurement cursors.
pub const CURSOR_COLOUR: egui::Color32 = egui::Color32::from_rgb(230, 200, 60);

/// Colour of event markers.
pub const MARKER_COLOUR: egui::Color32 = egui::Color32::from_rgb(190, 90, 200);

/// Colour of the beat markers.
pub const BEAT_COLOUR: egui::Color32 = egui::Color32::from_rgba_premultiplied(120, 70, 40, 90);

/// The heart-rate readout's own colour: a light steel blue of the project's palette (amber and
/// red keep their usual meaning for the warning states).
pub const RATE_COLOUR: egui::Color32 = egui::Color32::from_rgb(60, 140, 210);

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

/// Grid for an axis in log10(Hz): a labelled line per decade, fainter lines at 2…9 × each decade.
/// egui_plot fades lines and labels by `step_size` in pixels; the sizes given here are chosen so
/// decades stay labelled on a narrow plot, not the true spacing.
pub fn decade_spacer(input: GridInput) -> Vec<GridMark> {
    let (lo, hi) = input.bounds;
    let mut marks = Vec::new();
    if !(lo.is_finite() && hi.is_finite()) || hi - lo > 40.0 {
        return marks;
    }
    for d in (lo.floor() as i32)..=(hi.ceil() as i32) {
        let base = d as f64;
        if base >= lo && base <= hi {
            marks.push(GridMark {
                value: base,
                step_size: 10.0,
            });
        }
        for m in 2..10 {
            let v = base + (m as f64).log10();
            if v >= lo && v <= hi {
                marks.push(GridMark {
                    value: v,
                    step_size: 0.6,
                });
            }
        }
    }
    marks
}

/// Hover text for a plot whose x axis is frequency (log10 Hz when `log`): the series name, the
/// frequency in Hz and the value with `unit`.
pub fn hover_text(pos: &HoverPosition<'_>, log: bool, unit: &str) -> String {
    let (name, p) = match pos {
        HoverPosition::NearDataPoint {
            plot_name,
            position,
            ..
        } => (*plot_name, *position),
        HoverPosition::Elsewhere { position } => ("", *position),
    };
    let f = if log { 10f64.powf(p.x) } else { p.x };
    let head = if name.is_empty() {
        String::new()
    } else {
        format!("{name}\n")
    };
    format!("{head}{f:.3} Hz\n{:.2}{unit}", p.y)
}
