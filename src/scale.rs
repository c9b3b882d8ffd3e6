//! Input scaling: ADC counts → volts at the ADC pin → µV at the electrodes (input-referred).
//!
//! One `InputScale` describes a channel's whole path from electrode to number: the front end's
//! total voltage gain, then an ADC of `bits` bits over `vref_v` volts whose zero-signal level sits at
//! `offset_counts` (mid-scale for a single-supply board). Every view and file uses it, so an axis in
//! µV always means "µV between the electrodes".

use serde::{Deserialize, Serialize};

/// Why a scale cannot be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ScaleError {
    /// Only 8 to 24 bit converters are modelled.
    #[error("ADC resolution {0} bits is outside 8–24 bits")]
    Bits(u32),
    /// The reference must be a positive, finite voltage.
    #[error("ADC reference {0} V must be a positive number of volts")]
    Vref(f64),
    /// The front-end gain must be positive and finite.
    #[error("front-end gain {0} V/V must be a positive number")]
    Gain(f64),
    /// The zero-signal level must be a count the converter can produce.
    #[error("mid-scale offset {offset} counts is outside the converter's 0–{max} counts")]
    Offset { offset: f64, max: f64 },
}

/// ADC and front-end gain of one channel.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct InputScale {
    /// Converter resolution in bits (8–24).
    pub bits: u32,
    /// Full-scale reference in volts: counts 0 … 2^bits − 1 span 0 … vref.
    pub vref_v: f64,
    /// Count that corresponds to 0 V of signal (mid-scale bias), usually 2^(bits−1).
    pub offset_counts: f64,
    /// Total analog gain from the electrodes to the ADC pin, V/V.
    pub gain: f64,
}

impl Default for InputScale {
    /// The demo board: 12-bit ADC on 3.3 V, mid-scale bias, gain 500 (in-amp 10 × second stage 50).
    fn default() -> Self {
        Self {
            bits: 12,
            vref_v: 3.3,
            offset_counts: 2048.0,
            gain: 500.0,
        }
    }
}

impl InputScale {
    /// A checked scale with the zero level at mid-scale.
    ///
    /// # Errors
    /// [`ScaleError`] when bits, reference or gain are out of range.
    pub fn new(bits: u32, vref_v: f64, gain: f64) -> Result<Self, ScaleError> {
        let s = Self {
            bits,
            vref_v,
            offset_counts: (1u64 << bits.clamp(1, 31).saturating_sub(1)) as f64,
            gain,
        };
        s.validate()?;
        Ok(s)
    }

    /// Checks every field; a scale read from a file or a user goes through this.
    ///
    /// # Errors
    /// [`ScaleError`] naming the first bad field.
    pub fn validate(&self) -> Result<(), ScaleError> {
        if !(8..=24).contains(&self.bits) {
            return Err(ScaleError::Bits(self.bits));
        }
        if !(self.vref_v.is_finite() && self.vref_v > 0.0) {
            return Err(ScaleError::Vref(self.vref_v));
        }
        if !(self.gain.is_finite() && self.gain > 0.0) {
            return Err(ScaleError::Gain(self.gain));
        }
        if !(self.offset_counts >= 0.0 && self.offset_counts <= self.max_count()) {
            return Err(ScaleError::Offset {
                offset: self.offset_counts,
                max: self.max_count(),
            });
        }
        Ok(())
    }

    /// Highest count the converter produces (the top rail), 2^bits − 1.
    pub fn max_count(&self) -> f64 {
        ((1u64 << self.bits) - 1) as f64
    }

    /// Volts per count at the ADC pin: vref / 2^bits.
    pub fn lsb_v(&self) -> f64 {
        self.vref_v / (1u64 << self.bits) as f64
    }

    /// Input-referred resolution: µV at the electrodes per count.
    pub fn uv_per_count(&self) -> f64 {
        self.lsb_v() / self.gain * 1e6
    }

    /// Signal volts at the ADC pin (relative to the zero level) for a count.
    pub fn counts_to_adc_v(&self, counts: f64) -> f64 {
        (counts - self.offset_counts) * self.lsb_v()
    }

    /// Input-referred µV at the electrodes for a count.
    pub fn counts_to_uv(&self, counts: f64) -> f64 {
        (counts - self.offset_counts) * self.uv_per_count()
    }

    /// What the converter outputs for `signal_v` at its pin (relative to the zero level):
    /// rounded to the nearest count and held at the rails 0 and 2^bits − 1. Returns the count and
    /// whether it was clipped. A NaN input (a broken model upstream) reads as the bottom rail, as an
    /// open input on a real board would.
    pub fn adc_v_to_counts(&self, signal_v: f64) -> (i64, bool) {
        let c = (signal_v / self.lsb_v() + self.offset_counts).round();
        if c.is_nan() || c <= 0.0 {
            (0, true)
        } else if c >= self.max_count() {
            (self.max_count() as i64, true)
        } else {
            (c as i64, false)
        }
    }

    /// True when a count sits on either rail, i.e. the true signal may have been larger.
    pub fn is_rail(&self, counts: f64) -> bool {
        counts <= 0.0 || counts >= self.max_count()
    }

    /// Input-referred span the converter can represent, µV (lowest, highest).
    pub fn range_uv(&self) -> (f64, f64) {
        (self.counts_to_uv(0.0), self.counts_to_uv(self.max_count()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn twelve_bit_board_by_hand() {
        // Hand computation: 3.3 V / 4096 = 805.664 µV per count at the pin; / 500 = 1.611328 µV.
        let s = InputScale::new(12, 3.3, 500.0).unwrap();
        assert_eq!(s.offset_counts, 2048.0);
        assert!((s.uv_per_count() - 1.611_328_125).abs() < 1e-9);
        assert!((s.counts_to_uv(2048.0 + 620.0) - 999.023_437_5).abs() < 1e-6);
        assert!((s.counts_to_uv(0.0) + 3300.0).abs() < 1e-9);
        assert_eq!(s.max_count(), 4095.0);
    }

    #[test]
    fn twenty_four_bit_board_by_hand() {
        // ADS1299-like: 24 bits over 4.5 V, gain 24: 4.5/2^24/24 = 0.011175871 µV per count.
        let s = InputScale::new(24, 4.5, 24.0).unwrap();
        assert!((s.uv_per_count() - 0.011_175_870_895_385_742).abs() < 1e-15);
        assert!((s.counts_to_uv(8_388_608.0 + 89_478.0) - 999.994_576).abs() < 1e-5);
    }

    #[test]
    fn clipping_is_exactly_at_the_rails() {
        let s = InputScale::default();
        let lsb = s.lsb_v();
        // One count below the top rail is not clipped; the top rail and above are.
        assert_eq!(s.adc_v_to_counts((4094.0 - 2048.0) * lsb), (4094, false));
        assert_eq!(s.adc_v_to_counts((4095.0 - 2048.0) * lsb), (4095, true));
        assert_eq!(s.adc_v_to_counts(10.0), (4095, true));
        assert_eq!(s.adc_v_to_counts((1.0 - 2048.0) * lsb), (1, false));
        assert_eq!(s.adc_v_to_counts(-10.0), (0, true));
        assert_eq!(s.adc_v_to_counts(f64::NAN), (0, true));
        assert!(s.is_rail(0.0) && s.is_rail(4095.0) && !s.is_rail(4094.0));
    }

    #[test]
    fn bad_values_are_named() {
        assert_eq!(InputScale::new(6, 3.3, 1.0), Err(ScaleError::Bits(6)));
        assert!(matches!(
            InputScale::new(12, -1.0, 1.0),
            Err(ScaleError::Vref(_))
        ));
        let e = InputScale::new(12, 3.3, f64::NAN).unwrap_err();
        assert!(e.to_string().contains("gain"), "{e}");
    }
}
