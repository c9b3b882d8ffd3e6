//! Digital filtering: designs ([`design`]) return plain second-order sections; the runtime
//! cascade ([`chain`]) owns the state and retunes without reallocating.

pub mod canceller;
pub mod cascade;
pub mod chain;
pub mod design;
pub mod halves;
pub mod kernel;
pub mod offline;
pub mod response;
pub mod spectrum;

pub use chain::{
    Chain, ChainSettings, Design, HIGHEST_CORNER_SHARE, HighPass, LowPass, Notch, highest_corner_hz,
};
pub use design::{DesignError, Section};
