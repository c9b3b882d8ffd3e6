//! Source controls: the simulator or a serial port (picker with refresh, baud, format, rate).

use eframe::egui;

use crate::scale::InputScale;
use crate::source::serial::{SerialSpec, list_ports};
use crate::wire::Format;

/// The picker's own state.
#[derive(Debug, Clone)]
pub struct SourcePicker {
    ports: Vec<String>,
    path: String,
    baud: u32,
    format: Option<Format>,
    fs_hz: f64,
}

impl Default for SourcePicker {
    fn default() -> Self {
        let ports = list_ports();
        Self {
            path: ports.first().cloned().unwrap_or_default(),
            ports,
            baud: 115_200,
            format: None,
            fs_hz: 0.0,
        }
    }
}

/// What the user asked for.
#[derive(Debug, Clone, PartialEq)]
pub enum SourceRequest {
    /// Back to the built-in simulator.
    Simulator,
    /// Open this serial port.
    Serial(SerialSpec),
}

/// Draws the source controls. `serial_active` says whether a serial port is the current source.
pub fn show(ui: &mut egui::Ui, p: &mut SourcePicker, serial_active: bool) -> Option<SourceRequest> {
    let mut req = None;
    ui.horizontal(|ui| {
        if ui
            .selectable_label(!serial_active, "Simulator")
            .on_hover_text("The built-in synthetic ECG: no hardware needed.")
            .clicked()
            && serial_active
        {
            req = Some(SourceRequest::Simulator);
        }
        ui.label(if serial_active {
            "Serial port (active)"
        } else {
            "Serial port:"
        });
    });
    ui.horizontal(|ui| {
        egui::ComboBox::from_id_salt("serial-port")
            .selected_text(if p.path.is_empty() { "choose…".to_string() } else { p.path.clone() })
            .show_ui(ui, |ui| {
                for name in &p.ports {
                    ui.selectable_value(&mut p.path, name.clone(), name);
                }
            })
            .response
            .on_hover_text("Serial ports the system lists. A pseudo-terminal from `leadline simulate --pty` can be typed below.");
        if ui.button("Refresh").on_hover_text("List the serial ports again (after plugging a board in).").clicked() {
            p.ports = list_ports();
        }
    });
    ui.add(
        egui::TextEdit::singleline(&mut p.path)
            .hint_text("/dev/ttyACM0")
            .desired_width(200.0),
    )
    .on_hover_text("Device path of the board's serial port.");
    ui.horizontal(|ui| {
        egui::ComboBox::from_id_salt("serial-baud")
            .selected_text(format!("{} baud", p.baud))
            .show_ui(ui, |ui| {
                for b in [
                    9600, 57_600, 115_200, 230_400, 460_800, 921_600, 1_000_000, 2_000_000,
                    4_000_000,
                ] {
                    ui.selectable_value(&mut p.baud, b, format!("{b}"));
                }
            })
            .response
            .on_hover_text("Line speed of the board's UART (USB CDC boards ignore it).");
        egui::ComboBox::from_id_salt("serial-format")
            .selected_text(match p.format {
                None => "auto",
                Some(Format::Text) => "text",
                Some(Format::Binary) => "binary",
            })
            .show_ui(ui, |ui| {
                ui.selectable_value(&mut p.format, None, "auto");
                ui.selectable_value(&mut p.format, Some(Format::Text), "text lines");
                ui.selectable_value(&mut p.format, Some(Format::Binary), "binary frames");
            })
            .response
            .on_hover_text("Wire format; auto detects it from the first bytes.");
    });
    ui.add(
        egui::Slider::new(&mut p.fs_hz, 0.0..=4000.0)
            .text("Sample rate")
            .suffix(" Hz")
            .max_decimals(0),
    )
    .on_hover_text(
        "0: from the stream's `# fs=` line, else estimated from the arrival of the frames.",
    );
    if ui
        .add_enabled(!p.path.is_empty(), egui::Button::new("Connect"))
        .on_hover_text("Read this port. If the device goes away the monitor keeps running and reopens it when it returns.")
        .clicked()
    {
        req = Some(SourceRequest::Serial(SerialSpec {
            path: p.path.clone(),
            baud: p.baud,
            format: p.format,
            fs_hz: (p.fs_hz > 0.0).then_some(p.fs_hz),
            scale: InputScale::default(),
            physical_to_uv: 1e3,
        }));
    }
    req
}
