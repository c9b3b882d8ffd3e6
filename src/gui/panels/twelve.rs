//! The twelve leads as an ECG print-out arranges them (common practice): four columns of 2.5 s
//! (I, II, III / aVR, aVL, aVF / V1–V3 / V4–V6) and a 10 s rhythm strip of lead II below, at
//! 25 mm/s and 10 mm/mV on an optional paper grid, each row opened by a 1 mV calibration pulse.

use eframe::egui;
use egui_plot::{Line, Plot, PlotPoint, PlotPoints, Text, VLine};

use crate::gui::action::Action;
use crate::gui::panels::trace::{TraceEvent, TraceState};
use crate::gui::plot::{CURSOR_COLOUR, FILTERED_COLOUR};
use crate::leads::{LEAD_II, TWELVE};
use crate::msg::Snapshot;

/// Rows are this far apart, mV (30 mm on paper).
pub const ROW_MV: f64 = 3.0;
/// The leads of each column, as indices into [`TWELVE`].
const COLUMNS: [[usize; 3]; 4] = [[0, 1, 2], [3, 4, 5], [6, 7, 8], [9, 10, 11]];

/// One drawn piece of the sheet: a lead's stretch placed on the sheet (x s from the sheet's
/// start, y mV with the row's offset), and its label at `at`.
#[derive(Debug, Clone, PartialEq)]
pub struct Piece {
    pub label: String,
    pub at: [f64; 2],
    pub points: Vec<[f64; 2]>,
}

/// The sheet of a snapshot: its pieces, the time the sheet starts (s since the stream started)
/// and its length, s. Empty when the channels are not the derived leads.
pub fn sheet(snap: &Snapshot) -> (Vec<Piece>, f64, f64) {
    let Some(names) = &snap.leads else {
        return (Vec::new(), 0.0, 0.0);
    };
    let span = snap.window_s.min(10.0);
    let t0 = snap.t_end_s - span;
    let seg = span / 4.0;
    let channel = |lead: usize| names.iter().position(|n| n == TWELVE[lead]);
    let mut pieces = Vec::new();
    let mut add = |lead: usize, row: usize, from: f64, to: f64| {
        // A lead whose inputs the board lacks is never drawn.
        let Some(ch) = channel(lead) else { return };
        let Some(tr) = snap.traces.get(ch) else {
            return;
        };
        let base = (3 - row) as f64 * ROW_MV;
        let c = &tr.filtered;
        let mut points = Vec::new();
        for (i, (&lo, &hi)) in c.min.iter().zip(&c.max).enumerate() {
            let t = c.t0_s + (i as f64 + 0.5) * c.dt_s;
            if t >= t0 + from && t < t0 + to && lo.is_finite() && hi.is_finite() {
                let x = t - t0;
                points.push([x, base + f64::from(lo) * 1e-3]);
                points.push([x, base + f64::from(hi) * 1e-3]);
            }
        }
        pieces.push(Piece {
            label: TWELVE[lead].to_string(),
            at: [from + 0.05, base + 1.2],
            points,
        });
    };
    for (col, leads) in COLUMNS.iter().enumerate() {
        for (row, &lead) in leads.iter().enumerate() {
            add(lead, row, col as f64 * seg, (col + 1) as f64 * seg);
        }
    }
    add(LEAD_II, 3, 0.0, span);
    (pieces, t0, span)
}

/// The 1 mV, 0.2 s calibration pulse before each row.
pub fn calibration(rows: usize) -> Vec<Vec<[f64; 2]>> {
    (0..rows)
        .map(|row| {
            let b = (3 - row) as f64 * ROW_MV;
            vec![
                [-0.45, b],
                [-0.35, b],
                [-0.35, b + 1.0],
                [-0.15, b + 1.0],
                [-0.15, b],
                [-0.05, b],
            ]
        })
        .collect()
}

/// Grid lines: (position, a 5 mm line).
pub type GridLines = Vec<(f64, bool)>;

/// The paper's lines over `span` s: (x or y value, major) for the 1 mm (0.04 s, 0.1 mV) and
/// 5 mm (0.2 s, 0.5 mV) divisions.
pub fn paper_lines(span: f64) -> (GridLines, GridLines) {
    let xs = (0..=((span / 0.04).round() as usize))
        .map(|k| (k as f64 * 0.04, k % 5 == 0))
        .collect();
    let ys = (0..=((4.0 * ROW_MV + 1.5) / 0.1).round() as usize)
        .map(|k| (-1.5 + k as f64 * 0.1, k % 5 == 0))
        .collect();
    (xs, ys)
}

/// The paper-grid switch, the scale, and the cursors' readout.
fn header(
    ui: &mut egui::Ui,
    cursors: &TraceState,
    grid: bool,
    unit: crate::setup::TraceUnit,
) -> Vec<Action> {
    let mut out = Vec::new();
    ui.horizontal(|ui| {
        let mut on = grid;
        if ui.checkbox(&mut on, "Paper grid").on_hover_text(
            "1 mm and 5 mm divisions at 25 mm/s and 10 mm/mV (0.04 s and 0.1 mV; 0.2 s and 0.5 mV).",
        ).changed() {
            out.push(Action::PaperGrid(on));
        }
        ui.label(egui::RichText::new("25 mm/s · 10 mm/mV · 1 mV calibration pulse at each row's start").small());
        // The same cursors as the traces': click to place, the readout here.
        if let Some(r) = cursors.readout(unit) {
            ui.separator();
            ui.label(egui::RichText::new(r).monospace().strong());
            if ui.small_button("Clear cursors").clicked() {
                out.push(Action::Trace(TraceEvent::Clear));
            }
        }
    });
    out
}

/// Draws the sheet in the space given; returns the cursor actions (cursors are placed at
/// stream time and the value in µV above the row's line).
pub fn show(
    ui: &mut egui::Ui,
    snap: Option<&Snapshot>,
    cursors: &TraceState,
    grid: bool,
    unit: crate::setup::TraceUnit,
) -> Vec<Action> {
    let mut out = Vec::new();
    let Some(snap) = snap.filter(|s| s.leads.is_some()) else {
        ui.label("The twelve leads need a lead set: choose what the channels are in the Source section (or --lead-set).");
        return out;
    };
    out.extend(header(ui, cursors, grid, unit));
    let (pieces, t0, span) = sheet(snap);
    let paper = egui::Color32::from_rgba_unmultiplied(220, 90, 90, 60);
    let resp = Plot::new("twelve-leads")
        .show_background(false)
        .show_grid(!grid)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .data_aspect(0.4)
        .y_axis_formatter(|_, _| String::new())
        .allow_drag(false)
        .allow_scroll(false)
        .allow_zoom(false)
        .x_axis_label("time (s), 25 mm/s")
        .y_axis_label("10 mm/mV (rows 3 mV apart; 1 mV pulse)")
        .include_x(-0.5)
        .include_x(span)
        .include_y(-1.5)
        .include_y(3.0 * ROW_MV + 1.6)
        .show(ui, |pu| {
            if grid {
                let (xs, ys) = paper_lines(span);
                for (x, major) in xs {
                    pu.vline(
                        VLine::new("", x)
                            .color(paper)
                            .width(if major { 1.0 } else { 0.3 }),
                    );
                }
                for (y, major) in ys {
                    pu.hline(egui_plot::HLine::new("", y).color(paper).width(if major {
                        1.0
                    } else {
                        0.3
                    }));
                }
            }
            for pulse in calibration(4) {
                pu.line(
                    Line::new("", PlotPoints::new(pulse))
                        .color(FILTERED_COLOUR)
                        .width(1.2)
                        .allow_band(false),
                );
            }
            for p in pieces {
                pu.text(
                    Text::new(
                        "",
                        PlotPoint::new(p.at[0], p.at[1]),
                        egui::RichText::new(p.label.clone()).size(15.0).strong(),
                    )
                    .anchor(egui::Align2::LEFT_BOTTOM),
                );
                pu.line(
                    Line::new(p.label, PlotPoints::new(p.points))
                        .color(FILTERED_COLOUR)
                        .width(1.2),
                );
            }
            for c in cursors.cursors.iter().flatten() {
                pu.vline(VLine::new("", c[0] - t0).color(CURSOR_COLOUR).width(1.0));
            }
            pu.pointer_coordinate()
        });
    if resp.response.clicked()
        && let Some(p) = resp.inner
    {
        // The value above the nearest row's line.
        let row = ((3.0 * ROW_MV - p.y) / ROW_MV).round().clamp(0.0, 3.0);
        let base = (3.0 - row) * ROW_MV;
        out.push(Action::Trace(TraceEvent::Place([
            t0 + p.x,
            (p.y - base) * 1e3,
        ])));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_paper_has_one_line_a_millimetre_and_a_heavy_one_every_five() {
        let (xs, ys) = paper_lines(10.0);
        assert_eq!(xs.len(), 251);
        assert_eq!(xs.iter().filter(|x| x.1).count(), 51);
        assert!((xs[5].0 - 0.2).abs() < 1e-12 && xs[5].1);
        assert!((ys[1].0 - ys[0].0 - 0.1).abs() < 1e-12);
    }

    #[test]
    fn calibration_pulses_are_1_mv_tall_and_0_2_s_wide() {
        for p in calibration(4) {
            let hi = p.iter().map(|q| q[1]).fold(f64::MIN, f64::max);
            let lo = p.iter().map(|q| q[1]).fold(f64::MAX, f64::min);
            assert!((hi - lo - 1.0).abs() < 1e-12);
            assert!((p[3][0] - p[2][0] - 0.2).abs() < 1e-12);
        }
    }
}
