//! Where samples come from. Each source is a thread body that pushes [`crate::msg::RawBlock`]s.
//!
//! - [`run`]: the built-in simulator's thread (the default source); its signal models live in
//!   [`crate::sim`].
//! - [`serial`]: a board on a serial port; [`net`]: a Wi-Fi board over UDP or TCP;
//!   [`replay`]: a recording streamed as a device. [`framing`]: what the board sources share;
//!   [`link`]: the one reader of byte streams (serial and TCP), reopened when they go away.

pub mod framing;
pub mod link;
pub mod net;
pub mod replay;
pub mod run;
pub mod serial;

pub use crate::sim::{Board, Synth, SynthError, SynthSettings};
pub use run::{Pacing, SourceSpec, run_synth};
