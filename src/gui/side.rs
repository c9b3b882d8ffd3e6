//! The controls column: filters, source, and the folding sections (front end, display, sound,
//! recording, files, the simulated bench). It reads the [`AppState`] and returns [`Action`]s.

use eframe::egui;

use super::action::{Action, SourceChoice};
use super::layout::{Live, Widgets};
use super::model::AppState;
use super::panels;
use crate::msg::Control;
use crate::setup::SourceKind;

/// Draws the column, top to bottom.
pub fn show(ui: &mut egui::Ui, st: &AppState, w: &mut Widgets, live: &Live) -> Vec<Action> {
    let mut out = Vec::new();
    egui::ScrollArea::vertical().show(ui, |ui| {
        ui.heading("Filters");
        out.extend(filters(ui, st));
        ui.add_space(10.0);
        ui.heading("Source");
        out.extend(source(ui, st, w, live));
        ui.add_space(6.0);
        out.extend(sections(ui, st, w, live));
    });
    out
}

/// Invert, the chain, the mains check and a refused chain's reason.
fn filters(ui: &mut egui::Ui, st: &AppState) -> Vec<Action> {
    let mut out = Vec::new();
    let snap = st.view.snapshot.as_ref();
    let inverted = snap.is_some_and(|s| s.inverted);
    let mut flip = inverted;
    if ui
        .checkbox(&mut flip, "Invert the signal")
        .on_hover_text(
            "Flip the sign of every channel before the filters (leads swapped on the board).",
        )
        .changed()
    {
        out.push(Action::Control(Control::Invert(flip)));
    }
    let looks_inverted = snap
        .and_then(|s| s.beats.as_ref())
        .is_some_and(|b| b.quality.inverted);
    if looks_inverted && ui.button("Beats point down: flip").clicked() {
        out.push(Action::Control(Control::Invert(!inverted)));
    }
    out.extend(panels::chain::show(
        ui,
        &st.settings.setup.chain,
        st.fs_hz(),
        snap.and_then(|s| s.cancel.as_ref()),
    ));
    let mains = snap
        .and_then(|s| s.spectrum.as_ref())
        .and_then(|f| f.mains_raw.clone());
    let notch = st.settings.setup.chain.notch;
    if let Some(m) = mains.as_ref()
        && notch.enabled
        && !notch.auto
        && let Some(msg) = m.disagrees_with(notch.mains_hz)
    {
        ui.horizontal_wrapped(|ui| {
            ui.colored_label(ui.visuals().warn_fg_color, msg);
            if ui
                .button(format!("Notch at {:.0} Hz", m.nominal_hz))
                .on_hover_text("Move the notch to the measured mains region.")
                .clicked()
            {
                let mut c = st.settings.setup.chain;
                c.notch.mains_hz = m.nominal_hz;
                out.push(Action::Chain(c));
            }
        });
    }
    if let Some(e) = snap.and_then(|s| s.chain_error.as_ref()) {
        ui.colored_label(ui.visuals().error_fg_color, format!("Not applied: {e}"));
    }
    out
}

/// Serial port, network board, a file to replay and the replay's controls.
fn source(ui: &mut egui::Ui, st: &AppState, w: &mut Widgets, live: &Live) -> Vec<Action> {
    let mut out = Vec::new();
    let s = &st.settings.setup;
    let active = (s.source.kind == SourceKind::Serial).then(|| s.source.port.clone());
    let net_active = s.source.kind == SourceKind::Network;
    let adc = s.scale;
    out.extend(panels::source::show(
        ui,
        &mut w.picker,
        active.as_deref(),
        st.settings.simulating(),
        adc,
    ));
    out.extend(lead_choice(ui, st));
    // A Wi-Fi board and a recording to replay fold away while neither is the source: fewer
    // widgets to draw every frame (under software OpenGL the open section cost about a tenth
    // of a core) and a shorter panel.
    egui::CollapsingHeader::new("Wi-Fi board or a recording")
        .id_salt("source-more")
        .open((net_active || live.replay.is_some()).then_some(true))
        .default_open(false)
        .show(ui, |ui| {
            out.extend(panels::network::show(
                ui,
                &mut w.net,
                net_active,
                adc,
                st.source_error.as_deref(),
            ));
            out.extend(replay_row(ui, &st.replay_path));
        });
    if let Some(r) = &live.replay {
        out.extend(panels::replay::show(ui, r));
    }
    out
}

/// What the channels are: plain channels, or leads or electrodes from which the standard leads
/// are derived.
fn lead_choice(ui: &mut egui::Ui, st: &AppState) -> Option<Action> {
    use crate::leads::LeadSet;
    let now = st.settings.setup.lead_set();
    let mut pick = now;
    ui.horizontal(|ui| {
        ui.label("Channels are");
        egui::ComboBox::from_id_salt("lead-set")
            .selected_text(now.map_or("plain channels", LeadSet::describe))
            .show_ui(ui, |ui| {
                ui.selectable_value(&mut pick, None, "plain channels");
                for s in LeadSet::ALL {
                    ui.selectable_value(&mut pick, Some(s), s.describe());
                }
            })
            .response
            .on_hover_text("A multi-channel board's leads or electrodes: the limb leads (Einthoven, Goldberger) and the chest leads against Wilson's central terminal are derived, and the 12 leads view shows them. The simulator becomes such a board.");
    });
    if let Some(e) = st
        .view
        .snapshot
        .as_ref()
        .and_then(|s| s.lead_error.as_ref())
    {
        ui.colored_label(ui.visuals().error_fg_color, e);
    }
    (pick != now).then_some(Action::LeadSet(pick))
}

/// The path of a recording to replay, and the button that replays it.
fn replay_row(ui: &mut egui::Ui, current: &str) -> Vec<Action> {
    let mut out = Vec::new();
    let mut path = current.to_string();
    ui.horizontal(|ui| {
        panels::named_field(ui, "recording to replay", &mut path, |t| {
            t.hint_text("recording.edf / .csv / .hea").desired_width(170.0)
        })
        .on_hover_text("A recording to replay: EDF/EDF+/BDF, our CSV, a scope CSV with a time column, raw .f32/.f64 or a WFDB .hea.");
        if ui
            .add_enabled(!path.is_empty(), egui::Button::new("Replay"))
            .clicked()
        {
            out.push(Action::Source(SourceChoice::File(path.clone().into())));
        }
    });
    if path != current {
        out.insert(0, Action::ReplayPath(path));
    }
    out
}

/// The folding sections: front end, display, sound, recording, files, and the simulator while
/// it is the source.
fn sections(ui: &mut egui::Ui, st: &AppState, w: &mut Widgets, live: &Live) -> Vec<Action> {
    let mut out = Vec::new();
    let heading = |t: &str| egui::RichText::new(t).heading();
    let setup = &st.settings.setup;
    // Open while a board is the source (its counts need the front end); folded on the
    // simulator, which models its own board.
    egui::CollapsingHeader::new(heading("Front end"))
        .default_open(!st.settings.simulating())
        .show(ui, |ui| {
            let n = st.view.snapshot.as_ref().map_or(1, |s| s.traces.len());
            out.extend(panels::front_end::show(
                ui,
                &mut w.front_end,
                (&setup.front_ends(), setup.my_board()),
                n,
                setup.from_board(),
            ));
        });
    ui.add_space(10.0);
    egui::CollapsingHeader::new(heading("Display"))
        .default_open(false)
        .show(ui, |ui| out.extend(panels::display::show(ui, &setup.view)));
    egui::CollapsingHeader::new(heading("Sound"))
        .default_open(false)
        .show(ui, |ui| out.extend(panels::sound::show(ui, &mut w.sound)));
    egui::CollapsingHeader::new(heading("Recording"))
        .default_open(true)
        .show(ui, |ui| {
            panels::record::settings(ui, &mut w.record, live.recorder.as_ref());
        });
    egui::CollapsingHeader::new(heading("Files"))
        .default_open(false)
        .show(ui, |ui| {
            out.extend(panels::files::show(ui, &mut w.files, &st.files));
        });
    if st.settings.simulating() {
        ui.add_space(10.0);
        ui.heading("Simulated bench");
        out.extend(panels::simulator::show(ui, &setup.synth));
    }
    out
}
