//! The EMG view: the followed channel's linear envelope and moving RMS with the contractions
//! found, the median frequency from contraction to contraction (fatigue), and a table of the
//! newest contractions.

use eframe::egui;
use egui_plot::{HLine, Legend, Line, Plot, PlotPoints, Points, Polygon};

use crate::analysis::emg::EmgSettings;
use crate::gui::plot::{FILTERED_COLOUR, RATE_COLOUR, RAW_COLOUR};
use crate::msg::{Columns, Control};
use crate::process::emg::{EmgView, Mark};

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
                .color(RATE_COLOUR),
        )
        .on_hover_text(
            "Moving RMS of the followed channel (window 100 ms), band-passed 20–450 Hz.",
        );
        ui.label(egui::RichText::new(detail).small());
    });
}

/// The analysis settings and the marks: returns the control to send when something changed.
fn controls(ui: &mut egui::Ui, s: &mut EmgSettings, view: Option<&EmgView>) -> Option<Control> {
    let before = *s;
    let mut out = None;
    ui.horizontal(|ui| {
        ui.add(
            egui::Slider::new(&mut s.envelope_hz, 2.0..=10.0)
                .text("envelope low-pass, Hz")
                .max_decimals(1),
        )
        .on_hover_text("Linear envelope: full-wave rectified, then this low-pass (zero phase).");
        ui.add(
            egui::Slider::new(&mut s.rms_ms, 50.0..=250.0)
                .text("RMS window, ms")
                .max_decimals(0),
        );
        ui.add(
            egui::Slider::new(&mut s.k_sd, 1.0..=8.0)
                .text("threshold, SD")
                .max_decimals(1),
        )
        .on_hover_text(
            "Onset threshold: the resting baseline's mean + this many standard deviations.",
        );
    });
    ui.horizontal(|ui| {
        let marked = view.map(|v| v.settings);
        if ui
            .button("Rest now")
            .on_hover_text("The newest second is rest: its level becomes the baseline for the threshold (by default the quietest second in view).")
            .clicked()
        {
            out = Some(Control::EmgMark(Mark::Rest));
        }
        if ui
            .button("Newest contraction = maximum")
            .on_hover_text("Its RMS becomes 100 % MVC; every contraction is then also given as % MVC.")
            .clicked()
        {
            out = Some(Control::EmgMark(Mark::Mvc));
        }
        if marked.is_some_and(|m| m.baseline_uv.is_some() || m.mvc_rms_uv.is_some())
            && ui.button("Clear marks").clicked()
        {
            out = Some(Control::EmgMark(Mark::Clear));
        }
        if let Some(m) = marked {
            let rest = m.baseline_uv.map_or("baseline: quietest second".to_string(), |b| {
                format!("baseline marked: {:.1} ± {:.1} µV", b.0, b.1)
            });
            let mvc = m
                .mvc_rms_uv
                .map_or(String::new(), |r| format!(" · MVC {r:.0} µV RMS"));
            ui.weak(rest + &mvc);
        }
    });
    if let Some(n) = view.and_then(|v| v.note.as_ref()) {
        ui.colored_label(egui::Color32::from_rgb(230, 170, 70), n);
    }
    if *s != before {
        out = Some(Control::Emg(Some(*s)));
    }
    out
}

/// The newest contraction's figures in one line.
fn summary(v: &EmgView) -> String {
    match v.bursts.last() {
        Some(b) => format!(
            "{} contractions in view · newest {:.2} s long, RMS {:.0} µV, peak {:.0} µV, mean {} Hz, median {} Hz{}{}",
            v.bursts.len(),
            b.off_s - b.on_s,
            b.rms_uv,
            b.peak_uv,
            b.mean_hz.map_or("—".into(), |f| format!("{f:.0}")),
            b.median_hz.map_or("—".into(), |f| format!("{f:.0}")),
            b.pct_mvc
                .map_or(String::new(), |p| format!(", {p:.0} % MVC")),
            v.trend_change_pct.map_or(String::new(), |c| format!(
                " · median frequency trend {c:+.1} %"
            ))
        ),
        None => "no contraction in view (threshold: baseline mean + 3 SD over the quietest second)"
            .into(),
    }
}

/// The envelope, the moving RMS, the rectified signal and the contractions found.
fn envelope_plot(ui: &mut egui::Ui, v: &EmgView, trace: Option<&Columns>, width: f32, height: f32) {
    let pts = |y: &[f32]| -> Vec<[f64; 2]> {
        y.iter()
            .enumerate()
            .map(|(i, &u)| [v.t0_s + i as f64 * v.dt_s, f64::from(u)])
            .collect()
    };
    let top = v.rms.iter().copied().fold(0.0f32, f32::max).max(1.0) as f64;
    // The rectified signal itself, faint, behind: the largest |value| of each display column.
    let signal: Vec<[f64; 2]> = trace
        .map(|c| {
            c.min
                .iter()
                .zip(&c.max)
                .enumerate()
                .map(|(i, (lo, hi))| {
                    [
                        c.t0_s + (i as f64 + 0.5) * c.dt_s,
                        f64::from(lo.abs().max(hi.abs())),
                    ]
                })
                .filter(|p| p[0] >= v.t0_s)
                .collect()
        })
        .unwrap_or_default();
    let t_end = v.t0_s + v.rms.len() as f64 * v.dt_s;
    Plot::new("emg-envelope")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .width(width)
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
            pu.line(
                Line::new("|signal| after the filters", PlotPoints::new(signal))
                    .color(egui::Color32::from_rgba_unmultiplied(0, 168, 150, 45)),
            );
            // Scaled to the RMS: the signal's peaks may leave the top.
            pu.set_plot_bounds_y(-0.05 * top..=1.6 * top);
            pu.set_plot_bounds_x(v.t0_s..=t_end);
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
}

/// The median frequency of each contraction over time (fatigue shows as a fall).
fn median_plot(ui: &mut egui::Ui, v: &EmgView, width: f32, height: f32) {
    let trend: Vec<[f64; 2]> = v.trend.iter().map(|p| [p.0, p.1]).collect();
    Plot::new("emg-median")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .width(width)
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
}

/// Draws the view. `fs`: the stream's rate (a rate under 1 kHz is advised against); `trace`:
/// the followed channel after the chain. Returns a control when a setting or a mark changed.
pub fn show(
    ui: &mut egui::Ui,
    view: Option<&EmgView>,
    trace: Option<&Columns>,
    settings: &mut EmgSettings,
    fs: f64,
) -> Option<crate::gui::action::Action> {
    draw(ui, view, trace, settings, fs).map(crate::gui::action::Action::Control)
}

fn draw(
    ui: &mut egui::Ui,
    view: Option<&EmgView>,
    trace: Option<&Columns>,
    settings: &mut EmgSettings,
    fs: f64,
) -> Option<Control> {
    let control = controls(ui, settings, view);
    if fs > 0.0 && fs < 1000.0 {
        ui.colored_label(
            egui::Color32::from_rgb(230, 170, 70),
            format!("{fs:.0} Hz: surface EMG wants 1 kHz or more (its band reaches 450 Hz)"),
        );
    }
    let Some(v) = view else {
        ui.label("Waiting for the EMG analysis…");
        return control;
    };
    if let Some(e) = &v.error {
        ui.label(e);
        return control;
    }
    ui.label(summary(v));
    let width = (ui.available_width() - 8.0).max(200.0);
    let height = (ui.available_height() - 4.0).max(100.0);
    ui.horizontal(|ui| {
        envelope_plot(ui, v, trace, 0.68 * width, height);
        median_plot(ui, v, 0.3 * width, height);
    });
    control
}
