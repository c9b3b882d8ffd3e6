//! The measurements `leadline bench` runs, each with its figures and their human lines.

use super::*;

/// Figures of the functions the product runs: `leadline filter` (causal: `filter_settled`,
/// zero-phase: `zero_phase`), the DSP thread (`process_interleaved` on its blocks), the
/// detector's band-pass (`process_channel` in blocks of 64), and for comparison the same chain
/// sample by sample and a hand-written direct-form loop.
#[derive(Serialize)]
pub(super) struct DspFigures {
    samples: usize,
    sections: usize,
    fs_hz: f64,
    /// `leadline filter` causal, one pass over the whole signal.
    filter_samples_per_s: f64,
    /// `leadline filter --zero-phase`: forward and backward with edge padding (input samples/s).
    zero_phase_samples_per_s: f64,
    /// The DSP thread, 1 channel at 1 kHz in 10 ms blocks (10 frames: frame by frame).
    live_1ch_samples_per_s: f64,
    /// The DSP thread, 8 channels at 2 kHz in 10 ms blocks (20 frames × 8: the kernel).
    live_8ch_samples_per_s: f64,
    /// The DSP thread with the adaptive mains canceller (5 harmonics) in the chain: 8 channels
    /// at 4 kHz in 10 ms blocks (40 frames × 8), and how many times real time that is.
    cancel_8ch_4k_samples_per_s: f64,
    cancel_8ch_4k_times_real_time: f64,
    /// The detector's band-pass: one channel in blocks of 64.
    block64_samples_per_s: f64,
    /// The same chain sample by sample (the biquad crate's sections, no kernel).
    per_sample_samples_per_s: f64,
    direct_loop_samples_per_s: f64,
}

pub(super) fn dsp(samples: usize) -> Result<DspFigures> {
    let fs = 1000.0;
    let settings = bench_chain();
    let sections = settings.design(fs)?;
    let input = bench_signal(samples, fs);
    let filter = best_of(3, &input, |buf| {
        crate::dsp::chain::filter_settled(&sections, buf);
    });
    let zero_phase = best_of(3, &input, |buf| {
        black_box(crate::dsp::chain::zero_phase(&sections, buf).unwrap_or_default());
    });
    let live = |channels: usize, frames: usize| {
        let inter: Vec<f64> = input
            .iter()
            .take(samples / channels * channels)
            .copied()
            .collect();
        best_of(3, &inter, |buf| {
            let mut chain = Chain::new(settings, fs, channels)
                .unwrap_or_else(|_| unreachable!("designed above"));
            for b in buf.chunks_mut(frames * channels) {
                chain.process_interleaved(b);
            }
        })
    };
    let live1 = live(1, 10);
    let live8 = live(8, 20);
    // The canceller on the heaviest stream: 8 channels at 4 kHz, 10 ms blocks.
    let cancel = {
        let fs4 = 4000.0;
        let mut s = settings;
        s.cancel.enabled = true;
        let inter = bench_signal(samples / 8 * 8, fs4);
        best_of(3, &inter, |buf| {
            let mut chain =
                Chain::new(s, fs4, 8).unwrap_or_else(|_| unreachable!("designed above"));
            for b in buf.chunks_mut(40 * 8) {
                chain.process_interleaved(b);
            }
        })
    };
    let blocks = best_of(3, &input, |buf| {
        let mut chain =
            Chain::new(settings, fs, 1).unwrap_or_else(|_| unreachable!("designed above"));
        for b in buf.chunks_mut(64) {
            chain.process_channel(0, b);
        }
    });
    let per_sample = best_of(3, &input, |buf| {
        let mut chain =
            Chain::new(settings, fs, 1).unwrap_or_else(|_| unreachable!("designed above"));
        for b in buf.chunks_mut(1) {
            chain.process_channel(0, b);
        }
    });
    let direct = best_of(3, &input, |buf| direct_loop(&sections, buf));
    let n = samples as f64;
    Ok(DspFigures {
        samples,
        sections: sections.len(),
        fs_hz: fs,
        filter_samples_per_s: n / filter,
        zero_phase_samples_per_s: n / zero_phase,
        live_1ch_samples_per_s: n / live1,
        live_8ch_samples_per_s: (samples / 8 * 8) as f64 / live8,
        cancel_8ch_4k_samples_per_s: (samples / 8 * 8) as f64 / cancel,
        cancel_8ch_4k_times_real_time: (samples / 8 * 8) as f64 / cancel / 32_000.0,
        block64_samples_per_s: n / blocks,
        per_sample_samples_per_s: n / per_sample,
        direct_loop_samples_per_s: n / direct,
    })
}

#[derive(Serialize)]
pub(super) struct SpectrumFigures {
    samples: usize,
    segment: usize,
    update_ms: f64,
    mains_ms: f64,
}

pub(super) fn spectrum() -> Result<SpectrumFigures> {
    let fs = 1000.0;
    let x = bench_signal(10_000, fs);
    let mut welch = crate::dsp::spectrum::Welch::new(2048)?;
    let mut psd = crate::dsp::spectrum::Psd::default();
    // Warm the output vectors once: a live update reuses them.
    welch.compute_into(&x, fs, &mut psd)?;
    let runs = 200;
    let t = Instant::now();
    for _ in 0..runs {
        welch.compute_into(black_box(&x), fs, &mut psd)?;
        black_box(&psd);
    }
    let update_ms = t.elapsed().as_secs_f64() * 1e3 / runs as f64;
    let t = Instant::now();
    for _ in 0..20 {
        black_box(crate::analysis::mains::analyse(&x, fs, &psd)?);
    }
    let mains_ms = t.elapsed().as_secs_f64() * 1e3 / 20.0;
    Ok(SpectrumFigures {
        samples: x.len(),
        segment: 2048,
        update_ms,
        mains_ms,
    })
}

#[derive(Serialize)]
pub(super) struct BeatFigures {
    record: String,
    samples: usize,
    fs_hz: f64,
    beats: usize,
    /// The QRS detector alone over the whole record in one call.
    detect_ms: f64,
    /// The heart-rate readout as `leadline beats` and the monitor run it: detector, meter,
    /// quality, shape check and the once-a-second evaluation, in 10 ms blocks.
    readout_ms: f64,
    /// The annotated records scored with the product's tuning (in-sample: these records are
    /// the ones the tuning was chosen on).
    in_sample: Vec<RecordFigure>,
    in_sample_gross_se_pct: f64,
    in_sample_gross_ppv_pct: f64,
    /// Tuned on three records, scored on the other two, all ten splits.
    held_out: Option<crate::analysis::heldout::SplitReport>,
    /// The simulator-made development set, with the product's tuning.
    development: Vec<crate::analysis::devset::CaseScore>,
}

#[derive(Serialize)]
struct RecordFigure {
    name: String,
    se_pct: f64,
    ppv_pct: f64,
}

/// The annotated records in `dir`: every `NAME.hea` with a `NAME.beats.csv` of reference beats
/// (first column: sample index).
///
/// # Errors
/// A record or its annotations cannot be read.
pub fn annotated(dir: &std::path::Path) -> Result<Vec<crate::analysis::heldout::Annotated>> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .with_context(|| format!("cannot list {}", dir.display()))?
        .filter_map(|e| e.ok())
        .filter_map(|e| {
            let p = e.path();
            (p.extension().is_some_and(|x| x == "hea") && p.with_extension("beats.csv").exists())
                .then(|| p.file_stem()?.to_str().map(str::to_string))
                .flatten()
        })
        .collect();
    names.sort();
    let mut out = Vec::new();
    for name in names {
        let r = crate::store::wfdb::read(&dir.join(format!("{name}.hea")))?;
        let text = std::fs::read_to_string(dir.join(format!("{name}.beats.csv")))?;
        let reference = text
            .lines()
            .skip(1)
            .filter_map(|l| l.split(',').next()?.trim().parse::<u64>().ok())
            .collect();
        out.push(crate::analysis::heldout::Annotated {
            name,
            fs_hz: r.fs_hz,
            x: r.channels.into_iter().next().unwrap_or_default(),
            reference,
        });
    }
    Ok(out)
}

pub(super) fn beats(
    record: Option<&std::path::Path>,
    dir: &std::path::Path,
) -> Result<BeatFigures> {
    let (name, fs, x) = match record {
        Some(p) => {
            let r = crate::store::wfdb::read(p)?;
            (
                p.display().to_string(),
                r.fs_hz,
                r.channels.into_iter().next().unwrap_or_default(),
            )
        }
        None => {
            let s = crate::source::SynthSettings {
                fs_hz: 360.0,
                ..Default::default()
            };
            let mut synth = crate::source::Synth::new(s)?;
            let scale = synth.scale();
            let mut c = Vec::new();
            synth.fill(360 * 1800, &mut c);
            (
                "simulated 30 min".to_string(),
                360.0,
                c.iter().map(|&v| scale.counts_to_uv(v)).collect(),
            )
        }
    };
    let mut best = f64::INFINITY;
    let mut n = 0;
    for _ in 0..3 {
        let mut det = crate::analysis::beats::Detector::new(fs)?;
        let mut out = Vec::new();
        let t = Instant::now();
        det.process(black_box(&x), &mut out);
        best = best.min(t.elapsed().as_secs_f64());
        n = out.len();
    }
    let mut readout_best = f64::INFINITY;
    for _ in 0..3 {
        let mut r = crate::analysis::readout::Readout::new(fs)?;
        let (mut b, mut e) = (Vec::new(), Vec::new());
        let block = ((fs / 100.0).round() as usize).max(1);
        let t = Instant::now();
        for c in black_box(&x).chunks(block) {
            r.process(c, &[], &mut b, &mut e);
        }
        readout_best = readout_best.min(t.elapsed().as_secs_f64());
    }
    use crate::analysis::beats::{Score, Tuning};
    let records = if dir.is_dir() {
        annotated(dir)?
    } else {
        Vec::new()
    };
    let mut gross = Score::default();
    let in_sample = records
        .iter()
        .map(|r| {
            let s = crate::analysis::heldout::score_record(r, Tuning::default(), 0);
            gross = gross.add(&s);
            RecordFigure {
                name: r.name.clone(),
                se_pct: 100.0 * s.se(),
                ppv_pct: 100.0 * s.ppv(),
            }
        })
        .collect();
    let held_out = (records.len() >= 3)
        .then(|| crate::analysis::heldout::cross_check(&records, &Tuning::grid()));
    Ok(BeatFigures {
        record: name,
        samples: x.len(),
        fs_hz: fs,
        beats: n,
        detect_ms: best * 1e3,
        readout_ms: readout_best * 1e3,
        in_sample,
        in_sample_gross_se_pct: 100.0 * gross.se(),
        in_sample_gross_ppv_pct: 100.0 * gross.ppv(),
        held_out,
        development: crate::analysis::devset::score_all(Tuning::default()),
    })
}

#[derive(Serialize)]
pub(super) struct WireFigures {
    text_mb_per_s: f64,
    binary_mb_per_s: f64,
    text_bytes: usize,
    binary_bytes: usize,
}

pub(super) fn wire() -> Result<WireFigures> {
    let s = crate::source::SynthSettings {
        fs_hz: 1000.0,
        channels: 4,
        ..Default::default()
    };
    let mut synth = crate::source::Synth::new(s)?;
    let scale = synth.scale();
    let mut counts = Vec::new();
    synth.fill(250_000, &mut counts);
    let mut text = String::new();
    crate::wire::ascii::encode_frames(&counts, 4, &mut text);
    let mut bin = Vec::new();
    crate::cli::simulate::encode_binary(&counts, 4, 0, &scale, &mut bin);
    let rate = |bytes: &[u8], text: bool| {
        let mut best = f64::INFINITY;
        let mut frames = Vec::with_capacity(1 << 16);
        for _ in 0..3 {
            let t = Instant::now();
            let (mut a, mut b) = (
                crate::wire::ascii::Decoder::new(),
                crate::wire::binary::Decoder::new(),
            );
            // 4 KiB reads, as a serial thread gets them.
            for chunk in bytes.chunks(4096) {
                frames.clear();
                if text {
                    a.push(chunk, &mut frames)
                } else {
                    b.push(chunk, &mut frames)
                }
                black_box(&frames);
            }
            best = best.min(t.elapsed().as_secs_f64());
        }
        bytes.len() as f64 / best / 1e6
    };
    Ok(WireFigures {
        text_mb_per_s: rate(text.as_bytes(), true),
        binary_mb_per_s: rate(&bin, false),
        text_bytes: text.len(),
        binary_bytes: bin.len(),
    })
}

#[derive(Serialize)]
pub(super) struct NetFigures {
    /// Frames decoded and put in order per second (datagrams of 10 frames, 8 channels, one
    /// neighbour swapped in fifty, one datagram in a hundred lost).
    frames_per_s: f64,
    /// The heaviest stream: 8 channels × 4 kHz.
    heaviest_frames_per_s: f64,
    /// frames_per_s / heaviest_frames_per_s.
    times_heaviest: f64,
}

/// What the UDP source does per datagram: decode the whole frames, reorder, release.
pub(super) fn net() -> Result<NetFigures> {
    use crate::wire::binary;
    use crate::wire::reorder::Reorder;
    let channels = 8;
    let per = 10;
    let total = 400_000usize;
    let mut datagrams: Vec<Vec<u8>> = Vec::with_capacity(total / per);
    let mut rng = crate::rng::Rng::new(7);
    for k in 0..total / per {
        let mut d = Vec::new();
        for f in k * per..(k + 1) * per {
            let s: Vec<i32> = (0..channels)
                .map(|c| ((f * 3 + c * 11) % 4096) as i32)
                .collect();
            binary::encode(f as u16, &s, binary::FORMAT_I16, &mut d);
        }
        datagrams.push(d);
    }
    // Network faults: drop 1 %, swap 2 % with their neighbour.
    let mut faulty = Vec::with_capacity(datagrams.len());
    let mut i = 0;
    while i < datagrams.len() {
        let r = rng.uniform();
        if r < 0.01 {
            i += 1;
            continue;
        }
        if r < 0.03 && i + 1 < datagrams.len() {
            faulty.push(datagrams[i + 1].clone());
            faulty.push(datagrams[i].clone());
            i += 2;
            continue;
        }
        faulty.push(datagrams[i].clone());
        i += 1;
    }
    let mut best = f64::INFINITY;
    let mut delivered = 0u64;
    for _ in 0..3 {
        let mut reorder = Reorder::new(crate::source::net::REORDER_WINDOW);
        let mut stats = crate::wire::WireStats::default();
        let (mut frames, mut ordered) = (Vec::with_capacity(per), Vec::with_capacity(4 * per));
        let t = Instant::now();
        let now = Instant::now();
        for d in &faulty {
            frames.clear();
            binary::decode_datagram(black_box(d), &mut frames, &mut stats);
            for f in frames.drain(..) {
                reorder.push(f, now, &mut ordered);
            }
            reorder.release(now, &mut ordered);
            black_box(&ordered);
            ordered.clear();
        }
        best = best.min(t.elapsed().as_secs_f64());
        delivered = reorder.stats().delivered;
    }
    let frames_per_s = delivered as f64 / best;
    // 4000 frames of 8 channels a second.
    let heaviest = 4000.0;
    Ok(NetFigures {
        frames_per_s,
        heaviest_frames_per_s: heaviest,
        times_heaviest: frames_per_s / heaviest,
    })
}

#[derive(Serialize)]
pub(super) struct MeasureFigures {
    samples_per_channel: usize,
    /// The transfer-function estimate (H1, coherence, corners) as `measure response` runs it.
    response_ms: f64,
    /// Noise figures of one channel as `measure noise` runs them.
    noise_ms: f64,
}

pub(super) fn measure() -> Result<MeasureFigures> {
    let fs = 1000.0;
    let n = 60_000;
    let mut rng = crate::rng::Rng::new(3);
    let x: Vec<f64> = (0..n).map(|_| 100.0 * rng.normal()).collect();
    let mut chain = crate::dsp::Chain::new(crate::dsp::ChainSettings::default(), fs, 1)
        .map_err(|e| anyhow::anyhow!("{e}"))?;
    let mut y = x.clone();
    chain.process_channel(0, &mut y);
    let time = |f: &mut dyn FnMut()| {
        let mut best = f64::INFINITY;
        for _ in 0..5 {
            let t = Instant::now();
            f();
            best = best.min(t.elapsed().as_secs_f64());
        }
        best * 1e3
    };
    let seg = crate::dsp::spectrum::segment_for(fs, 8.0);
    let response_ms = time(&mut || {
        let _ = black_box(crate::measure::transfer::estimate(
            black_box(&x),
            &y,
            fs,
            seg,
        ));
    });
    let noise_ms = time(&mut || {
        let _ = black_box(crate::measure::noise::measure(
            black_box(&x),
            fs,
            (0.05, 150.0),
            30.0,
        ));
    });
    Ok(MeasureFigures {
        samples_per_channel: n,
        response_ms,
        noise_ms,
    })
}

#[derive(Debug, Serialize)]
pub(super) struct SoundFigures {
    stream_s: f64,
    render_ms: f64,
    core_pct: f64,
    /// The live EMG analysis over the whole stream, views included, ms.
    emg_live_ms: f64,
}

pub(super) fn sound() -> Result<SoundFigures> {
    let fs = 1000.0;
    let seconds = 60.0;
    let s = crate::source::SynthSettings {
        fs_hz: fs,
        muscle: Some(crate::sim::muscle::MuscleSettings::default()),
        ..Default::default()
    };
    let mut synth = crate::source::Synth::new(s)?;
    let scale = synth.scale();
    let mut c = Vec::new();
    synth.fill((seconds * fs) as usize, &mut c);
    let x: Vec<f64> = c.iter().map(|&v| scale.counts_to_uv(v)).collect();
    let settings = crate::sound::SoundSettings {
        tone: true,
        signal: true,
        ..Default::default()
    };
    let mut best = f64::INFINITY;
    let mut audio = Vec::new();
    for _ in 0..3 {
        let mut r = crate::sound::Renderer::new(fs, 48_000.0, settings);
        let t0 = Instant::now();
        for (k, block) in x.chunks(10).enumerate() {
            // A beat every 0.8 s, as at 75 bpm.
            if k % 80 == 0 {
                r.beat((k * 10) as u64, false);
            }
            audio.clear();
            r.push(block, &mut audio);
        }
        best = best.min(t0.elapsed().as_secs_f64() * 1e3);
    }
    // The live EMG view as the DSP thread runs it: each 10-sample block fed in, a view made
    // every 250 ms of stream.
    let mut emg_best = f64::INFINITY;
    for _ in 0..3 {
        let mut live = crate::process::emg::LiveEmg::new(fs, Default::default());
        let t0 = Instant::now();
        for (k, block) in x.chunks(10).enumerate() {
            live.push(block.iter().copied());
            if k % 25 == 0 {
                std::hint::black_box(live.view());
            }
        }
        emg_best = emg_best.min(t0.elapsed().as_secs_f64() * 1e3);
    }
    Ok(SoundFigures {
        stream_s: seconds,
        render_ms: best,
        core_pct: 100.0 * best / (seconds * 1e3),
        emg_live_ms: emg_best,
    })
}

impl DspFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "chain of {} sections at {} Hz over {} samples (M samples/s):",
            self.sections, self.fs_hz, self.samples
        );
        let rows = [
            (
                "leadline filter, causal (filter_settled)",
                self.filter_samples_per_s,
            ),
            (
                "leadline filter --zero-phase (zero_phase)",
                self.zero_phase_samples_per_s,
            ),
            (
                "DSP thread, 1 ch, 10-frame blocks",
                self.live_1ch_samples_per_s,
            ),
            (
                "DSP thread, 8 ch, 20-frame blocks",
                self.live_8ch_samples_per_s,
            ),
            (
                "DSP thread + mains canceller, 8 ch at 4 kHz",
                self.cancel_8ch_4k_samples_per_s,
            ),
            (
                "detector band-pass, blocks of 64",
                self.block64_samples_per_s,
            ),
            ("sample by sample, no kernel", self.per_sample_samples_per_s),
            (
                "hand-written direct-form loop",
                self.direct_loop_samples_per_s,
            ),
        ];
        for (what, v) in rows {
            println!("  {what:<44} {:8.1}", v / 1e6);
        }
        println!(
            "  the canceller's chain runs {:.0}× faster than 8 channels at 4 kHz arrive",
            self.cancel_8ch_4k_times_real_time
        );
    }
}

impl BeatFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "{}: {} samples at {} Hz, {} beats in {:.1} ms (detector alone); the whole readout in 10 ms blocks: {:.1} ms",
            self.record, self.samples, self.fs_hz, self.beats, self.detect_ms, self.readout_ms
        );
        for r in &self.in_sample {
            println!(
                "in-sample  {:>6}: Se {:6.2} %  +P {:6.2} %",
                r.name, r.se_pct, r.ppv_pct
            );
        }
        if !self.in_sample.is_empty() {
            println!(
                "in-sample  gross : Se {:6.2} %  +P {:6.2} %",
                self.in_sample_gross_se_pct, self.in_sample_gross_ppv_pct
            );
        }
        if let Some(h) = &self.held_out {
            for r in &h.records {
                println!(
                    "held out   {:>6}: Se {:6.2} %  +P {:6.2} %  (tuned on 3 others, 4 splits)",
                    r.name, r.se_pct, r.ppv_pct
                );
            }
            println!(
                "held out   gross : Se {:6.2} %  +P {:6.2} %  over {} splits",
                h.gross_se_pct,
                h.gross_ppv_pct,
                h.splits.len()
            );
            for (t, w) in h.wins.iter().filter(|w| w.1 > 0) {
                println!(
                    "  chosen {w} times: threshold {}, search back after {} RR, relocation {}",
                    t.threshold,
                    t.search_back_rr,
                    if t.relocate { "on" } else { "off" }
                );
            }
        }
        for c in &self.development {
            println!(
                "development {:<18}: {:4} beats  Se {:6.2} %  +P {:6.2} %",
                c.case, c.beats, c.se_pct, c.ppv_pct
            );
        }
    }
}

impl WireFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "text lines:    {:8.1} MB/s over {} bytes",
            self.text_mb_per_s, self.text_bytes
        );
        println!(
            "binary frames: {:8.1} MB/s over {} bytes",
            self.binary_mb_per_s, self.binary_bytes
        );
    }
}

impl MeasureFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "60 s × 2 channels at 1 kHz: response {:.1} ms, noise {:.1} ms",
            self.response_ms, self.noise_ms
        );
    }
}

impl NetFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "UDP datagrams decoded and reordered: {:.0} frames/s of 8 channels = {:.0} × the heaviest stream (8 × 4 kHz)",
            self.frames_per_s, self.times_heaviest
        );
    }
}

impl SoundFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "sound for 60 s of a 1 kHz stream (tone on every beat and the signal, 48 kHz): {:.1} ms = {:.3} % of a core",
            self.render_ms, self.core_pct
        );
        println!(
            "live EMG view of the same stream (10-sample blocks, a view every 250 ms): {:.1} ms = {:.3} % of a core",
            self.emg_live_ms,
            100.0 * self.emg_live_ms / (self.stream_s * 1e3)
        );
    }
}

impl SpectrumFigures {
    /// The human lines.
    pub(super) fn print(&self) {
        println!(
            "Welch PSD of {} samples, segment {}: {:.3} ms an update",
            self.samples, self.segment, self.update_ms
        );
        println!("mains measurement on it: {:.3} ms", self.mains_ms);
    }
}
