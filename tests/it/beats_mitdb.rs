//! QRS detection scored as ANSI/AAMI EC57 does (±150 ms match, Se and +P, gross over records) on
//! the MIT-BIH Arrhythmia Database records in tests/data/mitdb (Moody & Mark, IEEE EMB
//! 20(3):45–50, 2001; PhysioNet, Goldberger et al., Circulation 101(23):e215–e220, 2000; ODC-By
//! 1.0). Published real-time detectors on the whole database for comparison: Pan & Tompkins 1985
//! Se 99.3 % (recalled from memory); Hamilton & Tompkins 1986 Se 99.69 % / +P 99.77 % (their
//! abstract).
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::path::PathBuf;

use leadline::analysis::beats::{Detector, Score, score};

fn data_dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/data/mitdb")
}

fn reference(record: &str) -> Vec<u64> {
    let text = std::fs::read_to_string(data_dir().join(format!("{record}.beats.csv"))).unwrap();
    text.lines()
        .skip(1)
        .map(|l| l.split(',').next().unwrap().parse().unwrap())
        .collect()
}

fn detect(record: &str) -> (Vec<u64>, f64, u64) {
    let rec = leadline::store::wfdb::read(&data_dir().join(format!("{record}.hea"))).unwrap();
    let mut det = Detector::new(rec.fs_hz).unwrap();
    let mut beats = Vec::new();
    // Live-sized blocks: the detector runs as it does in the monitor.
    for block in rec.channels[0].chunks(64) {
        det.process(block, &mut beats);
    }
    (
        beats.iter().map(|b| b.sample).collect(),
        rec.fs_hz,
        rec.len() as u64,
    )
}

#[test]
fn mitdb_records_gross_se_and_ppv() {
    let mut whole = Score::default();
    let mut after5 = Score::default();
    for record in ["100", "105", "108", "119", "200"] {
        let (det, fs, len) = detect(record);
        let refs = reference(record);
        let tol = (0.150 * fs).round() as u64; // ±150 ms = ±54 samples at 360 Hz (EC57)
        let s = score(&refs, &det, tol, 0, len);
        // EC57 also scores from t = 5 min (the learning period excluded).
        let s5 = score(&refs, &det, tol, (300.0 * fs) as u64, len);
        println!(
            "record {record}: TP {} FN {} FP {}  Se {:.2} % +P {:.2} %   (from 5 min: Se {:.2} % +P {:.2} %)",
            s.tp,
            s.fn_,
            s.fp,
            100.0 * s.se(),
            100.0 * s.ppv(),
            100.0 * s5.se(),
            100.0 * s5.ppv()
        );
        // Each record: Se at least 99.5 % and +P at least 99.0 % (record 105, heavy
        // electrode-motion noise, is the weakest: Se 99.53 %, +P 99.22 %).
        assert!(
            s.se() >= 0.995 && s.ppv() >= 0.990,
            "record {record}: Se {:.4} +P {:.4}",
            s.se(),
            s.ppv()
        );
        whole = whole.add(&s);
        after5 = after5.add(&s5);
    }
    println!(
        "gross: TP {} FN {} FP {}  Se {:.2} % +P {:.2} %   (from 5 min: Se {:.2} % +P {:.2} %)",
        whole.tp,
        whole.fn_,
        whole.fp,
        100.0 * whole.se(),
        100.0 * whole.ppv(),
        100.0 * after5.se(),
        100.0 * after5.ppv()
    );
    // Gross Se at least 99.8 % and +P at least 99.7 % (reached: 99.81 % and 99.76 %).
    assert!(
        whole.se() >= 0.998 && whole.ppv() >= 0.997,
        "gross Se {:.4} +P {:.4}",
        whole.se(),
        whole.ppv()
    );
}

/// Figures that hold on records the tuning never saw: the detector's free choices tuned on three
/// of the five records and scored on the other two, all ten splits (EC57 scoring, ±150 ms;
/// docs/REFERENCES.md §2). Targets: every record held out at Se ≥ 99.5 % and +P ≥ 99.0 %
/// (record 105's electrode-motion noise holds +P near 99.2 %), gross Se and +P ≥ 99.7 %.
#[test]
fn held_out_figures_over_ten_splits() {
    let records = leadline::cli::bench::annotated(&data_dir()).unwrap();
    assert_eq!(records.len(), 5);
    let grid = leadline::analysis::beats::Tuning::grid();
    let report = leadline::analysis::heldout::cross_check(&records, &grid);
    assert_eq!(report.splits.len(), 10);
    for r in &report.records {
        println!(
            "held out {}: Se {:.2} % +P {:.2} %",
            r.name, r.se_pct, r.ppv_pct
        );
        assert!(r.se_pct >= 99.5 && r.ppv_pct >= 99.0, "{r:?}");
    }
    println!(
        "held out gross: Se {:.2} % +P {:.2} %",
        report.gross_se_pct, report.gross_ppv_pct
    );
    assert!(report.gross_se_pct >= 99.7 && report.gross_ppv_pct >= 99.7);
    // Every split is scored only on records it did not tune on.
    for s in &report.splits {
        assert!(s.tuned_on.iter().all(|t| !s.scored_on.contains(t)));
        assert_eq!(s.tuned_on.len() + s.scored_on.len(), 5);
    }
}

/// The simulator's development set (no real recording; src/analysis/devset.rs): the product's
/// tuning on each case. Floors are what the detector must keep (the figures themselves are in
/// the README and `leadline bench beats`).
#[test]
fn development_set_figures() {
    let scores =
        leadline::analysis::devset::score_all(leadline::analysis::beats::Tuning::default());
    assert_eq!(scores.len(), leadline::analysis::devset::CASES.len());
    for c in &scores {
        println!(
            "{:<18} Se {:6.2} % +P {:6.2} %",
            c.case, c.se_pct, c.ppv_pct
        );
        let (se, ppv) = match c.case.as_str() {
            "motion 6 dB" => (95.0, 80.0),
            "motion 12 dB" => (99.0, 95.0),
            _ => (97.0, 99.5),
        };
        assert!(c.se_pct >= se && c.ppv_pct >= ppv, "{c:?}");
        assert!(c.beats > 200, "{c:?}");
    }
}
