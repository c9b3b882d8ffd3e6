//! Real-time QRS detection after Pan & Tompkins (IEEE TBME 32(3):230–236, 1985) with the decision
//! rules studied by Hamilton & Tompkins (IEEE TBME 33(12):1157–1165, 1986).
//!
//! Stages, all designed for the actual sample rate (125–2000 Hz) rather than the original 200 Hz:
//! band-pass 5–15 Hz (2nd-order Butterworth high- and low-pass, bilinear with pre-warping) →
//! five-point derivative → squaring → 150 ms moving-window integration. Peaks of the integrated
//! signal are candidates; adaptive signal and noise levels (SPKI/NPKI, weights 1/8) give the
//! thresholds THR1 = NPKI + ¼(SPKI − NPKI) and THR2 = ½·THR1. Rules: a 200 ms refractory period;
//! a candidate within 360 ms of the last QRS whose steepest slope is under half of that QRS's is a
//! T wave; when no QRS has come for 1.66 × the RR average, the largest candidate since the last
//! QRS above THR2 is taken (search-back, SPKI weight 1/4). The beat is then placed on the R peak:
//! the sample of the input farthest from the median of the QRS window, so either polarity works.
//!
//! Changes from the published rules, and why:
//! - Candidates are local maxima of the integrated signal over 180 ms before and 250 ms after
//!   (an O(1) sliding-window
//!   maximum), not every slope change: a noisy integrator output otherwise yields several
//!   candidates per QRS and pulls NPKI up.
//! - The learning phase (2 s) buffers its candidates and classifies them once the levels are
//!   initialised (SPKI = ⅓ of the largest integrated value, NPKI = ½ of its mean, as the paper
//!   says), so the first beats are not lost.
//! - Search-back only looks at candidates at least 360 ms after the last QRS, so it does not pick
//!   up the T wave it has just rejected, and it accepts a candidate only if its slope is at least
//!   ⅓ of the running QRS slope (a slope check the paper applies only under 360 ms).
//! - Two QRS shapes are learned from the band-passed signal (±60 ms around R): the usual one and
//!   the recent other one (ectopic beats). When a beat's R, placed as above, matches neither
//!   (correlation under 0.7 with the usual shape, under 0.8 with the other) and a place within
//!   ±300 ms after the last beat's refractory period matches the usual shape well (≥ 0.8, at
//!   least 0.25 better, and of a QRS's amplitude: ½–2× the shape's RMS), R moves there. In
//!   electrode-motion noise the integrator's peak can sit on an artefact next to the QRS; the
//!   beat was found but placed on the artefact.

use std::collections::VecDeque;

use crate::dsp::chain::{Chain, ChainSettings};

/// The span over which QRS-like events are counted, s.
pub const EVENTS_S: f64 = 5.0;

/// Half-width of the QRS template, s.
const TPL_HALF_S: f64 = 0.06;
/// How far from the first estimate the template may move the R peak, s.
const TPL_SEARCH_S: f64 = 0.3;
/// Beats averaged before the template is used.
const TPL_READY: usize = 8;

/// The detector's few free choices, for choosing them on some records and scoring the choice on
/// others (`leadline bench beats`). The published values are Hamilton & Tompkins' (threshold ¼
/// of the way from the noise to the signal level, search-back after 1.66 RR averages, a T wave
/// under ½ of the QRS slope; docs/REFERENCES.md §1).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Tuning {
    /// THR1 = NPKI + this × (SPKI − NPKI).
    pub threshold: f64,
    /// Search back when no QRS has come for this many RR averages.
    pub search_back_rr: f64,
    /// A candidate within 360 ms of a QRS with a slope under this share of the QRS's is a T wave.
    pub t_slope: f64,
    /// Move an R placed on a non-QRS shape to a place nearby that matches the usual QRS.
    pub relocate: bool,
}

impl Tuning {
    /// The published rules, without the template relocation.
    pub const PUBLISHED: Tuning = Tuning {
        threshold: 0.25,
        search_back_rr: 1.66,
        t_slope: 0.5,
        relocate: false,
    };

    /// The choices tried when tuning on a split: every combination of a threshold of 0.2, 0.25
    /// or 0.3, search-back after 1.5 or 1.66 RR averages, and relocation off or on.
    pub fn grid() -> Vec<Tuning> {
        let mut g = Vec::new();
        for threshold in [0.2, 0.25, 0.3] {
            for search_back_rr in [1.5, 1.66] {
                for relocate in [false, true] {
                    g.push(Tuning {
                        threshold,
                        search_back_rr,
                        t_slope: 0.5,
                        relocate,
                    });
                }
            }
        }
        g
    }
}

impl Default for Tuning {
    /// What the product runs, chosen by the ten three-against-two splits of the repository's
    /// MIT-BIH records (README, "Beat detection"): every split chose search-back after 1.5 RR
    /// averages, nine of ten chose the relocation, and the threshold 0.2 and 0.3 won five splits
    /// each. The simulator's development set (no real recording) breaks that tie: 0.2 finds more
    /// beats in noise, and missed beats are what unseen records lost before.
    fn default() -> Self {
        Tuning {
            threshold: 0.2,
            search_back_rr: 1.5,
            t_slope: 0.5,
            relocate: true,
        }
    }
}

/// A detected beat.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Beat {
    /// Sample index (from the start of the stream) of the R peak.
    pub sample: u64,
    /// Value of the input at the R peak relative to the median of the QRS window: its sign is the
    /// beat's polarity.
    pub r_value: f64,
    /// Found by search-back (a weaker beat the main threshold missed).
    pub search_back: bool,
    /// Index of the sample whose arrival decided the beat: `decided − sample` is the live
    /// latency from the R peak to the readout.
    pub decided: u64,
}

/// Why a detector cannot be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DetectorError {
    /// 125–2000 Hz.
    #[error("QRS detection works at 125–2000 Hz, not {0} Hz")]
    SampleRate(f64),
}

#[derive(Debug, Clone, Copy)]
struct Candidate {
    index: u64,
    peak: f64,
    slope: f64,
}

/// A ring of the most recent samples, addressed by absolute index. The size is a power of two
/// so the index arithmetic is a mask, not a division (this runs several times per sample).
#[derive(Debug, Clone)]
struct Ring {
    buf: Vec<f64>,
    mask: u64,
    next: u64,
}

impl Ring {
    fn new(len: usize) -> Self {
        let n = len.max(1).next_power_of_two();
        Self {
            buf: vec![0.0; n],
            mask: n as u64 - 1,
            next: 0,
        }
    }
    #[inline]
    fn push(&mut self, v: f64) {
        self.buf[(self.next & self.mask) as usize] = v;
        self.next += 1;
    }
    #[inline]
    fn get(&self, i: u64) -> Option<f64> {
        (i < self.next && i + self.buf.len() as u64 >= self.next)
            .then(|| self.buf[(i & self.mask) as usize])
    }
}

/// The streaming detector. Feed it blocks of input samples (any unit); it reports beats once
/// they are decided (about 0.36 s after the R peak, later for a beat found by search-back).
#[derive(Debug, Clone)]
pub struct Detector {
    fs: f64,
    tuning: Tuning,
    bandpass: Chain,
    n: u64,
    bp_hist: [f64; 4],
    mwi_len: usize,
    mwi_sum: f64,
    sq_ring: Ring,
    loc_ring: Ring,
    /// Indices of the sliding-window maximum of the integrated signal.
    maxq: VecDeque<(u64, f64)>,
    /// Look-ahead of the candidate window, samples (the decision waits this long).
    half_window: u64,
    /// Look-back of the candidate window, samples.
    look_back: u64,
    delay_bp: u64,
    refractory: u64,
    t_wave_window: u64,
    learn_until: u64,
    learn_max: f64,
    learn_sum: f64,
    learn_count: u64,
    pending: Vec<Candidate>,
    initialised: bool,
    spki: f64,
    npki: f64,
    last_qrs: Option<(u64, f64)>,
    qrs_slope: f64,
    rr_recent: VecDeque<f64>,
    rr_regular: VecDeque<f64>,
    irregular_run: usize,
    since_qrs: Vec<Candidate>,
    /// Running mean of the R deflections' signs: +1 upright beats, −1 inverted.
    polarity: f64,
    /// When the signal level was last halved by the lock-out guard.
    last_decay: u64,
    /// Peaks of the integrated signal above half the signal level (SPKI), at least 200 ms
    /// apart, of the last 5 s: how often QRS-like energy arrives, whatever the candidate window
    /// lets through.
    events: VecDeque<u64>,
    prev_mwi: [f64; 2],
    /// The band-passed input, for matching beats against the QRS template.
    bp_ring: Ring,
    /// The usual QRS: band-passed samples around the R peak (± `tpl_half`), averaged over the
    /// beats that matched it well.
    usual: LearnedQrs,
    /// The recent beats that did not look like the usual QRS (ectopic beats, in a bigeminal
    /// rhythm): such a beat is left where it is.
    other: LearnedQrs,
    tpl_half: u64,
    /// R peak of the last beat.
    last_r: Option<u64>,
}

fn band_chain(fs: f64) -> ChainSettings {
    ChainSettings::band(Some((5.0, 2)), Some((15.0_f64.min(0.4 * fs), 2)))
}

/// An averaged QRS shape (band-passed, around the R peak).
#[derive(Debug, Clone)]
struct LearnedQrs {
    v: Vec<f64>,
    beats: usize,
    /// Beats in a row that did not match.
    misses: usize,
}

impl LearnedQrs {
    fn new(len: usize) -> Self {
        Self {
            v: vec![0.0; len],
            beats: 0,
            misses: 0,
        }
    }

    fn ready(&self) -> bool {
        self.beats >= TPL_READY
    }

    /// Pearson correlation with a segment of the same length.
    fn corr(&self, y: &[f64]) -> Option<f64> {
        let nf = self.v.len() as f64;
        let (sx, sy) = (self.v.iter().sum::<f64>(), y.iter().sum::<f64>());
        let vx = self.v.iter().map(|a| a * a).sum::<f64>() - sx * sx / nf;
        let vy = y.iter().map(|a| a * a).sum::<f64>() - sy * sy / nf;
        (vx > 0.0 && vy > 0.0).then(|| (dot(&self.v, y) - sx * sy / nf) / (vx * vy).sqrt())
    }

    /// Averages `y` in (weight 1/16 once sixteen beats are in).
    fn add(&mut self, y: &[f64]) {
        self.beats += 1;
        let w = 1.0 / (self.beats.min(16) as f64);
        for (t, v) in self.v.iter_mut().zip(y) {
            *t += w * (v - *t);
        }
    }
}

/// Dot product with four running sums (the additions of one sum wait on each other).
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let mut acc = [0.0; 4];
    let (a4, b4) = (a.chunks_exact(4), b.chunks_exact(4));
    let tail: f64 = a4
        .remainder()
        .iter()
        .zip(b4.remainder())
        .map(|(x, y)| x * y)
        .sum();
    for (x, y) in a4.zip(b4) {
        for k in 0..4 {
            acc[k] += x[k] * y[k];
        }
    }
    acc.iter().sum::<f64>() + tail
}

fn mean(v: &VecDeque<f64>) -> Option<f64> {
    (!v.is_empty()).then(|| v.iter().sum::<f64>() / v.len() as f64)
}

impl Detector {
    /// A detector for `fs` Hz.
    ///
    /// # Errors
    /// [`DetectorError::SampleRate`] outside 125–2000 Hz.
    pub fn new(fs: f64) -> Result<Self, DetectorError> {
        Self::with_tuning(fs, Tuning::default())
    }

    /// A detector for `fs` Hz with the free choices of `tuning`.
    ///
    /// # Errors
    /// [`DetectorError::SampleRate`] outside 125–2000 Hz.
    pub fn with_tuning(fs: f64, tuning: Tuning) -> Result<Self, DetectorError> {
        if !(125.0..=2000.0).contains(&fs) {
            return Err(DetectorError::SampleRate(fs));
        }
        let band = band_chain(fs);
        let sections = band.design(fs).map_err(|_| DetectorError::SampleRate(fs))?;
        let bandpass = Chain::new(band, fs, 1).map_err(|_| DetectorError::SampleRate(fs))?;
        let delay_bp = (crate::dsp::response::group_delay(&sections, 10.0, fs) * fs)
            .round()
            .max(0.0) as u64;
        let secs = |s: f64| (s * fs).round() as u64;
        let history = (1.5 * fs) as usize;
        Ok(Self {
            fs,
            tuning,
            bandpass,
            n: 0,
            bp_hist: [0.0; 4],
            mwi_len: secs(0.150).max(1) as usize,
            mwi_sum: 0.0,
            sq_ring: Ring::new(secs(0.150).max(1) as usize),
            loc_ring: Ring::new(history),
            maxq: VecDeque::new(),
            half_window: secs(0.25),
            look_back: secs(0.180),
            delay_bp,
            refractory: secs(0.200),
            t_wave_window: secs(0.360),
            learn_until: secs(2.0),
            learn_max: 0.0,
            learn_sum: 0.0,
            learn_count: 0,
            pending: Vec::new(),
            initialised: false,
            spki: 0.0,
            npki: 0.0,
            last_qrs: None,
            qrs_slope: 0.0,
            rr_recent: VecDeque::with_capacity(8),
            rr_regular: VecDeque::with_capacity(8),
            irregular_run: 0,
            since_qrs: Vec::new(),
            polarity: 0.0,
            last_decay: 0,
            events: VecDeque::new(),
            prev_mwi: [0.0; 2],
            bp_ring: Ring::new(history),
            usual: LearnedQrs::new(2 * secs(TPL_HALF_S) as usize + 1),
            other: LearnedQrs::new(2 * secs(TPL_HALF_S) as usize + 1),
            tpl_half: secs(TPL_HALF_S),
            last_r: None,
        })
    }

    /// Sample rate, Hz.
    pub fn fs_hz(&self) -> f64 {
        self.fs
    }

    /// Samples consumed so far.
    pub fn samples(&self) -> u64 {
        self.n
    }

    /// The current thresholds (THR1, THR2), once initialised.
    pub fn thresholds(&self) -> Option<(f64, f64)> {
        self.initialised.then(|| {
            let t1 = self.npki + 0.25 * (self.spki - self.npki);
            (t1, 0.5 * t1)
        })
    }

    /// Signal level over noise level of the integrated signal (SPKI / NPKI), once initialised.
    pub fn snr(&self) -> Option<f64> {
        (self.initialised && self.npki > 0.0).then(|| self.spki / self.npki)
    }

    /// QRS-like events over the last 5 s: peaks of the integrated signal above half the signal
    /// level, at least 200 ms apart. More of them than beats is noise between the beats; more than about 21
    /// (250 per minute) is faster than any heart: an artefact.
    pub fn recent_events(&self) -> usize {
        let span = (EVENTS_S * self.fs) as u64;
        self.events.iter().filter(|&&e| e + span >= self.n).count()
    }

    /// RR average over the recent regular beats, s (RR AVERAGE2 of the paper).
    pub fn rr_average_s(&self) -> Option<f64> {
        mean(&self.rr_regular).map(|rr| rr / self.fs)
    }

    /// Processes a block; decided beats are appended to `out` in time order.
    pub fn process(&mut self, x: &[f64], out: &mut Vec<Beat>) {
        // Live blocks are small; long offline records go through in slices to keep the
        // band-passed copy in cache.
        if self.n == 0
            && let Some(&x0) = x.first()
        {
            self.bandpass.settle(0, x0);
        }
        let mut bp = Vec::with_capacity(x.len().min(4096));
        for chunk in x.chunks(4096) {
            bp.clear();
            bp.extend_from_slice(chunk);
            self.bandpass.process_channel(0, &mut bp);
            for (&b, &raw) in bp.iter().zip(chunk) {
                self.step(b, raw, out);
            }
        }
    }

    fn step(&mut self, bp: f64, loc: f64, out: &mut Vec<Beat>) {
        let i = self.n;
        self.n += 1;
        // Five-point derivative (Pan & Tompkins), scaled to per-second units.
        let [b1, b2, b3, b4] = self.bp_hist;
        let d = (2.0 * bp + b1 - b3 - 2.0 * b4) * self.fs / 8.0;
        self.bp_hist = [bp, b1, b2, b3];
        let sq = d * d;
        let old = if i >= self.mwi_len as u64 {
            self.sq_ring.get(i - self.mwi_len as u64).unwrap_or(0.0)
        } else {
            0.0
        };
        self.sq_ring.push(sq);
        self.mwi_sum += sq - old;
        let mwi = (self.mwi_sum / self.mwi_len as f64).max(0.0);
        self.loc_ring.push(loc);
        self.bp_ring.push(bp);

        if i < self.learn_until {
            self.learn_max = self.learn_max.max(mwi);
            self.learn_sum += mwi;
            self.learn_count += 1;
        } else if !self.initialised {
            self.spki = self.learn_max / 3.0;
            self.npki = 0.5 * self.learn_sum / self.learn_count.max(1) as f64;
            self.initialised = true;
            for c in std::mem::take(&mut self.pending) {
                self.classify(c, out);
            }
        }

        // Sliding maximum over [i − 2W, i]; the centre i − W is a candidate when it is the max.
        // (The values ride along with the indices: no ring look-ups per sample.)
        while self.maxq.back().is_some_and(|&(_, v)| v <= mwi) {
            self.maxq.pop_back();
        }
        self.maxq.push_back((i, mwi));
        // The window looks further back than ahead: only the look-ahead costs decision latency.
        let (back, w) = (self.look_back, self.half_window);
        while self.maxq.front().is_some_and(|&(j, _)| j + back + w < i) {
            self.maxq.pop_front();
        }
        if i >= w {
            let c = i - w;
            if let Some(&(front, peak)) = self.maxq.front()
                && front == c
                && peak > 0.0
            {
                let cand = Candidate {
                    index: c,
                    peak,
                    slope: self.max_slope(c),
                };
                if self.initialised {
                    self.classify(cand, out);
                } else {
                    self.pending.push(cand);
                }
            }
        }
        if self.initialised {
            self.search_back(i, out);
            // A local maximum of the integrated signal one sample ago.
            let [m1, m2] = self.prev_mwi;
            if m1 > m2 && m1 >= mwi && m1 > 0.5 * self.spki {
                let at = i - 1;
                let gap = self.refractory;
                if self.events.back().is_none_or(|&e| at >= e + gap) {
                    let span = (EVENTS_S * self.fs) as u64;
                    while self.events.front().is_some_and(|&e| e + span < at) {
                        self.events.pop_front();
                    }
                    self.events.push_back(at);
                }
            }
        }
        self.prev_mwi = [mwi, self.prev_mwi[0]];
    }

    /// Steepest slope in the integration window that ends at the candidate.
    fn max_slope(&self, c: u64) -> f64 {
        // The five-point derivative again, from the band-passed samples kept: the window is
        // read once, then differenced.
        let start = c.saturating_sub(self.mwi_len as u64).max(4);
        let mut w = [0.0f64; 5];
        let mut have = 0usize;
        let mut best = 0.0f64;
        for j in start - 4..=c {
            let Some(v) = self.bp_ring.get(j) else {
                have = 0;
                continue;
            };
            w = [v, w[0], w[1], w[2], w[3]];
            have += 1;
            if have >= 5 {
                best = best.max((2.0 * w[0] + w[1] - w[3] - 2.0 * w[4]).abs());
            }
        }
        best * self.fs / 8.0
    }

    fn thr1(&self) -> f64 {
        self.npki + self.tuning.threshold * (self.spki - self.npki)
    }

    fn classify(&mut self, c: Candidate, out: &mut Vec<Beat>) {
        if let Some((last, _)) = self.last_qrs {
            if c.index < last + self.refractory {
                return;
            }
            if c.peak > self.thr1()
                && c.index < last + self.t_wave_window
                && c.slope < self.tuning.t_slope * self.qrs_slope
            {
                // A T wave: a noise peak.
                self.npki = 0.125 * c.peak + 0.875 * self.npki;
                return;
            }
        }
        if c.peak > self.thr1() {
            self.spki = 0.125 * c.peak + 0.875 * self.spki;
            self.accept(c, false, out);
        } else {
            self.npki = 0.125 * c.peak + 0.875 * self.npki;
            if self.since_qrs.len() < 64 {
                self.since_qrs.push(c);
            }
        }
    }

    fn search_back(&mut self, now: u64, out: &mut Vec<Beat>) {
        if self.since_qrs.is_empty() {
            return;
        }
        // Before the first beat, wait from the end of the learning phase.
        let last = self.last_qrs.map_or(self.learn_until, |l| l.0);
        // Before two beats there is no RR average: assume 1 s (60 bpm).
        let avg = mean(&self.rr_regular).unwrap_or(self.fs);
        // Candidates are known W samples late: compare against the part already examined.
        let seen = now.saturating_sub(self.half_window);
        if seen as f64 <= last as f64 + self.tuning.search_back_rr * avg {
            return;
        }
        // Lock-out guard (not in the paper): after 2.5 RR averages (at least 2 s) with no beat
        // the signal level must have been over-estimated, e.g. after an artefact: halve it, once
        // per such stretch, so the thresholds come down to where the beats are.
        let quiet = seen.saturating_sub(last.max(self.last_decay)) as f64;
        if quiet > (2.5 * avg).max(2.0 * self.fs) {
            self.spki *= 0.5;
            self.last_decay = seen;
        }
        let thr2 = 0.5 * self.thr1();
        let min_index = last + self.t_wave_window;
        let best = self
            .since_qrs
            .iter()
            .filter(|c| c.index >= min_index && c.peak > thr2 && c.slope >= self.qrs_slope / 3.0)
            .copied()
            .max_by(|a, b| a.peak.total_cmp(&b.peak));
        let rest: Vec<Candidate> = match best {
            Some(c) => self
                .since_qrs
                .iter()
                .filter(|k| k.index > c.index)
                .copied()
                .collect(),
            None => Vec::new(),
        };
        // Nothing qualified: the stretch is searched; later candidates start a new list.
        self.since_qrs.clear();
        if let Some(c) = best {
            self.spki = 0.25 * c.peak + 0.75 * self.spki;
            self.accept(c, true, out);
            // Candidates after the recovered beat are judged against it.
            for k in rest {
                self.classify(k, out);
            }
        }
    }

    /// The band-passed input around R peak `r`, the template's length (`None` where the
    /// history does not reach).
    fn segment(&self, r: u64) -> Option<Vec<f64>> {
        let start = (r + self.delay_bp).checked_sub(self.tpl_half)?;
        (0..self.usual.v.len() as u64)
            .map(|k| self.bp_ring.get(start + k))
            .collect()
    }

    /// A better R peak for a beat first placed at `r`, if the template says so: the current
    /// place matches the usual QRS poorly (r < 0.7) and not the other recent shape either, and
    /// another place within ±300 ms (after the last beat's refractory period, and already seen)
    /// matches well (≥ 0.8) and clearly better (+0.25).
    fn template_relocate(&self, r: u64, here: f64, base: f64) -> Option<(u64, f64)> {
        if !self.tuning.relocate || !self.usual.ready() || here >= 0.7 {
            return None;
        }
        let reach = (TPL_SEARCH_S * self.fs) as u64;
        let lo = (r.saturating_sub(reach)).max(self.last_r.map_or(0, |l| l + self.refractory));
        let newest = self.n.saturating_sub(1 + self.delay_bp + self.tpl_half);
        let hi = (r + reach).min(newest);
        if hi <= lo {
            return None;
        }
        // The stretch searched, contiguous, and the template's own sums: the input's sums then
        // slide along it and only the cross product is summed anew at each place.
        let start = (lo + self.delay_bp).checked_sub(self.tpl_half)?;
        let y: Vec<f64> = (start..=hi + self.delay_bp + self.tpl_half)
            .map(|j| self.bp_ring.get(j))
            .collect::<Option<_>>()?;
        let t = self.usual.v.as_slice();
        let n = t.len();
        let nf = n as f64;
        let st: f64 = t.iter().sum();
        let vt = t.iter().map(|v| v * v).sum::<f64>() - st * st / nf;
        if vt <= 0.0 {
            return None;
        }
        // Running sums of the input over the template's length, one per offset.
        let mut sums = Vec::with_capacity(y.len() + 1 - n);
        let (mut sy, mut syy) = y[..n]
            .iter()
            .fold((0.0, 0.0), |(a, b), v| (a + v, b + v * v));
        sums.push((sy, syy));
        for k in n..y.len() {
            let (new, old) = (y[k], y[k - n]);
            sy += new - old;
            syy += new * new - old * old;
            sums.push((sy, syy));
        }
        // Correlation at offset `off` into the stretch, if the amplitude is QRS-like (shape
        // alone is not enough: a small wiggle can have the QRS's shape).
        let corr = |off: usize| -> Option<f64> {
            let (sy, syy) = sums[off];
            let vy = syy - sy * sy / nf;
            let amp = (vy.max(0.0) / vt).sqrt();
            if !(0.5..=2.0).contains(&amp) {
                return None;
            }
            Some((dot(t, &y[off..off + n]) - st * sy / nf) / (vt * vy).sqrt())
        };
        // Every other place first (5.6 ms at 360 Hz, well inside a 15 Hz cycle), then the
        // neighbours of the best.
        let span = (hi - lo) as usize;
        let (mut best_off, mut best_c) = (None, here);
        // A QRS that matches has, at the template's centre, a band-passed value of the
        // template's size: places far below it are not worth the correlation.
        let centre = t[n / 2].abs();
        for off in (0..=span).step_by(2) {
            if y[off + n / 2].abs() < 0.3 * centre {
                continue;
            }
            if let Some(c) = corr(off)
                && c > best_c
            {
                best_off = Some(off);
                best_c = c;
            }
        }
        let coarse = best_off?;
        for off in [coarse.wrapping_sub(1), coarse + 1] {
            if off <= span
                && let Some(c) = corr(off)
                && c > best_c
            {
                best_off = Some(off);
                best_c = c;
            }
        }
        let best = lo + best_off.unwrap_or(coarse) as u64;
        if best == r || best_c < 0.8 || best_c < here + 0.25 {
            return None;
        }
        // The template aligns the band-passed QRS; the R peak is the input's extreme of the
        // template's polarity within ±30 ms of that place.
        let sign = if self.polarity.abs() >= 0.5 {
            self.polarity.signum()
        } else {
            1.0
        };
        let near = (0.03 * self.fs) as u64;
        (best.saturating_sub(near)..=best + near)
            .filter_map(|j| self.loc_ring.get(j).map(|v| (j, v - base)))
            .max_by(|a, b| (sign * a.1).total_cmp(&(sign * b.1)))
    }

    /// Sorts a beat's segment into the usual or the other shape by its correlations with them.
    /// A beat like neither starts the other shape afresh once that has missed eight beats in a
    /// row (or is still forming); the shape that collects beats faster while the usual one is
    /// still forming becomes the usual one.
    fn learn_shape(&mut self, seg: &[f64], usual: f64, other: f64) {
        if self.usual.beats == 0 || usual >= 0.8 {
            self.usual.add(seg);
            self.other.misses += 1;
        } else if self.other.beats > 0 && other >= 0.8 {
            self.other.add(seg);
            self.other.misses = 0;
        } else {
            self.other.misses += 1;
            if !self.other.ready() || self.other.misses >= 8 {
                self.other = LearnedQrs::new(seg.len());
                self.other.add(seg);
            }
        }
        if !self.usual.ready() && self.other.beats > self.usual.beats {
            std::mem::swap(&mut self.usual, &mut self.other);
        }
    }

    fn accept(&mut self, c: Candidate, search_back: bool, out: &mut Vec<Beat>) {
        // The QRS lies in the integration window before the candidate, shifted by the
        // band-pass delay; widen by 50 ms either side for the R peak of the input.
        let margin = (0.05 * self.fs) as u64;
        let hi = c.index.saturating_sub(self.delay_bp) + margin;
        let lo = c
            .index
            .saturating_sub(self.mwi_len as u64 + self.delay_bp + margin);
        // The window is a quarter of a second and the QRS under half of it: the window's median
        // stands in for the isoelectric level (a mean would be pulled towards the R wave).
        let vals: Vec<(u64, f64)> = (lo..=hi)
            .filter_map(|j| self.loc_ring.get(j).map(|v| (j, v)))
            .collect();
        let mut sorted: Vec<f64> = vals.iter().map(|v| v.1).collect();
        let base = if sorted.is_empty() {
            0.0
        } else {
            let mid = sorted.len() / 2;
            *sorted.select_nth_unstable_by(mid, f64::total_cmp).1
        };
        // In noise the largest deflection of the whole window can be a spike far from the QRS:
        // look for R only within ±60 ms of the steepest slope of the band-passed QRS (taken
        // back to the input's time by the band-pass and derivative delays).
        let steep = c
            .index
            .saturating_sub(self.delay_bp + self.mwi_len as u64 / 2);
        let near = (0.06 * self.fs) as u64;
        let vals: Vec<(u64, f64)> = vals
            .into_iter()
            .filter(|(j, _)| j + near >= steep && *j <= steep + near)
            .collect();
        let (mut r, mut rv) = (c.index, 0.0f64);
        for &(j, v) in &vals {
            if (v - base).abs() > rv.abs() {
                r = j;
                rv = v - base;
            }
        }
        // Once the usual polarity of this lead is known, prefer the largest deflection of that
        // sign unless it is much smaller: noise can make an S wave momentarily deeper than R.
        if self.polarity.abs() >= 0.5 {
            let sign = self.polarity.signum();
            let best = vals
                .iter()
                .max_by(|a, b| (sign * (a.1 - base)).total_cmp(&(sign * (b.1 - base))));
            if let Some(&(j, v)) = best
                && sign * (v - base) >= 0.6 * rv.abs()
            {
                r = j;
                rv = v - base;
            }
        }
        // In noise the integrator's peak can sit on an artefact next to the QRS. When the R
        // found above looks like neither recent QRS shape and a place within 300 ms looks like
        // the usual one, much better, the R peak is put there.
        let seg = self.segment(r);
        let like = |t: &LearnedQrs| seg.as_ref().and_then(|s| t.corr(s)).unwrap_or(-1.0);
        let (usual, other) = (like(&self.usual), like(&self.other));
        let moved = if self.other.beats > 0 && other >= 0.8 {
            None
        } else {
            self.template_relocate(r, usual, base)
        };
        if let Some((j, v)) = moved {
            r = j;
            rv = v;
            if let Some(s) = self.segment(r) {
                self.usual.add(&s);
            }
        } else if let Some(s) = seg {
            self.learn_shape(&s, usual, other);
        }
        self.polarity = 0.6 * self.polarity + 0.4 * rv.signum();
        if let Some((last, _)) = self.last_qrs {
            let rr = c.index.saturating_sub(last) as f64;
            if self.rr_recent.len() == 8 {
                self.rr_recent.pop_front();
            }
            self.rr_recent.push_back(rr);
            let regular =
                mean(&self.rr_regular).is_none_or(|avg| rr > 0.92 * avg && rr < 1.16 * avg);
            if regular {
                if self.rr_regular.len() == 8 {
                    self.rr_regular.pop_front();
                }
                self.rr_regular.push_back(rr);
                self.irregular_run = 0;
            } else {
                self.irregular_run += 1;
                // Eight beats in a row away from the average: the rate has moved, follow it.
                if self.irregular_run >= 8 {
                    self.rr_regular = self.rr_recent.clone();
                    self.irregular_run = 0;
                }
            }
        }
        self.qrs_slope = if self.qrs_slope == 0.0 {
            c.slope
        } else {
            0.125 * c.slope + 0.875 * self.qrs_slope
        };
        // The refractory, T-wave and search-back windows run from the integrator peak.
        self.last_qrs = Some((c.index, rv));
        self.last_r = Some(r);
        self.since_qrs.clear();
        out.push(Beat {
            sample: r,
            r_value: rv,
            search_back,
            decided: self.n.saturating_sub(1),
        });
    }
}

/// Beat-by-beat comparison with reference annotations, as ANSI/AAMI EC57 scores it: a detection
/// matches a reference beat within ±`tolerance` samples, each at most once.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Score {
    /// Reference beats matched.
    pub tp: usize,
    /// Reference beats missed.
    pub fn_: usize,
    /// Detections with no reference beat.
    pub fp: usize,
}

impl Score {
    /// Sensitivity TP / (TP + FN).
    pub fn se(&self) -> f64 {
        self.tp as f64 / (self.tp + self.fn_).max(1) as f64
    }
    /// Positive predictivity TP / (TP + FP).
    pub fn ppv(&self) -> f64 {
        self.tp as f64 / (self.tp + self.fp).max(1) as f64
    }
    /// Sum of two scores (gross statistics over records).
    pub fn add(&self, o: &Score) -> Score {
        Score {
            tp: self.tp + o.tp,
            fn_: self.fn_ + o.fn_,
            fp: self.fp + o.fp,
        }
    }
}

/// Scores `detected` against `reference` (both sorted sample indices), counting only beats in
/// `[from, to)`.
pub fn score(reference: &[u64], detected: &[u64], tolerance: u64, from: u64, to: u64) -> Score {
    let r: Vec<u64> = reference
        .iter()
        .copied()
        .filter(|&s| s >= from && s < to)
        .collect();
    let d: Vec<u64> = detected
        .iter()
        .copied()
        .filter(|&s| s >= from && s < to)
        .collect();
    let mut used = vec![false; d.len()];
    let mut tp = 0;
    let mut j0 = 0;
    for &ref_s in &r {
        while j0 < d.len() && d[j0] + tolerance < ref_s {
            j0 += 1;
        }
        let mut best: Option<usize> = None;
        let mut j = j0;
        while j < d.len() && d[j] <= ref_s + tolerance {
            if !used[j] && best.is_none_or(|b| d[j].abs_diff(ref_s) < d[b].abs_diff(ref_s)) {
                best = Some(j);
            }
            j += 1;
        }
        if let Some(b) = best {
            used[b] = true;
            tp += 1;
        }
    }
    Score {
        tp,
        fn_: r.len() - tp,
        fp: d.len() - tp,
    }
}
