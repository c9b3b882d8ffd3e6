//! `leadline monitor`: the options of the live window (the window itself is `gui::run`).

use std::path::PathBuf;

use clap::Args;

use crate::setup::LowerView;

use super::args::*;
use super::num;

/// Options of `leadline monitor`.
#[derive(Debug, Clone, Args, Default)]
pub struct MonitorArgs {
    /// Signal source: synth (the built-in simulator), serial:PATH[@BAUD][:ascii|:binary],
    /// udp:[ADDR:]PORT[?from=HOST[:PORT]] (a Wi-Fi board sends to us), tcp:HOST:PORT (we connect
    /// to a board), or file:PATH (replay).
    /// Default: the setup's source (see --config), else the simulator.
    #[arg(long, value_name = "SPEC")]
    pub source: Option<String>,
    #[command(flatten)]
    pub leads: LeadArgs,
    /// Start from this setup (TOML) instead of the one remembered from the last run.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// Start from the defaults: ignore (and do not overwrite) the remembered setup.
    #[arg(long, conflicts_with = "config")]
    pub fresh: bool,
    /// Simulator sample rate, Hz (125–4000).
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: Option<f64>,
    /// Simulator channels (1–8).
    #[arg(value_parser = num::whole::<usize>(1, 8), long, value_name = "N")]
    pub channels: Option<usize>,
    /// Close the window after this many seconds and exit 0 (smoke tests, screenshots).
    #[arg(value_parser = num::seconds(), long, value_name = "SECONDS")]
    pub exit_after: Option<f64>,
    /// Save a PNG of the window just before exiting (needs --exit-after).
    #[arg(long, value_name = "PNG", requires = "exit_after")]
    pub screenshot: Option<PathBuf>,
    /// What the strip under the traces shows at start; `default` and `heavy` are the presets
    /// `--bench` measures (1 kHz × 1 ch, 10 s window / 2 kHz × 8 ch, 30 s window).
    #[arg(long, value_enum)]
    pub view: Option<StartView>,
    /// Run the real window for SECONDS (after a 2 s warm-up), then print frame rate, app time
    /// per frame, latency, CPU and memory; the last line is JSON.
    #[arg(value_parser = num::real(0.5, 3600.0, "s"), long, value_name = "SECONDS")]
    pub bench: Option<f64>,
    /// With --bench: the beat tone and the signal's sound on (rendered and discarded when
    /// there is no sound card), to measure what sound costs.
    #[arg(long, requires = "bench")]
    pub bench_sound: bool,
    /// Start with the traces frozen (with --bench: the idle cost).
    #[arg(long)]
    pub paused: bool,
    /// Window size in logical pixels, WIDTHxHEIGHT.
    #[arg(value_parser = num::window_size, long, value_name = "WxH", default_value = "1280x800")]
    pub size: num::WindowSize,
    /// The board's front end (a serial source's counts are scaled by it; also in the monitor's
    /// Front end section).
    #[command(flatten)]
    pub scale: ScaleArgs,
}

/// What the monitor starts on: a strip under the traces (the setup's own [`LowerView`]), or a
/// measurement preset.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StartView {
    /// A strip under the traces.
    Strip(LowerView),
    /// Measurement preset: simulator at 1 kHz, 1 channel, 10 s window, spectrum strip.
    Default,
    /// Measurement preset: simulator 8 channels at 2 kHz, 30 s window, spectrum strip.
    Heavy,
}

impl Default for StartView {
    fn default() -> Self {
        StartView::Strip(LowerView::default())
    }
}

impl clap::ValueEnum for StartView {
    fn value_variants<'a>() -> &'a [Self] {
        const ALL: [StartView; 10] = [
            StartView::Strip(LowerView::ALL[0]),
            StartView::Strip(LowerView::ALL[1]),
            StartView::Strip(LowerView::ALL[2]),
            StartView::Strip(LowerView::ALL[3]),
            StartView::Strip(LowerView::ALL[4]),
            StartView::Strip(LowerView::ALL[5]),
            StartView::Strip(LowerView::ALL[6]),
            StartView::Strip(LowerView::ALL[7]),
            StartView::Default,
            StartView::Heavy,
        ];
        &ALL
    }

    fn to_possible_value(&self) -> Option<clap::builder::PossibleValue> {
        use clap::builder::PossibleValue;
        Some(match self {
            StartView::Strip(v) => PossibleValue::new(v.name()).help(v.describe()),
            StartView::Default => PossibleValue::new("default").help(
                "Measurement preset: simulator at 1 kHz, 1 channel, 10 s window, spectrum strip.",
            ),
            StartView::Heavy => PossibleValue::new("heavy").help(
                "Measurement preset: simulator 8 channels at 2 kHz, 30 s window, spectrum strip.",
            ),
        })
    }
}

/// The settings to start with: `--config`, else the remembered setup (unless `--fresh`), else
/// the defaults; then the command line's own options on top.
///
/// # Errors
/// A `--config` file that cannot be read or used (bad input), a bad `--source` or simulator value.
pub fn start_settings(args: &MonitorArgs) -> anyhow::Result<crate::gui::state::Settings> {
    let mut settings = crate::gui::state::Settings::default();
    if let Some(path) = &args.config {
        let loaded = crate::setup::Setup::load(path).map_err(|e| BadInput(e.to_string()))?;
        for w in &loaded.warnings {
            eprintln!("leadline: {}: {w}", path.display());
        }
        settings = crate::gui::state::Settings::from_setup(&loaded.setup)
            .map_err(|e| BadInput(format!("{}: {e}", path.display())))?;
    } else if !args.fresh
        && let Some(path) = crate::setup::last_setup_path().filter(|p| p.exists())
    {
        match crate::setup::Setup::load(&path)
            .map_err(|e| e.to_string())
            .and_then(|l| crate::gui::state::Settings::from_setup(&l.setup))
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
    if let Some(set) = args.leads.lead_set {
        settings.setup.set_lead_set(Some(set));
        // The simulator becomes a board of that many leads.
        if settings.simulating() {
            settings.setup.synth.heart_leads = Some(set);
            settings.setup.synth.channels = set.inputs().len();
            settings.setup.view.channel = crate::leads::LEAD_II;
        }
    }
    settings.setup.synth.validate()?;
    if let Some(v) = args.view {
        settings.setup.view.lower = match v {
            StartView::Strip(l) => l,
            StartView::Default | StartView::Heavy => LowerView::Spectrum,
        };
        let heavy = v == StartView::Heavy;
        if matches!(v, StartView::Default | StartView::Heavy) {
            settings.setup.source.kind = crate::setup::SourceKind::Synth;
            settings.setup.synth.fs_hz = args.fs.unwrap_or(if heavy { 2000.0 } else { 1000.0 });
            settings.setup.synth.channels = args.channels.unwrap_or(if heavy { 8 } else { 1 });
            settings.setup.view.window_s = if heavy { 30.0 } else { 10.0 };
            settings.setup.view.display_hz = 30.0;
            settings.setup.synth.validate()?;
        }
        if v == StartView::Strip(LowerView::Muscle) {
            // The simulator becomes a contracting muscle (at 1 kHz unless told otherwise).
            if settings.simulating() {
                settings.setup.synth.muscle = Some(crate::sim::muscle::MuscleSettings::default());
                settings.setup.synth.fs_hz = args.fs.unwrap_or(1000.0);
                settings.setup.synth.validate()?;
            }
            settings.emg_mode = true;
            settings.ecg_chain = Some(settings.setup.chain);
            settings.setup.chain =
                crate::gui::state::emg_chain(&settings.setup.chain, settings.setup.synth.fs_hz);
        }
    }
    Ok(settings)
}

/// Runs `leadline monitor`: reads the options into the settings and the window's start
/// options, then opens the window.
///
/// # Errors
/// A bad option or setup (exit 2), no display, a screenshot that could not be written.
pub fn run(args: &MonitorArgs) -> anyhow::Result<()> {
    crate::gui::steady_heap();
    let settings = start_settings(args)?;
    let start = crate::gui::StartOptions {
        size: [args.size.width, args.size.height],
        exit_after_s: args.exit_after,
        screenshot: args.screenshot.clone(),
        // A measurement or a scripted run must not change what the user starts with next time.
        remember_setup: !args.fresh && args.bench.is_none() && args.exit_after.is_none(),
        paused: args.paused,
        bench_s: args.bench,
        bench_view: match args.view {
            Some(StartView::Heavy) => "heavy",
            Some(StartView::Default) | None => "default",
            Some(StartView::Strip(l)) => l.name(),
        }
        .to_string()
            + if args.bench_sound { "+sound" } else { "" },
        bench_sound: args.bench_sound,
    };
    crate::gui::run(settings, start)
}
