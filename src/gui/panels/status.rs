//! The status line: source, rate, counters.

use eframe::egui;

use crate::gui::state::View;

/// A sample rate as people write it: "250 Hz", "249.9 Hz", "1000 Hz".
pub fn rate_text(fs: f64) -> String {
    if (fs - fs.round()).abs() < 0.05 {
        format!("{:.0} Hz", fs)
    } else {
        format!("{fs:.1} Hz")
    }
}

/// Draws the status line.
pub fn show(
    ui: &mut egui::Ui,
    view: &View,
    source: &str,
    paused: bool,
    rec: Option<&crate::recorder::RecorderStatus>,
) {
    ui.horizontal_wrapped(|ui| {
        ui.label(format!("source: {source}"));
        match &view.snapshot {
            Some(s) => {
                ui.separator();
                ui.label(rate_text(s.fs_hz));
                ui.separator();
                ui.label(format!("frames {}", s.stats.frames));
                ui.separator();
                let lost = s.stats.frames_lost;
                ui.label(format!("lost {lost}")).on_hover_text("Frames missing from the stream.");
                if s.stats.gaps > 0 {
                    ui.separator();
                    ui.colored_label(ui.visuals().warn_fg_color, format!("gaps {}", s.stats.gaps))
                        .on_hover_text("Times the device went away and came back: the stream (and any recording) has a gap there.");
                }
                ui.separator();
                ui.label(format!("display drops {}", s.stats.snapshots_dropped))
                    .on_hover_text("Screen updates skipped because drawing was slower than the data; no samples are lost.");
                if !s.electrodes_off.is_empty() {
                    ui.separator();
                    let names: Vec<String> =
                        s.electrodes_off.iter().map(|e| format!("{e} off")).collect();
                    ui.colored_label(ui.visuals().error_fg_color, names.join(", "))
                        .on_hover_text("An electrode at a rail, or picking up far more mains than the others: check its contact and lead (common practice).");
                }
                ui.separator();
                let clip = ui.label(format!("at rails {}", s.stats.clipped));
                clip.on_hover_text("Samples at an ADC rail: the true signal may have been larger.");
                if let Some(sc) = s.scale {
                    ui.separator();
                    ui.label(format!("{} µV/LSB", crate::scale::sig3(sc.uv_per_count())))
                        .on_hover_text("Input-referred resolution: ADC step divided by the front-end gain.");
                }
                if let Some(w) = &s.scale_check {
                    ui.separator();
                    ui.colored_label(ui.visuals().warn_fg_color, w)
                        .on_hover_text("Set the board's ADC bits, reference, zero level and gain under Front end.");
                }
                if s.source_done {
                    ui.separator();
                    ui.label("source ended");
                }
            }
            None => {
                ui.separator();
                ui.label("waiting for data…");
            }
        }
        ui.separator();
        match rec {
            Some(r) if r.active.is_some() => {
                ui.colored_label(
                    egui::Color32::from_rgb(220, 70, 60),
                    format!(
                        "recording {} · {:.0} s",
                        r.active
                            .as_ref()
                            .and_then(|p| p.file_name())
                            .map(|f| f.to_string_lossy().into_owned())
                            .unwrap_or_default(),
                        r.elapsed_s
                    ),
                );
            }
            Some(r) if r.failed => {
                ui.colored_label(ui.visuals().error_fg_color, "recording stopped (see Recording)");
            }
            _ => {
                ui.label("not recording");
            }
        }
        if paused {
            ui.separator();
            ui.label(egui::RichText::new("FROZEN").strong())
                .on_hover_text("The display is frozen; data keep flowing (and recording goes on).");
        }
    });
}

/// The serial link's line: connection, format, rate (set or estimated), wire errors.
pub fn serial_line(ui: &mut egui::Ui, st: &crate::source::serial::SerialStatus) {
    ui.horizontal_wrapped(|ui| {
        let colour = if st.connected { ui.visuals().text_color() } else { ui.visuals().warn_fg_color };
        ui.colored_label(colour, &st.message);
        if let Some(f) = st.format {
            ui.separator();
            ui.label(match f {
                crate::wire::Format::Text => "text lines",
                crate::wire::Format::Binary => "binary frames",
            });
        }
        if let Some(fs) = st.fs_hz {
            ui.separator();
            if st.estimated {
                let spread = if st.spread_hz.is_finite() {
                    format!(" ±{:.1} Hz", st.spread_hz)
                } else {
                    String::new()
                };
                ui.label(format!("{fs:.1} Hz estimated{spread}"))
                    .on_hover_text("No rate was given or sent: estimated from when the frames arrived (least-squares slope of frames against time over 2 s; ± is its standard error).");
            } else {
                ui.label(rate_text(fs));
            }
        }
        let w = st.wire;
        ui.separator();
        ui.label(format!(
            "bad CRC {} · malformed {} · over-long {} · lost {} · garbage {} B · reconnects {}",
            w.bad_crc, w.malformed_lines, w.long_lines, w.lost_frames, w.garbage_bytes, st.reconnects
        ))
        .on_hover_text("What the decoder had to skip: frames with a bad checksum, lines that were not numbers, lines too long, frames missing by sequence number, bytes between frames.");
    });
}

/// The network link's line: peer, datagrams, bytes, ordering counters, rate, decoder errors.
pub fn net_line(ui: &mut egui::Ui, st: &crate::source::net::NetStatus) {
    ui.horizontal_wrapped(|ui| {
        let colour = if st.error.is_some() {
            ui.visuals().error_fg_color
        } else if st.connected {
            ui.visuals().text_color()
        } else {
            ui.visuals().warn_fg_color
        };
        ui.colored_label(colour, &st.message);
        ui.separator();
        ui.label(format!("datagrams {} · {} bytes", st.datagrams, st.bytes));
        if let Some(fs) = st.fs_hz {
            ui.separator();
            if st.estimated {
                ui.label(format!("{fs:.1} Hz estimated ±{:.1} Hz", st.spread_hz));
            } else {
                ui.label(rate_text(fs));
            }
        }
        ui.separator();
        if st.losses_uncountable {
            ui.label("text lines carry no sequence number: losses cannot be counted")
                .on_hover_text("Send binary frames over UDP to have lost, duplicate and late frames counted and put back in order.");
        } else {
            let o = st.order;
            ui.label(format!(
                "lost {} · duplicate {} · late {} · reordered {}",
                o.lost, o.duplicate, o.late, o.reordered
            ))
            .on_hover_text("Frames missing (marked as gaps), received twice, arriving after they were given up (50 ms), and put back in order.");
        }
        ui.separator();
        ui.label(format!("foreign {} · empty {} · reconnects {}", st.foreign, st.empty, st.reconnects))
            .on_hover_text("Datagrams from another sender (ignored), datagrams with no frame in them, and TCP links re-established.");
        let w = st.wire;
        if w.bad_crc + w.malformed_lines + w.garbage_bytes > 0 {
            ui.separator();
            ui.label(format!(
                "bad CRC {} · malformed {} · garbage {} B",
                w.bad_crc, w.malformed_lines, w.garbage_bytes
            ));
        }
    });
}
