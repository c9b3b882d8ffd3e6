//! The newest samples of a stream, addressed by their index in the stream.

/// A ring of the most recent samples, addressed by absolute index. The size is a power of two
/// so the index arithmetic is a mask, not a division (this runs several times per sample).
#[derive(Debug, Clone)]
pub(super) struct Ring {
    buf: Vec<f64>,
    mask: u64,
    next: u64,
}

impl Ring {
    pub(super) fn new(len: usize) -> Self {
        let n = len.max(1).next_power_of_two();
        Self {
            buf: vec![0.0; n],
            mask: n as u64 - 1,
            next: 0,
        }
    }
    #[inline]
    pub(super) fn push(&mut self, v: f64) {
        self.buf[(self.next & self.mask) as usize] = v;
        self.next += 1;
    }
    #[inline]
    pub(super) fn get(&self, i: u64) -> Option<f64> {
        (i < self.next && i + self.buf.len() as u64 >= self.next)
            .then(|| self.buf[(i & self.mask) as usize])
    }
}
