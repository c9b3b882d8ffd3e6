//! The chain's response: magnitude, phase and group delay over a logarithmic frequency axis,
//! recomputed only when the chain or the rate changes.

use eframe::egui;
use egui_plot::{GridMark, Line, Plot, PlotPoints, VLine};

use crate::dsp::Design;
use crate::dsp::chain::ChainSettings;
use crate::dsp::response::{self, Point, Summary};

/// Points on the frequency axis.
const POINTS: usize = 400;

/// A computed response, kept until the chain changes.
#[derive(Debug, Clone, Default)]
pub struct ResponseCache {
    key: Option<(ChainSettings, f64)>,
    points: Vec<Point>,
    summary: Option<Summary>,
    error: Option<String>,
    /// The standards' checks for monitoring and for diagnostic use.
    conform: Option<[crate::conform::Conformance; 2]>,
}

impl ResponseCache {
    /// Recomputes from the design in force (the DSP thread's) when it changed; `refused` is
    /// why the chain last asked for was not taken, if it was not. No design yet (a source whose
    /// rate is not known before its first samples): the view says so.
    pub fn update_running(&mut self, design: Option<&Design>, refused: Option<&str>) {
        let Some(design) = design else {
            self.key = None;
            self.points.clear();
            self.summary = None;
            self.conform = None;
            self.error =
                Some("the chain's response appears once the source's sample rate is known".into());
            return;
        };
        self.error = refused.map(|e| format!("not applied: {e}"));
        let (chain, fs) = (*design.settings(), design.fs_hz());
        if self.key == Some((chain, fs)) {
            return;
        }
        self.key = Some((chain, fs));
        let freqs = response::log_frequencies(0.01, 0.499 * fs, POINTS);
        self.points = response::evaluate(design, &freqs, fs);
        self.summary = Some(response::summary(design, fs));
        use crate::conform::{Mode, check};
        self.conform = check(design, Mode::Monitoring, false)
            .ok()
            .zip(check(design, Mode::Diagnostic, false).ok())
            .map(|(m, d)| [m, d]);
    }

    /// The summary line: band edges and the delay the QRS sees.
    pub fn summary_text(&self) -> String {
        match (&self.summary, &self.error) {
            (None, Some(e)) => e.clone(),
            (Some(s), refused) => {
                let lo = s
                    .low_3db_hz
                    .map_or("DC".to_string(), |f| format!("{f:.3} Hz"));
                let hi = s
                    .high_3db_hz
                    .map_or("Nyquist".to_string(), |f| format!("{f:.1} Hz"));
                format!(
                    "−3 dB band {lo} … {hi} · peak gain {:.2} dB · group delay at 10 Hz {:.1} ms{}",
                    if s.peak_db.abs() < 0.005 {
                        0.0
                    } else {
                        s.peak_db
                    },
                    s.delay_10hz_s * 1e3,
                    refused
                        .as_ref()
                        .map_or(String::new(), |e| format!(" · {e}"))
                )
            }
            (None, None) => String::new(),
        }
    }
}

use crate::gui::plot::{decade_spacer, hover_text};

fn hz_ticks(mark: GridMark, _range: &std::ops::RangeInclusive<f64>) -> String {
    let f = 10f64.powf(mark.value);
    if (mark.value - mark.value.round()).abs() > 1e-6 {
        return String::new();
    }
    if f >= 1.0 {
        format!("{f:.0}")
    } else {
        format!("{f}")
    }
}

fn freq_plot(id: &str, y_label: &str, height: f32, width: f32, span: (f64, f64)) -> Plot<'static> {
    Plot::new(id.to_string())
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .include_x(span.0)
        .include_x(span.1)
        .height(height)
        .width(width)
        .x_axis_label("frequency (Hz)")
        .y_axis_label(y_label.to_string())
        .x_grid_spacer(decade_spacer)
        .x_axis_formatter(hz_ticks)
        .allow_drag(false)
        .allow_zoom(false)
        .allow_scroll(false)
        .allow_boxed_zoom(false)
        .label_formatter(|pos| Some(hover_text(pos, true, "")))
}

/// The standards' checks in a line, failures in the warning colour, with the advice.
fn conform_lines(
    ui: &mut egui::Ui,
    m: &crate::conform::Conformance,
    d: &crate::conform::Conformance,
) {
    let mark = |ok: bool| if ok { "pass:" } else { "FAIL:" };
    let warn = ui.visuals().warn_fg_color;
    let line = |ui: &mut egui::Ui, ok: bool, text: String| {
        if ok {
            ui.label(text);
        } else {
            ui.colored_label(warn, text);
        }
    };
    ui.horizontal_wrapped(|ui| {
        let imp = m.pass.impulse_undershoot && m.pass.impulse_slope;
        line(
            ui,
            imp,
            format!(
                "{} impulse test: undershoot {:.0} µV (≤ 100), slope {:.0} µV/s (≤ 300)",
                mark(imp),
                m.impulse_undershoot_uv,
                m.impulse_slope_uv_per_s
            ),
        );
        ui.separator();
        line(
            ui,
            m.pass.st_shift,
            format!("{} ST shift {:.0} µV", mark(m.pass.st_shift), m.st_shift_uv),
        );
        ui.separator();
        let upper = m
            .upper_corner_hz
            .map_or("no upper corner".to_string(), |f| {
                format!("upper corner {f:.1} Hz")
            });
        line(
            ui,
            m.pass.gain_at_0_67_hz && m.pass.upper_corner,
            format!(
                "{} monitoring: {:.2} dB at 0.67 Hz (≥ −3), {upper} (≥ 40)",
                mark(m.pass.gain_at_0_67_hz && m.pass.upper_corner),
                m.gain_db_at_0_67_hz
            ),
        );
        ui.separator();
        line(
            ui,
            d.pass.gain_at_0_67_hz && d.pass.upper_corner,
            format!(
                "{} diagnostic: ≥ −0.9 dB at 0.67 Hz, ≥ 150 Hz",
                mark(d.pass.gain_at_0_67_hz && d.pass.upper_corner)
            ),
        );
    })
    .response
    .on_hover_text(format!(
        "The ECG standards' checks of this chain (leadline conform): {}",
        m.advice.first().map_or("all pass.", String::as_str)
    ));
}

/// Draws the summary line, the standards' checks and the three plots side by side.
pub fn show(
    ui: &mut egui::Ui,
    cache: &ResponseCache,
    chain: &ChainSettings,
    colour: egui::Color32,
    built: Option<&[crate::analog::parts::Stage]>,
) {
    ui.label(cache.summary_text());
    if let Some([m, d]) = &cache.conform {
        conform_lines(ui, m, d);
    }
    let pts = &cache.points;
    if pts.is_empty() {
        return;
    }
    let x = |p: &Point| p.freq_hz.log10();
    let width = ((ui.available_width() - 16.0) / 3.0).max(120.0);
    let span = (x(&pts[0]), x(&pts[pts.len() - 1]));
    let height = (ui.available_height() - 4.0).max(100.0);
    let corners: Vec<f64> = [
        chain.highpass.enabled.then_some(chain.highpass.corner_hz),
        chain.notch.enabled.then_some(chain.notch.mains_hz),
        chain.lowpass.enabled.then_some(chain.lowpass.corner_hz),
    ]
    .into_iter()
    .flatten()
    .collect();
    ui.horizontal(|ui| {
        let mag: Vec<[f64; 2]> = pts.iter().map(|p| [x(p), p.mag_db.max(-80.0)]).collect();
        freq_plot("response-mag", "gain (dB)", height, width, span)
            .legend(egui_plot::Legend::default().position(egui_plot::Corner::LeftBottom))
            .include_y(-80.0)
            .include_y(3.0)
            .show(ui, |pu| {
                for &c in &corners {
                    pu.vline(VLine::new("", c.log10()).color(egui::Color32::from_gray(90)));
                }
                pu.line(Line::new("digital", PlotPoints::new(mag)).color(colour));
                if let Some(stages) = built.filter(|s| !s.is_empty()) {
                    // The chain built from the parts of the Parts view, and how far it is off.
                    let analog: Vec<[f64; 2]> = pts
                        .iter()
                        .map(|p| {
                            [
                                x(p),
                                crate::analog::parts::chain_db(stages, p.freq_hz).max(-80.0),
                            ]
                        })
                        .collect();
                    let diff: Vec<[f64; 2]> = pts
                        .iter()
                        .filter(|p| p.mag_db > -40.0)
                        .map(|p| {
                            [
                                x(p),
                                crate::analog::parts::chain_db(stages, p.freq_hz) - p.mag_db,
                            ]
                        })
                        .collect();
                    pu.line(
                        Line::new("built from parts", PlotPoints::new(analog))
                            .color(egui::Color32::from_gray(170)),
                    );
                    pu.line(
                        Line::new("built − digital (dB)", PlotPoints::new(diff))
                            .color(egui::Color32::from_rgb(214, 150, 60)),
                    );
                }
            });
        let phase: Vec<[f64; 2]> = pts.iter().map(|p| [x(p), p.phase_deg]).collect();
        freq_plot("response-phase", "phase (°)", height, width, span).show(ui, |pu| {
            pu.line(Line::new("phase", PlotPoints::new(phase)).color(colour));
        });
        // Group delay is undefined in the notch's zero; a break in the line, not a spike.
        let delay: Vec<[f64; 2]> = pts
            .iter()
            .filter(|p| p.group_delay_s.is_finite() && p.mag_db > -40.0)
            .map(|p| [x(p), p.group_delay_s * 1e3])
            .collect();
        freq_plot("response-delay", "group delay (ms)", height, width, span)
            .include_y(0.0)
            .show(ui, |pu| {
                pu.line(Line::new("group delay", PlotPoints::new(delay)).color(colour));
            });
    });
}
