//! Text-line wire format: one frame per line, 1–8 numbers separated by comma, space, tab or
//! semicolon. Integers are ADC counts; decimals are physical values in the configured unit. An
//! optional first line of channel names. Lines starting with `#` are comments or `key=value`
//! metadata (`# fs=500`). Lines end with `\n` (a `\r` before it is ignored).

use std::fmt::Write as _;

use super::{Frame, Values, WireStats};
use crate::scale::InputScale;

/// Longest line accepted, bytes; longer ones are skipped whole and counted.
pub const MAX_LINE: usize = 256;

/// The metadata lines that open a text stream.
pub fn header(fs_hz: f64, channels: usize, scale: &InputScale, comment: &str) -> String {
    let mut s = String::new();
    for line in comment.lines() {
        let _ = writeln!(s, "# {line}");
    }
    let _ = writeln!(s, "# fs={fs_hz}");
    let _ = writeln!(s, "# channels={channels}");
    let _ = writeln!(s, "# bits={}", scale.bits);
    let _ = writeln!(s, "# vref={}", scale.vref_v);
    let _ = writeln!(s, "# gain={}", scale.gain);
    let names: Vec<String> = (1..=channels).map(|k| format!("ch{k}")).collect();
    let _ = writeln!(s, "{}", names.join(","));
    s
}

/// Appends one line per frame of interleaved counts.
pub fn encode_frames(counts: &[f64], channels: usize, out: &mut String) {
    for frame in counts.chunks_exact(channels.max(1)) {
        for (i, c) in frame.iter().enumerate() {
            if i > 0 {
                out.push(',');
            }
            let _ = write!(out, "{}", *c as i64);
        }
        out.push('\n');
    }
}

/// The streaming decoder.
#[derive(Debug, Clone, Default)]
pub struct Decoder {
    line: Vec<u8>,
    overlong: bool,
    channels: Option<usize>,
    names: Option<Vec<String>>,
    meta: Vec<(String, String)>,
    seen_data: bool,
    stats: WireStats,
}

fn parse_numbers(line: &str) -> Option<(Vec<f64>, bool)> {
    let mut all_int = true;
    let mut v = Vec::with_capacity(8);
    for f in line.split([',', ';', '\t', ' ']).filter(|f| !f.is_empty()) {
        if v.len() == 8 {
            return None;
        }
        if let Ok(i) = f.parse::<i64>() {
            v.push(i as f64);
        } else {
            let x: f64 = f.parse().ok()?;
            if !x.is_finite() {
                return None;
            }
            all_int = false;
            v.push(x);
        }
    }
    (!v.is_empty()).then_some((v, all_int))
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

    /// Channel names from the header line, if one came.
    pub fn names(&self) -> Option<&[String]> {
        self.names.as_deref()
    }

    /// The value of a `# key=value` metadata line, if one came (the latest wins).
    pub fn meta(&self, key: &str) -> Option<&str> {
        self.meta
            .iter()
            .rev()
            .find(|(k, _)| k == key)
            .map(|(_, v)| v.as_str())
    }

    /// Sample rate from `# fs=` metadata.
    pub fn fs_hz(&self) -> Option<f64> {
        self.meta("fs")
            .and_then(|v| v.parse().ok())
            .filter(|f: &f64| f.is_finite() && *f > 0.0)
    }

    fn line_done(&mut self, out: &mut Vec<Frame>) {
        let bytes = std::mem::take(&mut self.line);
        if self.overlong {
            self.overlong = false;
            self.stats.long_lines += 1;
            return;
        }
        let Ok(text) = std::str::from_utf8(&bytes) else {
            self.stats.malformed_lines += 1;
            return;
        };
        let text = text.trim();
        if text.is_empty() {
            return;
        }
        if let Some(c) = text.strip_prefix('#') {
            if let Some((k, v)) = c.split_once('=') {
                self.meta.push((k.trim().to_string(), v.trim().to_string()));
            }
            return;
        }
        match parse_numbers(text) {
            Some((samples, ints)) => {
                let n = *self.channels.get_or_insert(samples.len());
                if samples.len() != n {
                    self.stats.malformed_lines += 1;
                    return;
                }
                self.seen_data = true;
                self.stats.frames += 1;
                out.push(Frame {
                    samples,
                    values: if ints {
                        Values::Counts
                    } else {
                        Values::Physical
                    },
                    lost_before: 0,
                    seq: None,
                });
            }
            None => {
                // A line of names before any data is the header; anything else is malformed.
                let names: Vec<String> = text
                    .split([',', ';', '\t'])
                    .map(|s| s.trim().to_string())
                    .filter(|s| !s.is_empty())
                    .collect();
                if !self.seen_data && self.names.is_none() && (1..=8).contains(&names.len()) {
                    self.names = Some(names);
                } else {
                    self.stats.malformed_lines += 1;
                }
            }
        }
    }

    /// Feeds bytes; complete frames are appended to `out`.
    pub fn push(&mut self, bytes: &[u8], out: &mut Vec<Frame>) {
        for &b in bytes {
            if b == b'\n' {
                self.line_done(out);
            } else if self.overlong {
                self.stats.garbage_bytes += 1;
            } else if self.line.len() >= MAX_LINE {
                self.overlong = true;
                self.stats.garbage_bytes += self.line.len() as u64 + 1;
                self.line.clear();
            } else {
                self.line.push(b);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn frames_become_lines() {
        let mut s = String::new();
        encode_frames(&[2048.0, 2050.0, 0.0, 4095.0], 2, &mut s);
        assert_eq!(s, "2048,2050\n0,4095\n");
        let h = header(500.0, 2, &InputScale::default(), "demo");
        assert!(h.starts_with("# demo\n# fs=500\n"));
        assert!(h.ends_with("ch1,ch2\n"));
    }
}
