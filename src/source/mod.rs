//! Where samples come from. Each source is a thread body that pushes [`crate::msg::RawBlock`]s.
//!
//! - [`synth`]: the built-in simulator (default), with [`ecg_model`] for the waveform.
//! - serial and file replay sources arrive with their own modules.

pub mod ecg_model;
pub mod replay;
pub mod run;
pub mod serial;
pub mod synth;

pub use run::{Pacing, SourceSpec, run_synth};
pub use synth::{FrontEnd, Synth, SynthError, SynthSettings};
