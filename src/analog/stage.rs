//! One stage of a realised chain: its topology, the parts chosen, the corner they give and the
//! figures over the tolerance draws; its exact s-domain response.

use std::collections::BTreeMap;

use serde::Serialize;

use super::tolerance::Spread;
use super::{poly_ratio_db, rc, sallen_key, twin_t};

/// One stage as built.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct Stage {
    /// rc-highpass, rc-lowpass, sallen-key-highpass, sallen-key-lowpass, twin-t, inamp-gain.
    pub topology: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub design_hz: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub realised_hz: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub design_gain: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub realised_gain: Option<f64>,
    /// Q realised by the chosen parts.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub q: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub design_q: Option<f64>,
    /// Realised corner (or gain) against the design, %.
    pub error_pct: f64,
    /// Part values, ohms and farads (k for the twin-T is a fraction).
    pub parts: BTreeMap<&'static str, f64>,
    /// Corner spread over the tolerances.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub spread: Option<Spread>,
    /// Twin-T: depth at the mains frequency over the tolerance draws, dB (p5/p50/p95).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub notch_depth_db: Option<Percentiles>,
    /// Twin-T: where the notch's centre lands over the draws, Hz (p5/p50/p95).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub notch_centre_hz: Option<Percentiles>,
    /// Twin-T: the mains band the centre is judged against, Hz (±1 % of nominal, EN 50160).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mains_band_hz: Option<(f64, f64)>,
    /// Twin-T: share of builds whose notch centre lies inside that band.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub centre_in_band_share: Option<f64>,
    /// Twin-T: share of builds whose notch misses the mains by more than half its bandwidth.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub miss_share: Option<f64>,
    /// What to do about it, in words (empty when nothing).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub advice: Option<String>,
    /// The op-amp this stage needs.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub opamp: Option<OpampNeed>,
}

impl Stage {
    /// Exact s-domain transfer function with these parts (None for the gain stage).
    pub fn tf(&self) -> Option<(Vec<f64>, Vec<f64>)> {
        self.tf_with(&self.parts)
    }

    /// The transfer function with other part values (a tolerance draw).
    pub(crate) fn tf_with(&self, p: &BTreeMap<&'static str, f64>) -> Option<(Vec<f64>, Vec<f64>)> {
        let g = |k: &str| p.get(k).copied().unwrap_or(f64::NAN);
        Some(match self.topology {
            "rc-highpass" => rc::highpass_tf(g("R"), g("C")),
            "rc-lowpass" => rc::lowpass_tf(g("R"), g("C")),
            "sallen-key-lowpass" => sallen_key::lowpass_tf(g("R1"), g("R2"), g("C1"), g("C2")),
            "sallen-key-highpass" => sallen_key::highpass_tf(g("R1"), g("R2"), g("C1"), g("C2")),
            "twin-t" => twin_t::tf(g("R"), g("C"), g("k")),
            _ => return None,
        })
    }

    /// Corner (and Q where the topology has one) with these part values.
    pub(crate) fn corner(&self, p: &BTreeMap<&'static str, f64>) -> Option<(f64, Option<f64>)> {
        let g = |k: &str| p.get(k).copied().unwrap_or(f64::NAN);
        Some(match self.topology {
            "rc-highpass" | "rc-lowpass" => (rc::corner_hz(g("R"), g("C")), None),
            "sallen-key-lowpass" => {
                let (f, q) = sallen_key::lowpass_f0_q(g("R1"), g("R2"), g("C1"), g("C2"));
                (f, Some(q))
            }
            "sallen-key-highpass" => {
                let (f, q) = sallen_key::highpass_f0_q(g("R1"), g("R2"), g("C1"), g("C2"));
                (f, Some(q))
            }
            "twin-t" => (twin_t::f0_hz(g("R"), g("C")), Some(twin_t::q_for_k(g("k")))),
            _ => return None,
        })
    }

    /// Gain of this stage in dB at `f`.
    pub fn db_at(&self, f: f64) -> f64 {
        self.tf().map_or(0.0, |(n, d)| poly_ratio_db(&n, &d, f))
    }
}

/// Three percentiles of a figure over the tolerance draws.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Percentiles {
    pub p5: f64,
    pub p50: f64,
    pub p95: f64,
}

/// What a stage asks of its op-amp.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OpampNeed {
    /// Gain-bandwidth needed, Hz: 100 × Q × f0 for a Sallen–Key stage (common practice; the
    /// "100 × Q × fc" rule of thumb is recalled from memory of TI's filter notes), 100 × f0 for a
    /// follower after an RC section or a twin-T.
    pub gbw_hz: f64,
    /// Output offset from the input bias current through the DC resistance at the + input, mV.
    pub offset_mv: f64,
    /// The bias current assumed, A.
    pub bias_current_a: f64,
}
