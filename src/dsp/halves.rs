//! The long-block kernel: a recording filtered in one pass as two halves side by side.
//!
//! One section's recurrence is a chain of dependent operations (about 12 cycles a sample), so a
//! single stream cannot keep the arithmetic units busy. A long block is therefore cut in two
//! halves that run interleaved in eight lanes (four sections × two halves): the first half from
//! the cascade's true state, the second from rest. Linearity makes that exact: the second half's
//! true output is its zero-state output plus the cascade's zero-input response from the state at
//! the cut, which the first half delivers; that response is added afterwards until it has decayed
//! below a 1e-17 part of the state (a few thousand samples for the lowest corners). The sections
//! run with their numerators divided by b0 (one multiplication fewer each) and the cascade's gain
//! applied once, as samples leave the last section.
//!
//! The result equals sample-by-sample filtering to within rounding (the test below asserts
//! 1e-10 of the signal's peak; here about 2e-12); it is not bit-identical to it, so only blocks of at least
//! [`MIN_LEN`] samples (recordings, never live blocks) take this path.

use biquad::DirectForm2Transposed;

use super::design::Section;

/// Blocks at least this long use the kernel.
pub const MIN_LEN: usize = 1 << 16;

const GROUP: usize = 4;
const W: usize = 2 * GROUP;

/// A section with its numerator divided by b0.
#[derive(Debug, Clone, Copy)]
struct Norm {
    beta1: f64,
    beta2: f64,
    a1: f64,
    a2: f64,
}

/// Eight lanes: lanes 0–3 are a group's sections on the first half, 4–7 on the second.
#[derive(Debug, Clone, Copy)]
struct Lanes8 {
    beta1: [f64; W],
    beta2: [f64; W],
    a1: [f64; W],
    a2: [f64; W],
    s1: [f64; W],
    s2: [f64; W],
}

impl Lanes8 {
    #[inline]
    fn lane(&mut self, k: usize, inp: f64) -> f64 {
        let y = inp + self.s1[k];
        self.s1[k] = (self.beta1[k] * inp + self.s2[k]) - self.a1[k] * y;
        self.s2[k] = self.beta2[k] * inp - self.a2[k] * y;
        y
    }

    /// A step where only lanes holding a real sample advance (the pipeline's fill and drain).
    fn step_masked(&mut self, t: usize, n: usize, x: [f64; 2], carry: &[f64; W]) -> [f64; W] {
        let mut out = *carry;
        for (half, &x_in) in x.iter().enumerate() {
            for j in 0..GROUP {
                let k = half * GROUP + j;
                if t >= j && t - j < n {
                    let inp = if j == 0 { x_in } else { carry[k - 1] };
                    out[k] = self.lane(k, inp);
                }
            }
        }
        out
    }

    /// Filters `a` and `b` (equal lengths) in place, each through the group's sections, and
    /// scales what leaves the last lane by `gain`.
    fn run(&mut self, a: &mut [f64], b: &mut [f64], gain: f64) {
        let n = a.len();
        debug_assert_eq!(n, b.len());
        let lag = GROUP - 1;
        let mut c = [0.0; W];
        for t in 0..lag.min(n) {
            c = self.step_masked(t, n, [a[t], b[t]], &c);
        }
        let (beta1, beta2, a1, a2) = (self.beta1, self.beta2, self.a1, self.a2);
        let (mut s1, mut s2) = (self.s1, self.s2);
        for t in lag..n {
            let inp = [a[t], c[0], c[1], c[2], b[t], c[4], c[5], c[6]];
            let mut out = [0.0; W];
            for k in 0..W {
                out[k] = inp[k] + s1[k];
                s1[k] = (beta1[k] * inp[k] + s2[k]) - a1[k] * out[k];
                s2[k] = beta2[k] * inp[k] - a2[k] * out[k];
            }
            a[t - lag] = out[GROUP - 1] * gain;
            b[t - lag] = out[W - 1] * gain;
            c = out;
        }
        self.s1 = s1;
        self.s2 = s2;
        for t in n.max(lag)..n + lag {
            c = self.step_masked(t, n, [0.0, 0.0], &c);
            if t >= lag {
                a[t - lag] = c[GROUP - 1] * gain;
                b[t - lag] = c[W - 1] * gain;
            }
        }
    }
}

/// Filters `x` in place through `design`, starting from and updating `state`. Returns false (and
/// leaves everything untouched) when the block is short or a section has b0 = 0; the caller then
/// filters sample by sample.
pub fn run(design: &[Section], state: &mut [DirectForm2Transposed<f64>], x: &mut [f64]) -> bool {
    let n = x.len();
    if n < MIN_LEN || design.is_empty() || design.len() != state.len() {
        return false;
    }
    let Some((norm, cum)) = normalise(design) else {
        return false;
    };
    let total = cum[cum.len() - 1];
    let half = n / 2;
    let (first, rest) = x.split_at_mut(half);
    let (second, tail) = rest.split_at_mut(half);
    // States in the normalised cascade: each section's output is divided by the gain so far.
    let mut mid: Vec<[f64; 2]> = state
        .iter()
        .zip(&cum)
        .map(|(st, g)| [st.s1 / g, st.s2 / g])
        .collect();
    let mut zs_end = vec![[0.0; 2]; design.len()];
    for (gi, group) in norm.chunks(GROUP).enumerate() {
        let mut l = Lanes8 {
            beta1: [0.0; W],
            beta2: [0.0; W],
            a1: [0.0; W],
            a2: [0.0; W],
            s1: [0.0; W],
            s2: [0.0; W],
        };
        for (j, s) in group.iter().enumerate() {
            let k = gi * GROUP + j;
            for h in [j, GROUP + j] {
                l.beta1[h] = s.beta1;
                l.beta2[h] = s.beta2;
                l.a1[h] = s.a1;
                l.a2[h] = s.a2;
            }
            l.s1[j] = mid[k][0];
            l.s2[j] = mid[k][1];
        }
        // Lanes past the last section stay identities: y = x, states 0. The last group puts the
        // cascade's gain back on the way out.
        let last = (gi + 1) * GROUP >= norm.len();
        l.run(first, second, if last { total } else { 1.0 });
        for j in 0..group.len() {
            let k = gi * GROUP + j;
            mid[k] = [l.s1[j], l.s2[j]];
            zs_end[k] = [l.s1[GROUP + j], l.s2[GROUP + j]];
        }
    }
    // The zero-input response from the state at the cut, added to the second half.
    let scale = mid
        .iter()
        .flat_map(|s| s.iter())
        .fold(0.0_f64, |m, v| m.max(v.abs()));
    let mut z = mid;
    if scale > 0.0 {
        let floor = 1e-17 * scale;
        for (i, out) in second.iter_mut().enumerate() {
            let mut v = 0.0;
            for (zk, s) in z.iter_mut().zip(&norm) {
                let y = v + zk[0];
                zk[0] = (s.beta1 * v + zk[1]) - s.a1 * y;
                zk[1] = s.beta2 * v - s.a2 * y;
                v = y;
            }
            *out += v * total;
            if i % 256 == 255
                && z.iter()
                    .all(|zk| zk[0].abs() < floor && zk[1].abs() < floor)
            {
                break;
            }
        }
    }
    for ((st, g), (zs, zi)) in state.iter_mut().zip(&cum).zip(zs_end.iter().zip(&z)) {
        st.s1 = (zs[0] + zi[0]) * g;
        st.s2 = (zs[1] + zi[1]) * g;
    }
    // An odd last sample, sample by sample from the state now held.
    use biquad::Biquad;
    for v in tail {
        *v = state.iter_mut().fold(*v, |u, s| s.run(u));
    }
    true
}

/// Each section divided by its b0, and the gain of the cascade up to and including each
/// section; `None` when a b0 is zero or a gain leaves the finite numbers.
fn normalise(design: &[Section]) -> Option<(Vec<Norm>, Vec<f64>)> {
    let mut norm = Vec::with_capacity(design.len());
    let mut cum = Vec::with_capacity(design.len());
    let mut g = 1.0;
    for s in design {
        if s.b0 == 0.0 || !s.b0.is_finite() {
            return None;
        }
        g *= s.b0;
        if !(g.is_finite() && g != 0.0) {
            return None;
        }
        norm.push(Norm {
            beta1: s.b1 / s.b0,
            beta2: s.b2 / s.b0,
            a1: s.a1,
            a2: s.a2,
        });
        cum.push(g);
    }
    Some((norm, cum))
}

#[cfg(test)]
mod tests {
    use super::*;
    use biquad::{Biquad, Coefficients};

    fn chain() -> Vec<Section> {
        use crate::dsp::design;
        let fs = 1000.0;
        let mut s = design::butterworth_highpass(3, 0.5, fs).unwrap();
        s.extend(design::mains_notches(60.0, 30.0, 2, fs).unwrap());
        s.extend(design::butterworth_lowpass(5, 40.0, fs).unwrap());
        s.push(Section::gain(1.7));
        s
    }

    fn states(design: &[Section]) -> Vec<DirectForm2Transposed<f64>> {
        design
            .iter()
            .map(|s| {
                DirectForm2Transposed::<f64>::new(Coefficients {
                    a1: s.a1,
                    a2: s.a2,
                    b0: s.b0,
                    b1: s.b1,
                    b2: s.b2,
                })
            })
            .collect()
    }

    #[test]
    fn halves_equal_sample_by_sample_filtering_to_rounding() {
        let design = chain();
        assert!(design.len() > GROUP, "more than one group is exercised");
        for n in [MIN_LEN, MIN_LEN + 1, 200_001] {
            let x: Vec<f64> = (0..n)
                .map(|i| {
                    let t = i as f64 / 1000.0;
                    800.0
                        + 1000.0 * (7.5 * t).sin()
                        + 200.0 * (377.0 * t).sin()
                        + ((i * 7919) % 101) as f64
                })
                .collect();
            // Start from a non-rest state: a warm-up block first, both ways.
            let warm: Vec<f64> = (0..5000).map(|i| 500.0 + (i % 13) as f64).collect();
            let mut a_state = states(&design);
            for &v in &warm {
                a_state.iter_mut().fold(v, |u, s| s.run(u));
            }
            let mut b_state = a_state.clone();
            let want: Vec<f64> = x
                .iter()
                .map(|&v| a_state.iter_mut().fold(v, |u, s| s.run(u)))
                .collect();
            let mut got = x.clone();
            assert!(run(&design, &mut b_state, &mut got));
            let peak = want.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
            let err = want
                .iter()
                .zip(&got)
                .fold(0.0_f64, |m, (a, b)| m.max((a - b).abs()));
            assert!(err < 1e-10 * peak, "n {n}: error {err} of peak {peak}");
            // The state carried on is the true one too.
            for (a, b) in a_state.iter().zip(&b_state) {
                assert!(
                    (a.s1 - b.s1).abs() <= 1e-9 * (1.0 + a.s1.abs()),
                    "{} {}",
                    a.s1,
                    b.s1
                );
                assert!(
                    (a.s2 - b.s2).abs() <= 1e-9 * (1.0 + a.s2.abs()),
                    "{} {}",
                    a.s2,
                    b.s2
                );
            }
        }
    }

    #[test]
    fn short_blocks_and_zero_b0_are_left_to_the_caller() {
        let design = chain();
        let mut st = states(&design);
        let mut x = vec![1.0; MIN_LEN - 1];
        assert!(!run(&design, &mut st, &mut x));
        assert!(x.iter().all(|&v| v == 1.0));
        let mut z = design.clone();
        z[0].b0 = 0.0;
        let mut x = vec![1.0; MIN_LEN];
        assert!(!run(&z, &mut states(&z), &mut x));
    }
}
