//! The instrumentation amplifier's gain resistor for G = 1 + K/Rg, K from the part's datasheet
//! (the formula and K differ between parts; none is assumed).

/// Rg for gain `g` with the datasheet constant `k_ohms`, or None for g ≤ 1.
pub fn rg_for(g: f64, k_ohms: f64) -> Option<f64> {
    (g > 1.0 && k_ohms > 0.0).then(|| k_ohms / (g - 1.0))
}

/// The gain a resistor gives.
pub fn gain_for(rg: f64, k_ohms: f64) -> f64 {
    1.0 + k_ohms / rg
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn k_100k_gain_101_is_1k() {
        // Common practice example: G = 1 + 100 kΩ / Rg, G = 101 → Rg = 1 kΩ.
        assert!((rg_for(101.0, 100e3).unwrap() - 1000.0).abs() < 1e-9);
        assert!((gain_for(1000.0, 100e3) - 101.0).abs() < 1e-12);
        assert!(rg_for(1.0, 100e3).is_none());
    }
}
