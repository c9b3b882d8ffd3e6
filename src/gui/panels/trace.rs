//! The rolling trace: before and after the filters, stacked, sharing the time axis.

use eframe::egui;
use egui_plot::{HLine, Legend, Line, Plot, PlotPoints, VLine};

use crate::gui::state::{Settings, View};

use crate::gui::plot::{
    BEAT_COLOUR, CURSOR_COLOUR, FILTERED_COLOUR, MARKER_COLOUR, RAW_COLOUR, column_points,
};

/// What the user has done to the traces: cursors, and whether the view follows the data.
#[derive(Debug, Clone, PartialEq)]
pub struct TraceState {
    /// Measurement cursors (time s, value µV); a click places the next one.
    pub cursors: [Option<[f64; 2]>; 2],
    /// Which cursor the next click places.
    pub next_cursor: usize,
    /// The view scrolls with the data; false once the user zooms or pans (then the display is
    /// frozen until "Follow live").
    pub follow: bool,
}

impl Default for TraceState {
    fn default() -> Self {
        Self {
            cursors: [None, None],
            next_cursor: 0,
            follow: true,
        }
    }
}

/// Δt (s), ΔV (µV) and the rate implied by Δt (per minute) between two cursors.
pub fn cursor_deltas(a: [f64; 2], b: [f64; 2]) -> (f64, f64, Option<f64>) {
    let dt = b[0] - a[0];
    let dv = b[1] - a[1];
    let rate = (dt.abs() > 1e-6).then(|| 60.0 / dt.abs());
    (dt, dv, rate)
}

impl TraceState {
    /// Places the next cursor at (t s, v µV).
    pub fn place(&mut self, t: f64, v_uv: f64) {
        self.cursors[self.next_cursor] = Some([t, v_uv]);
        self.next_cursor = (self.next_cursor + 1) % 2;
    }

    /// Removes both cursors.
    pub fn clear(&mut self) {
        self.cursors = [None, None];
        self.next_cursor = 0;
    }

    /// The readout text, when both cursors are placed.
    pub fn readout(&self, unit: super::super::state::TraceUnit) -> Option<String> {
        let (a, b) = (self.cursors[0]?, self.cursors[1]?);
        let (dt, dv, rate) = cursor_deltas(a, b);
        let (k, u) = (unit.factor(), unit.symbol());
        Some(format!(
            "Δt {:.1} ms · ΔV {:.3} {u}{}",
            dt * 1e3,
            dv * k,
            rate.map_or(String::new(), |r| format!(" · 1/Δt = {r:.1} per minute"))
        ))
    }
}

/// What the user did in the traces this frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TraceEvent {
    /// A click: the next cursor goes here (time s as drawn, value µV).
    Place([f64; 2]),
    /// Remove both cursors.
    Clear,
    /// Zoomed or panned: the view stops following the data and the display freezes.
    LeaveLive,
}

impl TraceState {
    /// What `e` does to the cursors and the following.
    pub fn on(&mut self, e: TraceEvent) {
        match e {
            TraceEvent::Place([t, v]) => self.place(t, v),
            TraceEvent::Clear => self.clear(),
            TraceEvent::LeaveLive => self.follow = false,
        }
    }
}

/// Maps a time to the sweep display: x in 0..window, and whether it is in the newest pass.
fn sweep_x(t: f64, t_end: f64, window: f64) -> (f64, bool) {
    let x = t.rem_euclid(window);
    let x_now = t_end.rem_euclid(window);
    (x, t > t_end - x_now)
}

/// Draws both traces into the space given; returns what the user did to them.
pub fn show(
    ui: &mut egui::Ui,
    view: &View,
    settings: &Settings,
    markers: &[(f64, String)],
    state: &TraceState,
) -> Vec<crate::gui::action::Action> {
    draw(ui, view, settings, markers, state)
        .into_iter()
        .map(crate::gui::action::Action::Trace)
        .collect()
}

fn draw(
    ui: &mut egui::Ui,
    view: &View,
    settings: &Settings,
    markers: &[(f64, String)],
    state: &TraceState,
) -> Vec<TraceEvent> {
    let mut events = Vec::new();
    let Some(snap) = &view.snapshot else {
        ui.centered_and_justified(|ui| ui.label("Waiting for the first samples…"));
        return events;
    };
    let ch = settings
        .setup
        .view
        .channel
        .min(snap.traces.len().saturating_sub(1));
    let Some(trace) = snap.traces.get(ch) else {
        return events;
    };
    let (factor, unit) = settings.setup.view.unit.factor_and_label();
    let window = snap.window_s;
    let sweep = settings.setup.view.sweep && state.follow;
    let x_max = snap.t_end_s.max(window);
    let x_min = x_max - window;
    let readout = state.readout(settings.setup.view.unit);
    let height =
        ((ui.available_height() - if readout.is_some() { 34.0 } else { 12.0 }) / 2.0).max(80.0);
    if let Some(r) = &readout
        && readout_row(ui, r)
    {
        events.push(TraceEvent::Clear);
    }
    let link = egui::Id::unique("trace-time-axis");
    let beat_times = beat_times(snap, ch, x_min);
    let place = |t: f64| {
        if sweep {
            sweep_x(t, snap.t_end_s, window).0
        } else {
            t
        }
    };
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
        let pts = column_points(cols, factor);
        let fixed = fixed_range(
            cols,
            id == "filtered-trace",
            settings.setup.view.fixed_range_uv,
            factor,
        );
        let resp = trace_plot(id, height, sweep, unit, link).show(ui, |pu| {
            if state.follow {
                if sweep {
                    pu.set_plot_bounds_x(0.0..=window);
                } else {
                    pu.set_plot_bounds_x(x_min..=x_max);
                }
                match fixed {
                    Some((lo, hi)) => pu.set_plot_bounds_y(lo..=hi),
                    None => pu.set_auto_bounds([false, true]),
                }
            }
            if id == "filtered-trace" {
                for &t in &beat_times {
                    pu.vline(VLine::new("", place(t)).color(BEAT_COLOUR).width(1.0));
                }
            }
            for (t, text) in markers.iter().filter(|(t, _)| *t >= x_min) {
                pu.vline(
                    VLine::new(text.as_str(), place(*t))
                        .color(MARKER_COLOUR)
                        .width(1.5),
                );
            }
            if sweep {
                sweep_lines(pu, pts, &name, colour, snap.t_end_s, window);
            } else {
                pu.line(
                    Line::new(name, PlotPoints::new(pts))
                        .color(colour)
                        .width(1.5),
                );
            }
            cursor_lines(pu, &state.cursors, factor);
            pu.pointer_coordinate()
        });
        events.extend(pointer_events(ui, &resp, factor));
    }
    events
}

/// A click places a cursor (at the time on the axis as drawn: sweep time in sweep mode); a
/// drag or a scroll leaves the live view.
fn pointer_events(
    ui: &egui::Ui,
    resp: &egui_plot::PlotResponse<Option<egui_plot::PlotPoint>>,
    factor: f64,
) -> Vec<TraceEvent> {
    let mut out = Vec::new();
    let r = &resp.response;
    if r.clicked()
        && let Some(p) = resp.inner
    {
        out.push(TraceEvent::Place([p.x, p.y / factor]));
    }
    let scrolled = r.hovered() && ui.input(|i| i.smooth_scroll_delta != egui::Vec2::ZERO);
    if r.dragged() || scrolled {
        out.push(TraceEvent::LeaveLive);
    }
    out
}

/// The cursors' readout and the button that clears them; true when it was clicked.
fn readout_row(ui: &mut egui::Ui, r: &str) -> bool {
    ui.horizontal(|ui| {
        ui.label(egui::RichText::new(r).monospace().strong())
            .on_hover_text("Between cursor 1 and cursor 2: time, voltage, and the rate a period of Δt means (an RR interval as beats per minute).");
        ui.small_button("Clear cursors").on_hover_text("Remove both cursors (key C).").clicked()
    })
    .inner
}

/// The times (s) of the beats detected on channel `ch` from `x_min` on.
fn beat_times(snap: &crate::msg::Snapshot, ch: usize, x_min: f64) -> Vec<f64> {
    snap.beats
        .as_ref()
        .filter(|b| b.channel == ch)
        .map(|b| {
            b.beats
                .iter()
                .map(|&s| s as f64 / snap.fs_hz)
                .filter(|&t| t >= x_min)
                .collect()
        })
        .unwrap_or_default()
}

/// One trace's plot, linked in time with the other's.
fn trace_plot(id: &str, height: f32, sweep: bool, unit: &str, link: egui::Id) -> Plot<'static> {
    Plot::new(id)
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .height(height)
        .legend(Legend::default())
        .x_axis_label(if sweep {
            "time in the sweep (s)"
        } else {
            "time (s)"
        })
        .y_axis_label(unit)
        .y_grid_spacer(crate::gui::plot::value_spacer)
        .y_axis_formatter(|m, _| crate::gui::plot::value_label(m))
        .link_axis(link, [true, false])
        .link_cursor(link, [true, false])
        .allow_drag(true)
        .allow_zoom(true)
        .allow_scroll(true)
        .allow_boxed_zoom(false)
        .allow_double_click_reset(false)
}

/// The fixed vertical range (± `range_uv` around the trace's middle, around 0 after the
/// filters), in the shown unit; None when the range is automatic.
fn fixed_range(
    cols: &crate::msg::Columns,
    filtered: bool,
    range_uv: f64,
    factor: f64,
) -> Option<(f64, f64)> {
    (range_uv > 0.0).then(|| {
        let (lo, hi) = cols
            .min
            .iter()
            .zip(&cols.max)
            .fold((f32::MAX, f32::MIN), |(l, h), (&a, &b)| {
                (l.min(a), h.max(b))
            });
        let mid = if filtered || lo > hi {
            0.0
        } else {
            0.5 * f64::from(lo + hi)
        };
        let r = range_uv;
        ((mid - r) * factor, (mid + r) * factor)
    })
}

/// A sweep trace: the newest pass up to now, the older one after a small gap, and the
/// sweep's edge.
fn sweep_lines(
    pu: &mut egui_plot::PlotUi,
    pts: Vec<[f64; 2]>,
    name: &str,
    colour: egui::Color32,
    t_end: f64,
    window: f64,
) {
    // The newest pass up to now, then the older one after a small gap.
    let x_now = t_end.rem_euclid(window);
    let gap = 0.02 * window;
    let (mut new, mut old) = (Vec::new(), Vec::new());
    for p in &pts {
        let (x, newest) = sweep_x(p[0], t_end, window);
        if newest {
            new.push([x, p[1]]);
        } else if x > x_now + gap {
            old.push([x, p[1]]);
        }
    }
    pu.line(
        Line::new(name, PlotPoints::new(new))
            .color(colour)
            .width(1.5),
    );
    pu.line(
        Line::new(name, PlotPoints::new(old))
            .color(colour)
            .width(1.5),
    );
    pu.vline(
        VLine::new("", x_now)
            .color(colour.gamma_multiply(0.5))
            .width(1.0),
    );
}

/// The two cursors, each a vertical and a horizontal line.
fn cursor_lines(pu: &mut egui_plot::PlotUi, cursors: &[Option<[f64; 2]>; 2], factor: f64) {
    for (k, c) in cursors.iter().enumerate() {
        if let Some([t, v]) = c {
            let label = format!("cursor {}", k + 1);
            pu.vline(
                VLine::new(label.clone(), *t)
                    .color(CURSOR_COLOUR)
                    .width(1.0),
            );
            pu.hline(
                HLine::new(label, v * factor)
                    .color(CURSOR_COLOUR)
                    .width(1.0),
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::msg::Columns;

    #[test]
    fn cursor_deltas_give_the_rate_of_an_rr_interval() {
        // Two R peaks 0.8 s apart are 75 per minute; the sign of Δt does not change the rate.
        let (dt, dv, r) = cursor_deltas([1.0, 100.0], [1.8, 1300.0]);
        assert!((dt - 0.8).abs() < 1e-12 && (dv - 1200.0).abs() < 1e-9);
        assert!((r.unwrap() - 75.0).abs() < 1e-9);
        let (_, _, r) = cursor_deltas([1.8, 0.0], [1.0, 0.0]);
        assert!((r.unwrap() - 75.0).abs() < 1e-9);
        assert!(cursor_deltas([1.0, 0.0], [1.0, 5.0]).2.is_none());
    }

    #[test]
    fn sweep_maps_time_into_the_window_and_knows_the_newest_pass() {
        // Window 10 s, now at 23 s: 21 s is in the newest pass at x = 1; 15 s is older, x = 5.
        assert_eq!(sweep_x(21.0, 23.0, 10.0), (1.0, true));
        assert_eq!(sweep_x(15.0, 23.0, 10.0), (5.0, false));
    }

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
