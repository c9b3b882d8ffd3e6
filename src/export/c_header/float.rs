//! The f32 export: each section as a trapezoidal state-variable filter, and its Rust model.

use super::ExportError;
use crate::dsp::Section;

/// One section as the SVF form's six coefficients.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Svf {
    pub a1: f64,
    pub a2: f64,
    pub a3: f64,
    pub m0: f64,
    pub m1: f64,
    pub m2: f64,
}

impl Svf {
    /// The SVF with the same transfer function as `s`: undo the bilinear transform
    /// (σ = (z−1)/(z+1)), read off g and k from the analog denominator, and match the numerator
    /// as a mix of the high-, band- and low-pass outputs.
    ///
    /// # Errors
    /// [`ExportError::Svf`] for a denominator that has no such form.
    pub fn from_section(s: &Section, index: usize) -> Result<Self, ExportError> {
        let (n2, n1, n0) = (s.b0 - s.b1 + s.b2, 2.0 * (s.b0 - s.b2), s.b0 + s.b1 + s.b2);
        let (d2, d1, d0) = (1.0 - s.a1 + s.a2, 2.0 * (1.0 - s.a2), 1.0 + s.a1 + s.a2);
        if !(d2 > 0.0 && d0 > 0.0) {
            return Err(ExportError::Svf(index));
        }
        let g = (d0 / d2).sqrt();
        let k = d1 / (d2 * g);
        let (n2, n1, n0) = (n2 / d2, n1 / d2, n0 / d2);
        let m0 = n2;
        let m1 = n1 / g - n2 * k;
        let m2 = n0 / (g * g) - n2;
        let a1 = 1.0 / (1.0 + g * (g + k));
        let a2 = g * a1;
        let a3 = g * a2;
        let c = Self {
            a1,
            a2,
            a3,
            m0,
            m1,
            m2,
        };
        if [a1, a2, a3, m0, m1, m2].iter().all(|v| v.is_finite()) {
            Ok(c)
        } else {
            Err(ExportError::Svf(index))
        }
    }
}

/// The float32 chain exactly as the exported C code computes it.
#[derive(Debug, Clone)]
pub struct F32Model {
    coef: Vec<[f32; 6]>,
    state: Vec<[f32; 2]>,
}

impl F32Model {
    /// The model for `sections`.
    ///
    /// # Errors
    /// [`ExportError`] as [`Svf::from_section`].
    pub fn new(sections: &[Section]) -> Result<Self, ExportError> {
        let coef = sections
            .iter()
            .enumerate()
            .map(|(i, s)| {
                Svf::from_section(s, i)
                    .map(|c| [c.a1, c.a2, c.a3, c.m0, c.m1, c.m2].map(|v| v as f32))
            })
            .collect::<Result<Vec<_>, _>>()?;
        Ok(Self {
            state: vec![[0.0; 2]; coef.len()],
            coef,
        })
    }

    /// One sample through the chain (the C function's body, operation for operation).
    pub fn process(&mut self, x: f32) -> f32 {
        let mut v = x;
        for (c, s) in self.coef.iter().zip(&mut self.state) {
            let v3 = v - s[1];
            let v1 = c[0] * s[0] + c[1] * v3;
            let v2 = s[1] + c[1] * s[0] + c[2] * v3;
            s[0] = 2.0 * v1 - s[0];
            s[1] = 2.0 * v2 - s[1];
            v = c[3] * v + c[4] * v1 + c[5] * v2;
        }
        v
    }
}
