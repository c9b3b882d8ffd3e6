//! The wire decoders: frames split anywhere, garbage, bad CRCs, sequence gaps, and arbitrary bytes.
// Helpers outside #[test] functions unwrap too: a panic is the failure report.
#![allow(clippy::unwrap_used)]

use leadline::rng::Rng;
use leadline::wire::{Format, Frame, Values, ascii, binary, detect};

fn binary_stream(
    frames: usize,
    channels: usize,
    format: u8,
    first_seq: u16,
) -> (Vec<u8>, Vec<Vec<i32>>) {
    let mut out = Vec::new();
    let mut rng = Rng::new(11);
    let mut all = Vec::new();
    for f in 0..frames {
        let s: Vec<i32> = (0..channels)
            .map(|_| {
                let r = (rng.next_u64() % 65536) as i32 - 32768;
                if format == binary::FORMAT_I24 {
                    r * 128 + 77
                } else {
                    r
                }
            })
            .collect();
        binary::encode(first_seq.wrapping_add(f as u16), &s, format, &mut out);
        all.push(s);
    }
    (out, all)
}

fn decode_binary(bytes: &[u8], split: &[usize]) -> (Vec<Frame>, binary::Decoder) {
    let mut d = binary::Decoder::new();
    let mut out = Vec::new();
    let mut last = 0;
    for &s in split {
        d.push(&bytes[last..s], &mut out);
        last = s;
    }
    d.push(&bytes[last..], &mut out);
    (out, d)
}

#[test]
fn crc_check_value() {
    // CRC-16/CCITT-FALSE check value for "123456789" is 0x29B1 (CRC catalogue check value,
    // recalled from memory).
    assert_eq!(binary::crc16(b"123456789"), 0x29B1);
}

#[test]
fn binary_frame_split_at_every_offset_decodes_identically() {
    for format in [binary::FORMAT_I16, binary::FORMAT_I24] {
        let (bytes, want) = binary_stream(3, 4, format, 65534);
        let (whole, _) = decode_binary(&bytes, &[]);
        assert_eq!(whole.len(), 3);
        for (f, w) in whole.iter().zip(&want) {
            assert_eq!(f.samples, w.iter().map(|&v| v as f64).collect::<Vec<_>>());
            assert_eq!(f.values, Values::Counts);
        }
        for cut in 0..=bytes.len() {
            let (got, d) = decode_binary(&bytes, &[cut]);
            assert_eq!(got, whole, "split at {cut}");
            assert_eq!(d.stats().garbage_bytes, 0);
            // Sequence wraps 65534 → 65535 → 0 with nothing lost.
            assert_eq!(d.stats().lost_frames, 0);
        }
        // Byte by byte.
        let splits: Vec<usize> = (1..bytes.len()).collect();
        assert_eq!(decode_binary(&bytes, &splits).0, whole);
    }
}

#[test]
fn binary_garbage_bad_crc_and_sequence_gaps_are_counted() {
    let (good, _) = binary_stream(10, 2, binary::FORMAT_I16, 0);
    let flen = good.len() / 10;
    // Garbage before, between and inside (a truncated frame) frames.
    let mut bytes = vec![0x00, binary::SYNC[0], 0x13, 0xFF];
    bytes.extend_from_slice(&good[..flen]);
    bytes.extend_from_slice(&[binary::SYNC[0], binary::SYNC[1], binary::VERSION]);
    bytes.extend_from_slice(&good[flen..3 * flen]);
    let (frames, d) = decode_binary(&bytes, &[]);
    assert_eq!(frames.len(), 3);
    assert!(d.stats().garbage_bytes >= 7, "{:?}", d.stats());

    // A flipped bit fails the CRC: that frame is dropped, the next one decodes.
    let mut flipped = good.clone();
    flipped[flen + 7] ^= 0x10;
    let (frames, d) = decode_binary(&flipped, &[]);
    assert_eq!(frames.len(), 9);
    assert_eq!(d.stats().bad_crc, 1);
    // The dropped frame shows as one lost frame through the sequence counter.
    assert_eq!(d.stats().lost_frames, 1);
    assert_eq!(frames[1].lost_before, 1);

    // k frames missing (the sequence number jumps by k + 1) count k lost frames: drop 3..=7 (k = 5).
    let mut gap = good[..3 * flen].to_vec();
    gap.extend_from_slice(&good[8 * flen..]);
    let (frames, d) = decode_binary(&gap, &[]);
    assert_eq!(frames.len(), 5);
    assert_eq!(d.stats().lost_frames, 5);
}

#[test]
fn text_lines_split_at_every_offset_with_header_and_metadata() {
    let text = b"# board LL-2\r\n# fs=500\nch1,ch2\n2048,2050\n1 2\n3;4\n5\t6\n0.5,-1.25\n";
    let decode = |cuts: &[usize]| {
        let mut d = ascii::Decoder::new();
        let mut out = Vec::new();
        let mut last = 0;
        for &c in cuts {
            d.push(&text[last..c], &mut out);
            last = c;
        }
        d.push(&text[last..], &mut out);
        (out, d)
    };
    let (whole, d) = decode(&[]);
    assert_eq!(whole.len(), 5);
    assert_eq!(whole[0].samples, vec![2048.0, 2050.0]);
    assert_eq!(whole[0].values, Values::Counts);
    assert_eq!(whole[4].values, Values::Physical);
    assert_eq!(d.fs_hz(), Some(500.0));
    assert_eq!(d.names().unwrap(), ["ch1", "ch2"]);
    assert_eq!(d.stats().malformed_lines, 0);
    for cut in 0..=text.len() {
        assert_eq!(decode(&[cut]).0, whole, "split at {cut}");
    }
}

#[test]
fn text_garbage_long_lines_and_field_counts() {
    let mut d = ascii::Decoder::new();
    let mut out = Vec::new();
    let mut bytes = b"1,2\nhello,world,again,and,more,fields,here,and,more\n3,4,5\n".to_vec();
    bytes.extend(std::iter::repeat_n(b'7', 1000));
    bytes.extend_from_slice(b"\n\xff\xfe\n6,7\n");
    d.push(&bytes, &mut out);
    assert_eq!(
        out.iter().map(|f| f.samples.clone()).collect::<Vec<_>>(),
        vec![vec![1.0, 2.0], vec![6.0, 7.0]]
    );
    let s = d.stats();
    assert_eq!(s.long_lines, 1);
    assert_eq!(s.malformed_lines, 3, "{s:?}");
}

#[test]
fn arbitrary_bytes_never_panic_100k_cases() {
    // Property test with a fixed seed: 100 000 random buffers (and random splits) through both
    // decoders and the format detector; every frame that comes out is well formed.
    let mut rng = Rng::new(2026);
    let (good, _) = binary_stream(4, 3, binary::FORMAT_I24, 7);
    for case in 0..100_000 {
        let len = (rng.next_u64() % 64) as usize;
        let mut bytes: Vec<u8> = (0..len).map(|_| (rng.next_u64() & 0xFF) as u8).collect();
        if case % 3 == 0 {
            // Splice a real frame in, sometimes damaged.
            let at = (rng.next_u64() as usize) % (bytes.len() + 1);
            let mut frame = good[..good.len() / 4].to_vec();
            if case % 2 == 0 {
                let i = (rng.next_u64() as usize) % frame.len();
                frame[i] ^= 1 << (rng.next_u64() % 8);
            }
            bytes.splice(at..at, frame);
        }
        if case % 5 == 0 {
            bytes.extend_from_slice(b"12,34\n#x=y\n");
        }
        let cut = (rng.next_u64() as usize) % (bytes.len() + 1);
        let mut out = Vec::new();
        let mut b = binary::Decoder::new();
        b.push(&bytes[..cut], &mut out);
        b.push(&bytes[cut..], &mut out);
        let mut t = ascii::Decoder::new();
        t.push(&bytes[..cut], &mut out);
        t.push(&bytes[cut..], &mut out);
        for f in &out {
            assert!((1..=8).contains(&f.samples.len()));
            assert!(f.samples.iter().all(|v| v.is_finite()));
        }
        let _ = detect(&bytes);
    }
}

#[test]
fn a_chunk_ending_in_a_lone_sync_byte_is_kept_for_later() {
    let (good, _) = binary_stream(2, 1, binary::FORMAT_I16, 0);
    let mut d = binary::Decoder::new();
    let mut out = Vec::new();
    // A whole frame then one byte (the first of the next sync word), then the rest.
    let flen = good.len() / 2;
    d.push(&good[..flen], &mut out);
    d.push(&good[flen..flen + 1], &mut out);
    d.push(&[], &mut out);
    d.push(&good[flen + 1..], &mut out);
    assert_eq!(out.len(), 2);
    assert_eq!(d.stats().garbage_bytes, 0);
}

#[test]
fn frame_layout_and_version() {
    // Our own layout: sync 0xD7 0x1E, version 1, seq, channels, format, samples, CRC over all
    // after the sync word (CRC-16/CCITT-FALSE, check value "123456789" → 0x29B1).
    assert_eq!(binary::crc16(b"123456789"), 0x29B1);
    let mut f = Vec::new();
    binary::encode(0x0102, &[1000, -2], binary::FORMAT_I16, &mut f);
    assert_eq!(&f[..7], &[0xD7, 0x1E, 1, 0x02, 0x01, 2, 1]);
    assert_eq!(&f[7..11], &[0xE8, 0x03, 0xFE, 0xFF]);
    let crc = binary::crc16(&f[2..11]);
    assert_eq!(&f[11..], &crc.to_le_bytes());
    // The same frame marked as another version is not decoded.
    let mut other = f.clone();
    other[2] = 2;
    let tail = binary::crc16(&other[2..11]).to_le_bytes();
    other[11..].copy_from_slice(&tail);
    let mut d = binary::Decoder::new();
    let mut out = Vec::new();
    d.push(&other, &mut out);
    assert!(out.is_empty());
    d.push(&f, &mut out);
    assert_eq!(out.len(), 1);
    assert_eq!(out[0].samples, vec![1000.0, -2.0]);
}

#[test]
fn format_detection() {
    let (bin, _) = binary_stream(5, 2, binary::FORMAT_I16, 0);
    assert_eq!(detect(&bin), Some(Format::Binary));
    let text = "# fs=250\n".to_string() + &"2048,2047\n".repeat(20);
    assert_eq!(detect(text.as_bytes()), Some(Format::Text));
    assert_eq!(detect(b"20"), None);
}
