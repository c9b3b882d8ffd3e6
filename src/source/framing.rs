//! Decoded frames → [`RawBlock`]s, for every source that reads a board's wire format (serial,
//! UDP, TCP): the stream's channel count, the sample rate (set, sent by the stream, or estimated
//! from arrival times), sample indices that jump over lost frames, and gaps.
//!
//! Also the byte-stream decoding shared by serial and TCP: the format detected from the first
//! bytes unless it was named.

use std::time::{Duration, Instant};

use crate::msg::{RawBlock, SampleUnit};
use crate::scale::InputScale;
use crate::wire::{self, Format, Frame, Values, WireStats, ascii, binary};

/// Arrival time used to estimate an unknown sample rate.
const ESTIMATE_S: f64 = 2.0;

/// How the rate in use was found.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateInfo {
    /// Hz.
    pub fs_hz: f64,
    /// Estimated from arrival times (else set or sent by the stream).
    pub estimated: bool,
    /// Standard error of the estimate, Hz (0 when not estimated).
    pub spread_hz: f64,
}

/// Turns frames into blocks.
#[derive(Debug)]
pub struct Blocker {
    fs: Option<f64>,
    estimated: Option<(f64, f64)>,
    channels: Option<usize>,
    next_sample: u64,
    seq: u64,
    gap: bool,
    held: Vec<Frame>,
    arrivals: Vec<(Instant, usize)>,
    scale: InputScale,
    physical_to_uv: f64,
}

impl Blocker {
    /// A blocker with the rate the user set (None: from the stream or estimated), the source's
    /// scale for counts and µV per unit of decimals.
    pub fn new(fs_hz: Option<f64>, scale: InputScale, physical_to_uv: f64) -> Self {
        Self {
            fs: fs_hz,
            estimated: None,
            channels: None,
            next_sample: 0,
            seq: 0,
            gap: false,
            held: Vec::new(),
            arrivals: Vec::new(),
            scale,
            physical_to_uv,
        }
    }

    /// The stream has a gap here (device lost and found again): marked on the next block.
    pub fn mark_gap(&mut self) {
        self.gap = true;
    }

    /// The rate in use, once known.
    pub fn rate(&self) -> Option<RateInfo> {
        self.fs.map(|fs| RateInfo {
            fs_hz: fs,
            estimated: self.estimated.is_some(),
            spread_hz: self.estimated.map_or(0.0, |e| e.1),
        })
    }

    /// Frames that arrived at `now` (`stream_fs`: a rate the stream itself announced). Frames
    /// with another channel count than the stream's first frame are dropped; the blocks made
    /// are appended to `out`.
    pub fn push(
        &mut self,
        frames: &mut Vec<Frame>,
        now: Instant,
        stream_fs: Option<f64>,
        out: &mut Vec<RawBlock>,
    ) {
        let ch = *self
            .channels
            .get_or_insert_with(|| frames.first().map_or(0, |f| f.samples.len()));
        if ch == 0 {
            self.channels = None;
            return;
        }
        frames.retain(|f| f.samples.len() == ch);
        if self.fs.is_none() {
            self.fs = stream_fs;
        }
        if self.fs.is_none() {
            self.arrivals.push((now, frames.len()));
            self.held.append(frames);
            // The first half second may be a backlog from the OS buffer: leave it out.
            let t_start = self.arrivals[0].0 + Duration::from_millis(500);
            let span = now.saturating_duration_since(t_start).as_secs_f64();
            if span >= ESTIMATE_S && self.held.len() > 10 {
                let first = self
                    .arrivals
                    .iter()
                    .position(|a| a.0 > t_start)
                    .unwrap_or(0);
                let (est, spread) = estimate_rate(&self.arrivals[first..]);
                self.fs = Some(est);
                self.estimated = Some((est, spread));
                *frames = std::mem::take(&mut self.held);
            } else {
                return;
            }
        }
        let Some(rate) = self.fs else { return };
        // Split where the value kind changes or frames were lost, so each block is uniform.
        let mut start = 0;
        while start < frames.len() {
            let kind = frames[start].values;
            let mut end = start + 1;
            while end < frames.len() && frames[end].values == kind && frames[end].lost_before == 0 {
                end += 1;
            }
            self.next_sample += frames[start].lost_before;
            let mut data = Vec::with_capacity((end - start) * ch);
            for f in &frames[start..end] {
                data.extend_from_slice(&f.samples);
            }
            out.push(RawBlock {
                seq: self.seq,
                first_sample: self.next_sample,
                fs_hz: rate,
                channels: ch,
                unit: match kind {
                    Values::Counts => SampleUnit::Counts(self.scale),
                    Values::Physical => SampleUnit::Decimal(self.physical_to_uv),
                },
                data,
                made_at: now,
                gap_before: std::mem::take(&mut self.gap),
            });
            self.seq += 1;
            self.next_sample += (end - start) as u64;
            start = end;
        }
        frames.clear();
    }
}

/// The sample rate from arrival times: the least-squares slope of the running frame count
/// against time, and its standard error (Hz). `arrivals` holds (time, frames that arrived then).
///
/// A read returns whatever the OS buffered, so single reads give wildly different rates (a
/// 1 ms read of 4 frames "is" 4000 Hz); the slope over two seconds of reads does not care how the
/// frames were grouped, and its standard error is small for a steady clock.
pub fn estimate_rate(arrivals: &[(Instant, usize)]) -> (f64, f64) {
    let Some(&(t0, _)) = arrivals.first() else {
        return (0.0, f64::INFINITY);
    };
    // The count *after* each read, against the time of that read.
    let mut total = 0.0;
    let points: Vec<(f64, f64)> = arrivals
        .iter()
        .map(|&(t, n)| {
            total += n as f64;
            (t.duration_since(t0).as_secs_f64(), total)
        })
        .collect();
    let n = points.len() as f64;
    if points.len() < 3 {
        let span = points.last().map_or(0.0, |p| p.0).max(1e-3);
        return (total / span, f64::INFINITY);
    }
    let mt = points.iter().map(|p| p.0).sum::<f64>() / n;
    let mc = points.iter().map(|p| p.1).sum::<f64>() / n;
    let stt: f64 = points.iter().map(|p| (p.0 - mt).powi(2)).sum();
    let stc: f64 = points.iter().map(|p| (p.0 - mt) * (p.1 - mc)).sum();
    if stt <= 0.0 {
        return (0.0, f64::INFINITY);
    }
    let slope = stc / stt;
    let resid: f64 = points
        .iter()
        .map(|p| (p.1 - mc - slope * (p.0 - mt)).powi(2))
        .sum();
    let se = (resid / (n - 2.0) / stt).sqrt();
    (slope, se)
}

/// A byte stream's decoder, the format detected from the first bytes unless named.
#[derive(Debug)]
pub enum Decoding {
    Unknown(Vec<u8>),
    Text(ascii::Decoder),
    Binary(binary::Decoder),
}

impl Decoding {
    /// A decoder for `format` (None: detect it).
    pub fn new(format: Option<Format>) -> Self {
        match format {
            Some(Format::Text) => Decoding::Text(ascii::Decoder::new()),
            Some(Format::Binary) => Decoding::Binary(binary::Decoder::new()),
            None => Decoding::Unknown(Vec::new()),
        }
    }

    /// Feeds bytes; frames are appended to `out`. Returns the format once known.
    pub fn push(&mut self, bytes: &[u8], out: &mut Vec<Frame>) -> Option<Format> {
        match self {
            Decoding::Unknown(buf) => {
                buf.extend_from_slice(bytes);
                let fmt =
                    wire::detect(buf).or_else(|| (buf.len() > 4096).then_some(Format::Text))?;
                let pending = std::mem::take(buf);
                *self = Self::new(Some(fmt));
                self.push(&pending, out);
                Some(fmt)
            }
            Decoding::Text(d) => {
                d.push(bytes, out);
                Some(Format::Text)
            }
            Decoding::Binary(d) => {
                d.push(bytes, out);
                Some(Format::Binary)
            }
        }
    }

    /// The decoder's counters.
    pub fn stats(&self) -> WireStats {
        match self {
            Decoding::Unknown(_) => WireStats::default(),
            Decoding::Text(d) => d.stats(),
            Decoding::Binary(d) => d.stats(),
        }
    }

    /// A rate the stream announced (`# fs=`).
    pub fn fs_hz(&self) -> Option<f64> {
        match self {
            Decoding::Text(d) => d.fs_hz(),
            _ => None,
        }
    }
}
