//! The Q15/Q31 export: direct form I in integers with error feedback, its Rust model, and the
//! worst-case internal gains.

use super::ExportError;
use crate::dsp::Section;

/// Fraction bits of the fixed-point coefficients (Q2.30).
pub const COEF_FRAC: u32 = 30;

/// A coefficient in Q2.30.
fn q30(v: f64, section: usize, name: &'static str) -> Result<i32, ExportError> {
    let q = (v * f64::from(1u32 << COEF_FRAC)).round();
    if q >= f64::from(i32::MIN) && q <= f64::from(i32::MAX) {
        Ok(q as i32)
    } else {
        Err(ExportError::Range {
            section,
            name,
            value: v,
        })
    }
}

/// The Q15/Q31 chain exactly as the exported C code computes it.
#[derive(Debug, Clone)]
pub struct FixedModel {
    /// b0, b1, b2, a1, a2 in Q2.30.
    coef: Vec<[i32; 5]>,
    /// x1, x2, y1, y2 (Q1.31).
    hist: Vec<[i32; 4]>,
    /// The accumulator's dropped low bits, carried to the next sample.
    err: Vec<i64>,
    /// Section outputs that had to be held at the int32 range.
    pub saturations: u32,
}

impl FixedModel {
    /// The model for `sections`.
    ///
    /// # Errors
    /// [`ExportError::Range`] when a coefficient does not fit Q2.30.
    pub fn new(sections: &[Section]) -> Result<Self, ExportError> {
        let coef = sections
            .iter()
            .enumerate()
            .map(|(i, s)| {
                Ok([
                    q30(s.b0, i, "b0")?,
                    q30(s.b1, i, "b1")?,
                    q30(s.b2, i, "b2")?,
                    q30(s.a1, i, "a1")?,
                    q30(s.a2, i, "a2")?,
                ])
            })
            .collect::<Result<Vec<_>, ExportError>>()?;
        Ok(Self {
            hist: vec![[0; 4]; coef.len()],
            err: vec![0; coef.len()],
            coef,
            saturations: 0,
        })
    }

    /// The coefficients in Q2.30, per section b0, b1, b2, a1, a2.
    pub fn coefficients(&self) -> &[[i32; 5]] {
        &self.coef
    }

    /// One Q1.31 sample through the chain (the C body, operation for operation: the accumulator
    /// adds modulo 2^64 as the C code's `uint64_t` does).
    pub fn process_q31(&mut self, x: i32) -> i32 {
        let mut v = x;
        for ((c, h), e) in self.coef.iter().zip(&mut self.hist).zip(&mut self.err) {
            let p = |a: i32, b: i32| (i64::from(a) * i64::from(b)) as u64;
            let acc = (*e as u64)
                .wrapping_add(p(c[0], v))
                .wrapping_add(p(c[1], h[0]))
                .wrapping_add(p(c[2], h[1]))
                .wrapping_sub(p(c[3], h[2]))
                .wrapping_sub(p(c[4], h[3]));
            let a = acc as i64;
            let mut y = a >> COEF_FRAC;
            let mut rem = (acc & ((1u64 << COEF_FRAC) - 1)) as i64;
            if y > i64::from(i32::MAX) {
                y = i64::from(i32::MAX);
                rem = 0;
                self.saturations = self.saturations.wrapping_add(1);
            } else if y < i64::from(i32::MIN) {
                y = i64::from(i32::MIN);
                rem = 0;
                self.saturations = self.saturations.wrapping_add(1);
            }
            *e = rem;
            h[1] = h[0];
            h[0] = v;
            h[3] = h[2];
            h[2] = y as i32;
            v = y as i32;
        }
        v
    }

    /// One Q15 sample: widened to Q1.31, through the chain, rounded back to Q15 and saturated.
    pub fn process_q15(&mut self, x: i16) -> i16 {
        let y = i64::from(self.process_q31(i32::from(x) * 65_536));
        ((y + 32_768) >> 16).clamp(i64::from(i16::MIN), i64::from(i16::MAX)) as i16
    }
}

/// Largest output of each section for an input bounded by 1 (the ℓ1 norm of the impulse response
/// from the chain's input to that section's output), from an f64 impulse response long enough to
/// have decayed below 1e-12.
pub fn worst_case_gains(sections: &[Section]) -> Vec<f64> {
    // Long enough: grow until the tail of every stage's response is negligible.
    let mut n = 4096;
    loop {
        let mut x = vec![0.0; n];
        x[0] = 1.0;
        let mut gains = Vec::with_capacity(sections.len());
        let mut tail_small = true;
        for s in sections {
            let (mut s1, mut s2) = (0.0, 0.0);
            for v in &mut x {
                let y = s.b0 * *v + s1;
                s1 = s.b1 * *v - s.a1 * y + s2;
                s2 = s.b2 * *v - s.a2 * y;
                *v = y;
            }
            let tail: f64 = x[n - n / 8..].iter().map(|v| v.abs()).sum();
            if tail > 1e-12 {
                tail_small = false;
            }
            gains.push(x.iter().map(|v| v.abs()).sum());
        }
        if tail_small || n >= 1 << 24 {
            return gains;
        }
        n *= 4;
    }
}
