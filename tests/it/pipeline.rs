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
                // The snapshot carries the sections that run: the good chain's.
                assert_eq!(*s.design, chain.design(s.fs_hz).unwrap());
                return;
            }
        }
    }
    panic!("chain change not seen (good chain seen: {seen_good})");
}

#[test]
fn replay_streams_a_file_at_real_time_pace_and_seeks_with_a_gap_mark() {
    use leadline::source::replay::{ReplayCommand, ReplaySpec};
    // A 4 s, 250 Hz CSV made by our own simulator.
    let dir = std::env::temp_dir().join(format!("leadline-replay-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("rec.csv");
    let cli = <leadline::cli::Cli as clap::Parser>::parse_from([
        "leadline",
        "simulate",
        "--fs",
        "250",
        "--seconds",
        "4",
        "--channels",
        "2",
        "--seed",
        "3",
        "--out",
        path.to_str().unwrap(),
    ]);
    let Some(leadline::cli::Command::Simulate(a)) = cli.command else {
        unreachable!()
    };
    leadline::cli::simulate::run(&a).unwrap();
    let mut p = Pipeline::start(
        PipelineConfig {
            source: SourceSpec::File(ReplaySpec {
                path: path.clone(),
                read: Default::default(),
            }),
            record: true,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )
    .unwrap();
    let rx = p.take_records().unwrap();
    let t0 = Instant::now();
    p.replay(ReplayCommand::Speed(4.0));
    let mut frames = 0;
    let mut gap = false;
    let mut seeked = false;
    while let Ok(b) = rx.recv_timeout(Duration::from_secs(3)) {
        assert_eq!(b.channels, 2);
        frames += b.raw_uv.len() / 2;
        gap |= b.gap_before;
        if !seeked && frames >= 500 {
            // Jump back to 0.4 s (frame 100): about 400 frames are replayed twice.
            p.replay(ReplayCommand::Seek(0.4));
            seeked = true;
        }
    }
    // 1000 frames of the file, plus those replayed after the jump back (a few blocks of slack:
    // the source runs a little ahead of this reader).
    assert!((1350..=1420).contains(&frames), "{frames} frames");
    assert!(gap, "the block after the seek is marked");
    // At ×4, 1400 frames of 250 Hz take about 1.4 s, not the 5.6 s of real time (the channel
    // closes when the file ends).
    let took = t0.elapsed().as_secs_f64();
    assert!(took > 1.0 && took < 4.0, "{took} s");
    let st = p.replay_status().unwrap();
    assert!(st.ended && (st.length_s - 4.0).abs() < 0.01, "{st:?}");
}
