//! A development set the simulator makes, holding no real recording: beats with known R
//! positions under the difficulties a detector meets — electrode-motion and muscle artefacts at
//! 24, 12 and 6 dB, baseline steps, amplitude changes of ×0.3–×3 within a record, tall T waves,
//! wide ectopic beats and pacing-like spikes. `leadline bench beats` scores each; the tests
//! hold the detector to them.
//!
//! SNR is our definition, after the MIT-BIH noise stress test's use of the QRS size (recalled
//! from memory): 20·log10(QRS peak-to-peak / (2√2 · noise RMS)), i.e. the power of a sine as
//! tall as the QRS over the noise power.

use serde::Serialize;

use super::beats::{Score, Tuning};
use super::heldout::{Annotated, score_record};
use crate::rng::Rng;
use crate::sim::rhythm::{BeatShape, ScheduledHeart};

/// Rate of the development records, Hz (MIT-BIH's).
pub const FS_HZ: f64 = 360.0;
/// Length of each record, s.
pub const SECONDS: f64 = 180.0;

/// The cases, in the order they are reported.
pub const CASES: [&str; 12] = [
    "motion 24 dB",
    "motion 12 dB",
    "motion 6 dB",
    "muscle 24 dB",
    "muscle 12 dB",
    "muscle 6 dB",
    "baseline steps",
    "amplitude x0.3-x3",
    "tall T",
    "wide ectopic",
    "pacing spikes",
    "clean",
];

/// One case's figures.
#[derive(Debug, Clone, Serialize)]
pub struct CaseScore {
    pub case: String,
    pub beats: usize,
    pub se_pct: f64,
    pub ppv_pct: f64,
}

/// A sinus-like schedule: intervals around 0.8 s (±8 %), seeded.
fn schedule(
    rng: &mut Rng,
    seconds: f64,
    mut shape: impl FnMut(usize, &mut Rng) -> BeatShape,
) -> Vec<(f64, BeatShape)> {
    let mut t = 0.0;
    let mut out = Vec::new();
    let mut k = 0;
    while t < seconds + 2.0 {
        let rr = 0.8 * (1.0 + 0.08 * (2.0 * rng.uniform() - 1.0));
        out.push((rr, shape(k, rng)));
        t += rr;
        k += 1;
    }
    out
}

/// Renders a schedule once (no repeat), with the R positions.
fn render(pattern: Vec<(f64, BeatShape)>, seconds: f64) -> (Vec<f64>, Vec<u64>) {
    let mut heart = ScheduledHeart::new(FS_HZ, pattern);
    let n = (seconds * FS_HZ) as usize;
    let mut x = Vec::with_capacity(n);
    let mut r = Vec::new();
    for i in 0..n {
        let (v, is_r) = heart.next_sample();
        x.push(v * 1e6);
        if is_r {
            r.push(i as u64);
        }
    }
    (x, r)
}

/// Unit-RMS noise of a kind (seeded): `motion` (electrode motion: baseline swings and sharp
/// biphasic transients that look like QRS complexes to a band-pass), `muscle` (broadband above
/// 20 Hz, in bursts), or anything else: white noise (a poor contact or a noisy amplifier).
pub fn noise(kind: &str, n: usize, fs: f64, seed: u64) -> Vec<f64> {
    let mut rng = Rng::new(seed);
    let mut v = vec![0.0; n];
    if kind == "motion" {
        let a = (-std::f64::consts::TAU * 2.0 / fs).exp();
        let mut y = 0.0;
        let mut events: Vec<(f64, f64, f64)> = Vec::new();
        for i in 0..n {
            if rng.uniform() < 2.0 / fs {
                let w = 0.015 + 0.025 * rng.uniform();
                events.push((i as f64 / fs + 0.1, w, 3.0 * rng.normal()));
            }
        }
        let mut first = 0;
        for (i, s) in v.iter_mut().enumerate() {
            let t = i as f64 / fs;
            y = a * y + (1.0 - a) * rng.normal() * 6.0;
            // Events are in onset order and reach at most 5 × 40 ms: only those near t count.
            while first < events.len() && events[first].0 + 0.2 < t {
                first += 1;
            }
            let spikes: f64 = events[first..]
                .iter()
                .take_while(|e| e.0 - 0.2 <= t)
                .filter(|e| (t - e.0).abs() < 5.0 * e.1)
                .map(|e| {
                    let u = (t - e.0) / e.1;
                    e.2 * u * (-0.5 * u * u).exp()
                })
                .sum();
            *s = y + spikes;
        }
    } else if kind == "muscle" {
        let (mut prev_in, mut prev_out) = (0.0, 0.0);
        let a = 1.0 / (1.0 + std::f64::consts::TAU * 20.0 / fs);
        let mut on_until = 0usize;
        for (i, s) in v.iter_mut().enumerate() {
            if i >= on_until && rng.uniform() < 1.5 / fs {
                on_until = i + ((0.3 + 0.7 * rng.uniform()) * fs) as usize;
            }
            let w = rng.normal();
            prev_out = a * (prev_out + w - prev_in);
            prev_in = w;
            *s = if i < on_until {
                prev_out
            } else {
                0.1 * prev_out
            };
        }
    }
    let rms = (v.iter().map(|x| x * x).sum::<f64>() / n.max(1) as f64)
        .sqrt()
        .max(1e-12);
    v.iter_mut().for_each(|x| *x /= rms);
    v
}

/// The record of one case (seeded, so the set is the same on every machine).
pub fn record(case: &str) -> Annotated {
    let seed = 7 + CASES.iter().position(|c| *c == case).unwrap_or(0) as u64;
    let mut rng = Rng::new(seed);
    let normal = |_: usize, _: &mut Rng| BeatShape::normal(1.0);
    let (x, reference) = match case {
        "amplitude x0.3-x3" => {
            // The size wanders between ×0.3 and ×3 over tens of seconds (log-uniform steps).
            let mut level: f64 = 1.0;
            let p = schedule(&mut rng, SECONDS, |k, r| {
                if k % 20 == 0 {
                    level = (0.3f64.ln() + (3.0f64.ln() - 0.3f64.ln()) * r.uniform()).exp();
                }
                BeatShape::normal(level)
            });
            render(p, SECONDS)
        }
        "tall T" => render(
            schedule(&mut rng, SECONDS, |_, _| BeatShape {
                t_rel: 1.2,
                ..BeatShape::normal(1.0)
            }),
            SECONDS,
        ),
        "wide ectopic" => render(
            schedule(&mut rng, SECONDS, |_, r| {
                if r.uniform() < 0.2 {
                    BeatShape {
                        qrs_s: 0.16,
                        ..BeatShape::ventricular(1.0)
                    }
                } else {
                    BeatShape::normal(1.0)
                }
            }),
            SECONDS,
        ),
        _ => render(schedule(&mut rng, SECONDS, normal), SECONDS),
    };
    let mut x = x;
    let n = x.len();
    // The QRS of a normal 1 mV beat spans about 1.4 mV peak to peak (R 1, S −0.25, Q −0.17).
    let qrs_pp = 1.4e3;
    let at_db = |db: f64| qrs_pp / (2.0 * std::f64::consts::SQRT_2) / 10f64.powf(db / 20.0);
    match case {
        c if c.starts_with("motion") || c.starts_with("muscle") => {
            let db: f64 = c
                .split(' ')
                .nth(1)
                .and_then(|d| d.parse().ok())
                .unwrap_or(12.0);
            let kind = c.split(' ').next().unwrap_or("motion");
            let rms = at_db(db);
            for (v, e) in x.iter_mut().zip(noise(kind, n, FS_HZ, seed)) {
                *v += rms * e;
            }
        }
        "baseline steps" => {
            // An electrode shifts the baseline by ±1–3 mV every 5–15 s, settling over 0.2 s.
            let mut level = 0.0;
            let mut target = 0.0;
            let mut next = (5.0 * FS_HZ) as usize;
            let a = (-1.0 / (0.05 * FS_HZ)).exp();
            for (i, v) in x.iter_mut().enumerate() {
                if i == next {
                    let sign = if rng.uniform() < 0.5 { -1.0 } else { 1.0 };
                    target += sign * (1000.0 + 2000.0 * rng.uniform());
                    next += ((5.0 + 10.0 * rng.uniform()) * FS_HZ) as usize;
                }
                level = a * level + (1.0 - a) * target;
                *v += level;
            }
        }
        "pacing spikes" => {
            // A 1 ms, 2–5 mV spike 40 ms before each R, as a front end limited to 150 Hz
            // passes a pacemaker's pulse (a few samples wide at 360 Hz).
            let lead = (0.040 * FS_HZ) as u64;
            for &r in &reference {
                if let Some(at) = r.checked_sub(lead) {
                    let amp = 2000.0 + 3000.0 * rng.uniform();
                    for (k, w) in [0.5, 1.0, -0.6].iter().enumerate() {
                        if let Some(v) = x.get_mut(at as usize + k) {
                            *v += amp * w;
                        }
                    }
                }
            }
        }
        _ => {}
    }
    Annotated {
        name: case.to_string(),
        fs_hz: FS_HZ,
        x,
        reference,
    }
}

/// Scores the detector with `tuning` on every case. Records are scored from 10 s (the
/// detector's learning).
pub fn score_all(tuning: Tuning) -> Vec<CaseScore> {
    CASES
        .iter()
        .map(|c| {
            let rec = record(c);
            let s: Score = score_record(&rec, tuning, (10.0 * FS_HZ) as u64);
            CaseScore {
                case: c.to_string(),
                beats: rec.reference.len(),
                se_pct: 100.0 * s.se(),
                ppv_pct: 100.0 * s.ppv(),
            }
        })
        .collect()
}
