//! Unity-gain Sallen–Key second-order sections (TI "Op Amps for Everyone", ch. 16).
//!
//! Low-pass: R1 (input), R2, C1 from their junction to the output, C2 to ground:
//! ω0 = 1/√(R1R2C1C2), Q = √(R1R2C1C2)/(C2(R1+R2)); realisable when C1/C2 ≥ 4Q².
//! High-pass: C1 (input), C2, R1 from their junction to the output, R2 to ground:
//! ω0 = 1/√(R1R2C1C2), Q = √(R1R2C1C2)/(R1(C1+C2)); with C1 = C2 = C, R2 = 4Q²R1.

use std::f64::consts::TAU;

/// f0 (Hz) and Q of a low-pass with these parts.
pub fn lowpass_f0_q(r1: f64, r2: f64, c1: f64, c2: f64) -> (f64, f64) {
    let p = (r1 * r2 * c1 * c2).sqrt();
    (1.0 / (TAU * p), p / (c2 * (r1 + r2)))
}

/// f0 (Hz) and Q of a high-pass with these parts.
pub fn highpass_f0_q(r1: f64, r2: f64, c1: f64, c2: f64) -> (f64, f64) {
    let p = (r1 * r2 * c1 * c2).sqrt();
    (1.0 / (TAU * p), p / (r1 * (c1 + c2)))
}

/// Resistors (R1, R2) of a low-pass for f0 and Q with the capacitors given, or None when
/// C1/C2 < 4Q² (no real solution).
pub fn lowpass_resistors(f0: f64, q: f64, c1: f64, c2: f64) -> Option<(f64, f64)> {
    let w = TAU * f0;
    let s = 1.0 / (w * c2 * q);
    let p = 1.0 / (w * w * c1 * c2);
    let disc = s * s - 4.0 * p;
    if disc < -1e-12 * s * s {
        return None;
    }
    let d = disc.max(0.0).sqrt();
    Some(((s - d) / 2.0, (s + d) / 2.0))
}

/// Resistors (R1 to the output, R2 to ground) of an equal-C high-pass.
pub fn highpass_resistors(f0: f64, q: f64, c: f64) -> (f64, f64) {
    let r1 = 1.0 / (TAU * f0 * 2.0 * q * c);
    (r1, 4.0 * q * q * r1)
}

/// Low-pass H(s) = 1/(R1R2C1C2 s² + C2(R1+R2) s + 1).
pub fn lowpass_tf(r1: f64, r2: f64, c1: f64, c2: f64) -> (Vec<f64>, Vec<f64>) {
    (vec![1.0], vec![r1 * r2 * c1 * c2, c2 * (r1 + r2), 1.0])
}

/// High-pass H(s) = R1R2C1C2 s²/(R1R2C1C2 s² + R1(C1+C2) s + 1).
pub fn highpass_tf(r1: f64, r2: f64, c1: f64, c2: f64) -> (Vec<f64>, Vec<f64>) {
    let a = r1 * r2 * c1 * c2;
    (vec![a, 0.0, 0.0], vec![a, r1 * (c1 + c2), 1.0])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reference_sallen_key_values() {
        // docs/REFERENCES.md §9 #16 [C] (TI Op Amps for Everyone ch. 16; sympy): LP 40 Hz, Q 0.7071,
        // C2 = 100 nF, C1 = 200 nF → equal R = 28.135 kΩ.
        let (r1, r2) =
            lowpass_resistors(40.0, std::f64::consts::FRAC_1_SQRT_2, 200e-9, 100e-9).unwrap();
        assert!(
            (r1 - 28_135.0).abs() < 2.0 && (r2 - 28_135.0).abs() < 2.0,
            "{r1} {r2}"
        );
        // §9 #17: 4th-order Butterworth LP 40 Hz, C_gnd 100 nF: stage 1 C_fb 117.2 nF, R 36.76 kΩ;
        // stage 2 C_fb 682.8 nF, R 15.23 kΩ (equal-R designs).
        for (q, cfb, r) in [
            (0.541_196_f64, 117.2e-9_f64, 36_760.0_f64),
            (1.306_563, 682.8e-9, 15_230.0),
        ] {
            let c1 = 4.0 * q * q * 100e-9;
            assert!((c1 - cfb).abs() < 0.1e-9, "{c1}");
            let (r1, _) = lowpass_resistors(40.0, q, c1, 100e-9).unwrap();
            assert!((r1 - r).abs() < 10.0, "{r1}");
        }
        // §9 #18: HP 0.5 Hz, Q 0.7071, C = 1 µF → R_fb 225.08 kΩ, R_gnd 450.16 kΩ.
        let (rf, rg) = highpass_resistors(0.5, std::f64::consts::FRAC_1_SQRT_2, 1e-6);
        assert!(
            (rf - 225_080.0).abs() < 10.0 && (rg - 450_160.0).abs() < 20.0,
            "{rf} {rg}"
        );
        let (f0, q) = highpass_f0_q(rf, rg, 1e-6, 1e-6);
        assert!((f0 - 0.5).abs() < 1e-9 && (q - std::f64::consts::FRAC_1_SQRT_2).abs() < 1e-9);
        assert!(
            lowpass_resistors(40.0, 1.0, 100e-9, 100e-9).is_none(),
            "C1/C2 < 4Q² has no solution"
        );
    }
}
