//! Many leads from one heart: the cardiac dipole vector, after the multichannel extension of
//! the dynamical ECG model by Sameni, Clifford, Jutten and Shamsollahi, "Multichannel ECG and
//! noise modeling: application to maternal and fetal ECG signals", EURASIP J. Adv. Signal
//! Process. 2007:043407 (docs/REFERENCES.md §13).
//!
//! In that model each of the dipole's three components is a sum of Gaussians in the cardiac
//! phase θ, the phase that drives the single-lead model (`ecg_model`), and each lead is the
//! dipole projected on the lead's vector. Here each wave (P, Q, R, S, T) shares its phase and
//! width across the three components and points one way; the numbers are our own, shaped so the
//! leads look as a textbook's do (rS in V1, qR in V6). `axis_deg` turns the QRS waves in the
//! frontal plane so that their net area points that way.
//!
//! Body axes: x to the patient's left, y down (to the feet), z forwards (anterior).

use std::f64::consts::PI;

use crate::leads::LeadSet;

/// One wave of the dipole.
#[derive(Debug, Clone, Copy)]
struct Wave {
    /// Phase of its peak, rad (R at 0), and width, rad, at 60 bpm.
    theta: f64,
    b: f64,
    /// Size, mV, and direction (unit vector).
    mv: f64,
    dir: [f64; 3],
}

fn unit(v: [f64; 3]) -> [f64; 3] {
    let n = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
    v.map(|c| c / n)
}

/// The waves before the axis is set: P, Q (septal, rightwards and forwards), R (left, down,
/// a little backwards), S (backwards and up), T.
fn base_waves() -> [Wave; 5] {
    [
        Wave {
            theta: -PI / 3.0,
            b: 0.25,
            mv: 0.15,
            dir: unit([0.6, 0.8, 0.2]),
        },
        Wave {
            theta: -PI / 12.0,
            b: 0.1,
            mv: 0.15,
            dir: unit([-0.6, -0.3, 0.7]),
        },
        Wave {
            theta: 0.0,
            b: 0.1,
            mv: 1.4,
            dir: unit([0.5, 0.85, -0.3]),
        },
        Wave {
            theta: PI / 12.0,
            b: 0.1,
            mv: 0.45,
            dir: unit([-0.3, -0.4, -0.85]),
        },
        Wave {
            theta: PI / 2.0,
            b: 0.4,
            mv: 0.35,
            dir: unit([0.6, 0.7, 0.35]),
        },
    ]
}

/// Lead vectors of the board's eight leads (I, II, V1–V6): the limb leads in the frontal plane
/// at 0° and 60° (Einthoven's triangle), the chest leads around the horizontal plane from V1
/// (front right) to V6 (left side), a little larger (common practice; our own numbers).
const CHEST_DEG: [f64; 6] = [120.0, 90.0, 75.0, 60.0, 30.0, 0.0];
const CHEST_GAIN: f64 = 1.5;

/// The heart's dipole.
#[derive(Debug, Clone)]
pub struct Dipole {
    waves: [Wave; 5],
}

impl Dipole {
    /// A dipole whose mean frontal QRS vector (net area of Q, R and S) points at `axis_deg`
    /// (0° = lead I, +90° = down), scaled so the R wave is `r_mv` tall along its direction.
    pub fn new(axis_deg: f64, r_mv: f64) -> Self {
        let mut waves = base_waves();
        let k = r_mv / waves[2].mv;
        waves.iter_mut().for_each(|w| w.mv *= k);
        // The net area of a Gaussian is mv·b·√(2π): the QRS net vector's frontal direction.
        let (nx, ny) = waves[1..4].iter().fold((0.0, 0.0), |(x, y), w| {
            (x + w.mv * w.b * w.dir[0], y + w.mv * w.b * w.dir[1])
        });
        let turn = axis_deg.to_radians() - ny.atan2(nx);
        let (s, c) = turn.sin_cos();
        for w in &mut waves[1..4] {
            let [x, y, z] = w.dir;
            w.dir = [c * x - s * y, s * x + c * y, z];
        }
        Self { waves }
    }

    /// The dipole at cardiac phase `theta` (rad, R at 0) and rate `hr_bpm`, mV. Widths and the
    /// P, Q and S phases follow the rate as in ECGSYN (McSharry et al. 2003).
    pub fn at(&self, theta: f64, hr_bpm: f64) -> [f64; 3] {
        let hrfact = (hr_bpm.clamp(20.0, 300.0) / 60.0).sqrt();
        let mut d = [0.0; 3];
        for (i, w) in self.waves.iter().enumerate() {
            let th = match i {
                0 => w.theta * hrfact.sqrt(),
                1 | 3 => w.theta * hrfact,
                _ => w.theta,
            };
            let b = w.b * hrfact;
            let dt = (theta - th + PI).rem_euclid(2.0 * PI) - PI;
            let g = w.mv * (-dt * dt / (2.0 * b * b)).exp();
            for (c, u) in d.iter_mut().zip(w.dir) {
                *c += g * u;
            }
        }
        d
    }

    /// The board's channels for dipole `d` (mV), in the set's input order: leads, or electrode
    /// potentials against a reference at Wilson's central terminal.
    pub fn channels(set: LeadSet, d: [f64; 3], out: &mut Vec<f64>) {
        let dot = |u: [f64; 3]| d[0] * u[0] + d[1] * u[1] + d[2] * u[2];
        let i = dot([1.0, 0.0, 0.0]);
        let ii = dot([0.5, 3f64.sqrt() / 2.0, 0.0]);
        let chest = CHEST_DEG.map(|a: f64| {
            let (s, c) = a.to_radians().sin_cos();
            CHEST_GAIN * dot(unit([c, 0.1, s]))
        });
        match set {
            LeadSet::Limb2 => out.extend([i, ii]),
            LeadSet::Leads8 => {
                out.extend([i, ii]);
                out.extend(chest);
            }
            LeadSet::Electrodes9 => {
                // RA + LA + LL = 0: RA = −(I + II)/3, LA = RA + I, LL = RA + II.
                let ra = -(i + ii) / 3.0;
                out.extend([ra, ra + i, ra + ii]);
                out.extend(chest);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The QRS net vector in the frontal plane points where it was asked to.
    #[test]
    fn the_qrs_net_vector_points_at_the_axis() {
        for axis in [-30.0, 0.0, 60.0, 90.0, 150.0] {
            let d = Dipole::new(axis, 1.0);
            // Integrate the QRS (±0.5 rad around R) at 60 bpm.
            let (mut x, mut y) = (0.0, 0.0);
            for k in -500..=500 {
                let v = d.at(k as f64 * 1e-3, 60.0);
                x += v[0];
                y += v[1];
            }
            let got = y.atan2(x).to_degrees();
            // P and T tails inside the window move it a little.
            assert!((got - axis).abs() < 5.0, "{axis}: {got}");
        }
    }

    #[test]
    fn electrode_potentials_give_back_the_leads() {
        let d = Dipole::new(45.0, 1.0).at(0.0, 72.0);
        let (mut leads, mut el) = (Vec::new(), Vec::new());
        Dipole::channels(LeadSet::Leads8, d, &mut leads);
        Dipole::channels(LeadSet::Electrodes9, d, &mut el);
        let mut from_el = Vec::new();
        LeadSet::Electrodes9.derive(&el, &mut from_el);
        let mut from_leads = Vec::new();
        LeadSet::Leads8.derive(&leads, &mut from_leads);
        for (a, b) in from_el.iter().zip(&from_leads) {
            assert!((a - b).abs() < 1e-12);
        }
        // V1 is mostly negative at R (rS), V6 positive (qR).
        assert!(leads[2] < 0.0 && leads[7] > 0.0, "{leads:?}");
    }
}
