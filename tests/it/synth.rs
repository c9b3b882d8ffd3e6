//! The simulator: heart rate, mains level, determinism and ADC clipping of the generated stream.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use leadline::cli::{SimFormat, SimulateArgs};
use leadline::source::{Synth, SynthSettings};

fn clean(fs: f64, hr: f64) -> SynthSettings {
    SynthSettings {
        fs_hz: fs,
        hr_bpm: hr,
        mains_uv: 0.0,
        wander_uv: 0.0,
        drift_uv: 0.0,
        noise_uv: 0.0,
        offset_mv: 0.0,
        ..SynthSettings::default()
    }
}

/// Input-referred µV of channel 1 for `seconds`.
fn generate_uv(s: SynthSettings, seconds: f64) -> Vec<f64> {
    let mut synth = Synth::new(s.clone()).unwrap();
    let scale = synth.scale();
    let mut counts = Vec::new();
    synth.fill((seconds * s.fs_hz) as usize, &mut counts);
    counts
        .chunks_exact(s.channels)
        .map(|f| scale.counts_to_uv(f[0]))
        .collect()
}

/// R peaks of a clean stream: local maxima above half the largest value, 250 ms apart at least.
fn r_peaks(x: &[f64], fs: f64) -> Vec<usize> {
    let top = x.iter().cloned().fold(f64::MIN, f64::max);
    let refractory = (0.25 * fs) as usize;
    let mut peaks: Vec<usize> = Vec::new();
    for i in 1..x.len() - 1 {
        if x[i] > 0.5 * top && x[i] >= x[i - 1] && x[i] > x[i + 1] {
            match peaks.last() {
                Some(&p) if i - p < refractory => {
                    if x[i] > x[p] {
                        *peaks.last_mut().unwrap() = i;
                    }
                }
                _ => peaks.push(i),
            }
        }
    }
    peaks
}

#[test]
fn heart_rate_of_the_stream_matches_the_setting_within_1_bpm() {
    for (fs, hr) in [
        (500.0, 72.0),
        (250.0, 45.0),
        (1000.0, 120.0),
        (125.0, 180.0),
    ] {
        let x = generate_uv(clean(fs, hr), 120.0);
        let p = r_peaks(&x, fs);
        let span_s = (p[p.len() - 1] - p[0]) as f64 / fs;
        let measured = 60.0 * (p.len() - 1) as f64 / span_s;
        assert!(
            (measured - hr).abs() < 1.0,
            "fs {fs}: set {hr} bpm, measured {measured:.2} bpm"
        );
    }
}

#[test]
fn r_amplitude_and_polarity_follow_the_settings() {
    let mut s = clean(500.0, 72.0);
    s.r_mv = 2.0;
    // The first second is the model's start-up from its initial state; skip it.
    let x = generate_uv(s.clone(), 10.0);
    let top = x[500..].iter().cloned().fold(f64::MIN, f64::max);
    // Heart-rate variability and the board's 0.05 Hz AC coupling (which removes the beat's mean)
    // move the peak by a few per cent; the calibration is on a steady beat without either.
    assert!((top - 2000.0).abs() < 0.05 * 2000.0, "R peak {top} µV");
    s.inverted = true;
    let y = generate_uv(s, 10.0);
    let bottom = y[500..].iter().cloned().fold(f64::MAX, f64::min);
    assert!(
        (bottom + 2000.0).abs() < 0.05 * 2000.0,
        "inverted R {bottom} µV"
    );
}

/// Amplitude of the component at `f` by a single-bin DFT over a whole number of cycles, RMS.
fn dft_rms(x: &[f64], f: f64, fs: f64) -> f64 {
    let cycles = (x.len() as f64 * f / fs).floor();
    let n = (cycles * fs / f).round() as usize;
    let (mut re, mut im) = (0.0, 0.0);
    for (i, v) in x[..n].iter().enumerate() {
        let ph = std::f64::consts::TAU * f * i as f64 / fs;
        re += v * ph.cos();
        im -= v * ph.sin();
    }
    2.0 * (re * re + im * im).sqrt() / n as f64 / std::f64::consts::SQRT_2
}

#[test]
fn mains_component_is_within_2_percent_of_its_setting() {
    for (mains_hz, uv, charger) in [
        (50.0, 100.0, false),
        (60.0, 40.0, false),
        (50.0, 30.0, true),
    ] {
        let s = SynthSettings {
            fs_hz: 1000.0,
            mains_hz,
            mains_uv: uv,
            charger,
            ..SynthSettings::default()
        };
        let want = s.effective_mains_uv();
        let x = generate_uv(s, 20.0);
        let got = dft_rms(&x, mains_hz, 1000.0);
        assert!(
            (got - want).abs() < 0.02 * want,
            "{mains_hz} Hz: set {want} µV, measured {got:.2} µV"
        );
    }
}

fn sim_args(seed: u64) -> SimulateArgs {
    // Through the real parser, so the tests use the command's own defaults.
    let seed = seed.to_string();
    let cli = <leadline::cli::Cli as clap::Parser>::parse_from([
        "leadline",
        "simulate",
        "--fs",
        "500",
        "--seconds",
        "5",
        "--channels",
        "3",
        "--seed",
        &seed,
    ]);
    match cli.command {
        Some(leadline::cli::Command::Simulate(a)) => a,
        _ => unreachable!("simulate parses to Simulate"),
    }
}

#[test]
fn same_seed_same_bytes_other_seed_other_bytes() {
    let run = |a: &SimulateArgs| {
        let mut v = Vec::new();
        leadline::cli::simulate::write_stream(a, &mut v).unwrap();
        v
    };
    let a = run(&sim_args(42));
    assert_eq!(a, run(&sim_args(42)));
    assert_ne!(a, run(&sim_args(43)));
    let text = String::from_utf8(a).unwrap();
    assert!(text.starts_with("time_s,ch1,ch2,ch3\n0.000000,"));
    assert_eq!(text.lines().count(), 1 + 2500);
    let mut ascii = sim_args(42);
    ascii.format = SimFormat::Ascii;
    let t = String::from_utf8(run(&ascii)).unwrap();
    assert!(t.contains("# fs=500\n") && t.contains("\nch1,ch2,ch3\n"));
}

#[test]
fn clipping_happens_exactly_at_the_adc_rails() {
    // A floating input: every sample is on one rail or the other, none beyond.
    let s = SynthSettings {
        lead_off: true,
        ..SynthSettings::default()
    };
    let max = s.front_end.scale().unwrap().max_count();
    let mut synth = Synth::new(s).unwrap();
    let mut c = Vec::new();
    synth.fill(5000, &mut c);
    assert!(
        c.iter().all(|&v| v == 0.0 || v == max),
        "all samples at a rail"
    );
    assert!(c.contains(&0.0) && c.contains(&max), "both rails reached");
    assert_eq!(synth.clipped(), 5000);

    // Huge mains on a healthy input: the peaks clip at exactly 0 and 4095, the rest is unclipped.
    let s = SynthSettings {
        mains_uv: 2500.0,
        ..SynthSettings::default()
    };
    let mut synth = Synth::new(s).unwrap();
    let mut c = Vec::new();
    synth.fill(5000, &mut c);
    let top = c.iter().cloned().fold(f64::MIN, f64::max);
    let bottom = c.iter().cloned().fold(f64::MAX, f64::min);
    assert_eq!((bottom, top), (0.0, max));
    let at_rails = c.iter().filter(|&&v| v == 0.0 || v == max).count() as u64;
    assert_eq!(at_rails, synth.clipped());
    assert!(at_rails > 0 && at_rails < 5000);
}

#[test]
fn bad_settings_are_refused_with_a_reason() {
    let e = Synth::new(SynthSettings {
        fs_hz: 100.0,
        ..SynthSettings::default()
    })
    .unwrap_err();
    assert!(e.to_string().contains("125–4000 Hz"), "{e}");
    let e = Synth::new(SynthSettings {
        channels: 9,
        ..SynthSettings::default()
    })
    .unwrap_err();
    assert!(e.to_string().contains("1–8"), "{e}");
    let e = Synth::new(SynthSettings {
        noise_uv: f64::NAN,
        ..SynthSettings::default()
    })
    .unwrap_err();
    assert!(e.to_string().contains("noise_uv"), "{e}");
}
