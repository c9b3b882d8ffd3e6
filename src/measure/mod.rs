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
    /// Samples at a converter rail: the numbers would be wrong.
    #[error("{0} samples sit at an ADC rail: the stimulus is clipped; lower its amplitude")]
    Clipped(usize),
}
