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
