//! Twin-T notch (R, R, R/2; C, C, 2C) with its centre node driven by k·V_out for a higher Q:
//! H(s) = (s² + ω0²)/(s² + 4(1−k)ω0 s + ω0²), ω0 = 1/(RC), Q = 1/(4(1−k)).
//! Passive (k = 0, ideal source, unloaded): Q = 0.25. Make R/2 and 2C from paralleled parts.

use std::f64::consts::TAU;

/// Notch frequency, Hz.
pub fn f0_hz(r: f64, c: f64) -> f64 {
    1.0 / (TAU * r * c)
}

/// Q for a feedback fraction k.
pub fn q_for_k(k: f64) -> f64 {
    1.0 / (4.0 * (1.0 - k))
}

/// Feedback fraction for a Q (≥ 0.25).
pub fn k_for_q(q: f64) -> f64 {
    (1.0 - 1.0 / (4.0 * q)).max(0.0)
}

/// H(s) with these parts and k.
pub fn tf(r: f64, c: f64, k: f64) -> (Vec<f64>, Vec<f64>) {
    let w = 1.0 / (r * c);
    (vec![1.0, 0.0, w * w], vec![1.0, 4.0 * (1.0 - k) * w, w * w])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reference_twin_t_values() {
        // docs/REFERENCES.md §9 #19 [C] (sympy) / [S] f0 = 1/(2πRC): 50 Hz with 100 nF → R = 31.831 kΩ;
        // 60 Hz → 26.526 kΩ; Q(k) = 0.25, 0.5, 1, 2.5, 5, 12.5 for k = 0, .5, .75, .9, .95, .98.
        let r50 = 1.0 / (TAU * 50.0 * 100e-9);
        assert!((r50 - 31_831.0).abs() < 1.0 && (f0_hz(r50, 100e-9) - 50.0).abs() < 1e-9);
        assert!((1.0 / (TAU * 60.0 * 100e-9) - 26_526.0).abs() < 1.0);
        for (k, q) in [
            (0.0, 0.25),
            (0.5, 0.5),
            (0.75, 1.0),
            (0.9, 2.5),
            (0.95, 5.0),
            (0.98, 12.5),
        ] {
            assert!((q_for_k(k) - q).abs() < 1e-9, "k {k}");
            assert!((k_for_q(q) - k).abs() < 1e-9);
        }
    }
}
