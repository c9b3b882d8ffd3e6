//! Passes over a whole recording: one causal pass, and the forward–backward (zero-phase) pass.

use biquad::Biquad;

use super::design::Section;
use super::kernel::Cascade;

/// A record too short for forward–backward filtering with edge padding.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("zero-phase filtering needs more than {padlen} samples; the record has {len}")]
pub struct TooShort {
    pub len: usize,
    pub padlen: usize,
}

/// Filters `x` in place with a fresh cascade (zero initial state), one pass, on the block
/// kernels.
pub fn filter_once(sections: &[Section], x: &mut [f64]) {
    let mut c = Cascade::new(sections, 0.0);
    c.sections.iter_mut().for_each(|s| s.reset_state());
    c.process_block(x);
}

/// Filters `x` in place, one pass, starting in the steady state of its first sample, so a DC
/// offset in a recording does not ring through the high-pass at the start. Runs on the block
/// kernels (`leadline filter`).
pub fn filter_settled(sections: &[Section], x: &mut [f64]) {
    let Some(&first) = x.first() else { return };
    Cascade::new(sections, first).process_block(x);
}

/// Edge padding used by [`zero_phase`]: 3 × (2·sections + 1 − trailing zero taps), as
/// scipy.signal.sosfiltfilt computes it by default.
pub fn zero_phase_padlen(sections: &[Section]) -> usize {
    let b2_zero = sections.iter().filter(|s| s.b2 == 0.0).count();
    let a2_zero = sections.iter().filter(|s| s.a2 == 0.0).count();
    3 * (2 * sections.len() + 1 - b2_zero.min(a2_zero))
}

/// Forward–backward (zero-phase) filtering of a recorded signal: odd extension at both ends,
/// each pass started in the steady state of its first sample. The magnitude response is |H|², the
/// phase is zero. Same definition as scipy.signal.sosfiltfilt with its defaults.
///
/// # Errors
/// [`TooShort`] when `x` is not longer than the padding.
pub fn zero_phase(sections: &[Section], x: &[f64]) -> Result<Vec<f64>, TooShort> {
    let padlen = zero_phase_padlen(sections);
    let n = x.len();
    if n <= padlen {
        return Err(TooShort { len: n, padlen });
    }
    let mut ext = Vec::with_capacity(n + 2 * padlen);
    ext.extend((1..=padlen).rev().map(|i| 2.0 * x[0] - x[i]));
    ext.extend_from_slice(x);
    ext.extend((1..=padlen).map(|i| 2.0 * x[n - 1] - x[n - 1 - i]));
    Cascade::new(sections, ext[0]).process_block(&mut ext);
    ext.reverse();
    Cascade::new(sections, ext[0]).process_block(&mut ext);
    ext.reverse();
    Ok(ext[padlen..padlen + n].to_vec())
}
