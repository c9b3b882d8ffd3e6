//! A scripted run's end (`--exit-after`, `--screenshot`): capture the last frame, write it as
//! a PNG, close the window.

use std::path::Path;
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use anyhow::{Context, Result};
use eframe::egui::{self, ColorImage};

type Shot = Arc<Mutex<Option<Arc<ColorImage>>>>;

/// Closes the window when an `--exit-after` run is due, after its screenshot if one was asked.
pub struct ScriptedExit {
    started: Instant,
    shot: Shot,
    shot_requested: Option<Instant>,
    /// Where the run's result goes (a screenshot that could not be written is an error).
    outcome: Arc<Mutex<Result<()>>>,
}

impl ScriptedExit {
    pub fn new(outcome: Arc<Mutex<Result<()>>>) -> Self {
        Self {
            started: Instant::now(),
            shot: Arc::default(),
            shot_requested: None,
            outcome,
        }
    }

    /// Called every frame.
    pub fn tick(&mut self, ctx: &egui::Context, opts: &mut super::AppOptions) {
        let Some(limit) = opts.exit_after_s else {
            return;
        };
        let elapsed = self.started.elapsed().as_secs_f64();
        if elapsed < limit {
            ctx.request_repaint_after(Duration::from_secs_f64(limit - elapsed));
            return;
        }
        let Some(path) = opts.screenshot.clone() else {
            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            return;
        };
        let taken = self.shot.lock().ok().and_then(|mut g| g.take());
        if let Some(img) = taken {
            let r = save_png(&img, &path);
            if r.is_ok() {
                eprintln!("screenshot saved to {}", path.display());
            }
            if let Ok(mut o) = self.outcome.lock() {
                *o = r;
            }
            opts.screenshot = None;
            ctx.send_viewport_cmd(egui::ViewportCommand::Close);
        } else if let Some(t) = self.shot_requested {
            if t.elapsed() > Duration::from_secs(5) {
                if let Ok(mut o) = self.outcome.lock() {
                    *o = Err(anyhow::anyhow!("the window never delivered a screenshot"));
                }
                ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            }
            ctx.request_repaint_after(Duration::from_millis(50));
        } else {
            let slot = Arc::clone(&self.shot);
            let waker = ctx.clone();
            ctx.request_screenshot(move |img| {
                if let Ok(mut g) = slot.lock() {
                    *g = Some(img);
                }
                waker.request_repaint();
            });
            self.shot_requested = Some(Instant::now());
            ctx.request_repaint();
        }
    }
}

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
