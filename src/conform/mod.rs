//! The standards' own tests, run on leadline's chain: [`chain`] (the impulse test, the gain at
//! 0.67 Hz, the upper corner, the ST shift on the simulator's beat).

pub mod chain;

pub use chain::{Conformance, Mode, check};
