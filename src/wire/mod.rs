//! Byte formats between a microcontroller and leadline. Pure functions and state machines: bytes
//! in, frames out, no I/O, no threads. `push` never fails: a partial frame waits for more bytes,
//! garbage is skipped and counted.
//!
//! - [`ascii`]: text lines, one frame per line.
//! - [`binary`]: framed binary with a sync word, sequence counter and CRC-16/CCITT-FALSE.
//! - [`reorder`]: puts datagrams' frames back in sequence order (UDP), counting lost,
//!   duplicate and late frames.

pub mod ascii;
pub mod binary;
pub mod reorder;

/// What a frame's numbers are.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Values {
    /// ADC counts (integers on the wire): scaled with the configured ADC model.
    Counts,
    /// Physical values in the configured unit (decimals on the wire).
    Physical,
}

/// One frame: one sample per channel.
#[derive(Debug, Clone, PartialEq)]
pub struct Frame {
    /// The samples, channel by channel.
    pub samples: Vec<f64>,
    /// Counts or physical values.
    pub values: Values,
    /// Frames lost just before this one (binary sequence gap), 0 when none.
    pub lost_before: u64,
    /// The binary frame's sequence counter (None for text lines, which carry none).
    pub seq: Option<u16>,
}

/// Counters of what a decoder had to skip. All are totals.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct WireStats {
    /// Frames decoded.
    pub frames: u64,
    /// Bytes skipped while looking for a frame.
    pub garbage_bytes: u64,
    /// Text lines that were not 1–8 numbers, or had another field count than the stream.
    pub malformed_lines: u64,
    /// Text lines longer than the limit (skipped whole).
    pub long_lines: u64,
    /// Binary frames whose CRC did not match.
    pub bad_crc: u64,
    /// Frames missing according to the binary sequence counter.
    pub lost_frames: u64,
}

/// The two formats, for auto-detection.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Text,
    Binary,
}

/// Guesses the format from the first bytes of a stream: a valid binary frame anywhere in them
/// means binary; mostly printable ASCII with line ends means text. None: not enough bytes yet.
pub fn detect(bytes: &[u8]) -> Option<Format> {
    if binary::contains_valid_frame(bytes) {
        return Some(Format::Binary);
    }
    if bytes.len() < 64 {
        return None;
    }
    let printable = bytes
        .iter()
        .filter(|&&b| b == b'\n' || b == b'\r' || b == b'\t' || (32..127).contains(&b))
        .count();
    let newlines = bytes.iter().filter(|&&b| b == b'\n').count();
    (printable * 10 >= bytes.len() * 9 && newlines > 0)
        .then_some(Format::Text)
        .or(Some(Format::Binary))
}
