//! What is in the signal: beats ([`beats`]), the heart-rate readout ([`readout`]: detector,
//! [`rate`] meter and [`quality`] check), the averaged beat ([`template`]), mains interference
//! and band powers ([`mains`]); surface EMG ([`emg`]).

pub mod beats;
pub mod devset;
pub mod emg;
pub mod heldout;
pub mod hum;
pub mod mains;
pub mod quality;
pub mod rate;
pub mod readout;
pub mod shape;
pub mod template;
