//! Input scaling: ADC counts → volts at the ADC pin → µV at the electrodes (input-referred).
//!
//! One `InputScale` describes a channel's whole path from electrode to number: the front end's
//! total voltage gain, then an ADC of `bits` bits whose zero-signal level sits at `offset_counts`.
//! A unipolar converter (single supply) spans 0 … vref over counts 0 … 2^bits − 1 and is usually
//! biased at mid-scale; a bipolar (two's-complement) converter spans −vref … +vref over counts
//! −2^(bits−1) … 2^(bits−1) − 1 with its zero at count 0. Every view and file uses it, so an axis in
//! µV always means "µV between the electrodes".
//!
//! A [`FrontEnd`] is what the user sets per channel: either such an ADC model (for streams of
//! integer counts) or "the values are already V / mV / µV" (for streams that send decimals).

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
    #[error("zero level {offset} counts is outside the converter's {min}…{max} counts")]
    Offset { offset: f64, min: f64, max: f64 },
}

/// ADC and front-end gain of one channel.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct InputScale {
    /// Converter resolution in bits (8–24).
    pub bits: u32,
    /// Reference in volts: a unipolar converter spans 0 … vref, a bipolar one −vref … +vref.
    pub vref_v: f64,
    /// Count that corresponds to 0 V of signal: 2^(bits−1) (mid-scale) on a single-supply board,
    /// 0 on a bipolar converter.
    pub offset_counts: f64,
    /// Total analog gain from the electrodes to the ADC pin, V/V.
    pub gain: f64,
    /// Two's-complement converter: counts −2^(bits−1) … 2^(bits−1) − 1 span −vref … +vref.
    pub bipolar: bool,
}

impl Default for InputScale {
    /// The demo board: 12-bit ADC on 3.3 V, mid-scale bias, gain 500 (in-amp 10 × second stage 50).
    fn default() -> Self {
        Self {
            bits: 12,
            vref_v: 3.3,
            offset_counts: 2048.0,
            gain: 500.0,
            bipolar: false,
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
            bipolar: false,
        };
        s.validate()?;
        Ok(s)
    }

    /// A checked two's-complement scale: counts −2^(bits−1) … 2^(bits−1) − 1 over −vref … +vref,
    /// zero at count 0.
    ///
    /// # Errors
    /// [`ScaleError`] when bits, reference or gain are out of range.
    pub fn bipolar(bits: u32, vref_v: f64, gain: f64) -> Result<Self, ScaleError> {
        let s = Self {
            bits,
            vref_v,
            offset_counts: 0.0,
            gain,
            bipolar: true,
        };
        s.validate()?;
        Ok(s)
    }

    /// The count of a zero signal when nothing else is said: mid-scale, or 0 for bipolar.
    pub fn default_zero(&self) -> f64 {
        if self.bipolar {
            0.0
        } else {
            (1u64 << self.bits.clamp(1, 31).saturating_sub(1)) as f64
        }
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
        if !(self.offset_counts >= self.min_count() && self.offset_counts <= self.max_count()) {
            return Err(ScaleError::Offset {
                offset: self.offset_counts,
                min: self.min_count(),
                max: self.max_count(),
            });
        }
        Ok(())
    }

    /// Lowest count the converter produces (the bottom rail): 0, or −2^(bits−1) when bipolar.
    pub fn min_count(&self) -> f64 {
        if self.bipolar {
            -((1u64 << self.bits.clamp(1, 31).saturating_sub(1)) as f64)
        } else {
            0.0
        }
    }

    /// Highest count the converter produces (the top rail): 2^bits − 1, or 2^(bits−1) − 1 when
    /// bipolar.
    pub fn max_count(&self) -> f64 {
        let n = 1u64 << self.bits.clamp(1, 31);
        if self.bipolar {
            (n / 2 - 1) as f64
        } else {
            (n - 1) as f64
        }
    }

    /// Volts per count at the ADC pin: vref / 2^bits (unipolar) or 2·vref / 2^bits (bipolar).
    pub fn lsb_v(&self) -> f64 {
        let span = if self.bipolar {
            2.0 * self.vref_v
        } else {
            self.vref_v
        };
        span / (1u64 << self.bits.clamp(1, 31)) as f64
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
    /// rounded to the nearest count and held at the rails. Returns the count and whether it was
    /// clipped. A NaN input (a broken model upstream) reads as the bottom rail, as an open input on
    /// a real board would.
    pub fn adc_v_to_counts(&self, signal_v: f64) -> (i64, bool) {
        let c = (signal_v / self.lsb_v() + self.offset_counts).round();
        if c.is_nan() || c <= self.min_count() {
            (self.min_count() as i64, true)
        } else if c >= self.max_count() {
            (self.max_count() as i64, true)
        } else {
            (c as i64, false)
        }
    }

    /// True when a count sits on either rail, i.e. the true signal may have been larger.
    pub fn is_rail(&self, counts: f64) -> bool {
        counts <= self.min_count() || counts >= self.max_count()
    }

    /// Input-referred span the converter can represent, µV (lowest, highest).
    pub fn range_uv(&self) -> (f64, f64) {
        (
            self.counts_to_uv(self.min_count()),
            self.counts_to_uv(self.max_count()),
        )
    }

    /// Input-referred full scale either side of zero, mV (the smaller of the two sides).
    pub fn full_scale_mv(&self) -> f64 {
        let (lo, hi) = self.range_uv();
        lo.abs().min(hi.abs()) / 1e3
    }

    /// One line for the status and the front-end section: "1.611 µV/LSB, ±3.30 mV".
    pub fn describe(&self) -> String {
        format!(
            "{} µV/LSB, ±{} mV at the electrodes",
            sig3(self.uv_per_count()),
            sig3(self.full_scale_mv())
        )
    }
}

/// A number with three significant figures, without exponent for the ranges used here.
pub fn sig3(x: f64) -> String {
    if !x.is_finite() || x == 0.0 {
        return format!("{x}");
    }
    let digits = (2 - x.abs().log10().floor() as i32).clamp(0, 9) as usize;
    format!("{x:.digits$}")
}

/// What the numbers of a channel are, as the user says.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum ValueKind {
    /// ADC counts: integers go through the ADC model. (Decimals in such a stream are mV.)
    #[default]
    Counts,
    /// Volts at the electrodes.
    #[serde(rename = "V")]
    Volts,
    /// Millivolts at the electrodes.
    #[serde(rename = "mV")]
    Millivolts,
    /// Microvolts at the electrodes.
    #[serde(rename = "uV")]
    Microvolts,
}

impl ValueKind {
    /// µV per unit for the physical kinds; None for counts.
    pub fn uv_per_unit(self) -> Option<f64> {
        match self {
            ValueKind::Counts => None,
            ValueKind::Volts => Some(1e6),
            ValueKind::Millivolts => Some(1e3),
            ValueKind::Microvolts => Some(1.0),
        }
    }

    /// The label in the GUI and messages.
    pub fn label(self) -> &'static str {
        match self {
            ValueKind::Counts => "ADC counts",
            ValueKind::Volts => "already V",
            ValueKind::Millivolts => "already mV",
            ValueKind::Microvolts => "already µV",
        }
    }
}

/// µV per unit of decimal values in a counts stream (the wire format's convention: mV).
pub const DECIMAL_UV_PER_UNIT: f64 = 1e3;

/// One channel's front end as the user sets it.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
#[serde(default)]
pub struct FrontEnd {
    /// What the numbers are.
    pub values: ValueKind,
    /// The converter and gain, used when `values` is counts.
    pub adc: InputScale,
}

impl FrontEnd {
    /// Front end of counts through this ADC model.
    pub fn counts(adc: InputScale) -> Self {
        Self {
            values: ValueKind::Counts,
            adc,
        }
    }

    /// Input-referred µV of a value; `decimal` says the stream sent it with a decimal point.
    pub fn to_uv(&self, v: f64, decimal: bool) -> f64 {
        match self.values.uv_per_unit() {
            Some(k) => v * k,
            None if decimal => v * DECIMAL_UV_PER_UNIT,
            None => self.adc.counts_to_uv(v),
        }
    }

    /// True when the value sits on a converter rail (never for physical values).
    pub fn is_rail(&self, v: f64, decimal: bool) -> bool {
        self.values == ValueKind::Counts && !decimal && self.adc.is_rail(v)
    }

    /// The ADC model in force, if the values are counts.
    pub fn scale(&self) -> Option<InputScale> {
        (self.values == ValueKind::Counts).then_some(self.adc)
    }

    /// One line: "12-bit 3.3 V mid-scale, gain 500: 1.61 µV/LSB, ±3.30 mV" or "values in mV".
    pub fn describe(&self) -> String {
        match self.values {
            ValueKind::Counts => format!(
                "{}-bit {} V {}, gain {}: {}",
                self.adc.bits,
                self.adc.vref_v,
                if self.adc.bipolar {
                    "bipolar".to_string()
                } else if self.adc.offset_counts == self.adc.default_zero() {
                    "mid-scale".to_string()
                } else {
                    format!("zero at {}", self.adc.offset_counts)
                },
                self.adc.gain,
                self.adc.describe()
            ),
            k => format!("values {}", k.label()),
        }
    }

    /// Checks the ADC model when it is used.
    ///
    /// # Errors
    /// [`ScaleError`] naming the bad field.
    pub fn validate(&self) -> Result<(), ScaleError> {
        match self.values {
            ValueKind::Counts => self.adc.validate(),
            _ => Ok(()),
        }
    }
}

/// The front end of channel `k`: its own entry, else the last one given (one entry = all channels).
pub fn for_channel(list: &[FrontEnd], k: usize) -> Option<&FrontEnd> {
    list.get(k).or_else(|| list.last())
}

/// A starting point for a board, by converter class (generic, not a product).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Preset {
    /// Name in the picker.
    pub name: &'static str,
    /// The front end it sets (the gain is a typical in-amp + second stage; edit it).
    pub front_end: FrontEnd,
}

/// The presets offered in the monitor, the demo board first.
pub fn presets() -> Vec<Preset> {
    let uni = |bits, vref, gain| InputScale {
        bits,
        vref_v: vref,
        offset_counts: (1u64 << (bits - 1)) as f64,
        gain,
        bipolar: false,
    };
    let bi = |bits, vref, gain| InputScale {
        bits,
        vref_v: vref,
        offset_counts: 0.0,
        gain,
        bipolar: true,
    };
    vec![
        Preset {
            name: "demo board (12-bit 3.3 V, gain 500)",
            front_end: FrontEnd::counts(InputScale::default()),
        },
        Preset {
            name: "10-bit 5 V, mid-scale",
            front_end: FrontEnd::counts(uni(10, 5.0, 1000.0)),
        },
        Preset {
            name: "12-bit 3.3 V, mid-scale",
            front_end: FrontEnd::counts(uni(12, 3.3, 1000.0)),
        },
        Preset {
            name: "16-bit bipolar ±2.5 V",
            front_end: FrontEnd::counts(bi(16, 2.5, 100.0)),
        },
        Preset {
            name: "24-bit bipolar ±2.4 V",
            front_end: FrontEnd::counts(bi(24, 2.4, 6.0)),
        },
        Preset {
            name: "values already in mV",
            front_end: FrontEnd {
                values: ValueKind::Millivolts,
                adc: InputScale::default(),
            },
        },
        Preset {
            name: "values already in µV",
            front_end: FrontEnd {
                values: ValueKind::Microvolts,
                adc: InputScale::default(),
            },
        },
    ]
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
    fn twenty_four_bit_unipolar_by_hand() {
        // 24 bits over 4.5 V, gain 24: 4.5/2^24/24 = 0.011175871 µV per count.
        let s = InputScale::new(24, 4.5, 24.0).unwrap();
        assert!((s.uv_per_count() - 0.011_175_870_895_385_742).abs() < 1e-15);
        assert!((s.counts_to_uv(8_388_608.0 + 89_478.0) - 999.994_576).abs() < 1e-5);
    }

    #[test]
    fn ten_bit_five_volt_board_by_hand() {
        // Hand computation: 5 V / 1024 = 4882.8125 µV per count at the pin; / 1000 = 4.8828125 µV
        // at the electrodes. Mid-scale 512; count 717 → 205 × 4.8828125 = 1000.976 µV.
        let s = InputScale::new(10, 5.0, 1000.0).unwrap();
        assert_eq!(s.offset_counts, 512.0);
        assert_eq!((s.min_count(), s.max_count()), (0.0, 1023.0));
        assert!((s.uv_per_count() - 4.882_812_5).abs() < 1e-12);
        assert!((s.counts_to_uv(717.0) - 1_000.976_562_5).abs() < 1e-9);
        // Input-referred full scale ±2.5 mV (−512 and +511 counts: the smaller side, 2.495 mV).
        assert!((s.full_scale_mv() - 2.495_117_187_5).abs() < 1e-9);
    }

    #[test]
    fn sixteen_bit_bipolar_by_hand() {
        // Hand computation: ±2.5 V over 65536 counts = 76.2939 µV per count at the pin; gain 100
        // → 0.762939453 µV. Count −1311 → −1000.213623 µV. Rails at −32768 and +32767.
        let s = InputScale::bipolar(16, 2.5, 100.0).unwrap();
        assert!((s.uv_per_count() - 0.762_939_453_125).abs() < 1e-12);
        assert!((s.counts_to_uv(-1311.0) + 1_000.213_623_046_875).abs() < 1e-9);
        assert_eq!((s.min_count(), s.max_count()), (-32768.0, 32767.0));
        assert!(s.is_rail(-32768.0) && s.is_rail(32767.0) && !s.is_rail(0.0));
        assert_eq!(s.adc_v_to_counts(-9.0), (-32768, true));
        assert!((s.range_uv().0 + 25_000.0).abs() < 1e-6);
    }

    #[test]
    fn twenty_four_bit_bipolar_by_hand() {
        // Hand computation: ±2.4 V over 2^24 counts = 0.286102 µV per count at the pin; gain 6
        // → 0.0476837158 µV per count. Count 20972 → 20972 × 0.0476837158 = 1000.0229 µV.
        let s = InputScale::bipolar(24, 2.4, 6.0).unwrap();
        assert!((s.uv_per_count() - 0.047_683_715_820_312_5).abs() < 1e-15);
        assert!((s.counts_to_uv(20_972.0) - 1_000.022_888_183_593_6).abs() < 1e-9);
        assert_eq!(s.max_count(), 8_388_607.0);
        // ±400 mV input-referred full scale (2.4 V / 6).
        assert!((s.full_scale_mv() - 399.999_952_316).abs() < 1e-6);
    }

    #[test]
    fn front_end_kinds() {
        let fe = FrontEnd::counts(InputScale::new(10, 5.0, 1000.0).unwrap());
        assert!((fe.to_uv(717.0, false) - 1_000.976_562_5).abs() < 1e-9);
        // A decimal in a counts stream is mV (the wire format's convention).
        assert_eq!(fe.to_uv(1.25, true), 1250.0);
        let mv = FrontEnd {
            values: ValueKind::Millivolts,
            ..fe
        };
        assert_eq!(mv.to_uv(2.0, false), 2000.0);
        assert!(!mv.is_rail(1023.0, false) && fe.is_rail(1023.0, false));
        let list = [fe, mv];
        assert_eq!(for_channel(&list, 5), Some(&mv));
        assert_eq!(for_channel(&list[..1], 3), Some(&fe));
        assert_eq!(sig3(1.611_328), "1.61");
        assert_eq!(sig3(0.047_683), "0.0477");
        assert_eq!(sig3(3300.0), "3300");
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
