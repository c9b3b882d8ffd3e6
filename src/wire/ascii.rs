//! Text-line wire format: one frame per line, numbers separated by commas. Integers are ADC counts.
//! Lines starting with `#` are comments or `key=value` metadata; the simulator writes
//! `fs`, `bits`, `vref` and `gain` so a reader can scale the counts.

use std::fmt::Write as _;

use crate::scale::InputScale;

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
