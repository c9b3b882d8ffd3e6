//! Measuring a built front end: the transfer function against scipy.signal (csd, welch,
//! coherence, sosfreqz), a stepped sine, noise of known RMS, CMRR with a known leak, and the
//! bad inputs that must give a reason instead of a number.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use leadline::dsp::chain::Chain;
use leadline::dsp::{ChainSettings, HighPass};
use leadline::measure::{MeasureError, cmrr, noise, sine, transfer};
use leadline::rng::Rng;

fn fixture() -> serde_json::Value {
    let p = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/measure.json");
    serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

/// The fixture's noise: the LCG of tests/reference/make_measure.py, bit for bit.
fn lcg_noise(n: usize) -> Vec<f64> {
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    (0..n)
        .map(|_| {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            ((state >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
        })
        .collect()
}

/// The fixture's front end: high-pass 1 Hz order 2, low-pass 40 Hz order 4, gain 100.
fn front_end() -> ChainSettings {
    ChainSettings {
        gain: 100.0,
        ..ChainSettings::band(Some((1.0, 2)), Some((40.0, 4)))
    }
}

fn through(chain: ChainSettings, x: &[f64], fs: f64) -> Vec<f64> {
    let mut c = Chain::new(chain, fs, 1).unwrap();
    let mut y = x.to_vec();
    c.process_channel(0, &mut y);
    y
}

#[test]
fn white_noise_through_a_known_front_end_matches_scipy_and_the_truth() {
    let fx = fixture();
    let fs = fx["fs"].as_f64().unwrap();
    let n = (fs * fx["seconds"].as_f64().unwrap()) as usize;
    let x: Vec<f64> = lcg_noise(n).iter().map(|v| 1000.0 * v).collect();
    let y = through(front_end(), &x, fs);
    let t = transfer::estimate(&x, &y, fs, fx["nperseg"].as_u64().unwrap() as usize).unwrap();
    let f = fx["freq_hz"].as_array().unwrap();
    let mut compared = 0;
    for (k, fr) in f.iter().enumerate() {
        let fr = fr.as_f64().unwrap();
        // Stored every 16th bin from bin 1: our points start at bin 1 too.
        let p = t.points[16 * k];
        assert!((p.freq_hz - fr).abs() < 1e-9);
        // The same estimator as scipy.signal.csd / welch / coherence.
        let (m, c) = (
            fx["h1_mag_db"][k].as_f64().unwrap(),
            fx["coherence"][k].as_f64().unwrap(),
        );
        // (Deep in the stop band both are rounding noise: compared above −100 dB.)
        if m > -100.0 {
            assert!(
                (p.mag_db - m).abs() < 1e-6,
                "{fr} Hz: {} vs scipy {m}",
                p.mag_db
            );
            assert!(
                (p.coherence - c).abs() < 1e-6,
                "{fr} Hz: coherence {} vs {c}",
                p.coherence
            );
        }
        // Against the truth (scipy.signal.sosfreqz) within 0.2 dB where coherence > 0.95.
        if c > 0.95 {
            let truth = fx["truth_mag_db"][k].as_f64().unwrap();
            assert!(
                (p.mag_db - truth).abs() < 0.2,
                "{fr} Hz: {} vs truth {truth}",
                p.mag_db
            );
            compared += 1;
        }
    }
    assert!(compared > 100, "{compared}");
    // The corners: 1 Hz and 40 Hz (the designs are −3 dB exactly there), within 1 %.
    println!(
        "corners {:?}, pass band {:.3} dB",
        t.corners_hz, t.passband_gain_db
    );
    assert_eq!(t.corners_hz.len(), 2, "{:?}", t.corners_hz);
    assert!(
        (t.corners_hz[0] / 1.0 - 1.0).abs() < 0.01,
        "{:?}",
        t.corners_hz
    );
    assert!(
        (t.corners_hz[1] / 40.0 - 1.0).abs() < 0.01,
        "{:?}",
        t.corners_hz
    );
    assert!((t.passband_gain_db - 40.0).abs() < 0.1);
}

#[test]
fn ten_sine_steps_give_each_gain_within_a_tenth_of_a_db() {
    // A generator stepped by hand through ten frequencies, 3 s each, 1000 µV peak, into the
    // front end; each gain against the design's |H| (dsp::response, checked against
    // scipy.signal.sosfreqz in tests/it/dsp_reference.rs).
    let fs = 1000.0;
    let chain = ChainSettings {
        highpass: HighPass {
            enabled: false,
            ..HighPass::default()
        },
        ..front_end()
    };
    let freqs = [3.0, 5.0, 8.0, 12.0, 18.0, 25.0, 33.0, 40.0, 55.0, 80.0];
    let mut x = Vec::new();
    let mut phase: f64 = 0.0;
    for f in freqs {
        for _ in 0..(3.0 * fs) as usize {
            x.push(1000.0 * phase.sin());
            phase += std::f64::consts::TAU * f / fs;
        }
    }
    let mut y = through(chain, &x, fs);
    let mut rng = Rng::new(5);
    y.iter_mut().for_each(|v| *v += 5.0 * rng.normal());
    let steps = sine::steps(&y, fs, 2.0).unwrap();
    assert_eq!(steps.len(), 10, "{steps:?}");
    let sections = chain.design(fs).unwrap();
    for (s, f) in steps.iter().zip(freqs) {
        assert!((s.freq_hz / f - 1.0).abs() < 0.01, "{s:?}");
        let g = 20.0 * (s.amplitude_uv / 1000.0).log10();
        let want = 20.0 * leadline::dsp::response::magnitude(&sections, f, fs).log10();
        assert!(
            (g - want).abs() < 0.1,
            "{f} Hz: {g:.3} dB vs design {want:.3} dB"
        );
    }
}

#[test]
fn noise_of_known_rms_is_measured_within_3_percent() {
    // 5 µV RMS of white noise at 1 kHz: its density is 5/√500 µV/√Hz, so 0.05–150 Hz holds
    // 5 × √(149.95/500) = 2.738 µV RMS (by hand).
    let fs = 1000.0;
    let mut rng = Rng::new(21);
    let x: Vec<f64> = (0..(60.0 * fs) as usize)
        .map(|_| 5.0 * rng.normal())
        .collect();
    let n = noise::measure(&x, fs, (0.05, 150.0), noise::LIMIT_P2P_UV).unwrap();
    let want = 5.0 * ((150.0 - 0.05) / 500.0f64).sqrt();
    assert!(
        (n.rms_uv / want - 1.0).abs() < 0.03,
        "{} vs {want}",
        n.rms_uv
    );
    // White: the density is flat at 5 / √500 µV/√Hz and no 1/f corner shows.
    assert!((n.floor_uv_per_rthz / (5.0 / 500f64.sqrt()) - 1.0).abs() < 0.1);
    // Over 10 s of white noise the largest excursion spans well over six standard deviations.
    assert!(
        n.p2p_uv > 6.0 * n.rms_uv,
        "p2p {} rms {}",
        n.p2p_uv,
        n.rms_uv
    );
}

#[test]
fn cmrr_of_a_known_leak_within_a_fifth_of_a_db() {
    // 1 V RMS of common mode at 50 Hz leaks 10 µV RMS into the input-referred channel, over
    // 2 µV RMS of noise: CMRR = 20·log10(1e6 / 10) = 100 dB (docs/REFERENCES.md §9 #23 for the form).
    let fs = 1000.0;
    let mut rng = Rng::new(8);
    let x: Vec<f64> = (0..(20.0 * fs) as usize)
        .map(|i| {
            10.0 * std::f64::consts::SQRT_2
                * (std::f64::consts::TAU * 50.0 * i as f64 / fs + 0.3).sin()
                + 2.0 * rng.normal()
        })
        .collect();
    let c = cmrr::measure(&x, fs, 1e6, 50.0).unwrap();
    assert!((c.cmrr_db - 100.0).abs() < 0.2, "{c:?}");
    assert!(c.uncertainty_db > 0.0 && c.uncertainty_db < 0.2, "{c:?}");
}

#[test]
fn bad_input_gives_a_reason_not_a_number() {
    let fs = 1000.0;
    let x: Vec<f64> = lcg_noise(30_000).iter().map(|v| 100.0 * v).collect();
    let mut rng = Rng::new(2);
    let unrelated: Vec<f64> = (0..30_000).map(|_| rng.normal()).collect();
    assert_eq!(
        transfer::estimate(&vec![0.0; 30_000], &x, fs, 4096).unwrap_err(),
        MeasureError::FlatStimulus
    );
    assert_eq!(
        transfer::estimate(&x, &unrelated, fs, 4096).unwrap_err(),
        MeasureError::LowCoherence
    );
    assert!(matches!(
        transfer::estimate(&x[..1000], &x[..1000], fs, 4096).unwrap_err(),
        MeasureError::TooShort { .. }
    ));
    assert_eq!(
        sine::steps(&unrelated, fs, 2.0).unwrap_err(),
        MeasureError::NoSteps
    );
    // A clipped stimulus: flat tops at the rails.
    let clipped: Vec<f64> = (0..30_000)
        .map(|i| (3.0 * (std::f64::consts::TAU * 7.0 * i as f64 / fs).sin()).clamp(-1.0, 1.0))
        .collect();
    assert!(matches!(
        transfer::estimate(&clipped, &clipped, fs, 4096).unwrap_err(),
        MeasureError::Clipped(_)
    ));
}

#[test]
fn the_measure_commands_write_what_they_promise() {
    let dir = std::env::temp_dir().join(format!("ll-measure-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let fs = 1000.0;
    // A two-channel recording: white noise into the front end (stimulus, output), in µV.
    let x: Vec<f64> = lcg_noise(60_000).iter().map(|v| 1000.0 * v).collect();
    let y = through(front_end(), &x, fs);
    let mut csv = String::from("time_s,stim,out\n");
    for (i, (a, b)) in x.iter().zip(&y).enumerate() {
        csv.push_str(&format!("{:.3},{a:.6},{b:.6}\n", i as f64 / fs));
    }
    let input = dir.join("bench.csv");
    std::fs::write(&input, csv).unwrap();
    let run = |args: &[&str]| {
        std::process::Command::new(env!("CARGO_BIN_EXE_leadline"))
            .args(args)
            .output()
            .unwrap()
    };
    let p = |n: &str| dir.join(n).to_str().unwrap().to_string();
    let o = run(&[
        "measure",
        "response",
        "--input",
        &p("bench.csv"),
        "--units",
        "uV",
        "--stimulus",
        "stim",
        "--output",
        "out",
        "--out",
        &p("tf.csv"),
        "--report",
        &p("tf.json"),
        "--png",
        &p("tf.png"),
        "--highpass",
        "1",
        "--lowpass",
        "40",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let tf = std::fs::read_to_string(dir.join("tf.csv")).unwrap();
    assert_eq!(
        tf.lines().next(),
        Some("freq_hz,mag_db,phase_deg,coherence")
    );
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("tf.json")).unwrap()).unwrap();
    assert_eq!(r["corners_hz"].as_array().unwrap().len(), 2);
    assert!((r["passband_gain_db"].as_f64().unwrap() - 40.0).abs() < 0.1);
    assert!(std::fs::metadata(dir.join("tf.png")).unwrap().len() > 10_000);
    // The stimulus channel as output too: flat? No: a flat stimulus is refused in one line.
    let flat = dir.join("flat.csv");
    std::fs::write(
        &flat,
        (0..20_000).fold(String::from("time_s,stim,out\n"), |s, i| {
            s + &format!("{:.3},0,{}\n", i as f64 / fs, (i % 7) as f64)
        }),
    )
    .unwrap();
    let o = run(&[
        "measure",
        "response",
        "--input",
        flat.to_str().unwrap(),
        "--stimulus",
        "0",
        "--output",
        "1",
        "--segment",
        "4096",
        "--out",
        &p("x.csv"),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(e.contains("flat") && e.lines().count() == 1, "{e}");
    // Noise and CMRR reports carry their keys.
    let o = run(&[
        "measure",
        "noise",
        "--input",
        &p("bench.csv"),
        "--units",
        "uV",
        "--channel",
        "stim",
        "--report",
        &p("noise.json"),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let n: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("noise.json")).unwrap()).unwrap();
    for k in ["rms_uv", "p2p_uv", "density_uv_per_rthz", "corner_hz"] {
        assert!(n.get(k).is_some(), "{k}");
    }
    let o = run(&[
        "measure",
        "cmrr",
        "--input",
        &p("bench.csv"),
        "--units",
        "uV",
        "--channel",
        "out",
        "--cm-uv",
        "1000000",
        "--report",
        &p("cmrr.json"),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let c: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("cmrr.json")).unwrap()).unwrap();
    for k in ["cmrr_db", "diff_uv", "uncertainty_db"] {
        assert!(c[k].is_number(), "{k}");
    }
}

#[test]
fn cmrr_over_a_stepped_common_mode_gives_one_figure_a_step() {
    // 1 V RMS of common mode stepped through 20, 50 and 200 Hz, leaking 10, 31.6 and 100 µV RMS:
    // 100, 90 and 80 dB (by hand).
    let fs = 1000.0;
    let mut rng = Rng::new(4);
    let mut x = Vec::new();
    let mut phase: f64 = 0.0;
    for (f, leak) in [(20.0, 10.0), (50.0, 31.622_776_6), (200.0, 100.0)] {
        for _ in 0..(4.0 * fs) as usize {
            x.push(leak * std::f64::consts::SQRT_2 * phase.sin() + 1.0 * rng.normal());
            phase += std::f64::consts::TAU * f / fs;
        }
    }
    let list = cmrr::stepped(&x, fs, 1e6).unwrap();
    let got: Vec<(f64, f64)> = list.iter().map(|c| (c.cm_hz, c.cmrr_db)).collect();
    assert_eq!(list.len(), 3, "{got:?}");
    for (c, want) in list.iter().zip([100.0, 90.0, 80.0]) {
        assert!((c.cmrr_db - want).abs() < 0.2, "{got:?}");
    }
}

#[test]
fn a_multisine_or_a_chirp_stimulus_works_too() {
    // The same front end driven by a multisine (40 tones on bin frequencies, random phases) and
    // by a linear chirp 0.5–200 Hz repeated every segment: where coherence is above 0.95, |H| is within 0.2 dB
    // of the design (dsp::response, itself checked against scipy.signal.sosfreqz).
    let fs = 1000.0;
    let n = 8192;
    let secs = 96.0;
    let len = (secs * fs) as usize;
    let chain = front_end();
    let sections = chain.design(fs).unwrap();
    let mut rng = Rng::new(11);
    let tones: Vec<(f64, f64)> = (1..=40)
        .map(|k| {
            (
                (k * k / 4 + 2 * k) as f64 * fs / n as f64,
                std::f64::consts::TAU * rng.uniform(),
            )
        })
        .collect();
    let multisine: Vec<f64> = (0..len)
        .map(|i| {
            let t = i as f64 / fs;
            tones
                .iter()
                .map(|(f, p)| 100.0 * (std::f64::consts::TAU * f * t + p).sin())
                .sum()
        })
        .collect();
    // One sweep a segment, so every segment holds a whole chirp.
    let period = n as f64 / fs;
    let chirp: Vec<f64> = (0..len)
        .map(|i| {
            let t = (i as f64 / fs) % period;
            let (f0, f1) = (0.5, 200.0);
            let k = (f1 - f0) / period;
            1000.0 * (std::f64::consts::TAU * (f0 * t + 0.5 * k * t * t)).sin()
        })
        .collect();
    for (name, x) in [("multisine", multisine), ("chirp", chirp)] {
        let y = through(chain, &x, fs);
        let t = transfer::estimate(&x, &y, fs, n).unwrap();
        let mut checked = 0;
        // A multisine is measured at its tones (between them a bin sees a neighbour's leakage).
        let at_tone =
            |f: f64| name != "multisine" || tones.iter().any(|(tf, _)| (tf - f).abs() < 1e-9);
        for p in t
            .points
            .iter()
            // (The chirp is judged from 1 Hz: near its 0.5 Hz start its spectrum is uneven.)
            .filter(|p| p.coherence > 0.95 && p.freq_hz > 1.0 && at_tone(p.freq_hz))
        {
            let want = 20.0 * leadline::dsp::response::magnitude(&sections, p.freq_hz, fs).log10();
            if want < -40.0 {
                continue;
            }
            assert!(
                (p.mag_db - want).abs() < 0.2,
                "{name} {} Hz: {} vs {want}",
                p.freq_hz,
                p.mag_db
            );
            checked += 1;
        }
        assert!(checked >= 20, "{name}: {checked} points");
    }
}
