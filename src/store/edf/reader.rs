//! Reading EDF, EDF+ and BDF(+) files.

use std::path::Path;

use super::header::Scaling;
use super::tal::parse_tals;
use super::{DATA_END, EdfKind, PADDING};
use crate::store::{Recording, StoreError};

/// One signal's header fields.
#[derive(Debug, Clone)]
pub(super) struct Signal {
    label: String,
    dimension: String,
    scaling: Scaling,
    spr: usize,
}

pub(super) fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).trim().to_string()
}

/// µV per unit of a physical dimension, if it is a voltage.
pub(super) fn uv_per(dim: &str) -> Option<f64> {
    match dim.trim() {
        "uV" | "µV" | "microV" => Some(1.0),
        "mV" => Some(1e3),
        "V" => Some(1e6),
        "nV" => Some(1e-3),
        _ => None,
    }
}

/// Reads an EDF, EDF+ or BDF(+) file: its voltage signals (at the rate of the first one) as µV,
/// and its annotations as events. Every signal is listed in [`Recording::signals`]; the ones
/// left out (another rate, not a voltage) are named in [`Recording::notes`] and can be read with
/// [`read_group`]. A record count of −1 or one beyond the data is replaced by the number of whole
/// records present; a partly written last record is left out.
///
/// # Errors
/// [`StoreError::Malformed`] naming the header field that is wrong.
pub fn read(path: &Path) -> Result<Recording, StoreError> {
    read_group(path, None)
}

/// The fixed header and the signal headers.
pub(super) struct Header {
    pub(super) kind: EdfKind,
    pub(super) header_len: usize,
    /// The record count the header claims (−1: unknown).
    pub(super) count: f64,
    pub(super) duration: f64,
    pub(super) signals: Vec<Signal>,
}

/// Parses and checks the header of a file read into `bytes`.
///
/// # Errors
/// [`StoreError::Malformed`] naming the field that is wrong.
pub(super) fn parse_header(bytes: &[u8], path: &Path) -> Result<Header, StoreError> {
    let bad = |r: String| StoreError::malformed(path, r);
    if bytes.len() < 256 {
        return Err(bad(format!(
            "{} bytes is shorter than an EDF header (256)",
            bytes.len()
        )));
    }
    let kind = kind_of(bytes, path).map_err(bad)?;
    // Each field as the EDF specification defines it (Kemp et al. 1992; BDF: BioSemi's format
    // description; docs/REFERENCES.md §6): whole numbers where it says so, and a range that the
    // field's 8 characters can write without an exponent.
    let field = |lo: usize, hi: usize| text(&bytes[lo..hi]);
    let header_len = whole_field(&field(184, 192), "number of bytes in header").map_err(bad)?;
    let count = whole_field(&field(236, 244), "number of data records").map_err(bad)?;
    if count < -1 {
        return Err(bad(format!(
            "header field 'number of data records' is {count}: expected −1 (unknown) or a count"
        )));
    }
    let duration = real_field(&field(244, 252), "duration of a data record").map_err(bad)?;
    if !(duration > 0.0 && duration <= 86_400.0) {
        return Err(bad(format!(
            "header field 'duration of a data record' is {}: expected more than 0 and at most a day (s)",
            crate::numeric::short(duration)
        )));
    }
    let ns = whole_field(&field(252, 256), "number of signals").map_err(bad)?;
    if !(1..=4096).contains(&ns) {
        return Err(bad(format!(
            "header field 'number of signals' is {ns}: expected 1–4096"
        )));
    }
    let ns = ns as usize;
    if header_len != 256 * (ns as i64 + 1) || bytes.len() < 256 * (ns + 1) {
        return Err(bad(format!(
            "header size {header_len} does not match {ns} signals ({} expected) or the file is cut inside it",
            256 * (ns + 1)
        )));
    }
    let header_len = 256 * (ns + 1);
    let h = &bytes[256..header_len];
    let mut offset = 0;
    let mut column = |width: usize| -> Vec<String> {
        let v = (0..ns)
            .map(|i| text(&h[offset + i * width..offset + (i + 1) * width]))
            .collect();
        offset += width * ns;
        v
    };
    let labels = column(16);
    let _transducer = column(80);
    let dims = column(8);
    let pmins = column(8);
    let pmaxs = column(8);
    let dmins = column(8);
    let dmaxs = column(8);
    let _prefilter = column(80);
    let sprs = column(8);
    let mut signals = Vec::with_capacity(ns);
    for i in 0..ns {
        let fields = SignalFields {
            pmin: &pmins[i],
            pmax: &pmaxs[i],
            dmin: &dmins[i],
            dmax: &dmaxs[i],
            spr: &sprs[i],
        };
        let scaled = signal_scaling(&fields, kind, duration)
            .map_err(|e| bad(format!("signal {} ({}): {e}", i + 1, labels[i])))?;
        signals.push(Signal {
            label: labels[i].clone(),
            dimension: dims[i].clone(),
            scaling: scaled.0,
            spr: scaled.1,
        });
    }
    let count = count as f64;
    Ok(Header {
        kind,
        header_len,
        count,
        duration,
        signals,
    })
}

/// EDF or BDF, from the version field, which must agree with the file's extension.
fn kind_of(bytes: &[u8], path: &Path) -> Result<EdfKind, String> {
    let kind = if bytes[0] == 0xFF && &bytes[1..8] == b"BIOSEMI" {
        EdfKind::Bdf
    } else if text(&bytes[0..8]) == "0" {
        EdfKind::Edf
    } else {
        return Err(
            "not an EDF or BDF file (the version field is neither \"0\" nor 0xFF BIOSEMI)".into(),
        );
    };
    match (kind, crate::store::extension_of(path).as_str()) {
        (EdfKind::Bdf, "edf") => Err(
            "the version field says BDF (0xFF \"BIOSEMI\") but the name ends in .edf: a BDF file is named .bdf".into(),
        ),
        (EdfKind::Edf, "bdf") => Err(
            "the version field says EDF (\"0\") but the name ends in .bdf: an EDF file is named .edf".into(),
        ),
        _ => Ok(kind),
    }
}

/// One signal's header fields as written.
struct SignalFields<'a> {
    pmin: &'a str,
    pmax: &'a str,
    dmin: &'a str,
    dmax: &'a str,
    spr: &'a str,
}

/// A signal's scaling and samples per record, each field checked as the specification says.
fn signal_scaling(
    f: &SignalFields,
    kind: EdfKind,
    duration: f64,
) -> Result<(Scaling, usize), String> {
    let (dlo, dhi) = kind.digital_range();
    let pmin = real_field(f.pmin, "physical minimum")?;
    let pmax = real_field(f.pmax, "physical maximum")?;
    let dmin = whole_field(f.dmin, "digital minimum")?;
    let dmax = whole_field(f.dmax, "digital maximum")?;
    for (v, name) in [(dmin, "digital minimum"), (dmax, "digital maximum")] {
        if v < i64::from(dlo) || v > i64::from(dhi) {
            return Err(format!("'{name}' {v} is outside the format's {dlo}…{dhi}"));
        }
    }
    if dmax <= dmin {
        return Err(format!(
            "'digital maximum' {dmax} is not above 'digital minimum' {dmin}"
        ));
    }
    if pmax == pmin {
        return Err(format!(
            "'physical minimum' and 'physical maximum' are both {}",
            crate::numeric::short(pmin)
        ));
    }
    let spr = whole_field(f.spr, "samples per record")?;
    if spr < 1 {
        return Err(format!("'samples per record' is {spr}: expected 1 or more"));
    }
    let rate = spr as f64 / duration;
    if rate > MAX_RATE_HZ {
        return Err(format!(
            "{spr} samples per {} s record is {} Hz, above the {} Hz any biopotential converter runs at",
            crate::numeric::short(duration),
            crate::numeric::short(rate),
            crate::numeric::short(MAX_RATE_HZ)
        ));
    }
    let scaling = Scaling {
        pmin,
        pmax,
        dmin: dmin as i32,
        dmax: dmax as i32,
    };
    Ok((scaling, spr as usize))
}

/// Where the file marks the end of its data (the last record padded), the channels end; the
/// marker and the padding note are the file's own bookkeeping, not events.
fn cut_at_data_end(channels: &mut [Vec<f64>], events: &mut Vec<crate::store::Event>, fs_hz: f64) {
    if let Some(end) = events
        .iter()
        .find(|e| e.text == DATA_END)
        .map(|e| e.onset_s)
    {
        let n = (end * fs_hz).round().max(0.0) as usize;
        for c in channels.iter_mut() {
            c.truncate(n);
        }
        events.retain(|e| e.text != DATA_END && !e.text.starts_with(PADDING));
    }
}

/// The highest signal rate a file may claim, Hz.
const MAX_RATE_HZ: f64 = 1e6;

/// A header field that the specification defines as a whole number (8 characters at most, so
/// no exponent and at most 99,999,999).
fn whole_field(t: &str, name: &str) -> Result<i64, String> {
    t.parse::<i64>()
        .map_err(|_| format!("header field '{name}' is not a whole number: {t:?}"))
}

/// A header field that the specification defines as a number: finite, and no larger than its 8
/// characters write without an exponent.
fn real_field(t: &str, name: &str) -> Result<f64, String> {
    match t.parse::<f64>() {
        Ok(v) if v.is_finite() && v.abs() < 1e8 => Ok(v),
        _ => Err(format!(
            "header field '{name}' is not a number of at most 8 characters: {t:?}"
        )),
    }
}

/// True for the signal that carries annotations (EDF+/BDF+).
fn is_annotations(s: &Signal) -> bool {
    s.label == "EDF Annotations" || s.label == "BDF Annotations"
}

/// The signal asked for (`pick`, counted without annotations), else the first voltage, else the
/// first signal.
fn choose_signal(
    path: &Path,
    signals: &[Signal],
    pick: Option<usize>,
) -> Result<usize, StoreError> {
    let bad = |r: String| StoreError::malformed(path, r);
    let is_ann = is_annotations;
    let data_signals: Vec<usize> = (0..signals.len())
        .filter(|&i| !is_ann(&signals[i]))
        .collect();
    Ok(match pick {
        Some(k) => *data_signals.get(k).ok_or_else(|| {
            bad(format!(
                "signal {k} does not exist: the file has {} signal(s) besides annotations",
                data_signals.len()
            ))
        })?,
        None => match data_signals
            .iter()
            .copied()
            .find(|&i| uv_per(&signals[i].dimension).is_some())
        {
            Some(i) => i,
            None => *data_signals
                .first()
                .ok_or_else(|| bad("no signal in the file besides annotations".to_string()))?,
        },
    })
}

/// Where a file's data records are.
struct Layout<'a> {
    bytes: &'a [u8],
    header_len: usize,
    record_len: usize,
    records: usize,
    kind: EdfKind,
}

impl Layout<'_> {
    /// Every sample of signal `s` (its bytes start `offset` into each record), in its physical
    /// unit, µV for a voltage.
    fn values(&self, s: &Signal, offset: usize) -> Vec<f64> {
        let width = self.kind.bytes();
        let decode = |b: &[u8]| -> i32 {
            match self.kind {
                EdfKind::Edf => i32::from(i16::from_le_bytes([b[0], b[1]])),
                EdfKind::Bdf => (i32::from_le_bytes([0, b[0], b[1], b[2]])) >> 8,
            }
        };
        let k = uv_per(&s.dimension).unwrap_or(1.0);
        let mut v = Vec::with_capacity(self.records * s.spr);
        for r in 0..self.records {
            let at = self.header_len + r * self.record_len + offset;
            for c in self.bytes[at..at + s.spr * width].chunks_exact(width) {
                v.push(s.scaling.to_physical(decode(c)) * k);
            }
        }
        v
    }
}

/// Like [`read`], but the channels are the group of signal `pick` (0-based among the file's
/// signals other than annotations): every signal at its rate and of its kind (voltage or not). A
/// signal that is not a voltage is read in its own physical unit.
///
/// # Errors
/// As [`read`]; also a `pick` beyond the file's signals.
pub fn read_group(path: &Path, pick: Option<usize>) -> Result<Recording, StoreError> {
    let bytes = std::fs::read(path).map_err(|e| StoreError::io(path, e))?;
    let bad = |r: String| StoreError::malformed(path, r);
    let Header {
        kind,
        header_len,
        count,
        duration,
        signals,
    } = parse_header(&bytes, path)?;
    let width = kind.bytes();
    // The record's length from the header, then the number of records the file's own length
    // confirms: nothing below is sized from a header field before this.
    let record_len = signals
        .iter()
        .try_fold(0usize, |sum, s| s.spr.checked_mul(width)?.checked_add(sum))
        .ok_or_else(|| bad("the signals' samples per record add up beyond any file".into()))?;
    let whole = (bytes.len() - header_len) / record_len;
    let records = if count >= 0.0 && (count as usize) <= whole {
        count as usize
    } else {
        whole
    };
    let is_ann = is_annotations;
    let chosen = choose_signal(path, &signals, pick)?;
    let spr = signals[chosen].spr;
    let voltage = uv_per(&signals[chosen].dimension).is_some();
    let in_group =
        |s: &Signal| !is_ann(s) && s.spr == spr && uv_per(&s.dimension).is_some() == voltage;
    let mut names = Vec::new();
    let mut channels = Vec::new();
    let mut events = Vec::new();
    let mut infos = Vec::new();
    let mut notes = Vec::new();
    if count > whole as f64 {
        notes.push(format!(
            "the header counts {count} data records but the file holds {whole} whole one(s): read those"
        ));
    }
    let mut sig_offset = 0;
    for s in &signals {
        let rate = s.spr as f64 / duration;
        if in_group(s) {
            let v = Layout {
                bytes: &bytes,
                header_len,
                record_len,
                records,
                kind,
            }
            .values(s, sig_offset);
            infos.push(crate::store::SignalInfo {
                name: s.label.clone(),
                fs_hz: rate,
                unit: s.dimension.clone(),
                channel: Some(channels.len()),
            });
            names.push(s.label.clone());
            channels.push(v);
        } else if is_ann(s) {
            for r in 0..records {
                let at = header_len + r * record_len + sig_offset;
                parse_tals(&bytes[at..at + s.spr * width], &mut events);
            }
        } else {
            let why = if s.spr != spr {
                format!("{} Hz, not {} Hz", rate, spr as f64 / duration)
            } else {
                format!("unit {:?}", s.dimension)
            };
            notes.push(format!(
                "signal {} ({}) is not read with the others ({why})",
                infos.len(),
                s.label
            ));
            infos.push(crate::store::SignalInfo {
                name: s.label.clone(),
                fs_hz: rate,
                unit: s.dimension.clone(),
                channel: None,
            });
        }
        sig_offset += s.spr * width;
    }
    let fs_hz = spr as f64 / duration;
    cut_at_data_end(&mut channels, &mut events, fs_hz);
    Ok(Recording {
        fs_hz,
        names,
        time_s: None,
        channels,
        events,
        signals: infos,
        notes,
    })
}
