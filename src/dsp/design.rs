//! Filter designs. Every function returns second-order sections, normalised so a0 = 1:
//! H(z) = (b0 + b1 z⁻¹ + b2 z⁻²) / (1 + a1 z⁻¹ + a2 z⁻²).
//!
//! - Butterworth high-/low-pass, orders 1–8: bilinear transform with the corner pre-warped, so the
//!   −3 dB point is exactly the requested corner; one section per conjugate pole pair with
//!   Q_k = 1/(2 sin((2k−1)π/2N)), plus a first-order section for odd orders.
//! - Mains notch: the exact-bandwidth design of scipy.signal.iirnotch, −3 dB bandwidth = f0/Q in
//!   the digital domain.

use std::f64::consts::PI;

use serde::{Deserialize, Serialize};

/// One biquad section, a0 normalised to 1.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Section {
    pub b0: f64,
    pub b1: f64,
    pub b2: f64,
    pub a1: f64,
    pub a2: f64,
}

impl Section {
    /// A section that passes the signal scaled by `g`.
    pub fn gain(g: f64) -> Self {
        Self {
            b0: g,
            b1: 0.0,
            b2: 0.0,
            a1: 0.0,
            a2: 0.0,
        }
    }

    /// Response at normalised angular frequency ω (rad/sample), as (re, im).
    pub fn response(&self, w: f64) -> (f64, f64) {
        let (c1, s1) = (w.cos(), -w.sin());
        let (c2, s2) = ((2.0 * w).cos(), -(2.0 * w).sin());
        let nr = self.b0 + self.b1 * c1 + self.b2 * c2;
        let ni = self.b1 * s1 + self.b2 * s2;
        let dr = 1.0 + self.a1 * c1 + self.a2 * c2;
        let di = self.a1 * s1 + self.a2 * s2;
        let den = dr * dr + di * di;
        ((nr * dr + ni * di) / den, (ni * dr - nr * di) / den)
    }

    /// DC gain H(1).
    pub fn dc_gain(&self) -> f64 {
        (self.b0 + self.b1 + self.b2) / (1.0 + self.a1 + self.a2)
    }
}

/// Why a design was refused. The messages are shown in the GUI as they are.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DesignError {
    /// The sample rate must be positive.
    #[error("sample rate {0} Hz must be a positive number")]
    SampleRate(f64),
    /// A corner at or above Nyquist (fs/2), or not above 0 Hz.
    #[error("{what} {}: it must lie between 0 Hz and Nyquist ({} at fs = {})", hz_text(*hz), hz_text(*nyquist), hz_text(*fs))]
    Corner {
        what: &'static str,
        hz: f64,
        nyquist: f64,
        fs: f64,
    },
    /// Q must be positive.
    #[error("notch Q {0} must be greater than 0")]
    Q(f64),
    /// Orders 1–8 only.
    #[error("{what} order {order} is outside 1–8")]
    Order { what: &'static str, order: u32 },
    /// A band-pass with its high-pass corner at or above its low-pass corner passes nothing.
    #[error("high-pass corner {hp} Hz must be below the low-pass corner {lp} Hz")]
    Crossed { hp: f64, lp: f64 },
    /// The gain must be finite.
    #[error("gain {0} must be a finite number")]
    Gain(f64),
}

/// A frequency as a person writes it: "125 Hz", "124.99 Hz", "not a number".
fn hz_text(hz: f64) -> String {
    if hz.is_nan() {
        return "is not a number".into();
    }
    let t = format!("{hz:.2}");
    let t = t.trim_end_matches('0').trim_end_matches('.');
    format!("{t} Hz")
}

fn check_fs(fs: f64) -> Result<(), DesignError> {
    if fs.is_finite() && fs > 0.0 {
        Ok(())
    } else {
        Err(DesignError::SampleRate(fs))
    }
}

fn check_corner(what: &'static str, hz: f64, fs: f64) -> Result<(), DesignError> {
    check_fs(fs)?;
    if hz.is_finite() && hz > 0.0 && hz < fs / 2.0 {
        Ok(())
    } else {
        Err(DesignError::Corner {
            what,
            hz,
            nyquist: fs / 2.0,
            fs,
        })
    }
}

fn check_order(what: &'static str, order: u32) -> Result<(), DesignError> {
    if (1..=8).contains(&order) {
        Ok(())
    } else {
        Err(DesignError::Order { what, order })
    }
}

/// Section Qs of an order-N Butterworth filter, highest-Q pair last.
pub fn butterworth_qs(order: u32) -> Vec<f64> {
    let n = order as f64;
    let mut qs: Vec<f64> = (1..=order / 2)
        .map(|k| 1.0 / (2.0 * ((2 * k - 1) as f64 * PI / (2.0 * n)).sin()))
        .collect();
    qs.sort_by(f64::total_cmp);
    qs
}

#[derive(Clone, Copy)]
enum Kind {
    Low,
    High,
}

fn butterworth(kind: Kind, order: u32, corner_hz: f64, fs: f64) -> Vec<Section> {
    // Pre-warped analog corner, normalised: K = tan(π fc / fs).
    let k = (PI * corner_hz / fs).tan();
    let mut out = Vec::with_capacity(order.div_ceil(2) as usize);
    if order % 2 == 1 {
        let norm = 1.0 / (1.0 + k);
        let (b0, b1) = match kind {
            Kind::Low => (k * norm, k * norm),
            Kind::High => (norm, -norm),
        };
        out.push(Section {
            b0,
            b1,
            b2: 0.0,
            a1: (k - 1.0) * norm,
            a2: 0.0,
        });
    }
    for q in butterworth_qs(order) {
        let norm = 1.0 / (1.0 + k / q + k * k);
        let a1 = 2.0 * (k * k - 1.0) * norm;
        let a2 = (1.0 - k / q + k * k) * norm;
        let (b0, b1, b2) = match kind {
            Kind::Low => (k * k * norm, 2.0 * k * k * norm, k * k * norm),
            Kind::High => (norm, -2.0 * norm, norm),
        };
        out.push(Section { b0, b1, b2, a1, a2 });
    }
    out
}

/// Butterworth low-pass of `order` (1–8) with its −3 dB point at `corner_hz`.
///
/// # Errors
/// [`DesignError::Corner`] at or above Nyquist, [`DesignError::Order`] outside 1–8.
pub fn butterworth_lowpass(
    order: u32,
    corner_hz: f64,
    fs: f64,
) -> Result<Vec<Section>, DesignError> {
    check_order("low-pass", order)?;
    check_corner("low-pass corner", corner_hz, fs)?;
    Ok(butterworth(Kind::Low, order, corner_hz, fs))
}

/// Butterworth high-pass of `order` (1–8) with its −3 dB point at `corner_hz`.
///
/// # Errors
/// [`DesignError::Corner`] at or above Nyquist, [`DesignError::Order`] outside 1–8.
pub fn butterworth_highpass(
    order: u32,
    corner_hz: f64,
    fs: f64,
) -> Result<Vec<Section>, DesignError> {
    check_order("high-pass", order)?;
    check_corner("high-pass corner", corner_hz, fs)?;
    Ok(butterworth(Kind::High, order, corner_hz, fs))
}

/// Second-order notch at `f0_hz` whose −3 dB bandwidth is exactly f0/Q (scipy.signal.iirnotch).
///
/// # Errors
/// [`DesignError::Corner`] at or above Nyquist, [`DesignError::Q`] for Q ≤ 0.
pub fn notch(f0_hz: f64, q: f64, fs: f64) -> Result<Section, DesignError> {
    check_corner("notch frequency", f0_hz, fs)?;
    if !(q.is_finite() && q > 0.0) {
        return Err(DesignError::Q(q));
    }
    let w0 = 2.0 * PI * f0_hz / fs;
    let bw = w0 / q;
    let beta = (bw / 2.0).tan();
    let gain = 1.0 / (1.0 + beta);
    Ok(Section {
        b0: gain,
        b1: -2.0 * gain * w0.cos(),
        b2: gain,
        a1: -2.0 * gain * w0.cos(),
        a2: 2.0 * gain - 1.0,
    })
}

/// Notches at the fundamental and harmonics 2…`1 + extra_harmonics` that lie below Nyquist,
/// each with the same Q (so each harmonic's bandwidth is its own frequency / Q).
///
/// # Errors
/// As [`notch`] for the fundamental.
pub fn mains_notches(
    f0_hz: f64,
    q: f64,
    extra_harmonics: u32,
    fs: f64,
) -> Result<Vec<Section>, DesignError> {
    let mut out = vec![notch(f0_hz, q, fs)?];
    for h in 2..=(1 + extra_harmonics.min(4)) {
        let f = f0_hz * h as f64;
        if f < 0.49 * fs {
            out.push(notch(f, q, fs)?);
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn mag(sections: &[Section], f: f64, fs: f64) -> f64 {
        let w = 2.0 * PI * f / fs;
        sections
            .iter()
            .map(|s| {
                let (r, i) = s.response(w);
                (r * r + i * i).sqrt()
            })
            .product()
    }

    #[test]
    fn butterworth_section_qs_match_reference_table() {
        // Reference table of section Qs ([C] from Q_k = 1/(2 sin((2k−1)π/2N))).
        let q4 = butterworth_qs(4);
        assert!((q4[0] - 0.541_196_1).abs() < 1e-6 && (q4[1] - 1.306_563).abs() < 1e-6);
        let q8 = butterworth_qs(8);
        for (q, want) in q8.iter().zip([0.5098, 0.6013, 0.9000, 2.5629]) {
            assert!((q - want).abs() < 5e-5, "{q} vs {want}");
        }
    }

    #[test]
    fn cookbook_lowpass_check_value() {
        // docs/REFERENCES.md §9 #1 (RBJ cookbook LPF, fs 500, f0 40, Q 1/√2) — identical to order-2 Butterworth.
        let s = butterworth_lowpass(2, 40.0, 500.0).unwrap()[0];
        assert!((s.b0 - 0.046_131_802_1).abs() < 1e-10);
        assert!((s.a1 + 1.307_285_028_8).abs() < 1e-10);
        assert!((s.a2 - 0.491_812_237_2).abs() < 1e-10);
        // docs/REFERENCES.md §9 #2 (RBJ HPF fs 500, f0 0.5, Q 1/√2).
        let h = butterworth_highpass(2, 0.5, 500.0).unwrap()[0];
        assert!((h.b0 - 0.995_566_972_0).abs() < 1e-10);
        assert!((h.a1 + 1.991_114_292_2).abs() < 1e-10);
        assert!((h.a2 - 0.991_153_595_9).abs() < 1e-10);
    }

    #[test]
    fn corner_is_minus_3_db_for_every_order() {
        for order in 1..=8 {
            let lp = butterworth_lowpass(order, 40.0, 500.0).unwrap();
            let hp = butterworth_highpass(order, 0.5, 500.0).unwrap();
            assert!(
                (mag(&lp, 40.0, 500.0) - 0.5f64.sqrt()).abs() < 1e-9,
                "LP order {order}"
            );
            assert!(
                (mag(&hp, 0.5, 500.0) - 0.5f64.sqrt()).abs() < 1e-9,
                "HP order {order}"
            );
            assert_eq!(lp.len(), order.div_ceil(2) as usize);
        }
    }

    #[test]
    fn exact_bandwidth_notch_matches_scipy_iirnotch() {
        // docs/REFERENCES.md §9 #4b: scipy.signal.iirnotch(50, 30, fs=500) and (60, 30, fs=500).
        let n = notch(50.0, 30.0, 500.0).unwrap();
        assert!((n.b0 - 0.989_636_18).abs() < 1e-8);
        assert!((n.b1 + 1.601_264_97).abs() < 1e-8);
        assert!((n.a2 - 0.979_272_35).abs() < 1e-8);
        let n60 = notch(60.0, 30.0, 500.0).unwrap();
        assert!((n60.b0 - 0.987_588_94).abs() < 1e-8);
        assert!((n60.a2 - 0.975_177_88).abs() < 1e-8);
        assert!(mag(&[n], 50.0, 500.0) < 1e-12);
    }

    #[test]
    fn typed_errors_are_reachable_and_clear() {
        let e = butterworth_lowpass(2, 250.0, 500.0).unwrap_err();
        assert!(matches!(e, DesignError::Corner { .. }));
        assert!(e.to_string().contains("Nyquist (250 Hz"), "{e}");
        // An estimated rate is not printed with fourteen decimals; a NaN is named as such.
        let e =
            crate::dsp::design::check_corner("high-pass corner", f64::NAN, 249.997_948_516_834_47)
                .unwrap_err()
                .to_string();
        assert_eq!(
            e,
            "high-pass corner is not a number: it must lie between 0 Hz and Nyquist (125 Hz at fs = 250 Hz)"
        );
        assert_eq!(notch(50.0, 0.0, 500.0), Err(DesignError::Q(0.0)));
        assert!(matches!(
            butterworth_highpass(9, 1.0, 500.0),
            Err(DesignError::Order { order: 9, .. })
        ));
        assert!(matches!(
            butterworth_highpass(0, 1.0, 500.0),
            Err(DesignError::Order { order: 0, .. })
        ));
        assert!(matches!(
            butterworth_highpass(2, f64::NAN, 500.0),
            Err(DesignError::Corner { .. })
        ));
    }
}
