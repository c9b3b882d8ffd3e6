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
    rate_set: bool,
}

/// The port list with the active port in it (first when the OS does not list it, as with a
/// pseudo-terminal), and the path to keep selected: the one chosen, if the OS still lists it or
/// it is the active port; else the active port; else the first listed.
pub fn port_choices(
    listed: Vec<String>,
    chosen: &str,
    active: Option<&str>,
) -> (Vec<String>, String) {
    let mut ports = listed;
    if let Some(a) = active
        && !ports.iter().any(|p| p == a)
    {
        ports.insert(0, a.to_string());
    }
    let keep =
        if !chosen.is_empty() && (ports.iter().any(|p| p == chosen) || Some(chosen) == active) {
            chosen.to_string()
        } else if let Some(a) = active {
            a.to_string()
        } else {
            ports.first().cloned().unwrap_or_default()
        };
    (ports, keep)
}

impl Default for SourcePicker {
    fn default() -> Self {
        let ports = list_ports();
        Self {
            path: ports.first().cloned().unwrap_or_default(),
            ports,
            baud: 115_200,
            format: None,
            fs_hz: 250.0,
            rate_set: false,
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

/// Draws the source controls. `active` is the serial port being read, if any; `simulating` says
/// the simulator is the source; `scale` the board's ADC model for channel 1 (the DSP thread
/// applies the whole front end live).
pub fn show(
    ui: &mut egui::Ui,
    p: &mut SourcePicker,
    active: Option<&str>,
    simulating: bool,
    scale: InputScale,
) -> Option<crate::gui::action::Action> {
    use crate::gui::action::{Action, SourceChoice};
    pick(ui, p, active, simulating, scale).map(|r| {
        Action::Source(match r {
            SourceRequest::Simulator => SourceChoice::Simulator,
            SourceRequest::Serial(spec) => SourceChoice::Serial(spec),
        })
    })
}

fn pick(
    ui: &mut egui::Ui,
    p: &mut SourcePicker,
    active: Option<&str>,
    simulating: bool,
    scale: InputScale,
) -> Option<SourceRequest> {
    let serial_active = active.is_some();
    if let Some(a) = active
        && !p.ports.iter().any(|x| x == a)
    {
        // The port being read is always in the list, and chosen when it first appears.
        let (ports, _) = port_choices(std::mem::take(&mut p.ports), &p.path, active);
        p.ports = ports;
        p.path = a.to_string();
    }
    let mut req = None;
    ui.horizontal(|ui| {
        if ui
            .selectable_label(simulating, "Simulator")
            .on_hover_text("The built-in synthetic ECG: no hardware needed.")
            .clicked()
            && !simulating
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
                    let label = if Some(name.as_str()) == active {
                        format!("{name} (active)")
                    } else {
                        name.clone()
                    };
                    ui.selectable_value(&mut p.path, name.clone(), label);
                }
            })
            .response
            .on_hover_text("Serial ports the system lists. A pseudo-terminal from `leadline simulate --pty` can be typed below.");
        if ui.button("Refresh").on_hover_text("List the serial ports again (after plugging a board in); the chosen port stays chosen.").clicked() {
            let (ports, keep) = port_choices(list_ports(), &p.path, active);
            p.ports = ports;
            p.path = keep;
        }
    });
    ui.add(
        egui::TextEdit::singleline(&mut p.path)
            .hint_text("/dev/ttyACM0")
            .desired_width(200.0),
    )
    .on_hover_text("Device path of the board's serial port.");
    line_settings(ui, p);
    ui.horizontal(|ui| {
        ui.label("Sample rate");
        super::rate_choice(ui, "serial-rate", &mut p.rate_set, &mut p.fs_hz, "From the stream's `# fs=` line when it sends one, else estimated from when the frames arrive; or the rate you set.");
    });
    if ui
        .add_enabled(!p.path.is_empty(), egui::Button::new("Connect"))
        .on_hover_text("Read this port. If the device goes away the monitor keeps running and reopens it when it returns.")
        .clicked()
    {
        req = Some(SourceRequest::Serial(SerialSpec {
            path: p.path.clone(),
            baud: p.baud,
            format: p.format,
            fs_hz: p.rate_set.then_some(p.fs_hz),
            scale,
            physical_to_uv: 1e3,
        }));
    }
    req
}

/// The line speed and the wire format.
fn line_settings(ui: &mut egui::Ui, p: &mut SourcePicker) {
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
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_active_port_is_listed_and_kept() {
        let listed = vec!["/dev/ttyS0".to_string(), "/dev/ttyUSB0".to_string()];
        // A pseudo-terminal the OS does not list: shown first, and kept after a refresh.
        let (ports, keep) = port_choices(listed.clone(), "/dev/pts/4", Some("/dev/pts/4"));
        assert_eq!(ports[0], "/dev/pts/4");
        assert_eq!(keep, "/dev/pts/4");
        // A chosen port the OS still lists stays chosen.
        let (_, keep) = port_choices(listed.clone(), "/dev/ttyUSB0", None);
        assert_eq!(keep, "/dev/ttyUSB0");
        // A chosen port that vanished gives way to the active one.
        let (_, keep) = port_choices(listed, "/dev/ttyACM9", Some("/dev/ttyUSB0"));
        assert_eq!(keep, "/dev/ttyUSB0");
    }
}
