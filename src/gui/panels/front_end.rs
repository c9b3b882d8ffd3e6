//! The board's front end, per channel: ADC bits, reference, zero level and total gain, or "the
//! values are already V / mV / µV". Applies live (no reconnect) and shows what one count is worth.

use eframe::egui;

use crate::scale::{self, FrontEnd, InputScale, ValueKind};

/// The section's own state: which channel is being edited (None: every channel).
#[derive(Debug, Clone, Default)]
pub struct FrontEndPanel {
    editing: Option<usize>,
}

/// What changed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct FrontEndChange {
    /// The front end per channel changed: send it to the DSP thread.
    pub scaling: bool,
    /// "my board" was saved (the setup changed).
    pub saved: bool,
}

/// Draws the section. `channels` is the stream's channel count; `board` says whether the
/// source is a board (the simulator models its own front end).
pub fn show(
    ui: &mut egui::Ui,
    p: &mut FrontEndPanel,
    current: (&[FrontEnd], Option<FrontEnd>),
    channels: usize,
    board: bool,
) -> Vec<crate::gui::action::Action> {
    use crate::gui::action::Action;
    let (mut list, mut mine) = (current.0.to_vec(), current.1);
    let change = edit(ui, p, &mut list, &mut mine, channels, board);
    let mut out = Vec::new();
    if change.scaling || list != current.0 {
        out.push(Action::FrontEnds {
            front_ends: list,
            live: change.scaling && board,
        });
    }
    if mine != current.1 {
        out.push(Action::MyBoard(mine));
    }
    out
}

fn edit(
    ui: &mut egui::Ui,
    p: &mut FrontEndPanel,
    list: &mut Vec<FrontEnd>,
    my_board: &mut Option<FrontEnd>,
    channels: usize,
    board: bool,
) -> FrontEndChange {
    let mut change = FrontEndChange::default();
    if list.is_empty() {
        list.push(FrontEnd::default());
    }
    if !board {
        ui.label(
            egui::RichText::new(
                "Applies to a board's stream. The simulator models its own board (see Simulated bench).",
            )
            .small(),
        );
    }
    channel_choice(ui, p, channels);
    let k = p.editing.unwrap_or(0);
    let mut fe = scale::for_channel(list, k).copied().unwrap_or_default();
    let before = fe;

    ui.horizontal(|ui| {
        egui::ComboBox::from_id_salt("front-end-preset")
            .selected_text("Preset…")
            .show_ui(ui, |ui| {
                for preset in scale::presets() {
                    if ui.selectable_label(false, preset.name).clicked() {
                        fe = preset.front_end;
                    }
                }
                if let Some(mine) = *my_board
                    && ui.selectable_label(false, "my board").clicked()
                {
                    fe = mine;
                }
            })
            .response
            .on_hover_text("Starting points by converter class; set the gain to your front end's.");
        if ui
            .button("Save as my board")
            .on_hover_text(
                "Keep these values in the setup, offered as \"my board\" in the presets.",
            )
            .clicked()
        {
            *my_board = Some(fe);
            change.saved = true;
        }
    });
    egui::ComboBox::from_id_salt("front-end-values")
        .selected_text(fe.values.label())
        .show_ui(ui, |ui| {
            for v in [
                ValueKind::Counts,
                ValueKind::Volts,
                ValueKind::Millivolts,
                ValueKind::Microvolts,
            ] {
                ui.selectable_value(&mut fe.values, v, v.label());
            }
        })
        .response
        .on_hover_text("What the numbers in the stream are: ADC counts (scaled below), or values already at the electrodes.");
    if fe.values == ValueKind::Counts {
        adc_controls(ui, &mut fe.adc);
    }
    let text = match fe.validate() {
        Ok(()) => fe.describe(),
        Err(e) => format!("not applied: {e}"),
    };
    ui.label(egui::RichText::new(text).small());

    if fe != before && fe.validate().is_ok() {
        match p.editing {
            None => *list = vec![fe],
            Some(k) => {
                while list.len() <= k {
                    let last = list.last().copied().unwrap_or_default();
                    list.push(last);
                }
                list[k] = fe;
            }
        }
        change.scaling = true;
    }
    change
}

/// Which channel the values below are for (every channel, or one of several).
fn channel_choice(ui: &mut egui::Ui, p: &mut FrontEndPanel, channels: usize) {
    if channels > 1 {
        ui.horizontal(|ui| {
            ui.label("Set for");
            egui::ComboBox::from_id_salt("front-end-channel")
                .selected_text(match p.editing {
                    None => "every channel".to_string(),
                    Some(k) => format!("ch{}", k + 1),
                })
                .show_ui(ui, |ui| {
                    ui.selectable_value(&mut p.editing, None, "every channel");
                    for k in 0..channels {
                        ui.selectable_value(&mut p.editing, Some(k), format!("ch{}", k + 1));
                    }
                })
                .response
                .on_hover_text(
                    "A stimulus channel and a front-end channel can have different scaling.",
                );
        });
    } else {
        p.editing = None;
    }
}

fn adc_controls(ui: &mut egui::Ui, adc: &mut InputScale) {
    egui::Grid::new("front-end-adc")
        .num_columns(2)
        .show(ui, |ui| {
            ui.label("ADC bits");
            let bits = adc.bits;
            ui.add(egui::DragValue::new(&mut adc.bits).range(8..=24))
                .on_hover_text("Converter resolution, 8–24 bits.");
            if adc.bits != bits && !adc.bipolar {
                adc.offset_counts = adc.default_zero();
            }
            ui.end_row();
            ui.label("Reference");
            ui.add(
                egui::DragValue::new(&mut adc.vref_v)
                    .range(0.1..=10.0)
                    .speed(0.01)
                    .suffix(" V"),
            )
            .on_hover_text("Unipolar: the input spans 0…Vref. Bipolar: −Vref…+Vref.");
            ui.end_row();
            ui.label("Zero level");
            ui.horizontal(|ui| {
                let mid = !adc.bipolar && adc.offset_counts == adc.default_zero();
                if ui
                    .selectable_label(mid, "mid-scale")
                    .on_hover_text("Single-supply board biased at half the reference.")
                    .clicked()
                {
                    adc.bipolar = false;
                    adc.offset_counts = adc.default_zero();
                }
                if ui
                    .selectable_label(adc.bipolar, "bipolar")
                    .on_hover_text("Two's-complement converter: signed counts, zero at 0.")
                    .clicked()
                {
                    adc.bipolar = true;
                    adc.offset_counts = 0.0;
                }
                if !adc.bipolar {
                    let top = adc.max_count();
                    ui.add(
                        egui::DragValue::new(&mut adc.offset_counts)
                            .range(0.0..=top)
                            .speed(1.0)
                            .suffix(" counts"),
                    )
                    .on_hover_text("The count a zero signal gives, if not mid-scale.");
                }
            });
            ui.end_row();
            ui.label("Front-end gain");
            ui.add(
                egui::DragValue::new(&mut adc.gain)
                    .range(0.1..=1e6)
                    .speed(1.0)
                    .suffix(" V/V"),
            )
            .on_hover_text("Total gain from the electrodes to the ADC pin: in-amp × later stages.");
            ui.end_row();
        });
}
