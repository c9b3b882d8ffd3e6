//! The ECG waveform: the dynamical model of McSharry, Clifford, Tarassenko and Smith,
//! "A dynamical model for generating synthetic electrocardiogram signals",
//! IEEE TBME 50(3):289–294, 2003 (ECGSYN), with its RR-interval process.
//!
//! A point circles the unit limit cycle in the (x, y) plane at angular speed ω = 2π/RR(t); z is
//! pushed by five Gaussian events (P, Q, R, S, T) placed at fixed angles and relaxes to zero between
//! them. Parameters, heart-rate scaling and the RR spectrum follow the paper and its C code
//! (McSharry et al., IEEE TBME 50(3):289–294, 2003). The mean of z is not forced to zero: the isoelectric line is z = 0
//! and the output is scaled so the R peak has the requested amplitude.

use std::f64::consts::{PI, TAU};

use crate::rng::Rng;

/// Event angles θᵢ (rad) of P, Q, R, S, T, as in ecgsyn.c (T at 90°).
const THETA: [f64; 5] = [-PI / 3.0, -PI / 12.0, 0.0, PI / 12.0, PI / 2.0];
/// Event magnitudes aᵢ.
const A: [f64; 5] = [1.2, -5.0, 30.0, -7.5, 0.75];
/// Event widths bᵢ (rad).
const B: [f64; 5] = [0.25, 0.1, 0.1, 0.1, 0.4];
/// Mayer-wave and respiratory peaks of the RR spectrum, Hz, and their widths (paper §II).
const F1_HZ: f64 = 0.1;
const F2_HZ: f64 = 0.25;
const C1_HZ: f64 = 0.01;
const C2_HZ: f64 = 0.01;
/// Frequency grid of the RR process: 1/512 Hz steps up to 0.5 Hz (RR sampled at 1 Hz), so the
/// tachogram repeats only after 512 s.
const RR_GRID_HZ: f64 = 1.0 / 512.0;
const RR_COMPONENTS: usize = 255;
/// Start in diastole (θ = π, z on the isoelectric line) so a stream opens on baseline rather than
/// in the middle of an R wave (ECGSYN starts at (1, 0, 0.04), i.e. on the R event).
const START_STATE: [f64; 3] = [-1.0, 0.0, 0.0];
/// Internal integration rate floor: RK4 steps are never longer than 1 ms.
const MIN_INTERNAL_HZ: f64 = 1000.0;

/// RR-interval process: a bimodal (LF/HF) spectrum with random phases, as ECGSYN builds it by
/// inverse FFT, evaluated here as the equivalent sum of cosines so it can run forever.
#[derive(Debug, Clone)]
struct RrProcess {
    freq_hz: Vec<f64>,
    unit_amp: Vec<f64>,
    phase: Vec<f64>,
    rr_mean_s: f64,
    rr_std_s: f64,
    /// RR at whole seconds k and k+1, for linear interpolation (the MATLAB variant).
    cache: Option<(i64, f64, f64)>,
}

impl RrProcess {
    fn new(rng: &mut Rng, lf_hf: f64) -> Self {
        let lf_hf = lf_hf.max(1e-3);
        // σ1²/σ2² = LF/HF with σ1² + σ2² = 1; overall level is fixed afterwards by rr_std.
        let s1 = lf_hf / (1.0 + lf_hf);
        let s2 = 1.0 - s1;
        let gauss = |f: f64, fc: f64, c: f64, s: f64| {
            s / (TAU * c * c).sqrt() * (-(f - fc).powi(2) / (2.0 * c * c)).exp()
        };
        let mut freq_hz = Vec::with_capacity(RR_COMPONENTS);
        let mut unit_amp = Vec::with_capacity(RR_COMPONENTS);
        let mut phase = Vec::with_capacity(RR_COMPONENTS);
        for k in 1..=RR_COMPONENTS {
            let f = k as f64 * RR_GRID_HZ;
            let s = gauss(f, F1_HZ, C1_HZ, s1) + gauss(f, F2_HZ, C2_HZ, s2);
            freq_hz.push(f);
            unit_amp.push(s.sqrt());
            phase.push(TAU * rng.uniform());
        }
        // A cosine of amplitude A has variance A²/2: normalise the sum to unit variance.
        let var: f64 = unit_amp.iter().map(|a| a * a / 2.0).sum();
        let norm = var.sqrt().recip();
        unit_amp.iter_mut().for_each(|a| *a *= norm);
        Self {
            freq_hz,
            unit_amp,
            phase,
            rr_mean_s: 1.0,
            rr_std_s: 0.0,
            cache: None,
        }
    }

    /// Mean rate and its standard deviation in bpm: rrmean = 60/hr, rrstd = 60·hrstd/hr² (ECGSYN).
    fn set_rate(&mut self, hr_bpm: f64, hr_std_bpm: f64) {
        self.rr_mean_s = 60.0 / hr_bpm;
        self.rr_std_s = 60.0 * hr_std_bpm / (hr_bpm * hr_bpm);
        self.cache = None;
    }

    fn at_whole_second(&self, k: i64) -> f64 {
        let t = k as f64;
        let v: f64 = self
            .freq_hz
            .iter()
            .zip(&self.unit_amp)
            .zip(&self.phase)
            .map(|((f, a), p)| a * (TAU * f * t + p).cos())
            .sum();
        // Never let a large variability setting produce a rate above 300 bpm.
        (self.rr_mean_s + self.rr_std_s * v).max(0.2)
    }

    fn rr_at(&mut self, t: f64) -> f64 {
        let k = t.floor() as i64;
        let (rr0, rr1) = match self.cache {
            Some((ck, a, b)) if ck == k => (a, b),
            _ => {
                let a = self.at_whole_second(k);
                let b = self.at_whole_second(k + 1);
                self.cache = Some((k, a, b));
                (a, b)
            }
        };
        let w = t - k as f64;
        rr0 + (rr1 - rr0) * w
    }
}

/// The running ECG generator. Output is in volts at the electrodes.
#[derive(Debug, Clone)]
pub struct EcgModel {
    state: [f64; 3],
    t_s: f64,
    dt_s: f64,
    substeps: usize,
    theta: [f64; 5],
    b: [f64; 5],
    rr: RrProcess,
    /// Volts per model unit of z, so the R peak equals the requested amplitude.
    volts_per_unit: f64,
}

fn wrap_pi(a: f64) -> f64 {
    let w = (a + PI).rem_euclid(TAU) - PI;
    if w < -PI { w + TAU } else { w }
}

impl EcgModel {
    /// A generator sampled at `fs_hz` with the given mean rate (bpm), rate variability (sd, bpm),
    /// LF/HF ratio and R amplitude (mV).
    pub fn new(
        fs_hz: f64,
        hr_bpm: f64,
        hr_std_bpm: f64,
        lf_hf: f64,
        r_mv: f64,
        rng: &mut Rng,
    ) -> Self {
        let substeps = (MIN_INTERNAL_HZ / fs_hz).ceil().max(1.0) as usize;
        let mut m = Self {
            state: START_STATE,
            t_s: 0.0,
            dt_s: 1.0 / (fs_hz * substeps as f64),
            substeps,
            theta: THETA,
            b: B,
            rr: RrProcess::new(rng, lf_hf),
            volts_per_unit: 1e-3,
        };
        m.set_rate(hr_bpm, hr_std_bpm, r_mv);
        m
    }

    /// Changes the mean rate, variability and R amplitude while running; the waveform's timing
    /// parameters are rescaled for the new rate as ECGSYN does.
    pub fn set_rate(&mut self, hr_bpm: f64, hr_std_bpm: f64, r_mv: f64) {
        let hr = hr_bpm.clamp(20.0, 300.0);
        let hrfact = (hr / 60.0).sqrt();
        let hrfact2 = hrfact.sqrt();
        self.b = B.map(|b| b * hrfact);
        self.theta = THETA;
        self.theta[0] *= hrfact2;
        self.theta[1] *= hrfact;
        self.theta[3] *= hrfact;
        self.rr.set_rate(hr, hr_std_bpm.max(0.0));
        self.volts_per_unit = r_mv * 1e-3 / self.calibration_peak(hr);
    }

    /// Peak z of a steady beat at `hr_bpm`, found by running a copy of the model without rate
    /// variability for three beats.
    fn calibration_peak(&self, hr_bpm: f64) -> f64 {
        let mut probe = self.clone();
        probe.state = START_STATE;
        probe.t_s = 0.0;
        probe.rr.rr_std_s = 0.0;
        probe.rr.cache = None;
        let rr = 60.0 / hr_bpm;
        let steps = (3.0 * rr / probe.dt_s).ceil() as usize;
        let mut peak = f64::MIN;
        for i in 0..steps {
            probe.step();
            if i as f64 * probe.dt_s > rr {
                peak = peak.max(probe.state[2]);
            }
        }
        peak.max(1e-6)
    }

    fn deriv(&self, s: [f64; 3], omega: f64) -> [f64; 3] {
        let [x, y, z] = s;
        let alpha = 1.0 - (x * x + y * y).sqrt();
        let th = y.atan2(x);
        let mut dz = 0.0;
        for ((a, theta), b) in A.iter().zip(&self.theta).zip(&self.b) {
            let d = wrap_pi(th - theta);
            dz -= a * d * (-d * d / (2.0 * b * b)).exp();
        }
        [alpha * x - omega * y, alpha * y + omega * x, dz - z]
    }

    fn step(&mut self) {
        let h = self.dt_s;
        let w0 = TAU / self.rr.rr_at(self.t_s);
        let wm = TAU / self.rr.rr_at(self.t_s + 0.5 * h);
        let w1 = TAU / self.rr.rr_at(self.t_s + h);
        let s = self.state;
        let add =
            |a: [f64; 3], k: [f64; 3], f: f64| [a[0] + f * k[0], a[1] + f * k[1], a[2] + f * k[2]];
        let k1 = self.deriv(s, w0);
        let k2 = self.deriv(add(s, k1, 0.5 * h), wm);
        let k3 = self.deriv(add(s, k2, 0.5 * h), wm);
        let k4 = self.deriv(add(s, k3, h), w1);
        for i in 0..3 {
            self.state[i] += h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
        }
        self.t_s += h;
    }

    /// The cardiac phase now, rad (R at 0): what drives the dipole of the many-lead model.
    pub fn phase(&self) -> f64 {
        self.state[1].atan2(self.state[0])
    }

    /// Advances one output sample and returns the ECG in volts at the electrodes, and whether the
    /// R event (θ crossing 0) happened during it.
    pub fn next_sample(&mut self) -> (f64, bool) {
        let mut r_event = false;
        for _ in 0..self.substeps {
            let before = self.state[1].atan2(self.state[0]);
            self.step();
            let after = self.state[1].atan2(self.state[0]);
            r_event |= before < 0.0 && after >= 0.0 && before > -1.0;
        }
        (self.state[2] * self.volts_per_unit, r_event)
    }
}
