//! The DSP thread's body: a short loop around [`Dsp`].

use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use crossbeam_channel::RecvTimeoutError;

use super::{Dsp, DspConfig, DspPorts, Notify};
use crate::chan::{offer_newest, send_blocking};
use crate::msg::{Snapshot, Stats};

/// Runs until `stop` is set or the source hangs up (then a last snapshot marks the end).
pub fn run(cfg: DspConfig, ports: DspPorts, stop: &AtomicBool, notify: Notify) {
    let mut dsp = Dsp::new(cfg);
    loop {
        if stop.load(Ordering::Relaxed) {
            return;
        }
        while let Ok(c) = ports.control_rx.try_recv() {
            dsp.apply(c);
        }
        match ports.raw_rx.recv_timeout(Duration::from_millis(20)) {
            Ok(block) => {
                let rec = dsp.push(block);
                if let (Some(tx), Some(rec)) = (&ports.record_tx, rec)
                    && !send_blocking(tx, rec, stop)
                {
                    return;
                }
            }
            Err(RecvTimeoutError::Timeout) => {}
            Err(RecvTimeoutError::Disconnected) => {
                if let Some(snap) = dsp.snapshot(Instant::now(), true) {
                    offer(&ports, snap, &mut dsp.stats);
                    notify();
                }
                return;
            }
        }
        let now = Instant::now();
        // The display path is paced by the GUI: a snapshot is made only once the previous one
        // was taken, so none is built to be thrown away (the window drew too slowly for it)
        // and none is dropped. Data never wait on this: blocks keep flowing to the recorder.
        if dsp.due(now)
            && ports.snapshot_tx.is_empty()
            && let Some(snap) = dsp.snapshot(now, false)
        {
            offer(&ports, snap, &mut dsp.stats);
            notify();
        }
    }
}

/// Display path policy: never wait for the GUI; when it has not taken the previous snapshot,
/// drop that one (counted) and offer the new one.
fn offer(ports: &DspPorts, snap: Snapshot, stats: &mut Stats) {
    offer_newest(&ports.snapshot_tx, &ports.snapshot_drain, snap, |s| {
        stats.snapshots_dropped += 1;
        s.stats.snapshots_dropped = stats.snapshots_dropped;
    });
}
