//! Network source controls: listen for a Wi-Fi board's UDP datagrams, or connect to a board
//! that listens on TCP.

use eframe::egui;

use crate::scale::InputScale;
use crate::source::SourceSpec;

/// The controls' own state.
#[derive(Debug, Clone)]
pub struct NetPicker {
    udp: bool,
    listen_port: u16,
    from: String,
    host: String,
    tcp_port: u16,
    rate_set: bool,
    fs_hz: f64,
}

impl Default for NetPicker {
    fn default() -> Self {
        Self {
            udp: true,
            listen_port: 5005,
            from: String::new(),
            host: String::new(),
            tcp_port: 5006,
            rate_set: false,
            fs_hz: 500.0,
        }
    }
}

/// What the user asked for.
#[derive(Debug, Clone, PartialEq)]
pub enum NetRequest {
    /// Start this network source.
    Connect(Box<SourceSpec>),
    /// Back to the simulator.
    Disconnect,
}

/// Draws the controls; `active` says a network source is running. `error` is why the last
/// attempt did not start.
pub fn show(
    ui: &mut egui::Ui,
    p: &mut NetPicker,
    active: bool,
    scale: InputScale,
    error: Option<&str>,
) -> Option<crate::gui::action::Action> {
    use crate::gui::action::{Action, SourceChoice};
    pick(ui, p, active, scale, error).map(|r| {
        Action::Source(match r {
            NetRequest::Connect(spec) => SourceChoice::Network(*spec),
            NetRequest::Disconnect => SourceChoice::Simulator,
        })
    })
}

fn pick(
    ui: &mut egui::Ui,
    p: &mut NetPicker,
    active: bool,
    scale: InputScale,
    error: Option<&str>,
) -> Option<NetRequest> {
    let mut req = None;
    ui.horizontal(|ui| {
        ui.label(if active {
            "Network (active):"
        } else {
            "Network:"
        });
        ui.selectable_value(&mut p.udp, true, "UDP")
            .on_hover_text("leadline listens; the board sends datagrams to this computer.");
        ui.selectable_value(&mut p.udp, false, "TCP").on_hover_text(
            "The board listens; leadline connects (and reconnects if the link drops).",
        );
    });
    if p.udp {
        ui.horizontal(|ui| {
            ui.label("listen port");
            ui.add(egui::DragValue::new(&mut p.listen_port).range(1..=65535))
                .on_hover_text("The UDP port the board sends to (on every interface of this computer).");
            ui.add(
                egui::TextEdit::singleline(&mut p.from)
                    .hint_text("only from (IP)")
                    .desired_width(110.0),
            )
            .on_hover_text("Take datagrams from this address only; empty: the first board that sends. Others are counted as foreign and ignored.");
        });
    } else {
        ui.horizontal(|ui| {
            ui.add(
                egui::TextEdit::singleline(&mut p.host)
                    .hint_text("board address")
                    .desired_width(130.0),
            )
            .on_hover_text("The board's IP address or host name.");
            ui.add(egui::DragValue::new(&mut p.tcp_port).range(1..=65535))
                .on_hover_text("The TCP port the board listens on.");
        });
    }
    ui.horizontal(|ui| {
        ui.label("rate");
        super::rate_choice(ui, "net-rate", &mut p.rate_set, &mut p.fs_hz, "As for serial: the stream's `# fs=` line, else estimated from arrival times; or the rate you set (binary frames carry no rate).");
    });
    ui.horizontal(|ui| {
        let text = if p.udp {
            if p.from.trim().is_empty() {
                format!("udp:{}", p.listen_port)
            } else {
                format!("udp:{}?from={}", p.listen_port, p.from.trim())
            }
        } else {
            format!("tcp:{}:{}", p.host.trim(), p.tcp_port)
        };
        let can = p.udp || !p.host.trim().is_empty();
        if ui
            .add_enabled(
                can,
                egui::Button::new(if p.udp { "Listen" } else { "Connect" }),
            )
            .on_hover_text(format!("Start the source {text}."))
            .clicked()
        {
            match SourceSpec::parse(&text, p.rate_set.then_some(p.fs_hz), scale) {
                Ok(spec) => req = Some(NetRequest::Connect(Box::new(spec))),
                Err(e) => {
                    ui.colored_label(ui.visuals().error_fg_color, e.to_string());
                }
            }
        }
        if active
            && ui
                .button("Disconnect")
                .on_hover_text("Stop the network source and go back to the simulator.")
                .clicked()
        {
            req = Some(NetRequest::Disconnect);
        }
    });
    if let Some(e) = error {
        ui.colored_label(ui.visuals().error_fg_color, e);
    }
    req
}
