//! WFDB records (PhysioNet's open format): a `.hea` text header and a `.dat` signal file in
//! format 212 (two 12-bit samples in three bytes) or 16 (little-endian i16), several signals
//! interleaved frame by frame. Values become µV: (d − baseline) / gain, gain in adu per unit.

use std::path::{Path, PathBuf};

use super::{Recording, StoreError};

#[derive(Debug, Clone)]
struct SignalSpec {
    file: String,
    format: u32,
    gain: f64,
    baseline: f64,
    unit_to_uv: f64,
    name: String,
}

fn parse_gain(field: &str) -> Option<(f64, Option<f64>, f64)> {
    // "200", "200(1024)", "200/mV", "200(1024)/mV", "1000/uV"
    let (num, unit) = match field.split_once('/') {
        Some((n, u)) => (n, u),
        None => (field, "mV"),
    };
    let (g, base) = match num.split_once('(') {
        Some((g, b)) => (g, Some(b.trim_end_matches(')').parse().ok()?)),
        None => (num, None),
    };
    let to_uv = match unit {
        "uV" | "µV" => 1.0,
        "mV" => 1e3,
        "V" => 1e6,
        _ => 1e3,
    };
    let g: f64 = g.parse().ok()?;
    // WFDB: a gain of 0 means "uncalibrated, 200 adu per unit".
    Some((if g == 0.0 { 200.0 } else { g }, base, to_uv))
}

fn bad(path: &Path, why: impl Into<String>) -> StoreError {
    StoreError::malformed(path, why)
}

/// One signal line of a header (`i`: 0-based).
fn signal_line(hea: &Path, l: &str, i: usize) -> Result<SignalSpec, StoreError> {
    let s: Vec<&str> = l.split_whitespace().collect();
    if s.len() < 3 {
        return Err(bad(hea, format!("signal line {}: {l}", i + 1)));
    }
    let format: u32 = s[1]
        .split(['x', ':', '+'])
        .next()
        .unwrap_or("")
        .parse()
        .map_err(|_| bad(hea, format!("format {:?}", s[1])))?;
    let (gain, base, unit_to_uv) =
        parse_gain(s[2]).ok_or_else(|| bad(hea, format!("gain {:?}", s[2])))?;
    let adc_zero: f64 = s.get(4).and_then(|v| v.parse().ok()).unwrap_or(0.0);
    Ok(SignalSpec {
        file: s[0].to_string(),
        format,
        gain,
        baseline: base.unwrap_or(adc_zero),
        unit_to_uv,
        name: s
            .get(8..)
            .map(|r| r.join(" "))
            .filter(|n| !n.is_empty())
            .unwrap_or_else(|| format!("sig{}", i + 1)),
    })
}

/// The samples of a signal file in format 212 or 16, interleaved.
fn samples(hea: &Path, format: u32, bytes: &[u8]) -> Result<Vec<i32>, StoreError> {
    Ok(match format {
        212 => {
            let mut v = Vec::with_capacity(bytes.len() * 2 / 3);
            for c in bytes.chunks_exact(3) {
                let a = (c[0] as i32) | (((c[1] as i32) & 0x0F) << 8);
                let b = (c[2] as i32) | (((c[1] as i32) & 0xF0) << 4);
                // Sign-extend 12 bits.
                v.push((a << 20) >> 20);
                v.push((b << 20) >> 20);
            }
            v
        }
        16 => bytes
            .chunks_exact(2)
            .map(|c| i16::from_le_bytes([c[0], c[1]]) as i32)
            .collect(),
        other => {
            return Err(bad(
                hea,
                format!("signal format {other} (leadline reads 212 and 16)"),
            ));
        }
    })
}

/// Reads a record given its `.hea` path (or the record path without extension).
///
/// # Errors
/// [`StoreError`] for a malformed header, an unsupported format, or a signal file that is
/// missing or shorter than the header says.
pub fn read(path: &Path) -> Result<Recording, StoreError> {
    let hea: PathBuf = if path.extension().is_some_and(|e| e == "hea") {
        path.to_path_buf()
    } else {
        path.with_extension("hea")
    };
    let text = std::fs::read_to_string(&hea).map_err(|e| StoreError::io(&hea, e))?;
    let mut lines = text
        .lines()
        .map(str::trim)
        .filter(|l| !l.is_empty() && !l.starts_with('#'));
    let record = lines.next().ok_or_else(|| bad(&hea, "empty header"))?;
    let f: Vec<&str> = record.split_whitespace().collect();
    if f.len() < 2 {
        return Err(bad(&hea, "the record line needs a name and a signal count"));
    }
    let n_sig: usize = f[1]
        .parse()
        .map_err(|_| bad(&hea, format!("signal count {:?}", f[1])))?;
    let fs: f64 = f
        .get(2)
        .map(|v| v.split('/').next().unwrap_or(v).parse())
        .transpose()
        .map_err(|_| bad(&hea, "sampling frequency"))?
        .unwrap_or(250.0);
    let n_frames: Option<usize> = f.get(3).and_then(|v| v.parse().ok());
    if n_sig == 0 || n_sig > 64 || !(fs.is_finite() && fs > 0.0) {
        return Err(bad(&hea, format!("{n_sig} signals at {fs} Hz")));
    }
    let mut specs = Vec::with_capacity(n_sig);
    for i in 0..n_sig {
        let l = lines
            .next()
            .ok_or_else(|| bad(&hea, format!("signal line {} missing", i + 1)))?;
        specs.push(signal_line(&hea, l, i)?);
    }
    let file = &specs[0].file;
    if specs
        .iter()
        .any(|s| &s.file != file || s.format != specs[0].format)
    {
        return Err(bad(
            &hea,
            "signals in several files or formats are not supported",
        ));
    }
    let dat = hea.with_file_name(file);
    let bytes = std::fs::read(&dat).map_err(|e| StoreError::io(&dat, e))?;
    let raw = samples(&hea, specs[0].format, &bytes)?;
    let frames_in_file = raw.len() / n_sig;
    let frames = match n_frames {
        Some(n) if n > frames_in_file => {
            return Err(bad(
                &dat,
                format!("holds {frames_in_file} frames, the header says {n}"),
            ));
        }
        Some(n) => n,
        None => frames_in_file,
    };
    let mut channels = vec![Vec::with_capacity(frames); n_sig];
    for fr in 0..frames {
        for (k, s) in specs.iter().enumerate() {
            let d = raw[fr * n_sig + k] as f64;
            channels[k].push((d - s.baseline) / s.gain * s.unit_to_uv);
        }
    }
    Ok(Recording {
        fs_hz: fs,
        names: specs.iter().map(|s| s.name.clone()).collect(),
        time_s: None,
        channels,
        events: Vec::new(),
        ..Default::default()
    })
}
