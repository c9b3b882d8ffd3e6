//! The simulator's signal models, apart from any I/O: the heart ([`ecg_model`], the McSharry
//! model; [`rhythm`], the standards' irregular rhythms on a schedule), a contracting muscle
//! ([`muscle`]), the heart as a dipole seen by many leads ([`dipole`]), and the modelled bench and board that turn them into ADC counts ([`synth`]).
//! The thread that streams them is a source like any other (`source::run`).

pub mod dipole;
pub mod ecg_model;
pub mod muscle;
pub mod rhythm;
pub mod synth;

pub use synth::{Board, Synth, SynthError, SynthSettings};
