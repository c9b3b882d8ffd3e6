//! The built-in signal source: a synthetic ECG at the electrodes, the interference a bench really
//! sees, and a modelled front end and ADC, so the stream looks like what a microcontroller sends.
//!
//! Signal at the electrodes (each level its own setting, RMS µV unless noted):
//! ECG (McSharry model, [`super::ecg_model`]) · mains at 50/60 Hz with harmonics 2–5 · respiration-like
//! wander (0.15–0.5 Hz) · slow electrode drift (random, below 0.05 Hz) · broadband muscle-like noise
//! (white, high-passed at 20 Hz) · electrode offset (DC, mV). Swapped leads invert the differential
//! signal; a lead off lets the input float, pick up a large mains voltage and drive the amplifier to
//! its rails.
//!
//! Front end: in-amp (gain, output swing clips) → optional AC coupling (first-order high-pass) →
//! second stage → ADC (bits, reference, mid-scale bias, clipping at 0 and 2^bits − 1).

use std::f64::consts::{SQRT_2, TAU};

use serde::{Deserialize, Serialize};

use super::dipole::Dipole;
use super::ecg_model::EcgModel;
use crate::rng::Rng;
use crate::scale::InputScale;
use crate::sim::muscle::{Muscle, MuscleSettings};
use crate::sim::rhythm::{Rhythm, ScheduledHeart};

/// How much stronger mains coupling is with a mains charger on the laptop that reads the board
/// (its switch-mode supply floats the laptop's ground a few tens of volts off earth through its
/// Y capacitor). An invented demo figure, chosen so the effect is plain on the spectrum.
pub const CHARGER_MAINS_FACTOR: f64 = 8.0;
/// Extra weight the charger puts on the odd harmonics (switch-mode rectifier currents).
const CHARGER_ODD_HARMONIC_FACTOR: f64 = 2.0;
/// Mains level picked up by a floating (lead-off) input, V RMS.
const LEAD_OFF_MAINS_V: f64 = 0.5;
/// DC level a floating input drifts to through the bias network, V.
const LEAD_OFF_DC_V: f64 = 0.05;
/// Corner of the muscle-noise high-pass, Hz (surface EMG has little power below ~20 Hz).
const MUSCLE_HP_HZ: f64 = 20.0;
/// Corner of the electrode-drift random process, Hz.
const DRIFT_CORNER_HZ: f64 = 0.02;
/// Relative lead factors of channels 1–8 (as if the electrodes sat at different angles).
const LEAD_FACTORS: [f64; 8] = [1.0, 0.72, -0.45, 0.58, 0.9, 0.33, -0.7, 0.81];

/// Why the simulator cannot run with these settings.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SynthError {
    /// The sample rate is outside what the model and a USB link are meant for.
    #[error("sample rate {0} Hz is outside 125–4000 Hz")]
    SampleRate(f64),
    /// 1 to 8 channels.
    #[error("{0} channels requested; the simulator makes 1–8")]
    Channels(usize),
    /// The many-lead heart fixes the channels and needs the sinus model.
    #[error("{0}")]
    Leads(String),
    /// Heart rate outside the simulated range.
    #[error("heart rate {0} bpm is outside 20–300 bpm")]
    HeartRate(f64),
    /// Mains frequency outside 40–70 Hz.
    #[error("mains frequency {0} Hz is outside 40–70 Hz")]
    Mains(f64),
    /// A level (µV, mV) that is negative or not a number.
    #[error("{name} = {value} must be a finite, non-negative number")]
    Level { name: &'static str, value: f64 },
    /// The front end or ADC is impossible.
    #[error("front end: {0}")]
    Scale(#[from] crate::scale::ScaleError),
}

/// The simulator's modelled board: its analog front end and converter (the user's scaling of
/// a real board is `scale::FrontEnd`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Board {
    /// Instrumentation-amplifier gain, V/V.
    pub inamp_gain: f64,
    /// In-amp output swing either side of its reference, V: beyond this it saturates.
    pub inamp_swing_v: f64,
    /// AC-coupling corner between the stages, Hz; 0 means DC-coupled.
    pub coupling_hz: f64,
    /// Second-stage gain, V/V.
    pub post_gain: f64,
    /// ADC resolution, bits.
    pub adc_bits: u32,
    /// ADC reference, V (the input range is 0…vref, biased at mid-scale).
    pub adc_vref_v: f64,
}

impl Default for Board {
    /// The invented demo board "LL-2 bench front end": in-amp ×10 on ±1.4 V swing, 0.05 Hz coupling,
    /// ×50 second stage, 12-bit ADC on 3.3 V.
    fn default() -> Self {
        Self {
            inamp_gain: 10.0,
            inamp_swing_v: 1.4,
            coupling_hz: 0.05,
            post_gain: 50.0,
            adc_bits: 12,
            adc_vref_v: 3.3,
        }
    }
}

impl Board {
    /// The counts → input-referred µV scale of this front end.
    ///
    /// # Errors
    /// [`crate::scale::ScaleError`] for an impossible converter or gain.
    pub fn scale(&self) -> Result<InputScale, crate::scale::ScaleError> {
        InputScale::new(
            self.adc_bits,
            self.adc_vref_v,
            self.inamp_gain * self.post_gain,
        )
    }
}

/// Everything the simulator can be told. Levels are RMS at the electrodes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct SynthSettings {
    /// Sample rate, Hz (125–4000).
    pub fs_hz: f64,
    /// Channels (1–8).
    pub channels: usize,
    /// Seed: the same settings and seed give the same stream.
    pub seed: u64,
    /// Mean heart rate, bpm.
    pub hr_bpm: f64,
    /// Heart-rate variability, standard deviation in bpm (ECGSYN's hrstd).
    pub hrv_bpm: f64,
    /// LF/HF power ratio of the RR spectrum.
    pub lf_hf: f64,
    /// R-wave amplitude on channel 1, mV.
    pub r_mv: f64,
    /// Mains frequency, Hz (50 or 60 nominal; any value 40–70 for drift tests).
    pub mains_hz: f64,
    /// Mains fundamental, RMS µV.
    pub mains_uv: f64,
    /// Harmonics 2–5 relative to the fundamental's amplitude.
    pub harmonics: [f64; 4],
    /// The laptop reading the board is on its mains charger: stronger coupling.
    pub charger: bool,
    /// Respiration rate for the baseline wander, Hz (0.15–0.5).
    pub resp_hz: f64,
    /// Respiration-like wander, RMS µV.
    pub wander_uv: f64,
    /// Slow electrode drift, RMS µV.
    pub drift_uv: f64,
    /// Broadband muscle-like noise, RMS µV.
    pub noise_uv: f64,
    /// Electrode half-cell offset difference, mV (DC).
    pub offset_mv: f64,
    /// Electrodes swapped: the differential signal is inverted.
    pub inverted: bool,
    /// An electrode is off: the input floats and the amplifier rails.
    pub lead_off: bool,
    /// The modelled front end and ADC.
    pub front_end: Board,
    /// The heart's rhythm: the sinus model, or one of the standards' irregular-rhythm cases.
    pub rhythm: Rhythm,
    /// A contracting muscle under the electrodes (surface EMG), with the heart's signal
    /// reduced to its set share; `None` for an ECG.
    pub muscle: Option<MuscleSettings>,
    /// A board of many leads: the heart as a dipole projected on each channel's lead
    /// (`sim::dipole`); the channels are then the set's inputs. `None`: one lead scaled per channel.
    pub heart_leads: Option<crate::leads::LeadSet>,
    /// The frontal QRS axis of the many-lead heart, degrees.
    pub axis_deg: f64,
}

impl Default for SynthSettings {
    fn default() -> Self {
        Self {
            fs_hz: 500.0,
            channels: 1,
            seed: 1,
            hr_bpm: 72.0,
            hrv_bpm: 1.0,
            lf_hf: 0.5,
            r_mv: 1.2,
            mains_hz: 50.0,
            mains_uv: 30.0,
            harmonics: [0.2, 0.35, 0.08, 0.12],
            charger: false,
            resp_hz: 0.25,
            wander_uv: 60.0,
            drift_uv: 40.0,
            noise_uv: 8.0,
            offset_mv: 25.0,
            inverted: false,
            lead_off: false,
            front_end: Board::default(),
            rhythm: Rhythm::Sinus,
            muscle: None,
            heart_leads: None,
            axis_deg: 60.0,
        }
    }
}

/// The heart of the simulator: the ECGSYN model, or beats on a schedule.
#[derive(Debug, Clone)]
enum Heart {
    Model(EcgModel),
    Scheduled(ScheduledHeart),
}

impl Heart {
    fn new(s: &SynthSettings, rng: &mut Rng) -> Self {
        match s.rhythm {
            Rhythm::Sinus => Heart::Model(EcgModel::new(
                s.fs_hz, s.hr_bpm, s.hrv_bpm, s.lf_hf, s.r_mv, rng,
            )),
            r => Heart::Scheduled(ScheduledHeart::new(s.fs_hz, r.pattern(s.r_mv))),
        }
    }

    fn next_sample(&mut self) -> (f64, bool) {
        match self {
            Heart::Model(m) => m.next_sample(),
            Heart::Scheduled(h) => h.next_sample(),
        }
    }
}

impl SynthSettings {
    /// The many-lead heart: as many channels as its set has inputs, the sinus model, an axis
    /// within ±180°.
    fn check_leads(&self) -> Result<(), SynthError> {
        let Some(set) = self.heart_leads else {
            return Ok(());
        };
        let needs = set.inputs().len();
        if self.channels != needs {
            return Err(SynthError::Leads(format!(
                "the {} heart makes {needs} channels, not {}",
                set.name(),
                self.channels
            )));
        }
        if self.rhythm != Rhythm::Sinus || self.muscle.is_some() {
            return Err(SynthError::Leads(
                "the many-lead heart runs on the sinus model, without a muscle".into(),
            ));
        }
        if !(self.axis_deg.is_finite() && (-180.0..=180.0).contains(&self.axis_deg)) {
            return Err(SynthError::Leads(format!(
                "axis {} degrees is outside −180…180",
                self.axis_deg
            )));
        }
        Ok(())
    }

    /// Checks every setting.
    ///
    /// # Errors
    /// [`SynthError`] naming the first setting out of range.
    pub fn validate(&self) -> Result<InputScale, SynthError> {
        if !(125.0..=4000.0).contains(&self.fs_hz) {
            return Err(SynthError::SampleRate(self.fs_hz));
        }
        self.check_leads()?;
        if self.heart_leads.is_none() && !(1..=8).contains(&self.channels) {
            return Err(SynthError::Channels(self.channels));
        }
        if !(20.0..=300.0).contains(&self.hr_bpm) {
            return Err(SynthError::HeartRate(self.hr_bpm));
        }
        if !(40.0..=70.0).contains(&self.mains_hz) {
            return Err(SynthError::Mains(self.mains_hz));
        }
        let levels = [
            ("hrv_bpm", self.hrv_bpm),
            ("lf_hf", self.lf_hf),
            ("r_mv", self.r_mv),
            ("mains_uv", self.mains_uv),
            ("wander_uv", self.wander_uv),
            ("drift_uv", self.drift_uv),
            ("noise_uv", self.noise_uv),
            ("resp_hz", self.resp_hz),
            ("harmonic 2", self.harmonics[0]),
            ("harmonic 3", self.harmonics[1]),
            ("harmonic 4", self.harmonics[2]),
            ("harmonic 5", self.harmonics[3]),
        ];
        for (name, value) in levels {
            if !(value.is_finite() && value >= 0.0) {
                return Err(SynthError::Level { name, value });
            }
        }
        if let Some((name, value)) = self.muscle.as_ref().and_then(MuscleSettings::invalid) {
            return Err(SynthError::Level { name, value });
        }
        if !self.offset_mv.is_finite() {
            return Err(SynthError::Level {
                name: "offset_mv",
                value: self.offset_mv,
            });
        }
        Ok(self.front_end.scale()?)
    }

    /// Mains fundamental actually coupled, RMS µV (the charger multiplies it).
    pub fn effective_mains_uv(&self) -> f64 {
        if self.charger {
            self.mains_uv * CHARGER_MAINS_FACTOR
        } else {
            self.mains_uv
        }
    }
}

/// Per-channel analog state.
#[derive(Debug, Clone)]
struct ChannelState {
    lead: f64,
    offset_v: f64,
    noise_rng: Rng,
    drift_rng: Rng,
    drift_v: f64,
    noise_prev_in: f64,
    noise_prev_out: f64,
    /// AC-coupling high-pass state (previous input and output, V).
    couple_prev_in: f64,
    couple_prev_out: f64,
    muscle: Option<Muscle>,
}

/// The running simulator. Produces interleaved ADC counts, frame by frame.
#[derive(Debug, Clone)]
pub struct Synth {
    settings: SynthSettings,
    scale: InputScale,
    ecg: Heart,
    channels: Vec<ChannelState>,
    mains_phase: f64,
    harmonic_phase: [f64; 4],
    resp_phase: f64,
    sample_index: u64,
    clipped: u64,
    lead_off_rng: Rng,
    r_events: std::collections::VecDeque<u64>,
    /// The many-lead heart's dipole, and the channels' heart signals of the current frame (V).
    dipole: Option<Dipole>,
    heart_v: Vec<f64>,
}

/// R events kept for [`Synth::r_events`] (about an hour at 72 bpm).
const R_EVENTS_KEPT: usize = 4096;

impl Synth {
    /// A simulator for these settings.
    ///
    /// # Errors
    /// [`SynthError`] for settings out of range.
    pub fn new(settings: SynthSettings) -> Result<Self, SynthError> {
        let scale = settings.validate()?;
        let mut rng = Rng::new(settings.seed);
        let ecg = Heart::new(&settings, &mut rng.fork(1));
        let mut phase_rng = rng.fork(2);
        let harmonic_phase = [0; 4].map(|_| TAU * phase_rng.uniform());
        let mut channels = Vec::with_capacity(settings.channels);
        for k in 0..settings.channels {
            let lead = LEAD_FACTORS.get(k).copied().unwrap_or(1.0);
            let mut drift_rng = rng.fork(100 + k as u64);
            // Start the drift in its stationary distribution so there is no start-up ramp.
            let drift_v = settings.drift_uv * 1e-6 * drift_rng.normal();
            let offset_v = settings.offset_mv * 1e-3 * (1.0 + 0.15 * k as f64);
            let mut ch = ChannelState {
                lead,
                offset_v,
                noise_rng: rng.fork(200 + k as u64),
                drift_rng,
                drift_v,
                noise_prev_in: 0.0,
                noise_prev_out: 0.0,
                couple_prev_in: 0.0,
                couple_prev_out: 0.0,
                muscle: settings
                    .muscle
                    .map(|m| Muscle::new(settings.fs_hz, m, rng.fork(300 + k as u64))),
            };
            // The coupling capacitor has charged to the offset (of either polarity) long ago.
            let polarity = if settings.inverted { -1.0 } else { 1.0 };
            ch.couple_prev_in = (settings.front_end.inamp_gain * polarity * offset_v).clamp(
                -settings.front_end.inamp_swing_v,
                settings.front_end.inamp_swing_v,
            );
            channels.push(ch);
        }
        Ok(Self {
            scale,
            ecg,
            channels,
            mains_phase: 0.0,
            harmonic_phase,
            resp_phase: 0.0,
            sample_index: 0,
            clipped: 0,
            lead_off_rng: rng.fork(3),
            r_events: std::collections::VecDeque::new(),
            dipole: settings
                .heart_leads
                .map(|_| Dipole::new(settings.axis_deg, settings.r_mv)),
            heart_v: Vec::new(),
            settings,
        })
    }

    /// Applies new settings while running. Rate, channel count and seed fix the stream's shape:
    /// changing them needs a new `Synth` (the pipeline restarts the source).
    ///
    /// # Errors
    /// [`SynthError`] for settings out of range; the old settings stay in force.
    pub fn update(&mut self, new: SynthSettings) -> Result<(), SynthError> {
        let scale = new.validate()?;
        let s = &self.settings;
        if new.rhythm != s.rhythm {
            self.ecg = Heart::new(&new, &mut Rng::new(new.seed).fork(1));
        } else if let Heart::Model(m) = &mut self.ecg
            && (new.hr_bpm != s.hr_bpm || new.hrv_bpm != s.hrv_bpm || new.r_mv != s.r_mv)
        {
            m.set_rate(new.hr_bpm, new.hrv_bpm, new.r_mv);
        } else if let Heart::Scheduled(_) = &self.ecg
            && new.r_mv != s.r_mv
        {
            self.ecg = Heart::new(&new, &mut Rng::new(new.seed).fork(1));
        }
        for (k, ch) in self.channels.iter_mut().enumerate() {
            ch.offset_v = new.offset_mv * 1e-3 * (1.0 + 0.15 * k as f64);
            match (new.muscle, &mut ch.muscle) {
                (Some(m), Some(run)) => run.update(m),
                (Some(m), None) => {
                    ch.muscle = Some(Muscle::new(
                        s.fs_hz,
                        m,
                        Rng::new(new.seed).fork(300 + k as u64),
                    ));
                }
                (None, _) => ch.muscle = None,
            }
        }
        if new.heart_leads.is_some() && (new.axis_deg != s.axis_deg || new.r_mv != s.r_mv) {
            self.dipole = Some(Dipole::new(new.axis_deg, new.r_mv));
        }
        self.scale = scale;
        let (fs, n, seed) = (s.fs_hz, s.channels, s.seed);
        self.settings = SynthSettings {
            fs_hz: fs,
            channels: n,
            seed,
            ..new
        };
        Ok(())
    }

    /// Settings in force.
    pub fn settings(&self) -> &SynthSettings {
        &self.settings
    }

    /// Counts → µV scale of the modelled board.
    pub fn scale(&self) -> InputScale {
        self.scale
    }

    /// Index of the next sample to be produced.
    pub fn sample_index(&self) -> u64 {
        self.sample_index
    }

    /// Sample indices of the most recent R events of the model (the truth for detector tests).
    pub fn r_events(&self) -> &std::collections::VecDeque<u64> {
        &self.r_events
    }

    /// Onsets and offsets (sample indices) of the muscle's recent contractions on channel 1:
    /// the truth for EMG tests (empty without a muscle).
    pub fn contractions(&self) -> Vec<(u64, u64)> {
        self.channels
            .first()
            .and_then(|c| c.muscle.as_ref())
            .map(|m| m.truth().iter().copied().collect())
            .unwrap_or_default()
    }

    /// Samples (over all channels) that hit an ADC rail so far.
    pub fn clipped(&self) -> u64 {
        self.clipped
    }

    /// Appends `frames` frames of interleaved ADC counts to `out`.
    pub fn fill(&mut self, frames: usize, out: &mut Vec<f64>) {
        out.reserve(frames * self.channels.len());
        for _ in 0..frames {
            self.frame(out);
        }
    }

    fn frame(&mut self, out: &mut Vec<f64>) {
        let s = &self.settings;
        let fs = s.fs_hz;
        let fe = s.front_end;
        let (ecg_v, r_event) = self.ecg.next_sample();
        self.heart_v.clear();
        match (&self.dipole, &self.ecg, s.heart_leads) {
            (Some(d), Heart::Model(m), Some(set)) => {
                Dipole::channels(set, d.at(m.phase(), s.hr_bpm), &mut self.heart_v);
                self.heart_v.iter_mut().for_each(|v| *v *= 1e-3);
            }
            _ => self
                .heart_v
                .extend(self.channels.iter().map(|c| c.lead * ecg_v)),
        }
        if r_event {
            if self.r_events.len() == R_EVENTS_KEPT {
                self.r_events.pop_front();
            }
            self.r_events.push_back(self.sample_index);
        }

        // Mains: continuous phase so a frequency change never steps the waveform.
        self.mains_phase = (self.mains_phase + TAU * s.mains_hz / fs).rem_euclid(TAU);
        let mains_peak_v = SQRT_2 * s.effective_mains_uv() * 1e-6;
        let mut mains_v = self.mains_phase.sin();
        for (h, (&rel, &ph)) in s.harmonics.iter().zip(&self.harmonic_phase).enumerate() {
            let order = (h + 2) as f64;
            let odd_boost = if s.charger && (h + 2) % 2 == 1 {
                CHARGER_ODD_HARMONIC_FACTOR
            } else {
                1.0
            };
            if order * s.mains_hz < fs / 2.0 {
                mains_v += rel * odd_boost * (order * self.mains_phase + ph).sin();
            }
        }
        mains_v *= mains_peak_v;

        self.resp_phase = (self.resp_phase + TAU * s.resp_hz / fs).rem_euclid(TAU);
        let resp_v = SQRT_2 * s.wander_uv * 1e-6 * self.resp_phase.sin();

        let rho = (-TAU * DRIFT_CORNER_HZ / fs).exp();
        let drift_w = s.drift_uv * 1e-6 * (1.0 - rho * rho).sqrt();
        // First-order high-pass y = a(y' + x − x'); its white-noise power gain is 2a²/(1+a).
        let a_mus = 1.0 / (1.0 + TAU * MUSCLE_HP_HZ / fs);
        let mus_norm = (2.0 * a_mus * a_mus / (1.0 + a_mus)).sqrt().recip();
        let a_cpl = if fe.coupling_hz > 0.0 {
            1.0 / (1.0 + TAU * fe.coupling_hz / fs)
        } else {
            1.0
        };
        let polarity = if s.inverted { -1.0 } else { 1.0 };

        // On a board of electrode potentials the lead that comes off is LA's alone.
        let floating = |k: usize| {
            s.lead_off && (s.heart_leads != Some(crate::leads::LeadSet::Electrodes9) || k == 1)
        };
        for (k, (ch, &heart_v)) in self.channels.iter_mut().zip(&self.heart_v).enumerate() {
            ch.drift_v = rho * ch.drift_v + drift_w * ch.drift_rng.normal();
            let white = ch.noise_rng.normal();
            ch.noise_prev_out = a_mus * (ch.noise_prev_out + white - ch.noise_prev_in);
            ch.noise_prev_in = white;
            let muscle_v = s.noise_uv * 1e-6 * mus_norm * ch.noise_prev_out;

            let (heart_share, emg_v) = match &mut ch.muscle {
                Some(m) => (s.muscle.map_or(1.0, |m| m.ecg_share), m.next_v()),
                None => (1.0, 0.0),
            };
            let differential = heart_share * heart_v + emg_v + resp_v + ch.drift_v + ch.offset_v;
            let mut electrode_v = polarity * differential + mains_v + muscle_v;
            if floating(k) {
                let pickup = SQRT_2 * LEAD_OFF_MAINS_V * self.mains_phase.sin();
                electrode_v = LEAD_OFF_DC_V + pickup + 1e-3 * self.lead_off_rng.normal();
            }

            let stage1 = (fe.inamp_gain * electrode_v).clamp(-fe.inamp_swing_v, fe.inamp_swing_v);
            let coupled = if fe.coupling_hz > 0.0 {
                let y = a_cpl * (ch.couple_prev_out + stage1 - ch.couple_prev_in);
                ch.couple_prev_in = stage1;
                ch.couple_prev_out = y;
                y
            } else {
                stage1
            };
            let (count, clipped) = self.scale.adc_v_to_counts(fe.post_gain * coupled);
            if clipped {
                self.clipped += 1;
            }
            out.push(count as f64);
        }
        self.sample_index += 1;
    }
}
