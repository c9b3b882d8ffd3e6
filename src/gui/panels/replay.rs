//! Replay controls: speed, pause, seek, loop; and a path field to open a recording.

use eframe::egui;

use crate::source::replay::{ReplayCommand, ReplayStatus};

/// Draws the controls for a running replay; returns the commands to send.
pub fn show(ui: &mut egui::Ui, st: &ReplayStatus) -> Vec<crate::gui::action::Action> {
    commands(ui, st)
        .into_iter()
        .map(crate::gui::action::Action::Replay)
        .collect()
}

fn commands(ui: &mut egui::Ui, st: &ReplayStatus) -> Vec<ReplayCommand> {
    let mut out = Vec::new();
    if let Some(e) = &st.error {
        ui.colored_label(ui.visuals().error_fg_color, e);
        return out;
    }
    let mut speed = st.speed.max(0.25);
    if ui
        .add(
            egui::Slider::new(&mut speed, 0.25..=16.0)
                .logarithmic(true)
                .text("Replay speed")
                .suffix("×"),
        )
        .on_hover_text("Playback speed relative to real time.")
        .changed()
    {
        out.push(ReplayCommand::Speed(speed));
    }
    // Only once the length is known: a slider on an empty range would clamp and seek by itself.
    if st.length_s > 0.0 {
        let mut pos = st.position_s.min(st.length_s);
        let r = ui
            .add(
                egui::Slider::new(&mut pos, 0.0..=st.length_s)
                    .text("Position")
                    .suffix(" s")
                    .max_decimals(1),
            )
            .on_hover_text("Drag to jump in the recording (the trace marks the jump as a gap).");
        if r.changed() && (r.dragged() || r.has_focus() || r.clicked()) {
            out.push(ReplayCommand::Seek(pos));
        }
    }
    ui.horizontal(|ui| {
        if ui
            .button(if st.paused { "Play" } else { "Pause" })
            .clicked()
        {
            out.push(ReplayCommand::Pause(!st.paused));
        }
        let mut looping = st.looping;
        if ui
            .checkbox(&mut looping, "Loop")
            .on_hover_text("Start again at the end.")
            .changed()
        {
            out.push(ReplayCommand::Loop(looping));
        }
        if st.ended {
            ui.label("end of file");
        }
    });
    signal_list(ui, st, &mut out);
    out
}

/// Every signal of the file with its rate and unit; those at another rate (or not voltages)
/// are named and can be replayed instead of the others.
fn signal_list(ui: &mut egui::Ui, st: &ReplayStatus, out: &mut Vec<ReplayCommand>) {
    if st.signals.len() < 2 && st.notes.is_empty() {
        return;
    }
    egui::CollapsingHeader::new(format!("Signals in the file ({})", st.signals.len()))
        .default_open(!st.notes.is_empty())
        .show(ui, |ui| {
            for (k, s) in st.signals.iter().enumerate() {
                ui.horizontal(|ui| {
                    let text = format!(
                        "{} · {} Hz · {}",
                        s.name,
                        crate::scale::sig3(s.fs_hz),
                        s.unit
                    );
                    if s.channel.is_some() {
                        ui.label(format!("{text} (shown)"));
                    } else if ui
                        .button(format!("Show {text}"))
                        .on_hover_text("Replay the signals at this one's rate instead.")
                        .clicked()
                    {
                        out.push(ReplayCommand::Signal(k));
                    }
                });
            }
            for n in &st.notes {
                ui.label(egui::RichText::new(n).small());
            }
        });
}
