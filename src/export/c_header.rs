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

use std::fmt::Write as _;

use crate::dsp::Section;

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

/// What the header says about the chain (one line per stage).
#[derive(Debug, Clone, PartialEq)]
pub struct HeaderInfo {
    pub fs_hz: f64,
    /// Human description of the chain, e.g. "HP:0.5Hz(o2) N:50Hz(Q30) LP:40Hz(o4)".
    pub chain: String,
    pub prefix: String,
    pub format: CFormat,
}

fn check_prefix(p: &str) -> Result<(), ExportError> {
    let ok = !p.is_empty()
        && p.chars().all(|c| c.is_ascii_alphanumeric() || c == '_')
        && !p.starts_with(|c: char| c.is_ascii_digit());
    if ok {
        Ok(())
    } else {
        Err(ExportError::Prefix(p.into()))
    }
}

fn f32_lit(v: f64) -> String {
    // Nine significant digits round-trip any float32.
    let s = format!("{:.9e}", v as f32);
    format!("{s}f")
}

/// The header text.
///
/// # Errors
/// [`ExportError`] for a bad prefix, an empty chain or a coefficient out of range.
pub fn header(sections: &[Section], info: &HeaderInfo) -> Result<String, ExportError> {
    check_prefix(&info.prefix)?;
    if sections.is_empty() {
        return Err(ExportError::Empty);
    }
    let p = &info.prefix;
    let up = p.to_ascii_uppercase();
    let n = sections.len();
    let gains = worst_case_gains(sections);
    let worst = gains.iter().copied().fold(0.0, f64::max);
    let mut h = String::new();
    let _ = writeln!(
        h,
        "/* {p} filter chain, exported by leadline {} — a self-contained C99 header.",
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(h, " *");
    let _ = writeln!(
        h,
        " * Sample rate: {} Hz. The coefficients are valid at this rate only.",
        info.fs_hz
    );
    let _ = writeln!(h, " * Chain (in processing order): {}", info.chain);
    let _ = writeln!(
        h,
        " * Sections: {n}. Per section (b0, b1, b2, a1, a2, a0 = 1) of the design:"
    );
    for (i, s) in sections.iter().enumerate() {
        let _ = writeln!(
            h,
            " *   {i}: {:+.12e} {:+.12e} {:+.12e} | {:+.12e} {:+.12e}",
            s.b0, s.b1, s.b2, s.a1, s.a2
        );
    }
    let _ = writeln!(h, " *");
    match info.format {
        CFormat::F32 => {
            let _ = writeln!(
                h,
                " * Format f32: float samples in and out. Each section runs as a trapezoidal"
            );
            let _ = writeln!(
                h,
                " * state-variable filter (two float states, six float coefficients), which stays"
            );
            let _ = writeln!(
                h,
                " * accurate with corners far below fs (a float direct form does not)."
            );
        }
        CFormat::Q15 | CFormat::Q31 => {
            if info.format == CFormat::Q15 {
                let _ = writeln!(
                    h,
                    " * Format q15: int16_t samples in and out (Q1.15, full scale = 1.0). Inside, samples"
                );
                let _ = writeln!(
                    h,
                    " * are widened to Q1.31 (x * 65536) and rounded back at the end (saturating)."
                );
            } else {
                let _ = writeln!(
                    h,
                    " * Format q31: int32_t samples in and out (Q1.31, full scale = 1.0)."
                );
            }
            let _ = writeln!(
                h,
                " * Internal widths: coefficients Q2.30 in int32_t (value = integer / 2^30);"
            );
            let _ = writeln!(
                h,
                " * history (x1, x2, y1, y2) Q1.31 in int32_t; accumulator 64 bits (sums of 32x32"
            );
            let _ = writeln!(
                h,
                " * products, Q3.61, added modulo 2^64); first-order error feedback: the 30 bits"
            );
            let _ = writeln!(
                h,
                " * dropped from the accumulator are carried into the next sample. Section outputs"
            );
            let _ = writeln!(
                h,
                " * saturate to the int32_t range and are counted in state->saturations."
            );
            let _ = writeln!(
                h,
                " * Assumes two's complement and an arithmetic right shift of negative values"
            );
            let _ = writeln!(h, " * (gcc, clang, Arm and IAR compilers do this).");
        }
    }
    let _ = writeln!(h, " *");
    let _ = writeln!(
        h,
        " * Worst-case internal gain (largest |output| of each section for |input| <= 1, the"
    );
    let _ = writeln!(
        h,
        " * l1 norm of its impulse response from the chain input):"
    );
    for (i, g) in gains.iter().enumerate() {
        let _ = writeln!(h, " *   section {i}: {g:.4}");
    }
    let _ = writeln!(
        h,
        " * Largest: {worst:.4}. Keep |input| below {:.4} of full scale to never saturate.",
        1.0 / worst.max(1e-12)
    );
    let _ = writeln!(h, " *");
    let _ = writeln!(
        h,
        " * Use: {p}_state s; {p}_init(&s); then y = {p}_process(&s, x) once per sample."
    );
    let _ = writeln!(h, " * Not a medical device; not for diagnosis.");
    let _ = writeln!(h, " */");
    let _ = writeln!(h, "#ifndef {up}_FILTERS_H");
    let _ = writeln!(h, "#define {up}_FILTERS_H");
    let _ = writeln!(h);
    let _ = writeln!(h, "#include <stdint.h>");
    let _ = writeln!(h);
    let _ = writeln!(h, "#define {up}_SECTIONS {n}");
    let _ = writeln!(h, "#define {up}_FS_HZ {}", fmt_c_double(info.fs_hz));
    let _ = writeln!(h);
    match info.format {
        CFormat::F32 => {
            let _ = writeln!(
                h,
                "/* Per section: a1, a2, a3 (integrator gains), m0, m1, m2 (output mix). */"
            );
            let _ = writeln!(h, "static const float {p}_coef[{up}_SECTIONS][6] = {{");
            for (i, s) in sections.iter().enumerate() {
                let c = Svf::from_section(s, i)?;
                let _ = writeln!(
                    h,
                    "    {{ {}, {}, {}, {}, {}, {} }},",
                    f32_lit(c.a1),
                    f32_lit(c.a2),
                    f32_lit(c.a3),
                    f32_lit(c.m0),
                    f32_lit(c.m1),
                    f32_lit(c.m2)
                );
            }
            let _ = writeln!(h, "}};");
            let _ = writeln!(h);
            h.push_str(&template(F32_CODE, p, &up));
        }
        CFormat::Q15 | CFormat::Q31 => {
            let m = FixedModel::new(sections)?;
            let _ = writeln!(
                h,
                "/* Per section: b0, b1, b2, a1, a2 in Q2.30 (value = integer / 2^30). */"
            );
            let _ = writeln!(h, "static const int32_t {p}_coef[{up}_SECTIONS][5] = {{");
            for c in m.coefficients() {
                let cs: Vec<String> = c.iter().map(|v| c_int32(*v)).collect();
                let _ = writeln!(h, "    {{ {} }},", cs.join(", "));
            }
            let _ = writeln!(h, "}};");
            let _ = writeln!(h);
            h.push_str(&template(FIXED_CODE, p, &up));
            h.push_str(&template(
                if info.format == CFormat::Q15 {
                    Q15_ENTRY
                } else {
                    Q31_ENTRY
                },
                p,
                &up,
            ));
        }
    }
    let _ = writeln!(h);
    let _ = writeln!(h, "#endif /* {up}_FILTERS_H */");
    Ok(h)
}

/// The C text with `@p@` and `@UP@` replaced by the prefix and its upper case.
fn template(code: &str, p: &str, up: &str) -> String {
    code.replace("@UP@", up).replace("@p@", p)
}

/// State, init and per-sample function of the float32 state-variable sections.
const F32_CODE: &str = r"typedef struct {
    float ic1[@UP@_SECTIONS];
    float ic2[@UP@_SECTIONS];
} @p@_state;

static void @p@_init(@p@_state *s)
{
    int i;
    for (i = 0; i < @UP@_SECTIONS; i++) {
        s->ic1[i] = 0.0f;
        s->ic2[i] = 0.0f;
    }
}

static float @p@_process(@p@_state *s, float x)
{
    int i;
    float v = x;
    for (i = 0; i < @UP@_SECTIONS; i++) {
        const float *c = @p@_coef[i];
        float v3 = v - s->ic2[i];
        float v1 = c[0] * s->ic1[i] + c[1] * v3;
        float v2 = s->ic2[i] + c[1] * s->ic1[i] + c[2] * v3;
        s->ic1[i] = 2.0f * v1 - s->ic1[i];
        s->ic2[i] = 2.0f * v2 - s->ic2[i];
        v = c[3] * v + c[4] * v1 + c[5] * v2;
    }
    return v;
}
";

/// State, init and the Q1.31 section loop of the fixed-point formats (see [`FixedModel`]).
const FIXED_CODE: &str = r"typedef struct {
    int32_t x1[@UP@_SECTIONS], x2[@UP@_SECTIONS];
    int32_t y1[@UP@_SECTIONS], y2[@UP@_SECTIONS];
    int64_t err[@UP@_SECTIONS];
    uint32_t saturations;
} @p@_state;

static void @p@_init(@p@_state *s)
{
    int i;
    for (i = 0; i < @UP@_SECTIONS; i++) {
        s->x1[i] = s->x2[i] = s->y1[i] = s->y2[i] = 0;
        s->err[i] = 0;
    }
    s->saturations = 0u;
}

/* One Q1.31 sample through every section. */
static int32_t @p@_run_q31(@p@_state *s, int32_t x)
{
    int i;
    int32_t v = x;
    for (i = 0; i < @UP@_SECTIONS; i++) {
        const int32_t *c = @p@_coef[i];
        uint64_t acc = (uint64_t)s->err[i];
        int64_t y;
        int64_t rem;
        acc += (uint64_t)((int64_t)c[0] * v);
        acc += (uint64_t)((int64_t)c[1] * s->x1[i]);
        acc += (uint64_t)((int64_t)c[2] * s->x2[i]);
        acc -= (uint64_t)((int64_t)c[3] * s->y1[i]);
        acc -= (uint64_t)((int64_t)c[4] * s->y2[i]);
        y = (int64_t)acc >> 30;
        rem = (int64_t)(acc & 0x3FFFFFFFu);
        if (y > INT32_MAX) {
            y = INT32_MAX;
            rem = 0;
            s->saturations++;
        } else if (y < INT32_MIN) {
            y = INT32_MIN;
            rem = 0;
            s->saturations++;
        }
        s->err[i] = rem;
        s->x2[i] = s->x1[i];
        s->x1[i] = v;
        s->y2[i] = s->y1[i];
        s->y1[i] = (int32_t)y;
        v = (int32_t)y;
    }
    return v;
}

";

/// The per-sample function for Q15 samples.
const Q15_ENTRY: &str = r"static int16_t @p@_process(@p@_state *s, int16_t x)
{
    int64_t y = (int64_t)@p@_run_q31(s, (int32_t)x * 65536);
    y = (y + 32768) >> 16;
    if (y > INT16_MAX) y = INT16_MAX;
    if (y < INT16_MIN) y = INT16_MIN;
    return (int16_t)y;
}
";

/// The per-sample function for Q31 samples.
const Q31_ENTRY: &str = r"static int32_t @p@_process(@p@_state *s, int32_t x)
{
    return @p@_run_q31(s, x);
}
";

/// An int32 literal that is valid C even for INT32_MIN.
fn c_int32(v: i32) -> String {
    if v == i32::MIN {
        "INT32_MIN".into()
    } else {
        format!("{v}")
    }
}

fn fmt_c_double(v: f64) -> String {
    let s = format!("{v}");
    if s.contains('.') || s.contains('e') {
        s
    } else {
        format!("{s}.0")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
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
