//! First-order RC high-pass and low-pass: fc = 1/(2πRC).

use std::f64::consts::TAU;

/// Corner of an RC pair, Hz.
pub fn corner_hz(r: f64, c: f64) -> f64 {
    1.0 / (TAU * r * c)
}

/// The resistor for a corner with a given capacitor.
pub fn r_for(fc: f64, c: f64) -> f64 {
    1.0 / (TAU * fc * c)
}

/// Low-pass H(s) = 1/(sRC + 1), coefficients highest power first.
pub fn lowpass_tf(r: f64, c: f64) -> (Vec<f64>, Vec<f64>) {
    (vec![1.0], vec![r * c, 1.0])
}

/// High-pass H(s) = sRC/(sRC + 1).
pub fn highpass_tf(r: f64, c: f64) -> (Vec<f64>, Vec<f64>) {
    (vec![r * c, 0.0], vec![r * c, 1.0])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reference_rc_corners() {
        // docs/REFERENCES.md §9 #15 [C] (fc = 1/(2πRC), textbook): 3.3 MΩ × 1 µF → 0.04823 Hz;
        // τ = 3.2 s → 0.0497 Hz; 0.05 Hz ↔ τ = 3.183 s.
        assert!((corner_hz(3.3e6, 1e-6) - 0.04823).abs() < 1e-5);
        assert!((corner_hz(3.2e6, 1e-6) - 0.0497).abs() < 1e-4);
        assert!((r_for(0.05, 1e-6) * 1e-6 - 3.183).abs() < 1e-3);
    }
}
