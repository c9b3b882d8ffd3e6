//! The monitor window (eframe, glow backend). Panels read the view and return the Control they
//! want sent; the app applies them after drawing.

pub mod action;
pub mod app;
pub mod bench;
pub mod jobs;
pub mod layout;
pub mod model;
pub mod panels;
pub mod plot;
pub mod screenshot;
mod side;
pub mod state;

use std::sync::Arc;

use anyhow::{Context, Result};

pub use app::{AppOptions, LeadlineApp};

/// What the window starts with besides the settings (the command line's `monitor` options,
/// already read and checked by `cli::monitor`).
#[derive(Debug, Clone, Default)]
pub struct StartOptions {
    /// Window size in logical pixels.
    pub size: [f32; 2],
    /// Close after this many seconds.
    pub exit_after_s: Option<f64>,
    /// Save a PNG of the window just before closing.
    pub screenshot: Option<std::path::PathBuf>,
    /// Remember the setup for the next start.
    pub remember_setup: bool,
    /// Start frozen.
    pub paused: bool,
    /// Run the bench for this many seconds.
    pub bench_s: Option<f64>,
    /// The bench's name for the view.
    pub bench_view: String,
    /// The bench with the sound on.
    pub bench_sound: bool,
}

/// glibc's heap setting for the monitor: keep up to 16 MiB of freed memory instead of 128 KiB.
const HEAP_TUNABLES: &str = "glibc.malloc.trim_threshold=16777216";

/// Restarts this process in place (same process id, same arguments) with [`HEAP_TUNABLES`],
/// unless the user has already chosen glibc tunables. Call it before any thread starts.
///
/// Why: Mesa's software OpenGL allocates fresh vertex storage for each draw call. With
/// glibc's default trim threshold the freed top of the heap goes back to the kernel after
/// every frame and is faulted back in, zeroed, at the next one. Measured with
/// `monitor --bench 15 --view default` under Xvfb, that churn is about 5 % of one core.
/// If the restart is impossible the monitor simply runs with the default heap.
pub fn steady_heap() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    {
        use std::os::unix::process::CommandExt;
        if std::env::var_os("GLIBC_TUNABLES").is_some() {
            return;
        }
        let Ok(exe) = std::env::current_exe() else {
            return;
        };
        // `exec` only returns on failure; the monitor then goes on as it is.
        let _ = std::process::Command::new(exe)
            .args(std::env::args_os().skip(1))
            .env("GLIBC_TUNABLES", HEAP_TUNABLES)
            .exec();
    }
}

/// Opens the monitor window with `settings` and returns when it closes.
///
/// # Errors
/// No display, or a screenshot that could not be written.
pub fn run(settings: state::Settings, start: StartOptions) -> Result<()> {
    let size = start.size;
    let opts = AppOptions {
        exit_after_s: start.exit_after_s,
        screenshot: start.screenshot.clone(),
        show_caution: !state::caution_acknowledged(),
        remember_setup: start.remember_setup,
        start_paused: start.paused,
        bench_s: start.bench_s,
        bench_view: start.bench_view.clone(),
        bench_report: Arc::default(),
        bench_sound: start.bench_sound,
        unseen: Arc::default(),
    };
    let unseen = Arc::clone(&opts.unseen);
    let report = Arc::clone(&opts.bench_report);
    let outcome = Arc::new(std::sync::Mutex::new(Ok(())));
    let outcome_app = Arc::clone(&outcome);
    let native = eframe::NativeOptions {
        viewport: eframe::egui::ViewportBuilder::default()
            .with_title("leadline")
            .with_inner_size(size)
            .with_min_inner_size([640.0, 420.0]),
        renderer: eframe::Renderer::Glow,
        ..Default::default()
    };
    eframe::run_native(
        "leadline",
        native,
        Box::new(move |cc| {
            let ctx = cc.egui_ctx.clone();
            // A zero-delay request makes egui paint two frames; any non-zero delay paints one.
            // A window nobody sees (minimised, covered) is repainted once a second.
            let unseen = Arc::clone(&unseen);
            let notify: crate::process::Notify = Arc::new(move || {
                let wait = if unseen.load(std::sync::atomic::Ordering::Relaxed) {
                    std::time::Duration::from_secs(1)
                } else {
                    std::time::Duration::from_nanos(1)
                };
                ctx.request_repaint_after(wait);
            });
            let app = LeadlineApp::new(settings, notify, opts, outcome_app)?;
            Ok(Box::new(app))
        }),
    )
    .map_err(|e| anyhow::anyhow!("cannot open the monitor window: {e}"))
    .context("is a display available? (under CI: xvfb-run)")?;
    if start.bench_s.is_some() {
        match report.lock().ok().and_then(|mut g| g.take()) {
            Some(r) => println!("{}", r.text()),
            None => anyhow::bail!("the window closed before the bench finished"),
        }
    }
    match outcome.lock() {
        Ok(mut g) => std::mem::replace(&mut *g, Ok(())),
        Err(_) => Err(anyhow::anyhow!("the window thread failed")),
    }
}
