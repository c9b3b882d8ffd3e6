//! Analog realisations: exact s-domain responses against scipy.signal.freqs fixtures
//! (tests/reference/analog.json, made by tests/reference/make_analog.py), Monte Carlo spreads,
//! and a whole chain realised with standard parts.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::collections::BTreeMap;

use leadline::analog::eseries::Series;
use leadline::analog::parts::{PartsOptions, Stage, chain_db, envelope, realise, spread};
use leadline::analog::tolerance::Tolerances;
use leadline::analog::{poly_ratio_db, rc, sallen_key, twin_t};
use leadline::dsp::ChainSettings;

#[test]
fn analog_responses_match_scipy_freqs_to_0_01_db() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/analog.json"
    ))
    .unwrap();
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    for case in fx["cases"].as_array().unwrap() {
        let p = |k: &str| case["parts"][k].as_f64().unwrap();
        let kind = case["topology"].as_str().unwrap();
        let (num, den) = match kind {
            "rc-lowpass" => rc::lowpass_tf(p("R"), p("C")),
            "rc-highpass" => rc::highpass_tf(p("R"), p("C")),
            "sallen-key-lowpass" => sallen_key::lowpass_tf(p("R1"), p("R2"), p("C1"), p("C2")),
            "sallen-key-highpass" => sallen_key::highpass_tf(p("R1"), p("R2"), p("C1"), p("C2")),
            _ => twin_t::tf(p("R"), p("C"), p("k")),
        };
        let freqs = case["freqs_hz"].as_array().unwrap();
        for (f, want) in freqs.iter().zip(case["mag_db"].as_array().unwrap()) {
            let (f, want) = (f.as_f64().unwrap(), want.as_f64().unwrap());
            let got = poly_ratio_db(&num, &den, f);
            assert!(
                (got - want).abs() < 0.01,
                "{kind} at {f} Hz: {got} vs scipy {want}"
            );
        }
    }
}

fn stage(topology: &'static str, parts: &[(&'static str, f64)]) -> Stage {
    let parts: BTreeMap<&'static str, f64> = parts.iter().copied().collect();
    Stage {
        topology,
        parts,
        ..Stage::default()
    }
}

#[test]
fn monte_carlo_zero_tolerance_is_nominal_and_spread_grows() {
    let s = stage(
        "sallen-key-lowpass",
        &[("R1", 27e3), ("R2", 30e3), ("C1", 220e-9), ("C2", 100e-9)],
    );
    let (f0, _) = sallen_key::lowpass_f0_q(27e3, 30e3, 220e-9, 100e-9);
    let zero = spread(
        &s,
        &Tolerances {
            resistor: 0.0,
            capacitor: 0.0,
            draws: 2000,
            seed: 4,
        },
    );
    assert_eq!((zero.p5_hz, zero.p50_hz, zero.p95_hz), (f0, f0, f0));
    let mut widths = Vec::new();
    for (r, c) in [(0.001, 0.01), (0.01, 0.05), (0.05, 0.10), (0.05, 0.20)] {
        let sp = spread(
            &s,
            &Tolerances {
                resistor: r,
                capacitor: c,
                draws: 2000,
                seed: 4,
            },
        );
        assert_eq!(sp.draws, 2000);
        assert!(sp.p5_hz < f0 && f0 < sp.p95_hz);
        widths.push(sp.p95_hz - sp.p5_hz);
    }
    assert!(widths.windows(2).all(|w| w[1] > w[0]), "{widths:?}");
    // Same seed, same spread.
    let t = Tolerances::default();
    assert_eq!(spread(&s, &t), spread(&s, &t));
}

#[test]
fn a_monitoring_chain_realised_with_my_capacitors() {
    let chain = ChainSettings::default(); // HP 0.5 Hz ×2, notch 50 Hz Q 30, LP 40 Hz ×4
    let opts = PartsOptions {
        series: Series::E24,
        capacitors: vec![1e-6, 100e-9, 220e-9, 470e-9],
        // An invented in-amp: G = 1 + 60 kΩ/Rg (a generic constant, not a part's).
        inamp: Some((10.0, 60e3)),
        ..PartsOptions::default()
    };
    let stages = realise(&chain, &opts).unwrap();
    let kinds: Vec<&str> = stages.iter().map(|s| s.topology).collect();
    assert_eq!(
        kinds,
        [
            "inamp-gain",
            "sallen-key-highpass",
            "twin-t",
            "sallen-key-lowpass",
            "sallen-key-lowpass"
        ]
    );
    for s in &stages[1..] {
        // E24 resistors: corners within a few per cent of the design.
        assert!(
            s.error_pct.abs() < 6.0,
            "{} off by {:.2} %",
            s.topology,
            s.error_pct
        );
        for (k, v) in &s.parts {
            if k.starts_with('C') {
                assert!(opts.capacitors.contains(v), "{k} = {v} is not one of mine");
            }
        }
        let sp = s.spread.unwrap();
        assert!(sp.p5_hz < sp.p95_hz);
    }
    // Twin-T for Q 30: k = 1 − 1/120.
    // k is realised by the divider Rk1 over Rk2 from the series: k = Rk2 / (Rk1 + Rk2), within
    // 0.1 % of 1 − 1/120.
    let p = &stages[2].parts;
    assert!((p["k"] - p["Rk2"] / (p["Rk1"] + p["Rk2"])).abs() < 1e-12);
    assert!(
        (p["k"] / (1.0 - 1.0 / 120.0) - 1.0).abs() < 1e-3,
        "k = {}",
        p["k"]
    );
    // The in-amp: G = 1 + 60 kΩ/Rg for G = 10 → 6.667 kΩ, nearest E24 → 6.8 kΩ (by hand).
    assert_eq!(stages[0].parts["Rg"], 6800.0);
    // The realised chain is close to the digital one in the pass band.
    let digital = chain.design(1000.0).unwrap();
    let d10 = 20.0 * leadline::dsp::response::magnitude(&digital, 10.0, 1000.0).log10();
    assert!((chain_db(&stages[1..], 10.0) - d10).abs() < 0.5);
    let env = envelope(
        &stages[1..],
        &[1.0, 10.0, 40.0],
        &Tolerances {
            draws: 2000,
            ..Tolerances::default()
        },
    );
    assert!(env.iter().all(|(lo, hi)| lo <= hi));
}

/// Runs `leadline parts` for the default monitoring chain with all the files.
fn parts_files(dir: &std::path::Path) -> (String, String, String, String) {
    let f = |n: &str| dir.join(n).to_str().unwrap().to_string();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_leadline"))
        .args([
            "parts",
            "--highpass",
            "0.5",
            "--notch",
            "50",
            "--notch-q",
            "5",
            "--lowpass",
            "40",
            "--lowpass-order",
            "3",
            "--fs",
            "500",
            "--inamp-gain",
            "10",
            "--inamp-k",
            "60000",
            "--out",
            &f("parts.json"),
            "--schematic",
            &f("chain.svg"),
            "--netlist",
            &f("chain.cir"),
            "--bom",
            &f("bom.csv"),
            "--response",
            &f("resp.csv"),
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let read = |n: &str| std::fs::read_to_string(dir.join(n)).unwrap();
    (
        read("chain.svg"),
        read("chain.cir"),
        read("bom.csv"),
        read("resp.csv"),
    )
}

#[test]
fn schematic_netlist_and_bom_name_the_same_parts() {
    let dir = std::env::temp_dir().join(format!("ll-parts-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let (svg, cir, bom, _) = parts_files(&dir);
    let mut lines = bom.lines();
    assert_eq!(
        lines.next(),
        Some("designator,kind,value,unit,series,tolerance_pct,quantity")
    );
    let mut n = 0;
    for l in lines {
        let d = l.split(',').next().unwrap();
        n += 1;
        // A designator alone, or joined with others ("R4+R5", "C5∥C6") for grouped parts.
        let in_svg = svg.split(['>', '<']).any(|text| {
            text.split(|c: char| !c.is_ascii_alphanumeric())
                .any(|w| w == d)
        });
        assert!(in_svg, "{d} not in the schematic");
        let in_netlist = cir.lines().any(|x| {
            let first = x.split_whitespace().next().unwrap_or("");
            first == d || first == format!("E{d}")
        });
        assert!(in_netlist, "{d} not in the netlist");
    }
    assert!(n >= 20, "{n} parts");
    assert!(cir.contains("VIN in 0") && cir.trim_end().ends_with(".end"));
    assert!(svg.starts_with("<svg") && svg.contains("supply"));
}

#[test]
fn ngspice_runs_the_netlist_and_agrees_with_the_realised_response() {
    // ngspice, a general-purpose circuit simulator (Debian package ngspice, installed by
    // .ci/run), runs the netlist with an AC analysis appended; its |V(out)/V(in)| must match the
    // realised response within 0.1 dB where it is above −40 dB, and the phase within 1°.
    let dir = std::env::temp_dir().join(format!("ll-spice-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let (_, cir, _, resp) = parts_files(&dir);
    let ours: Vec<(f64, f64, f64)> = resp
        .lines()
        .skip(1)
        .map(|l| {
            let v: Vec<f64> = l.split(',').map(|x| x.parse().unwrap()).collect();
            (v[0], v[1], v[2])
        })
        .collect();
    let deck = cir.replace(
        ".end",
        ".ac dec 40 0.05 225\n.print ac vdb(out) vp(out)\n.end",
    );
    let deck_path = dir.join("run.cir");
    std::fs::write(&deck_path, deck).unwrap();
    let o = match std::process::Command::new("ngspice")
        .args(["-b", deck_path.to_str().unwrap()])
        .output()
    {
        Ok(o) => o,
        // In CI ngspice is always installed first: its absence there is a failure, not a skip.
        Err(e) if std::env::var_os("CI").is_some() => {
            panic!("CI run without ngspice ({e}): .ci/run installs the Debian package ngspice")
        }
        Err(_) => {
            eprintln!(
                "skipping the ngspice check: ngspice is not installed (apt-get install ngspice)"
            );
            return;
        }
    };
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // `.print` rows: index, frequency, vdb(out), vp(out) in radians.
    let text = String::from_utf8_lossy(&o.stdout).into_owned();
    let mut checked = 0;
    for l in text.lines() {
        let v: Vec<f64> = l
            .split_whitespace()
            .filter_map(|x| x.parse().ok())
            .collect();
        if v.len() != 4 || !l.trim_start().starts_with(|c: char| c.is_ascii_digit()) {
            continue;
        }
        let (f, spice_db, spice_deg) = (v[1], v[2], v[3].to_degrees());
        // Our response at the same frequency (log-interpolated between our points).
        let Some(k) = ours.windows(2).position(|w| w[0].0 <= f && f <= w[1].0) else {
            continue;
        };
        let (a, b) = (ours[k], ours[k + 1]);
        let t = (f.ln() - a.0.ln()) / (b.0.ln() - a.0.ln());
        let db = a.1 + t * (b.1 - a.1);
        if db < -40.0 || (b.2 - a.2).abs() > 90.0 {
            continue;
        }
        let deg = a.2 + t * (b.2 - a.2);
        assert!(
            (db - spice_db).abs() <= 0.1,
            "{f} Hz: {db} dB vs ngspice {spice_db}"
        );
        let dp = ((deg - spice_deg + 540.0).rem_euclid(360.0)) - 180.0;
        assert!(dp.abs() <= 1.0, "{f} Hz: {deg}° vs ngspice {spice_deg}°");
        checked += 1;
    }
    assert!(checked > 100, "{checked} points compared");
}

/// The one percentile helper against numpy.percentile (method "linear") on the same draws:
/// tests/reference/percentile.json, made by tests/reference/make_percentile.py (numpy 2.4.6).
#[test]
fn percentile_matches_numpy_on_the_same_draws() {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/percentile.json");
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).expect("fixture")).expect("json");
    let mut compared = 0;
    for case in doc["cases"].as_array().expect("cases") {
        let values: Vec<f64> = serde_json::from_value(case["values"].clone()).expect("values");
        let ps: Vec<f64> = serde_json::from_value(case["percentiles"].clone()).expect("ps");
        let want: Vec<f64> = serde_json::from_value(case["expected"].clone()).expect("expected");
        for (p, w) in ps.iter().zip(&want) {
            let mut v = values.clone();
            let got = leadline::numeric::percentile(&mut v, *p);
            assert!(
                (got - w).abs() <= 1e-12 * w.abs().max(1.0),
                "p{p} of {} values: {got} against numpy's {w}",
                values.len()
            );
            compared += 1;
        }
    }
    assert_eq!(compared, 45);
}
