//! Network sources on loopback (127.0.0.1 only, bounded in time): UDP with losses, duplicates,
//! reordering and a foreign sender; TCP with a server that goes away and comes back; bad
//! datagrams; a port in use; `simulate --udp` and `record`'s summary.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

mod common;

use std::net::{SocketAddr, TcpListener, UdpSocket};
use std::sync::Arc;
use std::time::{Duration, Instant};

use leadline::msg::RecordBlock;
use leadline::pipeline::{Pipeline, PipelineConfig};
use leadline::rng::Rng;
use leadline::scale::InputScale;
use leadline::source::{Pacing, SourceSpec};
use leadline::wire::binary;

/// A pipeline listening on a free loopback UDP port, and that port. A port found free can be
/// taken by another test's socket before the pipeline binds it, so it tries again then.
fn udp_pipeline(fs: f64) -> (Pipeline, u16) {
    for _ in 0..20 {
        let port = UdpSocket::bind("127.0.0.1:0")
            .unwrap()
            .local_addr()
            .unwrap()
            .port();
        match start(&format!("udp:127.0.0.1:{port}"), fs) {
            Ok(p) => return (p, port),
            Err(e) if e.to_string().contains("already in use") => continue,
            Err(e) => panic!("{e}"),
        }
    }
    panic!("no free loopback UDP port in 20 tries");
}

fn start(spec: &str, fs: f64) -> Result<Pipeline, leadline::pipeline::PipelineError> {
    Pipeline::start(
        PipelineConfig {
            source: SourceSpec::parse(spec, Some(fs), InputScale::default()).unwrap(),
            pacing: Pacing::RealTime,
            record: true,
            display_hz: 5.0,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )
}

fn value(frame: u64, ch: usize) -> i32 {
    common::pattern(frame, ch)
}

/// Collects (first_sample, received) of record blocks until `until` or `deadline`.
fn collect(
    rx: &crossbeam_channel::Receiver<RecordBlock>,
    deadline: Instant,
    mut done: impl FnMut(&[RecordBlock]) -> bool,
) -> Vec<RecordBlock> {
    let mut got = Vec::new();
    while Instant::now() < deadline && !done(&got) {
        if let Ok(b) = rx.recv_timeout(Duration::from_millis(100)) {
            got.push(b);
        }
    }
    got
}

#[test]
fn udp_binary_with_losses_duplicates_reordering_and_a_foreign_sender() {
    let fs = 1000.0;
    let channels = 4;
    let seconds = 60u64;
    let (mut p, port) = udp_pipeline(fs);
    let rx = p.take_records().unwrap();
    let to: SocketAddr = format!("127.0.0.1:{port}").parse().unwrap();
    let sender = std::thread::Builder::new()
        .name("test-udp-board".into())
        .spawn(move || {
            let sock = UdpSocket::bind("127.0.0.1:0").unwrap();
            let foreign = UdpSocket::bind("127.0.0.1:0").unwrap();
            let mut rng = Rng::new(42);
            let (mut dropped, mut duplicated, mut swapped) = (0u64, 0u64, 0u64);
            let total = seconds * fs as u64;
            let per = 10; // frames per datagram: 10 ms
            let start = Instant::now();
            let mut held: Option<Vec<u8>> = None;
            let mut dropped_frames = Vec::new();
            for k in 0..total / per {
                let due = start + Duration::from_secs_f64((k * per) as f64 / fs);
                if let Some(w) = due.checked_duration_since(Instant::now()) {
                    std::thread::sleep(w);
                }
                let mut d = Vec::new();
                for f in k * per..(k + 1) * per {
                    let s: Vec<i32> = (0..channels).map(|c| value(f, c)).collect();
                    binary::encode(f as u16, &s, binary::FORMAT_I16, &mut d);
                }
                let r = rng.uniform();
                if k > 0 && r < 0.01 {
                    // 1 % of the datagrams never arrive.
                    dropped += 1;
                    dropped_frames.extend(k * per..(k + 1) * per);
                    continue;
                }
                if let Some(h) = held.take() {
                    // Swap neighbours: this one first, the held one after it.
                    sock.send_to(&d, to).unwrap();
                    sock.send_to(&h, to).unwrap();
                    continue;
                }
                if k > 0 && r < 0.02 {
                    held = Some(d);
                    swapped += 1;
                    continue;
                }
                sock.send_to(&d, to).unwrap();
                if r > 0.995 {
                    // 0.5 % arrive twice.
                    sock.send_to(&d, to).unwrap();
                    duplicated += 1;
                }
                if k % 500 == 250 {
                    // Someone else on the LAN sends too.
                    foreign.send_to(&d, to).unwrap();
                }
            }
            if let Some(h) = held.take() {
                sock.send_to(&h, to).unwrap();
            }
            (dropped, duplicated, swapped, dropped_frames)
        })
        .unwrap();
    let deadline = Instant::now() + Duration::from_secs(seconds + 20);
    let total = seconds * fs as u64;
    let blocks = collect(&rx, deadline, |g| {
        g.last()
            .is_some_and(|b| b.first_sample + (b.received.len() / channels) as u64 >= total)
    });
    let (dropped, duplicated, swapped, dropped_frames) = sender.join().unwrap();
    // Every delivered sample equals what was sent, at its own sample index.
    let mut delivered = 0u64;
    let mut gaps_marked = 0u64;
    let mut next = 0u64;
    for b in &blocks {
        if b.first_sample > next {
            gaps_marked += b.first_sample - next;
        }
        for (i, frame) in b.received.chunks(channels).enumerate() {
            let f = b.first_sample + i as u64;
            for (c, v) in frame.iter().enumerate() {
                assert_eq!(*v as i32, value(f, c), "frame {f} channel {c}");
            }
            delivered += 1;
        }
        next = b.first_sample + (b.received.len() / channels) as u64;
    }
    let st = p.net_status().unwrap();
    println!(
        "sent {total} frames; dropped {dropped} datagrams, duplicated {duplicated}, swapped {swapped}; status {:?}",
        st.order
    );
    // The lost count equals what was dropped, and the gaps are where they were.
    assert_eq!(st.order.lost, dropped * 10);
    assert_eq!(gaps_marked, dropped_frames.len() as u64);
    assert_eq!(delivered, total - dropped * 10);
    assert_eq!(st.order.duplicate, duplicated * 10);
    assert_eq!(st.order.late, 0);
    assert!(st.order.reordered >= swapped * 10, "{:?}", st.order);
    assert!(st.foreign >= 10, "foreign {}", st.foreign);
    assert_eq!(
        st.peer.map(|a| a.ip().to_string()),
        Some("127.0.0.1".into())
    );
}

#[test]
fn bad_datagrams_never_stop_the_stream() {
    let (mut p, port) = udp_pipeline(500.0);
    let rx = p.take_records().unwrap();
    let sock = UdpSocket::bind("127.0.0.1:0").unwrap();
    let to = format!("127.0.0.1:{port}");
    let mut good = Vec::new();
    binary::encode(0, &[1, 2], binary::FORMAT_I16, &mut good);
    sock.send_to(&good, &to).unwrap();
    // Empty, garbage, a truncated frame, a frame with a bad CRC, and one as large as UDP allows.
    sock.send_to(&[], &to).unwrap();
    sock.send_to(&[0xFF; 300], &to).unwrap();
    sock.send_to(&good[..good.len() - 3], &to).unwrap();
    let mut bad = good.clone();
    let last = bad.len() - 1;
    bad[last] ^= 0x55;
    sock.send_to(&bad, &to).unwrap();
    let _ = sock.send_to(&vec![0xA5u8; 65_000], &to);
    for k in 1..=200u16 {
        let mut d = Vec::new();
        binary::encode(
            k,
            &[i32::from(k), -i32::from(k)],
            binary::FORMAT_I16,
            &mut d,
        );
        sock.send_to(&d, &to).unwrap();
        std::thread::sleep(Duration::from_millis(2));
    }
    let blocks = collect(&rx, Instant::now() + Duration::from_secs(10), |g| {
        g.iter().map(|b| b.received.len() / 2).sum::<usize>() >= 201
    });
    let frames: usize = blocks.iter().map(|b| b.received.len() / 2).sum();
    assert_eq!(frames, 201);
    let st = p.net_status().unwrap();
    assert!(st.empty >= 3, "{st:?}");
    assert!(st.wire.bad_crc >= 1, "{st:?}");
}

#[test]
fn a_udp_port_in_use_and_a_host_that_does_not_resolve_say_so() {
    let taken = UdpSocket::bind("127.0.0.1:0").unwrap();
    let port = taken.local_addr().unwrap().port();
    let r = Pipeline::start(
        PipelineConfig {
            source: SourceSpec::parse(
                &format!("udp:127.0.0.1:{port}"),
                None,
                InputScale::default(),
            )
            .unwrap(),
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    );
    let e = r.err().unwrap().to_string();
    assert!(e.contains("already in use"), "{e}");
    // record: exit 1 with the reason on one line, and the summary on stdout.
    let o = common::leadline([
        "record",
        "--source",
        "tcp:no-such-host.invalid:5006",
        "--seconds",
        "1",
        "--out",
        std::env::temp_dir()
            .join(format!("ll-net-{}.csv", std::process::id()))
            .to_str()
            .unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("cannot resolve no-such-host.invalid"), "{err}");
    let out = String::from_utf8_lossy(&o.stdout);
    let summary: serde_json::Value = serde_json::from_str(out.lines().last().unwrap()).unwrap();
    assert_eq!(summary["frames"], 0);
    drop(taken);
}

#[test]
fn tcp_server_that_closes_and_reopens_gives_a_gap_and_a_reconnect() {
    let listener = TcpListener::bind("127.0.0.1:0").unwrap();
    let port = listener.local_addr().unwrap().port();
    let board = std::thread::Builder::new()
        .name("test-tcp-board".into())
        .spawn(move || {
            use std::io::Write;
            let mut f = 0u64;
            for round in 0..2 {
                let (mut c, _) = listener.accept().unwrap();
                let start = Instant::now();
                while start.elapsed() < Duration::from_millis(1500) {
                    let mut d = Vec::new();
                    for _ in 0..10 {
                        binary::encode(f as u16, &[value(f, 0)], binary::FORMAT_I16, &mut d);
                        f += 1;
                    }
                    if round == 0 && start.elapsed() > Duration::from_millis(1400) {
                        // Close mid-frame.
                        let _ = c.write_all(&d[..5]);
                        break;
                    }
                    if c.write_all(&d).is_err() {
                        break;
                    }
                    std::thread::sleep(Duration::from_millis(20));
                }
                drop(c);
                std::thread::sleep(Duration::from_millis(300));
            }
        })
        .unwrap();
    let mut p = start(&format!("tcp:127.0.0.1:{port}"), 500.0).unwrap();
    let rx = p.take_records().unwrap();
    let blocks = collect(&rx, Instant::now() + Duration::from_secs(10), |g| {
        g.iter().any(|b| b.gap_before) && g.iter().map(|b| b.received.len()).sum::<usize>() > 1000
    });
    board.join().unwrap();
    assert!(blocks.iter().any(|b| b.gap_before), "no gap marked");
    let st = p.net_status().unwrap();
    // The first link dropped mid-frame and came back (a board listening again may be
    // reconnected to more than once before it goes for good).
    assert!(st.reconnects >= 1, "{st:?}");
    // The ten frames of the chunk cut mid-frame are counted lost by the sequence counter.
    assert_eq!(st.wire.lost_frames, 10, "{st:?}");
}

#[test]
fn simulate_over_udp_gives_the_same_samples_as_the_csv() {
    let (mut p, port) = udp_pipeline(250.0);
    let rx = p.take_records().unwrap();
    let exe = env!("CARGO_BIN_EXE_leadline");
    let mut child = std::process::Command::new(exe)
        .args([
            "simulate",
            "--fs",
            "250",
            "--seconds",
            "3",
            "--seed",
            "9",
            "--udp",
            &format!("127.0.0.1:{port}"),
        ])
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let blocks = collect(&rx, Instant::now() + Duration::from_secs(10), |g| {
        g.iter().map(|b| b.received.len()).sum::<usize>() >= 750
    });
    let _ = child.wait();
    let got: Vec<f64> = blocks.iter().flat_map(|b| b.received.clone()).collect();
    let csv = std::process::Command::new(exe)
        .args([
            "simulate",
            "--fs",
            "250",
            "--seconds",
            "3",
            "--seed",
            "9",
            "--units",
            "counts",
        ])
        .output()
        .unwrap();
    let want: Vec<f64> = String::from_utf8_lossy(&csv.stdout)
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("time"))
        .map(|l| l.split(',').nth(1).unwrap().parse().unwrap())
        .collect();
    assert_eq!(got.len(), 750);
    assert_eq!(got, want[..750].to_vec());
}
