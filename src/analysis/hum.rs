//! Mains interference measured at a known phase: the least-squares amplitude of one harmonic
//! (with an offset) over a stretch, and the figures of the mains canceller against the notch on
//! a fixture of a clean ECG plus a known interference (`leadline bench mains`).

use serde::Serialize;

use crate::dsp::ChainSettings;
use crate::dsp::canceller::MainsCancel;
use crate::dsp::chain::Chain;

/// The peak amplitude of harmonic `h` of `phase` (rad per sample) in `x` over `range`: the
/// least-squares fit of c + a·cos(hθ) + b·sin(hθ), amplitude √(a² + b²).
pub fn harmonic_amplitude(x: &[f64], phase: &[f64], h: f64, range: std::ops::Range<usize>) -> f64 {
    let mut ata = [[0.0; 3]; 3];
    let mut atb = [0.0; 3];
    for i in range {
        let (s, c) = (h * phase[i]).sin_cos();
        let row = [1.0, c, s];
        for r in 0..3 {
            for (k, v) in ata[r].iter_mut().enumerate() {
                *v += row[r] * row[k];
            }
            atb[r] += row[r] * x[i];
        }
    }
    let sol = solve3(ata, atb);
    sol[1].hypot(sol[2])
}

fn solve3(mut a: [[f64; 3]; 3], mut b: [f64; 3]) -> [f64; 3] {
    for k in 0..3 {
        let p = (k..3)
            .max_by(|&i, &j| a[i][k].abs().total_cmp(&a[j][k].abs()))
            .unwrap_or(k);
        a.swap(k, p);
        b.swap(k, p);
        if a[k][k] == 0.0 {
            return [0.0; 3];
        }
        for i in k + 1..3 {
            let f = a[i][k] / a[k][k];
            let pivot = a[k];
            for (x, p) in a[i].iter_mut().zip(pivot).skip(k) {
                *x -= f * p;
            }
            b[i] -= f * b[k];
        }
    }
    let mut x = [0.0; 3];
    for k in (0..3).rev() {
        x[k] = (b[k] - (k + 1..3).map(|j| a[k][j] * x[j]).sum::<f64>()) / a[k][k];
    }
    x
}

/// The fixture of `tests/reference/mains_fixture.py`: 60 s at 1 kHz of an invented clean ECG,
/// and the same plus 60 Hz drifting 59.7 → 60.3 Hz, harmonics 2–5 at 10 %, ×3 from 30 s.
pub struct Fixture {
    pub clean: Vec<f64>,
    pub noisy: Vec<f64>,
    pub r_peaks: Vec<usize>,
}

/// The fixture's rate, Hz.
pub const FIXTURE_FS: f64 = 1000.0;

impl Fixture {
    /// Reads `mains60.f32` and `mains60.json` from `dir`.
    ///
    /// # Errors
    /// A file missing or malformed, as one line.
    pub fn read(dir: &std::path::Path) -> Result<Self, String> {
        let f = dir.join("mains60.f32");
        let raw = std::fs::read(&f).map_err(|e| format!("{}: {e}", f.display()))?;
        let v: Vec<f64> = raw
            .chunks_exact(4)
            .map(|b| f64::from(f32::from_le_bytes([b[0], b[1], b[2], b[3]])))
            .collect();
        let j = dir.join("mains60.json");
        let text = std::fs::read_to_string(&j).map_err(|e| format!("{}: {e}", j.display()))?;
        let spec: serde_json::Value =
            serde_json::from_str(&text).map_err(|e| format!("{}: {e}", j.display()))?;
        let r_peaks = spec["r_peaks"]
            .as_array()
            .ok_or_else(|| format!("{}: no r_peaks", j.display()))?
            .iter()
            .filter_map(|v| v.as_u64().map(|r| r as usize))
            .collect();
        Ok(Self {
            clean: v.iter().step_by(2).copied().collect(),
            noisy: v.iter().skip(1).step_by(2).copied().collect(),
            r_peaks,
        })
    }

    /// The interference's phase of the fundamental at every sample, as the script makes it.
    pub fn phase(&self) -> Vec<f64> {
        let mut p = 0.0;
        (0..self.clean.len())
            .map(|i| {
                let f = 59.7 + 0.6 * (i as f64 / FIXTURE_FS) / 60.0;
                p += std::f64::consts::TAU * f / FIXTURE_FS;
                p
            })
            .collect()
    }

    /// The interference of harmonic `h` in the 1 s window from `start_s`, µV peak.
    pub fn interference_uv(h: usize, start_s: usize) -> f64 {
        let base = if h == 1 { 200.0 } else { 20.0 };
        base * if start_s >= 30 { 3.0 } else { 1.0 }
    }

    /// The windows judged: from 2 s after the start and from 2 s after the amplitude step.
    pub fn judged() -> impl Iterator<Item = usize> {
        (2..60).filter(|s| !(30..32).contains(s))
    }
}

/// Only the canceller at 60 Hz, five harmonics (the fixture has no offset or wander).
pub fn canceller_only() -> ChainSettings {
    let mut s = ChainSettings::band(None, None);
    s.notch.mains_hz = 60.0;
    s.cancel = MainsCancel {
        enabled: true,
        harmonics: 5,
    };
    s
}

/// The Q 30 notch at 60 Hz with its harmonics 2–5.
pub fn notch_only() -> ChainSettings {
    let mut s = ChainSettings::band(None, None);
    s.notch.enabled = true;
    s.notch.mains_hz = 60.0;
    s.notch.harmonics = 4;
    s
}

/// `x` through the live chain at the fixture's rate, in 10 ms blocks.
pub fn run_live(settings: ChainSettings, x: &[f64]) -> Vec<f64> {
    let mut y = x.to_vec();
    if let Ok(mut chain) = Chain::new(settings, FIXTURE_FS, 1) {
        for block in y.chunks_mut(10) {
            chain.process_channel(0, block);
        }
    }
    y
}

/// One way of removing the mains, judged on the fixture.
#[derive(Debug, Clone, Serialize)]
pub struct Judged {
    /// The worst residual per harmonic over the judged windows, µV peak, and as dB below the
    /// interference of its window.
    pub worst_residual_uv: [f64; 5],
    pub worst_db_below: [f64; 5],
    /// RMS of the output against the clean ECG within ±100 ms of each R after 5 s, µV.
    pub qrs_error_rms_uv: f64,
}

/// The residuals and the QRS error of `y` (the fixture's noisy signal after removal).
pub fn judge(fx: &Fixture, y: &[f64]) -> Judged {
    let ph = fx.phase();
    let res: Vec<f64> = y.iter().zip(&fx.clean).map(|(a, b)| a - b).collect();
    let mut worst = [0.0f64; 5];
    let mut db = [f64::INFINITY; 5];
    for s in Fixture::judged() {
        for h in 1..=5 {
            let a = harmonic_amplitude(&res, &ph, h as f64, s * 1000..(s + 1) * 1000);
            worst[h - 1] = worst[h - 1].max(a);
            db[h - 1] = db[h - 1].min(crate::numeric::db20(
                Fixture::interference_uv(h, s) / a.max(1e-9),
            ));
        }
    }
    let e: Vec<f64> = fx
        .r_peaks
        .iter()
        .filter(|&&r| r > 5000 && r + 100 < fx.clean.len())
        .flat_map(|&r| (r - 100..r + 100).map(|i| res[i]))
        .collect();
    Judged {
        worst_residual_uv: worst,
        worst_db_below: db,
        qrs_error_rms_uv: (e.iter().map(|v| v * v).sum::<f64>() / e.len().max(1) as f64).sqrt(),
    }
}

/// The ST shift the canceller alone makes on the simulator's beat (72 bpm with its rate
/// variability, no noise, 30 s at 1 kHz) at mains `mains_hz`: the ST level (R + 100 ms against
/// R − 70 ms) after minus before, averaged over the beats after 5 s, µV.
pub fn st_shift_on_the_simulator(mains_hz: f64) -> f64 {
    use crate::sim::{Synth, SynthSettings};
    let Ok(mut synth) = Synth::new(SynthSettings {
        fs_hz: FIXTURE_FS,
        mains_uv: 0.0,
        wander_uv: 0.0,
        drift_uv: 0.0,
        noise_uv: 0.0,
        offset_mv: 0.0,
        ..SynthSettings::default()
    }) else {
        return f64::NAN;
    };
    let scale = synth.scale();
    let mut counts = Vec::new();
    synth.fill(30_000, &mut counts);
    let x: Vec<f64> = counts.iter().map(|&c| scale.counts_to_uv(c)).collect();
    let mut s = canceller_only();
    s.notch.mains_hz = mains_hz;
    let y = run_live(s, &x);
    let st = |v: &[f64], r: usize| v[r + 100] - v[r - 70];
    let beats: Vec<usize> = synth
        .r_events()
        .iter()
        .map(|&r| r as usize)
        .filter(|&r| r > 5000 && r + 100 < x.len())
        .collect();
    beats.iter().map(|&r| st(&y, r) - st(&x, r)).sum::<f64>() / beats.len().max(1) as f64
}
