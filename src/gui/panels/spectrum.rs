//! The running spectrum: PSD before and after the chain, the chain's gain overlaid, the mains
//! lines marked with their measured RMS, and a held "before" estimate with the change at each
//! mains line (for example: charger plugged in, then unplugged).

use std::sync::Arc;

use eframe::egui;

use crate::gui::action::Action;
use egui_plot::{
    AxisHints, HPlacement, Line, LineStyle, Plot, PlotPoint, PlotPoints, Points, Text,
};

use crate::analysis::mains::MainsReport;
use crate::dsp::Section;
use crate::dsp::response;
use crate::gui::plot::{FILTERED_COLOUR, RAW_COLOUR, decade_spacer, hover_text};
use crate::msg::{Control, SpectrumFrame};

/// Colour of the held estimate.
pub const BEFORE_COLOUR: egui::Color32 = egui::Color32::from_rgb(214, 150, 60);
/// Colour of the chain-gain overlay.
const GAIN_COLOUR: egui::Color32 = egui::Color32::from_gray(150);
/// Lowest level drawn, dB re 1 µV²/Hz.
const FLOOR_DB: f64 = -60.0;

/// The spectrum view's own settings and the held estimate.
#[derive(Debug, Clone)]
pub struct SpectrumView {
    /// Logarithmic frequency axis (else linear).
    pub log_freq: bool,
    /// Draw the PSD after the chain too.
    pub show_filtered: bool,
    /// Welch segment; 0 = about 4 s.
    pub segment: usize,
    /// The held "before" estimate: the app state's, handed over before drawing.
    pub before: Option<Arc<SpectrumFrame>>,
    /// The chain's gain at the estimate's bins, reduced for drawing: computed once per estimate
    /// and chain, not at every frame.
    gain_cache: Option<GainCache>,
    /// The estimate's curves, reduced for drawing, per estimate.
    curve_cache: Option<CurveCache>,
    /// The held estimate's curve, reduced for drawing, once per hold.
    before_cache: Option<(u64, bool, usize, Vec<[f64; 2]>)>,
    /// Times the curves were reduced for drawing (once per estimate, not per frame).
    pub rebuilds: u64,
}

#[derive(Debug, Clone, PartialEq)]
struct CurveCache {
    serial: u64,
    log: bool,
    columns: usize,
    raw: Vec<[f64; 2]>,
    filtered: Vec<[f64; 2]>,
}

#[derive(Debug, Clone, PartialEq)]
struct GainCache {
    serial: u64,
    log: bool,
    top_db: f64,
    columns: usize,
    sections: Vec<crate::dsp::Section>,
    points: Vec<[f64; 2]>,
}

impl Default for SpectrumView {
    fn default() -> Self {
        Self {
            log_freq: true,
            show_filtered: true,
            segment: 0,
            before: None,
            gain_cache: None,
            curve_cache: None,
            before_cache: None,
            rebuilds: 0,
        }
    }
}

fn db(v: f64) -> f64 {
    (crate::numeric::db10(v.max(1e-30))).max(FLOOR_DB)
}

/// Change of each mains line between two measurements, dB (20·log10 of the RMS ratio).
pub fn line_changes(before: &MainsReport, after: &MainsReport) -> Vec<(u32, f64)> {
    after
        .harmonics
        .iter()
        .filter_map(|a| {
            let b = before.harmonics.iter().find(|b| b.order == a.order)?;
            Some((
                a.order,
                crate::numeric::db20(a.rms_uv.max(1e-9) / b.rms_uv.max(1e-9)),
            ))
        })
        .collect()
}

/// One-line description of a mains report.
pub fn report_text(r: &MainsReport) -> String {
    let lines: Vec<String> = r
        .harmonics
        .iter()
        .map(|h| {
            if h.order == 1 {
                format!("{:.1} µV", h.rms_uv)
            } else {
                format!("{}×: {:.1}", h.order, h.rms_uv)
            }
        })
        .collect();
    let snr = r
        .snr_db
        .map_or(String::new(), |d| format!(" · signal/mains {d:.1} dB"));
    format!(
        "mains {:.2} Hz: {} · ECG band {:.0} µV rms · wander {:.0} µV · muscle {:.1} µV{snr}",
        r.mains_hz,
        lines.join(", "),
        r.band_power.ecg_uv2.sqrt(),
        r.band_power.wander_uv2.sqrt(),
        r.band_power.muscle_uv2.sqrt(),
    )
}

/// Draws the controls and the plot. Returns the Control to send, if the user changed one.
pub fn show(
    ui: &mut egui::Ui,
    frame: Option<&Arc<SpectrumFrame>>,
    sections: Option<&[Section]>,
    view: &mut SpectrumView,
) -> Option<crate::gui::action::Action> {
    draw(ui, frame, sections, view)
}

fn draw(
    ui: &mut egui::Ui,
    frame: Option<&Arc<SpectrumFrame>>,
    sections: Option<&[Section]>,
    view: &mut SpectrumView,
) -> Option<Action> {
    let control = controls(ui, view);
    let Some(frame) = frame else {
        ui.label("Collecting the first spectrum (one segment of signal)…");
        return control;
    };
    mains_text(ui, frame, view);
    let log = view.log_freq;
    let xf = move |f: f64| if log { f.log10() } else { f };
    // About one column per pixel: the lowest and highest point of each, so peaks stay and the line
    // stays continuous without anti-aliasing, at a few thousand vertices less per frame.
    let columns = ui.available_width().max(100.0) as usize;
    let curve = |psd: &crate::dsp::spectrum::Psd| -> Vec<[f64; 2]> {
        let pts: Vec<[f64; 2]> = psd
            .freqs_hz
            .iter()
            .zip(&psd.density)
            .skip(1)
            .map(|(&f, &d)| [xf(f), db(d)])
            .collect();
        decimate(&pts, columns)
    };
    if view
        .curve_cache
        .as_ref()
        .is_none_or(|c| c.serial != frame.serial || c.log != log || c.columns != columns)
    {
        view.rebuilds += 1;
        view.curve_cache = Some(CurveCache {
            serial: frame.serial,
            log,
            columns,
            raw: curve(&frame.raw),
            filtered: curve(&frame.filtered),
        });
    }
    let (raw, filtered) = view
        .curve_cache
        .as_ref()
        .map(|c| (c.raw.clone(), c.filtered.clone()))
        .unwrap_or_default();
    let top = raw.iter().map(|p| p[1]).fold(FLOOR_DB, f64::max).ceil();
    let before = view.before.as_ref().map(|b| {
        let fresh = view
            .before_cache
            .as_ref()
            .is_some_and(|c| c.0 == b.serial && c.1 == log && c.2 == columns);
        if !fresh {
            view.before_cache = Some((b.serial, log, columns, curve(&b.raw)));
        }
        view.before_cache
            .as_ref()
            .map(|c| c.3.clone())
            .unwrap_or_default()
    });
    let plot = axes(ui, top, log);
    plot.show(ui, |pu| {
        if let Some(b) = before {
            pu.line(
                Line::new("before", PlotPoints::new(b))
                    .color(BEFORE_COLOUR)
                    .style(LineStyle::Dashed { length: 6.0 }),
            );
        }
        pu.line(
            Line::new("before the filters", PlotPoints::new(raw.clone()))
                .color(RAW_COLOUR)
                .width(1.5),
        );
        if view.show_filtered {
            pu.line(
                Line::new("after the filters", PlotPoints::new(filtered))
                    .color(FILTERED_COLOUR)
                    .width(1.5),
            );
        }
        if let Some(sections) = sections {
            let gain = chain_gain(view, sections, frame, top, columns);
            pu.line(
                Line::new("chain gain", PlotPoints::new(gain))
                    .color(GAIN_COLOUR)
                    .width(1.5),
            );
        }
        mains_marks(pu, frame, &xf);
    });
    control
}

/// The view's own settings (a new Welch segment goes to the DSP thread); holding a "before" goes to the app (it is the app's state).
fn controls(ui: &mut egui::Ui, view: &mut SpectrumView) -> Option<Action> {
    let mut control = None;
    ui.horizontal(|ui| {
        ui.checkbox(&mut view.log_freq, "log frequency").on_hover_text("Logarithmic or linear frequency axis.");
        ui.checkbox(&mut view.show_filtered, "after the filters").on_hover_text("Also draw the PSD after the chain.");
        let before = view.segment;
        egui::ComboBox::from_id_salt("welch-segment")
            .selected_text(if view.segment == 0 { "segment ≈4 s".to_string() } else { format!("segment {}", view.segment) })
            .show_ui(ui, |ui| {
                ui.selectable_value(&mut view.segment, 0, "≈4 s (auto)");
                for n in [256, 512, 1024, 2048, 4096, 8192, 16384] {
                    ui.selectable_value(&mut view.segment, n, format!("{n} samples"));
                }
            })
            .response
            .on_hover_text("Welch segment length: longer gives finer frequency resolution, shorter a steadier estimate.");
        if view.segment != before {
            control = Some(Action::Control(Control::SpectrumSegment(view.segment)));
        }
        if ui
            .button("Hold as before")
            .on_hover_text("Keep this estimate as the reference and show the change at each mains line (e.g. before unplugging the charger).")
            .clicked()
        {
            control = Some(Action::HoldSpectrum(true));
        }
        if view.before.is_some() && ui.button("Clear before").clicked() {
            control = Some(Action::HoldSpectrum(false));
        }
    });
    control
}

/// The measured mains lines marked on the estimate before the chain, with their RMS.
fn mains_marks(pu: &mut egui_plot::PlotUi, frame: &SpectrumFrame, xf: &dyn Fn(f64) -> f64) {
    let Some(r) = &frame.mains_raw else { return };
    let at = |f: f64| {
        let k = (f / frame.raw.bin_hz).round() as usize;
        frame.raw.density.get(k).map_or(FLOOR_DB, |&d| db(d))
    };
    let marks: Vec<[f64; 2]> = r.harmonics.iter().map(|h| [xf(h.hz), at(h.hz)]).collect();
    pu.points(
        Points::new("mains lines", PlotPoints::new(marks))
            .radius(4.0)
            .color(BEFORE_COLOUR),
    );
    for h in &r.harmonics {
        let label = if h.order == 1 {
            format!("{:.2} Hz\n{:.1} µV", h.hz, h.rms_uv)
        } else {
            format!("{:.1} µV", h.rms_uv)
        };
        pu.text(
            Text::new("", PlotPoint::new(xf(h.hz), at(h.hz) + 4.0), label).color(BEFORE_COLOUR),
        );
    }
}

/// The mains report and, with a spectrum held, the change at each line.
fn mains_text(ui: &mut egui::Ui, frame: &SpectrumFrame, view: &SpectrumView) {
    if let Some(r) = &frame.mains_raw {
        ui.label(report_text(r));
    }
    if let (Some(b), Some(a)) = (
        view.before.as_ref().and_then(|b| b.mains_raw.as_ref()),
        frame.mains_raw.as_ref(),
    ) {
        let parts: Vec<String> = line_changes(b, a)
            .iter()
            .map(|(o, d)| {
                if *o == 1 {
                    format!("fundamental {d:+.1} dB")
                } else {
                    format!("{o}×: {d:+.1} dB")
                }
            })
            .collect();
        ui.colored_label(
            BEFORE_COLOUR,
            format!("now vs before: {}", parts.join(" · ")),
        );
    }
}

/// The plot: dB lines every 10 dB (labelled) and 5 dB, the chain's gain on the right axis
/// (0 dB at the PSD's top `top`), decades on a log frequency axis.
fn axes(ui: &egui::Ui, top: f64, log: bool) -> Plot<'static> {
    let mut plot = Plot::new("spectrum")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .height((ui.available_height() - 4.0).max(100.0))
        .x_axis_label("frequency (Hz)")
        .allow_drag(false)
        .allow_zoom(false)
        .allow_scroll(false)
        .allow_boxed_zoom(false)
        .include_y(FLOOR_DB)
        .include_y(top + 3.0)
        .legend(egui_plot::Legend::default().position(egui_plot::Corner::LeftBottom))
        .y_grid_spacer(|input| {
            // A line every 10 dB (labelled), every 5 dB faint.
            let (lo, hi) = input.bounds;
            let mut marks = Vec::new();
            let mut v = (lo / 5.0).floor() * 5.0;
            while v <= hi {
                let major = (v / 10.0).round() * 10.0 == v;
                marks.push(egui_plot::GridMark {
                    value: v,
                    step_size: if major { 40.0 } else { 5.0 },
                });
                v += 5.0;
            }
            marks
        })
        .custom_y_axes(vec![
            AxisHints::new_y()
                .label("PSD (dB re 1 µV²/Hz)")
                .formatter(|m, _| {
                    if (m.value / 10.0).round() * 10.0 == m.value {
                        format!("{:.0}", m.value)
                    } else {
                        String::new()
                    }
                }),
            AxisHints::new_y()
                .label("chain gain (dB)")
                .placement(HPlacement::Right)
                .formatter(move |m, _| {
                    if (m.value / 10.0).round() * 10.0 == m.value {
                        format!("{:.0}", m.value - top)
                    } else {
                        String::new()
                    }
                }),
        ])
        .label_formatter(move |pos| Some(hover_text(pos, log, " dB")));
    if log {
        plot = plot.x_grid_spacer(decade_spacer).x_axis_formatter(|m, _| {
            if (m.value - m.value.round()).abs() > 1e-6 {
                return String::new();
            }
            let f = 10f64.powf(m.value);
            if f >= 1.0 {
                format!("{f:.0}")
            } else {
                format!("{f}")
            }
        });
    }
    plot
}

/// The chain's gain at the PSD's bins, shifted so 0 dB sits at `top` (kept while nothing
/// changes).
fn chain_gain(
    view: &mut SpectrumView,
    sections: &[Section],
    frame: &SpectrumFrame,
    top: f64,
    columns: usize,
) -> Vec<[f64; 2]> {
    let log = view.log_freq;
    let xf = move |f: f64| if log { f.log10() } else { f };
    let fresh = view.gain_cache.as_ref().is_none_or(|c| {
        c.serial != frame.serial
            || c.log != log
            || c.top_db != top
            || c.columns != columns
            || c.sections.as_slice() != sections
    });
    if fresh {
        let pts: Vec<[f64; 2]> = frame
            .raw
            .freqs_hz
            .iter()
            .skip(1)
            .map(|&f| {
                [
                    xf(f),
                    (crate::numeric::db20(response::magnitude(sections, f, frame.fs_hz)))
                        .max(FLOOR_DB - top)
                        + top,
                ]
            })
            .collect();
        view.gain_cache = Some(GainCache {
            serial: frame.serial,
            log,
            top_db: top,
            columns,
            sections: sections.to_vec(),
            points: decimate(&pts, columns),
        });
    }
    view.gain_cache
        .as_ref()
        .map(|c| c.points.clone())
        .unwrap_or_default()
}

pub use crate::numeric::decimate_xy as decimate;

#[cfg(test)]
mod decimate_tests {
    use super::decimate;

    #[test]
    fn each_column_keeps_its_extremes_in_order() {
        // 1000 points over x 0..1, a spike at x = 0.5: 10 columns keep it and stay sorted.
        let pts: Vec<[f64; 2]> = (0..1000)
            .map(|i| {
                let x = f64::from(i) / 999.0;
                [
                    x,
                    if i == 500 {
                        100.0
                    } else {
                        (f64::from(i) * 0.1).sin()
                    },
                ]
            })
            .collect();
        let d = decimate(&pts, 10);
        assert!(d.len() <= 22, "{}", d.len());
        assert!(d.windows(2).all(|w| w[0][0] <= w[1][0]));
        assert!(d.iter().any(|p| p[1] == 100.0));
        assert_eq!(decimate(&pts[..15], 10), pts[..15].to_vec());
    }
}
