//! A board that is not ours: counts scaled by the user's front end on the command line, the notch
//! that follows the measured mains, third-party EDF/BDF with mixed rates, and the messages a
//! first contact meets.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::path::PathBuf;
use std::process::Command;

use leadline::scale::InputScale;

fn leadline(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_leadline"))
        .args(args)
        .env("XDG_CONFIG_HOME", tmp("config"))
        .output()
        .unwrap()
}

fn tmp(name: &str) -> PathBuf {
    crate::common::tmp("fe", name)
}

fn stderr(o: &std::process::Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn json(path: &PathBuf) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

/// A 10-bit, 5 V board behind a gain of 1000 (4.8828125 µV per count, by hand): a 1 mV 1.2 Hz
/// sine with 50 µV rms of 60 Hz, written as integer counts one per line with a time column.
fn ten_bit_counts_csv(path: &PathBuf) {
    let s = InputScale::new(10, 5.0, 1000.0).unwrap();
    let fs = 250.0;
    let mut text = String::from("time_s,ch1\n");
    for i in 0..(fs as usize * 40) {
        let t = i as f64 / fs;
        let uv = 1000.0 * (std::f64::consts::TAU * 1.2 * t).sin()
            + 50.0 * std::f64::consts::SQRT_2 * (std::f64::consts::TAU * 60.0 * t).sin();
        let (c, _) = s.adc_v_to_counts(uv * 1e-6 * s.gain);
        text.push_str(&format!("{t:.3},{c}\n"));
    }
    std::fs::write(path, text).unwrap();
}

#[test]
fn counts_from_a_ten_bit_board_are_scaled_by_the_given_front_end() {
    let csv = tmp("tenbit.csv");
    ten_bit_counts_csv(&csv);
    let report = tmp("tenbit.json");
    let o = leadline(&[
        "spectrum",
        "--input",
        csv.to_str().unwrap(),
        "--units",
        "counts",
        "--adc-bits",
        "10",
        "--adc-vref",
        "5",
        "--frontend-gain",
        "1000",
        "--out",
        tmp("tenbit-psd.csv").to_str().unwrap(),
        "--report",
        report.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let r = json(&report);
    // 50 µV rms of 60 Hz went in; quantisation (4.9 µV steps) adds noise, not mains.
    let mains = r["harmonics"][0]["rms_uv"].as_f64().unwrap();
    assert!((mains - 50.0).abs() < 2.5, "mains {mains} µV rms");
    assert!((r["mains_hz"].as_f64().unwrap() - 60.0).abs() < 0.05);

    // The same file read as mV (what the first contact met) reports a thousand times more.
    let o = leadline(&[
        "spectrum",
        "--input",
        csv.to_str().unwrap(),
        "--out",
        tmp("tenbit-psd2.csv").to_str().unwrap(),
        "--report",
        report.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(json(&report)["harmonics"][0]["rms_uv"].as_f64().unwrap() > 1e4);

    // Counts without a board, and a board without counts, are refused with a reason (exit 2).
    let o = leadline(&[
        "spectrum",
        "--input",
        csv.to_str().unwrap(),
        "--units",
        "counts",
        "--out",
        tmp("x.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("--adc-bits"), "{}", stderr(&o));
    assert_eq!(stderr(&o).lines().count(), 1, "{}", stderr(&o));

    // A setup's front end does the same as the flags.
    let setup = tmp("board.toml");
    std::fs::write(
        &setup,
        "[scale]\nbits = 10\nvref_v = 5.0\noffset_counts = 512.0\ngain = 1000.0\n",
    )
    .unwrap();
    let o = leadline(&[
        "spectrum",
        "--input",
        csv.to_str().unwrap(),
        "--units",
        "counts",
        "--config",
        setup.to_str().unwrap(),
        "--out",
        tmp("tenbit-psd3.csv").to_str().unwrap(),
        "--report",
        report.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let mains = json(&report)["harmonics"][0]["rms_uv"].as_f64().unwrap();
    assert!((mains - 50.0).abs() < 2.5, "mains {mains} µV rms");
}

#[test]
fn notch_auto_finds_60_hz_and_takes_30_db_off_the_line() {
    // Our simulator with 60 Hz pickup (a bench in a 60 Hz country), in µV.
    let input = tmp("sim60.csv");
    let o = leadline(&[
        "simulate",
        "--fs",
        "500",
        "--seconds",
        "30",
        "--mains",
        "60",
        "--mains-uv",
        "40",
        "--seed",
        "7",
        "--units",
        "uV",
        "--out",
        input.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let out = tmp("sim60-notched.csv");
    let o = leadline(&[
        "filter",
        "--input",
        input.to_str().unwrap(),
        "--units",
        "uV",
        "--notch",
        "auto",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let said = stderr(&o);
    assert!(said.contains("mains measured at 60.0"), "{said}");
    assert!(said.contains("notch 60.0"), "{said}");
    // Power of the 60 Hz line: the PSD summed over ±0.5 Hz around it (Welch, our spectrum
    // command; its agreement with scipy.signal.welch is checked in tests/it/spectrum.rs).
    let line = |file: &PathBuf| {
        let psd = tmp("line-psd.csv");
        let o = leadline(&[
            "spectrum",
            "--input",
            file.to_str().unwrap(),
            "--units",
            "uV",
            "--out",
            psd.to_str().unwrap(),
        ]);
        assert!(o.status.success(), "{}", stderr(&o));
        std::fs::read_to_string(&psd)
            .unwrap()
            .lines()
            .skip(1)
            .map(|l| {
                let mut f = l.split(',').map(|v| v.parse::<f64>().unwrap());
                (f.next().unwrap(), f.next().unwrap())
            })
            .filter(|(f, _)| (f - 60.0).abs() <= 0.5)
            .map(|(_, d)| d)
            .sum::<f64>()
    };
    let (before, after) = (line(&input), line(&out));
    let drop_db = 10.0 * (before / after).log10();
    println!("60 Hz line: {before:.4} → {after:.6} µV²/Hz, {drop_db:.1} dB");
    // The requirement: 30 dB or more.
    assert!(
        drop_db >= 30.0,
        "60 Hz line {before} → {after} µV²/Hz: {drop_db:.1} dB"
    );
}

#[test]
fn a_mixed_rate_bdf_is_read_signal_by_signal_as_pyedflib_reads_it() {
    // tests/reference/mixed.bdf and mixed_bdf.json were made by make_mixed_bdf.py with pyedflib
    // (EDFlib): five signals at 1000, 800, 500, 975 and 999 Hz in µV, mV and %.
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/reference");
    let bdf = dir.join("mixed.bdf");
    let reference = json(&dir.join("mixed_bdf.json"));
    let signals = reference["signals"].as_array().unwrap();
    assert_eq!(signals.len(), 5);
    let opts = leadline::store::ReadOptions::default();
    for (k, s) in signals.iter().enumerate() {
        for sel in [k.to_string(), s["label"].as_str().unwrap().to_string()] {
            let (rec, ch) = leadline::cli::load_channel(&bdf, &opts, &sel).unwrap();
            assert_eq!(rec.fs_hz, s["fs_hz"].as_f64().unwrap(), "{sel}");
            let info = &rec.signal_list()[k];
            assert_eq!(info.name, s["label"].as_str().unwrap());
            assert_eq!(info.unit, s["unit"].as_str().unwrap());
            // µV for voltages (mV × 1000), the file's own unit otherwise.
            let k_uv = match info.unit.as_str() {
                "mV" => 1e3,
                _ => 1.0,
            };
            let want: Vec<f64> = s["physical"]
                .as_array()
                .unwrap()
                .iter()
                .map(|v| v.as_f64().unwrap() * k_uv)
                .collect();
            let got = &rec.channels[ch];
            assert_eq!(got.len(), want.len(), "{sel}");
            for (i, (g, w)) in got.iter().zip(&want).enumerate() {
                // pyedflib's values are rounded to 1e-9 in the fixture.
                assert!(
                    (g - w).abs() <= 1e-6 * w.abs().max(1.0),
                    "{sel} sample {i}: {g} vs {w}"
                );
            }
        }
    }
    // By default the first rate's voltages are read and the others are named, not dropped.
    let rec = leadline::store::read(&bdf, &opts).unwrap();
    assert_eq!(rec.names, vec!["ECG lead II"]);
    assert_eq!(rec.notes.len(), 4, "{:?}", rec.notes);
    assert!(rec.notes.iter().any(|n| n.contains("SpO2")));

    // The command line reaches every signal, and the summary lists them all.
    let summary = tmp("mixed-summary.json");
    let o = leadline(&[
        "spectrum",
        "--input",
        bdf.to_str().unwrap(),
        "--channel",
        "3",
        "--out",
        tmp("mixed-psd.csv").to_str().unwrap(),
        "--report",
        summary.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    let r = json(&summary);
    assert_eq!(r["channel_name"], "SpO2");
    assert_eq!(r["fs_hz"], 975.0);
    let listed = r["signals"].as_array().unwrap();
    assert_eq!(listed.len(), 5);
    assert_eq!(listed[1]["name"], "EMG forearm");
    assert_eq!(listed[1]["fs_hz"], 800.0);
    let o = leadline(&[
        "beats",
        "--input",
        bdf.to_str().unwrap(),
        "--channel",
        "7",
        "--out",
        tmp("x.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("5 signal(s)"), "{}", stderr(&o));
}

#[test]
fn first_contact_messages_are_one_clear_line() {
    // A missing file: its reason once.
    let o = leadline(&[
        "beats",
        "--input",
        "/nonexistent/rec.csv",
        "--out",
        tmp("b.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1));
    let e = stderr(&o);
    assert_eq!(e.matches("No such file or directory").count(), 1, "{e}");
    // A non-number on line 3 of a CSV with a time column.
    let csv = tmp("bad-line.csv");
    std::fs::write(
        &csv,
        "time_s,ch1\n0.000,1.0\n0.002,abc\n0.004,1.2\n0.006,1.1\n",
    )
    .unwrap();
    let o = leadline(&[
        "spectrum",
        "--input",
        csv.to_str().unwrap(),
        "--out",
        tmp("p.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("line 3"), "{}", stderr(&o));
    // A NaN corner: refused while parsing, with the range it wants.
    let o = leadline(&["sos", "--fs", "249.99794851683447", "--highpass", "NaN"]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(
        e.contains("--highpass") && e.contains("expected a finite number in 0.01–2000 Hz"),
        "{e}"
    );
    // A corner the range allows but the rate does not: no fourteen decimals.
    let o = leadline(&["sos", "--fs", "249.99794851683447", "--highpass", "1000"]);
    assert_eq!(o.status.code(), Some(2));
    let e = stderr(&o);
    assert!(e.contains("(125 Hz at fs = 250 Hz)"), "{e}");
    // A flat input: no signal/mains ratio of −320 dB.
    let flat = tmp("flat.csv");
    std::fs::write(
        &flat,
        (0..5000).fold(String::from("# fs=500\nch1\n"), |s, _| s + "0.0\n"),
    )
    .unwrap();
    let rep = tmp("flat.json");
    let o = leadline(&[
        "spectrum",
        "--input",
        flat.to_str().unwrap(),
        "--out",
        tmp("flat-psd.csv").to_str().unwrap(),
        "--report",
        rep.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    assert!(json(&rep)["snr_db"].is_null());
    assert!(!stderr(&o).contains("dB"), "{}", stderr(&o));
}

#[test]
fn record_exits_1_when_nothing_arrived() {
    let out = tmp("nothing.csv");
    let o = leadline(&[
        "record",
        "--source",
        "serial:/dev/leadline-no-such-port",
        "--seconds",
        "1",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let e = stderr(&o);
    assert!(
        e.contains("no samples arrived") && e.contains("nothing was written"),
        "{e}"
    );
    assert_eq!(e.lines().count(), 1, "{e}");
}

#[test]
fn the_caution_is_in_the_help_of_every_command_that_meets_a_person() {
    for cmd in ["monitor", "record", "simulate", "measure", "emg", "sound"] {
        let o = leadline(&[cmd, "--help"]);
        let text = String::from_utf8_lossy(&o.stdout);
        assert!(
            text.contains("Not a medical device") && text.contains("IEC 60601-1"),
            "{cmd} --help"
        );
    }
}
