//! Tolerance spreads by Monte Carlo: every part drawn uniformly within ± its tolerance (a
//! seeded generator, so a run is repeatable), the realised corner recomputed per draw.

use serde::Serialize;

use crate::rng::Rng;

/// Corner percentiles over the draws, Hz.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Spread {
    pub draws: usize,
    pub p5_hz: f64,
    pub p50_hz: f64,
    pub p95_hz: f64,
}

/// Tolerances as fractions (0.01 = 1 %).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances {
    pub resistor: f64,
    pub capacitor: f64,
    pub draws: usize,
    pub seed: u64,
}

impl Default for Tolerances {
    /// 1 % resistors, 5 % capacitors, 2 000 draws.
    fn default() -> Self {
        Self {
            resistor: 0.01,
            capacitor: 0.05,
            draws: 2000,
            seed: 1,
        }
    }
}

pub use crate::numeric::percentile;

/// A value drawn uniformly within ±`tol` of `nominal`.
pub fn draw(rng: &mut Rng, nominal: f64, tol: f64) -> f64 {
    nominal * (1.0 + tol * (2.0 * rng.uniform() - 1.0))
}
