//! Datagrams arrive out of order, twice, or not at all. [`Reorder`] puts binary frames back in
//! sequence order: a frame that arrives early waits (at most the window, 50 ms by default) for
//! the ones before it; when the window runs out the missing ones are declared lost and marked as
//! a gap on the next frame (`lost_before`); a frame already delivered again is a duplicate; a
//! frame arriving after it was declared lost is late. Both are dropped and counted. Pure: the
//! caller passes the arrival time.
//!
//! The 16-bit sequence counter wraps; a frame is placed by its distance from the next expected
//! one (−32768…32767 frames).

use std::collections::{BTreeMap, VecDeque};
use std::time::{Duration, Instant};

use super::Frame;

/// What reordering has counted. All are totals.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct ReorderStats {
    /// Frames delivered in order.
    pub delivered: u64,
    /// Frames that never arrived within the window.
    pub lost: u64,
    /// Frames that arrived again after being delivered (or while waiting).
    pub duplicate: u64,
    /// Frames that arrived after they were declared lost.
    pub late: u64,
    /// Frames put back in order (they arrived before one with a lower number).
    pub reordered: u64,
}

/// How many recent sequence numbers are remembered to tell a duplicate from a late frame.
const MEMORY: usize = 4096;
/// Most frames held while waiting (a burst larger than this is released as it is).
const MAX_HELD: usize = 8192;

/// The reordering buffer.
#[derive(Debug, Clone)]
pub struct Reorder {
    window: Duration,
    /// Unwrapped number of the next frame to deliver, once the first frame has arrived.
    next: Option<u64>,
    held: BTreeMap<u64, (Frame, Instant)>,
    /// Recently delivered (true) or declared lost (false) numbers, oldest first.
    recent: VecDeque<(u64, bool)>,
    stats: ReorderStats,
}

impl Reorder {
    /// A buffer that waits at most `window` for a missing frame.
    pub fn new(window: Duration) -> Self {
        Self {
            window,
            next: None,
            held: BTreeMap::new(),
            recent: VecDeque::with_capacity(MEMORY),
            stats: ReorderStats::default(),
        }
    }

    /// Counters so far.
    pub fn stats(&self) -> ReorderStats {
        self.stats
    }

    fn remember(&mut self, n: u64, delivered: bool) {
        if self.recent.len() == MEMORY {
            self.recent.pop_front();
        }
        self.recent.push_back((n, delivered));
    }

    /// One frame (with its sequence number) that arrived at `now`; frames now in order are
    /// appended to `out`.
    pub fn push(&mut self, frame: Frame, now: Instant, out: &mut Vec<Frame>) {
        let Some(seq) = frame.seq else {
            // Nothing to order by: pass it on.
            out.push(frame);
            return;
        };
        let next = *self.next.get_or_insert(u64::from(seq) + (1 << 32));
        let delta = i64::from(seq.wrapping_sub((next & 0xFFFF) as u16) as i16);
        let n = next as i64 + delta;
        if n < next as i64 {
            let n = n as u64;
            match self.recent.iter().rev().find(|r| r.0 == n) {
                Some((_, true)) | None => self.stats.duplicate += 1,
                Some((_, false)) => self.stats.late += 1,
            }
            return;
        }
        let n = n as u64;
        if self.held.contains_key(&n) {
            self.stats.duplicate += 1;
            return;
        }
        if n > next {
            self.stats.reordered += 1;
        }
        self.held.insert(n, (frame, now));
        self.release(now, out);
    }

    /// Releases what is in order, and what has waited longer than the window (declaring the
    /// frames before it lost). Call it now and then even when nothing arrives.
    pub fn release(&mut self, now: Instant, out: &mut Vec<Frame>) {
        let Some(mut next) = self.next else { return };
        while let Some((&first, (_, since))) = self.held.iter().next() {
            let waited = now.saturating_duration_since(*since);
            if first != next && waited < self.window && self.held.len() < MAX_HELD {
                break;
            }
            let Some((frame_no, (mut frame, _))) = self.held.pop_first() else {
                break;
            };
            let lost = frame_no - next;
            for k in next..frame_no {
                self.remember(k, false);
            }
            self.stats.lost += lost;
            frame.lost_before = lost;
            self.remember(frame_no, true);
            self.stats.delivered += 1;
            out.push(frame);
            next = frame_no + 1;
        }
        self.next = Some(next);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::wire::Values;

    fn f(seq: u16) -> Frame {
        Frame {
            samples: vec![f64::from(seq)],
            values: Values::Counts,
            lost_before: 0,
            seq: Some(seq),
        }
    }

    #[test]
    fn out_of_order_lost_duplicate_and_late_across_the_wrap() {
        let w = Duration::from_millis(50);
        let mut r = Reorder::new(w);
        let t0 = Instant::now();
        let mut out = Vec::new();
        // 65534, 65535, then 1 before 0 (across the wrap), 0 twice, 2, then 4 (3 missing).
        for s in [65534u16, 65535, 1, 0, 0, 2, 4] {
            r.push(f(s), t0, &mut out);
        }
        let got: Vec<f64> = out.iter().map(|x| x.samples[0]).collect();
        assert_eq!(got, vec![65534.0, 65535.0, 0.0, 1.0, 2.0]);
        assert_eq!(r.stats().duplicate, 1);
        assert_eq!(r.stats().reordered, 2);
        // 4 waits for 3 until the window has passed; then 3 is lost.
        r.release(t0 + Duration::from_millis(20), &mut out);
        assert_eq!(out.len(), 5);
        r.release(t0 + Duration::from_millis(60), &mut out);
        assert_eq!(out.len(), 6);
        assert_eq!(out[5].samples[0], 4.0);
        assert_eq!(out[5].lost_before, 1);
        assert_eq!(r.stats().lost, 1);
        // 3 arrives after all: late. 4 again: duplicate.
        r.push(f(3), t0 + Duration::from_millis(70), &mut out);
        r.push(f(4), t0 + Duration::from_millis(70), &mut out);
        assert_eq!(r.stats().late, 1);
        assert_eq!(r.stats().duplicate, 2);
        assert_eq!(out.len(), 6);
    }
}
