//! Preferred numbers of IEC 60063: E6, E12 and E24 from their published tables (they do not
//! follow the rounding rule), E48, E96 and E192 as round(10^(i/n), 2) with the one published
//! exception (E192 index 185 is 9.20, not 9.19).

use serde::{Deserialize, Serialize};

/// A series.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Series {
    E6,
    E12,
    E24,
    E48,
    E96,
    E192,
}

const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
const E24_EXTRA: [f64; 12] = [1.1, 1.3, 1.6, 2.0, 2.4, 3.0, 3.6, 4.3, 5.1, 6.2, 7.5, 9.1];

impl Series {
    /// Parses "E24" (any case).
    pub fn parse(s: &str) -> Option<Self> {
        Some(match s.to_ascii_uppercase().as_str() {
            "E6" => Series::E6,
            "E12" => Series::E12,
            "E24" => Series::E24,
            "E48" => Series::E48,
            "E96" => Series::E96,
            "E192" => Series::E192,
            _ => return None,
        })
    }

    /// "E24" etc.
    pub fn name(self) -> &'static str {
        match self {
            Series::E6 => "E6",
            Series::E12 => "E12",
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }

    /// The decade's values, 1.0 … < 10, ascending.
    pub fn values(self) -> Vec<f64> {
        match self {
            Series::E6 => E12.iter().step_by(2).copied().collect(),
            Series::E12 => E12.to_vec(),
            Series::E24 => {
                let mut v: Vec<f64> = E12.iter().chain(E24_EXTRA.iter()).copied().collect();
                v.sort_by(f64::total_cmp);
                v
            }
            Series::E48 => (0..48)
                .map(|i| round2(10f64.powf(i as f64 / 48.0)))
                .collect(),
            Series::E96 => (0..96)
                .map(|i| round2(10f64.powf(i as f64 / 96.0)))
                .collect(),
            Series::E192 => (0..192)
                .map(|i| {
                    if i == 185 {
                        9.20
                    } else {
                        round2(10f64.powf(i as f64 / 192.0))
                    }
                })
                .collect(),
        }
    }

    /// The series value nearest to `x` (ratio-wise), any decade.
    pub fn nearest(self, x: f64) -> f64 {
        if !(x.is_finite() && x > 0.0) {
            return x;
        }
        let decade = 10f64.powf(x.log10().floor());
        let mut best = x;
        let mut err = f64::INFINITY;
        for d in [decade / 10.0, decade, decade * 10.0] {
            for v in self.values() {
                let c = v * d;
                let e = (c / x).ln().abs();
                if e < err {
                    err = e;
                    best = c;
                }
            }
        }
        // Remove binary noise: keep three significant digits.
        let mag = 10f64.powf(best.log10().floor() - 2.0);
        (best / mag).round() * mag
    }

    /// The pair (a, b) of series values, a in [1, 10) × 10^k and b anywhere, whose ratio b / a is
    /// nearest to `ratio`.
    pub fn best_pair(self, ratio: f64) -> (f64, f64) {
        let mut best = (1.0, self.nearest(ratio));
        let mut err = (best.1 / ratio).ln().abs();
        for a in self.values() {
            let b = self.nearest(a * ratio);
            let e = (b / a / ratio).ln().abs();
            if e < err {
                err = e;
                best = (a, b);
            }
        }
        best
    }
}

fn round2(x: f64) -> f64 {
    (x * 100.0).round() / 100.0
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn iec_60063_values() {
        // docs/REFERENCES.md §7 and §9 #20 [S] (Wikipedia "E series of preferred numbers"; IEC 60063).
        let e24 = Series::E24.values();
        assert_eq!(e24.len(), 24);
        assert!(e24.contains(&4.3) && !e24.contains(&4.2));
        let e96 = Series::E96.values();
        assert_eq!(e96[50], 3.32);
        assert_eq!(e96[95], 9.76);
        assert_eq!(Series::E192.values()[185], 9.20);
        assert_eq!(
            Series::E48.values(),
            e96.iter().step_by(2).copied().collect::<Vec<_>>()
        );
        // E24 has 8 values that the rounding rule does not give (docs/REFERENCES.md §7 [C]).
        let rule: Vec<f64> = (0..24)
            .map(|i| (10f64.powf(i as f64 / 24.0) * 10.0).round() / 10.0)
            .collect();
        assert_eq!(e24.iter().zip(&rule).filter(|(a, b)| a != b).count(), 8);
        assert_eq!(Series::E6.values(), vec![1.0, 1.5, 2.2, 3.3, 4.7, 6.8]);
    }

    #[test]
    fn nearest_and_pairs() {
        // docs/REFERENCES.md §9 #16 [C]: 28.135 kΩ → 27 kΩ in E24, 28.0 kΩ in E96.
        assert_eq!(Series::E24.nearest(28_135.0), 27_000.0);
        assert_eq!(Series::E96.nearest(28_135.0), 28_000.0);
        assert_eq!(Series::E12.nearest(0.096), 0.1);
        let (a, b) = Series::E24.best_pair(2.0);
        assert!((b / a - 2.0).abs() < 1e-9, "{a} {b}");
    }
}
