//! What a recording is written through: one [`Sink`] per file format. Each format's writer
//! implements it (EDF+/BDF+ in [`super::edf`], CSV in [`super::csv`], raw in [`super::raw`]);
//! the recorder only chooses one by extension and feeds it.

use super::StoreError;

/// A file being recorded, frame by frame.
pub trait Sink: Send {
    /// Appends interleaved frames (the file's unit already applied).
    ///
    /// # Errors
    /// The write failed (disk full, drive removed): the recording stops.
    fn push(&mut self, frames: &[f64]) -> Result<(), StoreError>;
    /// A timed note (a marker, a gap, lost frames) at `t_s` seconds from the start; formats with
    /// nowhere to put text drop it.
    fn note(&mut self, t_s: f64, text: &str);
    /// Bytes written so far.
    fn bytes(&self) -> u64;
    /// Values clipped to the file's range so far.
    fn clipped(&self) -> u64 {
        0
    }
    /// Closes the file (flushed and synced). Returns its size in bytes.
    ///
    /// # Errors
    /// The last write or the sync failed.
    fn finish(self: Box<Self>) -> Result<u64, StoreError>;
}
