//! The view section of a setup: what the monitor shows and how.

use serde::{Deserialize, Serialize};

/// Colour scheme of the monitor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum Theme {
    #[default]
    Dark,
    Light,
}

/// What the strip under the traces shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum LowerView {
    /// The averaged beat and the RR tachogram.
    Beats,
    /// The running spectrum with the mains measurement.
    #[default]
    Spectrum,
    /// The chain's magnitude, phase and group delay.
    Response,
    /// The chain realised with standard parts.
    Parts,
    /// Measuring the built front end: response, stepped sine, noise, CMRR.
    Measure,
    /// Surface EMG: envelope, moving RMS, contractions, median-frequency trend.
    #[serde(rename = "emg")]
    Muscle,
    /// The twelve standard leads in the usual 3 × 4 arrangement with a rhythm strip of II.
    Twelve,
    /// Nothing: the traces take the whole height.
    #[serde(rename = "traces")]
    Hidden,
}

impl LowerView {
    /// Every strip, in the order the view tabs show them.
    pub const ALL: [LowerView; 8] = [
        LowerView::Beats,
        LowerView::Spectrum,
        LowerView::Response,
        LowerView::Parts,
        LowerView::Measure,
        LowerView::Muscle,
        LowerView::Twelve,
        LowerView::Hidden,
    ];

    /// The name a setup file and the command line use.
    pub fn name(self) -> &'static str {
        match self {
            LowerView::Beats => "beats",
            LowerView::Spectrum => "spectrum",
            LowerView::Response => "response",
            LowerView::Parts => "parts",
            LowerView::Measure => "measure",
            LowerView::Muscle => "emg",
            LowerView::Twelve => "twelve",
            LowerView::Hidden => "traces",
        }
    }

    /// One line on what it shows.
    pub fn describe(self) -> &'static str {
        match self {
            LowerView::Beats => "Averaged beat and RR tachogram.",
            LowerView::Spectrum => "Running spectrum and mains measurement.",
            LowerView::Response => "Magnitude, phase and group delay of the chain.",
            LowerView::Parts => "The chain realised with standard parts.",
            LowerView::Measure => "Measuring the built front end.",
            LowerView::Muscle => {
                "Surface EMG (switches the monitor to EMG: the 20–450 Hz chain and the EMG view)."
            }
            LowerView::Twelve => {
                "The twelve leads, 3 × 4 with a rhythm strip of II (needs a lead set: --lead-set)."
            }
            LowerView::Hidden => "Traces only.",
        }
    }
}

/// Unit of the trace axes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum TraceUnit {
    #[serde(rename = "uV")]
    Microvolts,
    #[default]
    #[serde(rename = "mV")]
    Millivolts,
}

impl TraceUnit {
    /// Factor from µV and the axis text.
    pub fn factor_and_label(self) -> (f64, &'static str) {
        (self.factor(), self.axis_label())
    }

    /// Display units per µV.
    pub fn factor(self) -> f64 {
        match self {
            TraceUnit::Microvolts => 1.0,
            TraceUnit::Millivolts => 1e-3,
        }
    }

    /// The unit's symbol.
    pub fn symbol(self) -> &'static str {
        match self {
            TraceUnit::Microvolts => "µV",
            TraceUnit::Millivolts => "mV",
        }
    }

    /// The axis title.
    fn axis_label(self) -> &'static str {
        match self {
            TraceUnit::Microvolts => "µV at the electrodes",
            TraceUnit::Millivolts => "mV at the electrodes",
        }
    }
}

/// The view section.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct ViewSetup {
    /// Trace window, s.
    pub window_s: f64,
    /// Trace unit: "uV" or "mV".
    pub unit: TraceUnit,
    /// Channel shown (0-based).
    pub channel: usize,
    /// Most frames per second.
    pub display_hz: f64,
    /// Strip under the traces: beats, spectrum, response, parts, measure, emg or traces.
    pub lower: LowerView,
    pub theme: Theme,
    /// Vertical scale: 0 = automatic, else ± this many µV around the centre.
    pub fixed_range_uv: f64,
    /// Sweep (wrap-around) instead of scrolling.
    pub sweep: bool,
    /// Anti-aliased (feathered) lines: smoother, but with software OpenGL (no GPU) they cost
    /// about a quarter of a core more at 30 frames/s.
    pub smooth_lines: bool,
}

impl Default for ViewSetup {
    fn default() -> Self {
        Self {
            window_s: 10.0,
            unit: TraceUnit::Millivolts,
            channel: 0,
            display_hz: 30.0,
            lower: LowerView::Spectrum,
            theme: Theme::Dark,
            fixed_range_uv: 0.0,
            sweep: false,
            smooth_lines: false,
        }
    }
}
