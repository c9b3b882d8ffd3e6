//! CSV reading and writing.
//!
//! Reading accepts our own files (`time_s,ch1,…`) and the generic exports of oscilloscopes and
//! loggers: any number of preamble or `#` comment lines, an optional header row, fields separated
//! by comma, semicolon, tab or spaces. The data start at the first of two consecutive rows of
//! numbers with the same field count. A column named `time`, `time_s`, `t` (or starting with
//! "time") gives the sample times; otherwise `--fs`, then a `# fs=HZ` line, then a preamble
//! "sample interval" / "increment" line give the rate. Without a header, a first column that rises
//! evenly is taken as time when there are other columns.

use std::fmt::Write as _;
use std::io::Write as _;
use std::path::Path;

use super::{Event, FileUnit, ReadOptions, Recording, StoreError};

fn split(line: &str) -> Vec<&str> {
    let fields: Vec<&str> = if line.contains(',') {
        line.split(',').collect()
    } else if line.contains(';') {
        line.split(';').collect()
    } else if line.contains('\t') {
        line.split('\t').collect()
    } else {
        line.split_whitespace().collect()
    };
    let mut fields: Vec<&str> = fields
        .into_iter()
        .map(|f| f.trim().trim_matches('"').trim())
        .collect();
    // A trailing separator (common in scope exports) is not an empty channel.
    while fields.len() > 1 && fields.last().is_some_and(|f| f.is_empty()) {
        fields.pop();
    }
    fields
}

fn numbers(line: &str) -> Option<Vec<f64>> {
    let fields = split(line);
    if fields.is_empty() || fields.iter().any(|f| f.is_empty()) {
        return None;
    }
    fields.iter().map(|f| f.parse::<f64>().ok()).collect()
}

fn is_time_name(name: &str) -> bool {
    let n = name.trim().to_ascii_lowercase();
    n == "t"
        || n == "time_s"
        || n.starts_with("time")
        || n == "x-axis"
        || n == "seconds"
        || n == "second"
        || n == "s"
}

fn metadata_fs(line: &str) -> Option<f64> {
    let body = line.trim_start_matches('#').trim();
    let (k, v) = body.split_once('=')?;
    (k.trim().eq_ignore_ascii_case("fs"))
        .then(|| v.trim().parse().ok())
        .flatten()
}

fn preamble_interval(line: &str) -> Option<f64> {
    let f = split(line);
    if f.len() < 2 {
        return None;
    }
    let key = f[0].to_ascii_lowercase();
    if key.contains("interval") || key.contains("increment") {
        f[1].parse().ok().filter(|v: &f64| *v > 0.0)
    } else {
        None
    }
}

/// Sample rate from a time column, refusing times that do not increase.
fn rate_from_times(path: &Path, t: &[f64], first_line: usize) -> Result<f64, StoreError> {
    if t.len() < 2 {
        return Err(StoreError::malformed(
            path,
            "a time column needs at least two rows",
        ));
    }
    for (i, w) in t.windows(2).enumerate() {
        if w[1] <= w[0] {
            return Err(StoreError::malformed(
                path,
                format!(
                    "line {}: time {} does not increase after {}",
                    first_line + i + 1,
                    w[1],
                    w[0]
                ),
            ));
        }
    }
    let mean_dt = (t[t.len() - 1] - t[0]) / (t.len() - 1) as f64;
    let worst = t
        .windows(2)
        .map(|w| ((w[1] - w[0]) - mean_dt).abs())
        .fold(0.0, f64::max);
    // Logger timestamps jitter; a spread beyond a quarter of a sample means dropped samples.
    if worst > 0.25 * mean_dt {
        return Err(StoreError::malformed(
            path,
            format!(
                "the time column is uneven (a step differs from the mean {mean_dt:.6} s by {worst:.6} s): samples were lost or the log is not at a fixed rate"
            ),
        ));
    }
    Ok(1.0 / mean_dt)
}

/// Reads a CSV recording.
///
/// # Errors
/// [`StoreError`] naming the line of the first malformed row, a missing rate, or I/O.
pub fn read(path: &Path, opts: &ReadOptions) -> Result<Recording, StoreError> {
    let bytes = std::fs::read(path).map_err(|e| StoreError::io(path, e))?;
    let text = String::from_utf8_lossy(&bytes);
    let lines: Vec<(usize, &str)> = text
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l.trim()))
        .filter(|(_, l)| !l.is_empty())
        .collect();

    let mut meta_fs = None;
    let mut events = Vec::new();
    let content: Vec<(usize, &str)> = lines
        .iter()
        .copied()
        .filter(|(_, l)| {
            if l.starts_with('#') {
                meta_fs = meta_fs.or(metadata_fs(l));
                if let Some(e) = parse_event(l) {
                    events.push(e);
                }
                false
            } else {
                true
            }
        })
        .collect();
    let (start, k, interval) = data_start(path, &content)?;
    let header: Option<Vec<String>> = content[..start]
        .iter()
        .rev()
        .map(|(_, l)| split(l))
        .find(|f| f.len() == k)
        .map(|f| f.iter().map(|s| s.to_string()).collect());

    let mut cols = columns(path, &content[start..], k)?;

    let mut time_col = header
        .as_ref()
        .and_then(|h| h.iter().position(|n| is_time_name(n)));
    if time_col.is_none() && header.is_none() && k >= 2 && opts.fs_hz.is_none() && meta_fs.is_none()
    {
        // A headerless scope export: take column 1 as time if it rises evenly.
        let first_line = content[start].0;
        if rate_from_times(path, &cols[0], first_line).is_ok() {
            time_col = Some(0);
        }
    }
    let (fs, time_s) = match time_col {
        Some(c) => (
            rate_from_times(path, &cols[c], content[start].0)?,
            Some(cols.remove(c)),
        ),
        None => {
            let fs = opts
                .fs_hz
                .or(meta_fs)
                .or(interval.map(|dt| 1.0 / dt))
                .ok_or_else(|| StoreError::NoRate {
                    path: path.display().to_string(),
                })?;
            (fs, None)
        }
    };
    if !(fs.is_finite() && fs > 0.0) {
        return Err(StoreError::malformed(path, format!("sample rate {fs} Hz")));
    }
    if cols.is_empty() {
        return Err(StoreError::malformed(
            path,
            "only a time column, no signal columns",
        ));
    }
    let names = match &header {
        Some(h) => h
            .iter()
            .enumerate()
            .filter(|(i, _)| Some(*i) != time_col)
            .map(|(_, n)| n.clone())
            .collect(),
        None => (1..=cols.len()).map(|i| format!("ch{i}")).collect(),
    };
    let to_uv = opts.unit.to_uv();
    for c in &mut cols {
        c.iter_mut().for_each(|v| *v *= to_uv);
    }
    Ok(Recording {
        fs_hz: fs,
        names,
        time_s,
        channels: cols,
        events,
        ..Default::default()
    })
}

/// Where the rows of numbers start (index into `content`, and their width), and the sample
/// interval a preamble gives, if any.
fn data_start(
    path: &Path,
    content: &[(usize, &str)],
) -> Result<(usize, usize, Option<f64>), StoreError> {
    let mut interval = None;
    let mut start = None;
    for i in 0..content.len() {
        if let Some(first) = numbers(content[i].1) {
            let k = first.len();
            let run = content[i..]
                .iter()
                .take(2)
                .all(|(_, l)| numbers(l).is_some_and(|v| v.len() == k));
            if run || content.len() - i < 2 {
                start = Some((i, k));
                break;
            }
            // A row of numbers followed by a row as wide that is not all numbers: a bad value
            // in the data, not more preamble.
            let (next_no, next) = content[i + 1];
            if split(next).len() == k {
                return Err(StoreError::malformed(
                    path,
                    format!("line {next_no}: not a row of {k} numbers: {next:.60}"),
                ));
            }
        }
        interval = interval.or(preamble_interval(content[i].1));
    }
    let Some((start, k)) = start else {
        return Err(StoreError::malformed(path, "no rows of numbers found"));
    };
    Ok((start, k, interval))
}

/// The data rows as columns; each row must be `k` finite numbers.
fn columns(path: &Path, rows: &[(usize, &str)], k: usize) -> Result<Vec<Vec<f64>>, StoreError> {
    let mut cols: Vec<Vec<f64>> = vec![Vec::new(); k];
    for &(line_no, l) in rows {
        let row = numbers(l).ok_or_else(|| {
            StoreError::malformed(
                path,
                format!("line {line_no}: not a row of {k} numbers: {l:.60}"),
            )
        })?;
        if row.len() != k {
            return Err(StoreError::malformed(
                path,
                format!(
                    "line {line_no}: {} fields where the data have {k}",
                    row.len()
                ),
            ));
        }
        if let Some(c) = row.iter().position(|v| !v.is_finite()) {
            return Err(StoreError::malformed(
                path,
                format!("line {line_no}, field {}: not a finite number", c + 1),
            ));
        }
        for (c, v) in cols.iter_mut().zip(row) {
            c.push(v);
        }
    }

    Ok(cols)
}

/// The comment line that carries an event: `# event 12.5 s: text`.
pub fn event_line(e: &Event) -> String {
    format!(
        "# event {} s: {}\n",
        e.onset_s,
        super::edf::clean_text(&e.text)
    )
}

/// Reads an `# event T s: text` comment line.
fn parse_event(l: &str) -> Option<Event> {
    let rest = l.strip_prefix('#')?.trim_start().strip_prefix("event ")?;
    let (t, text) = rest.split_once(" s:")?;
    Some(Event {
        onset_s: t.trim().parse().ok()?,
        duration_s: None,
        text: text.trim().to_string(),
    })
}

/// Formats sample n's time so that it is exact where fs allows.
pub fn time_text(n: u64, fs: f64) -> String {
    let t = n as f64 / fs;
    if (1e6 / fs).fract() == 0.0 {
        format!("{t:.6}")
    } else {
        format!("{t:.9}")
    }
}

/// Writes `time_s` and one column per channel in `unit`, values at full precision.
///
/// # Errors
/// The file cannot be written (the message names it).
pub fn write(path: &Path, rec: &Recording, unit: FileUnit) -> Result<(), StoreError> {
    let f = std::fs::File::create(path).map_err(|e| StoreError::io(path, e))?;
    let mut w = std::io::BufWriter::new(f);
    let mut line = String::from("time_s");
    for n in &rec.names {
        line.push(',');
        line.push_str(n);
    }
    line.push('\n');
    for e in &rec.events {
        line.push_str(&event_line(e));
    }
    let scale = 1.0 / unit.to_uv();
    for i in 0..rec.len() {
        match &rec.time_s {
            Some(t) => {
                let _ = write!(line, "{}", t[i]);
            }
            None => line.push_str(&time_text(i as u64, rec.fs_hz)),
        }
        for ch in &rec.channels {
            let _ = write!(line, ",{}", ch[i] * scale);
        }
        line.push('\n');
        if line.len() > 1 << 16 {
            w.write_all(line.as_bytes())
                .map_err(|e| StoreError::io(path, e))?;
            line.clear();
        }
    }
    w.write_all(line.as_bytes())
        .map_err(|e| StoreError::io(path, e))?;
    w.flush().map_err(|e| StoreError::io(path, e))
}

/// A CSV recording being written: a header, then `time_s,ch1,…` rows and event lines, flushed
/// to the OS at least every half second.
pub struct CsvSink {
    file: std::fs::File,
    path: std::path::PathBuf,
    fs: f64,
    channels: usize,
    /// Frames taken (held, or waiting in `line`).
    frames: u64,
    /// Frames and bytes written to the OS in whole lines.
    held_frames: u64,
    bytes: u64,
    line: String,
    last_flush: std::time::Instant,
}

impl CsvSink {
    /// Writes the waiting lines; only a complete write counts them as held.
    fn flush_lines(&mut self) -> Result<(), StoreError> {
        use std::io::Write as _;
        if !self.line.is_empty() {
            self.file
                .write_all(self.line.as_bytes())
                .map_err(|e| StoreError::io(&self.path, e))?;
            self.bytes += self.line.len() as u64;
            self.line.clear();
        }
        self.held_frames = self.frames;
        self.last_flush = std::time::Instant::now();
        Ok(())
    }
}

impl CsvSink {
    /// Creates `path` for `channels` channels at `fs`, the first line saying what the values
    /// are (`unit_note`, e.g. "uV (input-referred)").
    ///
    /// # Errors
    /// The file cannot be created.
    pub fn create(
        path: &std::path::Path,
        fs: f64,
        channels: usize,
        unit_note: &str,
    ) -> Result<Self, StoreError> {
        use std::fmt::Write as _;
        let f = std::fs::File::create(path).map_err(|e| StoreError::io(path, e))?;
        let mut line = format!("# leadline recording; values in {unit_note}\ntime_s");
        for k in 1..=channels {
            let _ = write!(line, ",ch{k}");
        }
        line.push('\n');
        Ok(Self {
            file: f,
            path: path.to_path_buf(),
            fs,
            channels: channels.max(1),
            frames: 0,
            held_frames: 0,
            bytes: 0,
            line,
            last_flush: std::time::Instant::now(),
        })
    }
}

impl super::Sink for CsvSink {
    fn push(&mut self, frames: &[f64]) -> Result<(), StoreError> {
        use std::fmt::Write as _;
        for frame in frames.chunks_exact(self.channels) {
            self.line.push_str(&time_text(self.frames, self.fs));
            for v in frame {
                let _ = write!(self.line, ",{v}");
            }
            self.line.push('\n');
            self.frames += 1;
        }
        // Data reach the OS at least once a second, in whole lines.
        if self.line.len() >= 1 << 16
            || self.last_flush.elapsed() >= std::time::Duration::from_millis(500)
        {
            self.flush_lines()?;
        }
        Ok(())
    }

    fn frames_held(&self) -> u64 {
        self.held_frames
    }

    fn cut_to_held(&mut self) {
        self.line.clear();
        self.frames = self.held_frames;
        let _ = self.file.set_len(self.bytes);
    }

    fn note(&mut self, t_s: f64, text: &str) {
        self.line.push_str(&event_line(&Event {
            onset_s: t_s,
            duration_s: None,
            text: text.to_string(),
        }));
    }

    fn bytes(&self) -> u64 {
        self.bytes + self.line.len() as u64
    }

    fn finish(&mut self) -> Result<super::Finished, StoreError> {
        if let Err(e) = self.flush_lines() {
            super::Sink::cut_to_held(self);
            return Err(e);
        }
        self.file
            .sync_all()
            .map_err(|e| StoreError::io(&self.path, e))?;
        Ok(super::Finished {
            bytes: self.bytes,
            frames: self.held_frames,
            padded_frames: 0,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tmp(name: &str, body: &str) -> std::path::PathBuf {
        let p = std::env::temp_dir().join(format!("leadline-csv-{}-{name}", std::process::id()));
        std::fs::write(&p, body).unwrap();
        p
    }

    #[test]
    fn reads_our_csv_and_a_scope_export() {
        let p = tmp(
            "ours.csv",
            "time_s,ch1,ch2\n0.000,1.0,2.0\n0.002,1.5,2.5\n0.004,2.0,3.0\n",
        );
        let r = read(&p, &ReadOptions::default()).unwrap();
        assert_eq!(r.fs_hz.round(), 500.0);
        assert_eq!(r.names, vec!["ch1", "ch2"]);
        assert_eq!(r.channels[1], vec![2000.0, 2500.0, 3000.0]);

        let scope = "Model,XYZ-100\nSample Interval,1.000000e-03\n\nTime (s);CH1 (V);\n0.000;0.0010;\n0.001;0.0020;\n0.002;-0.0010;\n0.003;0.0;\n";
        let p = tmp("scope.csv", scope);
        let r = read(
            &p,
            &ReadOptions {
                unit: FileUnit::Volts,
                ..ReadOptions::default()
            },
        )
        .unwrap();
        assert!((r.fs_hz - 1000.0).abs() < 1e-6);
        assert_eq!(r.channels, vec![vec![1000.0, 2000.0, -1000.0, 0.0]]);
        assert_eq!(r.time_s.as_ref().unwrap().len(), 4);
    }

    #[test]
    fn headerless_rate_from_metadata_or_user_and_clear_errors() {
        let p = tmp("meta.txt", "# fs=250\n1\n2\n3\n4\n");
        assert_eq!(read(&p, &ReadOptions::default()).unwrap().fs_hz, 250.0);
        let p = tmp("norate.txt", "1\n2\n3\n");
        assert!(matches!(
            read(&p, &ReadOptions::default()),
            Err(StoreError::NoRate { .. })
        ));
        let p = tmp("bad.csv", "time_s,ch1\n0,1\n0.001,2\n0.002,x\n0.003,4\n");
        let e = read(&p, &ReadOptions::default()).unwrap_err().to_string();
        assert!(e.contains("line 4"), "{e}");
        let p = tmp("back.csv", "t,v\n0,1\n0.002,2\n0.001,3\n");
        let e = read(&p, &ReadOptions::default()).unwrap_err().to_string();
        assert!(e.contains("does not increase"), "{e}");
    }
}
