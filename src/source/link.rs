//! One reader for every byte-stream source: a board on a serial port, a board on a TCP link,
//! anything that reads with a short timeout. It opens the stream through its [`Link`], decodes
//! frames ([`Decoding`]), cuts them into blocks ([`Blocker`]) and sends them; when the stream
//! goes away it opens it again and marks the gap on the next block. Sending waits; it never
//! drops a block.

use std::io::Read;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use crossbeam_channel::Sender;

use super::framing::{Blocker, Decoding, RateInfo};
use crate::chan::send_blocking;
use crate::msg::RawBlock;
use crate::scale::InputScale;
use crate::wire::{Format, Frame, WireStats};

/// How often a stream that cannot be opened is tried again.
pub const REOPEN_EVERY: Duration = Duration::from_millis(500);

/// How to decode a stream.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StreamFormat {
    /// Wire format; None detects it from the first bytes.
    pub format: Option<Format>,
    /// Sample rate if known (else from the stream, else estimated from arrival times).
    pub fs_hz: Option<f64>,
    /// Scale of integer (count) samples.
    pub scale: InputScale,
    /// µV per unit of decimal samples.
    pub physical_to_uv: f64,
}

/// What the decoder has made of the stream so far.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Decoded {
    /// Bytes in the last read.
    pub bytes: usize,
    /// The format in use, once known.
    pub format: Option<Format>,
    /// Decoder counters.
    pub wire: WireStats,
    /// The sample rate in use, once known.
    pub rate: Option<RateInfo>,
}

/// A stream that can be opened (again), and a place to say how it goes.
pub trait Link {
    /// The open stream: reads return within a short timeout (`TimedOut`/`WouldBlock` errors are
    /// waited through), `Ok(0)` when the other end closed.
    type Stream: Read;
    /// Opens the stream; on failure the link says why in its own status.
    ///
    /// # Errors
    /// Why it cannot be opened now.
    fn open(&mut self) -> Result<Self::Stream, String>;
    /// The stream is open (`again`: after it was lost).
    fn opened(&mut self, again: bool);
    /// The stream went away.
    fn lost(&mut self, why: &str);
    /// After each read.
    fn decoded(&mut self, d: &Decoded);
}

/// How a stream ended.
#[derive(Debug)]
enum StreamEnd {
    /// The stop flag was set or the receiver hung up.
    Stopped,
    /// The device or peer went away (end of file or a read error).
    Lost(String),
}

/// Runs until `stop` is set or the receiver hangs up.
pub fn run(link: &mut impl Link, how: StreamFormat, out: &Sender<RawBlock>, stop: &AtomicBool) {
    let mut decoding = Decoding::new(how.format);
    let mut blocker = Blocker::new(how.fs_hz, how.scale, how.physical_to_uv);
    let mut ever = false;
    while !stop.load(Ordering::Relaxed) {
        let stream = match link.open() {
            Ok(s) => s,
            Err(_) => {
                wait(stop, REOPEN_EVERY);
                continue;
            }
        };
        if ever {
            blocker.mark_gap();
        }
        link.opened(ever);
        ever = true;
        match read(stream, &mut decoding, &mut blocker, link, out, stop) {
            StreamEnd::Stopped => return,
            StreamEnd::Lost(why) => link.lost(&why),
        }
    }
}

/// Sleeps `d` in short steps, returning early when `stop` is set.
pub fn wait(stop: &AtomicBool, d: Duration) {
    let until = Instant::now() + d;
    while Instant::now() < until && !stop.load(Ordering::Relaxed) {
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// Reads an open stream until it ends, decoding frames and sending blocks.
fn read(
    mut stream: impl Read,
    decoding: &mut Decoding,
    blocker: &mut Blocker,
    link: &mut impl Link,
    out: &Sender<RawBlock>,
    stop: &AtomicBool,
) -> StreamEnd {
    let mut buf = vec![0u8; 8192];
    let mut frames: Vec<Frame> = Vec::new();
    let mut blocks = Vec::new();
    loop {
        if stop.load(Ordering::Relaxed) {
            return StreamEnd::Stopped;
        }
        let n = match stream.read(&mut buf) {
            Ok(0) => {
                // End of file: a pseudo-terminal whose other side closed, a peer that hung up.
                std::thread::sleep(Duration::from_millis(20));
                return StreamEnd::Lost("the other end closed".into());
            }
            Ok(n) => n,
            Err(e)
                if e.kind() == std::io::ErrorKind::TimedOut
                    || e.kind() == std::io::ErrorKind::WouldBlock
                    || e.kind() == std::io::ErrorKind::Interrupted =>
            {
                continue;
            }
            Err(e) => return StreamEnd::Lost(e.to_string()),
        };
        frames.clear();
        let format = decoding.push(&buf[..n], &mut frames);
        blocks.clear();
        blocker.push(&mut frames, Instant::now(), decoding.fs_hz(), &mut blocks);
        link.decoded(&Decoded {
            bytes: n,
            format,
            wire: decoding.stats(),
            rate: blocker.rate(),
        });
        for b in blocks.drain(..) {
            if !send_blocking(out, b, stop) {
                return StreamEnd::Stopped;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A stream of given chunks, opened a given number of times.
    struct Chunks {
        opens: usize,
        chunks: Vec<Vec<u8>>,
        events: Vec<String>,
    }

    struct Reader(std::vec::IntoIter<Vec<u8>>);

    impl Read for Reader {
        fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
            match self.0.next() {
                Some(c) => {
                    buf[..c.len()].copy_from_slice(&c);
                    Ok(c.len())
                }
                None => Ok(0),
            }
        }
    }

    impl Link for Chunks {
        type Stream = Reader;
        fn open(&mut self) -> Result<Reader, String> {
            if self.opens == 0 {
                return Err("gone".into());
            }
            self.opens -= 1;
            Ok(Reader(self.chunks.clone().into_iter()))
        }
        fn opened(&mut self, again: bool) {
            self.events.push(format!("opened again={again}"));
        }
        fn lost(&mut self, why: &str) {
            self.events.push(format!("lost: {why}"));
        }
        fn decoded(&mut self, d: &Decoded) {
            self.events.push(format!("{} bytes", d.bytes));
        }
    }

    #[test]
    fn a_stream_that_closes_is_opened_again_and_the_gap_is_marked() {
        // Two opens of the same 100 text lines (counts), then nothing: the reader runs on a
        // thread until the test stops it.
        let lines: Vec<u8> = (0..100)
            .flat_map(|i| format!("{}\n", 500 + i).into_bytes())
            .collect();
        let mut link = Chunks {
            opens: 2,
            chunks: vec![lines[..150].to_vec(), lines[150..].to_vec()],
            events: Vec::new(),
        };
        let (tx, rx) = crossbeam_channel::unbounded();
        let stop = AtomicBool::new(false);
        let how = StreamFormat {
            format: None,
            fs_hz: Some(100.0),
            scale: InputScale::default(),
            physical_to_uv: 1000.0,
        };
        std::thread::scope(|s| {
            s.spawn(|| run(&mut link, how, &tx, &stop));
            std::thread::sleep(Duration::from_millis(400));
            stop.store(true, Ordering::Relaxed);
        });
        let blocks: Vec<RawBlock> = rx.try_iter().collect();
        let frames: usize = blocks.iter().map(RawBlock::frames).sum();
        assert_eq!(frames, 200, "both passes delivered");
        assert_eq!(blocks.iter().filter(|b| b.gap_before).count(), 1);
        assert_eq!(link.events[0], "opened again=false");
        assert!(
            link.events
                .contains(&"lost: the other end closed".to_string())
        );
        assert!(link.events.contains(&"opened again=true".to_string()));
    }
}
