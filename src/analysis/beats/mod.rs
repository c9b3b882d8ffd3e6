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

mod learned;
mod ring;
mod score;
mod tuning;

use learned::LearnedQrs;
use ring::Ring;
pub use score::{Score, score};
pub use tuning::Tuning;

/// The span over which QRS-like events are counted, s.
pub const EVENTS_S: f64 = 5.0;

/// Half-width of the QRS template, s.
const TPL_HALF_S: f64 = 0.06;
/// How far from the first estimate the template may move the R peak, s.
const TPL_SEARCH_S: f64 = 0.3;
/// Beats averaged before the template is used.
const TPL_READY: usize = 8;

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

    fn accept(&mut self, c: Candidate, search_back: bool, out: &mut Vec<Beat>) {
        let (mut r, mut rv, base) = self.locate_r(&c);
        // In noise the integrator's peak can sit on an artefact next to the QRS. When the R
        // found looks like neither recent QRS shape and a place within 300 ms looks like
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
        self.follow_rr(c.index);
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

    /// The R peak of candidate `c` in the input: (sample, value above the local level, the
    /// local level).
    fn locate_r(&self, c: &Candidate) -> (u64, f64, f64) {
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
        (r, rv, base)
    }

    /// The RR interval ending at integrator peak `index` joins the recent and (when regular)
    /// the regular averages.
    fn follow_rr(&mut self, index: u64) {
        let Some((last, _)) = self.last_qrs else {
            return;
        };
        let rr = index.saturating_sub(last) as f64;
        if self.rr_recent.len() == 8 {
            self.rr_recent.pop_front();
        }
        self.rr_recent.push_back(rr);
        let regular = mean(&self.rr_regular).is_none_or(|avg| rr > 0.92 * avg && rr < 1.16 * avg);
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
}
