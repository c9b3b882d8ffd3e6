//! The argument groups several commands share: the input recording, the board's front end,
//! the chain, units; and what reading an input for a command means (bad input is exit 2).

use std::path::PathBuf;

use clap::{Args, ValueEnum};

use super::num;

/// The recording an offline command reads, and what the file may not say about itself.
#[derive(Debug, Clone, Args)]
pub struct InputArgs {
    /// Recording: .csv/.txt (a time column, a `# fs=` line or --fs), .edf/.bdf (EDF, EDF+, BDF),
    /// .f32/.f64 raw little-endian (--fs, --channels), or a WFDB record's .hea.
    #[arg(long, value_name = "FILE")]
    pub input: PathBuf,
    /// Sample rate, Hz, for files that do not carry one.
    #[arg(value_parser = num::rate_hz(), long, value_name = "HZ")]
    pub fs: Option<f64>,
    /// Channels per frame of a raw input.
    #[arg(value_parser = num::whole::<usize>(1, 64), long, default_value_t = 1, value_name = "N")]
    pub channels: usize,
    /// Unit of the input values (and of a filtered output): V, mV, uV, or counts (ADC counts of
    /// a CSV or raw file, scaled by the --adc-* options or the --config setup's front end).
    #[arg(long, value_enum, default_value_t = FileUnitArg::Millivolts)]
    pub units: FileUnitArg,
    #[command(flatten)]
    pub scale: ScaleArgs,
    /// Take the front-end scaling (and, for `filter` without stage flags, the chain) from this
    /// setup (TOML).
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
}

impl InputArgs {
    /// The reader's options.
    pub fn read_options(&self) -> crate::store::ReadOptions {
        crate::store::ReadOptions {
            fs_hz: self.fs,
            unit: self.units.unit(),
            channels: self.channels,
        }
    }

    /// The setup of `--config`, if given (its unknown keys are reported on stderr).
    ///
    /// # Errors
    /// A setup that cannot be read or used is bad input.
    pub fn setup(&self) -> anyhow::Result<Option<crate::setup::Setup>> {
        load_setup(self.config.as_deref())
    }

    /// Reads the input and picks the signal `channel` names (index or name): a malformed file
    /// or a missing signal is bad input (exit 2), an unreadable one an I/O failure (exit 1).
    /// Counts are scaled to input-referred µV by the front end of the options or the setup.
    /// Signals the reader left out are named on stderr.
    ///
    /// # Errors
    /// As described.
    pub fn load(&self, channel: &str) -> anyhow::Result<(crate::store::Recording, usize)> {
        let setup = self.setup()?;
        let (mut rec, ch) = load_channel(&self.input, &self.read_options(), channel)?;
        if self.units == FileUnitArg::Counts {
            if !matches!(
                crate::store::extension_of(&self.input).as_str(),
                "csv" | "txt" | "tsv" | "f32" | "f64"
            ) {
                return Err(BadInput(format!(
                    "--units counts: {} carries physical units already; counts apply to CSV and raw files",
                    self.input.display()
                ))
                .into());
            }
            let base = setup.as_ref().map(|s| s.front_end.per_channel(s.scale));
            let fes = self.scale.front_ends(base)?.ok_or_else(|| {
                BadInput(
                    "--units counts needs the board: --adc-bits N --adc-vref V --frontend-gain G [--adc-zero mid|bipolar|COUNTS], or --config FILE".into(),
                )
            })?;
            for (k, c) in rec.channels.iter_mut().enumerate() {
                if let Some(fe) = crate::scale::for_channel(&fes, k) {
                    let fe = crate::scale::FrontEnd {
                        values: crate::scale::ValueKind::Counts,
                        ..*fe
                    };
                    for v in c.iter_mut() {
                        *v = fe.to_uv(*v, false);
                    }
                }
            }
            eprintln!(
                "counts scaled as {}",
                crate::scale::for_channel(&fes, ch).map_or(String::new(), |f| {
                    crate::scale::FrontEnd {
                        values: crate::scale::ValueKind::Counts,
                        ..*f
                    }
                    .describe()
                })
            );
        } else if self.scale.any() {
            return Err(BadInput(
                "--adc-* and --frontend-gain scale counts: add --units counts".into(),
            )
            .into());
        }
        for n in &rec.notes {
            eprintln!(
                "{}: {n}; --channel with its index or name reads it",
                self.input.display()
            );
        }
        Ok((rec, ch))
    }
}

/// Reads a setup for a command (unknown keys reported on stderr).
///
/// # Errors
/// A setup that cannot be read or used is bad input.
pub fn load_setup(path: Option<&std::path::Path>) -> anyhow::Result<Option<crate::setup::Setup>> {
    let Some(path) = path else { return Ok(None) };
    let loaded = crate::setup::Setup::load(path).map_err(|e| BadInput(e.to_string()))?;
    for w in &loaded.warnings {
        eprintln!("leadline: {}: {w}", path.display());
    }
    Ok(Some(loaded.setup))
}

/// The board's front end on the command line. Each option takes one value for every channel or
/// a comma-separated value per channel (`--frontend-gain 1000,1`).
#[derive(Debug, Clone, Args, Default)]
pub struct ScaleArgs {
    /// ADC resolution, bits (8–24).
    #[arg(value_parser = num::whole::<u32>(8, 24), long, value_name = "N", value_delimiter = ',')]
    pub adc_bits: Vec<u32>,
    /// ADC reference, V: a unipolar converter spans 0…V, a bipolar one −V…+V.
    #[arg(value_parser = num::real(0.01, 100.0, "V"), long, value_name = "V", value_delimiter = ',')]
    pub adc_vref: Vec<f64>,
    /// Count of a zero signal: mid (mid-scale, single-supply boards; the default), bipolar
    /// (two's-complement counts; 0 means the same), or a count.
    #[arg(value_parser = num::zero, long, value_name = "COUNTS|mid|bipolar", value_delimiter = ',')]
    pub adc_zero: Vec<num::ZeroArg>,
    /// Total gain from the electrodes to the ADC pin, V/V (in-amp × later stages).
    #[arg(value_parser = num::gain(), long, value_name = "G", value_delimiter = ',')]
    pub frontend_gain: Vec<f64>,
}

impl ScaleArgs {
    /// True when any option was given.
    pub fn any(&self) -> bool {
        !(self.adc_bits.is_empty()
            && self.adc_vref.is_empty()
            && self.adc_zero.is_empty()
            && self.frontend_gain.is_empty())
    }

    /// The front end per channel: `base` (from a setup) with these options on top. None when
    /// neither gives one.
    ///
    /// # Errors
    /// A missing option (with no setup to take it from), a bad zero, or an impossible converter.
    pub fn front_ends(
        &self,
        base: Option<Vec<crate::scale::FrontEnd>>,
    ) -> Result<Option<Vec<crate::scale::FrontEnd>>, BadInput> {
        use crate::scale::{FrontEnd, InputScale, ValueKind};
        if !self.any() {
            return Ok(base);
        }
        let n = [
            self.adc_bits.len(),
            self.adc_vref.len(),
            self.adc_zero.len(),
            self.frontend_gain.len(),
            base.as_ref().map_or(0, Vec::len),
        ]
        .into_iter()
        .max()
        .unwrap_or(1)
        .max(1);
        fn nth<T: Copy>(v: &[T], k: usize) -> Option<T> {
            v.get(k).or_else(|| v.last()).copied()
        }
        let mut out = Vec::with_capacity(n);
        for k in 0..n {
            let from = base
                .as_deref()
                .and_then(|b| crate::scale::for_channel(b, k))
                .copied();
            let need = |what: &str| {
                BadInput(format!(
                    "{what} is missing: counts need --adc-bits, --adc-vref and --frontend-gain (or --config)"
                ))
            };
            let bits = nth(&self.adc_bits, k)
                .or(from.map(|f| f.adc.bits))
                .ok_or_else(|| need("--adc-bits"))?;
            let vref = nth(&self.adc_vref, k)
                .or(from.map(|f| f.adc.vref_v))
                .ok_or_else(|| need("--adc-vref"))?;
            let gain = nth(&self.frontend_gain, k)
                .or(from.map(|f| f.adc.gain))
                .ok_or_else(|| need("--frontend-gain"))?;
            let zero = self.adc_zero.get(k).or_else(|| self.adc_zero.last());
            let mut adc = InputScale {
                bits,
                vref_v: vref,
                offset_counts: 0.0,
                gain,
                bipolar: from.is_some_and(|f| f.adc.bipolar),
            };
            match zero {
                None => {
                    adc.offset_counts = match from {
                        Some(f) if f.adc.bits == bits => f.adc.offset_counts,
                        _ => adc.default_zero(),
                    }
                }
                Some(num::ZeroArg::Mid) => {
                    adc.bipolar = false;
                    adc.offset_counts = adc.default_zero();
                }
                Some(num::ZeroArg::Bipolar) => {
                    adc.bipolar = true;
                    adc.offset_counts = 0.0;
                }
                Some(&num::ZeroArg::Counts(c)) => {
                    adc.bipolar = false;
                    adc.offset_counts = c;
                }
            }
            adc.validate()
                .map_err(|e| BadInput(format!("front end of channel {}: {e}", k + 1)))?;
            out.push(FrontEnd {
                values: ValueKind::Counts,
                adc,
            });
        }
        Ok(Some(out))
    }
}

/// The filter chain on the command line. Each stage is used only when its corner is given.
#[derive(Debug, Clone, Args, Default)]
pub struct ChainArgs {
    /// High-pass corner (−3 dB), Hz.
    #[arg(value_parser = num::corner_hz(), long, value_name = "HZ")]
    pub highpass: Option<f64>,
    /// High-pass Butterworth order (1–8).
    #[arg(value_parser = num::order(), long, default_value_t = 2, value_name = "N")]
    pub highpass_order: u32,
    /// Mains notch frequency, Hz, or `auto` (filter only): the frequency and harmonics measured
    /// in the input's own spectrum, printed on stderr.
    #[arg(value_parser = num::notch, long, value_name = "HZ|auto")]
    pub notch: Option<num::NotchArg>,
    /// Notch Q (−3 dB bandwidth = frequency / Q).
    #[arg(value_parser = num::q(), long, default_value_t = 30.0, value_name = "Q")]
    pub notch_q: f64,
    /// Extra notches at harmonics 2… (0–4).
    #[arg(value_parser = num::whole::<u32>(0, 4), long, default_value_t = 0, value_name = "N")]
    pub notch_harmonics: u32,
    /// Low-pass corner (−3 dB), Hz.
    #[arg(value_parser = num::corner_hz(), long, value_name = "HZ")]
    pub lowpass: Option<f64>,
    /// Low-pass Butterworth order (1–8).
    #[arg(value_parser = num::order(), long, default_value_t = 4, value_name = "N")]
    pub lowpass_order: u32,
    /// Plain gain after the filters, V/V.
    #[arg(value_parser = num::gain(), long, default_value_t = 1.0, value_name = "G")]
    pub gain: f64,
    #[command(flatten)]
    pub cancel: CancelArgs,
}

impl ChainArgs {
    /// The notch frequency given, or None for none or `auto`.
    fn notch_hz(&self) -> Option<f64> {
        match self.notch {
            Some(num::NotchArg::Hz(f)) => Some(f),
            _ => None,
        }
    }

    /// True when `--notch auto` was given.
    pub fn notch_auto(&self) -> bool {
        self.notch == Some(num::NotchArg::Auto)
    }

    /// True when any stage's flag was given.
    pub fn any_stage(&self) -> bool {
        self.highpass.is_some()
            || self.notch.is_some()
            || self.lowpass.is_some()
            || self.cancel.mains_cancel
    }

    /// Checks `--notch auto`: it needs an input to measure.
    ///
    /// # Errors
    /// [`BadInput`] naming the value.
    pub fn check_notch(&self, auto_allowed: bool) -> Result<(), BadInput> {
        if self.notch_auto() && !auto_allowed {
            return Err(BadInput(
                "--notch auto measures the input's mains: it works with `filter`; give a frequency here".into(),
            ));
        }
        Ok(())
    }

    /// The chain these flags describe (an automatic notch starts at 50 Hz until measured).
    pub fn settings(&self) -> crate::dsp::ChainSettings {
        use crate::dsp::{ChainSettings, HighPass, LowPass, Notch};
        ChainSettings {
            highpass: HighPass {
                enabled: self.highpass.is_some(),
                corner_hz: self.highpass.unwrap_or(0.5),
                order: self.highpass_order,
            },
            notch: Notch {
                enabled: self.notch.is_some(),
                mains_hz: self.notch_hz().unwrap_or(self.cancel.mains_hz),
                q: self.notch_q,
                harmonics: self.notch_harmonics,
                auto: self.notch_auto(),
            },
            lowpass: LowPass {
                enabled: self.lowpass.is_some(),
                corner_hz: self.lowpass.unwrap_or(40.0),
                order: self.lowpass_order,
            },
            gain: self.gain,
            cancel: self.cancel.settings(),
        }
    }

    /// The sections at `fs`, with a bad design reported as bad input (exit code 2).
    ///
    /// # Errors
    /// [`BadInput`] with the design error's message.
    pub fn design(&self, fs: f64) -> Result<crate::dsp::Design, BadInput> {
        self.check_notch(false)?;
        self.settings()
            .design(fs)
            .map_err(|e| BadInput(e.to_string()))
    }
}

/// Unit of the values in an input or output file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FileUnitArg {
    #[value(name = "V")]
    Volts,
    #[value(name = "mV")]
    Millivolts,
    #[value(name = "uV")]
    Microvolts,
    /// ADC counts (input only), scaled by the front end.
    #[value(name = "counts")]
    Counts,
}

impl FileUnitArg {
    /// The store's unit to read with (counts are read as plain numbers and scaled afterwards).
    pub fn unit(self) -> crate::store::FileUnit {
        match self {
            FileUnitArg::Volts => crate::store::FileUnit::Volts,
            FileUnitArg::Millivolts => crate::store::FileUnit::Millivolts,
            FileUnitArg::Microvolts | FileUnitArg::Counts => crate::store::FileUnit::Microvolts,
        }
    }

    /// The unit an output file is written in (scaled counts come out in mV).
    pub fn output_unit(self) -> crate::store::FileUnit {
        match self {
            FileUnitArg::Counts => crate::store::FileUnit::Millivolts,
            other => other.unit(),
        }
    }
}

/// Units of CSV output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Units {
    /// ADC counts exactly as produced.
    Counts,
    /// Volts at the electrodes.
    #[value(name = "V")]
    Volts,
    /// Millivolts at the electrodes.
    #[value(name = "mV")]
    Millivolts,
    /// Microvolts at the electrodes.
    #[value(name = "uV")]
    Microvolts,
}

/// Reads a recording for an offline command and picks one channel: a malformed file or a missing
/// channel is bad input (exit 2), an unreadable one an I/O failure (exit 1).
///
/// # Errors
/// As described.
pub fn load_channel(
    input: &std::path::Path,
    opts: &crate::store::ReadOptions,
    channel: &str,
) -> anyhow::Result<(crate::store::Recording, usize)> {
    let as_input = |e: crate::store::StoreError| -> anyhow::Error {
        match e {
            crate::store::StoreError::Io { .. } => anyhow::Error::new(e),
            other => BadInput(other.to_string()).into(),
        }
    };
    let rec = crate::store::read(input, opts).map_err(as_input)?;
    let k = rec.find_signal(channel).map_err(BadInput)?;
    let list = rec.signal_list();
    if let Some(ch) = list[k].channel {
        return Ok((rec, ch));
    }
    // A signal at another rate (or not a voltage): read its own group.
    let rec = crate::store::edf::read_group(input, Some(k)).map_err(as_input)?;
    let ch = rec.signal_list()[k]
        .channel
        .ok_or_else(|| BadInput(format!("--channel {channel}: the signal could not be read")))?;
    Ok((rec, ch))
}

/// One signal of the input as the summaries list it.
#[derive(Debug, Clone, serde::Serialize)]
pub struct SignalOut {
    /// 0-based index for `--channel`.
    pub index: usize,
    pub name: String,
    pub fs_hz: f64,
    pub unit: String,
    /// Read with the chosen channel (same rate and kind).
    pub loaded: bool,
}

/// Every signal of a recording, for the JSON summaries.
pub fn signals_out(rec: &crate::store::Recording) -> Vec<SignalOut> {
    rec.signal_list()
        .into_iter()
        .enumerate()
        .map(|(index, s)| SignalOut {
            index,
            name: s.name,
            fs_hz: s.fs_hz,
            unit: s.unit,
            loaded: s.channel.is_some(),
        })
        .collect()
}

/// A bad argument or input detected after parsing (exit code 2, like clap's own errors).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct BadInput(pub String);

/// What a recording's channels are, for the commands that can derive the twelve leads.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct LeadArgs {
    /// The channels are leads or electrodes, in this order: limb2 (I, II), leads8 (I, II,
    /// V1–V6) or electrodes9 (RA, LA, LL, V1–V6); the standard leads are derived from them
    /// (Einthoven, Goldberger, Wilson). Not needed when the file's channel names say it.
    #[arg(long, value_enum, value_name = "SET")]
    pub lead_set: Option<crate::leads::LeadSet>,
}

impl LeadArgs {
    /// Reads `src` and picks `channel`: with a lead set (given, or spelled by the file's channel
    /// names) the recording's channels become the derived leads first, and `channel` names one
    /// of them (I, II, III, aVR, aVL, aVF, V1–V6, or an index).
    ///
    /// # Errors
    /// As [`InputArgs::load`]; a lead set that needs more channels than the file has, named
    /// with both numbers.
    pub fn load(
        &self,
        src: &InputArgs,
        channel: &str,
    ) -> anyhow::Result<(crate::store::Recording, usize)> {
        self.load_leads(src, channel).map(|(rec, ch, _)| (rec, ch))
    }

    /// As [`Self::load`], with the lead set the channels were read as (`None`: not leads).
    ///
    /// # Errors
    /// As [`Self::load`].
    pub fn load_leads(
        &self,
        src: &InputArgs,
        channel: &str,
    ) -> anyhow::Result<(
        crate::store::Recording,
        usize,
        Option<crate::leads::LeadSet>,
    )> {
        let (rec, ch) = match self.lead_set {
            Some(_) => src.load("0")?,
            None => match src.load(channel) {
                Ok(v) => v,
                // A derived lead's name (aVF) is not in a file of leads I, II, …
                Err(e)
                    if crate::leads::TWELVE
                        .iter()
                        .any(|n| n.eq_ignore_ascii_case(channel)) =>
                {
                    src.load("0").map_err(|_| e)?
                }
                Err(e) => return Err(e),
            },
        };
        let (rec, set) = derive_leads(rec, self.lead_set)?;
        let Some(set) = set else {
            return Ok((rec, ch, None));
        };
        eprintln!(
            "{}: channels read as {}; the leads {} are derived",
            src.input.display(),
            set.describe(),
            set.output_names().join(", ")
        );
        let ch = rec.find_signal(channel).map_err(BadInput)?;
        Ok((rec, ch, Some(set)))
    }
}

/// The recording with its channels replaced by the leads derived from them, when `set` is given
/// or the channel names spell a set (with the set); else the recording as it was.
///
/// # Errors
/// A set that needs more channels than the recording has (bad input, both numbers named).
pub fn derive_leads(
    rec: crate::store::Recording,
    set: Option<crate::leads::LeadSet>,
) -> anyhow::Result<(crate::store::Recording, Option<crate::leads::LeadSet>)> {
    let (set, picks) = match set {
        Some(s) => {
            s.check(rec.channels.len())
                .map_err(|e| BadInput(e.to_string()))?;
            (s, (0..s.inputs().len()).collect())
        }
        None => match crate::leads::LeadSet::from_names(&rec.names) {
            Some(found) => found,
            None => return Ok((rec, None)),
        },
    };
    let n = rec.len();
    let outputs = set.outputs().len();
    let mut leads = vec![Vec::with_capacity(n); outputs];
    let (mut frame, mut out) = (Vec::with_capacity(picks.len()), Vec::with_capacity(outputs));
    for i in 0..n {
        frame.clear();
        frame.extend(picks.iter().map(|&k: &usize| rec.channels[k][i]));
        out.clear();
        set.derive(&frame, &mut out);
        for (l, v) in leads.iter_mut().zip(&out) {
            l.push(*v);
        }
    }
    Ok((
        crate::store::Recording {
            names: set.output_names(),
            channels: leads,
            signals: Vec::new(),
            ..rec
        },
        Some(set),
    ))
}

/// The adaptive mains canceller on the command line (in every chain, and before `spectrum` and
/// `beats` analyse a recording).
#[derive(Debug, Clone, Default, clap::Args)]
pub struct CancelArgs {
    /// The adaptive mains canceller after the high-pass (Widrow's adaptive noise canceller with
    /// an internal sinusoidal reference, the frequency tracked within ±1 Hz), in place of the
    /// notch or with it; at --notch's frequency, else --mains-hz.
    #[arg(long)]
    pub mains_cancel: bool,
    /// Harmonics the canceller follows: the fundamental and up to this order (1–5).
    #[arg(value_parser = num::whole::<u32>(1, 5), long, default_value_t = 5, value_name = "N")]
    pub mains_cancel_harmonics: u32,
    /// Mains frequency for the canceller when --notch is not given, Hz.
    #[arg(value_parser = num::real(40.0, 70.0, "Hz"), long, default_value_t = 50.0, value_name = "HZ")]
    pub mains_hz: f64,
}

impl CancelArgs {
    /// The canceller's settings.
    pub fn settings(&self) -> crate::dsp::canceller::MainsCancel {
        crate::dsp::canceller::MainsCancel {
            enabled: self.mains_cancel,
            harmonics: self.mains_cancel_harmonics,
        }
    }

    /// With `--mains-cancel`, runs the canceller over `x` (µV at `fs`) at --mains-hz.
    pub fn apply(&self, x: &mut [f64], fs: f64) {
        if self.mains_cancel {
            crate::dsp::canceller::Canceller::new(fs, self.mains_hz, self.mains_cancel_harmonics)
                .run_block(x);
        }
    }
}
