//! One file per panel. Each reads settings/view and reports what the user changed.

pub mod beats;
pub mod caution;
pub mod chain;
pub mod display;
pub mod files;
pub mod front_end;
pub mod help;
pub mod measure;
pub mod network;
pub mod parts;
pub mod record;
pub mod replay;
pub mod response;
pub mod simulator;
pub mod source;
pub mod spectrum;
pub mod status;
pub mod trace;
