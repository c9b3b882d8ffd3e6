//! Welch PSD against scipy.signal.welch fixtures (tests/reference/spectrum.json, made by
//! tests/reference/make_spectrum.py), Parseval, and the mains measurement on known sines.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use leadline::analysis::mains;
use leadline::dsp::spectrum::Welch;
use leadline::source::{Synth, SynthSettings};
use serde_json::Value;

/// The generator's test signal, bit for bit (make_spectrum.py: test_signal).
fn test_signal(n: usize, fs: f64) -> Vec<f64> {
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    let pi2 = 2.0 * std::f64::consts::PI;
    (0..n)
        .map(|i| {
            state = state
                .wrapping_mul(6_364_136_223_846_793_005)
                .wrapping_add(1_442_695_040_888_963_407);
            let u = ((state >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0;
            let t = i as f64 / fs;
            300.0 * u + 80.0 * (pi2 * 50.3 * t).sin() + 500.0 * (pi2 * 1.1 * t).sin() + 20.0
        })
        .collect()
}

#[test]
fn welch_matches_scipy_signal_welch_to_1e6() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/spectrum.json"
    ))
    .unwrap();
    let fx: Value = serde_json::from_str(&text).unwrap();
    let fs = fx["fs"].as_f64().unwrap();
    let x = test_signal(fx["n_signal"].as_u64().unwrap() as usize, fs);
    for case in fx["welch"].as_array().unwrap() {
        let n = case["nperseg"].as_u64().unwrap() as usize;
        let want: Vec<f64> = case["psd"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let freqs: Vec<f64> = case["freqs_hz"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let p = Welch::new(n).unwrap().compute(&x, fs).unwrap();
        assert_eq!(p.density.len(), want.len(), "nperseg {n}");
        for (k, (ours, theirs)) in p.density.iter().zip(&want).enumerate() {
            assert!(
                (ours - theirs).abs() <= 1e-6 * theirs.abs(),
                "nperseg {n} bin {k}: {ours} vs scipy {theirs}"
            );
            assert!((p.freqs_hz[k] - freqs[k]).abs() < 1e-9);
        }
    }
}

#[test]
fn parseval_integrated_psd_is_the_variance() {
    // Broadband noise and a 50.3 Hz line: nothing slower than a segment, which the per-segment
    // mean removal would take out.
    let fs = 1000.0;
    let mut rng = leadline::rng::Rng::new(77);
    let x: Vec<f64> = (0..40_000)
        .map(|i| 30.0 * rng.normal() + 80.0 * (std::f64::consts::TAU * 50.3 * i as f64 / fs).sin())
        .collect();
    let mean = x.iter().sum::<f64>() / x.len() as f64;
    let var = x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / x.len() as f64;
    for n in [256, 1024, 4096, 16384] {
        let p = Welch::new(n).unwrap().compute(&x, fs).unwrap();
        let total = p.band_power(0.0, fs, |_| false);
        assert!(
            (total - var).abs() < 0.01 * var,
            "nperseg {n}: ∫PSD {total} vs variance {var}"
        );
    }
}

#[test]
fn mains_frequency_and_harmonic_rms_on_an_ecg() {
    let fs = 500.0;
    let seconds = 10.0;
    let n = (fs * seconds) as usize;
    // A simulator ECG with its own mains off, then mains lines of known RMS added. Muscle noise at
    // 2 µV: under a 10 s Hann DFT the default 8 µV of broadband noise leaves ~0.2 µV in each line's
    // band, which is 2.5 % of the 8 µV third harmonic by itself.
    let mut synth = Synth::new(SynthSettings {
        fs_hz: fs,
        mains_uv: 0.0,
        noise_uv: 2.0,
        ..SynthSettings::default()
    })
    .unwrap();
    let scale = synth.scale();
    let mut counts = Vec::new();
    synth.fill(n, &mut counts);
    let ecg: Vec<f64> = counts.iter().map(|&c| scale.counts_to_uv(c)).collect();
    let rms = [40.0, 12.0, 8.0, 5.0, 3.0];
    for f0 in [50.0, 50.3, 59.8, 60.0] {
        let phases = [0.3, 1.1, 2.0, 0.7, 2.9];
        let x: Vec<f64> = ecg
            .iter()
            .enumerate()
            .map(|(i, e)| {
                let t = i as f64 / fs;
                e + (0..5)
                    .filter(|h| f0 * (h + 1) as f64 <= 0.49 * fs)
                    .map(|h| {
                        rms[h]
                            * std::f64::consts::SQRT_2
                            * (std::f64::consts::TAU * f0 * (h + 1) as f64 * t + phases[h]).sin()
                    })
                    .sum::<f64>()
            })
            .collect();
        let psd = Welch::new(2048).unwrap().compute(&x, fs).unwrap();
        let r = mains::analyse(&x, fs, &psd).unwrap();
        assert_eq!(r.nominal_hz, if f0 < 55.0 { 50.0 } else { 60.0 });
        assert!(
            (r.mains_hz - f0).abs() < 0.05,
            "set {f0} Hz, measured {} Hz",
            r.mains_hz
        );
        for h in &r.harmonics {
            let want = rms[h.order as usize - 1];
            assert!(
                (h.rms_uv - want).abs() < 0.02 * want,
                "{f0} Hz harmonic {}: {} µV vs {want}",
                h.order,
                h.rms_uv
            );
        }
        // 250 Hz is Nyquist: at 60 Hz only harmonics up to the 4th fit below 0.49 fs.
        assert_eq!(r.harmonics.len(), if f0 * 5.0 < 0.49 * fs { 5 } else { 4 });
        assert!(
            r.band_power.ecg_uv2 > r.band_power.mains_uv2,
            "{:?}",
            r.band_power
        );
        let snr = r.snr_db.unwrap();
        assert!(snr > 0.0 && snr < 40.0, "{snr}");
    }
}

#[test]
fn charger_raises_the_measured_mains_by_its_factor() {
    // The simulator's "laptop on its charger" multiplies the coupling by CHARGER_MAINS_FACTOR.
    let measure = |charger: bool| {
        let s = SynthSettings {
            fs_hz: 1000.0,
            mains_hz: 60.0,
            mains_uv: 20.0,
            charger,
            ..SynthSettings::default()
        };
        let mut synth = Synth::new(s).unwrap();
        let scale = synth.scale();
        let mut c = Vec::new();
        synth.fill(10_000, &mut c);
        let x: Vec<f64> = c.iter().map(|&v| scale.counts_to_uv(v)).collect();
        let psd = Welch::new(4096).unwrap().compute(&x, 1000.0).unwrap();
        mains::analyse(&x, 1000.0, &psd).unwrap()
    };
    let (off, on) = (measure(false), measure(true));
    let ratio = on.harmonics[0].rms_uv / off.harmonics[0].rms_uv;
    assert!(
        (ratio - leadline::sim::synth::CHARGER_MAINS_FACTOR).abs() < 0.2,
        "{ratio}"
    );
    assert!((off.harmonics[0].rms_uv - 20.0).abs() < 0.4);
    assert!(on.snr_db.unwrap() < off.snr_db.unwrap() - 15.0);
}
