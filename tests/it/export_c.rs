//! The exported C header: compiled with gcc -std=c99 -Wall -Wextra -Werror, run on a test vector
//! by a small C driver, and compared with the f64 chain, scipy.signal.sosfilt (fixture
//! tests/reference/export.json, made by make_export.py) and the bit-exact Rust models.

#![allow(clippy::unwrap_used)]

use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use leadline::dsp::chain;
use leadline::dsp::{ChainSettings, HighPass, LowPass, Notch};
use leadline::export::c_header::{F32Model, FixedModel};

fn dir() -> PathBuf {
    let d = std::env::temp_dir().join(format!("leadline-export-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

struct Fixture {
    x: Vec<f64>,
    y: Vec<f64>,
}

fn fixture() -> Fixture {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/reference/export.json");
    let v: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap();
    let arr = |k: &str| -> Vec<f64> {
        v[k].as_array()
            .unwrap()
            .iter()
            .map(|x| x.as_f64().unwrap())
            .collect()
    };
    Fixture {
        x: arr("x"),
        y: arr("y"),
    }
}

/// 0.5 Hz high-pass (order 2) + 50 Hz notch Q 30 + 40 Hz low-pass (order 4).
fn settings() -> ChainSettings {
    ChainSettings {
        highpass: HighPass {
            enabled: true,
            corner_hz: 0.5,
            order: 2,
        },
        notch: Notch {
            enabled: true,
            mains_hz: 50.0,
            q: 30.0,
            harmonics: 0,
            auto: false,
        },
        lowpass: LowPass {
            enabled: true,
            corner_hz: 40.0,
            order: 4,
        },
        gain: 1.0,
        cancel: Default::default(),
    }
}

const CHAIN_FLAGS: [&str; 8] = [
    "--highpass",
    "0.5",
    "--notch",
    "50",
    "--lowpass",
    "40",
    "--fs",
    "1000",
];

/// Exports, compiles the driver against the header, runs it on `input` lines; returns its lines.
fn run_c(format: &str, prefix: &str, input: &str) -> Vec<String> {
    let d = dir();
    let header = d.join(format!("filters_{format}.h"));
    crate::common::run_ok(
        crate::common::command()
            .arg("export-c")
            .args(CHAIN_FLAGS)
            .args(["--format", format, "--prefix", prefix, "--out"])
            .arg(&header),
    );
    let (ty, scan, print) = match format {
        "f32" => ("float", "%f", "%.9g\\n\", (double)"),
        "q15" => ("int16_t", "%ld", "%d\\n\", (int)"),
        _ => ("int32_t", "%ld", "%ld\\n\", (long)"),
    };
    let read = if format == "f32" {
        format!("float v; while (scanf(\"{scan}\", &v) == 1) {{ {ty} x = v;")
    } else {
        format!("long v; while (scanf(\"{scan}\", &v) == 1) {{ {ty} x = ({ty})v;")
    };
    let driver = format!(
        "#include <stdio.h>\n#include \"{}\"\nint main(void) {{\n    {prefix}_state s;\n    {prefix}_init(&s);\n    {read}\n        {ty} y = {prefix}_process(&s, x);\n        printf(\"{print}y);\n    }}\n    return 0;\n}}\n",
        header.display()
    );
    let src = d.join(format!("driver_{format}.c"));
    std::fs::write(&src, driver).unwrap();
    let exe = d.join(format!("driver_{format}"));
    let cc = Command::new("gcc")
        .args([
            "-std=c99",
            "-Wall",
            "-Wextra",
            "-Werror",
            "-pedantic",
            "-O2",
            "-o",
        ])
        .arg(&exe)
        .arg(&src)
        .output()
        .expect("gcc is needed for this test (.ci/run installs it)");
    assert!(
        cc.status.success(),
        "the {format} header does not compile cleanly:\n{}",
        String::from_utf8_lossy(&cc.stderr)
    );
    let mut child = Command::new(&exe)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .unwrap();
    child
        .stdin
        .take()
        .unwrap()
        .write_all(input.as_bytes())
        .unwrap();
    let out = child.wait_with_output().unwrap();
    assert!(out.status.success());
    String::from_utf8(out.stdout)
        .unwrap()
        .lines()
        .map(str::to_string)
        .collect()
}

fn filtered(sections: &[leadline::dsp::Section], x: &[f64]) -> Vec<f64> {
    let mut v = x.to_vec();
    chain::filter_once(sections, &mut v);
    v
}

fn peak(v: &[f64]) -> f64 {
    v.iter().fold(0.0_f64, |m, x| m.max(x.abs()))
}

fn max_err(a: &[f64], b: &[f64]) -> f64 {
    assert_eq!(a.len(), b.len());
    a.iter()
        .zip(b)
        .fold(0.0_f64, |m, (x, y)| m.max((x - y).abs()))
}

#[test]
fn f64_chain_reproduces_scipy_on_the_export_vector() {
    let f = fixture();
    let sections = settings().design(1000.0).unwrap();
    let ours = filtered(&sections, &f.x);
    // scipy.signal.sosfilt, float64 (fixture): the chain itself is right.
    assert!(max_err(&ours, &f.y) < 1e-9 * peak(&f.y));
}

#[test]
fn f32_header_compiles_and_matches_f64_and_scipy_within_1e_4_of_the_peak() {
    let f = fixture();
    let xs: Vec<f32> = f.x.iter().map(|&v| v as f32).collect();
    let input: String = xs.iter().map(|v| format!("{v:.9e}\n")).collect();
    let lines = run_c("f32", "leadline", &input);
    let c: Vec<f64> = lines
        .iter()
        .map(|l| f64::from(l.parse::<f32>().unwrap()))
        .collect();
    let sections = settings().design(1000.0).unwrap();
    let f64_out = filtered(&sections, &f.x);
    let p = peak(&f64_out);
    let e_chain = max_err(&c, &f64_out);
    let e_scipy = max_err(&c, &f.y);
    eprintln!(
        "f32: error {:.3e} (f64 chain), {:.3e} (scipy) of the peak",
        e_chain / p,
        e_scipy / p
    );
    assert!(e_chain < 1e-4 * p, "{e_chain}");
    // scipy.signal.sosfilt (fixture export.json)
    assert!(e_scipy < 1e-4 * p, "{e_scipy}");
    // And it is exactly the Rust model of the same float32 operations.
    let mut m = F32Model::new(&sections).unwrap();
    for (i, (&x, got)) in xs.iter().zip(&c).enumerate() {
        let want = m.process(x);
        // Nine significant digits print a float32 exactly: parse back to f32 and compare bits.
        assert_eq!(want.to_bits(), (*got as f32).to_bits(), "sample {i}");
    }
}

fn fixed_case(format: &str, full: f64, tol: f64) {
    let f = fixture();
    let q: Vec<i64> = f.x.iter().map(|&v| (v * full).round() as i64).collect();
    let input: String = q.iter().map(|v| format!("{v}\n")).collect();
    let lines = run_c(format, "fw", &input);
    let c: Vec<i64> = lines.iter().map(|l| l.parse::<i64>().unwrap()).collect();
    let sections = settings().design(1000.0).unwrap();
    let mut m = FixedModel::new(&sections).unwrap();
    for (i, (&x, &got)) in q.iter().zip(&c).enumerate() {
        let want = if format == "q15" {
            i64::from(m.process_q15(x as i16))
        } else {
            i64::from(m.process_q31(x as i32))
        };
        assert_eq!(
            want, got,
            "{format} sample {i}: the C code and the Rust model differ"
        );
    }
    assert_eq!(m.saturations, 0);
    let f64_out = filtered(&sections, &f.x);
    let p = peak(&f64_out);
    let cf: Vec<f64> = c.iter().map(|&v| v as f64 / full).collect();
    let e = max_err(&cf, &f64_out);
    eprintln!("{format}: error {:.3e} of the peak (limit {tol:e})", e / p);
    assert!(e < tol * p, "{format}: {e} of peak {p}");
    // scipy.signal.sosfilt (fixture export.json)
    assert!(max_err(&cf, &f.y) < tol * p);
}

#[test]
fn q15_header_is_bit_exact_with_the_rust_model_and_within_2e_2_of_the_peak() {
    fixed_case("q15", 32768.0, 2e-2);
}

#[test]
fn q31_header_is_bit_exact_with_the_rust_model_and_within_1e_4_of_the_peak() {
    fixed_case("q31", 2_147_483_648.0, 1e-4);
}

#[test]
fn a_bad_prefix_or_an_unfit_gain_is_refused_with_exit_2() {
    let out = crate::common::command()
        .arg("export-c")
        .args(CHAIN_FLAGS)
        .args(["--prefix", "my-filter", "--out"])
        .arg(dir().join("bad.h"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("not a C identifier"));
    let out = crate::common::command()
        .arg("export-c")
        .args(CHAIN_FLAGS)
        .args(["--gain", "3", "--format", "q31", "--out"])
        .arg(dir().join("bad.h"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("Q2.30"));
}
