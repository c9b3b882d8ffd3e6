//! Headerless little-endian float files, frame-major (all channels of frame 0, then frame 1, …).
//! The fastest way in and out for long recordings; the rate and channel count come from the user.

use std::io::{BufWriter, Write};
use std::path::Path;

use super::{FileUnit, ReadOptions, Recording, StoreError};

/// Sample width.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Sample {
    F32,
    F64,
}

impl Sample {
    fn bytes(self) -> usize {
        match self {
            Sample::F32 => 4,
            Sample::F64 => 8,
        }
    }
}

/// Reads a raw file.
///
/// # Errors
/// No `fs`, a size that is not a whole number of frames, or a non-finite value.
pub fn read(path: &Path, kind: Sample, opts: &ReadOptions) -> Result<Recording, StoreError> {
    let fs = opts.fs_hz.ok_or_else(|| StoreError::NoRate {
        path: path.display().to_string(),
    })?;
    let n_ch = opts.channels.max(1);
    let bytes = std::fs::read(path).map_err(|e| StoreError::io(path, e))?;
    let frame = kind.bytes() * n_ch;
    if bytes.len() % frame != 0 {
        return Err(StoreError::malformed(
            path,
            format!(
                "{} bytes is not a whole number of {n_ch}-channel frames of {} bytes",
                bytes.len(),
                frame
            ),
        ));
    }
    let mut channels = vec![Vec::with_capacity(bytes.len() / frame); n_ch];
    for (i, chunk) in bytes.chunks_exact(kind.bytes()).enumerate() {
        let v = match kind {
            Sample::F32 => f32::from_le_bytes([chunk[0], chunk[1], chunk[2], chunk[3]]) as f64,
            Sample::F64 => {
                let mut b = [0u8; 8];
                b.copy_from_slice(chunk);
                f64::from_le_bytes(b)
            }
        };
        if !v.is_finite() {
            return Err(StoreError::malformed(
                path,
                format!("value {v} at frame {}", i / n_ch),
            ));
        }
        channels[i % n_ch].push(v * opts.unit.to_uv());
    }
    Ok(Recording {
        fs_hz: fs,
        names: (1..=n_ch).map(|k| format!("ch{k}")).collect(),
        time_s: None,
        channels,
        events: Vec::new(),
        ..Default::default()
    })
}

/// Writes a raw file in `unit`.
///
/// # Errors
/// The file cannot be written.
pub fn write(path: &Path, rec: &Recording, kind: Sample, unit: FileUnit) -> Result<(), StoreError> {
    let f = std::fs::File::create(path).map_err(|e| StoreError::io(path, e))?;
    let mut w = BufWriter::new(f);
    let scale = 1.0 / unit.to_uv();
    for i in 0..rec.len() {
        for ch in &rec.channels {
            let v = ch[i] * scale;
            let r = match kind {
                Sample::F32 => w.write_all(&(v as f32).to_le_bytes()),
                Sample::F64 => w.write_all(&v.to_le_bytes()),
            };
            r.map_err(|e| StoreError::io(path, e))?;
        }
    }
    w.flush().map_err(|e| StoreError::io(path, e))
}

/// A raw recording being written: little-endian f32 or f64 values, frame after frame, flushed
/// to the OS at least every half second. Raw files have nowhere to put notes.
pub struct RawSink {
    file: std::fs::File,
    path: std::path::PathBuf,
    f32: bool,
    /// Values per frame.
    channels: usize,
    /// Bytes written to the OS (whole frames only).
    bytes: u64,
    /// Encoded frames waiting to be written.
    buf: Vec<u8>,
    last_flush: std::time::Instant,
}

impl RawSink {
    /// Creates `path` for f32 (`f32`) or f64 values, `channels` to a frame.
    ///
    /// # Errors
    /// The file cannot be created.
    pub fn create(path: &std::path::Path, f32: bool, channels: usize) -> Result<Self, StoreError> {
        let f = std::fs::File::create(path).map_err(|e| StoreError::io(path, e))?;
        Ok(Self {
            file: f,
            path: path.to_path_buf(),
            f32,
            channels: channels.max(1),
            bytes: 0,
            buf: Vec::new(),
            last_flush: std::time::Instant::now(),
        })
    }

    fn frame_bytes(&self) -> u64 {
        (self.channels.max(1) * if self.f32 { 4 } else { 8 }) as u64
    }

    fn flush_buf(&mut self) -> Result<(), StoreError> {
        use std::io::Write as _;
        if !self.buf.is_empty() {
            self.file
                .write_all(&self.buf)
                .map_err(|e| StoreError::io(&self.path, e))?;
            self.bytes += self.buf.len() as u64;
            self.buf.clear();
        }
        self.last_flush = std::time::Instant::now();
        Ok(())
    }
}

impl super::Sink for RawSink {
    fn push(&mut self, frames: &[f64]) -> Result<(), StoreError> {
        for v in frames {
            if self.f32 {
                self.buf.extend_from_slice(&(*v as f32).to_le_bytes());
            } else {
                self.buf.extend_from_slice(&v.to_le_bytes());
            }
        }
        if self.buf.len() >= 1 << 16
            || self.last_flush.elapsed() >= std::time::Duration::from_millis(500)
        {
            self.flush_buf()?;
        }
        Ok(())
    }

    fn note(&mut self, _t_s: f64, _text: &str) {}

    fn bytes(&self) -> u64 {
        self.bytes + self.buf.len() as u64
    }

    fn frames_held(&self) -> u64 {
        self.bytes / self.frame_bytes()
    }

    fn cut_to_held(&mut self) {
        self.buf.clear();
        self.bytes = self.frames_held() * self.frame_bytes();
        let _ = self.file.set_len(self.bytes);
    }

    fn finish(&mut self) -> Result<super::Finished, StoreError> {
        if let Err(e) = self.flush_buf() {
            super::Sink::cut_to_held(self);
            return Err(e);
        }
        self.file
            .sync_all()
            .map_err(|e| StoreError::io(&self.path, e))?;
        Ok(super::Finished {
            bytes: self.bytes,
            frames: self.frames_held(),
            padded_frames: 0,
        })
    }
}
