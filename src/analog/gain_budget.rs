//! The gain budget of a front end: how much gain the first stage may have before the electrode
//! offset saturates it, how much gain in total fills the ADC with an R wave, and the
//! input-referred resolution that follows.

use serde::Serialize;

/// What the designer gives.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Budget {
    /// Electrode offset to tolerate, ± mV (ECG standards ask for ±300 mV).
    pub offset_mv: f64,
    /// In-amp output swing either side of its reference, V.
    pub inamp_swing_v: f64,
    /// ADC reference, V (input range 0…vref, biased at mid-scale).
    pub adc_vref_v: f64,
    /// ADC resolution, bits.
    pub adc_bits: u32,
    /// R-wave amplitude to plan for, mV.
    pub r_wave_mv: f64,
    /// Fraction of half the ADC range the R wave should fill.
    pub fill: f64,
}

impl Default for Budget {
    fn default() -> Self {
        Self {
            offset_mv: 300.0,
            inamp_swing_v: 1.4,
            adc_vref_v: 3.3,
            adc_bits: 12,
            r_wave_mv: 1.0,
            fill: 0.5,
        }
    }
}

/// What follows.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetResult {
    /// Largest DC-coupled first-stage gain that keeps the offset inside the swing.
    pub max_first_gain: f64,
    /// Total gain for the R wave to fill the chosen fraction of the ADC's half range.
    pub total_gain: f64,
    /// Gain needed after the first stage (AC-coupled), with the first at its maximum.
    pub second_gain: f64,
    /// Input-referred resolution, µV per LSB, at the total gain.
    pub uv_per_lsb: f64,
    /// Plain-language warnings.
    pub warnings: Vec<String>,
}

/// Works the budget out.
pub fn compute(b: &Budget) -> BudgetResult {
    let max_first = b.inamp_swing_v / (b.offset_mv * 1e-3);
    let half_range = b.adc_vref_v / 2.0;
    let total = b.fill * half_range / (b.r_wave_mv * 1e-3);
    let second = total / max_first;
    let lsb = b.adc_vref_v / (1u64 << b.adc_bits.min(31)) as f64;
    let mut warnings = Vec::new();
    if max_first < 1.0 {
        warnings.push(format!(
            "the in-amp's ±{} V swing cannot hold ±{} mV of offset even at unity gain: AC-couple the electrodes or use a wider supply",
            b.inamp_swing_v, b.offset_mv
        ));
    }
    if total <= max_first {
        warnings
            .push("the whole gain fits in the first stage; a DC-coupled design is possible".into());
    }
    if lsb / total * 1e6 > 5.0 {
        warnings.push(format!(
            "resolution {:.1} µV per LSB is coarse for ECG (aim below about 5 µV): add gain or ADC bits",
            lsb / total * 1e6
        ));
    }
    BudgetResult {
        max_first_gain: max_first,
        total_gain: total,
        second_gain: second,
        uv_per_lsb: lsb / total * 1e6,
        warnings,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_budget_by_hand() {
        // ±300 mV into a ±1.4 V swing: first stage ≤ 4.67. 1 mV filling half of 1.65 V: 825.
        let r = compute(&Budget::default());
        assert!((r.max_first_gain - 4.666_666).abs() < 1e-5);
        assert!((r.total_gain - 825.0).abs() < 1e-9);
        assert!((r.uv_per_lsb - 3.3 / 4096.0 / 825.0 * 1e6).abs() < 1e-9);
        let tight = compute(&Budget {
            inamp_swing_v: 0.2,
            ..Budget::default()
        });
        assert!(tight.warnings.iter().any(|w| w.contains("cannot hold")));
    }
}
