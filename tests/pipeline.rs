//! The headless pipeline: every sample arrives once, in order, and shutdown is prompt.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::sync::Arc;
use std::time::{Duration, Instant};

use leadline::msg::Control;
use leadline::pipeline::{Pipeline, PipelineConfig};
use leadline::source::{Pacing, SourceSpec, SynthSettings};

#[test]
fn headless_run_delivers_exactly_fs_times_n_frames_in_order() {
    for (fs, channels, seconds) in [(500.0, 1, 20.0), (2000.0, 8, 5.0), (125.0, 3, 7.3)] {
        let mut p = Pipeline::start(
            PipelineConfig {
                source: SourceSpec::Synth(SynthSettings {
                    fs_hz: fs,
                    channels,
                    ..SynthSettings::default()
                }),
                pacing: Pacing::Unpaced,
                limit_s: Some(seconds),
                record: true,
                ..PipelineConfig::default()
            },
            Arc::new(|| {}),
        )
        .unwrap();
        let rx = p.take_records().unwrap();
        let mut next = 0u64;
        for block in rx.iter() {
            assert_eq!(block.first_sample, next, "blocks in order with no gap");
            assert_eq!(block.channels, channels);
            assert_eq!(block.raw_uv.len(), block.filtered_uv.len());
            assert!(block.filtered_uv.iter().all(|v| v.is_finite()));
            next += (block.raw_uv.len() / channels) as u64;
        }
        let want = (fs * seconds).round() as u64;
        assert_eq!(next, want, "fs {fs} × {seconds} s");
        // The last snapshot says the source ended and counts every frame, none lost.
        let last = p.snapshots().try_iter().last().expect("a final snapshot");
        assert!(last.source_done);
        assert_eq!(last.stats.frames, want);
        assert_eq!(last.stats.frames_lost, 0);
        assert_eq!(last.traces.len(), channels);
    }
}

#[test]
fn real_time_pipeline_paces_and_shuts_down_within_a_second() {
    let mut p = Pipeline::start(PipelineConfig::default(), Arc::new(|| {})).unwrap();
    let t0 = Instant::now();
    let mut last = None;
    while t0.elapsed() < Duration::from_millis(1500) {
        if let Ok(s) = p.snapshots().recv_timeout(Duration::from_millis(200)) {
            last = Some(s);
        }
    }
    let s = last.expect("snapshots arrive in real time");
    // 1.5 s at 500 Hz is ~750 frames: real-time pacing, not a flood.
    assert!(
        (500..=800).contains(&s.stats.frames),
        "{} frames after 1.5 s",
        s.stats.frames
    );
    p.control(Control::Window(2.0));
    let t = Instant::now();
    p.shutdown();
    assert!(
        t.elapsed() < Duration::from_secs(1),
        "shutdown took {:?}",
        t.elapsed()
    );
    assert!(p.is_finished());
}

#[test]
fn a_chain_sent_while_running_is_applied_and_a_bad_one_reported() {
    let p = Pipeline::start(PipelineConfig::default(), Arc::new(|| {})).unwrap();
    let mut chain = leadline::dsp::ChainSettings::default();
    chain.lowpass.corner_hz = 25.0;
    p.control(Control::Chain(chain));
    let mut bad = chain;
    bad.lowpass.corner_hz = 300.0;
    let deadline = Instant::now() + Duration::from_secs(5);
    let mut seen_good = false;
    while Instant::now() < deadline {
        if let Ok(s) = p.snapshots().recv_timeout(Duration::from_millis(200)) {
            if !seen_good && s.chain.lowpass.corner_hz == 25.0 {
                seen_good = true;
                p.control(Control::Chain(bad));
            }
            if seen_good && let Some(e) = s.chain_error {
                assert!(e.contains("Nyquist"), "{e}");
                assert_eq!(
                    s.chain.lowpass.corner_hz, 25.0,
                    "the good chain keeps running"
                );
                return;
            }
        }
    }
    panic!("chain change not seen (good chain seen: {seen_good})");
}
