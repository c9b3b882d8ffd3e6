//! A realisation of a whole chain with standard parts, stage by stage, and `parts.json`.

use std::collections::BTreeMap;

use super::eseries::Series;
pub use super::stage::Stage;
use super::tolerance::{Spread, Tolerances, draw, percentile};
use super::{inamp, poly_ratio_db, rc, sallen_key, twin_t};
use crate::dsp::chain::ChainSettings;
use crate::dsp::design::butterworth_qs;
use crate::rng::Rng;

/// Why a chain could not be realised.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PartsError {
    /// No capacitor of the list gives a buildable stage.
    #[error("{stage}: none of the capacitors given ({caps}) works; add a value")]
    NoCapacitor { stage: String, caps: String },
    /// Capacitors must be positive values in farads.
    #[error("capacitor {0} F must be a positive number of farads")]
    BadCapacitor(f64),
    /// The in-amp needs a gain above 1 and a positive K.
    #[error("in-amp gain {g} with K = {k} Ω: need G > 1 and K > 0")]
    BadInamp { g: f64, k: f64 },
}

/// What the user has and wants.
#[derive(Debug, Clone, PartialEq)]
pub struct PartsOptions {
    /// Series the resistors come from.
    pub series: Series,
    /// Capacitor values available, F (empty: E6 values from 1 nF to 10 µF).
    pub capacitors: Vec<f64>,
    /// Tolerances for the spread.
    pub tolerances: Tolerances,
    /// In-amp target gain and the datasheet constant K (G = 1 + K/Rg).
    pub inamp: Option<(f64, f64)>,
    /// Input bias current of the op-amps, A (for the offset in the high-pass resistors).
    pub bias_current_a: f64,
}

impl Default for PartsOptions {
    fn default() -> Self {
        Self {
            series: Series::E24,
            capacitors: Vec::new(),
            tolerances: Tolerances::default(),
            inamp: None,
            bias_current_a: 1e-9,
        }
    }
}

fn default_caps() -> Vec<f64> {
    let mut v = Vec::new();
    for dec in [1e-9, 1e-8, 1e-7, 1e-6] {
        for m in Series::E6.values() {
            v.push(m * dec);
        }
    }
    v.push(1e-5);
    v
}

/// Resistors far from ~30 kΩ load op amps or pick up noise; this scores the choice.
fn r_cost(r: f64) -> f64 {
    if !(1e3..=10e6).contains(&r) {
        100.0
    } else {
        (r / 30e3).ln().abs()
    }
}

fn caps_text(c: &[f64]) -> String {
    c.iter()
        .map(|v| format!("{v:e}"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Two series values whose sum is nearest to `want`: the largest value not above it, plus the
/// value nearest to the rest.
pub fn series_pair(s: Series, want: f64) -> (f64, f64) {
    let mut best = (s.nearest(want), 0.0);
    let mut err = (best.0 / want).ln().abs();
    for scale in [0.5, 0.7, 0.8, 0.9, 0.95, 1.0] {
        let a = s.nearest(want * scale);
        if a >= want {
            continue;
        }
        let b = s.nearest(want - a);
        let e = ((a + b) / want).ln().abs();
        if e < err {
            err = e;
            best = (a, b);
        }
    }
    best
}

/// Realises every stage of `chain` (digital gain stages are left out).
///
/// # Errors
/// [`PartsError`] for bad options or a stage no capacitor can build.
pub fn realise(chain: &ChainSettings, opts: &PartsOptions) -> Result<Vec<Stage>, PartsError> {
    if let Some(&bad) = opts
        .capacitors
        .iter()
        .find(|c| !(c.is_finite() && **c > 0.0))
    {
        return Err(PartsError::BadCapacitor(bad));
    }
    let caps = if opts.capacitors.is_empty() {
        default_caps()
    } else {
        opts.capacitors.clone()
    };
    let s = opts.series;
    let mut out = Vec::new();
    let mut add = |stage: Stage| out.push(stage);

    if let Some((g, k)) = opts.inamp {
        let rg = inamp::rg_for(g, k).ok_or(PartsError::BadInamp { g, k })?;
        let rgs = s.nearest(rg);
        let realised = inamp::gain_for(rgs, k);
        add(Stage {
            topology: "inamp-gain",
            design_gain: Some(g),
            realised_gain: Some(realised),
            error_pct: 100.0 * (realised / g - 1.0),
            parts: BTreeMap::from([("Rg", rgs)]),
            ..Stage::default()
        });
    }

    let mut sections: Vec<(&'static str, f64, Option<f64>)> = Vec::new();
    let hp = chain.highpass;
    if hp.enabled {
        if hp.order % 2 == 1 {
            sections.push(("rc-highpass", hp.corner_hz, None));
        }
        for q in butterworth_qs(hp.order) {
            sections.push(("sallen-key-highpass", hp.corner_hz, Some(q)));
        }
    }
    if chain.notch.enabled {
        let n = chain.notch;
        for h in 1..=(1 + n.harmonics.min(4)) {
            sections.push(("twin-t", n.mains_hz * h as f64, Some(n.q)));
        }
    }
    let lp = chain.lowpass;
    if lp.enabled {
        if lp.order % 2 == 1 {
            sections.push(("rc-lowpass", lp.corner_hz, None));
        }
        for q in butterworth_qs(lp.order) {
            sections.push(("sallen-key-lowpass", lp.corner_hz, Some(q)));
        }
    }

    for (topology, f0, q) in sections {
        let Some(parts) = choose(topology, f0, q, &caps, s) else {
            return Err(PartsError::NoCapacitor {
                stage: format!("{topology} at {f0} Hz"),
                caps: caps_text(&caps),
            });
        };
        let mut stage = Stage {
            topology,
            design_hz: Some(f0),
            design_q: q,
            parts,
            ..Stage::default()
        };
        finish(&mut stage, s, opts);
        add(stage);
    }
    Ok(out)
}

/// The cheapest parts (nearest series values, fewest odd values) for one section.
fn choose(
    topology: &'static str,
    f0: f64,
    q: Option<f64>,
    caps: &[f64],
    s: Series,
) -> Option<BTreeMap<&'static str, f64>> {
    let mut best: Option<(f64, BTreeMap<&'static str, f64>)> = None;
    let mut consider = |cost: f64, parts: BTreeMap<&'static str, f64>| {
        if best.as_ref().is_none_or(|b| cost < b.0) {
            best = Some((cost, parts));
        }
    };
    match topology {
        "rc-highpass" | "rc-lowpass" => {
            for &c in caps {
                let r = s.nearest(rc::r_for(f0, c));
                consider(r_cost(r), BTreeMap::from([("R", r), ("C", c)]));
            }
        }
        "sallen-key-highpass" => {
            let q = q.unwrap_or(std::f64::consts::FRAC_1_SQRT_2);
            for &c in caps {
                let (r1, r2) = sallen_key::highpass_resistors(f0, q, c);
                let (r1, r2) = (s.nearest(r1), s.nearest(r2));
                consider(
                    r_cost(r1) + r_cost(r2),
                    BTreeMap::from([("C1", c), ("C2", c), ("R1", r1), ("R2", r2)]),
                );
            }
        }
        "sallen-key-lowpass" => {
            let q = q.unwrap_or(std::f64::consts::FRAC_1_SQRT_2);
            for &c2 in caps {
                for &c1 in caps {
                    if let Some((r1, r2)) = sallen_key::lowpass_resistors(f0, q, c1, c2) {
                        let (r1, r2) = (s.nearest(r1), s.nearest(r2));
                        // Prefer a ratio near 4Q² (nearly equal resistors).
                        let ratio_cost = 0.3 * (c1 / c2 / (4.0 * q * q)).ln().abs();
                        consider(
                            r_cost(r1) + r_cost(r2) + ratio_cost,
                            BTreeMap::from([("C1", c1), ("C2", c2), ("R1", r1), ("R2", r2)]),
                        );
                    }
                }
            }
        }
        _ => {
            // A notch is only useful where it is put: each R of the twin-T is made of two
            // series resistors (Ra + Rb) from the series, which lands within about 0.1 %.
            let k = twin_t::k_for_q(q.unwrap_or(0.25));
            for &c in caps {
                let want = 1.0 / (std::f64::consts::TAU * f0 * c);
                let (ra, rb) = series_pair(s, want);
                let err = ((ra + rb) / want).ln().abs();
                consider(
                    r_cost(want) + 50.0 * err,
                    BTreeMap::from([("R", ra + rb), ("Ra", ra), ("Rb", rb), ("C", c), ("k", k)]),
                );
            }
        }
    }
    best.map(|b| b.1)
}

/// The twin-T's divider, the realised corner, the spread, the op-amp and the notch figures.
fn finish(stage: &mut Stage, s: Series, opts: &PartsOptions) {
    let (topology, f0) = (stage.topology, stage.design_hz.unwrap_or(0.0));
    if topology == "twin-t" {
        // The feedback fraction from two series resistors: k = Rk2 / (Rk1 + Rk2).
        let k = stage.parts.get("k").copied().unwrap_or(0.0);
        if k > 0.0 {
            let (a, b) = s.best_pair((1.0 - k) / k);
            let (rk2, rk1) = (a * 1e4, b * 1e4);
            stage.parts.insert("Rk1", rk1);
            stage.parts.insert("Rk2", rk2);
            stage.parts.insert("k", rk2 / (rk1 + rk2));
        } else {
            // Passive (Q 0.25): the centre node to ground through the follower of 0 V.
            stage.parts.insert("Rk1", 10e6);
            stage.parts.insert("Rk2", 1.0);
        }
    }
    if let Some((f, rq)) = stage.corner(&stage.parts) {
        stage.realised_hz = Some(f);
        stage.q = rq;
        stage.error_pct = 100.0 * (f / f0 - 1.0);
    }
    stage.spread = Some(spread(stage, &opts.tolerances));
    stage.opamp = Some(super::circuit::opamp_need(stage, opts.bias_current_a));
    if topology == "twin-t" {
        super::circuit::notch_tolerance(stage, &opts.tolerances, f0);
    }
}

fn perturbed(stage: &Stage, rng: &mut Rng, t: &Tolerances) -> BTreeMap<&'static str, f64> {
    stage
        .parts
        .iter()
        .map(|(&k, &v)| {
            let tol = match k.chars().next() {
                Some('R') => t.resistor,
                Some('C') => t.capacitor,
                _ => 0.0,
            };
            (k, draw(rng, v, tol))
        })
        .collect()
}

/// Corner percentiles of one stage over the tolerance draws.
pub fn spread(stage: &Stage, t: &Tolerances) -> Spread {
    let mut rng = Rng::new(t.seed);
    let mut f: Vec<f64> = (0..t.draws)
        .filter_map(|_| stage.corner(&perturbed(stage, &mut rng, t)).map(|c| c.0))
        .collect();
    Spread {
        draws: f.len(),
        p5_hz: percentile(&mut f, 5.0),
        p50_hz: percentile(&mut f, 50.0),
        p95_hz: percentile(&mut f, 95.0),
    }
}

/// Gain of the whole realised chain, dB at `f`.
pub fn chain_db(stages: &[Stage], f: f64) -> f64 {
    stages.iter().map(|s| s.db_at(f)).sum()
}

/// The 5th and 95th percentile of the whole chain's gain (dB) at each frequency over the draws.
pub fn envelope(stages: &[Stage], freqs: &[f64], t: &Tolerances) -> Vec<(f64, f64)> {
    let mut rng = Rng::new(t.seed ^ 0x5EED);
    let mut per_f: Vec<Vec<f64>> = vec![Vec::with_capacity(t.draws); freqs.len()];
    for _ in 0..t.draws {
        let drawn: Vec<Option<(Vec<f64>, Vec<f64>)>> = stages
            .iter()
            .map(|s| s.tf_with(&perturbed(s, &mut rng, t)))
            .collect();
        for (i, &f) in freqs.iter().enumerate() {
            per_f[i].push(
                drawn
                    .iter()
                    .flatten()
                    .map(|(n, d)| poly_ratio_db(n, d, f))
                    .sum(),
            );
        }
    }
    per_f
        .iter_mut()
        .map(|v| (percentile(v, 5.0), percentile(v, 95.0)))
        .collect()
}
