//! The integration tests in one binary (linking each file as its own binary was a large part of
//! a build on two cores). Each module is one area; `tests/common` holds what all the test
//! binaries share. The timing
//! tests that must not share the process with others stay binaries of their own:
//! `tests/serial.rs` (pty, 60 s), `tests/net.rs` (UDP and TCP, 60 s) and `tests/soak.rs`
//! (2 minutes; it measures the process's memory).

#[path = "../common/mod.rs"]
mod common;

mod analog;
mod beats_mitdb;
mod beats_sim;
mod cli;
mod dsp_reference;
mod emg_sound;
mod export_c;
mod front_end;
mod fuzz;
mod gui;
mod heart_rate;
mod leads;
mod mains;
mod measure;
mod pipeline;
mod record;
mod shape;
mod spectrum;
mod synth;
mod wire;
