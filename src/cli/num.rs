//! One validation layer for every numeric option.
//!
//! Each numeric option of every command names its value parser here, with the finite range the
//! trade makes sense of: sample rates 125–4000 Hz, durations up to a day, corners 0.01–2000 Hz
//! (and inside Nyquist, checked by the design), Q up to 100, Butterworth orders 1–8. A value
//! outside its range, NaN, an infinity or a negative number is refused by clap while parsing
//! (exit 2, one line naming the option and the range), so no command ever allocates or loops
//! from an unchecked number. `tests/it/cli.rs` walks the clap definitions and tries NaN, inf, a
//! negative and an absurd value on every option these parsers serve.

pub use crate::numeric::short;

/// True for the value parsers of this module (numbers and the few typed values holding one).
pub fn is_numeric(p: &clap::builder::ValueParser) -> bool {
    use std::any::TypeId;
    let t = p.type_id();
    [
        TypeId::of::<f64>(),
        TypeId::of::<u16>(),
        TypeId::of::<u32>(),
        TypeId::of::<u64>(),
        TypeId::of::<usize>(),
        TypeId::of::<NotchArg>(),
        TypeId::of::<ZeroArg>(),
        TypeId::of::<WindowSize>(),
    ]
    .into_iter()
    .any(|id| t == id)
}

/// A value parser for a real number in `lo..=hi` (`unit` after the range in messages).
pub fn real(
    lo: f64,
    hi: f64,
    unit: &'static str,
) -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    move |text: &str| check_real(text, lo, hi, unit)
}

/// The check behind [`real`], for values read elsewhere (a setup, a spec string).
///
/// # Errors
/// A message saying what was expected.
pub fn check_real(text: &str, lo: f64, hi: f64, unit: &str) -> Result<f64, String> {
    let range = format!(
        "{}–{}{}{}",
        short(lo),
        short(hi),
        if unit.is_empty() { "" } else { " " },
        unit
    );
    let v: f64 = text
        .trim()
        .parse()
        .map_err(|_| format!("expected a number in {range}"))?;
    if !v.is_finite() {
        return Err(format!("expected a finite number in {range}"));
    }
    if v < lo || v > hi {
        return Err(format!("out of range: expected {range}"));
    }
    Ok(v)
}

/// A value parser for a whole number in `lo..=hi`.
pub fn whole<T>(lo: u64, hi: u64) -> impl Fn(&str) -> Result<T, String> + Clone + Send + Sync
where
    T: TryFrom<u64> + Clone + Send + Sync + 'static,
{
    move |text: &str| {
        let range = format!("{lo}–{hi}");
        let v: u64 = text
            .trim()
            .parse()
            .map_err(|_| format!("expected a whole number in {range}"))?;
        if v < lo || v > hi {
            return Err(format!("out of range: expected {range}"));
        }
        T::try_from(v).map_err(|_| format!("out of range: expected {range}"))
    }
}

/// A sample rate, Hz: 125–4000 (the rates the product is built and tested for).
pub fn rate_hz() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(RATE_MIN_HZ, RATE_MAX_HZ, "Hz")
}

/// Lowest sample rate an option takes, Hz.
pub const RATE_MIN_HZ: f64 = 125.0;
/// Highest sample rate an option takes, Hz.
pub const RATE_MAX_HZ: f64 = 4000.0;

/// A filter corner or a frequency of interest, Hz (and below Nyquist, checked with the rate).
pub fn corner_hz() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(0.01, 2000.0, "Hz")
}

/// A mains frequency, Hz (grids run at 50 or 60 Hz; a little room for drift and tests).
pub fn mains_hz() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(40.0, 70.0, "Hz")
}

/// A duration, s: up to a day.
pub fn seconds() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(0.001, 86_400.0, "s")
}

/// A time within a recording, s (0 allowed): up to a day.
pub fn time_s() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(0.0, 86_400.0, "s")
}

/// A level at the electrodes, µV (0 allowed): up to 1 V.
pub fn level_uv() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(0.0, 1e6, "µV")
}

/// A gain, V/V.
pub fn gain() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(1e-3, 1e6, "V/V")
}

/// A notch Q (−3 dB bandwidth = frequency / Q).
pub fn q() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(0.5, 100.0, "")
}

/// A Butterworth order.
pub fn order() -> impl Fn(&str) -> Result<u32, String> + Clone + Send + Sync {
    whole::<u32>(1, 8)
}

/// A percentage, 0–100.
pub fn percent() -> impl Fn(&str) -> Result<f64, String> + Clone + Send + Sync + 'static {
    real(0.0, 100.0, "%")
}

/// `--notch`: a frequency in Hz, or `auto` (measured in the input).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum NotchArg {
    Hz(f64),
    Auto,
}

/// The value parser of `--notch`.
///
/// # Errors
/// A message saying what was expected.
pub fn notch(text: &str) -> Result<NotchArg, String> {
    if text.trim().eq_ignore_ascii_case("auto") {
        return Ok(NotchArg::Auto);
    }
    check_real(text, 1.0, 2000.0, "Hz")
        .map(NotchArg::Hz)
        .map_err(|e| format!("{e}, or auto"))
}

/// `--adc-zero`: the count of a zero signal.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ZeroArg {
    /// Mid-scale (single-supply boards).
    Mid,
    /// Two's-complement counts: zero is 0.
    Bipolar,
    /// This count.
    Counts(f64),
}

/// The value parser of `--adc-zero`.
///
/// # Errors
/// A message saying what was expected.
pub fn zero(text: &str) -> Result<ZeroArg, String> {
    let t = text.trim().to_ascii_lowercase();
    match t.as_str() {
        "mid" => Ok(ZeroArg::Mid),
        "bipolar" | "0" => Ok(ZeroArg::Bipolar),
        _ => check_real(&t, 0.0, 16_777_215.0, "counts")
            .map(ZeroArg::Counts)
            .map_err(|e| format!("{e}, or mid, or bipolar")),
    }
}

/// `--size`: a window size in logical pixels.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WindowSize {
    pub width: f32,
    pub height: f32,
}

/// The value parser of `--size` (WIDTHxHEIGHT).
///
/// # Errors
/// A message saying what was expected.
pub fn window_size(text: &str) -> Result<WindowSize, String> {
    let expected = "expected WIDTHxHEIGHT, width 320–8000 and height 240–8000 pixels";
    let (w, h) = text
        .trim()
        .split_once(['x', 'X'])
        .ok_or_else(|| expected.to_string())?;
    let one = |t: &str, lo: u32| -> Result<f32, String> {
        match t.trim().parse::<u32>() {
            Ok(v) if (lo..=8000).contains(&v) => Ok(v as f32),
            _ => Err(expected.to_string()),
        }
    };
    Ok(WindowSize {
        width: one(w, 320)?,
        height: one(h, 240)?,
    })
}

impl Default for WindowSize {
    fn default() -> Self {
        Self {
            width: 1280.0,
            height: 800.0,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_refuse_what_the_trade_does_not_use() {
        let fs = rate_hz();
        assert_eq!(fs("360"), Ok(360.0));
        for bad in ["NaN", "inf", "-inf", "-1", "0", "1e308", "1e-308", "x", ""] {
            assert!(fs(bad).is_err(), "{bad}");
        }
        let e = corner_hz()("1e308").unwrap_err();
        assert!(e.len() < 60, "{e}");
        assert_eq!(order()("4"), Ok(4));
        assert!(order()("0").is_err() && order()("99").is_err() && order()("-1").is_err());
        assert_eq!(notch("AUTO"), Ok(NotchArg::Auto));
        assert_eq!(notch("60"), Ok(NotchArg::Hz(60.0)));
        assert!(notch("NaN").is_err());
        assert_eq!(zero("2048"), Ok(ZeroArg::Counts(2048.0)));
        assert!(zero("-5").is_err());
        assert_eq!(
            window_size("1600x1000"),
            Ok(WindowSize {
                width: 1600.0,
                height: 1000.0
            })
        );
        assert!(window_size("1e308x5").is_err());
        assert_eq!(short(1e-12), "1e-12");
        assert_eq!(short(4000.0), "4000");
        assert_eq!(short(0.01), "0.01");
    }
}
