//! Reading EDF, EDF+ and BDF(+) files.

use std::path::Path;

use super::header::Scaling;
use super::tal::parse_tals;
use super::{DATA_END, EdfKind};
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
    let kind = if bytes[0] == 0xFF && &bytes[1..8] == b"BIOSEMI" {
        EdfKind::Bdf
    } else if text(&bytes[0..8]) == "0" {
        EdfKind::Edf
    } else {
        return Err(bad(
            "not an EDF or BDF file (the version field is neither \"0\" nor 0xFF BIOSEMI)".into(),
        ));
    };
    let num = |lo: usize, hi: usize, name: &str| -> Result<f64, StoreError> {
        let t = text(&bytes[lo..hi]);
        t.parse::<f64>()
            .map_err(|_| bad(format!("header field '{name}' is not a number: {t:?}")))
    };
    let header_len = num(184, 192, "number of bytes in header")? as usize;
    let count = num(236, 244, "number of data records")?;
    let duration = num(244, 252, "duration of a data record")?;
    let ns = num(252, 256, "number of signals")?;
    if !((1.0..=4096.0).contains(&ns) && ns.fract() == 0.0) {
        return Err(bad(format!("number of signals {ns} is not 1–4096")));
    }
    let ns = ns as usize;
    if header_len != 256 * (ns + 1) || bytes.len() < header_len {
        return Err(bad(format!(
            "header size {header_len} does not match {ns} signals ({} expected) or the file is cut inside it",
            256 * (ns + 1)
        )));
    }
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
        let f = |v: &str, name: &str| -> Result<f64, StoreError> {
            v.parse::<f64>().map_err(|_| {
                bad(format!(
                    "signal {} ({}): '{name}' is not a number: {v:?}",
                    i + 1,
                    labels[i]
                ))
            })
        };
        let scaling = Scaling {
            pmin: f(&pmins[i], "physical minimum")?,
            pmax: f(&pmaxs[i], "physical maximum")?,
            dmin: f(&dmins[i], "digital minimum")? as i32,
            dmax: f(&dmaxs[i], "digital maximum")? as i32,
        };
        let spr = f(&sprs[i], "samples per record")?;
        if !(spr >= 1.0 && spr.fract() == 0.0) {
            return Err(bad(format!(
                "signal {} ({}): samples per record {spr} is not a positive whole number",
                i + 1,
                labels[i]
            )));
        }
        if scaling.dmax <= scaling.dmin || scaling.pmax == scaling.pmin {
            return Err(bad(format!(
                "signal {} ({}): empty physical or digital range",
                i + 1,
                labels[i]
            )));
        }
        signals.push(Signal {
            label: labels[i].clone(),
            dimension: dims[i].clone(),
            scaling,
            spr: spr as usize,
        });
    }
    Ok(Header {
        kind,
        header_len,
        count,
        duration,
        signals,
    })
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
    let record_len: usize = signals.iter().map(|s| s.spr * width).sum();
    let whole = (bytes.len() - header_len) / record_len;
    let records = if count >= 0.0 && (count as usize) <= whole {
        count as usize
    } else {
        whole
    };
    if duration.is_nan() || duration <= 0.0 {
        return Err(bad(format!("record duration {duration} s is not positive")));
    }
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
    if let Some(end) = events
        .iter()
        .find(|e| e.text == DATA_END)
        .map(|e| e.onset_s)
    {
        let n = (end * fs_hz).round().max(0.0) as usize;
        for c in &mut channels {
            c.truncate(n);
        }
        events.retain(|e| e.text != DATA_END);
    }
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
