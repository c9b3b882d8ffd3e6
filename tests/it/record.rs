//! Recording: EDF+/BDF+ files checked against outside readers, crash safety under `kill -9`,
//! a full disk, and format conversion by extension.

#![allow(clippy::unwrap_used)]

use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::Arc;
use std::time::{Duration, Instant};

use leadline::pipeline::{Pipeline, PipelineConfig};
use leadline::recorder::{RecordRequest, RecorderCommand};
use leadline::store::edf::{self, EdfKind};
use leadline::store::{self, Event, ReadOptions, Recording};

fn tmp(name: &str) -> PathBuf {
    crate::common::tmp("record", name)
}

/// The CI venv's Python (tests/reference/check.sh makes it), if present.
pub fn reference_python() -> Option<PathBuf> {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join(".venv/bin/python");
    if p.exists() {
        return Some(p);
    }
    // In CI the venv is always made first: its absence there is a failure, not a skip.
    assert!(
        std::env::var_os("CI").is_none(),
        "CI run without the reference venv (.venv): run tests/reference/check.sh first"
    );
    eprintln!("skipping the outside-reader check: no .venv (run tests/reference/check.sh)");
    None
}

/// What pyedflib and edfio read from `path` (tests/reference/read_edf.py).
pub fn outside_readers(py: &Path, path: &Path) -> serde_json::Value {
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/read_edf.py");
    let out = Command::new(py).arg(script).arg(path).output().unwrap();
    assert!(
        out.status.success(),
        "reference readers refused {}: {}",
        path.display(),
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn test_recording() -> Recording {
    let fs = 250.0;
    let n = 2345; // 9.38 s: a padded last record
    let t = |i: usize| i as f64 / fs;
    Recording {
        fs_hz: fs,
        names: vec!["lead I".into(), "lead II".into(), "resp".into()],
        time_s: None,
        channels: vec![
            (0..n)
                .map(|i| 1200.0 * (2.0 * std::f64::consts::PI * 1.2 * t(i)).sin())
                .collect(),
            (0..n)
                .map(|i| -300.0 + 25.0 * (2.0 * std::f64::consts::PI * 50.0 * t(i)).cos())
                .collect(),
            (0..n).map(|i| (i % 100) as f64 - 50.0).collect(),
        ],
        events: vec![
            Event {
                onset_s: 0.5,
                duration_s: None,
                text: "electrodes on".into(),
            },
            Event {
                onset_s: 4.25,
                duration_s: None,
                text: "laptop charger plugged in".into(),
            },
        ],
        ..Default::default()
    }
}

#[test]
fn edf_and_bdf_match_pyedflib_and_edfio_and_our_reader() {
    let rec = test_recording();
    for kind in [EdfKind::Edf, EdfKind::Bdf] {
        let path = tmp(match kind {
            EdfKind::Edf => "ref.edf",
            EdfKind::Bdf => "ref.bdf",
        });
        let summary = edf::write(&path, &rec, kind).unwrap();
        assert_eq!(summary.records, 10);
        let ours = edf::read(&path).unwrap();
        assert_eq!(ours.len(), rec.len());
        assert_eq!(ours.names, rec.names);
        assert_eq!(ours.events, rec.events);
        let Some(py) = reference_python() else {
            continue;
        };
        let v = outside_readers(&py, &path);
        let (dmin, dmax) = kind.digital_range();
        for reader in ["pyedflib", "edfio"] {
            let r = &v[reader];
            assert_eq!(r["records"], 10, "{reader}");
            let signals = r["signals"].as_array().unwrap();
            // Our reader hides the annotation signal; pyedflib does too, edfio too.
            assert_eq!(signals.len(), 3, "{reader}");
            let notes: Vec<(f64, String)> = r["annotations"]
                .as_array()
                .unwrap()
                .iter()
                .map(|a| (a[0].as_f64().unwrap(), a[1].as_str().unwrap().to_string()))
                .filter(|(_, t)| t != edf::DATA_END)
                .collect();
            assert_eq!(
                notes[..2],
                [
                    (0.5, "electrodes on".to_string()),
                    (4.25, "laptop charger plugged in".to_string())
                ],
                "{reader}"
            );
            // The padded end of the last record is named in words, for any EDF+ reader.
            assert_eq!(notes.len(), 3, "{reader}: {notes:?}");
            assert!(
                notes[2].1.starts_with(edf::PADDING) && notes[2].0 > 4.25,
                "{reader}: {notes:?}"
            );
            for (k, s) in signals.iter().enumerate() {
                let digital: Vec<i64> = s["digital"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|d| d.as_i64().unwrap())
                    .collect();
                assert_eq!(digital.len(), 2500, "{reader}: 10 records × 250");
                let (pmin, pmax, label, dim) = if reader == "pyedflib" {
                    let h = &s["header"];
                    assert_eq!(h["sample_frequency"], 250.0);
                    assert_eq!(h["digital_min"], dmin);
                    assert_eq!(h["digital_max"], dmax);
                    (
                        h["physical_min"].as_f64().unwrap(),
                        h["physical_max"].as_f64().unwrap(),
                        h["label"].as_str().unwrap().to_string(),
                        h["dimension"].as_str().unwrap().to_string(),
                    )
                } else {
                    assert_eq!(s["sampling_frequency"], 250.0);
                    assert_eq!(s["digital_min"], dmin);
                    assert_eq!(s["digital_max"], dmax);
                    (
                        s["physical_min"].as_f64().unwrap(),
                        s["physical_max"].as_f64().unwrap(),
                        s["label"].as_str().unwrap().to_string(),
                        s["physical_dimension"].as_str().unwrap().to_string(),
                    )
                };
                assert_eq!(label, rec.names[k]);
                assert_eq!(dim, "uV");
                let gain = (pmax - pmin) / f64::from(dmax - dmin);
                for (i, &d) in digital.iter().take(rec.len()).enumerate() {
                    // The outside reader's digital value is exactly the one our reader decoded.
                    let ours_d = ((ours.channels[k][i] - pmin) / gain + f64::from(dmin)).round();
                    assert_eq!(d as f64, ours_d, "{reader} signal {k} sample {i}");
                    // And within half a step of what went in.
                    let phys = (d as f64 - f64::from(dmin)) * gain + pmin;
                    assert!(
                        (phys - rec.channels[k][i]).abs() <= 0.5 * gain * (1.0 + 1e-9),
                        "{reader} signal {k} sample {i}: {phys} vs {}",
                        rec.channels[k][i]
                    );
                }
                if reader == "pyedflib" {
                    let phys = s["physical"].as_array().unwrap();
                    for (i, p) in phys.iter().take(rec.len()).enumerate() {
                        let p = p.as_f64().unwrap();
                        assert!(
                            (p - ours.channels[k][i]).abs() <= 1e-9 * (pmax - pmin),
                            "pyedflib physical {k}/{i}: {p} vs {}",
                            ours.channels[k][i]
                        );
                    }
                }
            }
        }
    }
}

#[test]
fn kill_9_during_record_leaves_a_valid_file_with_all_but_the_last_second() {
    for name in ["killed.edf", "killed.bdf"] {
        let path = tmp(name);
        let _ = std::fs::remove_file(&path);
        let started = Instant::now();
        let mut child = crate::common::command()
            .args(["record", "--source", "synth", "--seconds", "60", "--out"])
            .arg(&path)
            .spawn()
            .unwrap();
        std::thread::sleep(Duration::from_millis(4300));
        child.kill().unwrap(); // SIGKILL: no chance to close the file
        let elapsed = started.elapsed().as_secs_f64();
        child.wait().unwrap();
        let rec = store::read(&path, &ReadOptions::default()).unwrap();
        let held = rec.len() as f64 / rec.fs_hz;
        assert!(
            held >= elapsed - 1.0 - 0.5,
            "{name}: {held} s of data after {elapsed:.2} s (start-up of the process included)"
        );
        assert!(
            held <= elapsed,
            "{name}: {held} s is more than was recorded"
        );
        // No corrupted record: the simulator's default trace sits well inside the front end's
        // span, so a torn record would show as values at the range's ends.
        let peak = rec.channels[0].iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        assert!(peak < 3000.0 && peak > 300.0, "{name}: peak {peak} µV");
        // The header's count never runs ahead of the data: outside readers accept the file.
        if let Some(py) = reference_python() {
            let v = outside_readers(&py, &path);
            let records = v["pyedflib"]["records"].as_u64().unwrap();
            assert!(records as f64 >= elapsed - 1.5, "{name}: {records} records");
            assert_eq!(v["edfio"]["records"].as_u64().unwrap(), records);
        }
    }
}

#[test]
fn a_full_disk_stops_the_recording_with_a_message_and_the_monitor_runs_on() {
    let link = tmp("full.csv");
    let _ = std::fs::remove_file(&link);
    // Every write to /dev/full fails with "No space left on device".
    std::os::unix::fs::symlink("/dev/full", &link).unwrap();
    let p = Pipeline::start(
        PipelineConfig {
            recorder: true,
            display_hz: 20.0,
            ..PipelineConfig::default()
        },
        Arc::new(|| {}),
    )
    .unwrap();
    p.recorder(RecorderCommand::Start(RecordRequest::new(&link)));
    let deadline = Instant::now() + Duration::from_secs(10);
    let status = loop {
        let s = p.recorder_status().unwrap();
        if s.failed || Instant::now() > deadline {
            break s;
        }
        std::thread::sleep(Duration::from_millis(50));
    };
    assert!(status.failed, "{status:?}");
    assert!(status.active.is_none());
    // The count is what the file holds (/dev/full keeps nothing), not what was pushed.
    assert_eq!(status.frames, 0, "{status:?}");
    assert!(
        status.message.contains("recording stopped") && status.message.contains("full.csv"),
        "{}",
        status.message
    );
    assert!(
        status.message.to_lowercase().contains("no space"),
        "{}",
        status.message
    );
    // The monitor keeps receiving snapshots and the recorder keeps taking blocks.
    let seen = p.recorder_status().unwrap().seen_frames;
    let snap = p.snapshots().recv_timeout(Duration::from_secs(2));
    assert!(snap.is_ok());
    std::thread::sleep(Duration::from_millis(600));
    assert!(p.recorder_status().unwrap().seen_frames > seen);
    // A new recording to a good file works.
    let good = tmp("after-full.edf");
    p.recorder(RecorderCommand::Start(RecordRequest::new(&good)));
    std::thread::sleep(Duration::from_millis(1500));
    p.recorder(RecorderCommand::Marker("after the full disk".into()));
    std::thread::sleep(Duration::from_millis(300));
    let s = p.finish_recording(Duration::from_secs(5)).unwrap();
    assert!(!s.failed, "{}", s.message);
    let rec = store::read(&good, &ReadOptions::default()).unwrap();
    assert_eq!(rec.len() as u64, s.frames);
    assert!(rec.len() >= 500, "{} frames", rec.len());
    assert_eq!(rec.events.len(), 1);
    assert_eq!(rec.events[0].text, "after the full disk");
}

#[test]
fn filter_converts_by_extension_and_each_format_reads_back() {
    let rec = test_recording();
    let csv = tmp("conv.csv");
    store::write(&csv, &rec, store::FileUnit::Microvolts).unwrap();
    let edf_path = tmp("conv.edf");
    crate::common::run_ok(
        crate::common::command()
            .args(["filter", "--units", "uV", "--input"])
            .arg(&csv)
            .arg("--out")
            .arg(&edf_path),
    );
    let back = store::read(&edf_path, &ReadOptions::default()).unwrap();
    assert_eq!(back.len(), rec.len());
    assert_eq!(back.events, rec.events);
    // 16 bits over the data's own range: each value within half a step of the CSV's.
    for (a, b) in rec.channels.iter().zip(&back.channels) {
        let (lo, hi) = a
            .iter()
            .fold((f64::MAX, f64::MIN), |(l, h), &v| (l.min(v), h.max(v)));
        let step = (hi - lo) / 65535.0;
        for (x, y) in a.iter().zip(b) {
            assert!((x - y).abs() <= 0.5 * step * 1.01 + 1e-6, "{x} vs {y}");
        }
    }
    // EDF → f64 → EDF again is lossless: the values are already on the grid.
    let raw = tmp("conv.f64");
    let bdf = tmp("conv.bdf");
    for (i, o) in [(&edf_path, &raw), (&edf_path, &bdf)] {
        crate::common::run_ok(
            crate::common::command()
                .args(["filter", "--units", "uV", "--input"])
                .arg(i)
                .arg("--out")
                .arg(o),
        );
    }
    let r = store::read(
        &raw,
        &ReadOptions {
            fs_hz: Some(250.0),
            unit: store::FileUnit::Microvolts,
            channels: 3,
        },
    )
    .unwrap();
    assert_eq!(r.channels, back.channels);
    let b = store::read(&bdf, &ReadOptions::default()).unwrap();
    for (x, y) in back
        .channels
        .iter()
        .flatten()
        .zip(b.channels.iter().flatten())
    {
        // BDF's step over the same span is 256× finer than EDF's.
        assert!((x - y).abs() <= 2500.0 / 16_777_215.0, "{x} vs {y}");
    }
    // An unknown extension is refused with the list of formats (exit 2).
    let out = crate::common::command()
        .args(["filter", "--input"])
        .arg(&csv)
        .arg("--out")
        .arg(tmp("conv.wav"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains(".edf"));
}

#[test]
fn record_writes_each_format_its_extension_names() {
    for ext in ["edf", "bdf", "csv", "f32"] {
        let path = tmp(&format!("rec.{ext}"));
        let out = crate::common::command()
            .args([
                "record",
                "--source",
                "synth",
                "--seconds",
                "1.6",
                "--marker",
                "start",
                "--out",
            ])
            .arg(&path)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{ext}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let rec = store::read(
            &path,
            &ReadOptions {
                fs_hz: Some(500.0),
                ..ReadOptions::default()
            },
        )
        .unwrap();
        assert_eq!(rec.fs_hz, 500.0, "{ext}");
        assert!(
            (600..=850).contains(&rec.len()),
            "{ext}: {} frames in 1.6 s at 500 Hz",
            rec.len()
        );
        if ext != "f32" {
            assert_eq!(rec.events.len(), 1, "{ext}");
            assert_eq!(rec.events[0].onset_s, 0.0);
        }
        // CSV is written in mV by default and read in mV by default.
        let peak = rec.channels[0].iter().fold(0.0_f64, |m, v| m.max(v.abs()));
        assert!(peak > 300.0 && peak < 3000.0, "{ext}: peak {peak} µV");
    }
}

#[test]
fn record_takes_its_source_and_chain_from_a_setup() {
    let setup = tmp("bench-setup.toml");
    std::fs::write(
        &setup,
        "[synth]\nfs_hz = 250.0\nchannels = 2\n\n[chain.lowpass]\nenabled = true\ncorner_hz = 30.0\norder = 2\n",
    )
    .unwrap();
    let path = tmp("from-setup.edf");
    crate::common::run_ok(
        crate::common::command()
            .args(["record", "--seconds", "1.5", "--filtered", "--config"])
            .arg(&setup)
            .arg("--out")
            .arg(&path),
    );
    let rec = store::read(&path, &ReadOptions::default()).unwrap();
    assert_eq!(rec.fs_hz, 250.0);
    assert_eq!(rec.channels.len(), 2);
    // The header's prefiltering field names the setup's chain: per-signal fields come one field
    // for all signals at a time (EDF spec), 3 signals here (2 channels + annotations).
    let bytes = std::fs::read(&path).unwrap();
    let ns = 3;
    let at = 256 + ns * (16 + 80 + 8 * 5);
    let prefilter = String::from_utf8_lossy(&bytes[at..at + 80]).to_string();
    assert!(prefilter.contains("LP:30Hz(o2)"), "{prefilter}");
}

/// The summary counts the frames the file holds, and names the padding of the last EDF record
/// (the EDF specification's records are all one length: Kemp et al. 1992; docs/REFERENCES.md §6).
#[test]
fn record_summary_counts_the_file_and_names_the_padding() {
    let out = tmp("padded.edf");
    let o = Command::new(env!("CARGO_BIN_EXE_leadline"))
        .args(["record", "--source", "synth", "--seconds", "2.3", "--out"])
        .arg(&out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let stdout = String::from_utf8_lossy(&o.stdout);
    let summary: serde_json::Value = serde_json::from_str(stdout.lines().last().unwrap()).unwrap();
    let frames = summary["frames"].as_u64().unwrap();
    let padded = summary["padded_frames"].as_u64().unwrap();
    let rec = edf::read(&out).unwrap();
    assert_eq!(rec.len() as u64, frames, "{summary}");
    // Records are whole seconds or fractions of one: data plus padding fill whole records.
    let bytes = std::fs::read(&out).unwrap();
    let field = |a: usize, b: usize| String::from_utf8_lossy(&bytes[a..b]).trim().to_string();
    let records: u64 = field(236, 244).parse().unwrap();
    assert!(padded > 0, "2.3 s does not fill whole records: {summary}");
    assert_eq!((frames + padded) % records, 0, "{summary}");
    assert!(
        padded < (frames + padded) / records,
        "less than one record of padding"
    );
}
