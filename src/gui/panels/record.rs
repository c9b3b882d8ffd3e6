//! Recording: the button and readout in the top bar, the file and marker settings in the side
//! panel. The recorder thread does the writing; this only asks and shows.

use eframe::egui;

pub use crate::gui::action::RecordAction;

use crate::recorder::{RecordRequest, RecordValues, RecorderStatus};

/// What the user has typed for recording.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordPanel {
    /// Output file; the extension picks the format.
    pub path: String,
    pub values: RecordValues,
    /// Text of the next marker.
    pub marker_text: String,
    /// Markers placed so far in this session.
    pub markers_placed: u64,
}

impl Default for RecordPanel {
    fn default() -> Self {
        Self {
            path: "bench-recording.edf".into(),
            values: RecordValues::Raw,
            marker_text: String::new(),
            markers_placed: 0,
        }
    }
}

impl RecordPanel {
    /// The request for the file named now.
    pub fn request(&self, chain_text: &str) -> RecordRequest {
        let mut r = RecordRequest::new(self.path.trim());
        r.values = self.values;
        if self.values == RecordValues::Filtered {
            r.prefilter = chain_text.to_string();
        }
        r
    }

    /// The next marker's text (numbered when none was typed).
    pub fn next_marker(&mut self) -> String {
        self.markers_placed += 1;
        let t = self.marker_text.trim();
        if t.is_empty() {
            format!("marker {}", self.markers_placed)
        } else {
            t.to_string()
        }
    }
}

fn size_text(b: u64) -> String {
    if b >= 1 << 20 {
        format!("{:.1} MB", b as f64 / 1_048_576.0)
    } else {
        format!("{:.0} kB", b as f64 / 1024.0)
    }
}

fn elapsed_text(s: f64) -> String {
    let t = s.max(0.0) as u64;
    format!("{:02}:{:02}:{:02}", t / 3600, t / 60 % 60, t % 60)
}

/// The top-bar part: record/stop, elapsed time and size, marker.
pub fn top_bar(
    ui: &mut egui::Ui,
    panel: &mut RecordPanel,
    status: Option<&RecorderStatus>,
    chain_text: &str,
) -> Option<crate::gui::action::Action> {
    draw(ui, panel, status, chain_text).map(crate::gui::action::Action::Record)
}

fn draw(
    ui: &mut egui::Ui,
    panel: &mut RecordPanel,
    status: Option<&RecorderStatus>,
    chain_text: &str,
) -> Option<RecordAction> {
    let mut action = None;
    let recording = status.is_some_and(|s| s.active.is_some());
    if recording {
        let stop = ui
            .button(
                egui::RichText::new("Stop recording").color(egui::Color32::from_rgb(220, 70, 60)),
            )
            .on_hover_text("Close the file (key R). Everything taken so far is on the disk.");
        if stop.clicked() {
            action = Some(RecordAction::Stop);
        }
        if let Some(s) = status {
            ui.label(
                egui::RichText::new(format!(
                    "REC {}  {}",
                    elapsed_text(s.elapsed_s),
                    size_text(s.bytes)
                ))
                .color(egui::Color32::from_rgb(220, 70, 60))
                .monospace(),
            )
            .on_hover_text(format!(
                "Recording to {}: {} frames, {} markers.",
                s.active
                    .as_ref()
                    .map(|p| p.display().to_string())
                    .unwrap_or_default(),
                s.frames,
                s.markers
            ));
        }
    } else {
        let start = ui
            .button("Record")
            .on_hover_text("Record every sample to the file named under Recording in the side panel (key R): .edf, .bdf, .csv, .f32 or .f64.");
        if start.clicked() && !panel.path.trim().is_empty() {
            action = Some(RecordAction::Start(panel.request(chain_text)));
        }
    }
    let m = ui
        .button("Marker")
        .on_hover_text("Drop an event marker at the latest sample (key M): onto the trace, and into the file as an annotation while recording.");
    if m.clicked() {
        action = Some(RecordAction::Marker(panel.next_marker()));
    }
    action
}

/// The side-panel part: file, values, marker text and the last message.
pub fn settings(ui: &mut egui::Ui, panel: &mut RecordPanel, status: Option<&RecorderStatus>) {
    ui.horizontal(|ui| {
        ui.label("File");
        super::named_field(ui, "recording file", &mut panel.path, |t| t.desired_width(190.0))
            .on_hover_text("The extension picks the format: .edf (EDF+, 16-bit), .bdf (BDF+, 24-bit), .csv (text, mV), .f32/.f64 (raw).");
    });
    ui.horizontal(|ui| {
        ui.radio_value(&mut panel.values, RecordValues::Raw, "as received")
            .on_hover_text("Input-referred µV before the digital chain: what the board delivered.");
        ui.radio_value(&mut panel.values, RecordValues::Filtered, "after the chain")
            .on_hover_text(
                "Input-referred µV after the digital filters; the file's header names the chain.",
            );
    });
    ui.horizontal(|ui| {
        ui.label("Marker text");
        super::named_field(ui, "marker text", &mut panel.marker_text, |t| {
            t.hint_text("e.g. charger plugged in").desired_width(150.0)
        })
        .on_hover_text("Text of the next event marker (empty: numbered).");
    });
    if let Some(s) = status
        && !s.message.is_empty()
    {
        let colour = if s.failed {
            ui.visuals().error_fg_color
        } else {
            ui.visuals().weak_text_color()
        };
        ui.colored_label(colour, &s.message);
    }
}
