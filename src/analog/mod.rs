//! From chosen corners to real parts: E-series values ([`eseries`]), the circuits ([`rc`],
//! [`sallen_key`], [`twin_t`], [`inamp`]), their exact s-domain responses, tolerance spreads by
//! Monte Carlo ([`tolerance`]), one built stage ([`stage`]), a realisation of a whole chain
//! ([`parts`]), the realised circuit ([`circuit`]) and the gain budget
//! ([`gain_budget`]). Values are in ohms, farads, hertz.

pub mod circuit;
pub mod eseries;
pub mod gain_budget;
pub mod inamp;
pub mod parts;
pub mod rc;
pub mod sallen_key;
pub mod schematic;
pub mod stage;
pub mod tolerance;
pub mod twin_t;

/// A complex number as (re, im), enough for s-domain responses.
pub type C = (f64, f64);

pub(crate) fn cmul(a: C, b: C) -> C {
    (a.0 * b.0 - a.1 * b.1, a.0 * b.1 + a.1 * b.0)
}

pub(crate) fn cdiv(a: C, b: C) -> C {
    let d = b.0 * b.0 + b.1 * b.1;
    ((a.0 * b.0 + a.1 * b.1) / d, (a.1 * b.0 - a.0 * b.1) / d)
}

/// |H| in dB of a polynomial ratio in s (coefficients highest power first), at `f` Hz.
pub fn poly_ratio_db(num: &[f64], den: &[f64], f: f64) -> f64 {
    let s = (0.0, std::f64::consts::TAU * f);
    let eval = |p: &[f64]| {
        p.iter().fold((0.0, 0.0), |acc, &c| {
            let m = cmul(acc, s);
            (m.0 + c, m.1)
        })
    };
    let h = cdiv(eval(num), eval(den));
    crate::numeric::db20((h.0 * h.0 + h.1 * h.1).sqrt().max(1e-300))
}

/// A part's value in engineering notation with its unit (keyed by designator: C… farads, else
/// ohms; `k` a bare ratio): 27000 → "27kΩ", 1e-7 → "100nF".
pub fn engineering(v: f64, key: &str) -> String {
    if key == "k" {
        return format!("{v:.4}");
    }
    let unit = if key.starts_with('C') { "F" } else { "Ω" };
    for (scale, prefix) in [
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
    ] {
        if v >= scale * 0.999 {
            let x = v / scale;
            let s = format!("{x:.3}");
            let s = s.trim_end_matches('0').trim_end_matches('.');
            return format!("{s}{prefix}{unit}");
        }
    }
    format!("{v:e}{unit}")
}
