//! The window's layout: top bar, status bar, the controls column and the central traces with
//! the strip under them. Drawing reads the [`AppState`] and returns [`Action`]s; only the
//! widgets' own scratch ([`Widgets`]: typed text, cached curves) changes while drawing.

use std::sync::Arc;

use eframe::egui;

use super::action::Action;
use super::model::AppState;
use super::panels;
use super::state::{LowerView, TraceUnit};
use crate::process::{MAX_WINDOW_S, MIN_WINDOW_S};

/// The panels' own state: what is typed and not yet applied, and their caches.
#[derive(Default)]
pub struct Widgets {
    pub response: panels::response::ResponseCache,
    pub spectrum: panels::spectrum::SpectrumView,
    pub picker: panels::source::SourcePicker,
    pub front_end: panels::front_end::FrontEndPanel,
    pub net: panels::network::NetPicker,
    pub measure: panels::measure::MeasureView,
    pub sound: panels::sound::SoundPanel,
    pub emg: crate::analysis::emg::EmgSettings,
    pub parts: panels::parts::PartsView,
    pub record: panels::record::RecordPanel,
    pub files: panels::files::FilesPanel,
}

/// What the running stream's threads report, read once per frame.
pub struct Live {
    /// The source's name.
    pub label: String,
    pub recorder: Option<crate::recorder::RecorderStatus>,
    pub serial: Option<crate::source::serial::SerialStatus>,
    pub net: Option<crate::source::net::NetStatus>,
    pub replay: Option<crate::source::replay::ReplayStatus>,
}

/// Draws the whole window; returns what the user asked for.
pub fn window(ui: &mut egui::Ui, st: &AppState, w: &mut Widgets, live: &Live) -> Vec<Action> {
    let mut out = Vec::new();
    // Panels draw no background of their own: the window is cleared to the panel colour
    // anyway, and with software OpenGL every full-window layer costs CPU at each frame.
    let style = ui.style().clone();
    let bare = |f: egui::Frame| f.fill(egui::Color32::TRANSPARENT);
    egui::Panel::top("top-bar")
        .frame(bare(egui::Frame::side_top_panel(&style)))
        .show(ui, |ui| out.extend(top_bar(ui, st, w, live)));
    egui::Panel::bottom("status-bar")
        .frame(bare(egui::Frame::side_top_panel(&style)))
        .show(ui, |ui| status_bar(ui, st, live));
    egui::Panel::left("controls")
        .frame(bare(egui::Frame::side_top_panel(&style)))
        .default_size(300.0)
        .show(ui, |ui| out.extend(super::side::show(ui, st, w, live)));
    // The response of the design in force (the DSP thread's: before the first block, at the
    // source's expected rate).
    let refused = st
        .view
        .snapshot
        .as_ref()
        .and_then(|s| s.chain_error.clone());
    w.response
        .update_running(st.design.as_deref(), refused.as_deref());
    egui::CentralPanel::default_margins()
        .frame(bare(egui::Frame::central_panel(&style)))
        .show(ui, |ui| out.extend(central(ui, st, w)));
    out.extend(panels::help::show(ui.ctx(), st.help_open));
    out.extend(panels::caution::first_start(ui.ctx(), st.caution_open));
    out
}

/// The top bar: freeze, record, marker, help, theme, window, unit, channel and the readout.
fn top_bar(ui: &mut egui::Ui, st: &AppState, w: &mut Widgets, live: &Live) -> Vec<Action> {
    let mut out = Vec::new();
    let mut view = st.settings.setup.view.clone();
    ui.horizontal(|ui| {
        ui.label(egui::RichText::new("leadline").strong().size(18.0));
        ui.separator();
        let label = if !st.trace.follow {
            "Follow live"
        } else if st.paused {
            "Resume"
        } else {
            "Freeze"
        };
        if ui
            .button(label)
            .on_hover_text(
                "Freeze the traces to look closely (Space); data keep flowing underneath and into any recording. While frozen: drag to pan, scroll to zoom, click to place the two cursors.",
            )
            .clicked()
        {
            out.push(Action::Pause(!st.paused));
        }
        let chain_text = st.settings.setup.chain.describe();
        out.extend(panels::record::top_bar(ui, &mut w.record, live.recorder.as_ref(), &chain_text));
        if ui
            .selectable_label(st.help_open, "Help")
            .on_hover_text("Keyboard shortcuts and how to measure (F1 or ?).")
            .clicked()
        {
            out.push(Action::Help(!st.help_open));
        }
        let dark = view.theme == crate::setup::Theme::Dark;
        if ui
            .button(if dark { "Light" } else { "Dark" })
            .on_hover_text("Switch between dark and light colours (light is easier to read on a bright bench or a projector).")
            .clicked()
        {
            out.push(Action::Theme(if dark {
                crate::setup::Theme::Light
            } else {
                crate::setup::Theme::Dark
            }));
        }
        ui.separator();
        ui.add(
            egui::Slider::new(&mut view.window_s, MIN_WINDOW_S..=MAX_WINDOW_S)
                .text("Time window")
                .suffix(" s")
                .max_decimals(0),
        )
        .on_hover_text("How many seconds of signal the traces show.");
        ui.separator();
        ui.selectable_value(&mut view.unit, TraceUnit::Millivolts, "mV")
            .on_hover_text("Trace axes in millivolts at the electrodes (input-referred).");
        ui.selectable_value(&mut view.unit, TraceUnit::Microvolts, "µV")
            .on_hover_text("Trace axes in microvolts at the electrodes (input-referred).");
        let n = st
            .view
            .snapshot
            .as_ref()
            .map_or(st.settings.setup.synth.channels, |s| s.traces.len());
        if n > 1 {
            ui.separator();
            let names = st.view.snapshot.as_ref().and_then(|s| s.leads.clone());
            channel_picker(ui, &mut view.channel, n, names.as_deref().map(Vec::as_slice));
        }
        let snap = st.view.snapshot.as_ref();
        let beats = snap.and_then(|s| s.beats.as_ref());
        let emg = snap.and_then(|s| s.emg.as_deref());
        let emg_mode = st.settings.emg_mode;
        ui.allocate_ui_with_layout(
            egui::vec2(ui.available_width(), 44.0),
            egui::Layout::right_to_left(egui::Align::Center),
            |ui| {
                if emg_mode {
                    panels::muscle::readout(ui, emg);
                } else {
                    panels::beats::rate_readout(ui, beats);
                }
            },
        );
    });
    if view != st.settings.setup.view {
        out.push(Action::View(view));
    }
    out
}

/// The followed channel, by its lead's name when the channels are derived leads.
fn channel_picker(ui: &mut egui::Ui, channel: &mut usize, n: usize, names: Option<&[String]>) {
    let name = |k: usize| {
        names
            .and_then(|v| v.get(k).cloned())
            .unwrap_or_else(|| format!("ch{}", k + 1))
    };
    egui::ComboBox::from_id_salt("channel")
        .selected_text(name(*channel))
        .show_ui(ui, |ui| {
            for k in 0..n {
                ui.selectable_value(channel, k, name(k));
            }
        })
        .response
        .on_hover_text("Channel shown, analysed for beats and used for the spectrum.");
}

/// The status bar: the stream's counters, the link's state and the caution reminder.
fn status_bar(ui: &mut egui::Ui, st: &AppState, live: &Live) {
    panels::status::show(ui, &st.view, &live.label, st.paused, live.recorder.as_ref());
    if let Some(s) = &live.serial {
        panels::status::serial_line(ui, s);
    }
    if let Some(s) = &live.net {
        panels::status::net_line(ui, s);
    }
    panels::caution::reminder(ui);
}

/// The traces and the lower strip under them.
fn central(ui: &mut egui::Ui, st: &AppState, w: &mut Widgets) -> Vec<Action> {
    let mut out = Vec::new();
    let total = ui.available_height();
    if st.settings.setup.view.lower == LowerView::Twelve {
        // The sheet takes the traces' place and the strip's.
        ui.allocate_ui(egui::vec2(ui.available_width(), total - 30.0), |ui| {
            out.extend(panels::twelve::show(
                ui,
                st.view.snapshot.as_ref(),
                &st.trace,
                st.paper_grid,
                st.settings.setup.view.unit,
            ));
        });
        out.extend(view_tabs(ui, st));
        return out;
    }
    let lower_h = if st.settings.setup.view.lower == LowerView::Hidden {
        0.0
    } else {
        (0.42 * total).clamp(150.0, 360.0)
    };
    let trace_h = total - lower_h - 30.0;
    ui.allocate_ui(egui::vec2(ui.available_width(), trace_h), |ui| {
        out.extend(panels::trace::show(
            ui,
            &st.view,
            &st.settings,
            &st.markers,
            &st.trace,
        ));
    });
    out.extend(view_tabs(ui, st));
    out.extend(lower_strip(ui, st, w));
    out
}

/// Heart or muscle signals, and the choice of the strip under the traces.
fn view_tabs(ui: &mut egui::Ui, st: &AppState) -> Vec<Action> {
    let mut out = Vec::new();
    let mut lower = st.settings.setup.view.lower;
    ui.horizontal(|ui| {
        let mut emg = st.settings.emg_mode;
        ui.selectable_value(&mut emg, false, "ECG")
            .on_hover_text("Heart signals: the ECG chain, beats and heart rate.");
        ui.selectable_value(&mut emg, true, "EMG")
            .on_hover_text("Muscle signals: a 20–450 Hz band-pass with the mains notch, the envelope, contractions and the median-frequency trend. Use 1 kHz or more.");
        if emg != st.settings.emg_mode {
            out.push(Action::EmgMode(emg));
        }
        ui.separator();
        let mut tab = |ui: &mut egui::Ui, v: LowerView, text: &str, tip: &str| {
            ui.selectable_value(&mut lower, v, text).on_hover_text(tip);
        };
        tab(ui, LowerView::Beats, "Beats", "The averaged beat before and after the chain, HRV and the RR tachogram.");
        tab(ui, LowerView::Spectrum, "Spectrum", "Running Welch PSD before and after the chain, with the mains lines measured.");
        tab(ui, LowerView::Response, "Chain response", "Magnitude, phase and group delay of the digital chain as set now.");
        tab(ui, LowerView::Parts, "Parts", "The chain built from standard parts: resistors from an E series, your capacitors, the tolerance spread.");
        tab(ui, LowerView::Measure, "Measure", "Measure the built front end on the live stream: response from a stimulus channel, a stepped sine, noise, CMRR.");
        if st.settings.emg_mode {
            tab(ui, LowerView::Muscle, "Muscle", "Envelope, moving RMS and contractions of the followed channel, with each contraction's median frequency.");
        }
        if st.settings.setup.lead_set().is_some() {
            tab(ui, LowerView::Twelve, "12 leads", "The twelve leads as a print-out arranges them: 3 × 4 columns of 2.5 s and a rhythm strip of II, 25 mm/s, 10 mm/mV.");
        }
        tab(ui, LowerView::Hidden, "Traces only", "Hide the lower strip: the traces take the whole height.");
    });
    if lower != st.settings.setup.view.lower {
        out.push(Action::Lower(lower));
    }
    out
}

/// Realises the design in force from parts (on the parts' own thread).
fn update_parts(ui: &egui::Ui, st: &AppState, w: &mut Widgets) {
    let ctx = ui.ctx().clone();
    w.parts
        .update(&st.settings.setup.chain, st.design.clone(), move || {
            ctx.request_repaint()
        });
}

/// The strip under the traces, as chosen.
fn lower_strip(ui: &mut egui::Ui, st: &AppState, w: &mut Widgets) -> Option<Action> {
    let snap = st.view.snapshot.as_ref();
    let fs = st.fs_hz();
    match st.settings.setup.view.lower {
        LowerView::Response => {
            update_parts(ui, st, w);
            panels::response::show(
                ui,
                &w.response,
                &st.settings.setup.chain,
                super::plot::FILTERED_COLOUR,
                w.parts.stages(),
            );
            None
        }
        LowerView::Spectrum => {
            let frame = snap.and_then(|s| s.spectrum.as_ref());
            // The design the DSP thread ran for this estimate.
            let design = snap.map(|s| Arc::clone(&s.design));
            w.spectrum.before = st.spectrum_before.clone();
            panels::spectrum::show(
                ui,
                frame,
                design.as_deref().map(|d| d.sections()),
                &mut w.spectrum,
            )
        }
        LowerView::Beats => {
            panels::beats::show(
                ui,
                snap.and_then(|s| s.beats.as_ref()),
                snap.and_then(|s| s.frontal_axis.as_ref()),
                fs,
            );
            None
        }
        LowerView::Parts => panels::parts::show(
            ui,
            &mut w.parts,
            &st.settings.setup.chain,
            st.design.clone(),
            &st.files,
        ),
        LowerView::Measure => {
            update_parts(ui, st, w);
            let n = snap.map_or(1, |s| s.traces.len());
            panels::measure::show(
                ui,
                &mut w.measure,
                snap.and_then(|s| s.measured.as_ref()),
                st.design.as_deref().map(|d| d.sections()),
                w.parts.stages(),
                n,
                fs,
            )
        }
        LowerView::Muscle => {
            let v = snap.and_then(|s| s.emg.as_deref());
            let ch = st.settings.setup.view.channel;
            let trace = snap
                .and_then(|s| s.traces.get(ch.min(s.traces.len().saturating_sub(1))))
                .map(|t| &t.filtered);
            panels::muscle::show(ui, v, trace, &mut w.emg, fs)
        }
        LowerView::Hidden | LowerView::Twelve => None,
    }
}
