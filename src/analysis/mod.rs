//! What is in the signal: mains interference and band powers ([`mains`]).

pub mod beats;
pub mod mains;
pub mod quality;
pub mod rate;
pub mod template;
