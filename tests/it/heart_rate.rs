//! The heart-rate readout against the monitor standards' tests: the irregular rhythms, a tall T
//! wave, rate steps, QRS sizes and widths, a flat line and an artefact burst; and the readout in
//! rate.csv is the monitor's, evaluation for evaluation.
//!
//! Expected readings and tolerance: ANSI/AAMI EC13 (now IEC 60601-2-27) figure 3 cases read 80,
//! 60, 120 and 90 bpm after 20 s; the meter is within ±10 % or ±5 bpm, whichever is greater
//! (docs/REFERENCES.md §3; both recalled from memory, not read in the standard). Every waveform is
//! made by our simulator: no recording from elsewhere.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use leadline::analysis::beats::Beat;
use leadline::analysis::rate::RateState;
use leadline::analysis::readout::{RateSample, Readout};
use leadline::rng::Rng;
use leadline::sim::rhythm::{BeatShape, Rhythm, ScheduledHeart};
use leadline::source::{Synth, SynthSettings};

/// ±10 % or ±5 bpm, whichever is greater (recalled from memory; see the module doc).
fn within_tolerance(bpm: f64, expected: f64) -> bool {
    (bpm - expected).abs() <= (0.1 * expected).max(5.0)
}

/// Runs the readout over µV samples in 10 ms blocks, as the monitor feeds it.
fn read(x: &[f64], fs: f64) -> (Vec<Beat>, Vec<RateSample>) {
    let mut r = Readout::new(fs).unwrap();
    let (mut b, mut e) = (Vec::new(), Vec::new());
    for c in x.chunks((fs / 100.0) as usize) {
        r.process(c, &[], &mut b, &mut e);
    }
    (b, e)
}

/// The simulator (its whole bench: mains, wander, drift, muscle noise, front end, ADC) in µV.
fn simulate(settings: SynthSettings, seconds: f64) -> Vec<f64> {
    let mut s = Synth::new(settings).unwrap();
    let scale = s.scale();
    let mut counts = Vec::new();
    s.fill((seconds * s.settings().fs_hz) as usize, &mut counts);
    counts.iter().map(|&c| scale.counts_to_uv(c)).collect()
}

fn white(x: &mut [f64], rms_uv: f64, seed: u64) {
    let mut rng = Rng::new(seed);
    for v in x.iter_mut() {
        *v += rms_uv * rng.normal();
    }
}

#[test]
fn the_four_irregular_rhythms_read_as_the_standard_expects() {
    for fs in [360.0, 500.0] {
        for rhythm in Rhythm::ALL.into_iter().skip(1) {
            let expected = rhythm.expected_bpm().unwrap();
            let x = simulate(
                SynthSettings {
                    fs_hz: fs,
                    rhythm,
                    r_mv: 1.0,
                    ..SynthSettings::default()
                },
                60.0,
            );
            let (_, evals) = read(&x, fs);
            let after20: Vec<&RateSample> = evals.iter().filter(|e| e.time_s >= 20.0).collect();
            let shown: Vec<f64> = after20.iter().filter_map(|e| e.state.bpm()).collect();
            println!(
                "{} at {fs} Hz: expected {expected}, read {:.1}–{:.1} bpm",
                rhythm.name(),
                shown.iter().copied().fold(f64::MAX, f64::min),
                shown.iter().copied().fold(f64::MIN, f64::max)
            );
            for e in &after20 {
                match e.state {
                    RateState::Rate(b) => assert!(
                        within_tolerance(b, expected),
                        "{} at {fs} Hz, t = {} s: {b} bpm, expected {expected}",
                        rhythm.name(),
                        e.time_s
                    ),
                    s => panic!("{} at {fs} Hz, t = {} s: {s:?}", rhythm.name(), e.time_s),
                }
            }
        }
    }
}

#[test]
fn a_t_wave_taller_than_the_qrs_is_not_counted() {
    // QRS 1 mV, T 1.2 mV, 70 bpm (the standards' tall-T case, recalled from memory).
    let fs = 500.0;
    let beat = BeatShape {
        t_rel: 1.2,
        ..BeatShape::normal(1.0)
    };
    let mut heart = ScheduledHeart::new(fs, vec![(60.0 / 70.0, beat)]);
    let mut x = heart.render_uv(60.0);
    white(&mut x, 10.0, 5);
    let (beats, evals) = read(&x, fs);
    let expected_beats: f64 = (60.0 - 60.0 / 70.0) / (60.0 / 70.0) + 1.0;
    assert!(
        (beats.len() as f64 - expected_beats.floor()).abs() <= 1.0,
        "{} beats for {expected_beats:.1}",
        beats.len()
    );
    for e in evals.iter().filter(|e| e.time_s >= 10.0) {
        let b = e.state.bpm().unwrap_or(f64::NAN);
        assert!(within_tolerance(b, 70.0), "t = {}: {:?}", e.time_s, e.state);
    }
}

/// Seconds from a rate step until the readout is within tolerance of the new rate and stays.
fn settle_time(from_bpm: f64, to_bpm: f64) -> f64 {
    let fs = 500.0;
    let step_at = 30.0;
    let n_before = (step_at * from_bpm / 60.0).round() as usize;
    let mut pattern = vec![(60.0 / from_bpm, BeatShape::normal(1.0)); n_before];
    pattern.extend(vec![(60.0 / to_bpm, BeatShape::normal(1.0)); 200]);
    let step_s = pattern[..n_before].iter().map(|p| p.0).sum::<f64>();
    let mut heart = ScheduledHeart::new(fs, pattern);
    let mut x = heart.render_uv(step_s + 40.0);
    white(&mut x, 10.0, 9);
    let (_, evals) = read(&x, fs);
    // Before the step: the old rate.
    for e in evals
        .iter()
        .filter(|e| e.time_s >= 10.0 && e.time_s < step_s)
    {
        assert!(within_tolerance(e.state.bpm().unwrap(), from_bpm), "{e:?}");
    }
    let last_bad = evals
        .iter()
        .filter(|e| e.time_s >= step_s)
        .filter(|e| !e.state.bpm().is_some_and(|b| within_tolerance(b, to_bpm)))
        .map(|e| e.time_s)
        .fold(step_s, f64::max);
    // The end of the run reads the new rate.
    assert!(last_bad < step_s + 39.0, "never settled at {to_bpm}");
    last_bad + 1.0 - step_s
}

#[test]
fn rate_steps_settle_in_measured_time() {
    // The standards ask that the time to settle after a step be disclosed (and, recalled from
    // memory, be within 10 s). The README quotes these figures.
    let up = settle_time(80.0, 120.0);
    let down = settle_time(80.0, 40.0);
    println!("settling time: 80 → 120 bpm {up:.0} s, 80 → 40 bpm {down:.0} s");
    assert!(up <= 10.0, "80 → 120 bpm settled after {up} s");
    assert!(down <= 10.0, "80 → 40 bpm settled after {down} s");
}

#[test]
fn qrs_of_half_to_five_millivolts_and_40_to_120_ms_are_all_counted() {
    // Detection range 0.5–5 mV and QRS 40–120 ms (docs/REFERENCES.md §3: textbook table and, for the
    // range, recalled from memory).
    let fs = 500.0;
    for mv in [0.5, 1.0, 2.0, 5.0] {
        for qrs_s in [0.04, 0.08, 0.12] {
            let beat = BeatShape {
                qrs_s,
                ..BeatShape::normal(mv)
            };
            let mut heart = ScheduledHeart::new(fs, vec![(0.8, beat)]);
            let mut x = heart.render_uv(40.0);
            white(&mut x, 8.0, 3);
            let (beats, evals) = read(&x, fs);
            // R peaks at 0.8, 1.6, …, 39.2 s: 49 beats.
            assert_eq!(beats.len(), 49, "{mv} mV, {qrs_s} s");
            for e in evals.iter().filter(|e| e.time_s >= 10.0) {
                let b = e.state.bpm().unwrap_or(f64::NAN);
                assert!(within_tolerance(b, 75.0), "{mv} mV {qrs_s} s: {e:?}");
            }
        }
    }
}

#[test]
fn a_flat_line_reads_no_beat() {
    let fs = 500.0;
    let mut x = vec![0.0; (20.0 * fs) as usize];
    white(&mut x, 2.0, 1);
    let (beats, evals) = read(&x, fs);
    assert!(beats.is_empty(), "{} beats", beats.len());
    for e in evals.iter().filter(|e| e.time_s >= 4.0) {
        assert_eq!(e.state.name(), "no_beat", "{e:?}");
    }
}

#[test]
fn an_artefact_burst_at_300_bpm_is_never_shown_as_a_rate() {
    let fs = 500.0;
    let mut heart = ScheduledHeart::new(fs, vec![(0.8, BeatShape::normal(1.0))]);
    let mut x = heart.render_uv(60.0);
    white(&mut x, 8.0, 4);
    // 6 s of sharp 2 mV spikes every 200 ms (300 per minute) from t = 25 s.
    let spike = BeatShape {
        qrs_s: 0.03,
        p_wave: false,
        t_rel: 0.0,
        ..BeatShape::normal(2.0)
    };
    for k in 0..30 {
        let t0 = 25.0 + 0.2 * k as f64 + 0.07;
        for (i, v) in x.iter_mut().enumerate() {
            let dt = i as f64 / fs - t0;
            if dt.abs() < 0.1 {
                *v += 1000.0 * spike.value_mv(dt);
            }
        }
    }
    let (_, evals) = read(&x, fs);
    let mut unreliable = 0;
    for e in evals.iter().filter(|e| e.time_s >= 10.0) {
        match e.state {
            RateState::Rate(b) => assert!(
                within_tolerance(b, 75.0),
                "t = {}: {b} bpm shown during the artefact",
                e.time_s
            ),
            RateState::Unreliable(_) => unreliable += 1,
            s => panic!("t = {}: {s:?}", e.time_s),
        }
    }
    assert!(
        unreliable >= 3,
        "{unreliable} evaluations marked unreliable"
    );
}

/// The monitor's readout (the DSP thread, through the pipeline) at every snapshot, as
/// (evaluation time, state).
fn monitor_readouts(settings: SynthSettings, seconds: f64) -> Vec<(f64, RateState, f64)> {
    use leadline::pipeline::{Pipeline, PipelineConfig};
    use leadline::source::{Pacing, SourceSpec};
    let p = Pipeline::start(
        PipelineConfig {
            source: SourceSpec::Synth(settings),
            // Paced as a device: the DSP thread snapshots on the wall clock, so an unpaced
            // source would show a machine-dependent few of the once-a-second evaluations.
            pacing: Pacing::RealTime,
            limit_s: Some(seconds),
            display_hz: 1000.0,
            ..PipelineConfig::default()
        },
        std::sync::Arc::new(|| {}),
    )
    .unwrap();
    let mut seen = Vec::new();
    while let Ok(s) = p
        .snapshots()
        .recv_timeout(std::time::Duration::from_secs(10))
    {
        if let Some(b) = &s.beats
            && b.rate_at_s > 0.0
        {
            seen.push((b.rate_at_s, b.rate, 100.0 * b.quality.index));
        }
        if s.source_done {
            break;
        }
    }
    seen
}

#[test]
fn rate_csv_is_what_the_monitor_shows() {
    // The simulator's ventricular bigeminy, once through the monitor's DSP thread and once
    // written as counts and read back by `leadline beats --rate-out` with the same front end.
    let seconds = 40.0;
    let settings = SynthSettings {
        fs_hz: 500.0,
        rhythm: Rhythm::VentricularBigeminy,
        seed: 3,
        ..SynthSettings::default()
    };
    let shown = monitor_readouts(settings, seconds);
    assert!(shown.len() >= 5, "{} evaluations seen", shown.len());
    let dir = std::env::temp_dir().join(format!("leadline-hr-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let csv = dir.join("bigeminy-counts.csv");
    let run = |args: &[&str]| {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_leadline"))
            .args(args)
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    };
    run(&[
        "simulate",
        "--fs",
        "500",
        "--seconds",
        "40",
        "--seed",
        "3",
        "--rhythm",
        "ventricular-bigeminy",
        "--units",
        "counts",
        "--out",
        csv.to_str().unwrap(),
    ]);
    let rate = dir.join("rate.csv");
    let beats = dir.join("beats.csv");
    run(&[
        "beats",
        "--input",
        csv.to_str().unwrap(),
        "--units",
        "counts",
        "--adc-bits",
        "12",
        "--adc-vref",
        "3.3",
        "--frontend-gain",
        "500",
        "--out",
        beats.to_str().unwrap(),
        "--rate-out",
        rate.to_str().unwrap(),
    ]);
    let text = std::fs::read_to_string(&rate).unwrap();
    let mut lines = text.lines();
    assert_eq!(
        lines.next(),
        Some("time_s,bpm,state,reason,quality_pct,regularity_pct")
    );
    let rows: Vec<(f64, Option<f64>, String, f64)> = lines
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            (
                f[0].parse().unwrap(),
                (!f[1].is_empty()).then(|| f[1].parse().unwrap()),
                f[2].to_string(),
                f[4].parse().unwrap(),
            )
        })
        .collect();
    assert_eq!(rows.len(), 40, "one row a second");
    // Every state the monitor showed is the row of rate.csv at the same second.
    for (t, state, quality) in &shown {
        let row = rows
            .iter()
            .find(|r| (r.0 - t).abs() < 1e-9)
            .unwrap_or_else(|| panic!("no row at {t} s"));
        assert_eq!(row.2, state.name(), "at {t} s");
        // The quality the monitor shows is the column's (written to a whole percent).
        assert!(
            (row.3 - quality).abs() <= 0.5,
            "at {t} s: {} vs {quality}",
            row.3
        );
        if let Some(b) = state.bpm() {
            assert!(
                (row.1.unwrap() - b).abs() <= 0.05,
                "at {t} s: {row:?} vs {b}"
            );
        }
    }
    // And from 20 s on it reads the standard's 80 bpm.
    for r in rows.iter().filter(|r| r.0 >= 20.0) {
        assert!(within_tolerance(r.1.unwrap(), 80.0), "{r:?}");
    }
    // beats.csv: decided_s is at or after the R peak, by at most half a second once the
    // detector's 2 s learning phase is over (the learning phase's beats wait for its end).
    let b = std::fs::read_to_string(&beats).unwrap();
    let mut bl = b.lines();
    assert_eq!(bl.next(), Some("sample,time_s,r_uv,search_back,decided_s"));
    let lat: Vec<f64> = bl
        .map(|l| {
            l.split(',')
                .map(|v| v.parse().unwrap())
                .collect::<Vec<f64>>()
        })
        .filter(|f| f[1] > 2.5)
        .map(|f| f[4] - f[1])
        .collect();
    println!(
        "R to decision: {:.0}–{:.0} ms",
        1e3 * lat.iter().copied().fold(f64::MAX, f64::min),
        1e3 * lat.iter().copied().fold(f64::MIN, f64::max)
    );
    assert!(lat.len() > 40);
    assert!(lat.iter().all(|&d| (0.0..=0.5).contains(&d)), "{lat:?}");
}

/// Noise of a kind, zero mean, unit RMS over its stretch (fixed seed): the development set's.
fn noise_kind(kind: &str, n: usize, fs: f64, seed: u64) -> Vec<f64> {
    leadline::analysis::devset::noise(kind, n, fs, seed)
}

/// Figures of the quality check on our noisy fixtures: (share of false beats whose evaluation
/// second was marked unreliable, share of clean evaluations marked ok).
fn no_wrong_number_figures() -> (f64, f64, usize) {
    let fs = 360.0;
    let rr = 0.8;
    let mut false_beats = 0usize;
    let mut false_flagged = 0usize;
    let (mut clean, mut clean_ok) = (0usize, 0usize);
    let mut case = 0u64;
    for kind in ["motion", "muscle", "white"] {
        for snr_db in [6.0, 12.0, 24.0] {
            for _seed in 0..4 {
                case += 1;
                // 30 s clean, 20 s noisy, 30 s clean, 20 s noisy, 30 s clean.
                let mut heart = ScheduledHeart::new(fs, vec![(rr, BeatShape::normal(1.0))]);
                let mut x = heart.render_uv(130.0);
                // SNR as the MIT-BIH Noise Stress Test defines it (recalled from memory): signal
                // power = (QRS peak-to-peak)² / 8.
                let qrs_pp = {
                    let beat = BeatShape::normal(1.0);
                    let vals: Vec<f64> =
                        (-60..=60).map(|k| beat.value_mv(k as f64 * 1e-3)).collect();
                    1000.0
                        * (vals.iter().copied().fold(f64::MIN, f64::max)
                            - vals.iter().copied().fold(f64::MAX, f64::min))
                };
                let signal_rms = qrs_pp / 8f64.sqrt();
                white(&mut x, 5.0, 100 + case);
                let noisy = [(30.0, 50.0), (80.0, 100.0)];
                let noise_rms = signal_rms / 10f64.powf(snr_db / 20.0);
                for (k, &(a, b)) in noisy.iter().enumerate() {
                    let (ia, ib) = ((a * fs) as usize, (b * fs) as usize);
                    let nz = noise_kind(kind, ib - ia, fs, 1000 * case + k as u64);
                    for (v, z) in x[ia..ib].iter_mut().zip(nz) {
                        *v += noise_rms * z;
                    }
                }
                let (beats, evals) = read(&x, fs);
                let truth: Vec<f64> = (1..)
                    .map(|k| k as f64 * rr)
                    .take_while(|t| *t < 130.0)
                    .collect();
                let state_at = |t: f64| evals.iter().find(|e| e.time_s >= t).map(|e| e.state);
                for b in &beats {
                    let t = b.sample as f64 / fs;
                    // EC57's ±150 ms match (ANSI/AAMI EC57; docs/REFERENCES.md §2).
                    if truth.iter().any(|r| (r - t).abs() <= 0.150) {
                        continue;
                    }
                    false_beats += 1;
                    if let Some(RateState::Unreliable(_)) = state_at(b.decided as f64 / fs) {
                        false_flagged += 1;
                    }
                }
                // Clean time: the clean stretches after the first 20 s, leaving out the 10 s the
                // readout's window needs to refill after a noisy stretch.
                for e in &evals {
                    let t = e.time_s;
                    let in_clean =
                        (20.0..30.0).contains(&t) || (60.0..80.0).contains(&t) || t >= 110.0;
                    if in_clean {
                        clean += 1;
                        if e.state.name() == "ok" {
                            clean_ok += 1;
                        }
                    }
                }
            }
        }
    }
    (
        false_flagged as f64 / false_beats.max(1) as f64,
        clean_ok as f64 / clean.max(1) as f64,
        false_beats,
    )
}

#[test]
fn noisy_stretches_are_marked_unreliable_and_clean_ones_stay_ok() {
    // Our own fixtures: the simulator's beat at 75 bpm with electrode-motion-like swings,
    // muscle bursts and broadband noise at 6, 12 and 24 dB SNR (noise-stress-test style) in
    // two 20 s stretches of each 130 s record, four seeds each. Targets (the issue's): 70 % of the false beats
    // fall in seconds marked unreliable, 90 % of clean seconds read ok.
    let (flagged, ok, n) = no_wrong_number_figures();
    println!(
        "false beats: {n}, {:.0} % in seconds marked unreliable; clean seconds ok: {:.1} %",
        100.0 * flagged,
        100.0 * ok
    );
    assert!(
        flagged >= 0.70,
        "{:.1} % of {n} false beats flagged",
        100.0 * flagged
    );
    assert!(ok >= 0.90, "{:.1} % of clean seconds ok", 100.0 * ok);
}

/// Signal quality speaks of the signal, not the rhythm: the standards' irregular rhythms drawn
/// clean (ANSI/AAMI EC13 figure 3 as our simulator schedules them; docs/REFERENCES.md §3) read
/// at least 90 % quality, while their regularity is reported on its own; the same hearts under
/// white noise read lower.
#[test]
fn a_clean_irregular_rhythm_reads_as_a_clean_signal() {
    let fs = 360.0;
    for rhythm in Rhythm::ALL.into_iter().skip(1) {
        let mut heart = leadline::sim::rhythm::ScheduledHeart::new(fs, rhythm.pattern(1.0));
        let x = heart.render_uv(40.0);
        let (_, evals) = read(&x, fs);
        let late: Vec<&RateSample> = evals.iter().filter(|e| e.time_s >= 20.0).collect();
        assert!(late.len() >= 19);
        let worst = late.iter().map(|e| e.quality_pct).fold(f64::MAX, f64::min);
        println!("{}: quality at least {worst:.0} %", rhythm.name());
        assert!(worst >= 90.0, "{}: quality {worst:.0} %", rhythm.name());
        if matches!(
            rhythm,
            Rhythm::VentricularBigeminy | Rhythm::RapidAlternatingBigeminy
        ) {
            let reg = late
                .iter()
                .filter_map(|e| e.regularity_pct)
                .fold(0.0, f64::max);
            assert!(reg < 50.0, "{}: regularity {reg:.0} %", rhythm.name());
        }
        let mut noisy = x.clone();
        white(&mut noisy, 600.0, 9);
        let (_, evals) = read(&noisy, fs);
        let noisy_q = evals
            .iter()
            .filter(|e| e.time_s >= 20.0)
            .map(|e| e.quality_pct)
            .fold(0.0, f64::max);
        assert!(
            noisy_q < worst - 10.0,
            "{}: {noisy_q:.0} % under noise",
            rhythm.name()
        );
    }
    // A steady sinus rhythm reads as regular.
    let x = simulate(
        SynthSettings {
            fs_hz: fs,
            hrv_bpm: 1.0,
            ..SynthSettings::default()
        },
        40.0,
    );
    let (_, evals) = read(&x, fs);
    let reg = evals.iter().rev().find_map(|e| e.regularity_pct).unwrap();
    assert!(reg >= 90.0, "sinus: regularity {reg:.0} %");
}
