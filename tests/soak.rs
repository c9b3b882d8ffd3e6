//! Soak: two minutes of 8 channels × 2 kHz through the whole headless pipeline in real time
//! (source → DSP with chain, beats and spectrum → snapshots taken at the display rate, recorder
//! taking every block), asserting that no sample is lost and memory stays flat.

#![allow(clippy::unwrap_used)]

use std::sync::Arc;
use std::time::{Duration, Instant};

use leadline::gui::bench::rss_mb;
use leadline::pipeline::{Pipeline, PipelineConfig};
use leadline::source::{SourceSpec, SynthSettings};

#[test]
fn two_minutes_at_8_by_2_khz_lose_nothing_and_memory_stays_flat() {
    let secs = 120.0;
    let p = Pipeline::start(
        PipelineConfig {
            source: SourceSpec::Synth(SynthSettings {
                fs_hz: 2000.0,
                channels: 8,
                ..SynthSettings::default()
            }),
            window_s: 30.0,
            display_hz: 30.0,
            recorder: true,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )
    .unwrap();
    let start = Instant::now();
    let mut rss_after_warm_up = None;
    let mut peak_rss: f64 = 0.0;
    let mut last = None;
    let mut snapshots = 0u64;
    while start.elapsed().as_secs_f64() < secs {
        if let Ok(s) = p.snapshots().recv_timeout(Duration::from_millis(200)) {
            snapshots += 1;
            last = Some(s);
        }
        let t = start.elapsed().as_secs_f64();
        // Rings and spectra are full after the 30 s window and the first Welch estimates.
        if t > 40.0 && rss_after_warm_up.is_none() {
            rss_after_warm_up = Some(rss_mb());
        }
        if rss_after_warm_up.is_some() {
            peak_rss = peak_rss.max(rss_mb());
        }
    }
    let s = last.unwrap();
    let seen = p.recorder_status().unwrap().seen_frames;
    drop(p);
    let expected = 2000.0 * secs;
    eprintln!(
        "soak: {} frames ({expected} expected), {} snapshots, lost {}, rss {:.1} → peak {peak_rss:.1} MB",
        s.stats.frames,
        snapshots,
        s.stats.frames_lost,
        rss_after_warm_up.unwrap()
    );
    assert_eq!(s.stats.frames_lost, 0);
    assert_eq!(s.stats.gaps, 0);
    // Real-time pacing: within 1 % of the wall clock.
    assert!(
        (s.stats.frames as f64 - expected).abs() < 0.01 * expected,
        "{} frames",
        s.stats.frames
    );
    // The recorder saw every frame the DSP thread processed (up to the blocks in flight).
    assert!(
        s.stats.frames - seen.min(s.stats.frames) < 4000,
        "{seen} vs {}",
        s.stats.frames
    );
    // About the display rate, never more.
    assert!(
        snapshots as f64 > 20.0 * secs && snapshots as f64 <= 31.0 * secs,
        "{snapshots}"
    );
    let growth = peak_rss - rss_after_warm_up.unwrap();
    assert!(
        growth <= 5.0,
        "resident size grew {growth:.1} MB after the warm-up"
    );
}
