//! EDF+ annotations: time-stamped annotation lists (TALs) written and parsed.

use super::MAX_TEXT;
use crate::store::Event;

/// Seconds as a TAL onset: sign, then up to 6 decimals without trailing zeros.
pub(super) fn onset_text(t: f64) -> String {
    let s = format!("{:.6}", t.abs());
    let s = s.trim_end_matches('0').trim_end_matches('.');
    format!("{}{s}", if t < 0.0 { '-' } else { '+' })
}

/// Cleans a marker text: no control characters (0x14/0x15 delimit TALs), at most [`MAX_TEXT`] bytes.
pub fn clean_text(text: &str) -> String {
    let mut out = String::new();
    for c in text.chars().map(|c| if c.is_control() { ' ' } else { c }) {
        if out.len() + c.len_utf8() > MAX_TEXT {
            break;
        }
        out.push(c);
    }
    out.trim().to_string()
}

/// One TAL: `+onset[\x15duration]\x14text\x14\x00`.
pub(super) fn tal(e: &Event) -> Vec<u8> {
    let mut v = onset_text(e.onset_s).into_bytes();
    if let Some(d) = e.duration_s {
        v.push(0x15);
        v.extend_from_slice(onset_text(d).trim_start_matches('+').as_bytes());
    }
    v.push(0x14);
    v.extend_from_slice(e.text.as_bytes());
    v.push(0x14);
    v.push(0);
    v
}

/// Parses the TALs of one record's annotation bytes, skipping the time-keeping one.
pub(super) fn parse_tals(b: &[u8], out: &mut Vec<Event>) {
    let mut first = true;
    for t in b.split(|&c| c == 0).filter(|t| !t.is_empty()) {
        let mut parts = t.split(|&c| c == 0x14);
        let Some(head) = parts.next() else { continue };
        let mut hp = head.split(|&c| c == 0x15);
        let onset = hp
            .next()
            .and_then(|o| std::str::from_utf8(o).ok())
            .and_then(|o| o.trim_start_matches('+').parse::<f64>().ok());
        let duration = hp
            .next()
            .and_then(|d| std::str::from_utf8(d).ok())
            .and_then(|d| d.parse::<f64>().ok());
        let Some(onset) = onset else { continue };
        let texts: Vec<String> = parts
            .filter(|p| !p.is_empty())
            .map(|p| String::from_utf8_lossy(p).into_owned())
            .collect();
        if first && texts.is_empty() {
            first = false;
            continue;
        }
        first = false;
        for text in texts {
            out.push(Event {
                onset_s: onset,
                duration_s: duration,
                text,
            });
        }
    }
}
