//! The per-channel cascade of biquad sections (the `biquad` crate's transposed direct form II in
//! f64) and its block kernel, which runs four sections side by side.

use biquad::{Biquad, Coefficients, DirectForm2Transposed};

use super::design::Section;

pub(crate) fn coeffs(s: &Section) -> Coefficients<f64> {
    Coefficients {
        a1: s.a1,
        a2: s.a2,
        b0: s.b0,
        b1: s.b1,
        b2: s.b2,
    }
}

/// Sections processed side by side by the block kernel (see [`Lanes`]).
const LANES: usize = 4;

/// Four consecutive sections run as a skewed pipeline: at step t, lane k filters sample t − k
/// through section k, so the four lanes are independent within a step and the compiler can use
/// vector instructions for them. Every lane does exactly the arithmetic of the `biquad` crate's
/// `DirectForm2Transposed::run`, in the same order, so the result is bit-identical to filtering
/// sample by sample. Missing sections of the last group are identities (b0 = 1).
#[derive(Debug, Clone, Copy)]
struct Lanes {
    b0: [f64; LANES],
    b1: [f64; LANES],
    b2: [f64; LANES],
    a1: [f64; LANES],
    a2: [f64; LANES],
    s1: [f64; LANES],
    s2: [f64; LANES],
}

impl Lanes {
    fn gather(design: &[Section], state: &[DirectForm2Transposed<f64>]) -> Self {
        let mut l = Lanes {
            b0: [1.0; LANES],
            b1: [0.0; LANES],
            b2: [0.0; LANES],
            a1: [0.0; LANES],
            a2: [0.0; LANES],
            s1: [0.0; LANES],
            s2: [0.0; LANES],
        };
        for (k, (d, st)) in design.iter().zip(state).enumerate() {
            l.b0[k] = d.b0;
            l.b1[k] = d.b1;
            l.b2[k] = d.b2;
            l.a1[k] = d.a1;
            l.a2[k] = d.a2;
            l.s1[k] = st.s1;
            l.s2[k] = st.s2;
        }
        l
    }

    fn scatter(&self, state: &mut [DirectForm2Transposed<f64>]) {
        for (k, st) in state.iter_mut().enumerate() {
            st.s1 = self.s1[k];
            st.s2 = self.s2[k];
        }
    }

    /// One step with only the lanes that hold a real sample (start and end of a block).
    #[inline]
    fn step_masked(&mut self, t: usize, n: usize, x_in: f64, carry: &[f64; LANES]) -> [f64; LANES] {
        let mut out = *carry;
        for k in 0..LANES {
            if t >= k && t - k < n {
                let inp = if k == 0 { x_in } else { carry[k - 1] };
                out[k] = self.s1[k] + self.b0[k] * inp;
                self.s1[k] = self.s2[k] + self.b1[k] * inp - self.a1[k] * out[k];
                self.s2[k] = self.b2[k] * inp - self.a2[k] * out[k];
            }
        }
        out
    }

    /// The full-width body over local arrays: straight-line code the compiler vectorises.
    fn body(&mut self, x: &mut [f64], lag: usize, carry: [f64; LANES]) -> [f64; LANES] {
        let (b0, b1, b2, a1, a2) = (self.b0, self.b1, self.b2, self.a1, self.a2);
        let (mut s1, mut s2, mut c) = (self.s1, self.s2, carry);
        for t in lag..x.len() {
            let inp = [x[t], c[0], c[1], c[2]];
            let mut out = [0.0; LANES];
            for k in 0..LANES {
                out[k] = s1[k] + b0[k] * inp[k];
                s1[k] = s2[k] + b1[k] * inp[k] - a1[k] * out[k];
                s2[k] = b2[k] * inp[k] - a2[k] * out[k];
            }
            x[t - lag] = out[LANES - 1];
            c = out;
        }
        self.s1 = s1;
        self.s2 = s2;
        c
    }

    /// Filters `x` in place through the four lanes: a masked fill, the full-width body, a
    /// masked drain. Output sample t − 3 leaves the last lane at step t.
    fn run(&mut self, x: &mut [f64]) {
        let n = x.len();
        let lag = LANES - 1;
        let mut carry = [0.0; LANES];
        for t in 0..lag {
            let x_in = x.get(t).copied().unwrap_or(0.0);
            carry = self.step_masked(t, n, x_in, &carry);
        }
        if n > lag {
            carry = self.body(x, lag, carry);
        }
        for t in n.max(lag)..n + lag {
            carry = self.step_masked(t, n, 0.0, &carry);
            if t >= lag {
                x[t - lag] = carry[LANES - 1];
            }
        }
    }
}

/// A cascade of sections for one channel.
#[derive(Debug, Clone)]
pub struct Cascade {
    pub(crate) sections: Vec<DirectForm2Transposed<f64>>,
    pub(crate) design: Vec<Section>,
    pub(crate) last_input: f64,
}

impl Cascade {
    pub fn new(design: &[Section], settle_at: f64) -> Self {
        let mut c = Self {
            sections: design
                .iter()
                .map(|s| DirectForm2Transposed::<f64>::new(coeffs(s)))
                .collect(),
            design: design.to_vec(),
            last_input: settle_at,
        };
        c.settle(design, settle_at);
        c
    }

    /// Puts every section in the steady state for a constant input `x`.
    pub(crate) fn settle(&mut self, design: &[Section], mut x: f64) {
        for (st, s) in self.sections.iter_mut().zip(design) {
            let y = s.dc_gain() * x;
            // DF2T steady state: y = b0 x + s1, s1 = b1 x − a1 y + s2, s2 = b2 x − a2 y.
            st.s2 = s.b2 * x - s.a2 * y;
            st.s1 = y - s.b0 * x;
            x = y;
        }
    }

    #[inline]
    pub fn run(&mut self, x: f64) -> f64 {
        self.last_input = x;
        self.sections.iter_mut().fold(x, |v, s| s.run(v))
    }

    /// Blocks shorter than this go sample by sample: the pipeline's fill and drain would dominate.
    const BLOCK_MIN: usize = 2 * LANES;

    /// Filters a block in place; the same output as [`Self::run`] on each sample in turn.
    pub fn process_block(&mut self, x: &mut [f64]) {
        let Some(&last) = x.last() else { return };
        if x.len() < Self::BLOCK_MIN {
            for v in x.iter_mut() {
                *v = self.run(*v);
            }
            return;
        }
        // Recordings: two halves side by side (exact to rounding, see `halves`).
        if super::halves::run(&self.design, &mut self.sections, x) {
            self.last_input = last;
            return;
        }
        for (design, state) in self
            .design
            .chunks(LANES)
            .zip(self.sections.chunks_mut(LANES))
        {
            let mut lanes = Lanes::gather(design, state);
            // Moderate chunks keep the pipeline's loop short and its data in L1.
            for chunk in x.chunks_mut(256) {
                lanes.run(chunk);
            }
            lanes.scatter(state);
        }
        self.last_input = last;
    }

    pub(crate) fn retune(&mut self, design: &[Section]) {
        for (st, s) in self.sections.iter_mut().zip(design) {
            st.update_coefficients(coeffs(s));
        }
        self.design.clear();
        self.design.extend_from_slice(design);
    }
}
