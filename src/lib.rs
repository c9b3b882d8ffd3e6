//! leadline: see, filter and measure the signal of an ECG (or other biopotential) front end live.
//!
//! Not a medical device, not for diagnosis. With electrodes on a person, use only battery-powered
//! or properly isolated equipment (IEC 60601-1 and local regulations apply).
//!
//! # Layout
//! ```text
//!  source thread            DSP thread                               GUI thread (eframe)
//!  synth | serial | udp     front end → chain → display columns      drains Snapshots in logic(),
//!  | tcp | file               → readout, spectrum, measurements      draws in ui(); panels return
//!                                                                     Actions, applied after drawing
//!    │                        → RecordBlock (never dropped)
//!    ▼                         │
//!  RawBlock ──bounded──▶ process::run ──Snapshot, drop-oldest──▶ gui::app
//!            ◀────────────── Control (unbounded, tiny) ◀──────────────
//! ```
//! - [`pipeline`] is the only place that creates channels and starts (named) threads.
//! - [`source`]: where samples come from, the threads that read (the simulator's thread is the
//!   default; serial and TCP through one byte-stream reader, [`source::link`]; UDP; file
//!   replay); [`sim`]: the simulator's signal models, apart from any I/O.
//! - [`setup`]: the one persisted configuration (TOML), which the monitor's settings hold.
//! - [`chan`]: the two ways a thread sends (wait, or replace the oldest).
//! - [`recorder`]: every processed sample to EDF+/BDF+/CSV/raw files, on its own thread.
//! - [`process`]: the DSP thread body. [`dsp`]: filter designs and the runtime chain.
//! - [`scale`]: counts → volts at the ADC → µV at the electrodes, per channel.
//! - [`analysis`]: beats, the heart-rate readout, quality, mains. [`conform`]: the standards'
//!   checks of a chain. [`measure`]: a built front end measured. [`analog`]: parts, circuit,
//!   schematic, netlist.
//! - [`wire`]: byte formats to and from a microcontroller. [`store`]: recordings read and written.
//!   [`export`]: plots and C headers. [`sound`]: the tone and the signal as audio.
//! - [`gui`], [`cli`]: the two front doors.
//! - `dsp`, `analysis`, `analog`, `conform`, `measure`, `scale` and `wire` never import egui.
//!
//! # Units and conventions
//! - Signal values inside the program are input-referred microvolts (µV at the electrodes) in f64,
//!   unless a name says otherwise (`_v`, `_mv`, `counts`).
//! - Time zero is the first sample of the stream; sample n is at n / fs seconds.
//! - Frequencies are in Hz (`_hz`), heart rates in beats per minute (`_bpm`).
//! - Multi-channel blocks are frame-major: all channels of frame 0, then frame 1, …

#![forbid(unsafe_code)]

pub mod analog;
pub mod analysis;
pub mod chan;
pub mod cli;
pub mod conform;
pub mod dsp;
pub mod export;
pub mod gui;
pub mod leads;
pub mod measure;
pub mod msg;
pub mod numeric;
pub mod pipeline;
pub mod process;
pub mod recorder;
pub mod rng;
pub mod scale;
pub mod setup;
pub mod sim;
pub mod sound;
pub mod source;
pub mod store;
pub mod wire;

/// The caution shown on the first screen and in the README.
pub const CAUTION: &str = "leadline is a bench and teaching tool: not a medical device and not for \
diagnosis or monitoring of patients. When electrodes are on a person, use only battery-powered or \
properly isolated equipment (laptop off its charger, isolated USB), and follow IEC 60601-1, local \
regulations and licensed practice.";
