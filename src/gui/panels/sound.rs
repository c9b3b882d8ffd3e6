//! Sound: the beat tone and listening to the signal. The device is opened when sound is first
//! asked for; with none the monitor goes on and says so.

use eframe::egui;

use crate::msg::{Control, SoundFeed};
use crate::sound::SoundSettings;
use crate::sound::device::SoundOut;

/// The section's state: what is asked, and the open device.
#[derive(Debug)]
pub struct SoundPanel {
    pub settings: SoundSettings,
    out: Option<SoundOut>,
    /// "no sound device" (or the device's own words) once opening failed.
    pub error: Option<String>,
    /// Render and discard (the bench: the cost without a card).
    pub discard: bool,
}

impl Default for SoundPanel {
    fn default() -> Self {
        Self {
            settings: SoundSettings {
                tone: false,
                signal: false,
                ..SoundSettings::default()
            },
            out: None,
            error: None,
            discard: false,
        }
    }
}

impl SoundPanel {
    /// The control for the DSP thread as things stand: a feed when sound is on and there is
    /// somewhere for it to go.
    pub fn control(&mut self) -> Control {
        let on = self.settings.tone || self.settings.signal;
        if !on {
            return Control::Sound(None);
        }
        if self.discard {
            return Control::Sound(Some(SoundFeed {
                settings: self.settings,
                rate_hz: f64::from(crate::sound::DEFAULT_RATE_HZ),
                tx: None,
            }));
        }
        if self.out.is_none() && self.error.is_none() {
            match SoundOut::open() {
                Ok(o) => self.out = Some(o),
                Err(e) => self.error = Some(e),
            }
        }
        match &self.out {
            Some(o) => Control::Sound(Some(SoundFeed {
                settings: self.settings,
                rate_hz: f64::from(o.rate()),
                tx: Some(o.sender()),
            })),
            None => Control::Sound(None),
        }
    }
}

/// Draws the section; returns the control to send when something changed.
pub fn show(ui: &mut egui::Ui, p: &mut SoundPanel) -> Option<crate::gui::action::Action> {
    controls(ui, p).map(crate::gui::action::Action::Control)
}

fn controls(ui: &mut egui::Ui, p: &mut SoundPanel) -> Option<Control> {
    let before = p.settings;
    ui.checkbox(&mut p.settings.tone, "Tone on each beat")
        .on_hover_text(
            "A short tone when each beat is decided; silent while the rate is unreliable.",
        );
    ui.checkbox(&mut p.settings.signal, "Listen to the signal")
        .on_hover_text("The filtered channel through the sound card, resampled, with a limiter.");
    ui.add_enabled_ui(p.settings.tone, |ui| {
        ui.add(
            egui::Slider::new(&mut p.settings.pitch_hz, 200.0..=4000.0)
                .logarithmic(true)
                .text("pitch, Hz"),
        );
        ui.add(egui::Slider::new(&mut p.settings.volume, 0.0..=1.0).text("volume"));
    });
    ui.add_enabled_ui(p.settings.signal, |ui| {
        ui.add(
            egui::Slider::new(&mut p.settings.signal_gain, 0.1..=100.0)
                .logarithmic(true)
                .text("signal gain (×1: 1 mV is full scale)"),
        );
    });
    if let Some(e) = &p.error {
        ui.colored_label(egui::Color32::from_rgb(0xd0, 0x8a, 0x20), e);
        if ui.small_button("Try again").clicked() {
            p.error = None;
            return Some(p.control());
        }
    } else if let Some(o) = &p.out {
        ui.weak(format!("sound card at {} Hz", o.rate()));
    }
    (p.settings != before).then(|| p.control())
}
