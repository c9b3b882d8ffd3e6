//! Twelve leads: derived from a board's leads or electrodes, written as EDF+ and CSV, and the
//! frontal QRS axis of the simulator's heart read back.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::common::{leadline, leadline_ok};

fn tmp(name: &str) -> PathBuf {
    crate::common::tmp("leads", name)
}

fn report(path: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// `simulate --leads 12 --axis-deg A` gives a heart whose mean frontal QRS vector points at A
/// (the simulator's dipole, after Sameni et al. 2007); `leads --report` measures it by the
/// net-area method in I and aVF and must land within ±10°.
#[test]
fn the_frontal_axis_of_the_simulated_heart_is_read_back_within_10_degrees() {
    for axis in [-30.0f64, 0.0, 60.0, 90.0] {
        let csv = tmp(&format!("sim{axis}.csv"));
        let edf = tmp(&format!("leads{axis}.edf"));
        let rep = tmp(&format!("leads{axis}.json"));
        leadline_ok([
            "simulate",
            "--leads",
            "12",
            "--axis-deg",
            &axis.to_string(),
            "--seconds",
            "20",
            "--fs",
            "500",
            "--out",
            csv.to_str().unwrap(),
        ]);
        leadline_ok([
            "leads",
            "--input",
            csv.to_str().unwrap(),
            "--out",
            edf.to_str().unwrap(),
            "--report",
            rep.to_str().unwrap(),
        ]);
        let r = report(&rep);
        let got = r["frontal_axis_deg"].as_f64().unwrap();
        assert!((got - axis).abs() <= 10.0, "asked {axis}°, read {got}°");
        assert!(
            r["axis"]["method"]
                .as_str()
                .unwrap()
                .contains("net QRS area")
        );
        assert_eq!(r["beats_lead"], "II");
        // 20 s at 72 bpm: about 24 beats.
        let n = r["beats"].as_array().unwrap().len();
        assert!((20..=26).contains(&n), "{n} beats");
        assert_eq!(r["leads"].as_array().unwrap().len(), 12);
    }
}

/// The EDF+ file of twelve leads, read by pyedflib (EDFlib, an outside reader): the labels are
/// the EDF+ specification's standard texts, and the values those of the CSV written from the
/// same leads, within the EDF's 16-bit resolution.
#[test]
fn pyedflib_reads_the_twelve_leads_with_their_labels_and_values() {
    let Some(py) = crate::record::reference_python() else {
        return;
    };
    let board = tmp("board9.csv");
    let (edf, csv) = (tmp("twelve.edf"), tmp("twelve.csv"));
    // A board of nine electrode potentials against a common reference.
    leadline_ok([
        "simulate",
        "--leads",
        "9",
        "--seconds",
        "6",
        "--fs",
        "500",
        "--out",
        board.to_str().unwrap(),
    ]);
    for out in [&edf, &csv] {
        leadline_ok([
            "leads",
            "--input",
            board.to_str().unwrap(),
            "--lead-set",
            "electrodes9",
            "--out",
            out.to_str().unwrap(),
            "--out-units",
            "uV",
        ]);
    }
    let seen = crate::record::outside_readers(&py, &edf);
    let signals = seen["pyedflib"]["signals"].as_array().unwrap();
    let labels: Vec<&str> = signals
        .iter()
        .map(|s| s["header"]["label"].as_str().unwrap().trim())
        .collect();
    let want: Vec<String> = leadline::leads::TWELVE
        .iter()
        .map(|n| format!("ECG {n}"))
        .collect();
    assert_eq!(labels, want);
    let opts = leadline::store::ReadOptions {
        unit: leadline::store::FileUnit::Microvolts,
        ..Default::default()
    };
    let rec = leadline::store::read(&csv, &opts).unwrap();
    for (k, s) in signals.iter().enumerate() {
        let phys: Vec<f64> = s["physical"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let (pmin, pmax) = (
            s["header"]["physical_min"].as_f64().unwrap(),
            s["header"]["physical_max"].as_f64().unwrap(),
        );
        // One digital step of 16 bits, in the file's unit; the CSV holds µV.
        let step = (pmax - pmin) / 65535.0;
        let unit = s["header"]["dimension"].as_str().unwrap().trim();
        let to_uv = match unit {
            "mV" => 1e3,
            "uV" => 1.0,
            other => panic!("unit {other}"),
        };
        assert_eq!(phys.len(), rec.len());
        for (i, (&p, &c)) in phys.iter().zip(&rec.channels[k]).enumerate() {
            assert!(
                (p * to_uv - c).abs() <= step * to_uv + 0.01,
                "lead {} sample {i}: EDF {p} {unit}, CSV {c} µV",
                want[k]
            );
        }
    }
}

#[test]
fn a_lead_set_needing_more_channels_is_refused_naming_both_numbers() {
    let two = tmp("two.csv");
    leadline_ok([
        "simulate",
        "--channels",
        "2",
        "--seconds",
        "2",
        "--out",
        two.to_str().unwrap(),
    ]);
    let o = leadline([
        "leads",
        "--input",
        two.to_str().unwrap(),
        "--lead-set",
        "leads8",
        "--out",
        tmp("x.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(err.trim().lines().count(), 1, "{err}");
    assert!(
        err.contains("needs 8 channels") && err.contains("has 2"),
        "{err}"
    );
    // Channels that are not named as leads, and no --lead-set: one line saying so.
    let o = leadline([
        "leads",
        "--input",
        two.to_str().unwrap(),
        "--out",
        tmp("y.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--lead-set"));
}

/// Two limb leads give the six limb leads and never a chest lead; the file's own names (I, II)
/// are enough without --lead-set.
#[test]
fn two_limb_leads_give_six_leads_and_no_chest_lead() {
    let board = tmp("limb2.csv");
    let out = tmp("six.csv");
    leadline_ok([
        "simulate",
        "--leads",
        "2",
        "--seconds",
        "4",
        "--out",
        board.to_str().unwrap(),
    ]);
    leadline_ok([
        "leads",
        "--input",
        board.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    let rec = leadline::store::read(&out, &Default::default()).unwrap();
    assert_eq!(rec.names, ["I", "II", "III", "aVR", "aVL", "aVF"]);
    // Einthoven's and Goldberger's identities on what was written (CSV rounding: 1e-6 mV).
    for i in 0..rec.len() {
        let c = |k: usize| rec.channels[k][i];
        assert!((c(2) - (c(1) - c(0))).abs() < 0.01, "III = II − I at {i}");
        assert!(
            (c(3) + c(4) + c(5)).abs() < 0.01,
            "aVR + aVL + aVF = 0 at {i}"
        );
    }
    // beats and spectrum take the derived leads by name.
    let o = Command::new(env!("CARGO_BIN_EXE_leadline"))
        .args([
            "beats",
            "--input",
            board.to_str().unwrap(),
            "--channel",
            "aVF",
            "--out",
        ])
        .arg(tmp("beats.csv"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

/// The DSP thread derives the twelve leads from the simulated eight-lead board before the chain:
/// every recorded frame holds twelve leads whose identities hold, and the last snapshot names
/// them and gives the frontal axis the simulator was set to (60°, ±10°).
#[test]
fn the_dsp_thread_derives_twelve_leads_and_the_axis_live() {
    use leadline::leads::LeadSet;
    use leadline::pipeline::{Pipeline, PipelineConfig};
    use leadline::source::{Pacing, SourceSpec, SynthSettings};
    let mut p = Pipeline::start(
        PipelineConfig {
            source: SourceSpec::Synth(SynthSettings {
                fs_hz: 500.0,
                channels: 8,
                heart_leads: Some(LeadSet::Leads8),
                axis_deg: 60.0,
                ..SynthSettings::default()
            }),
            lead_set: Some(LeadSet::Leads8),
            pacing: Pacing::Unpaced,
            limit_s: Some(12.0),
            record: true,
            ..PipelineConfig::default()
        },
        std::sync::Arc::new(|| {}),
    )
    .unwrap();
    let rx = p.take_records().unwrap();
    let mut frames = 0;
    for block in rx.iter() {
        assert_eq!(block.channels, 12);
        assert_eq!(block.names.as_ref().map(|n| n.len()), Some(12));
        for f in block.raw_uv.chunks_exact(12) {
            let scale = f.iter().fold(1.0f64, |m, v| m.max(v.abs()));
            assert!((f[2] - (f[1] - f[0])).abs() <= 1e-9 * scale, "III = II − I");
            assert!(
                (f[3] + f[4] + f[5]).abs() <= 1e-9 * scale,
                "aVR + aVL + aVF = 0"
            );
            frames += 1;
        }
    }
    assert_eq!(frames, 6000);
    let last = p.snapshots().try_iter().last().expect("a final snapshot");
    assert_eq!(last.traces.len(), 12);
    assert_eq!(
        last.leads.as_ref().map(|n| n.join(" ")),
        Some("I II III aVR aVL aVF V1 V2 V3 V4 V5 V6".to_string())
    );
    let axis = last.frontal_axis.expect("an axis after 12 s");
    assert!((axis.degrees - 60.0).abs() <= 10.0, "{axis:?}");
    assert!(last.electrodes_off.is_empty());
}

/// A board of nine electrodes with LA come off (the simulator floats that electrode: it picks
/// up mains far above the others): the snapshot names it.
#[test]
fn an_electrode_that_comes_off_is_named() {
    use leadline::leads::LeadSet;
    use leadline::pipeline::{Pipeline, PipelineConfig};
    use leadline::source::{Pacing, SourceSpec, SynthSettings};
    let p = Pipeline::start(
        PipelineConfig {
            source: SourceSpec::Synth(SynthSettings {
                fs_hz: 500.0,
                channels: 9,
                heart_leads: Some(LeadSet::Electrodes9),
                lead_off: true,
                ..SynthSettings::default()
            }),
            lead_set: Some(LeadSet::Electrodes9),
            pacing: Pacing::Unpaced,
            limit_s: Some(4.0),
            ..PipelineConfig::default()
        },
        std::sync::Arc::new(|| {}),
    )
    .unwrap();
    let deadline = std::time::Instant::now() + std::time::Duration::from_secs(20);
    let mut last = None;
    while std::time::Instant::now() < deadline {
        if let Some(s) = p.latest_snapshot() {
            let done = s.source_done;
            last = Some(s);
            if done {
                break;
            }
        }
        std::thread::sleep(std::time::Duration::from_millis(10));
    }
    let last = last.expect("snapshots");
    assert_eq!(last.electrodes_off, vec!["LA"]);
}

/// Two limb leads made outside the project with numpy (tests/reference/leads_axis.py) for a
/// dipole at a known frontal angle: `leads --report` reads the angle back within 2°.
#[test]
fn the_axis_of_limb_leads_made_with_numpy_is_read_back() {
    let Some(py) = crate::record::reference_python() else {
        return;
    };
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/leads_axis.py");
    for axis in [-45.0f64, 30.0, 75.0, 120.0] {
        let csv = tmp(&format!("numpy{axis}.csv"));
        let out = Command::new(&py)
            .arg(&script)
            .arg(axis.to_string())
            .arg(&csv)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let rep = tmp(&format!("numpy{axis}.json"));
        leadline_ok([
            "leads",
            "--input",
            csv.to_str().unwrap(),
            "--out",
            tmp(&format!("numpy{axis}.edf")).to_str().unwrap(),
            "--report",
            rep.to_str().unwrap(),
        ]);
        let got = report(&rep)["frontal_axis_deg"].as_f64().unwrap();
        assert!((got - axis).abs() <= 2.0, "numpy's {axis}°, read {got}°");
    }
}
