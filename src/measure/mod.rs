//! Measuring a built front end: its transfer function from a stimulus and an output channel
//! ([`transfer`]), a stepped sine on one channel ([`sine`]), its input-referred noise
//! ([`noise`]) and its common-mode rejection ([`cmrr`]). Pure functions of recorded µV.

pub mod cmrr;
pub mod noise;
pub mod sine;
pub mod transfer;

/// Why a measurement gives no number.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum MeasureError {
    /// Fewer samples than one segment.
    #[error("the recording has {len} samples, shorter than one segment ({segment})")]
    TooShort { len: usize, segment: usize },
    /// The stimulus channel carries nothing.
    #[error("the stimulus channel is flat: nothing to measure a response to")]
    FlatStimulus,
    /// No frequency where the output follows the stimulus.
    #[error(
        "coherence is below 0.9 at every frequency: the output does not follow the stimulus (wrong channels, or too much noise)"
    )]
    LowCoherence,
    /// No steady sine steps.
    #[error("no steady steps found: hold each generator frequency for at least 2 s")]
    NoSteps,
    /// The band cannot be used at this rate.
    #[error("band: {0}")]
    Band(String),
    /// Nothing at the common-mode frequency.
    #[error("nothing at {0} Hz in the channel")]
    NoSine(f64),
    /// The stream has no such channel.
    #[error("there is no channel {}", .0 + 1)]
    NoChannel(usize),
    /// Samples at a converter rail: the numbers would be wrong.
    #[error("{0} samples sit at an ADC rail: the stimulus is clipped; lower its amplitude")]
    Clipped(usize),
}

/// A measurement asked of the live stream (the monitor's Measure view): computed by the DSP
/// thread from the newest samples of the raw (input-referred, before the chain) traces.
#[derive(Debug, Clone, PartialEq)]
pub enum Request {
    /// Transfer function from channel `stimulus` to channel `output`.
    Response { stimulus: usize, output: usize },
    /// A stepped sine of `amplitude_uv` (peak) on `channel`.
    Steps { channel: usize, amplitude_uv: f64 },
    /// Noise in `band` against a peak-to-peak limit.
    Noise {
        channel: usize,
        band: (f64, f64),
        limit_p2p_uv: f64,
    },
    /// CMRR for a common-mode sine of `cm_uv` RMS at `cm_hz`.
    Cmrr {
        channel: usize,
        cm_uv: f64,
        cm_hz: f64,
    },
    /// CMRR at each steady step of a common-mode generator stepped by hand.
    CmrrStepped { channel: usize, cm_uv: f64 },
}

/// What a request gave.
#[derive(Debug, Clone, PartialEq)]
pub enum Outcome {
    Response(transfer::Transfer),
    Steps {
        steps: Vec<sine::Step>,
        amplitude_uv: f64,
    },
    Noise(noise::Noise),
    Cmrr(cmrr::Cmrr),
    CmrrSteps(Vec<cmrr::Cmrr>),
}

/// A measurement with the seconds of signal it used, or why there is none.
#[derive(Debug, Clone, PartialEq)]
pub struct Measured {
    pub seconds: f64,
    pub result: Result<Outcome, String>,
}

/// Runs a request on the channels' samples (µV at `fs`).
pub fn run(req: &Request, channels: &[Vec<f64>], fs: f64) -> Result<Outcome, MeasureError> {
    let ch = |k: usize| channels.get(k).ok_or(MeasureError::NoChannel(k));
    match *req {
        Request::Response { stimulus, output } => {
            let (x, y) = (ch(stimulus)?, ch(output)?);
            let n = crate::dsp::spectrum::segment_for(fs, 4.0)
                .min(x.len().next_power_of_two() / 2)
                .clamp(256, 16384);
            transfer::estimate(x, y, fs, n).map(Outcome::Response)
        }
        Request::Steps {
            channel,
            amplitude_uv,
        } => sine::steps(ch(channel)?, fs, 2.0).map(|steps| Outcome::Steps {
            steps,
            amplitude_uv,
        }),
        Request::Noise {
            channel,
            band,
            limit_p2p_uv,
        } => noise::measure(ch(channel)?, fs, band, limit_p2p_uv).map(Outcome::Noise),
        Request::Cmrr {
            channel,
            cm_uv,
            cm_hz,
        } => cmrr::measure(ch(channel)?, fs, cm_uv, cm_hz).map(Outcome::Cmrr),
        Request::CmrrStepped { channel, cm_uv } => {
            cmrr::stepped(ch(channel)?, fs, cm_uv).map(Outcome::CmrrSteps)
        }
    }
}
