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
    /// Whole frames the file holds for certain now: written to the OS, never a part of one.
    fn frames_held(&self) -> u64;
    /// After a failed write: cuts the file back to the length that holds [`Sink::frames_held`]
    /// frames, so no half-written line or record is left (best effort: a device that cannot
    /// be cut keeps what it has).
    fn cut_to_held(&mut self);
    /// Closes the file (flushed and synced); nothing is pushed after.
    ///
    /// # Errors
    /// The last write or the sync failed: the file is cut back to what [`Sink::frames_held`]
    /// counts.
    fn finish(&mut self) -> Result<Finished, StoreError>;
}

/// What a closed file holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Finished {
    /// File size, bytes.
    pub bytes: u64,
    /// Frames of real data in the file.
    pub frames: u64,
    /// Frames of padding after the data (EDF/BDF: the last record filled up to its length,
    /// marked by an annotation at the data's end); 0 for formats that end where the data end.
    pub padded_frames: u64,
}
