//! The Measure view: the built front end measured on the live stream (the newest 30 s of the raw
//! traces), drawn over the digital chain's design and the response built from the parts.

use std::sync::Arc;

use eframe::egui;
use egui_plot::{Legend, Line, Plot, PlotPoints, Points};

use crate::analog::parts::Stage;
use crate::dsp::Section;
use crate::measure::{Measured, Outcome, Request};
use crate::msg::Control;

/// Which measurement.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Mode {
    #[default]
    Response,
    Steps,
    Noise,
    Cmrr,
}

/// The view's own settings.
#[derive(Debug, Clone)]
pub struct MeasureView {
    mode: Mode,
    stimulus: usize,
    output: usize,
    channel: usize,
    amplitude_uv: f64,
    band: (f64, f64),
    limit_uv: f64,
    cm_uv: f64,
    cm_hz: f64,
    cm_stepped: bool,
    png: String,
    saved: Option<String>,
}

impl Default for MeasureView {
    fn default() -> Self {
        Self {
            mode: Mode::Response,
            stimulus: 0,
            output: 1,
            channel: 0,
            amplitude_uv: 1000.0,
            band: crate::measure::noise::BAND_HZ,
            limit_uv: crate::measure::noise::LIMIT_P2P_UV,
            cm_uv: 1e6,
            cm_hz: 50.0,
            cm_stepped: false,
            png: "measured.png".into(),
            saved: None,
        }
    }
}

fn channel_pick(ui: &mut egui::Ui, id: &str, label: &str, k: &mut usize, n: usize) {
    egui::ComboBox::new(id, if label.is_empty() { "channel" } else { label })
        .selected_text(format!("ch{}", *k + 1))
        .show_ui(ui, |ui| {
            for c in 0..n.max(1) {
                ui.selectable_value(k, c, format!("ch{}", c + 1));
            }
        });
}

/// The mode, its channels and figures, and the button; the request when it is pressed.
fn controls(ui: &mut egui::Ui, v: &mut MeasureView, channels: usize) -> Option<Control> {
    let mut out = None;
    ui.horizontal_wrapped(|ui| {
        ui.selectable_value(&mut v.mode, Mode::Response, "Response")
            .on_hover_text("A stimulus channel (generator or DAC: white noise, a chirp or a multisine) and the front end's output: H1 = Pxy/Pxx with the coherence.");
        ui.selectable_value(&mut v.mode, Mode::Steps, "Stepped sine")
            .on_hover_text("One channel; step a generator sine of known amplitude by hand, holding each frequency 2 s or more.");
        ui.selectable_value(&mut v.mode, Mode::Noise, "Noise")
            .on_hover_text("Inputs shorted (or through 51 kΩ ‖ 47 nF): RMS and peak-to-peak in a band, the density and its 1/f corner.");
        ui.selectable_value(&mut v.mode, Mode::Cmrr, "CMRR")
            .on_hover_text("Both inputs tied together to a common-mode sine of known amplitude.");
        ui.separator();
        match v.mode {
            Mode::Response => {
                channel_pick(ui, "m-stim", "stimulus", &mut v.stimulus, channels);
                channel_pick(ui, "m-out", "output", &mut v.output, channels);
            }
            Mode::Steps => {
                channel_pick(ui, "m-ch", "", &mut v.channel, channels);
                ui.add(egui::DragValue::new(&mut v.amplitude_uv).range(1.0..=1e7).suffix(" µV peak in"));
            }
            Mode::Noise => {
                channel_pick(ui, "m-ch", "", &mut v.channel, channels);
                ui.add(egui::DragValue::new(&mut v.band.0).range(0.01..=100.0).speed(0.01).suffix(" Hz"));
                ui.add(egui::DragValue::new(&mut v.band.1).range(1.0..=5000.0).suffix(" Hz"));
                ui.add(egui::DragValue::new(&mut v.limit_uv).range(1.0..=1000.0).suffix(" µV p-p limit"))
                    .on_hover_text("30 µV p-v: recalled from memory of the ECG standards, until a source is found.");
            }
            Mode::Cmrr => {
                channel_pick(ui, "m-ch", "", &mut v.channel, channels);
                ui.add(egui::DragValue::new(&mut v.cm_uv).range(1.0..=1e8).suffix(" µV rms common mode"));
                ui.add_enabled(
                    !v.cm_stepped,
                    egui::DragValue::new(&mut v.cm_hz).range(1.0..=1000.0).suffix(" Hz"),
                );
                ui.checkbox(&mut v.cm_stepped, "stepped")
                    .on_hover_text("The generator was stepped through frequencies by hand: one CMRR a step.");
            }
        }
        if ui
            .button("Measure the last 30 s")
            .on_hover_text("Runs on the newest 30 s of the raw traces (input-referred, before the chain).")
            .clicked()
        {
            out = Some(Control::Measure(match v.mode {
                Mode::Response => Request::Response {
                    stimulus: v.stimulus,
                    output: v.output,
                },
                Mode::Steps => Request::Steps {
                    channel: v.channel,
                    amplitude_uv: v.amplitude_uv,
                },
                Mode::Noise => Request::Noise {
                    channel: v.channel,
                    band: v.band,
                    limit_p2p_uv: v.limit_uv,
                },
                Mode::Cmrr if v.cm_stepped => Request::CmrrStepped {
                    channel: v.channel,
                    cm_uv: v.cm_uv,
                },
                Mode::Cmrr => Request::Cmrr {
                    channel: v.channel,
                    cm_uv: v.cm_uv,
                    cm_hz: v.cm_hz,
                },
            }));
        }
    });
    out
}

/// Draws the view. `measured` is the snapshot's last measurement; `design` the chain running
/// (its sections) and `parts` the stages built from parts, at `fs`. Returns the request to send.
pub fn show(
    ui: &mut egui::Ui,
    v: &mut MeasureView,
    measured: Option<&Arc<Measured>>,
    design: Option<&[Section]>,
    parts: Option<&[Stage]>,
    channels: usize,
    fs: f64,
) -> Option<crate::gui::action::Action> {
    draw(ui, v, measured, design, parts, channels, fs).map(crate::gui::action::Action::Control)
}

fn draw(
    ui: &mut egui::Ui,
    v: &mut MeasureView,
    measured: Option<&Arc<Measured>>,
    design: Option<&[Section]>,
    parts: Option<&[Stage]>,
    channels: usize,
    fs: f64,
) -> Option<Control> {
    let out = controls(ui, v, channels);
    let Some(m) = measured else {
        ui.label("No measurement yet.");
        return out;
    };
    let outcome = match &m.result {
        Ok(o) => o,
        Err(e) => {
            ui.colored_label(ui.visuals().error_fg_color, format!("no measurement: {e}"));
            return out;
        }
    };
    match outcome {
        Outcome::Response(t) => {
            response(ui, v, m, t, design, parts, fs);
        }
        Outcome::Steps {
            steps,
            amplitude_uv,
        } => {
            stepped(ui, v, steps, *amplitude_uv, design, fs);
        }
        Outcome::Noise(n) => {
            noise(ui, n);
        }
        Outcome::CmrrSteps(list) => {
            for c in list {
                ui.label(format!(
                    "{:8.2} Hz: CMRR {:.1} ± {:.1} dB ({:.3} µV rms leak)",
                    c.cm_hz, c.cmrr_db, c.uncertainty_db, c.diff_uv
                ));
            }
        }
        Outcome::Cmrr(c) => {
            ui.label(
                egui::RichText::new(format!(
                    "CMRR {:.1} ± {:.1} dB at {:.2} Hz ({:.3} µV rms leaks through from {:.0} µV rms common mode)",
                    c.cmrr_db, c.uncertainty_db, c.cm_hz, c.diff_uv, c.cm_uv
                ))
                .size(16.0),
            );
        }
    }
    out
}

/// The response's figures in one line.
fn response_text(m: &Measured, t: &crate::measure::transfer::Transfer, offset: f64) -> String {
    format!(
        "{:.0} s, {} segments of {}: pass band {:.2} dB, corners {} Hz, coherent {:.2}–{:.1} Hz; the design is drawn shifted by {:+.1} dB; greyed: coherence < 0.9",
        m.seconds,
        t.segments,
        t.segment,
        t.passband_gain_db,
        t.corners_hz
            .iter()
            .map(|c| format!("{c:.2}"))
            .collect::<Vec<_>>()
            .join(", "),
        t.coherent_range_hz.0,
        t.coherent_range_hz.1,
        offset
    )
}

/// The measured gain at the points whose coherence is at least 0.9 (`coherent`) or below it.
fn magnitudes(t: &crate::measure::transfer::Transfer, coherent: bool) -> Vec<[f64; 2]> {
    t.points
        .iter()
        .filter(|p| (p.coherence >= 0.9) == coherent)
        .map(|p| [p.freq_hz.log10(), p.mag_db])
        .collect()
}

/// The measured response, phase and group delay over the design and the parts.
fn response(
    ui: &mut egui::Ui,
    v: &mut MeasureView,
    m: &Measured,
    t: &crate::measure::transfer::Transfer,
    design: Option<&[Section]>,
    parts: Option<&[Stage]>,
    fs: f64,
) {
    let db_design = |f: f64| {
        design.map(|d| crate::numeric::db20(crate::dsp::response::magnitude(d, f, fs).max(1e-12)))
    };
    let db_parts = |f: f64| parts.map(|p| crate::analog::parts::chain_db(p, f));
    let peak = crate::dsp::response::log_frequencies(0.05, crate::dsp::highest_corner_hz(fs), 200)
        .into_iter()
        .filter_map(db_design)
        .fold(f64::MIN, f64::max);
    let offset = if peak > f64::MIN {
        t.passband_gain_db - peak
    } else {
        0.0
    };
    ui.label(response_text(m, t, offset));
    let good = magnitudes(t, true);
    let grey = magnitudes(t, false);
    let curve = |g: &dyn Fn(f64) -> Option<f64>| -> Vec<[f64; 2]> {
        t.points
            .iter()
            .filter_map(|p| g(p.freq_hz).map(|d| [p.freq_hz.log10(), d + offset]))
            .collect()
    };
    let design_line = curve(&db_design);
    let parts_line = curve(&db_parts);
    let diff: Vec<[f64; 2]> = t
        .points
        .iter()
        .filter(|p| p.coherence >= 0.9)
        .filter_map(|p| db_design(p.freq_hz).map(|d| [p.freq_hz.log10(), p.mag_db - d - offset]))
        .collect();
    let phase: Vec<[f64; 2]> = t
        .points
        .iter()
        .filter(|p| p.coherence >= 0.9)
        .map(|p| [p.freq_hz.log10(), p.phase_deg])
        .collect();
    let delay: Vec<[f64; 2]> = t
        .points
        .iter()
        .filter(|p| p.coherence >= 0.9 && p.group_delay_s.is_finite())
        .map(|p| [p.freq_hz.log10(), 1e3 * p.group_delay_s])
        .collect();
    let w = (ui.available_width() - 16.0) / 3.0;
    ui.horizontal(|ui| {
        Plot::new("measure-mag")
            .show_background(false)
            .grid_spacing(crate::gui::plot::GRID_SPACING)
            .width(w)
            .height(ui.available_height().max(120.0))
            .legend(Legend::default())
            .x_axis_label("frequency (log10 Hz)")
            .y_axis_label("gain (dB)")
            .show(ui, |pu| {
                pu.points(Points::new("measured", PlotPoints::new(good)).radius(1.5));
                pu.points(
                    Points::new("coherence < 0.9", PlotPoints::new(grey))
                        .radius(1.0)
                        .color(egui::Color32::GRAY),
                );
                if !design_line.is_empty() {
                    pu.line(Line::new("design", PlotPoints::new(design_line)));
                }
                if !parts_line.is_empty() {
                    pu.line(Line::new("built from parts", PlotPoints::new(parts_line)));
                }
                if !diff.is_empty() {
                    pu.line(Line::new("measured − design", PlotPoints::new(diff)));
                }
            });
        phase_and_delay(ui, phase, delay, w);
    });
    save_png(
        ui,
        v,
        t.points
            .iter()
            .map(|p| (p.freq_hz, p.mag_db, p.coherence >= 0.9))
            .collect(),
        design.map(|d| (d, offset)),
        fs,
    );
}

/// The measured phase and group delay, side by side.
fn phase_and_delay(ui: &mut egui::Ui, phase: Vec<[f64; 2]>, delay: Vec<[f64; 2]>, w: f32) {
    Plot::new("measure-phase")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .width(w)
        .height(ui.available_height().max(120.0))
        .x_axis_label("frequency (log10 Hz)")
        .y_axis_label("phase (°)")
        .show(ui, |pu| {
            pu.points(Points::new("phase", PlotPoints::new(phase)).radius(1.5));
        });
    Plot::new("measure-delay")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .width(w)
        .height(ui.available_height().max(120.0))
        .x_axis_label("frequency (log10 Hz)")
        .y_axis_label("group delay (ms)")
        .show(ui, |pu| {
            pu.points(Points::new("group delay", PlotPoints::new(delay)).radius(1.5));
        });
}

/// The stepped sine's gains over the design.
fn stepped(
    ui: &mut egui::Ui,
    v: &mut MeasureView,
    steps: &[crate::measure::sine::Step],
    amplitude_uv: f64,
    design: Option<&[Section]>,
    fs: f64,
) {
    let db_design = |f: f64| {
        design.map(|d| crate::numeric::db20(crate::dsp::response::magnitude(d, f, fs).max(1e-12)))
    };
    let pts: Vec<(f64, f64, bool)> = steps
        .iter()
        .map(|s| {
            (
                s.freq_hz,
                crate::numeric::db20(s.amplitude_uv / amplitude_uv),
                true,
            )
        })
        .collect();
    ui.label(format!(
        "{} steady steps: {}",
        steps.len(),
        pts.iter()
            .map(|p| format!("{:.2} Hz {:+.2} dB", p.0, p.1))
            .collect::<Vec<_>>()
            .join(" · ")
    ));
    let line: Vec<[f64; 2]> =
        crate::dsp::response::log_frequencies(0.1, crate::dsp::highest_corner_hz(fs), 200)
            .into_iter()
            .filter_map(|f| db_design(f).map(|d| [f.log10(), d]))
            .collect();
    Plot::new("measure-steps")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .height(ui.available_height().max(120.0) - 30.0)
        .legend(Legend::default())
        .x_axis_label("frequency (log10 Hz)")
        .y_axis_label("gain (dB)")
        .show(ui, |pu| {
            pu.points(
                Points::new(
                    "steps",
                    PlotPoints::new(pts.iter().map(|p| [p.0.log10(), p.1]).collect()),
                )
                .radius(4.0),
            );
            if !line.is_empty() {
                pu.line(Line::new("design", PlotPoints::new(line)));
            }
        });
    save_png(ui, v, pts, design.map(|d| (d, 0.0)), fs);
}

/// The noise figures and the density.
fn noise(ui: &mut egui::Ui, n: &crate::measure::noise::Noise) {
    ui.label(format!(
        "{:.1}–{:.0} Hz: {:.2} µV rms, {:.1} µV p-p (largest over 10 s) against {:.0} µV p-p: {}; white floor {:.3} µV/√Hz; 1/f corner {}",
        n.band_hz.0,
        n.band_hz.1,
        n.rms_uv,
        n.p2p_uv,
        n.limit_p2p_uv,
        if n.pass { "pass" } else { "FAIL" },
        n.floor_uv_per_rthz,
        n.corner_hz.map_or("not seen".into(), |c| format!("{c:.2} Hz"))
    ));
    let d: Vec<[f64; 2]> = n
        .density_uv_per_rthz
        .iter()
        .map(|p| [p[0].log10(), p[1].max(1e-9).log10()])
        .collect();
    Plot::new("measure-noise")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .height(ui.available_height().max(120.0))
        .x_axis_label("frequency (log10 Hz)")
        .y_axis_label("density (log10 µV/√Hz)")
        .show(ui, |pu| {
            pu.line(Line::new("density", PlotPoints::new(d)));
        });
}

fn save_png(
    ui: &mut egui::Ui,
    v: &mut MeasureView,
    pts: Vec<(f64, f64, bool)>,
    design: Option<(&[Section], f64)>,
    fs: f64,
) {
    ui.horizontal(|ui| {
        ui.add(egui::TextEdit::singleline(&mut v.png).desired_width(160.0));
        if ui
            .button("Save PNG")
            .on_hover_text("The measured response over the design, for a lab report.")
            .clicked()
        {
            v.saved = Some(
                match crate::export::plot_png::response_png(
                    std::path::Path::new(&v.png),
                    &pts,
                    design,
                    fs,
                    "leadline: measured response",
                ) {
                    Ok(()) => format!("saved {}", v.png),
                    Err(e) => e.to_string(),
                },
            );
        }
        if let Some(s) = &v.saved {
            ui.label(s);
        }
    });
}
