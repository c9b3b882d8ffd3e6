//! Binary frames, little-endian:
//! `0xD7 0x1E | version: u8 (1) | seq: u16 | channels: u8 (1–8) | format: u8 (1 = i16, 2 = i24) |
//! samples | crc: u16`, samples channel by channel, CRC-16/CCITT-FALSE (poly 0x1021, init 0xFFFF,
//! no reflection, no final xor) over everything after the sync word. The sync bytes are our own;
//! a frame of another version is not decoded (counted as garbage) so a later layout can never be
//! misread as this one. A bad CRC or a malformed header costs one byte:
//! the decoder looks for the next sync word from the byte after the one it tried. A jump in `seq`
//! of k counts k − 1 lost frames (the counter wraps at 65536).

use super::{Frame, Values, WireStats};

/// Sync word (leadline's own).
pub const SYNC: [u8; 2] = [0xD7, 0x1E];
/// Version of the frame layout after the sync word.
pub const VERSION: u8 = 1;
/// Bytes before the samples: sync, version, seq, channels, format.
const HEADER: usize = 2 + 1 + 2 + 1 + 1;
/// Sample formats.
pub const FORMAT_I16: u8 = 1;
pub const FORMAT_I24: u8 = 2;

/// CRC-16/CCITT-FALSE. Check value: "123456789" → 0x29B1.
pub fn crc16(data: &[u8]) -> u16 {
    let mut crc: u16 = 0xFFFF;
    for &b in data {
        crc ^= (b as u16) << 8;
        for _ in 0..8 {
            crc = if crc & 0x8000 != 0 {
                (crc << 1) ^ 0x1021
            } else {
                crc << 1
            };
        }
    }
    crc
}

fn frame_len(channels: u8, format: u8) -> Option<usize> {
    let width = match format {
        FORMAT_I16 => 2,
        FORMAT_I24 => 3,
        _ => return None,
    };
    (1..=8)
        .contains(&channels)
        .then(|| HEADER + channels as usize * width + 2)
}

/// Encodes one frame.
pub fn encode(seq: u16, samples: &[i32], format: u8, out: &mut Vec<u8>) {
    let start = out.len();
    out.extend_from_slice(&SYNC);
    out.push(VERSION);
    out.extend_from_slice(&seq.to_le_bytes());
    out.push(samples.len() as u8);
    out.push(format);
    for &s in samples {
        match format {
            FORMAT_I24 => out.extend_from_slice(&s.to_le_bytes()[..3]),
            _ => out.extend_from_slice(&(s as i16).to_le_bytes()),
        }
    }
    let crc = crc16(&out[start + 2..]);
    out.extend_from_slice(&crc.to_le_bytes());
}

enum Parse {
    Frame(usize, u16, Vec<f64>),
    BadHeader,
    BadCrc,
    NeedMore,
}

fn parse_at(b: &[u8]) -> Parse {
    if b.len() < HEADER {
        return Parse::NeedMore;
    }
    if b[2] != VERSION {
        return Parse::BadHeader;
    }
    let Some(len) = frame_len(b[5], b[6]) else {
        return Parse::BadHeader;
    };
    if b.len() < len {
        return Parse::NeedMore;
    }
    let crc = u16::from_le_bytes([b[len - 2], b[len - 1]]);
    if crc16(&b[2..len - 2]) != crc {
        return Parse::BadCrc;
    }
    let seq = u16::from_le_bytes([b[3], b[4]]);
    let n = b[5] as usize;
    let body = &b[HEADER..len - 2];
    let samples = match b[6] {
        FORMAT_I24 => body
            .chunks_exact(3)
            .map(|c| {
                (i32::from_le_bytes([c[0], c[1], c[2], if c[2] & 0x80 != 0 { 0xFF } else { 0 }]))
                    as f64
            })
            .collect(),
        _ => body
            .chunks_exact(2)
            .map(|c| i16::from_le_bytes([c[0], c[1]]) as f64)
            .collect(),
    };
    debug_assert_eq!(n, body.len() / if b[6] == FORMAT_I24 { 3 } else { 2 });
    Parse::Frame(len, seq, samples)
}

/// True when `bytes` hold at least one complete frame with a good CRC.
pub fn contains_valid_frame(bytes: &[u8]) -> bool {
    (0..bytes.len().saturating_sub(1))
        .filter(|&i| bytes[i] == SYNC[0] && bytes[i + 1] == SYNC[1])
        .any(|i| matches!(parse_at(&bytes[i..]), Parse::Frame(..)))
}

/// The streaming decoder.
#[derive(Debug, Clone, Default)]
pub struct Decoder {
    buf: Vec<u8>,
    last_seq: Option<u16>,
    stats: WireStats,
}

impl Decoder {
    /// A decoder with nothing buffered.
    pub fn new() -> Self {
        Self::default()
    }

    /// Counters so far.
    pub fn stats(&self) -> WireStats {
        self.stats
    }

    /// Feeds bytes; complete frames are appended to `out`.
    pub fn push(&mut self, bytes: &[u8], out: &mut Vec<Frame>) {
        self.buf.extend_from_slice(bytes);
        let mut i = 0;
        loop {
            // Find the next sync word.
            let Some(off) = self.buf[i..].windows(2).position(|w| w == SYNC) else {
                // Keep a trailing first sync byte: it may be the first half of a sync word.
                let keep = usize::from(i < self.buf.len() && self.buf.last() == Some(&SYNC[0]));
                self.stats.garbage_bytes += (self.buf.len() - i - keep) as u64;
                i = self.buf.len() - keep;
                break;
            };
            self.stats.garbage_bytes += off as u64;
            i += off;
            match parse_at(&self.buf[i..]) {
                Parse::NeedMore => break,
                bad @ (Parse::BadHeader | Parse::BadCrc) => {
                    if matches!(bad, Parse::BadCrc) {
                        self.stats.bad_crc += 1;
                    }
                    self.stats.garbage_bytes += 1;
                    i += 1;
                }
                Parse::Frame(len, seq, samples) => {
                    let lost = match self.last_seq {
                        Some(prev) => seq.wrapping_sub(prev).wrapping_sub(1) as u64,
                        None => 0,
                    };
                    self.stats.lost_frames += lost;
                    self.stats.frames += 1;
                    self.last_seq = Some(seq);
                    out.push(Frame {
                        samples,
                        values: Values::Counts,
                        lost_before: lost,
                        seq: Some(seq),
                    });
                    i += len;
                }
            }
        }
        self.buf.drain(..i);
    }
}

/// Decodes the whole frames of one datagram (UDP: a datagram holds one or more whole frames),
/// with no sequence bookkeeping: [`super::reorder::Reorder`] does that across datagrams. Bytes
/// that are not a whole frame are garbage; a partial frame at the end is garbage too (the rest
/// of it can never arrive).
pub fn decode_datagram(bytes: &[u8], out: &mut Vec<Frame>, stats: &mut WireStats) {
    let mut i = 0;
    while i < bytes.len() {
        let Some(off) = bytes[i..].windows(2).position(|w| w == SYNC) else {
            stats.garbage_bytes += (bytes.len() - i) as u64;
            return;
        };
        stats.garbage_bytes += off as u64;
        i += off;
        match parse_at(&bytes[i..]) {
            Parse::NeedMore => {
                stats.garbage_bytes += (bytes.len() - i) as u64;
                return;
            }
            bad @ (Parse::BadHeader | Parse::BadCrc) => {
                if matches!(bad, Parse::BadCrc) {
                    stats.bad_crc += 1;
                }
                stats.garbage_bytes += 1;
                i += 1;
            }
            Parse::Frame(len, seq, samples) => {
                stats.frames += 1;
                out.push(Frame {
                    samples,
                    values: Values::Counts,
                    lost_before: 0,
                    seq: Some(seq),
                });
                i += len;
            }
        }
    }
}
