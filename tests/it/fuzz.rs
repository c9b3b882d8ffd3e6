//! Seeded mutation tests of every reader and wire decoder: 10,000 mutated inputs each (bit
//! flips, bytes set to values that break parsers, numeric header fields replaced by NaN, inf,
//! 1e308 and the like, cuts and garbage tails), from a fixed seed so a failure repeats. Each
//! input must give a result or a one-line error, never a panic, and within a bounded time.
//! The committed corpus in tests/data/fuzz (the cases a hostile user found) also runs through
//! the binary: exit 0, 1 or 2 only, with the expected one-line message.

// Helpers unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use std::panic::{AssertUnwindSafe, catch_unwind};
use std::path::Path;
use std::time::{Duration, Instant};

use leadline::rng::Rng;
use leadline::store::edf::EdfKind;
use leadline::store::{FileUnit, ReadOptions, Recording};

use crate::common::{leadline, tmp};

/// Mutations per reader.
const MUTATIONS: usize = 10_000;
/// No single input may take longer than this (a debug build on a loaded 2-core machine).
const PER_INPUT: Duration = Duration::from_secs(5);

/// Texts that numeric fields and parsers trip over.
const NASTY: [&[u8]; 14] = [
    b"NaN",
    b"nan",
    b"inf",
    b"-inf",
    b"1e308",
    b"-1e308",
    b"1e-308",
    b"-1",
    b"0",
    b"99999999",
    b"-9999999",
    b"\xff",
    b"",
    b"0x10",
];

fn mutate(rng: &mut Rng, base: &[u8]) -> Vec<u8> {
    let mut v = base.to_vec();
    let ops = 1 + (rng.next_u64() % 4) as usize;
    for _ in 0..ops {
        let n = v.len().max(1);
        let at = (rng.next_u64() as usize) % n;
        match rng.next_u64() % 8 {
            0 => {
                if let Some(b) = v.get_mut(at) {
                    *b ^= 1 << (rng.next_u64() % 8);
                }
            }
            1 => {
                if let Some(b) = v.get_mut(at) {
                    *b = rng.next_u64() as u8;
                }
            }
            2 => {
                if let Some(b) = v.get_mut(at) {
                    *b = [0u8, 0xff, b' ', b'-', b'9', b'.', b'\n', b',']
                        [rng.next_u64() as usize % 8];
                }
            }
            3 => {
                // A numeric-looking stretch replaced by a nasty text, padded to 8 characters as
                // an EDF field would be.
                let t = NASTY[rng.next_u64() as usize % NASTY.len()];
                let mut field = t.to_vec();
                field.resize(8.max(t.len()), b' ');
                let at = at.min(v.len());
                let end = (at + field.len()).min(v.len());
                v.splice(at..end, field);
            }
            4 => v.truncate(at),
            5 => {
                let extra = (rng.next_u64() % 64) as usize;
                for _ in 0..extra {
                    v.push(rng.next_u64() as u8);
                }
            }
            6 => {
                // A stretch repeated (a duplicated line or record).
                let len = ((rng.next_u64() % 64) as usize).min(v.len().saturating_sub(at));
                let chunk = v[at..at + len].to_vec();
                v.splice(at..at, chunk);
            }
            _ => {
                let len = ((rng.next_u64() % 32) as usize).min(v.len().saturating_sub(at));
                v.drain(at..at + len);
            }
        }
    }
    v
}

/// Runs `f` on every mutation of `base`: no panic, no input slower than [`PER_INPUT`], every
/// error one line. Returns (accepted, refused).
fn hammer(
    name: &str,
    seed: u64,
    base: &[u8],
    mut f: impl FnMut(&[u8]) -> Result<(), String>,
) -> (usize, usize) {
    let mut rng = Rng::new(seed);
    let (mut ok, mut refused) = (0, 0);
    for i in 0..MUTATIONS {
        let input = mutate(&mut rng, base);
        let t0 = Instant::now();
        let r = catch_unwind(AssertUnwindSafe(|| f(&input)));
        let took = t0.elapsed();
        assert!(took < PER_INPUT, "{name}: mutation {i} took {took:?}");
        match r {
            Err(_) => panic!("{name}: mutation {i} (seed {seed}) panicked"),
            Ok(Ok(())) => ok += 1,
            Ok(Err(e)) => {
                assert!(
                    !e.contains('\n'),
                    "{name}: mutation {i}: a message of many lines: {e}"
                );
                assert!(!e.is_empty(), "{name}: mutation {i}: an empty message");
                refused += 1;
            }
        }
    }
    (ok, refused)
}

/// A recording's values are numbers or it says why not.
fn sane(rec: &Recording) -> Result<(), String> {
    if !(rec.fs_hz.is_finite() && rec.fs_hz > 0.0) {
        return Err(format!("a rate of {} Hz was accepted", rec.fs_hz));
    }
    Ok(())
}

fn small_recording() -> Recording {
    let fs = 250.0;
    let n = 500;
    let ch = |k: f64| -> Vec<f64> {
        (0..n)
            .map(|i| 800.0 * (i as f64 * 0.05 * k).sin())
            .collect()
    };
    Recording {
        fs_hz: fs,
        names: vec!["ch1".into(), "ch2".into()],
        time_s: None,
        channels: vec![ch(1.0), ch(2.0)],
        events: vec![leadline::store::Event {
            onset_s: 0.5,
            duration_s: None,
            text: "marker".into(),
        }],
        signals: Vec::new(),
        notes: Vec::new(),
    }
}

fn edf_like(kind: EdfKind, name: &str, seed: u64) {
    let base_path = tmp("fuzz", name);
    leadline::store::edf::write(&base_path, &small_recording(), kind).unwrap();
    let base = std::fs::read(&base_path).unwrap();
    let path = tmp("fuzz", &format!("m-{name}"));
    let (ok, refused) = hammer(name, seed, &base, |bytes| {
        std::fs::write(&path, bytes).map_err(|e| e.to_string())?;
        let rec = leadline::store::edf::read(&path).map_err(|e| e.to_string())?;
        sane(&rec)?;
        // Every signal group too, as `--channel` would read it.
        for k in 0..rec.signal_list().len().min(4) {
            let _ = leadline::store::edf::read_group(&path, Some(k)).map_err(|e| e.to_string());
        }
        Ok(())
    });
    // The mutations must reach both sides: files read and files refused.
    assert!(
        ok > 500 && refused > 500,
        "{name}: {ok} read, {refused} refused"
    );
}

#[test]
fn edf_reader_survives_ten_thousand_mutations() {
    edf_like(EdfKind::Edf, "base.edf", 11);
}

#[test]
fn bdf_reader_survives_ten_thousand_mutations() {
    edf_like(EdfKind::Bdf, "base.bdf", 12);
}

#[test]
fn csv_reader_survives_ten_thousand_mutations() {
    let mut text = String::from("# fs=250\ntime_s,ch1,ch2\n");
    for i in 0..300 {
        text.push_str(&format!(
            "{:.3},{:.3},{:.3}\n",
            i as f64 / 250.0,
            (i as f64).sin(),
            0.5
        ));
    }
    let path = tmp("fuzz", "m.csv");
    let opts = ReadOptions {
        fs_hz: None,
        unit: FileUnit::Millivolts,
        channels: 1,
    };
    let (ok, refused) = hammer("csv", 13, text.as_bytes(), |bytes| {
        std::fs::write(&path, bytes).map_err(|e| e.to_string())?;
        let rec = leadline::store::csv::read(&path, &opts).map_err(|e| e.to_string())?;
        sane(&rec)
    });
    assert!(
        ok > 500 && refused > 100,
        "csv: {ok} read, {refused} refused"
    );
}

#[test]
fn wfdb_reader_survives_ten_thousand_mutations() {
    // A small record of our own: two signals in format 212 (any bytes are valid samples).
    let hea = "fz 2 360 400\nfz.dat 212 200 11 1024 995 -22131 0 MLII\nfz.dat 212 200 11 1024 1011 20052 0 V5\n";
    let mut rng = Rng::new(5);
    let dat: Vec<u8> = (0..1200).map(|_| rng.next_u64() as u8).collect();
    let dir = tmp("fuzz", "wfdb").with_extension("");
    std::fs::create_dir_all(&dir).unwrap();
    let (hea_path, dat_path) = (dir.join("fz.hea"), dir.join("fz.dat"));
    std::fs::write(&dat_path, &dat).unwrap();
    // Header mutations.
    let (ok, refused) = hammer("wfdb header", 14, hea.as_bytes(), |bytes| {
        std::fs::write(&hea_path, bytes).map_err(|e| e.to_string())?;
        let rec = leadline::store::wfdb::read(&hea_path).map_err(|e| e.to_string())?;
        sane(&rec)
    });
    assert!(
        ok > 200 && refused > 500,
        "wfdb header: {ok} read, {refused} refused"
    );
    // Signal-file mutations (cuts and garbage tails mostly).
    std::fs::write(&hea_path, hea).unwrap();
    let (ok, refused) = hammer("wfdb data", 15, &dat, |bytes| {
        std::fs::write(&dat_path, bytes).map_err(|e| e.to_string())?;
        let rec = leadline::store::wfdb::read(&hea_path).map_err(|e| e.to_string())?;
        sane(&rec)
    });
    assert!(
        ok > 500 && refused > 500,
        "wfdb data: {ok} read, {refused} refused"
    );
}

fn chunks(rng: &mut Rng, bytes: &[u8]) -> Vec<std::ops::Range<usize>> {
    let mut out = Vec::new();
    let mut at = 0;
    while at < bytes.len() {
        let n = 1 + (rng.next_u64() % 97) as usize;
        let end = (at + n).min(bytes.len());
        out.push(at..end);
        at = end;
    }
    out
}

#[test]
fn text_wire_decoder_survives_ten_thousand_mutations() {
    let scale = leadline::scale::InputScale::default();
    let mut text = leadline::wire::ascii::header(500.0, 2, &scale, "fuzz");
    let counts: Vec<f64> = (0..400).map(|i| f64::from(i % 4096)).collect();
    leadline::wire::ascii::encode_frames(&counts, 2, &mut text);
    let mut split = Rng::new(16);
    let (ok, _) = hammer("text wire", 17, text.as_bytes(), |bytes| {
        let mut d = leadline::wire::ascii::Decoder::new();
        let mut out = Vec::new();
        for r in chunks(&mut split, bytes) {
            d.push(&bytes[r], &mut out);
        }
        let _ = (d.stats(), d.fs_hz(), d.names());
        for f in &out {
            if f.samples.iter().any(|v| !v.is_finite()) {
                return Err("a sample that is not a number came through".into());
            }
        }
        Ok(())
    });
    assert_eq!(ok, MUTATIONS);
}

#[test]
fn binary_wire_decoders_survive_ten_thousand_mutations() {
    let mut stream = Vec::new();
    let mut datagrams = Vec::new();
    for seq in 0..60u16 {
        let samples: Vec<i32> = (0..4).map(|k| i32::from(seq) * 10 + k).collect();
        let mut one = Vec::new();
        leadline::wire::binary::encode(seq, &samples, 0, &mut one);
        stream.extend_from_slice(&one);
        datagrams.push(one);
    }
    let mut split = Rng::new(18);
    let (ok, _) = hammer("binary stream", 19, &stream, |bytes| {
        let mut d = leadline::wire::binary::Decoder::new();
        let mut out = Vec::new();
        for r in chunks(&mut split, bytes) {
            d.push(&bytes[r], &mut out);
        }
        let _ = d.stats();
        Ok(())
    });
    assert_eq!(ok, MUTATIONS);
    // Datagrams: each mutated on its own, decoded and put back in order.
    let joined: Vec<u8> = datagrams.concat();
    let (ok, _) = hammer("udp datagrams", 20, &joined, |bytes| {
        let mut stats = leadline::wire::WireStats::default();
        let mut order = leadline::wire::reorder::Reorder::new(Duration::from_millis(50));
        let now = Instant::now();
        let (mut frames, mut released) = (Vec::new(), Vec::new());
        for d in bytes.chunks(datagrams[0].len().max(1)) {
            leadline::wire::binary::decode_datagram(d, &mut frames, &mut stats);
        }
        for f in frames.drain(..) {
            order.push(f, now, &mut released);
        }
        order.release(now + Duration::from_secs(1), &mut released);
        let _ = order.stats();
        Ok(())
    });
    assert_eq!(ok, MUTATIONS);
}

/// The committed corpus: each file with the command it broke, the exit code and a piece of the
/// one-line message expected now.
#[test]
fn corpus_of_hostile_files_gives_one_line_and_an_exit_code() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/fuzz");
    let cases: [(&str, &str, i32, &str); 10] = [
        (
            "records-inf.edf",
            "filter",
            2,
            "'number of data records' is not a whole number",
        ),
        (
            "bdf-header-in-edf.edf",
            "spectrum",
            2,
            "the version field says BDF",
        ),
        ("bitflips.edf", "spectrum", 2, "not a whole number"),
        (
            "spr-1e308.edf",
            "beats",
            2,
            "'samples per record' is not a whole number",
        ),
        (
            "spr-1e308.edf",
            "filter",
            2,
            "'samples per record' is not a whole number",
        ),
        (
            "pmin-nan.edf",
            "beats",
            2,
            "'physical minimum' is not a number",
        ),
        (
            "pmax-inf.edf",
            "spectrum",
            2,
            "'physical maximum' is not a number",
        ),
        (
            "pmax-1e308.edf",
            "beats",
            2,
            "'physical maximum' is not a number",
        ),
        (
            "records-nan.edf",
            "spectrum",
            2,
            "'number of data records' is not a whole number",
        ),
        (
            "records-1e308.edf",
            "beats",
            2,
            "'number of data records' is not a whole number",
        ),
    ];
    let out = tmp("fuzz", "corpus-out.csv");
    for (file, cmd, code, says) in cases {
        let input = dir.join(file);
        assert!(input.exists(), "{file} is missing from tests/data/fuzz");
        let o = leadline([
            cmd,
            "--input",
            input.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ]);
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(code), "{cmd} {file}: {err}");
        assert!(!err.contains("panicked"), "{cmd} {file}: {err}");
        if code != 0 {
            let lines: Vec<&str> = err.lines().filter(|l| !l.trim().is_empty()).collect();
            assert_eq!(lines.len(), 1, "{cmd} {file}: {err}");
            assert!(lines[0].contains(says), "{cmd} {file}: {err}");
            assert!(
                lines[0].contains(file),
                "{cmd} {file}: the message names the file: {err}"
            );
        }
    }
    // Every corpus file through every reading command: exit 0, 1 or 2, never a panic.
    for entry in std::fs::read_dir(&dir).unwrap() {
        let p = entry.unwrap().path();
        if p.extension().is_some_and(|e| e == "py" || e == "md") {
            continue;
        }
        for cmd in ["spectrum", "beats", "filter"] {
            let o = leadline([
                cmd,
                "--input",
                p.to_str().unwrap(),
                "--out",
                out.to_str().unwrap(),
            ]);
            let err = String::from_utf8_lossy(&o.stderr);
            assert!(
                matches!(o.status.code(), Some(0..=2)),
                "{cmd} {}: {err}",
                p.display()
            );
            assert!(!err.contains("panicked"), "{cmd} {}: {err}", p.display());
        }
    }
}
