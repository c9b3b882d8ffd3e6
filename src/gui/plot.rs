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

/// Grid lines of every plot: none closer than 20 points. Under software OpenGL each line costs
/// its pixels every frame; the faint tenth-of-a-step lines egui_plot draws by default (a hundred
/// over a 10 s trace) cost a fifth of the monitor's CPU. Plots draw no background either (the
/// panel's colour is the clear colour): that fill shaded most of the window every frame.
pub const GRID_SPACING: egui::Rangef = egui::Rangef {
    min: 20.0,
    max: 300.0,
};

/// Pixels between labelled values of a value axis: egui_plot hides a label closer than 20.
const LABEL_PX: f64 = 26.0;

/// The step of a value axis: the largest 1-2-5 step that leaves at least three labelled
/// values in `span`, and no more labels than fit `LABEL_PX` apart (`px_per_unit`).
pub fn value_step(span: f64, px_per_unit: f64) -> f64 {
    if !(span.is_finite() && span > 0.0) {
        return 1.0;
    }
    let nice = |x: f64, up: bool| {
        let e = x.log10().floor();
        let m = x / 10f64.powf(e);
        let k = if up {
            [1.0, 2.0, 5.0, 10.0]
                .into_iter()
                .find(|&k| k >= m - 1e-9)
                .unwrap_or(10.0)
        } else {
            [10.0, 5.0, 2.0, 1.0]
                .into_iter()
                .find(|&k| k <= m + 1e-9)
                .unwrap_or(1.0)
        };
        k * 10f64.powf(e)
    };
    let most = nice(span / 3.0, false);
    let least = if px_per_unit > 0.0 {
        nice(LABEL_PX / px_per_unit, true)
    } else {
        most
    };
    // Too short a plot for three labels 26 px apart: keep three anyway (egui shows them
    // from 20 px).
    least.min(most)
}

/// Grid for a value axis (a trace's µV or mV): at least three labelled values at any zoom
/// (egui_plot's own grid labels only powers of ten, so a ±450 µV trace showed "0" alone), with
/// faint lines at a fifth of the step.
pub fn value_spacer(input: GridInput) -> Vec<GridMark> {
    let (lo, hi) = input.bounds;
    let span = hi - lo;
    if !(lo.is_finite() && hi.is_finite() && span > 0.0) {
        return Vec::new();
    }
    // egui_plot's base step is the value of its smallest grid spacing, 8 points.
    let px_per_unit = if input.base_step_size > 0.0 {
        8.0 / input.base_step_size
    } else {
        0.0
    };
    let step = value_step(span, px_per_unit);
    let minor = step / 5.0;
    let mut marks = Vec::new();
    let first = (lo / minor).ceil() as i64;
    let last = (hi / minor).floor() as i64;
    if last - first > 2000 {
        return marks;
    }
    for k in first..=last {
        marks.push(GridMark {
            value: k as f64 * minor,
            step_size: if k % 5 == 0 { step } else { minor },
        });
    }
    marks
}

/// Labels of [`value_spacer`]'s marks: as many decimals as the step needs, minor marks bare.
pub fn value_label(mark: GridMark) -> String {
    let decimals = (-mark.step_size.log10().floor()).max(0.0) as usize;
    let v = if mark.value.abs() < mark.step_size * 1e-6 {
        0.0
    } else {
        mark.value
    };
    format!("{v:.decimals$}")
}

/// Grid for an axis in log10(Hz): a labelled line per decade, fainter lines at 2 and 5 × each decade.
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
        // 2× and 5× each decade: enough to read a frequency off, few lines to draw.
        for m in [2, 5] {
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The labelled marks of a trace axis (those egui_plot shows: at least 20 px apart).
    fn labels(lo: f64, hi: f64, height_px: f64) -> Vec<String> {
        let marks = value_spacer(GridInput {
            bounds: (lo, hi),
            base_step_size: 8.0 * (hi - lo) / height_px,
        });
        let px = height_px / (hi - lo);
        marks
            .iter()
            .filter(|m| m.step_size * px >= 20.0)
            .map(|m| value_label(*m))
            .collect()
    }

    #[test]
    fn a_trace_axis_has_three_labels_at_any_zoom() {
        // A 1 mV beat with a little margin in mV and in µV, a 50 µV one in µV, and the case
        // that showed "0" alone (±450 µV), each on a short (110 px) and a tall (400 px) plot.
        for (lo, hi) in [
            (-0.3, 1.2),
            (-300.0, 1200.0),
            (-10.0, 50.0),
            (-450.0, 450.0),
        ] {
            for h in [110.0, 400.0] {
                let l = labels(lo, hi, h);
                assert!(l.len() >= 3, "{lo}…{hi} on {h} px: {l:?}");
                let mut distinct = l.clone();
                distinct.dedup();
                assert_eq!(distinct.len(), l.len(), "{lo}…{hi}: {l:?}");
            }
        }
        assert_eq!(labels(-0.3, 1.2, 110.0), ["0.0", "0.5", "1.0"]);
    }
}
