//! 16-bit PCM mono WAV (RIFF) writing and reading.

use std::io::{self, Write};

/// Writes `samples` (−1…1) at `rate` Hz as 16-bit PCM mono.
///
/// # Errors
/// The writer's I/O error.
pub fn write(out: &mut dyn Write, samples: &[f32], rate: u32) -> io::Result<()> {
    let data_len = u32::try_from(samples.len() * 2).map_err(|_| {
        io::Error::new(io::ErrorKind::InvalidInput, "audio longer than a WAV holds")
    })?;
    let mut h = Vec::with_capacity(44);
    h.extend_from_slice(b"RIFF");
    h.extend_from_slice(&(36 + data_len).to_le_bytes());
    h.extend_from_slice(b"WAVEfmt ");
    h.extend_from_slice(&16u32.to_le_bytes());
    h.extend_from_slice(&1u16.to_le_bytes()); // PCM
    h.extend_from_slice(&1u16.to_le_bytes()); // mono
    h.extend_from_slice(&rate.to_le_bytes());
    h.extend_from_slice(&(rate * 2).to_le_bytes());
    h.extend_from_slice(&2u16.to_le_bytes());
    h.extend_from_slice(&16u16.to_le_bytes());
    h.extend_from_slice(b"data");
    h.extend_from_slice(&data_len.to_le_bytes());
    out.write_all(&h)?;
    let mut body = Vec::with_capacity(samples.len() * 2);
    for &s in samples {
        let v = (f64::from(s).clamp(-1.0, 1.0) * 32767.0).round() as i16;
        body.extend_from_slice(&v.to_le_bytes());
    }
    out.write_all(&body)
}

/// Reads a 16-bit PCM mono WAV as written by [`write`]: (rate, samples −1…1).
///
/// # Errors
/// Not such a file: one line saying what is wrong.
pub fn read(bytes: &[u8]) -> Result<(u32, Vec<f32>), String> {
    if bytes.len() < 44 || &bytes[0..4] != b"RIFF" || &bytes[8..12] != b"WAVE" {
        return Err("not a RIFF/WAVE file".into());
    }
    let u16_at = |i: usize| u16::from_le_bytes([bytes[i], bytes[i + 1]]);
    let u32_at =
        |i: usize| u32::from_le_bytes([bytes[i], bytes[i + 1], bytes[i + 2], bytes[i + 3]]);
    if u16_at(20) != 1 || u16_at(22) != 1 || u16_at(34) != 16 {
        return Err("only 16-bit PCM mono is read".into());
    }
    let rate = u32_at(24);
    let len = (u32_at(40) as usize).min(bytes.len() - 44);
    let samples = bytes[44..44 + len]
        .chunks_exact(2)
        .map(|c| f32::from(i16::from_le_bytes([c[0], c[1]])) / 32767.0)
        .collect();
    Ok((rate, samples))
}

#[cfg(test)]
mod tests {
    #[test]
    fn what_is_written_reads_back() {
        let x = [0.0f32, 0.5, -0.5, 1.0, -1.0];
        let mut buf = Vec::new();
        super::write(&mut buf, &x, 48_000).unwrap();
        assert_eq!(buf.len(), 44 + 10);
        let (rate, y) = super::read(&buf).unwrap();
        assert_eq!(rate, 48_000);
        for (a, b) in x.iter().zip(&y) {
            assert!((a - b).abs() < 1e-4);
        }
        assert!(super::read(b"garbage").is_err());
    }
}
