//! Header fields, the digital↔physical scaling and the record layout.

use std::time::{SystemTime, UNIX_EPOCH};

use super::{ANNOTATION_BYTES, EdfKind, EdfSpec, RECOMMENDED_RECORD_BYTES};

/// Formats `v` in at most 8 characters, rounding away from the range's inside (`up` for a top).
pub(super) fn fit8(v: f64, up: bool) -> Option<(String, f64)> {
    for d in (0..=7).rev() {
        let m = 10f64.powi(d);
        let r = if up {
            (v * m).ceil() / m
        } else {
            (v * m).floor() / m
        };
        let s = format!("{r:.*}", d as usize);
        let s = if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        };
        if s.len() <= 8 {
            let back: f64 = s.parse().ok()?;
            return Some((s, back));
        }
    }
    None
}

/// Physical ↔ digital mapping of one signal, from the numbers as written in the header.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Scaling {
    pub(super) pmin: f64,
    pub(super) pmax: f64,
    pub(super) dmin: i32,
    pub(super) dmax: i32,
}

impl Scaling {
    pub(super) fn gain(&self) -> f64 {
        (self.pmax - self.pmin) / f64::from(self.dmax - self.dmin)
    }

    pub(super) fn to_physical(self, d: i32) -> f64 {
        (f64::from(d) - f64::from(self.dmin)) * self.gain() + self.pmin
    }

    /// The nearest digital value, and whether it had to be held at an end.
    pub(super) fn to_digital(self, p: f64) -> (i32, bool) {
        let d = ((p - self.pmin) / self.gain() + f64::from(self.dmin)).round();
        if d.is_nan() {
            (0, true)
        } else if d < f64::from(self.dmin) {
            (self.dmin, true)
        } else if d > f64::from(self.dmax) {
            (self.dmax, true)
        } else {
            (d as i32, false)
        }
    }
}

/// Chooses a record duration (s, as written) and samples per record for `fs_hz`.
pub(super) fn record_layout(
    fs_hz: f64,
    channels: usize,
    kind: EdfKind,
) -> Option<(String, f64, usize)> {
    let candidates = [
        "1", "0.5", "0.25", "0.2", "0.1", "2", "4", "5", "10", "20", "25", "50", "100",
    ];
    let mut first_fit = None;
    for c in candidates {
        let d: f64 = c.parse().ok()?;
        let spr = (fs_hz * d).round();
        if spr < 1.0 || ((spr / d) - fs_hz).abs() > 1e-9 * fs_hz {
            continue;
        }
        let spr = spr as usize;
        let bytes = spr * channels * kind.bytes() + ANNOTATION_BYTES;
        // Records longer than a second would hold data back from the disk for longer.
        if d <= 1.0 && bytes <= RECOMMENDED_RECORD_BYTES {
            return Some((c.to_string(), d, spr));
        }
        first_fit.get_or_insert((c.to_string(), d, spr));
    }
    first_fit
}

/// True when EDF/BDF can store `fs_hz` exactly (some record duration holds whole samples).
pub fn rate_fits(fs_hz: f64, channels: usize, kind: EdfKind) -> bool {
    fs_hz.is_finite() && fs_hz > 0.0 && record_layout(fs_hz, channels.max(1), kind).is_some()
}

/// Days since 1970-01-01 → (year, month 1–12, day 1–31), proleptic Gregorian.
pub(super) fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (if m <= 2 { y + 1 } else { y }, m, d)
}

/// The header's date and time fields and the EDF+ `Startdate` text for `t` (UTC).
pub(super) fn date_fields(t: SystemTime) -> (String, String, String) {
    let secs = t
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| d.as_secs() as i64);
    let (y, m, d) = civil_from_days(secs.div_euclid(86_400));
    let s = secs.rem_euclid(86_400);
    const MONTHS: [&str; 12] = [
        "JAN", "FEB", "MAR", "APR", "MAY", "JUN", "JUL", "AUG", "SEP", "OCT", "NOV", "DEC",
    ];
    (
        format!("{d:02}.{m:02}.{:02}", y.rem_euclid(100)),
        format!("{:02}.{:02}.{:02}", s / 3600, s / 60 % 60, s % 60),
        format!("{d:02}-{}-{y:04}", MONTHS[(m - 1) as usize]),
    )
}

/// Keeps printable ASCII only (the header's character set).
pub(super) fn ascii(s: &str) -> String {
    s.chars()
        .map(|c| if (' '..='~').contains(&c) { c } else { '_' })
        .collect()
}

pub(super) fn field(out: &mut Vec<u8>, s: &str, width: usize) {
    let s = ascii(s);
    let b = s.as_bytes();
    let n = b.len().min(width);
    out.extend_from_slice(&b[..n]);
    out.extend(std::iter::repeat_n(b' ', width - n));
}

pub(super) fn header_bytes(
    spec: &EdfSpec,
    dur_text: &str,
    spr: usize,
    ann_samples: usize,
    ranges: &[(String, String)],
    (dmin, dmax): (i32, i32),
) -> Vec<u8> {
    let ns = spec.labels.len() + 1;
    let mut h = Vec::with_capacity(256 * (ns + 1));
    match spec.kind {
        EdfKind::Edf => field(&mut h, "0", 8),
        EdfKind::Bdf => {
            h.push(0xFF);
            h.extend_from_slice(b"BIOSEMI");
        }
    }
    let (date, time, startdate) = date_fields(spec.start);
    field(&mut h, "X X X X", 80);
    field(&mut h, &format!("Startdate {startdate} X X leadline"), 80);
    field(&mut h, &date, 8);
    field(&mut h, &time, 8);
    field(&mut h, &(256 * (ns + 1)).to_string(), 8);
    field(
        &mut h,
        match spec.kind {
            EdfKind::Edf => "EDF+C",
            EdfKind::Bdf => "BDF+C",
        },
        44,
    );
    field(&mut h, "0", 8);
    field(&mut h, dur_text, 8);
    field(&mut h, &ns.to_string(), 4);
    let ann = spec.kind.annotation_label();
    let each = |h: &mut Vec<u8>, width: usize, data: &dyn Fn(usize) -> String, a: &str| {
        for i in 0..spec.labels.len() {
            field(h, &data(i), width);
        }
        field(h, a, width);
    };
    let (admin, admax) = spec.kind.digital_range();
    each(&mut h, 16, &|i| spec.labels[i].clone(), ann);
    each(&mut h, 80, &|_| spec.transducer.clone(), "");
    each(&mut h, 8, &|_| "uV".into(), "");
    each(&mut h, 8, &|i| ranges[i].0.clone(), "-1");
    each(&mut h, 8, &|i| ranges[i].1.clone(), "1");
    each(&mut h, 8, &|_| dmin.to_string(), &admin.to_string());
    each(&mut h, 8, &|_| dmax.to_string(), &admax.to_string());
    each(&mut h, 80, &|_| spec.prefilter.clone(), "");
    each(&mut h, 8, &|_| spr.to_string(), &ann_samples.to_string());
    each(&mut h, 32, &|_| String::new(), "");
    h
}
