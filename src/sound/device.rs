//! The sound card: an output stream fed with the renderer's samples through a channel. With
//! no device the monitor keeps running and says "no sound device".

use cpal::traits::{DeviceTrait, HostTrait, StreamTrait};
use crossbeam_channel::{Receiver, Sender, bounded};

/// Audio blocks queued for the card at most (each about one input block long).
const QUEUE: usize = 64;

/// An open output: dropping it stops the sound.
pub struct SoundOut {
    _stream: cpal::Stream,
    rate: u32,
    tx: Sender<Vec<f32>>,
}

impl std::fmt::Debug for SoundOut {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("SoundOut")
            .field("rate", &self.rate)
            .finish()
    }
}

impl SoundOut {
    /// Opens the default output device.
    ///
    /// # Errors
    /// "no sound device", or the device's own refusal, as one line.
    pub fn open() -> Result<Self, String> {
        let host = cpal::default_host();
        let device = host
            .default_output_device()
            .ok_or_else(|| "no sound device".to_string())?;
        let supported = device
            .default_output_config()
            .map_err(|e| format!("no sound device: {e}"))?;
        let config = supported.config();
        let channels = usize::from(config.channels.max(1));
        let rate = config.sample_rate;
        let (tx, rx): (Sender<Vec<f32>>, Receiver<Vec<f32>>) = bounded(QUEUE);
        let mut pending: Vec<f32> = Vec::new();
        let mut at = 0;
        let stream = device
            .build_output_stream::<f32, _, _>(
                config,
                move |data: &mut [f32], _| {
                    for frame in data.chunks_mut(channels) {
                        if at >= pending.len() {
                            at = 0;
                            pending = rx.try_recv().unwrap_or_default();
                        }
                        let v = pending.get(at).copied().unwrap_or(0.0);
                        at += 1;
                        frame.iter_mut().for_each(|s| *s = v);
                    }
                },
                |_| {},
                None,
            )
            .map_err(|e| format!("no sound device: {e}"))?;
        stream
            .play()
            .map_err(|e| format!("sound device refused to play: {e}"))?;
        Ok(Self {
            _stream: stream,
            rate,
            tx,
        })
    }

    /// The card's rate, Hz.
    pub fn rate(&self) -> u32 {
        self.rate
    }

    /// Where the renderer's blocks go (a full queue drops the block: the card fell behind).
    pub fn sender(&self) -> Sender<Vec<f32>> {
        self.tx.clone()
    }
}
