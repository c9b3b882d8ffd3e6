//! The streaming, crash-safe writer, and a whole recording written at once.

use std::fs::File;
use std::io::{Seek, SeekFrom, Write};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use super::header::{Scaling, field, fit8, header_bytes, record_layout};
use super::tal::{clean_text, onset_text, tal};
use super::{ANNOTATION_BYTES, DATA_END, EdfKind, EdfSpec, PADDING};
use crate::store::{Event, Recording, StoreError};

/// What a finished (or stopped) file holds.
#[derive(Debug, Clone, PartialEq)]
pub struct EdfSummary {
    pub path: PathBuf,
    /// Data records written (and counted in the header).
    pub records: u64,
    /// Frames of real data (without the last record's padding).
    pub frames: u64,
    /// Frames of padding that fill the last record (after the data-end annotation).
    pub padded_frames: u64,
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
    pub fn finish(&mut self) -> Result<EdfSummary, StoreError> {
        let result = self.finish_records();
        if result.is_err() {
            // A half-written record is cut off; the header already counts only whole ones.
            let _ = self.file.set_len(self.bytes);
        }
        result
    }

    fn finish_records(&mut self) -> Result<EdfSummary, StoreError> {
        let partial = self.pending[0].len();
        let padded_frames = if partial > 0 {
            (self.spr - partial) as u64
        } else {
            0
        };
        if partial > 0 {
            let end = self.elapsed_s();
            self.events.push_back(Event {
                onset_s: end,
                duration_s: None,
                text: DATA_END.into(),
            });
            // Said in words too, for any EDF+ reader: what follows the data is not signal.
            self.events.push_back(Event {
                onset_s: end,
                duration_s: Some(padded_frames as f64 * self.duration_s / self.spr as f64),
                text: format!(
                    "{PADDING}{padded_frames} samples per signal repeat the last value to fill the record"
                ),
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
            padded_frames,
            clipped: self.clipped,
            bytes: self.bytes,
        })
    }
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

impl crate::store::Sink for EdfWriter {
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

    fn frames_held(&self) -> u64 {
        (self.records * self.spr as u64).min(self.frames)
    }

    fn cut_to_held(&mut self) {
        let _ = self.file.set_len(self.bytes);
    }

    fn finish(&mut self) -> Result<crate::store::Finished, StoreError> {
        EdfWriter::finish(self).map(|s| crate::store::Finished {
            bytes: s.bytes,
            frames: s.frames,
            padded_frames: s.padded_frames,
        })
    }
}
