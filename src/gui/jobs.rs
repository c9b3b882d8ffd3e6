//! File work off the UI thread: opening and saving setups, the C export and the PNGs. The
//! reducer ([`super::model::apply`]) describes a [`Job`] with everything it needs copied in; the
//! [`JobRunner`] runs it on a worker thread and hands back a [`JobDone`], which the app feeds
//! to the reducer as [`super::action::Action::JobDone`].

use std::path::PathBuf;
use std::sync::Arc;

use crossbeam_channel::{Receiver, Sender};

use crate::export::c_header::HeaderInfo;
use crate::msg::{ChannelTrace, SpectrumFrame};
use crate::setup::Setup;

/// One piece of file work.
#[derive(Debug, Clone)]
pub enum Job {
    /// Read a setup file.
    LoadSetup(PathBuf),
    /// Write `setup` to the path.
    SaveSetup(Box<Setup>, PathBuf),
    /// The design in force as a C header.
    ExportC {
        path: PathBuf,
        design: Arc<crate::dsp::Design>,
        info: HeaderInfo,
    },
    /// The followed channel's traces as a PNG.
    TracePng(Box<TracePng>),
    /// The twelve-lead sheet as a PNG.
    TwelvePng(Box<TwelvePng>),
    /// The parts view's schematic, netlist and parts list, from a base path.
    PartsFiles {
        base: String,
        circuit: Box<crate::analog::circuit::Circuit>,
        title: String,
    },
    /// The setup remembered for the next start (reported to no one).
    Remember(Box<Setup>, PathBuf),
    /// The mark that the first-start caution was read (reported to no one).
    AcknowledgeCaution,
    /// The newest spectrum as a PNG.
    SpectrumPng {
        path: PathBuf,
        frame: Arc<SpectrumFrame>,
        title: String,
    },
}

/// What the trace PNG needs, copied when it was asked for.
#[derive(Debug, Clone)]
pub struct TracePng {
    pub path: PathBuf,
    pub trace: ChannelTrace,
    /// Unit symbol, and µV per unit.
    pub unit: (&'static str, f64),
    pub markers: Vec<(f64, String)>,
    pub title: String,
}

/// What the twelve-lead PNG needs, copied when it was asked for.
#[derive(Debug, Clone)]
pub struct TwelvePng {
    pub path: PathBuf,
    pub pieces: Vec<super::panels::twelve::Piece>,
    pub span_s: f64,
    pub grid: bool,
    pub title: String,
}

/// What a finished job reports.
#[derive(Debug, Clone, PartialEq)]
pub struct JobDone {
    /// The message for the Files section, or the error.
    pub message: Result<String, String>,
    /// A setup that was read (a [`Job::LoadSetup`] that succeeded).
    pub setup: Option<Box<Setup>>,
    /// Bookkeeping the user did not ask for: not reported in the Files section.
    pub quiet: bool,
}

impl JobDone {
    fn message(message: Result<String, String>) -> Self {
        Self {
            message,
            setup: None,
            quiet: false,
        }
    }
}

/// Carries out `job` on the calling thread.
pub fn run(job: Job) -> JobDone {
    match job {
        Job::LoadSetup(p) => match Setup::load(&p) {
            Ok(l) => JobDone {
                message: Ok(if l.warnings.is_empty() {
                    format!("loaded {}", p.display())
                } else {
                    format!("loaded {}; {}", p.display(), l.warnings.join("; "))
                }),
                setup: Some(Box::new(l.setup)),
                quiet: false,
            },
            Err(e) => JobDone::message(Err(e.to_string())),
        },
        Job::SaveSetup(setup, p) => JobDone::message(
            setup
                .save(&p)
                .map(|()| format!("saved {}", p.display()))
                .map_err(|e| e.to_string()),
        ),
        Job::ExportC { path, design, info } => JobDone::message(
            crate::export::c_header::header(&design, &info)
                .map_err(|e| e.to_string())
                .and_then(|text| {
                    std::fs::write(&path, text).map_err(|e| format!("{}: {e}", path.display()))
                })
                .map(|()| {
                    format!(
                        "wrote {} ({} at {} Hz)",
                        path.display(),
                        info.format.name(),
                        info.fs_hz
                    )
                }),
        ),
        Job::TracePng(t) => JobDone::message(trace_png(&t)),
        Job::TwelvePng(t) => JobDone::message(twelve_png(&t)),
        Job::PartsFiles {
            base,
            circuit,
            title,
        } => {
            let m = super::panels::parts::save(&base, &circuit, &title);
            JobDone::message(if m.starts_with("wrote ") {
                Ok(m)
            } else {
                Err(m)
            })
        }
        Job::Remember(setup, p) => JobDone {
            // Not being able to remember only means defaults at the next start.
            message: setup
                .save(&p)
                .map(|()| String::new())
                .map_err(|e| e.to_string()),
            setup: None,
            quiet: true,
        },
        Job::AcknowledgeCaution => {
            super::state::acknowledge_caution();
            JobDone {
                message: Ok(String::new()),
                setup: None,
                quiet: true,
            }
        }
        Job::SpectrumPng { path, frame, title } => JobDone::message(
            crate::export::plot_png::psd_png(
                &path,
                &frame.filtered,
                frame.mains_filtered.as_ref(),
                &title,
            )
            .map(|()| format!("saved {}", path.display()))
            .map_err(|e| e.to_string()),
        ),
    }
}

fn trace_png(t: &TracePng) -> Result<String, String> {
    use crate::export::plot_png::{TraceLine, trace_png};
    let raw = super::plot::RAW_COLOUR;
    trace_png(
        &t.path,
        &[
            TraceLine {
                label: "before the chain",
                rgb: (raw.r(), raw.g(), raw.b()),
                columns: &t.trace.raw,
            },
            TraceLine {
                label: "after the chain",
                // The screen colour, darkened for a white page.
                rgb: (0, 126, 112),
                columns: &t.trace.filtered,
            },
        ],
        t.unit,
        &t.markers,
        &t.title,
    )
    .map(|()| format!("saved {}", t.path.display()))
    .map_err(|e| e.to_string())
}

fn twelve_png(t: &TwelvePng) -> Result<String, String> {
    use super::panels::twelve::{ROW_MV, calibration};
    use crate::export::plot_png::{SheetPiece, sheet_png};
    let pieces: Vec<SheetPiece> = t
        .pieces
        .iter()
        .map(|p| SheetPiece {
            label: &p.label,
            at: p.at,
            points: &p.points,
        })
        .collect();
    sheet_png(
        &t.path,
        &pieces,
        &calibration(4),
        (t.span_s, 3.0 * ROW_MV),
        t.grid,
        &t.title,
    )
    .map(|()| format!("saved {}", t.path.display()))
    .map_err(|e| e.to_string())
}

/// Runs jobs on worker threads, one thread per job, and collects what they report.
pub struct JobRunner {
    tx: Sender<JobDone>,
    rx: Receiver<JobDone>,
}

impl Default for JobRunner {
    fn default() -> Self {
        let (tx, rx) = crossbeam_channel::unbounded();
        Self { tx, rx }
    }
}

impl JobRunner {
    /// Starts `job`; `wake` is called when it is done (to repaint the window).
    pub fn start(&self, job: Job, wake: impl Fn() + Send + 'static) {
        let tx = self.tx.clone();
        let spawned = std::thread::Builder::new()
            .name("leadline-files".into())
            .spawn(move || {
                let _ = tx.send(run(job));
                wake();
            });
        if let Err(e) = spawned {
            let _ = self.tx.send(JobDone::message(Err(format!(
                "could not start the file job: {e}"
            ))));
        }
    }

    /// The jobs finished since the last call.
    pub fn finished(&self) -> Vec<JobDone> {
        self.rx.try_iter().collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let d = std::env::temp_dir().join(format!("leadline-jobs-{}-{name}", std::process::id()));
        let _ = std::fs::create_dir_all(&d);
        d
    }

    #[test]
    fn a_setup_saved_by_one_job_is_read_back_by_another() {
        let p = scratch("roundtrip").join("bench.toml");
        let mut setup = Setup::default();
        setup.chain.highpass.corner_hz = 0.67;
        let saved = run(Job::SaveSetup(Box::new(setup.clone()), p.clone()));
        assert_eq!(saved.message, Ok(format!("saved {}", p.display())));
        let loaded = run(Job::LoadSetup(p));
        assert!(loaded.message.is_ok(), "{:?}", loaded.message);
        assert_eq!(loaded.setup.map(|s| *s), Some(setup));
    }

    #[test]
    fn a_missing_setup_gives_a_message_and_no_setup() {
        let done = run(Job::LoadSetup("/nonexistent/leadline/bench.toml".into()));
        assert!(done.message.is_err());
        assert!(done.setup.is_none());
    }

    #[test]
    fn the_runner_reports_each_job_once() {
        let dir = scratch("runner");
        let runner = JobRunner::default();
        for k in 0..3 {
            let p = dir.join(format!("s{k}.toml"));
            runner.start(Job::SaveSetup(Box::default(), p), || {});
        }
        let mut done = Vec::new();
        let deadline = std::time::Instant::now() + std::time::Duration::from_secs(10);
        while done.len() < 3 && std::time::Instant::now() < deadline {
            done.extend(runner.finished());
            std::thread::sleep(std::time::Duration::from_millis(5));
        }
        assert_eq!(done.len(), 3);
        assert!(done.iter().all(|d| d.message.is_ok()));
    }
}
