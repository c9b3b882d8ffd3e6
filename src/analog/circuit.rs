//! The realised chain as a circuit: every part with a designator, its value and the nodes it
//! joins; op-amps as ideal amplifiers. One model feeds the schematic (SVG and the Parts view), the
//! SPICE netlist, the BOM and the realised response, so the four always describe the same
//! circuit.
//!
//! Layout of each stage (nodes `in` → … → `out`, ground `0`):
//! - in-amp: U (gain 1 + K/Rg) with Rg across its gain pins;
//! - RC high-/low-pass, then a unity follower (the next stage must not load it);
//! - unity-gain Sallen–Key high-/low-pass (docs/REFERENCES.md §7, TI "Op Amps for Everyone" ch. 16);
//! - twin-T: each R made of two series E-series resistors, R/2 of two such R in parallel, 2C of two
//!   C in parallel; the T's output buffered by a follower, whose output feeds a divider
//!   (Rk1 over Rk2) setting k; a second follower drives the T's centre node with k·V_out.

use std::collections::BTreeMap;

use serde::Serialize;

use super::eseries::Series;
use super::stage::{OpampNeed, Percentiles, Stage};
use super::{C, cdiv, cmul};

/// What a part is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Kind {
    Resistor,
    Capacitor,
    /// An op-amp wired as a unity follower (+ input, output = − input).
    Follower,
    /// An instrumentation amplifier with a fixed gain.
    Inamp,
}

/// One part.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Part {
    /// R1, C3, U2 …
    pub designator: String,
    pub kind: Kind,
    /// Ω, F, or the gain (V/V) of an in-amp.
    pub value: f64,
    /// Nodes it joins: (a, b) for R and C; (+ input, output) for a follower; (input, output) for
    /// an in-amp (ground-referred).
    pub nodes: (String, String),
    /// Resistor series the value comes from.
    pub series: Option<Series>,
    /// Tolerance, %.
    pub tolerance_pct: f64,
    /// Index of the stage it belongs to.
    pub stage: usize,
    /// Its role in the stage, for the drawing ("R1", "Ra", "C", "U", "Rk1" …).
    pub role: String,
}

/// The whole chain as parts.
#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    pub parts: Vec<Part>,
    /// The stages' topologies, in order, with their input and output nodes.
    pub stages: Vec<(&'static str, String, String)>,
}

/// Tolerances written into the BOM, %.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tol {
    pub resistor_pct: f64,
    pub capacitor_pct: f64,
}

struct Builder {
    parts: Vec<Part>,
    counts: BTreeMap<char, usize>,
    series: Series,
    tol: Tol,
    stage: usize,
}

impl Builder {
    fn add(&mut self, kind: Kind, value: f64, a: &str, b: &str, role: &str) -> String {
        let letter = match kind {
            Kind::Resistor => 'R',
            Kind::Capacitor => 'C',
            Kind::Follower | Kind::Inamp => 'U',
        };
        let n = self.counts.entry(letter).or_insert(0);
        *n += 1;
        let designator = format!("{letter}{n}");
        self.parts.push(Part {
            designator: designator.clone(),
            kind,
            value,
            nodes: (a.to_string(), b.to_string()),
            series: (kind == Kind::Resistor).then_some(self.series),
            tolerance_pct: match kind {
                Kind::Resistor => self.tol.resistor_pct,
                Kind::Capacitor => self.tol.capacitor_pct,
                _ => 0.0,
            },
            stage: self.stage,
            role: role.to_string(),
        });
        designator
    }
}

/// The circuit of `stages` (as [`super::parts::realise`] chose them).
pub fn build(stages: &[Stage], series: Series, tol: Tol) -> Circuit {
    let mut b = Builder {
        parts: Vec::new(),
        counts: BTreeMap::new(),
        series,
        tol,
        stage: 0,
    };
    let mut list = Vec::new();
    let n = stages.len();
    for (i, s) in stages.iter().enumerate() {
        b.stage = i;
        let input = if i == 0 {
            "in".to_string()
        } else {
            format!("s{i}")
        };
        let output = if i + 1 == n {
            "out".to_string()
        } else {
            format!("s{}", i + 1)
        };
        let p = |k: &str| s.parts.get(k).copied().unwrap_or(f64::NAN);
        let node = |name: &str| format!("n{}{name}", i + 1);
        match s.topology {
            "inamp-gain" => {
                b.add(
                    Kind::Inamp,
                    s.realised_gain.unwrap_or(1.0),
                    &input,
                    &output,
                    "U",
                );
                b.add(Kind::Resistor, p("Rg"), &node("g1"), &node("g2"), "Rg");
            }
            "rc-highpass" => {
                b.add(Kind::Capacitor, p("C"), &input, &node("a"), "C");
                b.add(Kind::Resistor, p("R"), &node("a"), "0", "R");
                b.add(Kind::Follower, 1.0, &node("a"), &output, "U");
            }
            "rc-lowpass" => {
                b.add(Kind::Resistor, p("R"), &input, &node("a"), "R");
                b.add(Kind::Capacitor, p("C"), &node("a"), "0", "C");
                b.add(Kind::Follower, 1.0, &node("a"), &output, "U");
            }
            "sallen-key-highpass" => {
                b.add(Kind::Capacitor, p("C1"), &input, &node("a"), "C1");
                b.add(Kind::Capacitor, p("C2"), &node("a"), &node("p"), "C2");
                b.add(Kind::Resistor, p("R1"), &node("a"), &output, "R1");
                b.add(Kind::Resistor, p("R2"), &node("p"), "0", "R2");
                b.add(Kind::Follower, 1.0, &node("p"), &output, "U");
            }
            "sallen-key-lowpass" => {
                b.add(Kind::Resistor, p("R1"), &input, &node("a"), "R1");
                b.add(Kind::Resistor, p("R2"), &node("a"), &node("p"), "R2");
                b.add(Kind::Capacitor, p("C1"), &node("a"), &output, "C1");
                b.add(Kind::Capacitor, p("C2"), &node("p"), "0", "C2");
                b.add(Kind::Follower, 1.0, &node("p"), &output, "U");
            }
            _ => {
                // Twin-T: arms in → a → t (R, R) and in → b → t (C, C); a → g (2C), b → g (R/2).
                let (ra, rb, c) = (p("Ra"), p("Rb"), p("C"));
                b.add(Kind::Resistor, ra, &input, &node("a1"), "Ra");
                b.add(Kind::Resistor, rb, &node("a1"), &node("a"), "Rb");
                b.add(Kind::Resistor, ra, &node("a"), &node("a2"), "Ra");
                b.add(Kind::Resistor, rb, &node("a2"), &node("t"), "Rb");
                b.add(Kind::Capacitor, c, &input, &node("b"), "C");
                b.add(Kind::Capacitor, c, &node("b"), &node("t"), "C");
                b.add(Kind::Capacitor, c, &node("a"), &node("g"), "2C");
                b.add(Kind::Capacitor, c, &node("a"), &node("g"), "2C");
                b.add(Kind::Resistor, ra, &node("b"), &node("h1"), "R/2");
                b.add(Kind::Resistor, rb, &node("h1"), &node("g"), "R/2");
                b.add(Kind::Resistor, ra, &node("b"), &node("h2"), "R/2");
                b.add(Kind::Resistor, rb, &node("h2"), &node("g"), "R/2");
                b.add(Kind::Follower, 1.0, &node("t"), &output, "U");
                b.add(Kind::Resistor, p("Rk1"), &output, &node("k"), "Rk1");
                b.add(Kind::Resistor, p("Rk2"), &node("k"), "0", "Rk2");
                b.add(Kind::Follower, 1.0, &node("k"), &node("g"), "U");
            }
        }
        list.push((s.topology, input, output));
    }
    Circuit {
        parts: b.parts,
        stages: list,
    }
}

/// Engineering notation for SPICE and the BOM: 4.7k, 100n, 2.2u, 1Meg.
pub fn spice_value(v: f64) -> String {
    let (scale, suffix) = match v.abs() {
        x if x >= 1e6 => (1e6, "Meg"),
        x if x >= 1e3 => (1e3, "k"),
        x if x >= 1.0 => (1.0, ""),
        x if x >= 1e-3 => (1e-3, "m"),
        x if x >= 1e-6 => (1e-6, "u"),
        x if x >= 1e-9 => (1e-9, "n"),
        _ => (1e-12, "p"),
    };
    let t = format!("{:.6}", v / scale);
    let t = t.trim_end_matches('0').trim_end_matches('.');
    format!("{t}{suffix}")
}

/// The SPICE netlist: `VIN` drives `in`, the chain's output is `out`; op-amps are ideal
/// voltage-controlled voltage sources (gain 1e6); ends with `.end`, no analysis.
pub fn netlist(c: &Circuit, title: &str) -> String {
    let mut s = format!(
        "* {title}\n* leadline: the realised analog chain; ideal op-amps (gain 1e6)\nVIN in 0 DC 0 AC 1\n"
    );
    for p in &c.parts {
        let (a, b) = (&p.nodes.0, &p.nodes.1);
        match p.kind {
            Kind::Resistor => {
                s += &format!("{} {a} {b} {}\n", p.designator, spice_value(p.value));
                if p.role == "Rg" {
                    // The gain resistor sits across the in-amp's gain pins; in this model the
                    // gain is set in the amplifier, so tie the pins to ground through 1 TΩ.
                    s += &format!(
                        "R{}_A {a} 0 1T\nR{}_B {b} 0 1T\n",
                        p.designator, p.designator
                    );
                }
            }
            Kind::Capacitor => s += &format!("{} {a} {b} {}\n", p.designator, spice_value(p.value)),
            // A follower: out = 1e6 · (in+ − out).
            Kind::Follower => s += &format!("E{} {b} 0 {a} {b} 1e6\n", p.designator),
            Kind::Inamp => s += &format!("E{} {b} 0 {a} 0 {}\n", p.designator, p.value),
        }
    }
    s += ".end\n";
    s
}

/// The BOM: `designator,kind,value,unit,series,tolerance_pct,quantity`, one row per part.
pub fn bom(c: &Circuit) -> String {
    let mut s = String::from("designator,kind,value,unit,series,tolerance_pct,quantity\n");
    for p in &c.parts {
        let (kind, unit) = match p.kind {
            Kind::Resistor => ("resistor", "ohm"),
            Kind::Capacitor => ("capacitor", "F"),
            Kind::Follower => ("op-amp (unity follower)", ""),
            Kind::Inamp => ("in-amp", "V/V"),
        };
        let value = match p.kind {
            Kind::Follower => String::new(),
            _ => format!("{}", p.value),
        };
        s += &format!(
            "{},{kind},{value},{unit},{},{},1\n",
            p.designator,
            p.series.map_or(String::new(), |x| x.name().to_string()),
            p.tolerance_pct
        );
    }
    s
}

/// The exact response of the circuit at `f` Hz (ideal op-amps), by nodal analysis stage by
/// stage: each stage's output is driven by an amplifier, so stages multiply.
pub fn response(c: &Circuit, f: f64) -> C {
    let mut h: C = (1.0, 0.0);
    for (i, (topology, _, _)) in c.stages.iter().enumerate() {
        let parts: Vec<&Part> = c.parts.iter().filter(|p| p.stage == i).collect();
        h = cmul(h, stage_response(topology, &parts, f));
    }
    h
}

fn admittance(p: &Part, w: f64) -> C {
    match p.kind {
        Kind::Resistor => (1.0 / p.value, 0.0),
        Kind::Capacitor => (0.0, w * p.value),
        _ => (0.0, 0.0),
    }
}

/// Solves a small complex linear system (Gaussian elimination with partial pivoting).
fn solve(mut a: Vec<Vec<C>>, mut b: Vec<C>) -> Option<Vec<C>> {
    let n = b.len();
    let abs = |z: C| (z.0 * z.0 + z.1 * z.1).sqrt();
    for col in 0..n {
        let piv = (col..n).max_by(|&i, &j| abs(a[i][col]).total_cmp(&abs(a[j][col])))?;
        if abs(a[piv][col]) < 1e-300 {
            return None;
        }
        a.swap(col, piv);
        b.swap(col, piv);
        for r in col + 1..n {
            let m = cdiv(a[r][col], a[col][col]);
            let pivot_row = a[col].clone();
            for (x, p) in a[r].iter_mut().zip(&pivot_row).skip(col) {
                let t = cmul(m, *p);
                *x = (x.0 - t.0, x.1 - t.1);
            }
            let t = cmul(m, b[col]);
            b[r] = (b[r].0 - t.0, b[r].1 - t.1);
        }
    }
    let mut x = vec![(0.0, 0.0); n];
    for r in (0..n).rev() {
        let mut acc = b[r];
        for k in r + 1..n {
            let t = cmul(a[r][k], x[k]);
            acc = (acc.0 - t.0, acc.1 - t.1);
        }
        x[r] = cdiv(acc, a[r][r]);
    }
    Some(x)
}

/// One stage's response: nodal analysis of its passive parts with the input at 1 V, the
/// followers as ideal (their + input node unloaded, output = input), the in-amp as its gain.
fn stage_response(topology: &str, parts: &[&Part], f: f64) -> C {
    if topology == "inamp-gain" {
        return (
            parts
                .iter()
                .find(|p| p.kind == Kind::Inamp)
                .map_or(1.0, |p| p.value),
            0.0,
        );
    }
    let w = std::f64::consts::TAU * f;
    let followers: Vec<&&Part> = parts.iter().filter(|p| p.kind == Kind::Follower).collect();
    let Some(main) = followers.first() else {
        return (1.0, 0.0);
    };
    let (stage_in, stage_out) = (
        parts
            .iter()
            .filter(|p| p.kind != Kind::Follower)
            .flat_map(|p| [p.nodes.0.clone(), p.nodes.1.clone()])
            .find(|n| n == "in" || n.starts_with('s'))
            .unwrap_or_else(|| "in".into()),
        main.nodes.1.clone(),
    );
    // Unknown nodes: every node of the stage but ground, the input and the driven ones. The
    // output (driven by the main follower) equals its + input node; the twin-T's centre node g
    // is driven by the second follower from the divider node k.
    let mut nodes: Vec<String> = Vec::new();
    for p in parts
        .iter()
        .filter(|p| matches!(p.kind, Kind::Resistor | Kind::Capacitor))
    {
        for n in [&p.nodes.0, &p.nodes.1] {
            if n != "0" && *n != stage_in && *n != stage_out && !nodes.contains(n) {
                nodes.push(n.clone());
            }
        }
    }
    // Driven nodes: output := V(main +), g := V(k) for the twin-T's bootstrap follower.
    let drive: Vec<(String, String)> = followers
        .iter()
        .map(|p| (p.nodes.1.clone(), p.nodes.0.clone()))
        .collect();
    let driven = |n: &str| drive.iter().find(|d| d.0 == n).map(|d| d.1.clone());
    let unknowns: Vec<String> = nodes
        .iter()
        .filter(|n| driven(n).is_none())
        .cloned()
        .collect();
    let idx = |n: &str| unknowns.iter().position(|u| u == n);
    let size = unknowns.len();
    let mut a = vec![vec![(0.0, 0.0); size]; size];
    let mut rhs = vec![(0.0, 0.0); size];
    // A node's voltage as a combination of unknowns (through the drives): Some(index) or the
    // input (1 V) or ground.
    let resolve = |n: &str| -> Option<Result<usize, f64>> {
        let mut cur = n.to_string();
        for _ in 0..4 {
            if cur == "0" {
                return Some(Err(0.0));
            }
            if cur == stage_in {
                return Some(Err(1.0));
            }
            if let Some(i) = idx(&cur) {
                return Some(Ok(i));
            }
            cur = driven(&cur)?;
        }
        None
    };
    for p in parts
        .iter()
        .filter(|p| matches!(p.kind, Kind::Resistor | Kind::Capacitor))
    {
        let y = admittance(p, w);
        let (na, nb) = (resolve(&p.nodes.0), resolve(&p.nodes.1));
        // KCL rows only for the unknown (undriven, unloaded by an ideal source) nodes.
        for (this, other) in [(&p.nodes.0, nb), (&p.nodes.1, na)] {
            let Some(r) = idx(this) else { continue };
            a[r][r] = (a[r][r].0 + y.0, a[r][r].1 + y.1);
            match other {
                Some(Ok(c)) => a[r][c] = (a[r][c].0 - y.0, a[r][c].1 - y.1),
                Some(Err(v)) => rhs[r] = (rhs[r].0 + y.0 * v, rhs[r].1 + y.1 * v),
                None => {}
            }
        }
    }
    let Some(x) = solve(a, rhs) else {
        return (0.0, 0.0);
    };
    match resolve(&stage_out) {
        Some(Ok(i)) => x[i],
        Some(Err(v)) => (v, 0.0),
        None => (0.0, 0.0),
    }
}

/// The op-amp a stage needs (None for the in-amp stage).
pub fn opamp_need(s: &Stage, bias_a: f64) -> OpampNeed {
    let p = |k: &str| s.parts.get(k).copied().unwrap_or(0.0);
    let f0 = s.design_hz.unwrap_or(0.0);
    let q = s.q.unwrap_or(0.707).max(0.5);
    let (gbw, r_dc) = match s.topology {
        "sallen-key-highpass" => (100.0 * q * f0, p("R2")),
        "sallen-key-lowpass" => (100.0 * q * f0, p("R1") + p("R2")),
        "rc-highpass" => (100.0 * f0, p("R")),
        "rc-lowpass" => (100.0 * f0, p("R")),
        // The twin-T's DC path to its output runs through both R arms.
        "twin-t" => (100.0 * q * f0, 2.0 * p("R")),
        _ => (0.0, 0.0),
    };
    OpampNeed {
        gbw_hz: gbw,
        offset_mv: bias_a * r_dc * 1e3,
        bias_current_a: bias_a,
    }
}

fn db(z: C) -> f64 {
    crate::numeric::db20((z.0 * z.0 + z.1 * z.1).sqrt().max(1e-300))
}

/// The twin-T's figures over the tolerance draws: depth at the mains frequency `mains_hz`, where
/// the centre lands, and the share of builds whose centre misses the mains by more than half
/// the notch's bandwidth (f0/Q). Each part is drawn on its own (a real build's parts differ).
pub fn notch_tolerance(stage: &mut Stage, t: &super::tolerance::Tolerances, mains_hz: f64) {
    let one = std::slice::from_ref(&*stage);
    let c = build(
        one,
        Series::E24,
        Tol {
            resistor_pct: t.resistor * 100.0,
            capacitor_pct: t.capacitor * 100.0,
        },
    );
    let q = stage.q.unwrap_or(1.0).max(0.25);
    let half_bw = 0.5 * mains_hz / q;
    let mut rng = crate::rng::Rng::new(t.seed);
    let (mut depth, mut centre) = (Vec::new(), Vec::new());
    let mut misses = 0usize;
    let mut no_notch = 0usize;
    let mut in_band = 0usize;
    let draws = t.draws.max(1);
    for _ in 0..draws {
        let mut d = c.clone();
        for p in &mut d.parts {
            let tol = match p.kind {
                Kind::Resistor => t.resistor,
                Kind::Capacitor => t.capacitor,
                _ => 0.0,
            };
            p.value = super::tolerance::draw(&mut rng, p.value, tol);
        }
        depth.push(db(response(&d, mains_hz)));
        // The centre: the deepest point within ±8 % (a grid of 0.25 % steps, then a
        // golden-section search between the grid points around the deepest one).
        let mag = |f: f64| db(response(&d, f));
        let grid: Vec<f64> = (-32..=32)
            .map(|k| mains_hz * (1.0 + 0.0025 * k as f64))
            .collect();
        let best = grid
            .iter()
            .copied()
            .min_by(|a, b| mag(*a).total_cmp(&mag(*b)))
            .unwrap_or(mains_hz);
        // No dip 3 dB below the edges of the search: this build has no notch near the mains.
        let edge = mag(grid[0]).min(mag(grid[grid.len() - 1]));
        if mag(best) > edge - 3.0 {
            misses += 1;
            no_notch += 1;
            continue;
        }
        let fc = crate::numeric::golden_max(best * 0.9975, best * 1.0025, |f| -mag(f));

        if (fc - mains_hz).abs() > half_bw {
            misses += 1;
        }
        if (fc - mains_hz).abs() <= 0.01 * mains_hz {
            in_band += 1;
        }
        centre.push(fc);
    }
    let pct = |v: &mut Vec<f64>| Percentiles {
        p5: crate::numeric::percentile(v, 5.0),
        p50: crate::numeric::percentile(v, 50.0),
        p95: crate::numeric::percentile(v, 95.0),
    };
    let share = misses as f64 / draws as f64;
    stage.notch_depth_db = Some(pct(&mut depth));
    stage.notch_centre_hz = Some(pct(&mut centre));
    stage.miss_share = Some(share);
    // The mains band: ±1 % of nominal (EN 50160, 99.5 % of a year; docs/REFERENCES.md §3).
    stage.mains_band_hz = Some((0.99 * mains_hz, 1.01 * mains_hz));
    stage.centre_in_band_share = Some(in_band as f64 / draws as f64);
    let mut advice = Vec::new();
    if no_notch > 0 {
        advice.push(format!(
            "{:.0} % of builds have no notch within ±8 % of the mains at all",
            100.0 * no_notch as f64 / draws as f64
        ));
    }
    if share > 0.2 {
        advice.push(format!(
            "{:.0} % of builds miss the mains by more than half the notch's {:.2} Hz bandwidth: lower the Q, use tighter parts (0.1 % resistors, 1 % capacitors), or put a trimmer in one arm and tune it on the bench",
            100.0 * share,
            mains_hz / q
        ));
    }
    if q > 5.0 {
        advice.push(format!(
            "Q {q:.1} needs matched or trimmed parts: k = {:.4} is set by Rk1/Rk2, and a 1 % error in k moves Q by about {:.0} %",
            stage.parts.get("k").copied().unwrap_or(0.0),
            100.0 * 4.0 * q * 0.01
        ));
    }
    stage.advice = (!advice.is_empty()).then(|| advice.join("; "));
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analog::parts::{PartsOptions, realise};
    use crate::dsp::ChainSettings;

    #[test]
    fn each_stage_of_the_circuit_equals_its_transfer_function() {
        // The nodal analysis of the built circuit against the stages' exact H(s) (docs/REFERENCES.md
        // §7: Sallen–Key after TI's "Op Amps for Everyone"; twin-T H(s) from sympy).
        let stages = realise(&ChainSettings::default(), &PartsOptions::default()).unwrap();
        for (i, s) in stages.iter().enumerate() {
            let c = build(
                std::slice::from_ref(s),
                Series::E24,
                Tol {
                    resistor_pct: 1.0,
                    capacitor_pct: 5.0,
                },
            );
            for f in [0.1, 1.0, 10.0, 45.0, 49.0, 51.0, 80.0] {
                let want = s.db_at(f);
                let got = db(response(&c, f));
                assert!(
                    (got - want).abs() < 0.01 || (want < -60.0 && got < -60.0),
                    "stage {i} {} at {f} Hz: {got} vs {want}",
                    s.topology
                );
            }
        }
    }
}

#[cfg(test)]
mod notch_tests {
    use super::*;
    use crate::analog::parts::{PartsOptions, realise};
    use crate::analog::tolerance::Tolerances;
    use crate::dsp::{ChainSettings, Notch};

    fn notch_only(q: f64, r_tol: f64, c_tol: f64) -> Stage {
        let chain = ChainSettings {
            notch: Notch {
                q,
                ..Notch::default()
            },
            ..ChainSettings::band(None, None)
        };
        let opts = PartsOptions {
            tolerances: Tolerances {
                resistor: r_tol,
                capacitor: c_tol,
                draws: 400,
                seed: 3,
            },
            ..PartsOptions::default()
        };
        realise(&chain, &opts).unwrap().remove(0)
    }

    #[test]
    fn notch_depth_under_tolerance() {
        // Zero tolerance: every draw is the nominal build, so the percentiles collapse.
        let s = notch_only(30.0, 0.0, 0.0);
        let d = s.notch_depth_db.unwrap();
        assert!((d.p95 - d.p5).abs() < 1e-9, "{d:?}");
        // More tolerance spreads the depth (while the notch is still deep enough for its
        // depth in dB to move freely; far beyond, every build is shallow).
        let span = |r, c| {
            let d = notch_only(10.0, r, c).notch_depth_db.unwrap();
            d.p95 - d.p5
        };
        let (s0, s1, s2) = (span(0.0, 0.0), span(0.00002, 0.0001), span(0.0002, 0.001));
        assert!(s0 < s1 && s1 < s2, "{s0} {s1} {s2}");
        // A Q = 2 notch with 1 % resistors (and 5 % capacitors) misses the mains less often
        // than a Q = 30 one with the same parts.
        let q2 = notch_only(2.0, 0.01, 0.05).miss_share.unwrap();
        let q30 = notch_only(30.0, 0.01, 0.05).miss_share.unwrap();
        assert!(q2 < q30, "Q 2: {q2}, Q 30: {q30}");
    }

    #[test]
    fn notch_centre_percentiles_straddle_the_built_centre() {
        // Parts drawn symmetrically about their values (±1 % R, ±5 % C) scatter the centre
        // both ways: its 5th and 95th percentiles must lie either side of the built centre, and
        // the median near it (a 0–1 fraction passed as a percentile once put all three below).
        let s = notch_only(10.0, 0.01, 0.05);
        let c = s.notch_centre_hz.unwrap();
        let built = s.realised_hz.unwrap();
        assert!(c.p5 < built && built < c.p95, "{c:?} around {built}");
        assert!((c.p50 - built).abs() < 0.01 * built, "{c:?} around {built}");
        // f0 = 1/(2πRC) moves by about ±5 % with these parts: the 90 % interval is wider than
        // 1 Hz at 50 Hz and narrower than 10 Hz.
        assert!(c.p95 - c.p5 > 1.0 && c.p95 - c.p5 < 10.0, "{c:?}");
    }
}
