//! PNG plots for the command line (plotters on an RGB buffer, encoded with the png crate), with
//! labelled axes and units. The font is egui's own Ubuntu Light, so no system fonts are needed.

use std::path::Path;
use std::sync::Once;

use plotters::prelude::*;

use crate::analysis::mains::MainsReport;
use crate::dsp::spectrum::Psd;
use crate::msg::Columns;

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

/// A log-frequency chart with its grid and labelled axes drawn.
type LogFreqChart<'a, 'b> = ChartContext<
    'a,
    BitMapBackend<'b>,
    Cartesian2d<LogCoord<f64>, plotters::coord::types::RangedCoordf64>,
>;

fn log_freq_chart<'a, 'b>(
    root: &'a DrawingArea<BitMapBackend<'b>, plotters::coord::Shift>,
    title: &str,
    f: (f64, f64),
    y: (f64, f64),
    y_desc: &str,
) -> Result<LogFreqChart<'a, 'b>, PlotError> {
    let mut chart = ChartBuilder::on(root)
        .caption(title, (FONT, 24))
        .margin(16)
        .x_label_area_size(50)
        .y_label_area_size(70)
        .build_cartesian_2d((f.0..f.1).log_scale(), y.0..y.1)
        .map_err(draw_err)?;
    chart
        .configure_mesh()
        .x_desc("frequency (Hz)")
        .y_desc(y_desc)
        .label_style((FONT, 16))
        .axis_desc_style((FONT, 18))
        .draw()
        .map_err(draw_err)?;
    Ok(chart)
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
            .map(|(&f, &d)| (f, crate::numeric::db10(d.max(1e-30))))
            .collect();
        let f_lo = pts.first().map_or(0.1, |p| p.0);
        let f_hi = pts.last().map_or(100.0, |p| p.0);
        let y_hi = pts.iter().map(|p| p.1).fold(f64::MIN, f64::max).ceil() + 5.0;
        let y_lo = (y_hi - 110.0).max(pts.iter().map(|p| p.1).fold(f64::MAX, f64::min).floor());
        let mut chart = log_freq_chart(
            &root,
            title,
            (f_lo, f_hi),
            (y_lo, y_hi),
            "PSD (dB re 1 µV²/Hz, input-referred)",
        )?;
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
                    .map_or(y_lo, |d| crate::numeric::db10(d.max(1e-30)));
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

/// One line of a trace plot: min/max per column (a single value per column draws a plain line).
#[derive(Debug, Clone)]
pub struct TraceLine<'a> {
    pub label: &'a str,
    pub rgb: (u8, u8, u8),
    pub columns: &'a Columns,
}

/// Traces against time (s) in `unit` (values are µV, divided by `uv_per_unit`), with markers as
/// vertical lines and their text.
///
/// # Errors
/// [`PlotError`] if drawing or writing fails, or there is nothing to draw.
pub fn trace_png(
    path: &Path,
    lines: &[TraceLine<'_>],
    (unit, uv_per_unit): (&str, f64),
    markers: &[(f64, String)],
    title: &str,
) -> Result<(), PlotError> {
    register_font();
    let (w, h) = (1400u32, 600u32);
    let cols: Vec<&Columns> = lines
        .iter()
        .map(|l| l.columns)
        .filter(|c| !c.min.is_empty())
        .collect();
    let Some(first) = cols.first() else {
        return Err(PlotError::Draw("no samples to plot yet".into()));
    };
    let t_lo = first.t0_s;
    let t_hi = cols
        .iter()
        .map(|c| c.t0_s + c.dt_s * c.min.len() as f64)
        .fold(t_lo + 1e-3, f64::max);
    let k = 1.0 / uv_per_unit;
    let (v_lo, v_hi, pad) = value_range(&cols, k);
    let mut buf = vec![0u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(draw_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 24))
            .margin(16)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(t_lo..t_hi, v_lo..v_hi)
            .map_err(draw_err)?;
        chart
            .configure_mesh()
            .x_desc("time (s)")
            .y_desc(format!("{unit} at the electrodes"))
            .label_style((FONT, 16))
            .axis_desc_style((FONT, 18))
            .draw()
            .map_err(draw_err)?;
        for l in lines {
            let c = l.columns;
            let colour = RGBColor(l.rgb.0, l.rgb.1, l.rgb.2);
            // Down to the column's low, up to its high: the band the samples in it span.
            let pts = c
                .min
                .iter()
                .zip(&c.max)
                .enumerate()
                .flat_map(|(i, (&a, &b))| {
                    let t = c.t0_s + (i as f64 + 0.5) * c.dt_s;
                    [(t, f64::from(a) * k), (t, f64::from(b) * k)]
                });
            chart
                .draw_series(LineSeries::new(pts, &colour))
                .map_err(draw_err)?
                .label(l.label)
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], colour));
        }
        for (t, text) in markers {
            if *t < t_lo || *t > t_hi {
                continue;
            }
            let c = RGBColor(170, 60, 160);
            chart
                .draw_series(std::iter::once(PathElement::new(
                    vec![(*t, v_lo), (*t, v_hi)],
                    c,
                )))
                .map_err(draw_err)?;
            chart
                .draw_series(std::iter::once(plotters::element::Text::new(
                    text.clone(),
                    (*t, v_hi - pad * 0.5),
                    (FONT, 15).into_font().color(&c),
                )))
                .map_err(draw_err)?;
        }
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK)
            .label_font((FONT, 16))
            .draw()
            .map_err(draw_err)?;
        root.present().map_err(draw_err)?;
    }
    write_rgb_png(path, &buf, w, h)
}

/// The value axis of the columns in display units (µV × `k`), padded by 6 %: (low, high, pad).
fn value_range(cols: &[&Columns], k: f64) -> (f64, f64, f64) {
    let (mut v_lo, mut v_hi) = (f64::MAX, f64::MIN);
    for c in cols {
        for (&a, &b) in c.min.iter().zip(&c.max) {
            if a.is_finite() && b.is_finite() {
                v_lo = v_lo.min(f64::from(a) * k);
                v_hi = v_hi.max(f64::from(b) * k);
            }
        }
    }
    if v_lo >= v_hi {
        (v_lo, v_hi) = (v_lo - 1.0, v_lo + 1.0);
    }
    let pad = 0.06 * (v_hi - v_lo);
    (v_lo - pad, v_hi + pad, pad)
}

/// Min/max columns of `x` (µV) at `fs`: about `n` columns, for plotting long signals.
pub fn columns_of(x: &[f64], fs: f64, n: usize) -> Columns {
    let per = x.len().div_ceil(n.max(1)).max(1);
    let (lo, hi) = crate::numeric::minmax_runs(x, per);
    Columns {
        t0_s: 0.0,
        dt_s: per as f64 / fs,
        min: lo.iter().map(|&v| v as f32).collect(),
        max: hi.iter().map(|&v| v as f32).collect(),
    }
}

/// A measured response (frequency, dB, trusted) as points over the design's gain (a line,
/// shifted by the given dB to the measured pass band), for a lab report. Untrusted points (low
/// coherence) are drawn grey.
///
/// # Errors
/// The file cannot be written.
pub fn response_png(
    path: &Path,
    measured: &[(f64, f64, bool)],
    design: Option<(&[crate::dsp::Section], f64)>,
    fs: f64,
    title: &str,
) -> Result<(), PlotError> {
    register_font();
    let (w, h) = (1200u32, 700u32);
    let mut buf = vec![0u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(draw_err)?;
        let f_lo = measured.first().map_or(0.1, |p| p.0).max(1e-3);
        let f_hi = measured
            .last()
            .map_or(crate::dsp::highest_corner_hz(fs), |p| p.0)
            .max(f_lo * 10.0);
        let trusted: Vec<f64> = measured.iter().filter(|p| p.2).map(|p| p.1).collect();
        let y_hi = trusted
            .iter()
            .copied()
            .fold(f64::MIN, f64::max)
            .max(0.0)
            .ceil()
            + 6.0;
        let y_lo = y_hi - 66.0;
        let mut chart = log_freq_chart(&root, title, (f_lo, f_hi), (y_lo, y_hi), "gain (dB)")?;
        if let Some((secs, offset_db)) = design {
            let n = 400;
            let line: Vec<(f64, f64)> = (0..=n)
                .map(|i| {
                    let f = f_lo * (f_hi / f_lo).powf(i as f64 / n as f64);
                    let g = 20.0
                        * crate::dsp::response::magnitude(secs, f, fs)
                            .max(1e-12)
                            .log10();
                    (f, (g + offset_db).max(y_lo))
                })
                .collect();
            chart
                .draw_series(LineSeries::new(line, &RGBColor(150, 150, 150)))
                .map_err(draw_err)?
                .label(format!(
                    "design, shifted to the measured pass band ({offset_db:+.1} dB)"
                ))
                .legend(|(x, y)| {
                    PathElement::new(vec![(x, y), (x + 20, y)], RGBColor(150, 150, 150))
                });
        }
        chart
            .draw_series(
                measured
                    .iter()
                    .filter(|p| p.2)
                    .map(|p| Circle::new((p.0, p.1.max(y_lo)), 2, RGBColor(0, 110, 160).filled())),
            )
            .map_err(draw_err)?
            .label("measured")
            .legend(|(x, y)| Circle::new((x + 10, y), 3, RGBColor(0, 110, 160).filled()));
        chart
            .draw_series(measured.iter().filter(|p| !p.2).map(|p| {
                Circle::new(
                    (p.0, p.1.clamp(y_lo, y_hi)),
                    2,
                    RGBColor(200, 200, 200).filled(),
                )
            }))
            .map_err(draw_err)?;
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.8))
            .border_style(BLACK)
            .label_font((FONT, 16))
            .draw()
            .map_err(draw_err)?;
        root.present().map_err(draw_err)?;
    }
    write_rgb_png(path, &buf, w, h)
}

/// One piece of a twelve-lead sheet for [`sheet_png`]: a label, where it goes (s, mV), and the
/// polyline (x s from the sheet's start, y mV including the row's offset).
pub struct SheetPiece<'a> {
    pub label: &'a str,
    pub at: [f64; 2],
    pub points: &'a [[f64; 2]],
}

/// The twelve leads as a print-out: `span` s wide at 25 mm/s and 10 mm/mV (the image keeps
/// that aspect), on a paper grid of 1 mm and 5 mm divisions when `grid`, with the calibration
/// pulses and the pieces.
///
/// # Errors
/// Drawing or writing failed.
pub fn sheet_png(
    path: &Path,
    pieces: &[SheetPiece<'_>],
    pulses: &[Vec<[f64; 2]>],
    (span, rows_mv): (f64, f64),
    grid: bool,
    title: &str,
) -> Result<(), PlotError> {
    register_font();
    // 25 mm/s and 10 mm/mV at 6 pixels per mm.
    let px_mm = 6.0;
    let (x0, x1, y0, y1) = (-0.5, span, -1.5, rows_mv + 1.6);
    let w = ((x1 - x0) * 25.0 * px_mm) as u32 + 120;
    let h = ((y1 - y0) * 10.0 * px_mm) as u32 + 110;
    let mut buf = vec![0u8; (w * h * 3) as usize];
    {
        let root = BitMapBackend::with_buffer(&mut buf, (w, h)).into_drawing_area();
        root.fill(&WHITE).map_err(draw_err)?;
        let mut chart = ChartBuilder::on(&root)
            .caption(title, (FONT, 22))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .build_cartesian_2d(x0..x1, y0..y1)
            .map_err(draw_err)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc("time (s), 25 mm/s")
            .y_desc("mV, 10 mm/mV (rows 3 mV apart)")
            .label_style((FONT, 14))
            .axis_desc_style((FONT, 16))
            .draw()
            .map_err(draw_err)?;
        if grid {
            let (minor, major) = (RGBColor(250, 214, 214), RGBColor(236, 150, 150));
            let mut lines = Vec::new();
            for k in 0..=((x1 - x0) / 0.04).round() as i64 {
                let x = x0 + k as f64 * 0.04;
                lines.push((vec![(x, y0), (x, y1)], k % 5 == 0));
            }
            for k in 0..=((y1 - y0) / 0.1).round() as i64 {
                let y = y0 + k as f64 * 0.1;
                lines.push((vec![(x0, y), (x1, y)], k % 5 == 0));
            }
            for major_pass in [false, true] {
                let c = if major_pass { major } else { minor };
                chart
                    .draw_series(
                        lines
                            .iter()
                            .filter(|l| l.1 == major_pass)
                            .map(|l| PathElement::new(l.0.clone(), c)),
                    )
                    .map_err(draw_err)?;
            }
        }
        let ink = RGBColor(20, 20, 20);
        for p in pulses {
            chart
                .draw_series(LineSeries::new(
                    p.iter().map(|q| (q[0], q[1])),
                    ink.stroke_width(2),
                ))
                .map_err(draw_err)?;
        }
        for p in pieces {
            chart
                .draw_series(LineSeries::new(
                    p.points.iter().map(|q| (q[0], q[1])),
                    ink.stroke_width(2),
                ))
                .map_err(draw_err)?;
            chart
                .draw_series(std::iter::once(plotters::element::Text::new(
                    p.label.to_string(),
                    (p.at[0], p.at[1]),
                    (FONT, 18).into_font().color(&ink),
                )))
                .map_err(draw_err)?;
        }
        root.present().map_err(draw_err)?;
    }
    write_rgb_png(path, &buf, w, h)
}
