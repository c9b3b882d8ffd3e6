//! Filter designs, responses and filtered outputs against scipy.signal fixtures
//! (tests/reference/filters.json, made by tests/reference/make_filters.py with scipy.signal 1.17.1),
//! plus the docs/REFERENCES.md check values.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use leadline::dsp::chain::{self, ChainSettings};
use leadline::dsp::design::{self, Section};
use leadline::dsp::response;
use serde_json::Value;

fn fixtures() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/filters.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

fn f64s(v: &Value) -> Vec<f64> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_f64().unwrap())
        .collect()
}

/// The generator's test signal, bit for bit (see make_filters.py: test_signal).
fn test_signal(n: usize, fs: f64) -> Vec<f64> {
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    (0..n)
        .map(|i| {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            let u = ((state >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0;
            let t = i as f64 / fs;
            let pi2 = 2.0 * std::f64::consts::PI;
            let mut v = 1000.0 * (pi2 * 1.3 * t).sin() + 300.0 * (pi2 * 50.0 * t).sin() + 200.0 * u;
            if i >= n / 2 {
                v += 500.0;
            }
            v
        })
        .collect()
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs()).max(1e-300) || (a - b).abs() < 1e-300
}

fn poly_mul(a: &[f64], b: &[f64]) -> Vec<f64> {
    let mut out = vec![0.0; a.len() + b.len() - 1];
    for (i, x) in a.iter().enumerate() {
        for (j, y) in b.iter().enumerate() {
            out[i + j] += x * y;
        }
    }
    out
}

/// Compares our sections with scipy's `sos` rows: each denominator is paired with a scipy
/// section's (relative 1e-9); the numerators as a whole, i.e. the product polynomial, relative
/// 1e-9 of its largest coefficient, because scipy pairs zeros with poles differently in odd
/// orders (a second-order numerator over the real pole) and puts the whole gain in its first
/// section.
fn assert_sections_match(ours: &[Section], sos: &Value, what: &str) {
    let rows: Vec<Vec<f64>> = sos.as_array().unwrap().iter().map(f64s).collect();
    assert_eq!(ours.len(), rows.len(), "{what}: section count");
    let mut used = vec![false; rows.len()];
    let (mut num_ours, mut num_ref) = (vec![1.0], vec![1.0]);
    for s in ours {
        let j = (0..rows.len())
            .find(|&j| {
                !used[j]
                    && (s.a1 - rows[j][4]).abs() <= 1e-9 * rows[j][4].abs().max(1.0)
                    && (s.a2 - rows[j][5]).abs() <= 1e-9 * rows[j][5].abs().max(1.0)
            })
            .unwrap_or_else(|| panic!("{what}: no scipy section with a1 {} a2 {}", s.a1, s.a2));
        used[j] = true;
        num_ours = poly_mul(&num_ours, &[s.b0, s.b1, s.b2]);
        num_ref = poly_mul(&num_ref, &rows[j][..3]);
    }
    let big = num_ref.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    for (k, (a, b)) in num_ours.iter().zip(&num_ref).enumerate() {
        assert!(
            (a - b).abs() <= 1e-9 * big,
            "{what}: numerator coefficient {k}: {a} vs {b}"
        );
    }
}

fn assert_outputs_match(ours: &[f64], stride: usize, want: &Value, what: &str) {
    let want = f64s(want);
    let peak = want.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    for (i, w) in want.iter().enumerate() {
        let o = ours[i * stride];
        assert!(
            (o - w).abs() <= 1e-9 * peak,
            "{what}: sample {} ours {o} scipy {w} (peak {peak})",
            i * stride
        );
    }
}

#[test]
fn butterworth_sections_responses_and_outputs_match_scipy() {
    let fx = fixtures();
    let n = fx["n_signal"].as_u64().unwrap() as usize;
    let stride = fx["stride"].as_u64().unwrap() as usize;
    let mut compared_outputs = 0;
    for case in fx["butter"].as_array().unwrap() {
        let fs = case["fs"].as_f64().unwrap();
        let order = case["order"].as_u64().unwrap() as u32;
        let fc = case["corner_hz"].as_f64().unwrap();
        let btype = case["btype"].as_str().unwrap();
        let what = format!("scipy.signal.butter({order}, {fc}, '{btype}', fs={fs})");
        let ours = match btype {
            "lowpass" => design::butterworth_lowpass(order, fc, fs),
            _ => design::butterworth_highpass(order, fc, fs),
        }
        .unwrap();
        assert_sections_match(&ours, &case["sos"], &what);

        // scipy.signal.sosfreqz: 0.01 dB wherever the response is above −100 dB.
        let freqs = f64s(&case["freqs_hz"]);
        let pts = response::evaluate(&ours, &freqs, fs);
        for (p, want) in pts.iter().zip(f64s(&case["mag_db"])) {
            if want > -100.0 {
                assert!(
                    (p.mag_db - want).abs() < 0.01,
                    "{what} at {} Hz: {} vs {want} dB",
                    p.freq_hz,
                    p.mag_db
                );
            }
        }
        let x = test_signal(n, fs);
        if let Some(want) = case.get("sosfilt") {
            let mut y = x.clone();
            chain::filter_once(&ours, &mut y);
            assert_outputs_match(&y, stride, want, &format!("sosfilt {what}"));
            compared_outputs += 1;
        }
        if let Some(want) = case.get("sosfiltfilt") {
            let y = chain::zero_phase(&ours, &x).unwrap();
            assert_outputs_match(&y, stride, want, &format!("sosfiltfilt {what}"));
            compared_outputs += 1;
        }
    }
    assert!(
        compared_outputs >= 100,
        "{compared_outputs} outputs compared"
    );
}

#[test]
fn exact_bandwidth_notch_matches_scipy_iirnotch() {
    let fx = fixtures();
    let n = fx["n_signal"].as_u64().unwrap() as usize;
    let stride = fx["stride"].as_u64().unwrap() as usize;
    for case in fx["iirnotch"].as_array().unwrap() {
        let (f0, q, fs) = (
            case["f0_hz"].as_f64().unwrap(),
            case["q"].as_f64().unwrap(),
            case["fs"].as_f64().unwrap(),
        );
        let what = format!("scipy.signal.iirnotch({f0}, {q}, fs={fs})");
        let s = design::notch(f0, q, fs).unwrap();
        let (b, a) = (f64s(&case["b"]), f64s(&case["a"]));
        for (mine, theirs) in [s.b0, s.b1, s.b2, 1.0, s.a1, s.a2]
            .iter()
            .zip(b.iter().chain(&a))
        {
            assert!(close(*mine, *theirs, 1e-9), "{what}: {mine} vs {theirs}");
        }
        let pts = response::evaluate(&[s], &f64s(&case["freqs_hz"]), fs);
        for (p, want) in pts.iter().zip(f64s(&case["mag_db"])) {
            if want > -100.0 {
                assert!((p.mag_db - want).abs() < 0.01, "{what} at {} Hz", p.freq_hz);
            }
        }
        // The −3 dB bandwidth is f0/Q: both band edges near −3 dB (checked where both lie well
        // inside Nyquist; the edges are symmetric in tan(ω/2), not in Hz).
        if f0 + f0 / q >= 0.45 * fs {
            continue;
        }
        let edge = response::magnitude(&[s], f0 + f0 / q / 2.0, fs);
        let lower = response::magnitude(&[s], f0 - f0 / q / 2.0, fs);
        assert!(
            (20.0 * (edge * lower).sqrt().log10() + 3.0103).abs() < 0.2,
            "{what}: edges"
        );
        let mut y = test_signal(n, fs);
        chain::filter_once(&[s], &mut y);
        assert_outputs_match(&y, stride, &case["sosfilt"], &format!("sosfilt {what}"));
    }
}

#[test]
fn default_chain_phase_delay_and_outputs_match_scipy() {
    let fx = fixtures();
    let c = &fx["default_chain"];
    let fs = c["fs"].as_f64().unwrap();
    let n = fx["n_signal"].as_u64().unwrap() as usize;
    let stride = fx["stride"].as_u64().unwrap() as usize;
    let sections = ChainSettings::default().design(fs).unwrap();
    let freqs = f64s(&c["freqs_hz"]);
    let pts = response::evaluate(&sections, &freqs, fs);
    let phase = f64s(&c["phase_deg"]);
    let gd = f64s(&c["group_delay_s"]);
    for (i, p) in pts.iter().enumerate() {
        // scipy.signal.sosfreqz + numpy.unwrap (phase), scipy.signal.group_delay (delay).
        assert!(
            (p.phase_deg - phase[i])
                .rem_euclid(360.0)
                .min((phase[i] - p.phase_deg).rem_euclid(360.0))
                < 1e-6,
            "phase at {} Hz",
            p.freq_hz
        );
        if p.mag_db > -40.0 {
            // scipy's group_delay evaluates the polynomials on its own path; they agree to ~5e-6
            // relative at the lowest frequencies, where the 0.5 Hz high-pass's poles nearly cancel.
            assert!(
                (p.group_delay_s - gd[i]).abs() < 1e-4 * gd[i].abs().max(1e-3),
                "delay at {} Hz: {} vs {}",
                p.freq_hz,
                p.group_delay_s,
                gd[i]
            );
        }
    }
    let x = test_signal(n, fs);
    let mut y = x.clone();
    chain::filter_once(&sections, &mut y);
    assert_outputs_match(&y, stride, &c["sosfilt"], "sosfilt default chain");
    let z = chain::zero_phase(&sections, &x).unwrap();
    assert_outputs_match(&z, stride, &c["sosfiltfilt"], "sosfiltfilt default chain");
}

#[test]
fn reference_md_check_values() {
    // docs/REFERENCES.md §9 #4 (RBJ cookbook notch, analog-prototype Q): ours is the exact-bandwidth
    // design instead, so its −3 dB points sit at f0 ± f0/2Q, wider than the cookbook's
    // 49.226 / 50.785 Hz (§9 #4), i.e. about 7 % wider at 50 Hz / 500 Hz / Q 30.
    let n = design::notch(50.0, 30.0, 500.0).unwrap();
    let bw_ours: f64 = 50.0 / 30.0;
    let bw_cookbook: f64 = 50.785 - 49.226;
    assert!(((bw_ours - bw_cookbook) / bw_cookbook - 0.069).abs() < 0.01);
    // §9 #24 (notch detuning, fs 500, 50 Hz, Q 30: −5.4 dB at 50.5 Hz, −12.1 dB at 50.2 Hz) [C]:
    // computed there for the cookbook notch; ours, being wider, attenuates a little more.
    let at = |f: f64| 20.0 * response::magnitude(&[n], f, 500.0).log10();
    assert!(at(50.5) < -5.4 && at(50.5) > -7.0, "{}", at(50.5));
    assert!(at(50.2) < -12.1 && at(50.2) > -14.5, "{}", at(50.2));
    // §9 #6: 4th-order Butterworth = sections Q 0.5411961 and 1.3065630, cascade −3.0103 dB at f0.
    let lp = design::butterworth_lowpass(4, 40.0, 500.0).unwrap();
    assert!((20.0 * response::magnitude(&lp, 40.0, 500.0).log10() + 3.0103).abs() < 1e-4);
}

#[test]
fn conform_matches_scipy_on_the_impulse_test_and_the_067_hz_gain() {
    // tests/reference/conform.json: the same pulse through scipy.signal.sosfilt / sosfiltfilt
    // with scipy.signal.butter / iirnotch designs, judged with the same definitions, and the
    // gain from scipy.signal.sosfreqz (make_conform.py).
    use leadline::conform::{Mode, check};
    use leadline::dsp::{ChainSettings, HighPass, LowPass, Notch};
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/conform.json");
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap();
    for case in doc["cases"].as_array().unwrap() {
        let stage = |k: &str| {
            case.get(k)
                .and_then(|v| v.as_array())
                .map(|a| (a[0].as_f64().unwrap(), a[1].as_f64().unwrap()))
        };
        let settings = ChainSettings {
            highpass: match stage("highpass") {
                Some((f, n)) => HighPass {
                    enabled: true,
                    corner_hz: f,
                    order: n as u32,
                },
                None => HighPass {
                    enabled: false,
                    ..HighPass::default()
                },
            },
            notch: match stage("notch") {
                Some((f, q)) => Notch {
                    enabled: true,
                    mains_hz: f,
                    q,
                    ..Notch::default()
                },
                None => Notch {
                    enabled: false,
                    ..Notch::default()
                },
            },
            lowpass: match stage("lowpass") {
                Some((f, n)) => LowPass {
                    enabled: true,
                    corner_hz: f,
                    order: n as u32,
                },
                None => LowPass {
                    enabled: false,
                    ..LowPass::default()
                },
            },
            gain: 1.0,
            cancel: Default::default(),
        };
        let fs = case["fs"].as_f64().unwrap();
        let zero_phase = case["zero_phase"].as_bool().unwrap();
        let c = check(&settings.design(fs).unwrap(), Mode::Monitoring, zero_phase).unwrap();
        let name = case["name"].as_str().unwrap();
        let close = |ours: f64, key: &str, tol: f64| {
            let want = case[key].as_f64().unwrap();
            assert!(
                (ours - want).abs() <= tol * want.abs().max(1.0),
                "{name}: {key} {ours} vs scipy {want}"
            );
        };
        close(c.impulse_undershoot_uv, "impulse_undershoot_uv", 1e-6);
        close(c.impulse_slope_uv_per_s, "impulse_slope_uv_per_s", 1e-6);
        close(c.gain_db_at_0_67_hz, "gain_db_at_0_67_hz", 1e-6);
    }
}
