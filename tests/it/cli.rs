//! The command-line contract: sos, response, filter and simulate, run as a user would run them.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::path::PathBuf;

fn leadline(args: &[&str]) -> std::process::Output {
    crate::common::leadline(args)
}

fn tmp(name: &str) -> PathBuf {
    crate::common::tmp("cli", name)
}

#[test]
fn sos_prints_scipy_layout_rows() {
    let o = leadline(&[
        "sos",
        "--highpass",
        "0.5",
        "--notch",
        "60",
        "--lowpass",
        "40",
        "--fs",
        "1000",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let rows: Vec<Vec<f64>> = serde_json::from_slice(&o.stdout).unwrap();
    // HP order 2 (1 section) + notch (1) + LP order 4 (2).
    assert_eq!(rows.len(), 4);
    assert!(rows.iter().all(|r| r.len() == 6 && r[3] == 1.0));
    let notch = leadline::dsp::design::notch(60.0, 30.0, 1000.0).unwrap();
    // serde_json's default float parser may be one ulp off the printed (round-trip) value.
    for (got, want) in rows[1]
        .iter()
        .zip([notch.b0, notch.b1, notch.b2, 1.0, notch.a1, notch.a2])
    {
        assert!(
            (got - want).abs() <= 1e-15 * want.abs().max(1.0),
            "{got} vs {want}"
        );
    }
}

#[test]
fn response_writes_the_promised_columns() {
    let out = tmp("resp.csv");
    let o = leadline(&[
        "response",
        "--lowpass",
        "40",
        "--fs",
        "500",
        "--freqs",
        "1,40,100",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&out).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], "freq_hz,mag_db,phase_deg,group_delay_s");
    let at40: Vec<f64> = lines[2].split(',').map(|v| v.parse().unwrap()).collect();
    assert!((at40[1] + 3.0103).abs() < 1e-3, "{}", lines[2]);
    let o = leadline(&[
        "response",
        "--lowpass",
        "40",
        "--fs",
        "500",
        "--points",
        "64",
    ]);
    assert_eq!(String::from_utf8(o.stdout).unwrap().lines().count(), 65);
}

#[test]
fn filter_keeps_the_time_base_and_converts_formats() {
    let input = tmp("in.csv");
    let o = leadline(&[
        "simulate",
        "--fs",
        "250",
        "--seconds",
        "4",
        "--channels",
        "2",
        "--out",
        input.to_str().unwrap(),
    ]);
    assert!(o.status.success());
    let out = tmp("out.csv");
    let o = leadline(&[
        "filter",
        "--input",
        input.to_str().unwrap(),
        "--highpass",
        "0.5",
        "--notch",
        "50",
        "--lowpass",
        "40",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let a = std::fs::read_to_string(&input).unwrap();
    let b = std::fs::read_to_string(&out).unwrap();
    assert_eq!(a.lines().count(), b.lines().count());
    assert_eq!(b.lines().next().unwrap(), "time_s,ch1,ch2");
    for (la, lb) in a.lines().zip(b.lines()).skip(1) {
        let t = |l: &str| l.split(',').next().unwrap().parse::<f64>().unwrap();
        assert_eq!(t(la), t(lb), "same time column");
    }
    // No stage: a plain conversion to raw f64 keeps the values (in mV) exactly.
    let raw = tmp("out.f64");
    let o = leadline(&[
        "filter",
        "--input",
        input.to_str().unwrap(),
        "--out",
        raw.to_str().unwrap(),
    ]);
    assert!(o.status.success());
    let bytes = std::fs::read(&raw).unwrap();
    assert_eq!(bytes.len(), 1000 * 2 * 8);
    let first: f64 = a
        .lines()
        .nth(1)
        .unwrap()
        .split(',')
        .nth(1)
        .unwrap()
        .parse()
        .unwrap();
    let got = f64::from_le_bytes(bytes[..8].try_into().unwrap());
    assert!((got - first).abs() < 1e-12, "{got} vs {first}");
    // Zero-phase from raw back to CSV.
    let back = tmp("back.csv");
    let o = leadline(&[
        "filter",
        "--input",
        raw.to_str().unwrap(),
        "--fs",
        "250",
        "--channels",
        "2",
        "--zero-phase",
        "--lowpass",
        "30",
        "--out",
        back.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(
        std::fs::read_to_string(&back).unwrap().lines().count(),
        1001
    );
}

#[test]
fn bad_input_exits_2_with_a_one_line_reason() {
    let o = leadline(&["sos", "--lowpass", "300", "--fs", "500"]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8(o.stderr).unwrap();
    assert!(err.contains("Nyquist") && err.lines().count() == 1, "{err}");
    let missing = tmp("nope.csv");
    let o = leadline(&[
        "filter",
        "--input",
        missing.to_str().unwrap(),
        "--out",
        tmp("x.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(1), "a missing file is an I/O failure");
    let garbage = tmp("garbage.csv");
    std::fs::write(&garbage, "hello\nworld\n").unwrap();
    let o = leadline(&[
        "filter",
        "--input",
        garbage.to_str().unwrap(),
        "--out",
        tmp("y.csv").to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("no rows of numbers"));
    let o = leadline(&["simulate", "--fs", "50"]);
    assert_eq!(o.status.code(), Some(2));
    for cmd in ["simulate", "monitor", "sos", "response", "filter"] {
        assert!(leadline(&[cmd, "--help"]).status.success(), "{cmd} --help");
    }
}

#[test]
fn spectrum_writes_psd_report_and_png_from_a_scope_style_csv() {
    // A scope-style export: preamble, header with units, time column in seconds, volts.
    let input = tmp("scope.csv");
    let mut text = String::from("Model,XYZ\nSample Interval,0.002\nTime (s),CH1 (V)\n");
    for i in 0..5000 {
        let t = i as f64 * 0.002;
        let v = 40e-6 * std::f64::consts::SQRT_2 * (std::f64::consts::TAU * 50.3 * t).sin()
            + 1e-3 * (std::f64::consts::TAU * 1.2 * t).sin();
        text.push_str(&format!("{t:.4},{v:.9e}\n"));
    }
    std::fs::write(&input, text).unwrap();
    let (out, report, png) = (tmp("psd.csv"), tmp("report.json"), tmp("psd.png"));
    let o = leadline(&[
        "spectrum",
        "--input",
        input.to_str().unwrap(),
        "--units",
        "V",
        "--out",
        out.to_str().unwrap(),
        "--report",
        report.to_str().unwrap(),
        "--png",
        png.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(
        std::fs::read_to_string(&out)
            .unwrap()
            .starts_with("freq_hz,psd\n0,")
    );
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    assert!((r["mains_hz"].as_f64().unwrap() - 50.3).abs() < 0.05, "{r}");
    assert!(
        (r["harmonics"][0]["rms_uv"].as_f64().unwrap() - 40.0).abs() < 0.8,
        "{r}"
    );
    assert!(r["snr_db"].is_number() && r["band_power"]["ecg_uv2"].is_number());
    let header = std::fs::read(&png).unwrap();
    assert_eq!(&header[..8], b"\x89PNG\r\n\x1a\n");
}

#[test]
fn beats_reads_wfdb_and_writes_beats_and_a_summary() {
    // MIT-BIH record 100 (PhysioNet, ODC-By 1.0; see tests/data/mitdb/README.md).
    let hea = concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/mitdb/100.hea");
    let (out, summary) = (tmp("beats100.csv"), tmp("summary100.json"));
    let o = leadline(&[
        "beats",
        "--input",
        hea,
        "--out",
        out.to_str().unwrap(),
        "--summary",
        summary.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.starts_with("sample,time_s,"));
    // The database has 2273 beats in record 100.
    let n = text.lines().count() - 1;
    assert!((2260..=2285).contains(&n), "{n} beats");
    let s: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&summary).unwrap()).unwrap();
    assert_eq!(s["beats"].as_u64().unwrap() as usize, n);
    let hr = s["mean_hr_bpm"].as_f64().unwrap();
    // 2273 beats in 1805.6 s is 75.5 bpm.
    assert!((hr - 75.5).abs() < 1.0, "{hr}");
    for k in ["mean_rr_ms", "sdnn_ms", "rmssd_ms", "pnn50"] {
        assert!(s["hrv"][k].is_number(), "{k}");
    }
    let o = leadline(&[
        "beats",
        "--input",
        hea,
        "--channel",
        "5",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn parts_json_follows_the_contract() {
    let out = tmp("parts.json");
    let o = leadline(&[
        "parts",
        "--highpass",
        "0.5",
        "--notch",
        "50",
        "--lowpass",
        "40",
        "--lowpass-order",
        "3",
        "--fs",
        "500",
        "--capacitor",
        "1e-6",
        "--capacitor",
        "1e-7",
        "--capacitor",
        "2.2e-7",
        "--inamp-gain",
        "101",
        "--inamp-k",
        "100000",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    let stages = v.as_array().unwrap();
    let kinds: Vec<&str> = stages
        .iter()
        .map(|s| s["topology"].as_str().unwrap())
        .collect();
    assert_eq!(
        kinds,
        [
            "inamp-gain",
            "sallen-key-highpass",
            "twin-t",
            "rc-lowpass",
            "sallen-key-lowpass"
        ]
    );
    // In-amp: G = 1 + K/Rg with K = 100 kΩ and G = 101 → 1 kΩ (common practice example).
    assert_eq!(stages[0]["parts"]["Rg"].as_f64().unwrap(), 1000.0);
    assert_eq!(stages[0]["design_gain"].as_f64().unwrap(), 101.0);
    for s in &stages[1..] {
        assert!(
            s["design_hz"].is_number() && s["realised_hz"].is_number(),
            "{s}"
        );
    }
    for key in ["C1", "C2", "R1", "R2"] {
        assert!(stages[1]["parts"][key].is_number(), "{key}");
        assert!(stages[4]["parts"][key].is_number(), "{key}");
    }
    assert!(stages[1]["q"].is_number() && stages[1]["design_q"].is_number());
    for key in ["R", "C", "k"] {
        assert!(stages[2]["parts"][key].is_number(), "{key}");
    }
    assert!(stages[3]["parts"]["R"].is_number() && stages[3]["parts"]["C"].is_number());
    let o = leadline(&[
        "parts",
        "--lowpass",
        "40",
        "--fs",
        "500",
        "--series",
        "E7",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn monitor_refuses_a_bad_setup_file_naming_the_line_and_key() {
    let p = tmp("bad-setup.toml");
    std::fs::write(
        &p,
        "[chain.lowpass]\nenabled = true\ncorner_hz = \"forty\"\n",
    )
    .unwrap();
    // The setup is read before any window opens, so this needs no display.
    let o = leadline(&["monitor", "--config", p.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let e = String::from_utf8_lossy(&o.stderr);
    assert!(
        e.contains("bad-setup.toml") && e.contains("line 3") && e.contains("corner_hz"),
        "{e}"
    );
    let o = leadline(&["monitor", "--config", tmp("missing.toml").to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("missing.toml"));
}

#[test]
fn conform_reports_the_standards_checks_with_pass_and_advice() {
    // Limits: Maji & Burke, IEEE TIM 69(3), 2020 (impulse test); 0.67 Hz gain and upper corner
    // from the ECG standards (docs/REFERENCES.md §3; figures recalled from memory).
    let report = tmp("conform.json");
    let o = leadline(&[
        "conform",
        "--highpass",
        "0.5",
        "--notch",
        "50",
        "--lowpass",
        "40",
        "--fs",
        "500",
        "--report",
        report.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    for key in [
        "impulse_undershoot_uv",
        "impulse_slope_uv_per_s",
        "gain_db_at_0_67_hz",
        "upper_corner_hz",
        "st_shift_uv",
    ] {
        assert!(r[key].is_number(), "{key}: {}", r[key]);
    }
    assert_eq!(r["pass"]["impulse_undershoot"], false);
    assert_eq!(r["pass"]["gain_at_0_67_hz"], true);
    assert!(r["advice"][0].as_str().unwrap().contains("zero phase"));
    // The chain of a setup file: a first-order 0.05 Hz high-pass passes the impulse test.
    let setup = tmp("conform.toml");
    std::fs::write(
        &setup,
        "[chain.highpass]\nenabled = true\ncorner_hz = 0.05\norder = 1\n[chain.notch]\nenabled = false\n[chain.lowpass]\nenabled = true\ncorner_hz = 150.0\norder = 2\n",
    )
    .unwrap();
    let o = leadline(&[
        "conform",
        "--config",
        setup.to_str().unwrap(),
        "--fs",
        "1000",
        "--diagnostic",
        "--report",
        report.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    assert_eq!(r["pass"]["impulse_undershoot"], true, "{r}");
    assert_eq!(r["pass"]["impulse_slope"], true, "{r}");
    assert_eq!(r["pass"]["gain_at_0_67_hz"], true, "{r}");
    assert_eq!(r["mode"], "diagnostic");
}

/// Every numeric option of every command, found by walking the clap definitions (so a new
/// option cannot escape), refuses NaN, an infinity, a negative value and an absurdly large one
/// with exit 2 and one line that names the option.
#[test]
fn every_numeric_option_refuses_nan_inf_negative_and_absurd_values() {
    fn walk(
        cmd: &clap::Command,
        path: &mut Vec<String>,
        out: &mut Vec<(Vec<String>, String, usize)>,
    ) {
        for a in cmd.get_arguments() {
            if let Some(long) = a.get_long()
                && a.get_action().takes_values()
                // The product's list of numeric value parsers (plain f64 and integers too).
                && leadline::cli::num::is_numeric(a.get_value_parser())
            {
                // Options that take several values at once (START,END) get them all bad.
                let n = a.get_num_args().map_or(1, |r| r.min_values()).max(1);
                out.push((path.clone(), long.to_string(), n));
            }
        }
        for sub in cmd.get_subcommands() {
            path.push(sub.get_name().to_string());
            walk(sub, path, out);
            path.pop();
        }
    }
    let mut options = Vec::new();
    let mut definition = leadline::cli::Cli::definition();
    definition.build();
    walk(&definition, &mut Vec::new(), &mut options);
    // The commands hold about a hundred numeric options; a walk that finds few is broken.
    assert!(options.len() > 90, "{} options found", options.len());
    // Signed quantities (an axis in degrees, −180…180) take −1: for them the negative tried is
    // one beyond their range.
    const SIGNED: [&str; 1] = ["axis-deg"];
    let mut tried = 0;
    for (path, long, n) in &options {
        let negative = if SIGNED.contains(&long.as_str()) {
            "-181"
        } else {
            "-1"
        };
        for bad in ["NaN", "inf", negative, "1e308", "99999999999999"] {
            let mut cmd = crate::common::command();
            cmd.args(path)
                .arg(format!("--{long}"))
                .arg(vec![bad; *n].join(","));
            let out = cmd.output().unwrap();
            let err = String::from_utf8_lossy(&out.stderr);
            let what = format!("{} --{long} {bad}", path.join(" "));
            assert_eq!(out.status.code(), Some(2), "{what}: {err}");
            let lines: Vec<&str> = err.lines().filter(|l| !l.trim().is_empty()).collect();
            assert_eq!(lines.len(), 1, "{what}: {err}");
            assert!(lines[0].contains(&format!("--{long}")), "{what}: {err}");
            assert!(lines[0].len() < 200, "{what}: {err}");
            tried += 1;
        }
    }
    assert_eq!(tried, options.len() * 5);
}

/// `--fs -1` with a space reaches the range check instead of clap's "unexpected argument".
#[test]
fn a_negative_rate_says_what_range_it_wants() {
    let out = crate::common::leadline(["conform", "--fs", "-1", "--report", "/dev/null"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("125–4000 Hz"), "{err}");
    assert!(!err.contains("unexpected argument"), "{err}");
    // A 1e308 corner is named as given, not as a 309-digit number.
    let out = crate::common::leadline([
        "filter",
        "--input",
        "x.csv",
        "--out",
        "y.csv",
        "--highpass",
        "1e308",
    ]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.len() < 200 && err.contains("0.01–2000 Hz"), "{err}");
}

/// The hostile-input review's cases, each with its exit code and the one line expected.
#[test]
fn the_reviewed_bad_options_each_give_one_line_and_exit_2() {
    let input = tmp("review.csv");
    std::fs::write(&input, "time_s,ch1\n0,0\n0.004,1\n").unwrap();
    let i = input.to_str().unwrap();
    let out = tmp("review-out.csv");
    let o = out.to_str().unwrap();
    let rate = "125–4000 Hz";
    // `measure response` with one bad chain flag.
    let response = |flag: &'static str, value: &'static str| -> Vec<&str> {
        let base = [
            "measure",
            "response",
            "--input",
            i,
            "--stimulus",
            "0",
            "--output",
            "1",
        ];
        let mut v = base.to_vec();
        v.extend(["--out", o, flag, value]);
        v
    };
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["conform", "--fs", "NaN", "--report", o], rate),
        (vec!["conform", "--fs", "-inf", "--report", o], rate),
        (vec!["conform", "--fs", "-1", "--report", o], rate),
        (vec!["conform", "--fs", "0", "--report", o], rate),
        (vec!["conform", "--fs", "inf", "--report", o], rate),
        (vec!["conform", "--fs", "1e308", "--report", o], rate),
        (vec!["conform", "--fs", "1e9", "--report", o], rate),
        (vec!["simulate", "--seconds=1e308"], "0.001–86400 s"),
        (vec!["filter", "--fs=NaN", "--input", i, "--out", o], rate),
        (vec!["filter", "--fs=inf", "--input", i, "--out", o], rate),
        (vec!["emg", "--fs=NaN", "--input", i, "--out", o], rate),
        (vec!["parts", "--fs=NaN", "--out", o], rate),
        (
            vec!["filter", "--input", i, "--out", o, "--highpass", "1e-308"],
            "0.01–2000 Hz",
        ),
        (
            vec!["parts", "--fs", "500", "--out", o, "--lowpass", "1e-308"],
            "0.01–2000 Hz",
        ),
        (
            vec![
                "conform",
                "--fs",
                "500",
                "--report",
                o,
                "--notch",
                "50",
                "--notch-q",
                "1e308",
            ],
            "0.5–100",
        ),
        (
            vec![
                "sound",
                "--input",
                i,
                "--out",
                o,
                "--notch",
                "50",
                "--notch-q",
                "1e308",
            ],
            "0.5–100",
        ),
        (
            vec![
                "export-c",
                "--fs",
                "500",
                "--out",
                o,
                "--highpass",
                "1e-308",
            ],
            "0.01–2000 Hz",
        ),
        (response("--highpass", "NaN"), "0.01–2000 Hz"),
        (response("--lowpass", "-5"), "0.01–2000 Hz"),
        (response("--notch", "NaN"), "1–2000 Hz"),
        (response("--notch-q", "-1"), "0.5–100"),
        (response("--highpass-order", "0"), "1–8"),
        (response("--lowpass-order", "99"), "1–8"),
    ];
    for (args, says) in cases {
        let out = leadline(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        let what = args.join(" ");
        assert_eq!(out.status.code(), Some(2), "{what}: {err}");
        let lines: Vec<&str> = err.lines().filter(|l| !l.trim().is_empty()).collect();
        assert_eq!(lines.len(), 1, "{what}: {err}");
        assert!(lines[0].contains(says), "{what}: {err}");
        assert!(lines[0].len() < 160, "{what}: {err}");
    }
}
