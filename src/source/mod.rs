//! Where samples come from. Each source is a thread body that pushes [`crate::msg::RawBlock`]s.
//!
//! - [`synth`]: the built-in simulator (default), with [`ecg_model`] for the sinus waveform and
//!   [`rhythm`] for the standards' irregular-rhythm cases, [`muscle`] for surface EMG.
//! - [`serial`]: a board on a serial port; [`net`]: a Wi-Fi board over UDP or TCP;
//!   [`replay`]: a recording streamed as a device. [`framing`]: what the board sources share;
//!   [`link`]: the one reader of byte streams (serial and TCP), reopened when they go away.

pub mod ecg_model;
pub mod framing;
pub mod link;
pub mod muscle;
pub mod net;
pub mod replay;
pub mod rhythm;
pub mod run;
pub mod serial;
pub mod synth;

pub use run::{Pacing, SourceSpec, run_synth};
pub use synth::{FrontEnd, Synth, SynthError, SynthSettings};
