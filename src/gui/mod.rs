//! The monitor window (eframe, glow backend). Panels read the view and return the Control they
//! want sent; the app applies them after drawing.

pub mod action;
pub mod app;
pub mod bench;
pub mod panels;
pub mod plot;
pub mod screenshot;
pub mod state;

use std::sync::Arc;

use anyhow::{Context, Result};

pub use app::{AppOptions, LeadlineApp};

use crate::cli::{BadInput, MonitorArgs};
/// The settings to start with: `--config`, else the remembered setup (unless `--fresh`), else
/// the defaults; then the command line's own options on top.
///
/// # Errors
/// A `--config` file that cannot be read or used (bad input), a bad `--source` or simulator value.
pub fn start_settings(args: &MonitorArgs) -> Result<state::Settings> {
    let mut settings = state::Settings::default();
    if let Some(path) = &args.config {
        let loaded = crate::setup::Setup::load(path).map_err(|e| BadInput(e.to_string()))?;
        for w in &loaded.warnings {
            eprintln!("leadline: {}: {w}", path.display());
        }
        settings = state::Settings::from_setup(&loaded.setup)
            .map_err(|e| BadInput(format!("{}: {e}", path.display())))?;
    } else if !args.fresh
        && let Some(path) = crate::setup::last_setup_path().filter(|p| p.exists())
    {
        match crate::setup::Setup::load(&path)
            .map_err(|e| e.to_string())
            .and_then(|l| state::Settings::from_setup(&l.setup))
        {
            Ok(s) => settings = s,
            Err(e) => eprintln!(
                "leadline: the remembered setup was not used ({e}); starting from the defaults"
            ),
        }
    }
    if let Some(fes) = args
        .scale
        .front_ends(Some(settings.setup.front_ends()))?
        .filter(|_| args.scale.any())
    {
        settings.setup.set_front_ends(&fes);
    }
    if let Some(src) = &args.source {
        let spec = crate::source::SourceSpec::parse(src, args.fs, settings.setup.scale)
            .map_err(|e| BadInput(e.to_string()))?;
        settings.setup.set_source(&spec);
    }
    if let Some(fs) = args.fs {
        settings.setup.synth.fs_hz = fs;
    }
    if let Some(n) = args.channels {
        settings.setup.synth.channels = n;
    }
    settings.setup.synth.validate()?;
    if let Some(v) = args.view {
        settings.setup.view.lower = match v {
            crate::cli::StartView::Beats => state::LowerView::Beats,
            crate::cli::StartView::Spectrum => state::LowerView::Spectrum,
            crate::cli::StartView::Response => state::LowerView::Response,
            crate::cli::StartView::Parts => state::LowerView::Parts,
            crate::cli::StartView::Measure => state::LowerView::Measure,
            crate::cli::StartView::Emg => state::LowerView::Muscle,
            crate::cli::StartView::Traces => state::LowerView::Hidden,
            crate::cli::StartView::Default | crate::cli::StartView::Heavy => {
                state::LowerView::Spectrum
            }
        };
        let heavy = v == crate::cli::StartView::Heavy;
        if matches!(
            v,
            crate::cli::StartView::Default | crate::cli::StartView::Heavy
        ) {
            settings.setup.source.kind = crate::setup::SourceKind::Synth;
            settings.setup.synth.fs_hz = args.fs.unwrap_or(if heavy { 2000.0 } else { 1000.0 });
            settings.setup.synth.channels = args.channels.unwrap_or(if heavy { 8 } else { 1 });
            settings.setup.view.window_s = if heavy { 30.0 } else { 10.0 };
            settings.setup.view.display_hz = 30.0;
            settings.setup.synth.validate()?;
        }
        if v == crate::cli::StartView::Emg {
            // The simulator becomes a contracting muscle (at 1 kHz unless told otherwise).
            if settings.simulating() {
                settings.setup.synth.muscle = Some(crate::sim::muscle::MuscleSettings::default());
                settings.setup.synth.fs_hz = args.fs.unwrap_or(1000.0);
                settings.setup.synth.validate()?;
            }
            settings.emg_mode = true;
            settings.ecg_chain = Some(settings.setup.chain);
            settings.setup.chain =
                state::emg_chain(&settings.setup.chain, settings.setup.synth.fs_hz);
        }
    }
    Ok(settings)
}

/// Opens the monitor window and returns when it closes.
///
/// # Errors
/// A bad option, no display, or a screenshot that could not be written.
pub fn run(args: &MonitorArgs) -> Result<()> {
    if let Some(s) = args.exit_after
        && !(s.is_finite() && s > 0.0)
    {
        return Err(BadInput(format!(
            "--exit-after {s}: must be a positive number of seconds"
        ))
        .into());
    }
    let size = [args.size.width, args.size.height];
    let settings = start_settings(args)?;
    let opts = AppOptions {
        exit_after_s: args.exit_after,
        screenshot: args.screenshot.clone(),
        show_caution: !state::caution_acknowledged(),
        // A measurement or a scripted run must not change what the user starts with next time.
        remember_setup: !args.fresh && args.bench.is_none() && args.exit_after.is_none(),
        start_paused: args.paused,
        bench_s: args.bench,
        bench_view: match args.view {
            Some(crate::cli::StartView::Heavy) => "heavy".into(),
            Some(crate::cli::StartView::Default) | None => "default".into(),
            Some(other) => format!("{other:?}").to_lowercase(),
        } + if args.bench_sound { "+sound" } else { "" },
        bench_report: Arc::default(),
        bench_sound: args.bench_sound,
        unseen: Arc::default(),
    };
    if let Some(b) = args.bench
        && !(b.is_finite() && b > 0.0)
    {
        return Err(BadInput(format!("--bench {b}: must be a positive number of seconds")).into());
    }
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
    if args.bench.is_some() {
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
