//! Writing a captured frame to PNG.

use std::path::Path;

use anyhow::{Context, Result};
use eframe::egui::ColorImage;

/// Saves `img` as an 8-bit RGBA PNG.
///
/// # Errors
/// The file cannot be created or written.
pub fn save_png(img: &ColorImage, path: &Path) -> Result<()> {
    let [w, h] = img.size;
    let f =
        std::fs::File::create(path).with_context(|| format!("cannot create {}", path.display()))?;
    let mut enc = png::Encoder::new(std::io::BufWriter::new(f), w as u32, h as u32);
    enc.set_color(png::ColorType::Rgba);
    enc.set_depth(png::BitDepth::Eight);
    let mut writer = enc.write_header().context("writing PNG header")?;
    let bytes: Vec<u8> = img
        .pixels
        .iter()
        .flat_map(|c| c.to_srgba_unmultiplied())
        .collect();
    writer
        .write_image_data(&bytes)
        .context("writing PNG data")?;
    writer.finish().context("finishing PNG")?;
    Ok(())
}
