//! The parts view: the chain realised with standard parts, a table of stages, and the analog
//! response over the digital one with their difference in dB and the tolerance envelope.

use eframe::egui;
use egui_plot::{Legend, Line, LineStyle, Plot, PlotPoints};

use crate::analog::engineering;
use crate::analog::eseries::Series;
use crate::analog::parts::{PartsOptions, Stage, chain_db, envelope, realise};
use crate::analog::tolerance::Tolerances;
use crate::dsp::chain::ChainSettings;
use crate::dsp::response;
use crate::gui::plot::{FILTERED_COLOUR, RAW_COLOUR, decade_spacer};

/// What a realisation depends on.
type PartsKey = (
    ChainSettings,
    String,
    Series,
    u64,
    u64,
    u64,
    Option<ChainSettings>,
);

/// A realisation made off the UI thread.
#[derive(Debug)]
struct Realised {
    stages: Result<Vec<Stage>, String>,
    curves: Vec<[f64; 5]>,
}

/// The view's inputs and its cached result.
#[derive(Debug, Clone)]
pub struct PartsView {
    caps_text: String,
    series: Series,
    r_tol_pct: f64,
    c_tol_pct: f64,
    budget: crate::analog::gain_budget::Budget,
    key: Option<PartsKey>,
    /// The realisation running on its own thread (the Monte Carlo takes tens of ms: never in
    /// a frame); its result replaces `stages` and `curves` when it arrives.
    job: Option<crossbeam_channel::Receiver<Realised>>,
    /// Realisations finished since the view was made (for the tests and the bench).
    pub realisations: u64,
    stages: Result<Vec<Stage>, String>,
    curves: Vec<[f64; 5]>,
    /// Base path of the files "Save" writes (.svg, .cir, .csv are added).
    pub save_base: String,
    /// The op-amps' input bias current, nA (for the offsets shown).
    bias_na: f64,
}

impl Default for PartsView {
    fn default() -> Self {
        Self {
            caps_text: "1u 220n 100n 47n 10n".into(),
            save_base: "chain".into(),
            bias_na: 1.0,
            series: Series::E24,
            r_tol_pct: 1.0,
            c_tol_pct: 5.0,
            budget: Default::default(),
            key: None,
            job: None,
            realisations: 0,
            stages: Ok(Vec::new()),
            curves: Vec::new(),
        }
    }
}

fn parse_cap(t: &str) -> Option<f64> {
    let t = t.trim().trim_end_matches('F');
    let (num, mult) = match t.chars().last()? {
        'p' => (&t[..t.len() - 1], 1e-12),
        'n' => (&t[..t.len() - 1], 1e-9),
        'u' | 'µ' => (&t[..t.len() - t.chars().last()?.len_utf8()], 1e-6),
        'm' => (&t[..t.len() - 1], 1e-3),
        _ => (t, 1.0),
    };
    num.parse::<f64>()
        .ok()
        .map(|v| v * mult)
        .filter(|v| *v > 0.0)
}

impl PartsView {
    /// The stages built for the chain last given to [`Self::update`].
    pub fn stages(&self) -> Option<&[Stage]> {
        self.stages.as_deref().ok()
    }

    /// True while a realisation runs.
    pub fn busy(&self) -> bool {
        self.job.is_some()
    }

    /// Takes a finished realisation, if one arrived.
    fn poll(&mut self) {
        let Some(rx) = &self.job else { return };
        match rx.try_recv() {
            Ok(r) => {
                self.stages = r.stages;
                self.curves = r.curves;
                self.realisations += 1;
                self.job = None;
            }
            Err(crossbeam_channel::TryRecvError::Empty) => {}
            Err(crossbeam_channel::TryRecvError::Disconnected) => self.job = None,
        }
    }

    /// Re-realises, on a thread of its own, when the chain or the inputs changed; the last
    /// result stays on screen meanwhile. `repaint` is called when a result is ready. The parts
    /// realise the design in force (`design`, the DSP thread's: the same truth as the response
    /// view), or the chain as set (`chain`) while no design exists yet.
    pub fn update(
        &mut self,
        chain: &ChainSettings,
        design: Option<std::sync::Arc<crate::dsp::Design>>,
        repaint: impl Fn() + Send + 'static,
    ) {
        self.poll();
        let fs = design.as_ref().map_or(0.0, |d| d.fs_hz());
        let chain = &design.as_ref().map_or(*chain, |d| *d.settings());
        let key = (
            *chain,
            self.caps_text.clone(),
            self.series,
            self.r_tol_pct.to_bits(),
            self.c_tol_pct.to_bits(),
            fs.to_bits(),
            design.as_ref().map(|d| *d.settings()),
        );
        // Unchanged, or a realisation still runs (the next frame after it starts the newest).
        if self.key.as_ref() == Some(&key) || self.job.is_some() {
            return;
        }
        self.key = Some(key);
        let caps: Option<Vec<f64>> = self
            .caps_text
            .split([',', ' ', ';'])
            .filter(|s| !s.is_empty())
            .map(parse_cap)
            .collect();
        let Some(caps) = caps else {
            self.stages = Err("capacitors: write values like 1u 220n 100n".into());
            self.curves.clear();
            return;
        };
        let tol = Tolerances {
            resistor: self.r_tol_pct / 100.0,
            capacitor: self.c_tol_pct / 100.0,
            draws: 2000,
            seed: 1,
        };
        let opts = PartsOptions {
            series: self.series,
            capacitors: caps,
            tolerances: tol,
            inamp: None,
            bias_current_a: 1e-9,
        };
        let chain = *chain;
        let (tx, rx) = crossbeam_channel::bounded(1);
        let spawned = std::thread::Builder::new()
            .name("leadline-parts".into())
            .spawn(move || {
                let stages = realise(&chain, &opts).map_err(|e| e.to_string());
                let mut curves = Vec::new();
                if let (Ok(stages), Some(digital)) = (&stages, design) {
                    let freqs =
                        response::log_frequencies(0.05, crate::dsp::highest_corner_hz(fs), 80);
                    let env = envelope(stages, &freqs, &tol);
                    for (f, (lo, hi)) in freqs.iter().zip(env) {
                        let d =
                            crate::numeric::db20(response::magnitude(&digital, *f, fs).max(1e-12));
                        let a = chain_db(stages, *f);
                        curves.push([f.log10(), d, a, lo, hi]);
                    }
                }
                let _ = tx.send(Realised { stages, curves });
                repaint();
            });
        match spawned {
            Ok(_) => self.job = Some(rx),
            Err(e) => self.stages = Err(format!("cannot start the parts thread: {e}")),
        }
    }

    /// Waits (up to `limit`) for a running realisation and takes it (tests, screenshots).
    pub fn wait(&mut self, limit: std::time::Duration) {
        let deadline = std::time::Instant::now() + limit;
        while self.job.is_some() && std::time::Instant::now() < deadline {
            std::thread::sleep(std::time::Duration::from_millis(5));
            self.poll();
        }
    }
}

/// Draws the view.
pub fn show(
    ui: &mut egui::Ui,
    view: &mut PartsView,
    chain: &ChainSettings,
    design: Option<std::sync::Arc<crate::dsp::Design>>,
    report: &crate::gui::model::FileReport,
) -> Option<crate::gui::action::Action> {
    let mut action = None;
    controls(ui, view);
    let ctx = ui.ctx().clone();
    view.update(chain, design, move || ctx.request_repaint());
    if view.busy() && view.realisations == 0 {
        ui.label("Choosing parts…");
        return None;
    }
    let stages = match &view.stages {
        Ok(s) => s.clone(),
        Err(e) => {
            ui.colored_label(ui.visuals().error_fg_color, e);
            return None;
        }
    };
    let width = ui.available_width();
    let height = ui.available_height().max(120.0);
    ui.horizontal_top(|ui| {
        ui.allocate_ui(egui::vec2(width * 0.62, height), |ui| {
            // A wide row (the twin-T's parts) scrolls sideways inside the table's share, the
            // text below wraps there: the response plot keeps the rest of the width.
            ui.set_max_width(width * 0.62);
            egui::ScrollArea::vertical()
                .id_salt("parts-table")
                .auto_shrink([false, false])
                .show(ui, |ui| {
                    ui.vertical(|ui| {
                        egui::ScrollArea::horizontal()
                            .id_salt("parts-grid-scroll")
                            .show(ui, |ui| table(ui, &stages));
                        ui.horizontal(|ui| {
                            ui.label("op-amp input bias");
                            ui.add(
                                egui::DragValue::new(&mut view.bias_na)
                                    .range(0.001..=1000.0)
                                    .speed(0.1)
                                    .suffix(" nA"),
                            )
                            .on_hover_text(
                                "From your op-amp's datasheet: the offsets below scale with it.",
                            );
                        });
                        details(ui, &stages, view.bias_na);
                        let c = crate::analog::circuit::build(
                            &stages,
                            view.series,
                            crate::analog::circuit::Tol {
                                resistor_pct: view.r_tol_pct,
                                capacitor_pct: view.c_tol_pct,
                            },
                        );
                        action = save_row(ui, view, &c, &chain.describe(), report);
                        egui::CollapsingHeader::new("Schematic")
                            .default_open(true)
                            .show(ui, |ui| {
                                draw_schematic(ui, &crate::analog::schematic::draw(&c))
                            });
                    })
                });
        });
        response_plot(ui, &view.curves, height);
    });
    action
}

/// Capacitors, resistor series and tolerances; the gain budget.
fn controls(ui: &mut egui::Ui, view: &mut PartsView) {
    ui.horizontal(|ui| {
        ui.label("my capacitors");
        ui.add(egui::TextEdit::singleline(&mut view.caps_text).desired_width(180.0))
            .on_hover_text("The capacitor values you have, e.g. 1u 220n 100n; resistors are picked from the series.");
        egui::ComboBox::from_id_salt("parts-series")
            .selected_text(format!("{:?}", view.series))
            .show_ui(ui, |ui| {
                for s in [Series::E6, Series::E12, Series::E24, Series::E48, Series::E96, Series::E192] {
                    ui.selectable_value(&mut view.series, s, format!("{s:?}"));
                }
            })
            .response
            .on_hover_text("Resistor series (IEC 60063).");
        ui.add(egui::Slider::new(&mut view.r_tol_pct, 0.1..=5.0).text("R tol").suffix(" %"));
        ui.add(egui::Slider::new(&mut view.c_tol_pct, 1.0..=20.0).text("C tol").suffix(" %"));
    });
    ui.horizontal(|ui| {
        ui.label("gain budget:");
        ui.add(
            egui::DragValue::new(&mut view.budget.offset_mv)
                .range(0.0..=1000.0)
                .suffix(" mV offset"),
        )
        .on_hover_text("Electrode offset to tolerate, ± (ECG standards ask for ±300 mV).");
        ui.add(
            egui::DragValue::new(&mut view.budget.inamp_swing_v)
                .range(0.05..=15.0)
                .speed(0.05)
                .suffix(" V swing"),
        )
        .on_hover_text("In-amp output swing either side of its reference.");
        ui.add(
            egui::DragValue::new(&mut view.budget.fill)
                .range(0.05..=1.0)
                .speed(0.01)
                .suffix(" of ADC half range"),
        )
        .on_hover_text("How much of the ADC's half range a 1 mV R wave should fill.");
        let r = crate::analog::gain_budget::compute(&view.budget);
        ui.label(format!(
            "first stage ≤ {:.1} · total {:.0} · after it {:.0} · {:.2} µV/LSB",
            r.max_first_gain, r.total_gain, r.second_gain, r.uv_per_lsb
        ));
        for w in &r.warnings {
            ui.colored_label(ui.visuals().warn_fg_color, w);
        }
    });
}

/// One row a stage: design, built, error, Q, spread and parts.
fn table(ui: &mut egui::Ui, stages: &[Stage]) {
    egui::Grid::new("parts-grid").striped(true).show(ui, |ui| {
        for h in ["stage", "design", "built", "error", "Q", "5–95 %", "parts"] {
            ui.label(egui::RichText::new(h).strong());
        }
        ui.end_row();
        for s in stages {
            ui.label(s.topology);
            ui.label(s.design_hz.map_or(String::new(), |f| format!("{f:.3} Hz")));
            ui.label(
                s.realised_hz
                    .map_or(String::new(), |f| format!("{f:.3} Hz")),
            );
            ui.label(format!("{:+.2} %", s.error_pct));
            ui.label(s.q.map_or(String::new(), |q| format!("{q:.3}")));
            ui.label(
                s.spread
                    .map_or(String::new(), |p| format!("{:.3}–{:.3}", p.p5_hz, p.p95_hz)),
            );
            let parts: Vec<String> = s
                .parts
                .iter()
                .map(|(k, v)| format!("{k} {}", engineering(*v, k)))
                .collect();
            ui.label(parts.join(", "));
            ui.end_row();
        }
    });
}

/// Where the schematic, netlist and BOM go; the app's job runner writes them.
fn save_row(
    ui: &mut egui::Ui,
    view: &mut PartsView,
    c: &crate::analog::circuit::Circuit,
    title: &str,
    report: &crate::gui::model::FileReport,
) -> Option<crate::gui::action::Action> {
    let mut action = None;
    ui.horizontal(|ui| {
        ui.add(
            egui::TextEdit::singleline(&mut view.save_base)
                .desired_width(140.0),
        )
        .on_hover_text("Base path: the schematic goes to .svg, the SPICE netlist to .cir, the parts list to -bom.csv.");
        if ui.button("Save schematic, netlist, BOM").clicked() {
            action = Some(crate::gui::action::Action::Files(
                crate::gui::action::FilesAction::PartsFiles {
                    base: view.save_base.clone(),
                    circuit: Box::new(c.clone()),
                    title: title.to_string(),
                },
            ));
        }
        if !report.message.is_empty() {
            ui.label(egui::RichText::new(&report.message).small());
        }
    });
    action
}

/// The digital chain, the chain built from parts, its tolerance band and the difference.
fn response_plot(ui: &mut egui::Ui, c: &[[f64; 5]], height: f32) {
    let pts = |i: usize| PlotPoints::new(c.iter().map(|r| [r[0], r[i]]).collect());
    Plot::new("parts-response")
        .show_background(false)
        .grid_spacing(crate::gui::plot::GRID_SPACING)
        .height(height)
        .legend(Legend::default().position(egui_plot::Corner::LeftBottom))
        .x_axis_label("frequency (Hz)")
        .y_axis_label("gain (dB)")
        .x_grid_spacer(decade_spacer)
        .x_axis_formatter(|m, _| {
            if (m.value - m.value.round()).abs() > 1e-6 {
                String::new()
            } else {
                format!("{}", 10f64.powf(m.value))
            }
        })
        .include_y(-40.0)
        .include_y(3.0)
        .allow_drag(false)
        .allow_zoom(false)
        .allow_scroll(false)
        .show(ui, |pu| {
            pu.line(Line::new("digital chain", pts(1)).color(FILTERED_COLOUR));
            pu.line(Line::new("built from parts", pts(2)).color(RAW_COLOUR));
            pu.line(
                Line::new("tolerance 5–95 %", pts(3))
                    .color(egui::Color32::from_gray(110))
                    .style(LineStyle::Dashed { length: 4.0 }),
            );
            pu.line(
                Line::new("tolerance 5–95 %", pts(4))
                    .color(egui::Color32::from_gray(110))
                    .style(LineStyle::Dashed { length: 4.0 }),
            );
            let diff: Vec<[f64; 2]> = c.iter().map(|r| [r[0], r[2] - r[1]]).collect();
            pu.line(
                Line::new("built − digital", PlotPoints::new(diff))
                    .color(egui::Color32::from_rgb(214, 150, 60)),
            );
        });
}

/// Twin-T tolerance figures, advice and each stage's op-amp needs (offsets at `bias_na`).
fn details(ui: &mut egui::Ui, stages: &[Stage], bias_na: f64) {
    for s in stages {
        if let (Some(d), Some(m)) = (s.notch_depth_db, s.miss_share) {
            ui.label(format!(
                "twin-T {:.0} Hz: depth at the mains {:.1} / {:.1} / {:.1} dB (p5 / p50 / p95); {:.0} % of builds miss the mains by more than half the bandwidth",
                s.design_hz.unwrap_or(0.0),
                d.p5,
                d.p50,
                d.p95,
                100.0 * m
            ));
        }
        if let (Some(c), Some(band), Some(share)) =
            (s.notch_centre_hz, s.mains_band_hz, s.centre_in_band_share)
        {
            ui.label(format!(
                "notch centre {:.2} / {:.2} / {:.2} Hz against the mains band {:.1}–{:.1} Hz (±1 %, EN 50160): {:.0} % of builds inside it",
                c.p5, c.p50, c.p95, band.0, band.1, 100.0 * share
            ));
        }
        if let Some(a) = &s.advice {
            ui.colored_label(ui.visuals().warn_fg_color, a);
        }
    }
    let needs: Vec<String> = stages
        .iter()
        .filter_map(|s| {
            s.opamp.filter(|o| o.gbw_hz > 0.0).map(|o| {
                format!(
                    "{}: GBW ≥ {:.0} kHz, offset {:.2} mV",
                    s.topology,
                    o.gbw_hz / 1e3,
                    o.offset_mv * bias_na * 1e-9 / o.bias_current_a.max(1e-18)
                )
            })
        })
        .collect();
    if !needs.is_empty() {
        ui.label(
            egui::RichText::new(format!(
                "op-amps (GBW ≥ 100·Q·f0, common practice; offset from the bias current above): {}",
                needs.join(" · ")
            ))
            .small(),
        );
    }
}

/// Writes BASE.svg, BASE.cir and BASE-bom.csv; returns what was done, in a line.
pub fn save(base: &str, c: &crate::analog::circuit::Circuit, title: &str) -> String {
    use crate::analog::{circuit, schematic};
    let files = [
        (format!("{base}.svg"), schematic::svg(&schematic::draw(c))),
        (format!("{base}.cir"), circuit::netlist(c, title)),
        (format!("{base}-bom.csv"), circuit::bom(c)),
    ];
    for (path, text) in &files {
        if let Err(e) = std::fs::write(path, text) {
            return format!("{path}: {e}");
        }
    }
    format!("wrote {base}.svg, {base}.cir, {base}-bom.csv")
}

/// The schematic drawn with the painter, scaled to the width available.
fn draw_schematic(ui: &mut egui::Ui, d: &crate::analog::schematic::Drawing) {
    use crate::analog::schematic::Prim;
    let scale = (ui.available_width() as f64 / d.width).min(1.0) as f32;
    let size = egui::vec2(d.width as f32 * scale, d.height as f32 * scale);
    let (rect, _) = ui.allocate_exact_size(size, egui::Sense::hover());
    let p = ui.painter_at(rect);
    let colour = ui.visuals().text_color();
    let stroke = egui::Stroke::new(1.2, colour);
    let at = |x: f64, y: f64| rect.min + egui::vec2(x as f32 * scale, y as f32 * scale);
    let font = egui::FontId::proportional((11.0 * scale).max(7.0));
    for prim in &d.prims {
        match prim {
            Prim::Line(x1, y1, x2, y2) => {
                p.line_segment([at(*x1, *y1), at(*x2, *y2)], stroke);
            }
            Prim::Dot(x, y) => {
                p.circle_filled(at(*x, *y), 2.5 * scale, colour);
            }
            Prim::Text(x, y, t, centre) => {
                let anchor = if *centre {
                    egui::Align2::CENTER_BOTTOM
                } else {
                    egui::Align2::LEFT_BOTTOM
                };
                p.text(at(*x, *y), anchor, t, font.clone(), colour);
            }
        }
    }
}
