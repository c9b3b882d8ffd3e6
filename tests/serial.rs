//! End to end through a real pseudo-terminal pair: the serial source, both wire formats, and a
//! device that goes away and comes back. The pair ignores the baud rate, so the writers pace
//! themselves in real time.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

mod common;

use std::io::Write;
use std::sync::Arc;
use std::time::{Duration, Instant};

use leadline::msg::RecordBlock;
use leadline::pipeline::{Pipeline, PipelineConfig};
use leadline::scale::InputScale;
use leadline::source::serial::SerialSpec;
use leadline::source::{Pacing, SourceSpec};
use leadline::wire::{Format, ascii, binary};
use serialport::{SerialPort, TTYPort};

/// Seconds of streaming in the long tests (the requirement is 60).
const LONG_S: u64 = 60;

fn pipeline_on(path: &str, baud: u32, fs: f64, format: Format) -> Pipeline {
    Pipeline::start(
        PipelineConfig {
            source: SourceSpec::Serial(SerialSpec {
                path: path.to_string(),
                baud,
                format: Some(format),
                fs_hz: Some(fs),
                scale: InputScale::default(),
                physical_to_uv: 1e3,
            }),
            pacing: Pacing::RealTime,
            record: true,
            display_hz: 5.0,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )
    .unwrap()
}

/// Writes `frames` frames, `chunk` at a time, at `fs` frames per second.
fn paced_writer(
    mut port: TTYPort,
    frames: usize,
    chunk: usize,
    fs: f64,
    encode: impl Fn(usize, &mut Vec<u8>) + Send + 'static,
) -> std::thread::JoinHandle<TTYPort> {
    std::thread::Builder::new()
        .name("test-writer".into())
        .spawn(move || {
            port.set_timeout(Duration::from_millis(200)).unwrap();
            let start = Instant::now();
            let mut bytes = Vec::new();
            let mut k = 0;
            while k < frames {
                let due = start + Duration::from_secs_f64(k as f64 / fs);
                if let Some(w) = due.checked_duration_since(Instant::now()) {
                    std::thread::sleep(w);
                }
                bytes.clear();
                for f in k..(k + chunk).min(frames) {
                    encode(f, &mut bytes);
                }
                port.write_all(&bytes).unwrap();
                k += chunk;
            }
            port.flush().unwrap();
            port
        })
        .unwrap()
}

fn value(frame: usize, ch: usize) -> i32 {
    common::pattern(frame as u64, ch)
}

fn collect(
    rx: &crossbeam_channel::Receiver<RecordBlock>,
    want: usize,
    channels: usize,
    timeout: Duration,
) -> Vec<f64> {
    let mut got = Vec::new();
    let deadline = Instant::now() + timeout;
    while got.len() < want * channels && Instant::now() < deadline {
        if let Ok(b) = rx.recv_timeout(Duration::from_millis(200)) {
            got.extend_from_slice(&b.received);
        }
    }
    got
}

#[test]
fn binary_4_channels_at_1000_hz_for_60_s_arrive_unaltered() {
    let (master, slave) = TTYPort::pair().unwrap();
    let path = slave.name().unwrap();
    let fs = 1000.0;
    let frames = (LONG_S as f64 * fs) as usize;
    let mut p = pipeline_on(&path, 921_600, fs, Format::Binary);
    let rx = p.take_records().unwrap();
    // 921 600 baud carries 92 160 bytes/s; 4 × i16 frames are 16 bytes: 16 000 bytes/s.
    let w = paced_writer(master, frames, 10, fs, |f, out| {
        let s: Vec<i32> = (0..4).map(|c| value(f, c)).collect();
        binary::encode(f as u16, &s, binary::FORMAT_I16, out);
    });
    let got = collect(&rx, frames, 4, Duration::from_secs(LONG_S + 20));
    let _master = w.join().unwrap();
    assert_eq!(got.len(), frames * 4, "samples received");
    for (i, v) in got.iter().enumerate() {
        assert_eq!(
            *v as i32,
            value(i / 4, i % 4),
            "frame {} channel {}",
            i / 4,
            i % 4
        );
    }
    let snap = p.latest_snapshot();
    let status = p.serial_status().unwrap();
    assert_eq!(status.wire.lost_frames, 0);
    assert_eq!(status.wire.bad_crc, 0);
    if let Some(s) = snap {
        assert_eq!(s.stats.frames_lost, 0);
    }
    drop(slave);
}

#[test]
fn text_1_channel_at_500_hz_for_60_s_at_115200_baud() {
    let (master, slave) = TTYPort::pair().unwrap();
    let path = slave.name().unwrap();
    let fs = 500.0;
    let frames = (LONG_S as f64 * fs) as usize;
    let mut p = pipeline_on(&path, 115_200, fs, Format::Text);
    let rx = p.take_records().unwrap();
    // "NNNN\n" is at most 5 bytes: 2 500 bytes/s of 11 520.
    let w = paced_writer(master, frames, 5, fs, |f, out| {
        let mut s = String::new();
        ascii::encode_frames(&[value(f, 0) as f64], 1, &mut s);
        out.extend_from_slice(s.as_bytes());
    });
    let got = collect(&rx, frames, 1, Duration::from_secs(LONG_S + 20));
    let _master = w.join().unwrap();
    assert_eq!(got.len(), frames);
    for (i, v) in got.iter().enumerate() {
        assert_eq!(*v as i32, value(i, 0), "frame {i}");
    }
    assert_eq!(p.serial_status().unwrap().wire.malformed_lines, 0);
    drop(slave);
}

#[test]
fn device_closed_and_reopened_mid_stream_leaves_a_gap_mark() {
    // The source opens a fixed path; the "device" behind it is replaced, as when a board is
    // unplugged and plugged in again.
    let dir = std::env::temp_dir().join(format!("leadline-serial-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let link = dir.join("board");
    let fs = 500.0;
    let (m1, s1) = TTYPort::pair().unwrap();
    let _ = std::fs::remove_file(&link);
    std::os::unix::fs::symlink(s1.name().unwrap(), &link).unwrap();
    let mut p = pipeline_on(link.to_str().unwrap(), 115_200, fs, Format::Text);
    let rx = p.take_records().unwrap();
    let line = |f: usize, out: &mut Vec<u8>| {
        out.extend_from_slice(format!("{}\n", 100 + f % 50).as_bytes())
    };
    let w = paced_writer(m1, 1000, 5, fs, line);
    let first = collect(&rx, 1000, 1, Duration::from_secs(10));
    assert_eq!(first.len(), 1000);
    // Unplug: both ends of the first pair go away.
    drop(w.join().unwrap());
    drop(s1);
    std::thread::sleep(Duration::from_millis(300));
    // Plug in again: a new device at the same path.
    let (m2, s2) = TTYPort::pair().unwrap();
    std::fs::remove_file(&link).unwrap();
    std::os::unix::fs::symlink(s2.name().unwrap(), &link).unwrap();
    let w2 = paced_writer(m2, 1000, 5, fs, line);
    let mut gap_seen = false;
    let mut second = 0;
    let deadline = Instant::now() + Duration::from_secs(15);
    while second < 1000 && Instant::now() < deadline {
        if let Ok(b) = rx.recv_timeout(Duration::from_millis(200)) {
            gap_seen |= b.gap_before;
            second += b.received.len();
        }
    }
    drop(w2.join().unwrap());
    assert!(
        gap_seen,
        "the block after the reconnection is marked as a gap"
    );
    assert!(second >= 900, "{second} samples after reconnecting");
    let st = p.serial_status().unwrap();
    // (Whether it is connected now depends on the writer having finished: not asserted.)
    assert!(st.reconnects >= 1, "{st:?}");
    p.shutdown();
    drop(s2);
}

#[test]
fn a_jittery_ten_bit_text_stream_at_250_hz_is_timed_and_scaled() {
    // The first contact: a 10-bit, 5 V board printing one integer per line with `\r\n`, no rate
    // line, about 250 Hz with loop-timing jitter, behind a gain of 1000.
    let (master, slave) = TTYPort::pair().unwrap();
    let path = slave.name().unwrap();
    let fs = 250.0;
    let board = leadline::scale::FrontEnd::counts(InputScale::new(10, 5.0, 1000.0).unwrap());
    let mut p = Pipeline::start(
        PipelineConfig {
            source: SourceSpec::Serial(SerialSpec {
                path: path.clone(),
                baud: 115_200,
                format: None,
                fs_hz: None,
                scale: InputScale::default(),
                physical_to_uv: 1e3,
            }),
            front_end: Some(vec![board]),
            pacing: Pacing::RealTime,
            record: true,
            display_hz: 5.0,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )
    .unwrap();
    let rx = p.take_records().unwrap();
    let seconds = 6.0;
    let frames = (seconds * fs) as usize;
    let mut port = master;
    let writer = std::thread::Builder::new()
        .name("test-jittery-board".into())
        .spawn(move || {
            port.set_timeout(Duration::from_millis(200)).unwrap();
            let start = Instant::now();
            // Fixed-seed jitter: each line is due at k/fs plus 0–3 ms, as a loop with uneven
            // work between analogRead calls would send it.
            let mut seed = 12_345u64;
            for k in 0..frames {
                seed = seed.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
                let jitter = (seed >> 33) as f64 / (1u64 << 31) as f64 * 3e-3;
                let due = start + Duration::from_secs_f64(k as f64 / fs + jitter);
                if let Some(w) = due.checked_duration_since(Instant::now()) {
                    std::thread::sleep(w);
                }
                // 717 counts = 1000.977 µV at the electrodes (by hand: 205 × 4.8828125 µV).
                let v = if k.is_multiple_of(2) { 717 } else { 512 };
                port.write_all(format!("{v}\r\n").as_bytes()).unwrap();
            }
            port.flush().unwrap();
            port
        })
        .unwrap();
    let mut uv = Vec::new();
    let deadline = Instant::now() + Duration::from_secs_f64(seconds + 10.0);
    while Instant::now() < deadline && !writer.is_finished() {
        if let Ok(b) = rx.recv_timeout(Duration::from_millis(100)) {
            uv.extend_from_slice(&b.raw_uv);
        }
    }
    let _master = writer.join().unwrap();
    let st = p.serial_status().unwrap();
    assert!(st.estimated, "the rate was estimated");
    let est = st.fs_hz.unwrap();
    println!("estimated {est:.3} Hz ± {:.3} Hz", st.spread_hz);
    assert!((est - fs).abs() <= 0.5, "estimated {est} Hz");
    assert!(st.spread_hz <= 1.0, "spread ±{} Hz", st.spread_hz);
    // Scaled by the board's front end, not the demo board's.
    assert!(uv.len() > 500, "{} samples", uv.len());
    let high = uv.iter().copied().fold(f64::MIN, f64::max);
    assert!((high - 1_000.976_562_5).abs() < 1e-6, "{high} µV");
    assert!(uv.iter().all(|v| *v == 0.0 || (*v - high).abs() < 1e-9));
    drop(slave);
}
