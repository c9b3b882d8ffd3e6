//! What is in the signal: mains interference and band powers ([`mains`]).

pub mod beats;
pub mod mains;
