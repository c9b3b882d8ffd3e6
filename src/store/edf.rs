//! EDF+ (16-bit) and BDF+ (24-bit) recordings: a streaming, crash-safe writer and a reader.
//!
//! Layout per the EDF specification (Kemp et al. 1992), its EDF+ extension (Kemp & Olivan 2003)
//! and BioSemi's BDF description; see REFERENCE.md §6. Files are always "continuous" (`EDF+C` /
//! `BDF+C`) with one annotation signal carrying the time-keeping TAL of every record, event
//! markers and gap notes.
//!
//! Crash safety: each data record is written whole, and only then is the header's record count
//! rewritten to include it, so at every instant the count never runs ahead of the data. A writer
//! killed between the two leaves a count one record behind, which every reader accepts.

use std::fs::File;
use std::io::{Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant, SystemTime, UNIX_EPOCH};

use super::{Event, Recording, StoreError};

/// Which of the two sample widths.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EdfKind {
    /// EDF+: 16-bit two's complement samples.
    Edf,
    /// BDF+: 24-bit two's complement samples.
    Bdf,
}

impl EdfKind {
    fn bytes(self) -> usize {
        match self {
            EdfKind::Edf => 2,
            EdfKind::Bdf => 3,
        }
    }

    /// Lowest and highest digital value.
    pub fn digital_range(self) -> (i32, i32) {
        match self {
            EdfKind::Edf => (-32768, 32767),
            EdfKind::Bdf => (-8_388_608, 8_388_607),
        }
    }

    fn annotation_label(self) -> &'static str {
        match self {
            EdfKind::Edf => "EDF Annotations",
            EdfKind::Bdf => "BDF Annotations",
        }
    }
}

/// Text of the annotation that marks where real data end inside a padded last record.
pub const DATA_END: &str = "leadline: end of data";
/// Text of the annotation written where the stream had a gap (device lost and found again).
pub const GAP: &str = "gap: device lost and found again";

/// Bytes of annotation space per record (TALs beyond it move to the next record).
const ANNOTATION_BYTES: usize = 240;
/// Longest marker text kept, bytes (so a TAL always fits a record).
pub const MAX_TEXT: usize = 120;
/// Records larger than this are split into shorter durations where the rate allows (the spec
/// recommends at most 61 440 bytes).
const RECOMMENDED_RECORD_BYTES: usize = 61_440;

/// What the writer needs to know before the first sample.
#[derive(Debug, Clone, PartialEq)]
pub struct EdfSpec {
    pub kind: EdfKind,
    /// Sample rate, Hz (the same for every channel).
    pub fs_hz: f64,
    /// Channel labels (up to 16 characters are kept).
    pub labels: Vec<String>,
    /// Physical range of each channel, µV (one for all, or one per channel): values outside are
    /// held at the ends (and counted).
    pub range_uv: Vec<(f64, f64)>,
    /// Prefiltering text per the spec, e.g. "HP:0.5Hz LP:40Hz N:50Hz" (empty: none known).
    pub prefilter: String,
    /// Transducer text (empty: unknown).
    pub transducer: String,
    /// Start of the recording (wall clock, written as UTC).
    pub start: SystemTime,
    /// Sync data to the disk at least once a second (live recording), not only to the OS.
    pub durable: bool,
}

impl EdfSpec {
    /// A spec for a recording starting now, with defaults for the text fields.
    pub fn new(kind: EdfKind, fs_hz: f64, labels: Vec<String>, range_uv: (f64, f64)) -> Self {
        Self {
            kind,
            fs_hz,
            labels,
            range_uv: vec![range_uv],
            prefilter: String::new(),
            transducer: String::new(),
            start: SystemTime::now(),
            durable: false,
        }
    }
}

/// Formats `v` in at most 8 characters, rounding away from the range's inside (`up` for a top).
fn fit8(v: f64, up: bool) -> Option<(String, f64)> {
    for d in (0..=7).rev() {
        let m = 10f64.powi(d);
        let r = if up {
            (v * m).ceil() / m
        } else {
            (v * m).floor() / m
        };
        let s = format!("{r:.*}", d as usize);
        let s = if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        };
        if s.len() <= 8 {
            let back: f64 = s.parse().ok()?;
            return Some((s, back));
        }
    }
    None
}

/// Physical ↔ digital mapping of one signal, from the numbers as written in the header.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Scaling {
    pmin: f64,
    pmax: f64,
    dmin: i32,
    dmax: i32,
}

impl Scaling {
    fn gain(&self) -> f64 {
        (self.pmax - self.pmin) / f64::from(self.dmax - self.dmin)
    }

    fn to_physical(self, d: i32) -> f64 {
        (f64::from(d) - f64::from(self.dmin)) * self.gain() + self.pmin
    }

    /// The nearest digital value, and whether it had to be held at an end.
    fn to_digital(self, p: f64) -> (i32, bool) {
        let d = ((p - self.pmin) / self.gain() + f64::from(self.dmin)).round();
        if d.is_nan() {
            (0, true)
        } else if d < f64::from(self.dmin) {
            (self.dmin, true)
        } else if d > f64::from(self.dmax) {
            (self.dmax, true)
        } else {
            (d as i32, false)
        }
    }
}

/// Chooses a record duration (s, as written) and samples per record for `fs_hz`.
fn record_layout(fs_hz: f64, channels: usize, kind: EdfKind) -> Option<(String, f64, usize)> {
    let candidates = [
        "1", "0.5", "0.25", "0.2", "0.1", "2", "4", "5", "10", "20", "25", "50", "100",
    ];
    let mut first_fit = None;
    for c in candidates {
        let d: f64 = c.parse().ok()?;
        let spr = (fs_hz * d).round();
        if spr < 1.0 || ((spr / d) - fs_hz).abs() > 1e-9 * fs_hz {
            continue;
        }
        let spr = spr as usize;
        let bytes = spr * channels * kind.bytes() + ANNOTATION_BYTES;
        // Records longer than a second would hold data back from the disk for longer.
        if d <= 1.0 && bytes <= RECOMMENDED_RECORD_BYTES {
            return Some((c.to_string(), d, spr));
        }
        first_fit.get_or_insert((c.to_string(), d, spr));
    }
    first_fit
}

/// True when EDF/BDF can store `fs_hz` exactly (some record duration holds whole samples).
pub fn rate_fits(fs_hz: f64, channels: usize, kind: EdfKind) -> bool {
    fs_hz.is_finite() && fs_hz > 0.0 && record_layout(fs_hz, channels.max(1), kind).is_some()
}

/// Days since 1970-01-01 → (year, month 1–12, day 1–31), proleptic Gregorian.
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// The header's date and time fields and the EDF+ `Startdate` text for `t` (UTC).
fn date_fields(t: SystemTime) -> (String, String, String) {
    let secs = t
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| d.as_secs() as i64);
    let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
    let s = secs.rem_euclid(86_400);
    const MONTHS: [&str; 12] = [
        "JAN", "FEB", "MAR", "APR", "MAY", "JUN", "JUL", "AUG", "SEP", "OCT", "NOV", "DEC",
    ];
    (
        format!("{d:02}.{m:02}.{:02}", y.rem_euclid(100)),
        format!("{:02}.{:02}.{:02}", s / 3600, s / 60 % 60, s % 60),
        format!("{d:02}-{}-{y:04}", MONTHS[(m - 1) as usize]),
    )
}

/// Keeps printable ASCII only (the header's character set).
fn ascii(s: &str) -> String {
    s.chars()
        .map(|c| if (' '..='~').contains(&c) { c } else { '_' })
        .collect()
}

fn field(out: &mut Vec<u8>, s: &str, width: usize) {
    let s = ascii(s);
    let b = s.as_bytes();
    let n = b.len().min(width);
    out.extend_from_slice(&b[..n]);
    out.extend(std::iter::repeat_n(b' ', width - n));
}

/// Seconds as a TAL onset: sign, then up to 6 decimals without trailing zeros.
fn onset_text(t: f64) -> String {
    let s = format!("{:.6}", t.abs());
    let s = s.trim_end_matches('0').trim_end_matches('.');
    format!("{}{s}", if t < 0.0 { '-' } else { '+' })
}

/// Cleans a marker text: no control characters (0x14/0x15 delimit TALs), at most [`MAX_TEXT`] bytes.
pub fn clean_text(text: &str) -> String {
    let mut out = String::new();
    for c in text.chars().map(|c| if c.is_control() { ' ' } else { c }) {
        if out.len() + c.len_utf8() > MAX_TEXT {
            break;
        }
        out.push(c);
    }
    out.trim().to_string()
}

/// One TAL: `+onset[\x15duration]\x14text\x14\x00`.
fn tal(e: &Event) -> Vec<u8> {
    let mut v = onset_text(e.onset_s).into_bytes();
    if let Some(d) = e.duration_s {
        v.push(0x15);
        v.extend_from_slice(onset_text(d).trim_start_matches('+').as_bytes());
    }
    v.push(0x14);
    v.extend_from_slice(e.text.as_bytes());
    v.push(0x14);
    v.push(0);
    v
}

/// What a finished (or stopped) file holds.
#[derive(Debug, Clone, PartialEq)]
pub struct EdfSummary {
    pub path: PathBuf,
    /// Data records written (and counted in the header).
    pub records: u64,
    /// Frames of real data (without the last record's padding).
    pub frames: u64,
    /// Samples held at the physical range's ends.
    pub clipped: u64,
    /// File size, bytes.
    pub bytes: u64,
}

/// A streaming EDF+/BDF+ writer.
#[derive(Debug)]
pub struct EdfWriter {
    file: File,
    path: PathBuf,
    kind: EdfKind,
    channels: usize,
    spr: usize,
    duration_s: f64,
    ann_samples: usize,
    scaling: Vec<Scaling>,
    pending: Vec<Vec<f64>>,
    events: std::collections::VecDeque<Event>,
    records: u64,
    frames: u64,
    clipped: u64,
    bytes: u64,
    durable: bool,
    last_sync: Instant,
    record_buf: Vec<u8>,
}

impl EdfWriter {
    /// Creates the file and writes its header (record count 0).
    ///
    /// # Errors
    /// A rate no record duration fits, a bad range, no channels, or the file cannot be created.
    pub fn create(path: &Path, spec: &EdfSpec) -> Result<Self, StoreError> {
        let bad = |r: String| StoreError::malformed(path, r);
        let channels = spec.labels.len();
        if channels == 0 {
            return Err(bad("no channels to record".into()));
        }
        if !(spec.fs_hz.is_finite() && spec.fs_hz > 0.0) {
            return Err(bad(format!(
                "sample rate {} Hz is not positive",
                spec.fs_hz
            )));
        }
        if spec.range_uv.len() != 1 && spec.range_uv.len() != channels {
            return Err(bad(format!(
                "{} physical ranges for {channels} channels",
                spec.range_uv.len()
            )));
        }
        let (dur_text, duration_s, spr) = record_layout(spec.fs_hz, channels, spec.kind)
            .ok_or_else(|| {
                bad(format!(
                    "{} Hz: no record duration up to 100 s holds a whole number of samples, so EDF/BDF cannot store this rate exactly; resample or use .csv",
                    spec.fs_hz
                ))
            })?;
        let (dmin, dmax) = spec.kind.digital_range();
        let mut scaling = Vec::with_capacity(channels);
        let mut texts = Vec::with_capacity(channels);
        for k in 0..channels {
            let (lo, hi) = spec.range_uv[k.min(spec.range_uv.len() - 1)];
            if !(lo.is_finite() && hi.is_finite() && hi > lo) {
                return Err(bad(format!("physical range {lo}…{hi} µV is empty")));
            }
            let (pmin_s, pmin) = fit8(lo, false)
                .ok_or_else(|| bad(format!("physical minimum {lo} µV too large")))?;
            let (pmax_s, pmax) =
                fit8(hi, true).ok_or_else(|| bad(format!("physical maximum {hi} µV too large")))?;
            scaling.push(Scaling {
                pmin,
                pmax,
                dmin,
                dmax,
            });
            texts.push((pmin_s, pmax_s));
        }
        let ann_samples = ANNOTATION_BYTES.div_ceil(spec.kind.bytes());
        let header = header_bytes(spec, &dur_text, spr, ann_samples, &texts, (dmin, dmax));
        let mut file = File::create(path).map_err(|e| StoreError::io(path, e))?;
        file.write_all(&header)
            .map_err(|e| StoreError::io(path, e))?;
        Ok(Self {
            file,
            path: path.to_path_buf(),
            kind: spec.kind,
            channels,
            spr,
            duration_s,
            ann_samples,
            scaling,
            pending: vec![Vec::with_capacity(spr); channels],
            events: Default::default(),
            records: 0,
            frames: 0,
            clipped: 0,
            bytes: header.len() as u64,
            durable: spec.durable,
            last_sync: Instant::now(),
            record_buf: Vec::new(),
        })
    }

    /// Queues an annotation; it goes into the record being filled (or the next one with room).
    pub fn annotate(&mut self, onset_s: f64, duration_s: Option<f64>, text: &str) {
        self.events.push_back(Event {
            onset_s,
            duration_s,
            text: clean_text(text),
        });
    }

    /// Seconds of data taken so far.
    pub fn elapsed_s(&self) -> f64 {
        self.frames as f64 / (self.spr as f64 / self.duration_s)
    }

    /// Bytes in the file so far.
    pub fn bytes(&self) -> u64 {
        self.bytes
    }

    /// Samples held at the ends of the physical range so far.
    pub fn clipped(&self) -> u64 {
        self.clipped
    }

    /// Adds frames (frame-major, µV); every full record goes to the file at once.
    ///
    /// # Errors
    /// The OS refused the write (full disk, removed drive): the file keeps every record before.
    pub fn push(&mut self, frames: &[f64]) -> Result<(), StoreError> {
        for frame in frames.chunks_exact(self.channels) {
            for (buf, &v) in self.pending.iter_mut().zip(frame) {
                buf.push(v);
            }
            self.frames += 1;
            if self.pending[0].len() == self.spr {
                self.write_record()?;
            }
        }
        Ok(())
    }

    fn write_record(&mut self) -> Result<(), StoreError> {
        let bytes = self.kind.bytes();
        let mut buf = std::mem::take(&mut self.record_buf);
        buf.clear();
        for (ch, sc) in self.pending.iter_mut().zip(&self.scaling) {
            for &v in ch.iter() {
                let (d, clipped) = sc.to_digital(v);
                self.clipped += u64::from(clipped);
                buf.extend_from_slice(&d.to_le_bytes()[..bytes]);
            }
            ch.clear();
        }
        // Annotations: the time-keeping TAL, then as many queued ones as fit.
        let start = buf.len();
        let t0 = self.records as f64 * self.duration_s;
        buf.extend_from_slice(onset_text(t0).as_bytes());
        buf.extend_from_slice(&[0x14, 0x14, 0]);
        let room = self.ann_samples * bytes;
        while let Some(e) = self.events.front() {
            let t = tal(e);
            if buf.len() - start + t.len() > room {
                break;
            }
            buf.extend_from_slice(&t);
            self.events.pop_front();
        }
        buf.resize(start + room, 0);
        let res = self.commit(&buf);
        self.record_buf = buf;
        res
    }

    /// Record first, then the count that includes it.
    fn commit(&mut self, record: &[u8]) -> Result<(), StoreError> {
        let path = self.path.clone();
        let io = |e| StoreError::io(&path, e);
        self.file.write_all(record).map_err(io)?;
        self.records += 1;
        self.bytes += record.len() as u64;
        let mut count = Vec::with_capacity(8);
        field(&mut count, &self.records.to_string(), 8);
        self.file.seek(SeekFrom::Start(236)).map_err(io)?;
        self.file.write_all(&count).map_err(io)?;
        self.file.seek(SeekFrom::End(0)).map_err(io)?;
        if self.durable && self.last_sync.elapsed() >= Duration::from_millis(900) {
            self.file.sync_data().map_err(io)?;
            self.last_sync = Instant::now();
        }
        Ok(())
    }

    /// Writes what is left: a partial last record is padded with each channel's last value and
    /// marked with a [`DATA_END`] annotation at the true end; queued annotations get records.
    ///
    /// # Errors
    /// The OS refused the write.
    pub fn finish(mut self) -> Result<EdfSummary, StoreError> {
        let partial = self.pending[0].len();
        if partial > 0 {
            let end = self.elapsed_s();
            self.events.push_back(Event {
                onset_s: end,
                duration_s: None,
                text: DATA_END.into(),
            });
            for ch in &mut self.pending {
                let last = ch.last().copied().unwrap_or(0.0);
                ch.resize(self.spr, last);
            }
            self.write_record()?;
        }
        // Markers dropped after the last sample still get a place (rare: a burst at the end).
        let mut guard = 0;
        while !self.events.is_empty() && guard < 1000 {
            for (ch, sc) in self.pending.iter_mut().zip(&self.scaling) {
                ch.resize(self.spr, sc.to_physical(0));
            }
            self.write_record()?;
            guard += 1;
        }
        self.file
            .sync_all()
            .map_err(|e| StoreError::io(&self.path, e))?;
        Ok(EdfSummary {
            path: self.path.clone(),
            records: self.records,
            frames: self.frames,
            clipped: self.clipped,
            bytes: self.bytes,
        })
    }
}

fn header_bytes(
    spec: &EdfSpec,
    dur_text: &str,
    spr: usize,
    ann_samples: usize,
    ranges: &[(String, String)],
    (dmin, dmax): (i32, i32),
) -> Vec<u8> {
    let ns = spec.labels.len() + 1;
    let mut h = Vec::with_capacity(256 * (ns + 1));
    match spec.kind {
        EdfKind::Edf => field(&mut h, "0", 8),
        EdfKind::Bdf => {
            h.push(0xFF);
            h.extend_from_slice(b"BIOSEMI");
        }
    }
    let (date, time, startdate) = date_fields(spec.start);
    field(&mut h, "X X X X", 80);
    field(&mut h, &format!("Startdate {startdate} X X leadline"), 80);
    field(&mut h, &date, 8);
    field(&mut h, &time, 8);
    field(&mut h, &(256 * (ns + 1)).to_string(), 8);
    field(
        &mut h,
        match spec.kind {
            EdfKind::Edf => "EDF+C",
            EdfKind::Bdf => "BDF+C",
        },
        44,
    );
    field(&mut h, "0", 8);
    field(&mut h, dur_text, 8);
    field(&mut h, &ns.to_string(), 4);
    let ann = spec.kind.annotation_label();
    let each = |h: &mut Vec<u8>, width: usize, data: &dyn Fn(usize) -> String, a: &str| {
        for i in 0..spec.labels.len() {
            field(h, &data(i), width);
        }
        field(h, a, width);
    };
    let (admin, admax) = spec.kind.digital_range();
    each(&mut h, 16, &|i| spec.labels[i].clone(), ann);
    each(&mut h, 80, &|_| spec.transducer.clone(), "");
    each(&mut h, 8, &|_| "uV".into(), "");
    each(&mut h, 8, &|i| ranges[i].0.clone(), "-1");
    each(&mut h, 8, &|i| ranges[i].1.clone(), "1");
    each(&mut h, 8, &|_| dmin.to_string(), &admin.to_string());
    each(&mut h, 8, &|_| dmax.to_string(), &admax.to_string());
    each(&mut h, 80, &|_| spec.prefilter.clone(), "");
    each(&mut h, 8, &|_| spr.to_string(), &ann_samples.to_string());
    each(&mut h, 32, &|_| String::new(), "");
    h
}

/// Writes a whole recording at once (its events as annotations), with a physical range per channel
/// that holds its values: the result is within half a digital step of the input everywhere.
///
/// # Errors
/// As [`EdfWriter::create`] and [`EdfWriter::push`].
pub fn write(path: &Path, rec: &Recording, kind: EdfKind) -> Result<EdfSummary, StoreError> {
    let ranges = rec
        .channels
        .iter()
        .map(|c| {
            let (mut lo, mut hi) = c
                .iter()
                .filter(|v| v.is_finite())
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                    (a.min(v), b.max(v))
                });
            if !(lo.is_finite() && hi.is_finite()) {
                (lo, hi) = (-1.0, 1.0);
            }
            if hi - lo < 1e-3 {
                (lo, hi) = (lo - 1.0, hi + 1.0);
            }
            (lo, hi)
        })
        .collect();
    let mut spec = EdfSpec::new(kind, rec.fs_hz, rec.names.clone(), (0.0, 0.0));
    spec.range_uv = ranges;
    let mut w = EdfWriter::create(path, &spec)?;
    for e in &rec.events {
        w.annotate(e.onset_s, e.duration_s, &e.text);
    }
    let mut frame = Vec::with_capacity(rec.channels.len() * 4096);
    let n = rec.len();
    let mut i = 0;
    while i < n {
        let end = (i + 4096).min(n);
        frame.clear();
        for k in i..end {
            frame.extend(rec.channels.iter().map(|c| c[k]));
        }
        w.push(&frame)?;
        i = end;
    }
    w.finish()
}

/// One signal's header fields.
#[derive(Debug, Clone)]
struct Signal {
    label: String,
    dimension: String,
    scaling: Scaling,
    spr: usize,
}

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).trim().to_string()
}

/// µV per unit of a physical dimension, if it is a voltage.
fn uv_per(dim: &str) -> Option<f64> {
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

/// Like [`read`], but the channels are the group of signal `pick` (0-based among the file's
/// signals other than annotations): every signal at its rate and of its kind (voltage or not). A
/// signal that is not a voltage is read in its own physical unit.
///
/// # Errors
/// As [`read`]; also a `pick` beyond the file's signals.
pub fn read_group(path: &Path, pick: Option<usize>) -> Result<Recording, StoreError> {
    let bytes = std::fs::read(path).map_err(|e| StoreError::io(path, e))?;
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
    let is_ann = |s: &Signal| s.label == "EDF Annotations" || s.label == "BDF Annotations";
    let data_signals: Vec<usize> = (0..signals.len())
        .filter(|&i| !is_ann(&signals[i]))
        .collect();
    let chosen = match pick {
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
    };
    let spr = signals[chosen].spr;
    let voltage = uv_per(&signals[chosen].dimension).is_some();
    let in_group =
        |s: &Signal| !is_ann(s) && s.spr == spr && uv_per(&s.dimension).is_some() == voltage;
    let decode = |b: &[u8]| -> i32 {
        match kind {
            EdfKind::Edf => i32::from(i16::from_le_bytes([b[0], b[1]])),
            EdfKind::Bdf => (i32::from_le_bytes([0, b[0], b[1], b[2]])) >> 8,
        }
    };
    let mut names = Vec::new();
    let mut channels = Vec::new();
    let mut events = Vec::new();
    let mut infos = Vec::new();
    let mut notes = Vec::new();
    let mut sig_offset = 0;
    for s in &signals {
        let rate = s.spr as f64 / duration;
        if in_group(s) {
            let k = uv_per(&s.dimension).unwrap_or(1.0);
            let mut v = Vec::with_capacity(records * s.spr);
            for r in 0..records {
                let at = header_len + r * record_len + sig_offset;
                for c in bytes[at..at + s.spr * width].chunks_exact(width) {
                    v.push(s.scaling.to_physical(decode(c)) * k);
                }
            }
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

/// Parses the TALs of one record's annotation bytes, skipping the time-keeping one.
fn parse_tals(b: &[u8], out: &mut Vec<Event>) {
    let mut first = true;
    for t in b.split(|&c| c == 0).filter(|t| !t.is_empty()) {
        let mut parts = t.split(|&c| c == 0x14);
        let Some(head) = parts.next() else { continue };
        let mut hp = head.split(|&c| c == 0x15);
        let onset = hp
            .next()
            .and_then(|o| std::str::from_utf8(o).ok())
            .and_then(|o| o.trim_start_matches('+').parse::<f64>().ok());
        let duration = hp
            .next()
            .and_then(|d| std::str::from_utf8(d).ok())
            .and_then(|d| d.parse::<f64>().ok());
        let Some(onset) = onset else { continue };
        let texts: Vec<String> = parts
            .filter(|p| !p.is_empty())
            .map(|p| String::from_utf8_lossy(p).into_owned())
            .collect();
        if first && texts.is_empty() {
            first = false;
            continue;
        }
        first = false;
        for text in texts {
            out.push(Event {
                onset_s: onset,
                duration_s: duration,
                text,
            });
        }
    }
}

impl super::Sink for EdfWriter {
    fn push(&mut self, frames: &[f64]) -> Result<(), StoreError> {
        EdfWriter::push(self, frames)
    }

    fn note(&mut self, t_s: f64, text: &str) {
        self.annotate(t_s, None, text);
    }

    fn bytes(&self) -> u64 {
        EdfWriter::bytes(self)
    }

    fn clipped(&self) -> u64 {
        EdfWriter::clipped(self)
    }

    fn finish(self: Box<Self>) -> Result<u64, StoreError> {
        EdfWriter::finish(*self).map(|s| s.bytes)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tmp(name: &str) -> PathBuf {
        std::env::temp_dir().join(format!("leadline-edf-{}-{name}", std::process::id()))
    }

    #[test]
    fn tal_bytes_match_the_spec_examples() {
        // EDF+ specification (Kemp & Olivan 2003), the TAL examples; REFERENCE.md row 22.
        let e = Event {
            onset_s: 180.0,
            duration_s: None,
            text: "Lights off".into(),
        };
        let mut t = tal(&e);
        // The spec's example has two texts in one TAL: "+180␔Lights off␔Close door␔␀" = 28 bytes.
        t.pop();
        t.extend_from_slice(b"Close door\x14\x00");
        assert_eq!(t, b"+180\x14Lights off\x14Close door\x14\x00");
        assert_eq!(t.len(), 28);
        let e = Event {
            onset_s: 1800.2,
            duration_s: Some(25.5),
            text: "Apnea".into(),
        };
        assert_eq!(tal(&e), b"+1800.2\x1525.5\x14Apnea\x14\x00");
        assert_eq!(tal(&e).len(), 20);
    }

    #[test]
    fn header_is_256_per_signal_and_fields_sit_at_their_offsets() {
        // EDF spec (Kemp et al. 1992): header = 256·(ns+1) bytes; REFERENCE.md row 21 (ns = 2 → 768).
        let p = tmp("hdr.edf");
        let mut spec = EdfSpec::new(EdfKind::Edf, 500.0, vec!["ECG".into()], (-3276.8, 3276.7));
        spec.start = UNIX_EPOCH + Duration::from_secs(1_796_205_845); // 2026-12-02 10:04:05 UTC
        let w = EdfWriter::create(&p, &spec).unwrap();
        w.finish().unwrap();
        let b = std::fs::read(&p).unwrap();
        assert_eq!(b.len(), 768);
        assert_eq!(&b[0..8], b"0       ");
        assert_eq!(&b[168..184], b"02.12.2610.04.05");
        assert_eq!(text(&b[184..192]), "768");
        assert_eq!(text(&b[192..236]), "EDF+C");
        assert_eq!(text(&b[236..244]), "0");
        assert_eq!(text(&b[244..252]), "1");
        assert_eq!(text(&b[252..256]), "2");
        assert!(text(&b[88..168]).starts_with("Startdate 02-DEC-2026 "));
        assert_eq!(text(&b[256 + 16..256 + 32]), "EDF Annotations");
    }

    #[test]
    fn physical_range_fits_eight_characters_and_rounds_outward() {
        assert_eq!(fit8(-3276.8, false).unwrap().0, "-3276.8");
        let (s, v) = fit8(-1_234.567_890_1, false).unwrap();
        assert!(s.len() <= 8 && v <= -1_234.567_890_1, "{s}");
        let (s, v) = fit8(98_765.432_1, true).unwrap();
        assert!(s.len() <= 8 && v >= 98_765.432_1, "{s}");
        assert!(fit8(1e12, true).is_none());
    }

    #[test]
    fn round_trip_is_within_half_a_step_and_keeps_events() {
        for kind in [EdfKind::Edf, EdfKind::Bdf] {
            let fs = 360.0;
            let n = 1000; // 2.78 records: the last is padded and trimmed again on reading
            let a: Vec<f64> = (0..n).map(|i| 900.0 * (i as f64 * 0.05).sin()).collect();
            let b: Vec<f64> = (0..n).map(|i| -40.0 + (i % 17) as f64).collect();
            let rec = Recording {
                fs_hz: fs,
                names: vec!["lead I".into(), "lead II".into()],
                time_s: None,
                channels: vec![a.clone(), b.clone()],
                events: vec![Event {
                    onset_s: 1.25,
                    duration_s: None,
                    text: "charger plugged in".into(),
                }],
                ..Default::default()
            };
            let p = tmp(if kind == EdfKind::Edf {
                "rt.edf"
            } else {
                "rt.bdf"
            });
            let s = write(&p, &rec, kind).unwrap();
            assert_eq!((s.records, s.frames, s.clipped), (3, 1000, 0));
            let back = read(&p).unwrap();
            assert_eq!(back.fs_hz, fs);
            assert_eq!(back.names, rec.names);
            assert_eq!(back.len(), n);
            let (dmin, dmax) = kind.digital_range();
            let range = 940.0 - -940.0_f64; // covers both channels' values
            let step = range / f64::from(dmax - dmin);
            for (x, y) in rec
                .channels
                .iter()
                .flatten()
                .zip(back.channels.iter().flatten())
            {
                assert!(
                    (x - y).abs() <= 0.5 * step + 1e-9,
                    "{x} vs {y}, step {step}"
                );
            }
            assert_eq!(back.events, rec.events);
        }
    }

    #[test]
    fn a_count_ahead_of_the_data_or_a_cut_record_is_read_as_what_is_there() {
        let p = tmp("cut.edf");
        let rec = Recording {
            fs_hz: 100.0,
            names: vec!["x".into()],
            time_s: None,
            channels: vec![(0..500).map(f64::from).collect()],
            events: vec![],
            ..Default::default()
        };
        write(&p, &rec, EdfKind::Edf).unwrap();
        let mut b = std::fs::read(&p).unwrap();
        b.truncate(b.len() - 50); // the fifth record is cut short
        b[236..244].copy_from_slice(b"-1      ");
        std::fs::write(&p, &b).unwrap();
        let back = read(&p).unwrap();
        assert_eq!(back.len(), 400);
        std::fs::write(&p, &b[..100]).unwrap();
        let e = read(&p).unwrap_err().to_string();
        assert!(e.contains("shorter than an EDF header"), "{e}");
    }

    #[test]
    fn a_rate_without_whole_samples_per_record_is_refused_clearly() {
        let p = tmp("odd.edf");
        let spec = EdfSpec::new(EdfKind::Edf, 333.333_7, vec!["x".into()], (-1.0, 1.0));
        let e = EdfWriter::create(&p, &spec).unwrap_err().to_string();
        assert!(e.contains("whole number of samples"), "{e}");
        assert_eq!(record_layout(250.5, 1, EdfKind::Edf).unwrap().0, "2");
        // 8 × 4 kHz × 3 bytes is over the recommended record size: half-second records.
        assert_eq!(record_layout(4000.0, 8, EdfKind::Bdf).unwrap().0, "0.5");
    }
}
