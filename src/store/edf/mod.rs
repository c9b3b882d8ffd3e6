//! EDF+ (16-bit) and BDF+ (24-bit) recordings: a streaming, crash-safe writer and a reader.
//!
//! Layout per the EDF specification (Kemp et al. 1992), its EDF+ extension (Kemp & Olivan 2003)
//! and BioSemi's BDF description; see docs/REFERENCES.md §6. Files are always "continuous" (`EDF+C` /
//! `BDF+C`) with one annotation signal carrying the time-keeping TAL of every record, event
//! markers and gap notes.
//!
//! Crash safety: each data record is written whole, and only then is the header's record count
//! rewritten to include it, so at every instant the count never runs ahead of the data. A writer
//! killed between the two leaves a count one record behind, which every reader accepts.
//!
//! Files: [`header`] (fields, scaling, record layout), [`tal`] (annotations), [`writer`]
//! (streaming and whole-recording writing), [`reader`].

use std::time::SystemTime;

mod header;
mod reader;
mod tal;
mod writer;

pub use header::rate_fits;
pub use reader::{read, read_group};
pub use tal::clean_text;
pub use writer::{EdfSummary, EdfWriter, write};

/// Which of the two sample widths.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EdfKind {
    /// EDF+: 16-bit two's complement samples.
    Edf,
    /// BDF+: 24-bit two's complement samples.
    Bdf,
}

impl EdfKind {
    fn bytes(self) -> usize {
        match self {
            EdfKind::Edf => 2,
            EdfKind::Bdf => 3,
        }
    }

    /// Lowest and highest digital value.
    pub fn digital_range(self) -> (i32, i32) {
        match self {
            EdfKind::Edf => (-32768, 32767),
            EdfKind::Bdf => (-8_388_608, 8_388_607),
        }
    }

    fn annotation_label(self) -> &'static str {
        match self {
            EdfKind::Edf => "EDF Annotations",
            EdfKind::Bdf => "BDF Annotations",
        }
    }
}

/// Text of the annotation that marks where real data end inside a padded last record.
pub const DATA_END: &str = "leadline: end of data";
/// The start of the annotation that says, in words, that the last record is padded.
pub const PADDING: &str = "padding: ";
/// Text of the annotation written where the stream had a gap (device lost and found again).
pub const GAP: &str = "gap: device lost and found again";

/// Bytes of annotation space per record (TALs beyond it move to the next record).
pub(crate) const ANNOTATION_BYTES: usize = 240;
/// Longest marker text kept, bytes (so a TAL always fits a record).
pub const MAX_TEXT: usize = 120;
/// Records larger than this are split into shorter durations where the rate allows (the spec
/// recommends at most 61 440 bytes).
pub(crate) const RECOMMENDED_RECORD_BYTES: usize = 61_440;

/// What the writer needs to know before the first sample.
#[derive(Debug, Clone, PartialEq)]
pub struct EdfSpec {
    pub kind: EdfKind,
    /// Sample rate, Hz (the same for every channel).
    pub fs_hz: f64,
    /// Channel labels (up to 16 characters are kept).
    pub labels: Vec<String>,
    /// Physical range of each channel, µV (one for all, or one per channel): values outside are
    /// held at the ends (and counted).
    pub range_uv: Vec<(f64, f64)>,
    /// Prefiltering text per the spec, e.g. "HP:0.5Hz LP:40Hz N:50Hz" (empty: none known).
    pub prefilter: String,
    /// Transducer text (empty: unknown).
    pub transducer: String,
    /// Start of the recording (wall clock, written as UTC).
    pub start: SystemTime,
    /// Sync data to the disk at least once a second (live recording), not only to the OS.
    pub durable: bool,
}

impl EdfSpec {
    /// A spec for a recording starting now, with defaults for the text fields.
    pub fn new(kind: EdfKind, fs_hz: f64, labels: Vec<String>, range_uv: (f64, f64)) -> Self {
        Self {
            kind,
            fs_hz,
            labels,
            range_uv: vec![range_uv],
            prefilter: String::new(),
            transducer: String::new(),
            start: SystemTime::now(),
            durable: false,
        }
    }
}

#[cfg(test)]
mod tests {
    use std::path::PathBuf;
    use std::time::{Duration, UNIX_EPOCH};

    use super::header::{fit8, record_layout};
    use super::reader::text;
    use super::tal::tal;
    use super::*;
    use crate::store::{Event, Recording};

    fn tmp(name: &str) -> PathBuf {
        std::env::temp_dir().join(format!("leadline-edf-{}-{name}", std::process::id()))
    }

    #[test]
    fn tal_bytes_match_the_spec_examples() {
        // EDF+ specification (Kemp & Olivan 2003), the TAL examples; docs/REFERENCES.md §9 #22.
        let e = Event {
            onset_s: 180.0,
            duration_s: None,
            text: "Lights off".into(),
        };
        let mut t = tal(&e);
        // The spec's example has two texts in one TAL: "+180␔Lights off␔Close door␔␀" = 28 bytes.
        t.pop();
        t.extend_from_slice(b"Close door\x14\x00");
        assert_eq!(t, b"+180\x14Lights off\x14Close door\x14\x00");
        assert_eq!(t.len(), 28);
        let e = Event {
            onset_s: 1800.2,
            duration_s: Some(25.5),
            text: "Apnea".into(),
        };
        assert_eq!(tal(&e), b"+1800.2\x1525.5\x14Apnea\x14\x00");
        assert_eq!(tal(&e).len(), 20);
    }

    #[test]
    fn header_is_256_per_signal_and_fields_sit_at_their_offsets() {
        // EDF spec (Kemp et al. 1992): header = 256·(ns+1) bytes; docs/REFERENCES.md §9 #21 (ns = 2 → 768).
        let p = tmp("hdr.edf");
        let mut spec = EdfSpec::new(EdfKind::Edf, 500.0, vec!["ECG".into()], (-3276.8, 3276.7));
        spec.start = UNIX_EPOCH + Duration::from_secs(1_796_205_845); // 2026-12-02 10:04:05 UTC
        let mut w = EdfWriter::create(&p, &spec).unwrap();
        w.finish().unwrap();
        let b = std::fs::read(&p).unwrap();
        assert_eq!(b.len(), 768);
        assert_eq!(&b[0..8], b"0       ");
        assert_eq!(&b[168..184], b"02.12.2610.04.05");
        assert_eq!(text(&b[184..192]), "768");
        assert_eq!(text(&b[192..236]), "EDF+C");
        assert_eq!(text(&b[236..244]), "0");
        assert_eq!(text(&b[244..252]), "1");
        assert_eq!(text(&b[252..256]), "2");
        assert!(text(&b[88..168]).starts_with("Startdate 02-DEC-2026 "));
        assert_eq!(text(&b[256 + 16..256 + 32]), "EDF Annotations");
    }

    #[test]
    fn physical_range_fits_eight_characters_and_rounds_outward() {
        assert_eq!(fit8(-3276.8, false).unwrap().0, "-3276.8");
        let (s, v) = fit8(-1_234.567_890_1, false).unwrap();
        assert!(s.len() <= 8 && v <= -1_234.567_890_1, "{s}");
        let (s, v) = fit8(98_765.432_1, true).unwrap();
        assert!(s.len() <= 8 && v >= 98_765.432_1, "{s}");
        assert!(fit8(1e12, true).is_none());
    }

    #[test]
    fn round_trip_is_within_half_a_step_and_keeps_events() {
        for kind in [EdfKind::Edf, EdfKind::Bdf] {
            let fs = 360.0;
            let n = 1000; // 2.78 records: the last is padded and trimmed again on reading
            let a: Vec<f64> = (0..n).map(|i| 900.0 * (i as f64 * 0.05).sin()).collect();
            let b: Vec<f64> = (0..n).map(|i| -40.0 + (i % 17) as f64).collect();
            let rec = Recording {
                fs_hz: fs,
                names: vec!["lead I".into(), "lead II".into()],
                time_s: None,
                channels: vec![a.clone(), b.clone()],
                events: vec![Event {
                    onset_s: 1.25,
                    duration_s: None,
                    text: "charger plugged in".into(),
                }],
                ..Default::default()
            };
            let p = tmp(if kind == EdfKind::Edf {
                "rt.edf"
            } else {
                "rt.bdf"
            });
            let s = write(&p, &rec, kind).unwrap();
            assert_eq!((s.records, s.frames, s.clipped), (3, 1000, 0));
            let back = read(&p).unwrap();
            assert_eq!(back.fs_hz, fs);
            assert_eq!(back.names, rec.names);
            assert_eq!(back.len(), n);
            let (dmin, dmax) = kind.digital_range();
            let range = 940.0 - -940.0_f64; // covers both channels' values
            let step = range / f64::from(dmax - dmin);
            for (x, y) in rec
                .channels
                .iter()
                .flatten()
                .zip(back.channels.iter().flatten())
            {
                assert!(
                    (x - y).abs() <= 0.5 * step + 1e-9,
                    "{x} vs {y}, step {step}"
                );
            }
            assert_eq!(back.events, rec.events);
        }
    }

    #[test]
    fn a_count_ahead_of_the_data_or_a_cut_record_is_read_as_what_is_there() {
        let p = tmp("cut.edf");
        let rec = Recording {
            fs_hz: 100.0,
            names: vec!["x".into()],
            time_s: None,
            channels: vec![(0..500).map(f64::from).collect()],
            events: vec![],
            ..Default::default()
        };
        write(&p, &rec, EdfKind::Edf).unwrap();
        let mut b = std::fs::read(&p).unwrap();
        b.truncate(b.len() - 50); // the fifth record is cut short
        b[236..244].copy_from_slice(b"-1      ");
        std::fs::write(&p, &b).unwrap();
        let back = read(&p).unwrap();
        assert_eq!(back.len(), 400);
        std::fs::write(&p, &b[..100]).unwrap();
        let e = read(&p).unwrap_err().to_string();
        assert!(e.contains("shorter than an EDF header"), "{e}");
    }

    #[test]
    fn a_rate_without_whole_samples_per_record_is_refused_clearly() {
        let p = tmp("odd.edf");
        let spec = EdfSpec::new(EdfKind::Edf, 333.333_7, vec!["x".into()], (-1.0, 1.0));
        let e = EdfWriter::create(&p, &spec).unwrap_err().to_string();
        assert!(e.contains("whole number of samples"), "{e}");
        assert_eq!(record_layout(250.5, 1, EdfKind::Edf).unwrap().0, "2");
        // 8 × 4 kHz × 3 bytes is over the recommended record size: half-second records.
        assert_eq!(record_layout(4000.0, 8, EdfKind::Bdf).unwrap().0, "0.5");
    }
}
