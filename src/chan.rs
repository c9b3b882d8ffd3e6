//! The two ways a thread puts something on a channel. Every thread uses these; this module
//! depends on nothing else in the crate (the pipeline starts the threads and so imports them: the
//! helpers live here, below all of them, so nothing imports in a circle).
//!
//! - [`send_blocking`]: the data path (raw blocks, record blocks) never drops; it waits.
//! - [`offer_newest`]: the display path never waits; an older item not yet taken is dropped.

use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

use crossbeam_channel::{Receiver, SendTimeoutError, Sender, TrySendError};

/// Longest a blocked sender waits before looking at the stop flag again.
const POLL: Duration = Duration::from_millis(20);

/// Sends `item` downstream, waiting while the receiver is busy (this path never drops).
/// Returns false when the pipeline is stopping or the receiver is gone.
pub fn send_blocking<T>(tx: &Sender<T>, mut item: T, stop: &AtomicBool) -> bool {
    loop {
        if stop.load(Ordering::Relaxed) {
            return false;
        }
        match tx.send_timeout(item, POLL) {
            Ok(()) => return true,
            Err(SendTimeoutError::Timeout(back)) => item = back,
            Err(SendTimeoutError::Disconnected(_)) => return false,
        }
    }
}

/// Offers `item` without waiting: when the channel is full, the oldest item is taken back
/// through `drain` (the receiving end's twin) and `dropped` is told, so the caller can count it
/// (and note the count in the item). Returns when the item is queued or nobody listens.
pub fn offer_newest<T>(
    tx: &Sender<T>,
    drain: &Receiver<T>,
    item: T,
    mut dropped: impl FnMut(&mut T),
) {
    let mut item = item;
    loop {
        match tx.try_send(item) {
            Ok(()) => return,
            Err(TrySendError::Full(mut back)) => {
                if drain.try_recv().is_ok() {
                    dropped(&mut back);
                }
                item = back;
            }
            Err(TrySendError::Disconnected(_)) => return,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn offer_keeps_the_newest_and_counts_what_it_dropped() {
        let (tx, rx) = crossbeam_channel::bounded(2);
        let mut dropped = 0;
        for v in 0..5 {
            offer_newest(&tx, &rx, v, |_| dropped += 1);
        }
        assert_eq!(dropped, 3);
        assert_eq!(rx.try_iter().collect::<Vec<_>>(), vec![3, 4]);
    }

    #[test]
    fn send_blocking_gives_up_when_stopping() {
        let (tx, _rx) = crossbeam_channel::bounded(1);
        let stop = AtomicBool::new(false);
        assert!(send_blocking(&tx, 1, &stop));
        stop.store(true, Ordering::Relaxed);
        assert!(!send_blocking(&tx, 2, &stop));
    }
}
