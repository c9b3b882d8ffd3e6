//! PNG plots for the command line (plotters on an RGB buffer, encoded with the png crate), with
//! labelled axes and units. The font is egui's own Ubuntu Light, so no system fonts are needed.

use std::path::Path;
use std::sync::Once;

use plotters::prelude::*;

use crate::analysis::mains::MainsReport;
use crate::dsp::spectrum::Psd;

/// Why a plot was not written.
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// Drawing failed (plotters' message).
    #[error("drawing the plot: {0}")]
    Draw(String),
    /// Writing the PNG failed.
    #[error("{path}: {source}")]
    Io {
        path: String,
        #[source]
        source: std::io::Error,
    },
}

const FONT: &str = "sans-serif";

fn register_font() {
    static ONCE: Once = Once::new();
    ONCE.call_once(|| {
        // The bundled font is a valid TTF; a failure would only mean plots without text.
        let _ = plotters::style::register_font(
            FONT,
            FontStyle::Normal,
            epaint_default_fonts::UBUNTU_LIGHT,
        );
    });
}

fn draw_err<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError::Draw(e.to_string())
}

/// Writes `rgb` (w × h × 3) as a PNG.
///
/// # Errors
/// [`PlotError::Io`] when the file cannot be written.
pub fn write_rgb_png(path: &Path, rgb: &[u8], w: u32, h: u32) -> Result<(), PlotError> {
    let io = |source: std::io::Error| PlotError::Io {
        path: path.display().to_string(),
        source,
    };
    let f = std::fs::File::create(path).map_err(io)?;
    let mut enc = png::Encoder::new(std::io::BufWriter::new(f), w, h);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    let mut writer = enc
        .write_header()
        .map_err(|e| io(std::io::Error::other(e)))?;
    writer
        .write_image_data(rgb)
        .map_err(|e| io(std::io::Error::other(e)))?;
    writer.finish().map_err(|e| io(std::io::Error::other(e)))
}

/// The PSD on log–log axes (dB re 1 µV²/Hz against Hz), with the mains lines marked.
///
/// # Errors
/// [`PlotError`] if drawing or writing fails.
pub fn psd_png(
    path: &Path,
    psd: &Psd,
    mains: Option<&MainsReport>,
    title: &str,
) -> Result<(), PlotError> {
    register_font();
    let (w, h) = (1200u32, 700u32);
    let mut buf = vec![0u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(draw_err)?;
        let pts: Vec<(f64, f64)> = psd
            .freqs_hz
            .iter()
            .zip(&psd.density)
            .skip(1)
            .map(|(&f, &d)| (f, 10.0 * d.max(1e-30).log10()))
            .collect();
        let f_lo = pts.first().map_or(0.1, |p| p.0);
        let f_hi = pts.last().map_or(100.0, |p| p.0);
        let y_hi = pts.iter().map(|p| p.1).fold(f64::MIN, f64::max).ceil() + 5.0;
        let y_lo = (y_hi - 110.0).max(pts.iter().map(|p| p.1).fold(f64::MAX, f64::min).floor());
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 24))
            .margin(16)
            .x_label_area_size(50)
            .y_label_area_size(70)
            .build_cartesian_2d((f_lo..f_hi).log_scale(), y_lo..y_hi)
            .map_err(draw_err)?;
        chart
            .configure_mesh()
            .x_desc("frequency (Hz)")
            .y_desc("PSD (dB re 1 µV²/Hz, input-referred)")
            .label_style((FONT, 16))
            .axis_desc_style((FONT, 18))
            .draw()
            .map_err(draw_err)?;
        chart
            .draw_series(LineSeries::new(
                pts.iter().map(|&(f, d)| (f, d.max(y_lo))),
                &RGBColor(0, 120, 110),
            ))
            .map_err(draw_err)?;
        if let Some(r) = mains {
            for hmc in &r.harmonics {
                let k = (hmc.hz / psd.bin_hz).round() as usize;
                let level = psd
                    .density
                    .get(k)
                    .map_or(y_lo, |d| 10.0 * d.max(1e-30).log10());
                chart
                    .draw_series(std::iter::once(Circle::new(
                        (hmc.hz, level),
                        5,
                        RGBColor(200, 120, 30).filled(),
                    )))
                    .map_err(draw_err)?;
                let label = if hmc.order == 1 {
                    format!("{:.2} Hz {:.1} µV", hmc.hz, hmc.rms_uv)
                } else {
                    format!("{:.1} µV", hmc.rms_uv)
                };
                chart
                    .draw_series(std::iter::once(plotters::element::Text::new(
                        label,
                        (hmc.hz, level + 4.0),
                        (FONT, 15),
                    )))
                    .map_err(draw_err)?;
            }
        }
        root.present().map_err(draw_err)?;
    }
    write_rgb_png(path, &buf, w, h)
}
