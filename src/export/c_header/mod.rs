//! The chain as a self-contained C99 header for firmware, in float32, Q15 or Q31, with Rust
//! models of exactly the same arithmetic (the tests compile the header and compare).
//!
//! Structures, chosen for low corners (a 0.5 Hz high-pass at 1 kHz has poles 0.0022 from z = 1):
//! - `f32`: each biquad as a trapezoidal-integrator state-variable filter (the "linear trapezoidal
//!   SVF" form described by A. Simper, Cytomic technical paper, 2013 — recalled from memory). Its
//!   coefficients are small numbers (g = tan(π·fc/fs)) that float32 holds accurately, where a
//!   float32 direct form loses about 2e-4 of the peak on such a high-pass.
//! - `q15` / `q31`: direct form I in integers: Q2.30 coefficients in `int32_t`, samples inside
//!   the chain in Q1.31 `int32_t` (Q15 input is widened by 16 bits, so Q15 gets the same inner
//!   precision), a 64-bit accumulator, and first-order error feedback (the accumulator's dropped
//!   low 30 bits are added back at the next sample), which removes the rounding noise that poles
//!   near z = 1 would otherwise amplify. Section outputs saturate.
//!
//! Files: [`float`] (the f32 model), [`fixed`] (the Q15/Q31 model and the worst-case gains),
//! [`text`] (the header's text).

mod fixed;
mod float;
mod text;

pub use fixed::{COEF_FRAC, FixedModel, worst_case_gains};
pub use float::{F32Model, Svf};
pub use text::{HeaderInfo, header};

/// Sample format of the exported filter.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CFormat {
    F32,
    Q15,
    Q31,
}

impl CFormat {
    /// The name used on the command line and in the header.
    pub fn name(self) -> &'static str {
        match self {
            CFormat::F32 => "f32",
            CFormat::Q15 => "q15",
            CFormat::Q31 => "q31",
        }
    }
}

/// Why a chain cannot be exported.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ExportError {
    /// The prefix must be a C identifier.
    #[error("prefix {0:?} is not a C identifier (letters, digits, _; not starting with a digit)")]
    Prefix(String),
    /// A coefficient does not fit Q2.30.
    #[error(
        "section {section}: coefficient {name} = {value} does not fit Q2.30 (|c| < 2); the fixed-point formats need a plain gain below 2 — use f32 or a smaller gain"
    )]
    Range {
        section: usize,
        name: &'static str,
        value: f64,
    },
    /// An empty chain.
    #[error("the chain has no stage in use: nothing to export")]
    Empty,
    /// A section the state-variable form cannot take (pole or zero at z = −1 exactly).
    #[error("section {0}: cannot be written as a state-variable filter (a pole at Nyquist)")]
    Svf(usize),
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::dsp::Section;
    use crate::dsp::design;

    fn chain(fs: f64) -> Vec<Section> {
        let mut s = design::butterworth_highpass(2, 0.5, fs).unwrap();
        s.extend(design::mains_notches(50.0, 30.0, 0, fs).unwrap());
        s.extend(design::butterworth_lowpass(4, 40.0, fs).unwrap());
        s
    }

    fn df2t(sections: &[Section], x: &[f64]) -> Vec<f64> {
        let mut v = x.to_vec();
        for s in sections {
            let (mut s1, mut s2) = (0.0, 0.0);
            for x in &mut v {
                let y = s.b0 * *x + s1;
                s1 = s.b1 * *x - s.a1 * y + s2;
                s2 = s.b2 * *x - s.a2 * y;
                *x = y;
            }
        }
        v
    }

    fn signal(n: usize, fs: f64) -> Vec<f64> {
        (0..n)
            .map(|i| {
                let t = i as f64 / fs;
                let w = std::f64::consts::TAU;
                0.3 + 0.25 * (w * 1.2 * t).sin()
                    + 0.1 * (w * 17.0 * t).sin()
                    + 0.1 * (w * 50.0 * t).sin()
            })
            .collect()
    }

    #[test]
    fn the_svf_form_has_the_sections_transfer_function() {
        let s = chain(1000.0);
        let x = signal(20_000, 1000.0);
        let want = df2t(&s, &x);
        // The same SVF in f64: only rounding separates it from the direct form.
        let mut v = x.clone();
        for (i, sec) in s.iter().enumerate() {
            let c = Svf::from_section(sec, i).unwrap();
            let (mut ic1, mut ic2) = (0.0, 0.0);
            for x in &mut v {
                let v3 = *x - ic2;
                let v1 = c.a1 * ic1 + c.a2 * v3;
                let v2 = ic2 + c.a2 * ic1 + c.a3 * v3;
                ic1 = 2.0 * v1 - ic1;
                ic2 = 2.0 * v2 - ic2;
                *x = c.m0 * *x + c.m1 * v1 + c.m2 * v2;
            }
        }
        let peak = want.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let err = want
            .iter()
            .zip(&v)
            .fold(0.0_f64, |m, (a, b)| m.max((a - b).abs()));
        assert!(err < 1e-12 * peak.max(1.0), "{err}");
    }

    #[test]
    fn float32_and_q31_stay_within_1e_4_of_the_peak_on_a_low_corner_chain() {
        let fs = 1000.0;
        let s = chain(fs);
        let x = signal(20_000, fs);
        let want = df2t(&s, &x);
        let peak = want.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        let mut f = F32Model::new(&s).unwrap();
        let err32 = x
            .iter()
            .zip(&want)
            .map(|(&x, &w)| (f64::from(f.process(x as f32)) - w).abs())
            .fold(0.0, f64::max);
        assert!(err32 < 1e-4 * peak, "f32 error {err32} of peak {peak}");
        let mut q = FixedModel::new(&s).unwrap();
        let full = f64::from(1u32 << 31);
        let err31 = x
            .iter()
            .zip(&want)
            .map(|(&x, &w)| {
                let y = q.process_q31((x * full).round() as i32);
                (f64::from(y) / full - w).abs()
            })
            .fold(0.0, f64::max);
        assert!(err31 < 1e-4 * peak, "q31 error {err31} of peak {peak}");
        assert_eq!(q.saturations, 0);
    }

    #[test]
    fn out_of_range_coefficients_and_bad_prefixes_are_refused() {
        let e = FixedModel::new(&[Section::gain(2.5)]).unwrap_err();
        assert!(e.to_string().contains("Q2.30"), "{e}");
        let info = HeaderInfo {
            fs_hz: 500.0,
            chain: "x".into(),
            prefix: "9lives".into(),
            format: CFormat::F32,
            canceller: false,
        };
        assert!(matches!(
            header(&chain(500.0), &info),
            Err(ExportError::Prefix(_))
        ));
        let info = HeaderInfo {
            prefix: "ok_name".into(),
            ..info
        };
        assert!(matches!(header(&[], &info), Err(ExportError::Empty)));
    }

    #[test]
    fn worst_case_gain_of_a_plain_gain_and_a_low_pass() {
        let g = worst_case_gains(&[Section::gain(0.5)]);
        assert!((g[0] - 0.5).abs() < 1e-12);
        // A 4th-order Butterworth low-pass overshoots: its ℓ1 norm exceeds its DC gain of 1.
        let lp = design::butterworth_lowpass(4, 40.0, 1000.0).unwrap();
        let g = worst_case_gains(&lp);
        assert!(g[1] > 1.0 && g[1] < 1.5, "{g:?}");
    }
}
