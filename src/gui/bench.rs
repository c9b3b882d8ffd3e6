//! `leadline monitor --bench SECONDS`: the real window runs for a while and reports what it cost.
//!
//! Frame time is what eframe reports as the CPU time of the previous frame (`logic` + `ui`);
//! latency is each Snapshot's age of its newest sample when the DSP thread made it; CPU and
//! resident memory come from the kernel's accounting of this process (`/proc/self/stat`,
//! `/proc/self/status`), the same figures `top` or `ps` show from outside.

use std::time::{Duration, Instant};

use serde::Serialize;

/// Seconds at the start that are not measured (window creation, font atlas, first spectrum).
pub const WARM_UP_S: f64 = 2.0;

/// What a bench run measured.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct BenchReport {
    pub view: String,
    pub paused: bool,
    pub seconds: f64,
    pub frames: u64,
    pub fps: f64,
    pub frame_ms_median: f64,
    pub frame_ms_p99: f64,
    pub frame_ms_max: f64,
    /// What eframe reports as the frame's CPU time (app + tessellation + GL calls), ms.
    pub eframe_frame_ms_median: f64,
    pub eframe_frame_ms_p99: f64,
    /// Frames drawn with no new snapshot since the previous one.
    pub frames_without_new_data: u64,
    /// Snapshots the DSP thread made but the window never drew (dropped for a newer one), over
    /// the measured time.
    pub display_drops: u64,
    pub snapshots: u64,
    pub latency_ms_median: f64,
    pub latency_ms_p99: f64,
    /// CPU time of the whole process over the measured time, % of one core.
    pub cpu_percent: f64,
    pub rss_mb: f64,
    /// Resident size growth over the measured time, MB.
    pub rss_growth_mb: f64,
    /// glibc tunables the process ran with (`GLIBC_TUNABLES`), empty when none.
    pub heap_tunables: String,
}

/// Collects per-frame and per-snapshot figures.
#[derive(Debug, Clone)]
pub struct BenchRun {
    pub view: String,
    pub paused: bool,
    started: Instant,
    seconds: f64,
    measuring_since: Option<(Instant, f64, f64)>,
    frame_ms: Vec<f64>,
    eframe_ms: Vec<f64>,
    stale_frames: u64,
    latency_ms: Vec<f64>,
    /// The pipeline's count of dropped snapshots: at the start of the measurement, and now.
    drops_at_start: Option<u64>,
    drops_now: u64,
    pub report: Option<BenchReport>,
}

/// CPU seconds (user + system) of this process so far.
pub fn process_cpu_s() -> f64 {
    let Ok(s) = std::fs::read_to_string("/proc/self/stat") else {
        return f64::NAN;
    };
    // Fields after the command name (which is in parentheses and may hold spaces).
    let Some(rest) = s.rsplit_once(')').map(|(_, r)| r) else {
        return f64::NAN;
    };
    let f: Vec<&str> = rest.split_whitespace().collect();
    // utime and stime are fields 14 and 15 of the line, 12 and 13 after the name; in clock ticks
    // of USER_HZ, which is 100 on Linux.
    let ticks = |i: usize| {
        f.get(i)
            .and_then(|v| v.parse::<f64>().ok())
            .unwrap_or(f64::NAN)
    };
    (ticks(11) + ticks(12)) / 100.0
}

/// Resident set size of this process, MB.
pub fn rss_mb() -> f64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmRSS:"))
                .and_then(|l| l.split_whitespace().nth(1))
                .and_then(|v| v.parse::<f64>().ok())
        })
        .map_or(f64::NAN, |kb| kb / 1024.0)
}

use crate::numeric::percentile;

impl BenchRun {
    /// A run of `seconds` measured seconds after the warm-up.
    pub fn new(seconds: f64, view: &str, paused: bool) -> Self {
        Self {
            view: view.into(),
            paused,
            started: Instant::now(),
            seconds,
            measuring_since: None,
            frame_ms: Vec::new(),
            eframe_ms: Vec::new(),
            stale_frames: 0,
            latency_ms: Vec::new(),
            drops_at_start: None,
            drops_now: 0,
            report: None,
        }
    }

    fn measuring(&mut self) -> bool {
        if self.measuring_since.is_none() && self.started.elapsed().as_secs_f64() >= WARM_UP_S {
            self.measuring_since = Some((Instant::now(), process_cpu_s(), rss_mb()));
        }
        self.measuring_since.is_some() && self.report.is_none()
    }

    /// One frame: `app_ms` is the time the previous frame spent in `logic` + `ui`, `cpu_s`
    /// eframe's CPU time of the previous frame, `new_data` whether this frame has a new snapshot.
    pub fn on_frame(&mut self, app_ms: Option<f64>, cpu_s: Option<f32>, new_data: bool) {
        if !self.measuring() {
            return;
        }
        if let Some(a) = app_ms {
            self.frame_ms.push(a);
        }
        if let Some(c) = cpu_s {
            self.eframe_ms.push(f64::from(c) * 1e3);
        }
        if !new_data {
            self.stale_frames += 1;
        }
    }

    /// One snapshot taken; `dropped` is the pipeline's running count of dropped snapshots.
    pub fn on_snapshot(&mut self, latency_ms: f64, dropped: u64) {
        if self.measuring() {
            self.latency_ms.push(latency_ms);
            self.drops_at_start.get_or_insert(dropped);
            self.drops_now = dropped;
        }
    }

    /// Time left until the next milestone, the end of the warm-up or of the run (for the repaint
    /// timer); None once finished.
    pub fn remaining(&self) -> Option<Duration> {
        if self.report.is_some() {
            return None;
        }
        // Wake at the end of the warm-up too, so an idle (paused) window starts measuring.
        let end = if self.measuring_since.is_none() {
            WARM_UP_S
        } else {
            WARM_UP_S + self.seconds
        };
        let left = end - self.started.elapsed().as_secs_f64();
        Some(Duration::from_secs_f64(left.max(0.0)))
    }

    /// Makes the report when the time is up; true once it exists.
    pub fn finish_if_due(&mut self) -> bool {
        if self.report.is_some() {
            return true;
        }
        let Some((t0, cpu0, rss0)) = self.measuring_since else {
            return false;
        };
        if self.started.elapsed().as_secs_f64() < WARM_UP_S + self.seconds {
            return false;
        }
        let secs = t0.elapsed().as_secs_f64();
        let frames = self.frame_ms.len() as u64;
        let rss = rss_mb();
        let mut f = self.frame_ms.clone();
        let mut l = self.latency_ms.clone();
        let mut e = self.eframe_ms.clone();
        self.report = Some(BenchReport {
            view: self.view.clone(),
            paused: self.paused,
            seconds: secs,
            frames,
            fps: frames as f64 / secs,
            frame_ms_median: percentile(&mut f, 50.0),
            frame_ms_p99: percentile(&mut f, 99.0),
            frame_ms_max: f.iter().copied().fold(f64::NAN, f64::max),
            eframe_frame_ms_median: percentile(&mut e, 50.0),
            eframe_frame_ms_p99: percentile(&mut e, 99.0),
            frames_without_new_data: self.stale_frames,
            display_drops: self
                .drops_now
                .saturating_sub(self.drops_at_start.unwrap_or(self.drops_now)),
            snapshots: l.len() as u64,
            latency_ms_median: percentile(&mut l, 50.0),
            latency_ms_p99: percentile(&mut l, 99.0),
            cpu_percent: 100.0 * (process_cpu_s() - cpu0) / secs,
            rss_mb: rss,
            rss_growth_mb: rss - rss0,
            heap_tunables: std::env::var("GLIBC_TUNABLES").unwrap_or_default(),
        });
        true
    }
}

impl BenchReport {
    /// Human lines, then the JSON object as the last line.
    pub fn text(&self) -> String {
        let nan0 = |v: f64| if v.is_finite() { v } else { 0.0 };
        let mut s = format!(
            "monitor bench: view {}{}, {:.1} s measured after {WARM_UP_S} s warm-up\n\
             frames {} ({:.1} frames/s, {} without new data, {} display drops); app time (logic + ui) per frame median {:.2} ms, p99 {:.2} ms, max {:.2} ms\n\
             eframe's frame CPU time (app + tessellation + GL calls) median {:.2} ms, p99 {:.2} ms\n\
             snapshots {}; newest-sample age at snapshot median {:.2} ms, p99 {:.2} ms\n\
             process CPU {}; resident {:.1} MB ({:+.1} MB over the run)\n",
            self.view,
            if self.paused { " (paused)" } else { "" },
            self.seconds,
            self.frames,
            self.fps,
            self.frames_without_new_data,
            self.display_drops,
            nan0(self.frame_ms_median),
            nan0(self.frame_ms_p99),
            nan0(self.frame_ms_max),
            nan0(self.eframe_frame_ms_median),
            nan0(self.eframe_frame_ms_p99),
            self.snapshots,
            nan0(self.latency_ms_median),
            nan0(self.latency_ms_p99),
            if self.cpu_percent.is_finite() {
                format!(
                    "{:.1} % of one core (whole process, /proc/self/stat)",
                    self.cpu_percent
                )
            } else {
                "not available: this system has no /proc/self/stat".to_string()
            },
            self.rss_mb,
            self.rss_growth_mb
        );
        let mut clean = self.clone();
        for v in [
            &mut clean.frame_ms_median,
            &mut clean.frame_ms_p99,
            &mut clean.frame_ms_max,
            &mut clean.eframe_frame_ms_median,
            &mut clean.eframe_frame_ms_p99,
            &mut clean.latency_ms_median,
            &mut clean.latency_ms_p99,
        ] {
            *v = nan0(*v);
        }
        s.push_str(&serde_json::to_string(&clean).unwrap_or_default());
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn percentiles_of_a_known_set() {
        let mut v: Vec<f64> = (1..=100).map(f64::from).collect();
        assert_eq!(percentile(&mut v, 50.0), 50.5);
        assert!((percentile(&mut v, 99.0) - 99.01).abs() < 1e-9);
        assert!(percentile(&mut [], 50.0).is_nan());
    }

    #[test]
    fn this_process_has_cpu_time_and_memory() {
        let c0 = process_cpu_s();
        let mut x = 0u64;
        for i in 0..20_000_000u64 {
            x = x.wrapping_mul(31).wrapping_add(i);
        }
        assert!(x != 1);
        assert!(process_cpu_s() >= c0);
        let r = rss_mb();
        assert!(r > 1.0 && r < 10_000.0, "{r}");
    }
}
