//! The header's text: the comment block that says what the chain is and how to use it, the
//! coefficient tables and the C code.

use std::fmt::Write as _;

use super::{CFormat, ExportError, FixedModel, Svf, worst_case_gains};
use crate::dsp::Section;

/// What the header says about the chain (one line per stage).
#[derive(Debug, Clone, PartialEq)]
pub struct HeaderInfo {
    pub fs_hz: f64,
    /// Human description of the chain, e.g. "HP:0.5Hz(o2) N:50Hz(Q30) LP:40Hz(o4)".
    pub chain: String,
    pub prefix: String,
    pub format: CFormat,
    /// The chain runs the adaptive mains canceller too, which the header does not hold.
    pub canceller: bool,
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
    let mut h = String::new();
    comment(&mut h, sections, info);
    let n = sections.len();
    let _ = writeln!(h, "#ifndef {up}_FILTERS_H");
    let _ = writeln!(h, "#define {up}_FILTERS_H");
    let _ = writeln!(h);
    let _ = writeln!(h, "#include <stdint.h>");
    let _ = writeln!(h);
    let _ = writeln!(h, "#define {up}_SECTIONS {n}");
    let _ = writeln!(h, "#define {up}_FS_HZ {}", fmt_c_double(info.fs_hz));
    let _ = writeln!(h);
    tables_and_code(&mut h, sections, info)?;
    let _ = writeln!(h);
    let _ = writeln!(h, "#endif /* {up}_FILTERS_H */");
    Ok(h)
}

/// The opening comment: what the chain is, its sections, the format's arithmetic, the
/// worst-case gains and how to use it.
fn comment(h: &mut String, sections: &[Section], info: &HeaderInfo) {
    let p = &info.prefix;
    let n = sections.len();
    let gains = worst_case_gains(sections);
    let worst = gains.iter().copied().fold(0.0, f64::max);
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
    if info.canceller {
        let _ = writeln!(
            h,
            " * NOT IN THIS HEADER: the chain's adaptive mains canceller (C:…) runs in leadline only;"
        );
        let _ = writeln!(
            h,
            " * the sections below are the rest of the chain. Without it, add a notch for the mains."
        );
    }
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
    arithmetic_note(h, info.format);
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
}

/// What the format's arithmetic is, for the header's opening comment.
fn arithmetic_note(h: &mut String, format: CFormat) {
    match format {
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
            if format == CFormat::Q15 {
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
}

/// The coefficient table and the C code of the format.
fn tables_and_code(
    h: &mut String,
    sections: &[Section],
    info: &HeaderInfo,
) -> Result<(), ExportError> {
    let p = &info.prefix;
    let up = p.to_ascii_uppercase();
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
    Ok(())
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
