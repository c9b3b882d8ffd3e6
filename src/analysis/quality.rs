//! Is the signal good enough to count beats? Judged over the last two seconds of input-referred µV
//! and the converter's rail flags: a floating input (lead off), a flat line, clipping, and heavy
//! noise (the QRS detector's signal level hardly above its noise level) each lower a simple
//! quality index; the heart rate is suppressed below 0.5. The index speaks of the signal only,
//! never of the rhythm: how regular the beats come is the rate meter's own figure
//! (`RateMeter::regularity`), so a clean irregular rhythm reads as a clean signal.

use std::collections::VecDeque;

use serde::Serialize;

/// What is wrong, worst first.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Problem {
    /// Input floating: most samples at the rails, or swings of tens of mV.
    LeadOff,
    /// Almost no signal (below 20 µV peak to peak).
    Flat,
    /// More than 1 % of the samples at an ADC rail.
    Clipping,
    /// The QRS detector's signal level is under 2.5 × its noise level.
    Noisy,
}

impl Problem {
    /// Plain words for the GUI.
    pub fn text(&self) -> &'static str {
        match self {
            Problem::LeadOff => "electrode off or input floating",
            Problem::Flat => "flat line: no signal",
            Problem::Clipping => "clipping at the ADC rails",
            Problem::Noisy => "very noisy signal",
        }
    }
}

/// The verdict.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Quality {
    /// 0 (useless) … 1 (clean).
    pub index: f64,
    /// The main problem, if any.
    pub problem: Option<Problem>,
    /// Most recent beats point downwards: the leads may be swapped.
    pub inverted: bool,
}

impl Quality {
    /// Below this the heart rate is not shown.
    pub const USABLE: f64 = 0.5;

    /// True when beats can be trusted.
    pub fn usable(&self) -> bool {
        self.index >= Self::USABLE
    }
}

/// Sliding two-second judgement.
#[derive(Debug, Clone)]
pub struct QualityMonitor {
    window: usize,
    values: VecDeque<f64>,
    rails: VecDeque<bool>,
    rail_count: usize,
    polarity: VecDeque<bool>,
    detector_snr: Option<f64>,
    r_amps: VecDeque<f64>,
}

impl QualityMonitor {
    /// A monitor at `fs`.
    pub fn new(fs: f64) -> Self {
        let window = (2.0 * fs).round().max(2.0) as usize;
        Self {
            window,
            values: VecDeque::with_capacity(window),
            rails: VecDeque::with_capacity(window),
            rail_count: 0,
            polarity: VecDeque::with_capacity(8),
            detector_snr: None,
            r_amps: VecDeque::with_capacity(R_AMPS_KEPT),
        }
    }

    /// One sample (µV) and whether it sat on a rail.
    pub fn push(&mut self, uv: f64, at_rail: bool) {
        if self.values.len() == self.window {
            self.values.pop_front();
            if self.rails.pop_front() == Some(true) {
                self.rail_count -= 1;
            }
        }
        self.values.push_back(uv);
        self.rails.push_back(at_rail);
        if at_rail {
            self.rail_count += 1;
        }
    }

    /// The detector's signal-to-noise level ratio (SPKI / NPKI), once it has one.
    pub fn set_detector_snr(&mut self, r: Option<f64>) {
        self.detector_snr = r;
    }

    /// The sign of a detected beat's R value (and its size, for the scaling check).
    pub fn push_beat(&mut self, r_value: f64) {
        if self.polarity.len() == 8 {
            self.polarity.pop_front();
        }
        self.polarity.push_back(r_value < 0.0);
        if self.r_amps.len() == R_AMPS_KEPT {
            self.r_amps.pop_front();
        }
        self.r_amps.push_back(r_value.abs());
    }

    /// Median R amplitude of the recent beats, µV at the electrodes (None before 5 beats).
    pub fn median_r_uv(&self) -> Option<f64> {
        if self.r_amps.len() < 5 {
            return None;
        }
        Some(crate::numeric::median(&self.r_amps))
    }

    /// Share of the window's samples that sat on an ADC rail.
    pub fn rail_share(&self) -> f64 {
        self.rail_count as f64 / self.values.len().max(1) as f64
    }

    /// "check the front-end scaling: …" when the median R amplitude is outside 0.1–5 mV (common
    /// practice for surface ECG) or more than 5 % of the samples sit on a rail.
    pub fn scale_check(&self) -> Option<String> {
        scale_check(self.median_r_uv(), self.rail_share())
    }

    /// The verdict on the current window.
    pub fn quality(&self) -> Quality {
        let inverted = self.polarity.len() >= 5
            && self.polarity.iter().filter(|&&n| n).count() * 4 >= self.polarity.len() * 3;
        if self.values.len() < self.window / 2 {
            return Quality {
                index: 0.0,
                problem: None,
                inverted,
            };
        }
        let n = self.values.len() as f64;
        let rail_frac = self.rail_count as f64 / n;
        let (lo, hi) = self
            .values
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), &v| (a.min(v), b.max(v)));
        let pp = hi - lo;
        let (index, problem) = if rail_frac > 0.2 || pp > 20_000.0 {
            (0.0, Some(Problem::LeadOff))
        } else if pp < 20.0 {
            (0.0, Some(Problem::Flat))
        } else if self.detector_snr.is_some_and(|r| r < 2.5) {
            // The QRS detector's signal level is hardly above its noise level.
            (0.2, Some(Problem::Noisy))
        } else if rail_frac > 0.01 {
            (0.4, Some(Problem::Clipping))
        } else {
            // Two views of the noise, the better one counts: the detector's signal level over
            // its noise level (which an irregular rhythm's tall T waves also raise), and the
            // beats' median R amplitude over the noise between samples (which it does not).
            let snr = self.detector_snr.unwrap_or(10.0);
            let by_detector = ((snr - 2.5) / 7.5).clamp(0.0, 1.0);
            let by_noise = self.noise_ratio_db().map_or(0.0, |db| {
                ((db - NOISE_DB_POOR) / (NOISE_DB_CLEAN - NOISE_DB_POOR)).clamp(0.0, 1.0)
            });
            (0.5 + 0.5 * by_detector.max(by_noise), None)
        };
        Quality {
            index,
            problem,
            inverted,
        }
    }
}

/// R amplitude over the sample-to-sample noise at which the noise view calls a signal poor (no
/// credit) and clean (full credit), dB: an R wave 10× and 100× the noise's standard deviation
/// (common practice for a readable ECG trace, our own choice of ends).
const NOISE_DB_POOR: f64 = 20.0;
const NOISE_DB_CLEAN: f64 = 40.0;

impl QualityMonitor {
    /// The beats' median R amplitude over the noise of the window, dB. The noise is the robust
    /// standard deviation of the first differences (median |Δx| / (0.6745·√2), exact for white
    /// noise), which the QRS (a few percent of the samples) and slow waves hardly move. None
    /// before 5 beats.
    pub fn noise_ratio_db(&self) -> Option<f64> {
        let r = self.median_r_uv()?;
        let mut d: Vec<f64> = self
            .values
            .iter()
            .zip(self.values.iter().skip(1))
            .map(|(a, b)| (b - a).abs())
            .collect();
        if d.len() < 8 {
            return None;
        }
        let sigma = (crate::numeric::percentile(&mut d, 50.0)
            / (0.674_49 * std::f64::consts::SQRT_2))
            .max(0.1);
        Some(crate::numeric::db20(r / sigma))
    }
}

/// Beats whose R amplitude the scaling check keeps.
const R_AMPS_KEPT: usize = 15;

/// Plausible R amplitudes at the electrodes, µV: 0.1–5 mV (common practice for surface ECG;
/// docs/REFERENCES.md §3 gives 0.1–5 mV for ECG amplitudes).
pub const PLAUSIBLE_R_UV: (f64, f64) = (100.0, 5000.0);

/// The scaling check from its two figures (see [`QualityMonitor::scale_check`]).
pub fn scale_check(median_r_uv: Option<f64>, rail_share: f64) -> Option<String> {
    if rail_share > 0.05 {
        return Some(format!(
            "check the front-end scaling: {:.0} % of the samples sit at an ADC rail",
            100.0 * rail_share
        ));
    }
    let r = median_r_uv?;
    (!(PLAUSIBLE_R_UV.0..=PLAUSIBLE_R_UV.1).contains(&r)).then(|| {
        format!(
            "check the front-end scaling: median R amplitude {} mV at the electrodes (expected 0.1–5 mV)",
            crate::scale::sig3(r / 1e3)
        )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scaling_check_names_the_figure() {
        assert_eq!(scale_check(Some(1200.0), 0.0), None);
        assert_eq!(scale_check(None, 0.0), None);
        let big = scale_check(Some(8217.0), 0.0).unwrap();
        assert!(big.contains("8.22 mV"), "{big}");
        let small = scale_check(Some(40.0), 0.0).unwrap();
        assert!(small.contains("0.0400 mV"), "{small}");
        let rail = scale_check(Some(1000.0), 0.3).unwrap();
        assert!(rail.contains("30 %"), "{rail}");
        let mut q = QualityMonitor::new(500.0);
        for r in [900.0, -1000.0, 1100.0, 950.0] {
            q.push_beat(r);
        }
        assert_eq!(q.median_r_uv(), None);
        q.push_beat(7000.0);
        assert_eq!(q.median_r_uv(), Some(1000.0));
    }

    #[test]
    fn flat_floating_clipping_and_clean() {
        let fs = 500.0;
        let judge = |f: &dyn Fn(usize) -> (f64, bool)| {
            let mut q = QualityMonitor::new(fs);
            for i in 0..1000 {
                let (v, r) = f(i);
                q.push(v, r);
            }
            q.quality()
        };
        let sine = |i: usize| 1000.0 * (i as f64 * 0.03).sin();
        assert_eq!(judge(&|_| (3.0, false)).problem, Some(Problem::Flat));
        assert_eq!(
            judge(&|i| (if i % 2 == 0 { 3300.0 } else { -3300.0 }, true)).problem,
            Some(Problem::LeadOff)
        );
        assert_eq!(
            judge(&|i| (sine(i), i % 50 == 0)).problem,
            Some(Problem::Clipping)
        );
        let mut q = QualityMonitor::new(fs);
        for i in 0..1000 {
            q.push(sine(i), false);
        }
        q.set_detector_snr(Some(1.5));
        assert_eq!(q.quality().problem, Some(Problem::Noisy));
        assert!(!q.quality().usable());
        let clean = judge(&|i| (sine(i), false));
        assert_eq!(clean.problem, None);
        assert!(clean.usable());
    }
}
