//! ECG leads: what a multi-channel board's channels are, the twelve standard leads derived from
//! them, the frontal-plane QRS axis and which electrode is off.
//!
//! Derivations (docs/REFERENCES.md §13):
//! - Einthoven's limb leads: I = LA − RA, II = LL − RA, III = LL − LA, so III = II − I;
//! - Goldberger's augmented leads: aVR = RA − (LA + LL)/2 = −(I + II)/2, aVL = I − II/2,
//!   aVF = II − I/2 (so aVR + aVL + aVF = 0);
//! - Wilson's central terminal WCT = (RA + LA + LL)/3; a chest lead Vk = Vk(electrode) − WCT.

use serde::{Deserialize, Serialize};

/// The twelve standard leads, in the usual order.
pub const TWELVE: [&str; 12] = [
    "I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6",
];

/// Index of lead II in [`TWELVE`] (the rhythm strip, and the lead beats are found on).
pub const LEAD_II: usize = 1;

/// What a board's channels carry, in channel order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "lowercase")]
pub enum LeadSet {
    /// Two limb leads: I, II.
    Limb2,
    /// Eight leads: I, II, V1–V6.
    Leads8,
    /// Nine electrode potentials against a common reference: RA, LA, LL, V1–V6.
    Electrodes9,
}

/// Why a lead set cannot be used on a source.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LeadError {
    #[error("lead set {set} needs {needs} channels; the source has {has}")]
    TooFewChannels {
        set: &'static str,
        needs: usize,
        has: usize,
    },
}

impl LeadSet {
    /// Every set.
    pub const ALL: [LeadSet; 3] = [LeadSet::Limb2, LeadSet::Leads8, LeadSet::Electrodes9];

    /// The name on the command line and in a setup.
    pub fn name(self) -> &'static str {
        match self {
            LeadSet::Limb2 => "limb2",
            LeadSet::Leads8 => "leads8",
            LeadSet::Electrodes9 => "electrodes9",
        }
    }

    /// What the channels carry, as a person reads it.
    pub fn describe(self) -> &'static str {
        match self {
            LeadSet::Limb2 => "leads I, II",
            LeadSet::Leads8 => "leads I, II, V1–V6",
            LeadSet::Electrodes9 => "electrodes RA, LA, LL, V1–V6",
        }
    }

    /// The input channels' names, in channel order.
    pub fn inputs(self) -> &'static [&'static str] {
        match self {
            LeadSet::Limb2 => &["I", "II"],
            LeadSet::Leads8 => &["I", "II", "V1", "V2", "V3", "V4", "V5", "V6"],
            LeadSet::Electrodes9 => &["RA", "LA", "LL", "V1", "V2", "V3", "V4", "V5", "V6"],
        }
    }

    /// The leads it gives, as indices into [`TWELVE`]: the six limb leads, plus the chest
    /// leads when it has them. A lead whose inputs are missing is never given.
    pub fn outputs(self) -> &'static [usize] {
        match self {
            LeadSet::Limb2 => &[0, 1, 2, 3, 4, 5],
            LeadSet::Leads8 | LeadSet::Electrodes9 => &[0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11],
        }
    }

    /// The output leads' names.
    pub fn output_names(self) -> Vec<String> {
        self.outputs()
            .iter()
            .map(|&k| TWELVE[k].to_string())
            .collect()
    }

    /// Checks that a source with `channels` channels has what this set needs.
    ///
    /// # Errors
    /// [`LeadError::TooFewChannels`] naming both numbers.
    pub fn check(self, channels: usize) -> Result<(), LeadError> {
        let needs = self.inputs().len();
        if channels < needs {
            return Err(LeadError::TooFewChannels {
                set: self.name(),
                needs,
                has: channels,
            });
        }
        Ok(())
    }

    /// The set a file's channel names spell, when they do: lead names (I, II, V1…), electrode
    /// names (RA, LA, LL, V1…), with or without an "ECG " prefix, in any case.
    pub fn from_names(names: &[String]) -> Option<(LeadSet, Vec<usize>)> {
        let clean: Vec<String> = names
            .iter()
            .map(|n| {
                let t = n.trim();
                let t = t
                    .strip_prefix("ECG ")
                    .or_else(|| t.strip_prefix("ecg "))
                    .unwrap_or(t);
                t.to_ascii_uppercase()
            })
            .collect();
        let find = |want: &str| clean.iter().position(|n| *n == want.to_ascii_uppercase());
        // The most complete set the names hold.
        for set in [LeadSet::Electrodes9, LeadSet::Leads8, LeadSet::Limb2] {
            let picks: Option<Vec<usize>> = set.inputs().iter().map(|n| find(n)).collect();
            if let Some(p) = picks {
                return Some((set, p));
            }
        }
        None
    }

    /// The output leads of one frame of input `x` (µV, in [`Self::inputs`] order) into `out`
    /// (in [`Self::outputs`] order).
    pub fn derive(self, x: &[f64], out: &mut Vec<f64>) {
        let (i, ii) = match self {
            LeadSet::Limb2 | LeadSet::Leads8 => (x[0], x[1]),
            LeadSet::Electrodes9 => (x[1] - x[0], x[2] - x[0]),
        };
        out.extend([i, ii, ii - i, -(i + ii) / 2.0, i - ii / 2.0, ii - i / 2.0]);
        match self {
            LeadSet::Limb2 => {}
            LeadSet::Leads8 => out.extend_from_slice(&x[2..8]),
            LeadSet::Electrodes9 => {
                let wct = (x[0] + x[1] + x[2]) / 3.0;
                out.extend(x[3..9].iter().map(|v| v - wct));
            }
        }
    }

    /// Whole interleaved blocks: `data` holds frames of `channels` channels, of which the
    /// first [`Self::inputs`] are used; returns the derived frames, interleaved.
    pub fn derive_block(self, data: &[f64], channels: usize) -> Vec<f64> {
        let need = self.inputs().len();
        let mut out = Vec::with_capacity(data.len() / channels.max(1) * self.outputs().len());
        for frame in data.chunks_exact(channels.max(1)) {
            self.derive(&frame[..need.min(frame.len())], &mut out);
        }
        out
    }
}

/// The frontal-plane QRS axis by the net-area method.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrontalAxis {
    /// The axis, degrees, −180…180 (0° = lead I, +90° = aVF).
    pub degrees: f64,
    /// The trade's words for its range (common practice).
    pub words: &'static str,
    /// Beats averaged.
    pub beats: usize,
    /// Net QRS areas in leads I and aVF, µV·s.
    pub net_area_i: f64,
    pub net_area_avf: f64,
    /// How it was found.
    pub method: &'static str,
}

/// The method's one line.
pub const AXIS_METHOD: &str = "net QRS area in leads I and aVF (R−50 ms to R+70 ms, level of the 20 ms before); \
axis = atan2(2·aVF/√3, I) for the Einthoven triangle; the words for the ranges are common practice";

/// The usual words for an axis (common practice; the ranges from memory of the
/// AHA/ACCF/HRS recommendations, Surawicz et al. 2009).
pub fn axis_words(deg: f64) -> &'static str {
    if (-30.0..=90.0).contains(&deg) {
        "normal axis"
    } else if (-90.0..-30.0).contains(&deg) {
        "left axis deviation"
    } else if deg > 90.0 && deg <= 180.0 {
        "right axis deviation"
    } else {
        "extreme axis (north-west)"
    }
}

/// The frontal axis from leads I and aVF (µV at `fs`) over the beats at `r_peaks` (samples).
/// `None` with no beat whose window lies inside both signals, or when both areas vanish.
pub fn frontal_axis(
    lead_i: &[f64],
    lead_avf: &[f64],
    r_peaks: &[usize],
    fs: f64,
) -> Option<FrontalAxis> {
    let ms = |m: f64| (m * 1e-3 * fs).round() as usize;
    let (before, after, level) = (ms(50.0), ms(70.0), ms(20.0).max(1));
    let n = lead_i.len().min(lead_avf.len());
    let (mut ai, mut af, mut beats) = (0.0, 0.0, 0usize);
    for &r in r_peaks {
        let Some(start) = r.checked_sub(before + level) else {
            continue;
        };
        if r + after > n {
            continue;
        }
        let net = |x: &[f64]| {
            let base = x[start..start + level].iter().sum::<f64>() / level as f64;
            x[start + level..r + after]
                .iter()
                .map(|v| v - base)
                .sum::<f64>()
                / fs
        };
        ai += net(lead_i);
        af += net(lead_avf);
        beats += 1;
    }
    if beats == 0 || (ai == 0.0 && af == 0.0) {
        return None;
    }
    let (ai, af) = (ai / beats as f64, af / beats as f64);
    let degrees = (2.0 * af / 3f64.sqrt()).atan2(ai).to_degrees();
    Some(FrontalAxis {
        degrees,
        words: axis_words(degrees),
        beats,
        net_area_i: ai,
        net_area_avf: af,
        method: AXIS_METHOD,
    })
}

/// Electrodes that look off in electrode-potential inputs: a channel at a rail, or one whose
/// mains pickup (RMS µV, one value per electrode) is far above the others' (ten times their
/// median, and over 50 µV). Common practice. Returns the electrodes' names.
pub fn electrodes_off(set: LeadSet, at_rail: &[bool], mains_rms_uv: &[f64]) -> Vec<&'static str> {
    if set != LeadSet::Electrodes9 {
        return Vec::new();
    }
    let names = set.inputs();
    let mut sorted: Vec<f64> = mains_rms_uv
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    sorted.sort_by(f64::total_cmp);
    let median = sorted.get(sorted.len() / 2).copied().unwrap_or(0.0);
    names
        .iter()
        .enumerate()
        .filter(|&(k, _)| {
            let rail = at_rail.get(k).copied().unwrap_or(false);
            let hum = mains_rms_uv.get(k).copied().unwrap_or(0.0);
            rail || (hum > 50.0 && hum > 10.0 * median)
        })
        .map(|(_, n)| *n)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Einthoven (1913) and Goldberger (1942): III = II − I and aVR + aVL + aVF = 0 hold
    /// exactly for any I and II (docs/REFERENCES.md §13).
    #[test]
    fn einthoven_and_goldberger_identities_hold_on_random_inputs() {
        let mut rng = crate::rng::Rng::new(12);
        for _ in 0..10_000 {
            let x: Vec<f64> = (0..8).map(|_| 2000.0 * rng.normal()).collect();
            let mut out = Vec::new();
            LeadSet::Leads8.derive(&x, &mut out);
            let scale = x.iter().fold(1.0f64, |m, v| m.max(v.abs()));
            let (i, ii, iii, avr, avl, avf) = (out[0], out[1], out[2], out[3], out[4], out[5]);
            assert!((iii - (ii - i)).abs() <= 1e-9 * scale);
            assert!((avr + avl + avf).abs() <= 1e-9 * scale);
            assert_eq!(&out[6..], &x[2..8]);
        }
    }

    /// Leads from electrode potentials against the same computed by hand: RA = 0.1, LA = 0.9,
    /// LL = 1.3 mV, V1…V6 = 0.2…0.7 mV.
    #[test]
    fn leads_from_electrodes_match_a_hand_computation() {
        let x = [
            100.0, 900.0, 1300.0, 200.0, 300.0, 400.0, 500.0, 600.0, 700.0,
        ];
        let mut out = Vec::new();
        LeadSet::Electrodes9.derive(&x, &mut out);
        // By hand: I = 900 − 100 = 800; II = 1300 − 100 = 1200; III = 1300 − 900 = 400;
        // aVR = 100 − (900 + 1300)/2 = −1000; aVL = 900 − (100 + 1300)/2 = 200;
        // aVF = 1300 − (100 + 900)/2 = 800; WCT = 2300/3 = 766.67, V1 = 200 − 766.67 …
        let wct = 2300.0 / 3.0;
        let hand = [
            800.0,
            1200.0,
            400.0,
            -1000.0,
            200.0,
            800.0,
            200.0 - wct,
            300.0 - wct,
            400.0 - wct,
            500.0 - wct,
            600.0 - wct,
            700.0 - wct,
        ];
        for (a, b) in out.iter().zip(hand) {
            assert!((a - b).abs() < 1e-9, "{out:?}");
        }
    }

    #[test]
    fn two_limb_leads_give_the_six_limb_leads_only() {
        let mut out = Vec::new();
        LeadSet::Limb2.derive(&[500.0, 1000.0], &mut out);
        assert_eq!(out, vec![500.0, 1000.0, 500.0, -750.0, 0.0, 750.0]);
        assert_eq!(LeadSet::Limb2.output_names().len(), 6);
    }

    #[test]
    fn too_few_channels_names_both_numbers() {
        let e = LeadSet::Leads8.check(3).unwrap_err().to_string();
        assert_eq!(e, "lead set leads8 needs 8 channels; the source has 3");
        assert!(LeadSet::Electrodes9.check(9).is_ok());
    }

    #[test]
    fn a_files_names_choose_the_set_and_the_channels() {
        let names: Vec<String> = ["time", "ECG II", "ECG I"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(
            LeadSet::from_names(&names),
            Some((LeadSet::Limb2, vec![2, 1]))
        );
        let names: Vec<String> = ["RA", "LA", "LL", "V1", "V2", "V3", "V4", "V5", "V6"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(
            LeadSet::from_names(&names).map(|s| s.0),
            Some(LeadSet::Electrodes9)
        );
        let names: Vec<String> = ["ch1", "ch2"].iter().map(|s| s.to_string()).collect();
        assert_eq!(LeadSet::from_names(&names), None);
    }

    /// A beat whose QRS is a triangle of area A in lead I and B·√3/2 in aVF has the axis
    /// atan2(B, A) (Einthoven triangle geometry; hand calculation).
    #[test]
    fn the_axis_of_a_known_pair_of_areas() {
        let fs = 1000.0;
        let mut i = vec![0.0; 2000];
        let mut f = vec![0.0; 2000];
        for r in [500usize, 1500] {
            for j in 0..40 {
                let tri = 1000.0 * (1.0 - (j as f64 - 20.0).abs() / 20.0);
                i[r - 20 + j] = tri * 0.5;
                f[r - 20 + j] = tri * 3f64.sqrt() / 2.0 * (3f64.sqrt() / 2.0);
            }
        }
        // I ∝ cos θ = 0.5, aVF ∝ (√3/2)·sin θ with sin θ = √3/2: θ = 60°.
        let a = frontal_axis(&i, &f, &[500, 1500], fs).unwrap();
        assert!((a.degrees - 60.0).abs() < 1e-6, "{a:?}");
        assert_eq!(a.beats, 2);
        assert_eq!(a.words, "normal axis");
        assert_eq!(axis_words(-45.0), "left axis deviation");
        assert_eq!(axis_words(120.0), "right axis deviation");
        assert_eq!(axis_words(-120.0), "extreme axis (north-west)");
    }

    #[test]
    fn an_electrode_off_is_named() {
        let rails = [false; 9];
        let mut hum = [3.0; 9];
        hum[1] = 900.0;
        assert_eq!(
            electrodes_off(LeadSet::Electrodes9, &rails, &hum),
            vec!["LA"]
        );
        let mut rails = [false; 9];
        rails[2] = true;
        assert_eq!(
            electrodes_off(LeadSet::Electrodes9, &rails, &[3.0; 9]),
            vec!["LL"]
        );
        assert!(electrodes_off(LeadSet::Leads8, &rails, &hum).is_empty());
    }
}
