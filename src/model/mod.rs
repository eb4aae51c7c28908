//! The rig format as types: what one file says, with the span of every value.
//!
//! [`build`] turns a YAML node tree (already checked against the schema) into a
//! [`Document`]. Quantities are parsed here; anything the schema already reported is
//! left out quietly, so one mistake gives one finding.

pub mod build;
pub mod conform;
pub mod quantity;
pub mod schema;

use crate::source::{FileId, Span};
use crate::words::format_hz;
pub use quantity::Exact;

/// A value and the span of its YAML node.
#[derive(Clone, Debug, PartialEq)]
pub struct Sp<T> {
    /// The value.
    pub value: T,
    /// Where its value is written.
    pub span: Span,
}

impl<T> Sp<T> {
    /// Pair a value with a span.
    pub fn new(value: T, span: Span) -> Self {
        Sp { value, span }
    }
}

/// Whether a file describes a rig or is a catalog of shared parts.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Role {
    /// A rig file (`*.rig.yaml` or named on the command line).
    Rig,
    /// A catalog, read because a rig includes it.
    Catalog,
}

/// One file's content.
#[derive(Clone, Debug)]
pub struct Document {
    /// The file.
    pub file: FileId,
    /// Rig or catalog.
    pub role: Role,
    /// The whole document's span (for findings about the file as such).
    pub span: Span,
    /// `rig:` (or `catalog:`) name.
    pub name: Option<Sp<String>>,
    /// Include paths as written.
    pub includes: Vec<Sp<String>>,
    /// Thresholds set by the rig.
    pub defaults: Defaults,
    /// Clocks.
    pub clocks: Vec<Clock>,
    /// Sensors.
    pub sensors: Vec<Sensor>,
    /// Modules.
    pub modules: Vec<Module>,
    /// Channels.
    pub channels: Vec<Channel>,
    /// Groups.
    pub groups: Vec<Group>,
    /// Disturbances.
    pub disturbances: Vec<Disturbance>,
    /// The recording system's limits.
    pub logger: Option<Logger>,
    /// Spans of keys that only a rig may hold (for the "catalog holds channels" check).
    pub rig_only_keys: Vec<(String, Span)>,
}

/// Thresholds from the rig's `defaults`.
#[derive(Clone, Debug, Default)]
pub struct Defaults {
    /// `margin`.
    pub margin: Option<Sp<f64>>,
    /// `alias-rejection` in dB.
    pub alias_rejection: Option<Sp<f64>>,
    /// `passband-tolerance` in dB.
    pub passband_tolerance: Option<Sp<f64>>,
    /// `oversampling-limit`.
    pub oversampling_limit: Option<Sp<f64>>,
    /// `phase-tolerance` in degrees.
    pub phase_tolerance: Option<Sp<f64>>,
}

/// A clock.
#[derive(Clone, Debug)]
pub struct Clock {
    /// Its name.
    pub name: Sp<String>,
    /// The whole list item.
    pub item: Span,
    /// Root or derived.
    pub def: ClockDef,
}

/// How a clock gets its rate.
#[derive(Clone, Debug)]
pub enum ClockDef {
    /// A root oscillator.
    Root {
        /// Its frequency in Hz.
        frequency: Sp<Exact>,
    },
    /// Derived from another clock: rate = source × multiply ÷ divide.
    Derived {
        /// The source clock's name.
        source: Sp<String>,
        /// Divider (default 1).
        divide: Option<Sp<u64>>,
        /// Multiplier (default 1).
        multiply: Option<Sp<u64>>,
    },
    /// Broken (already reported). A derived clock keeps its source's name, so that its
    /// source still counts as used (no false `unused-clock`) and the channels on it are
    /// named by the finding on the clock.
    Invalid {
        /// The `source` it names, if it names one.
        source: Option<Sp<String>>,
    },
}

/// A sensor's response peak above its band.
#[derive(Clone, Debug)]
pub struct Resonance {
    /// Peak frequency in Hz.
    pub frequency: Sp<f64>,
    /// Peak gain in dB.
    pub gain: Sp<f64>,
    /// The `resonance` mapping.
    pub span: Span,
}

/// A sensor type.
#[derive(Clone, Debug)]
pub struct Sensor {
    /// Its name.
    pub name: Sp<String>,
    /// The whole list item.
    pub item: Span,
    /// Free text.
    pub kind: Option<Sp<String>>,
    /// Usable upper frequency in Hz.
    pub bandwidth: Option<Sp<Exact>>,
    /// A `bandwidth` is written but could not be read (already reported): the channels
    /// relying on it are not reported again for having no band.
    pub bandwidth_unreadable: bool,
    /// Resonance.
    pub resonance: Option<Resonance>,
    /// The sensor's own roll-off.
    pub response: Option<Sp<Vec<Filter>>>,
}

/// An acquisition module (card).
#[derive(Clone, Debug)]
pub struct Module {
    /// Its name.
    pub name: Sp<String>,
    /// The whole list item.
    pub item: Span,
    /// ADC resolution.
    pub adc_bits: Option<Sp<u32>>,
    /// Highest ADC rate in Hz.
    pub max_rate: Option<Sp<Exact>>,
    /// The only ADC rates it supports.
    pub rates: Option<Sp<Vec<Sp<Exact>>>>,
    /// Stored bits per sample.
    pub sample_bits: Option<Sp<u32>>,
    /// The chain its channels get unless they declare their own.
    pub filters: Option<Sp<Vec<Filter>>>,
    /// Required rejection in dB.
    pub alias_rejection: Option<Sp<f64>>,
    /// Data-rate limit in bytes/s.
    pub throughput: Option<Sp<f64>>,
    /// The delta-sigma modulator of its converter, if described.
    pub modulator: Option<Modulator>,
}

/// Every filter `response` of the rig format, in the order of docs/format.md: a
/// decimation stage takes all six, a filter at the ADC the first five, a sensor's
/// roll-off the first four.
pub const RESPONSES: [&str; 6] = [
    "butterworth",
    "bessel",
    "chebyshev",
    "table",
    "digital",
    "sinc",
];

/// How fast a delta-sigma modulator runs.
#[derive(Clone, Debug, PartialEq)]
pub enum ModulatorRate {
    /// An absolute rate in Hz (an integer multiple of the ADC output rate).
    Rate(Sp<Exact>),
    /// The oversampling ratio: modulator rate = ratio × ADC output rate.
    Ratio(Sp<u64>),
}

/// A module's delta-sigma modulator: its rate and the converter's own digital filter.
#[derive(Clone, Debug, PartialEq)]
pub struct Modulator {
    /// The `modulator` mapping.
    pub span: Span,
    /// Its rate, absolute or as an oversampling ratio.
    pub rate: ModulatorRate,
    /// The converter's own decimation filter (a `digital` response), applied to every
    /// channel on the module, periodic in the modulator rate.
    pub filter: Option<Filter>,
}

impl Modulator {
    /// The modulator rate for an ADC output rate of `adc_rate`, exact.
    ///
    /// `None` if the product overflows.
    pub fn rate_for(&self, adc_rate: Exact) -> Option<Exact> {
        match &self.rate {
            ModulatorRate::Rate(r) => Some(r.value),
            ModulatorRate::Ratio(k) => {
                use num_traits::CheckedMul;
                adc_rate.checked_mul(&Exact::from_integer(i128::from(k.value)))
            }
        }
    }

    /// The span of the value that sets the rate (`rate` or `oversampling-ratio`).
    pub fn rate_span(&self) -> Span {
        match &self.rate {
            ModulatorRate::Rate(r) => r.span,
            ModulatorRate::Ratio(k) => k.span,
        }
    }
}

/// One decimation stage.
#[derive(Clone, Debug)]
pub struct Stage {
    /// Rate reduction factor (≥ 2).
    pub factor: Sp<u32>,
    /// Its filter; none is plain down-sampling.
    pub filter: Option<Filter>,
    /// The list item.
    pub span: Span,
}

/// A channel.
#[derive(Clone, Debug)]
pub struct Channel {
    /// Its name.
    pub name: Sp<String>,
    /// The whole list item.
    pub item: Span,
    /// Sensor reference.
    pub sensor: Option<Sp<String>>,
    /// Module reference.
    pub module: Option<Sp<String>>,
    /// Clock reference.
    pub clock: Option<Sp<String>>,
    /// Band in Hz.
    pub band: Option<Sp<Exact>>,
    /// Its own filter chain (`[]` = none, overriding the module's).
    pub filters: Option<Sp<Vec<Filter>>>,
    /// Decimation stages in order.
    pub decimate: Vec<Stage>,
    /// Required rejection in dB.
    pub alias_rejection: Option<Sp<f64>>,
    /// Stored bits per sample.
    pub sample_bits: Option<Sp<u32>>,
    /// Some value of the channel could not be read (already reported): physics rules
    /// skip it.
    pub broken: bool,
}

/// A group of channels analysed together.
#[derive(Clone, Debug)]
pub struct Group {
    /// Its name.
    pub name: Sp<String>,
    /// The whole list item.
    pub item: Span,
    /// Member names.
    pub channels: Vec<Sp<String>>,
    /// Allowed phase mismatch in degrees.
    pub phase_tolerance: Option<Sp<f64>>,
}

/// A known tone on the rig.
#[derive(Clone, Debug)]
pub struct Disturbance {
    /// Its name.
    pub name: Sp<String>,
    /// The whole list item.
    pub item: Span,
    /// Tone frequency in Hz.
    pub frequency: Option<Sp<Exact>>,
    /// Level above broadband content in dB.
    pub level: Option<Sp<f64>>,
    /// Channels it reaches (`None`: every channel).
    pub channels: Option<Vec<Sp<String>>>,
}

/// The recording system's limits.
#[derive(Clone, Debug)]
pub struct Logger {
    /// The `logger` mapping.
    pub span: Span,
    /// Data-rate limit in bytes/s.
    pub throughput: Option<Sp<f64>>,
    /// Storage in bytes.
    pub storage: Option<Sp<f64>>,
    /// Recording duration in seconds.
    pub duration: Option<Sp<f64>>,
}

/// A filter in a chain.
#[derive(Clone, Debug, PartialEq)]
pub struct Filter {
    /// The filter's mapping.
    pub span: Span,
    /// Its response.
    pub response: Response,
    /// Where its editable values are written (for fixes that change one of them).
    pub values: FilterValues,
}

/// The spans of a filter's values that a fix may change.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct FilterValues {
    /// `order`.
    pub order: Option<Span>,
    /// `cutoff`.
    pub cutoff: Option<Span>,
    /// `attenuation` (of a `digital` filter).
    pub attenuation: Option<Span>,
    /// `stopband-edge` (of a `digital` filter).
    pub stopband: Option<Span>,
}

/// The filter responses of docs/model.md, "Filter responses".
#[derive(Clone, Debug, PartialEq)]
pub enum Response {
    /// Butterworth, cutoff at −3 dB.
    Butterworth {
        /// 1–12.
        order: u32,
        /// Hz.
        cutoff: f64,
    },
    /// Bessel, magnitude-normalised (−3.0103 dB at the cutoff).
    Bessel {
        /// 1–12.
        order: u32,
        /// Hz.
        cutoff: f64,
    },
    /// Chebyshev type I, cutoff at the passband edge.
    Chebyshev {
        /// 1–12.
        order: u32,
        /// Hz.
        cutoff: f64,
        /// Passband ripple in dB.
        ripple: f64,
    },
    /// Datasheet points (Hz, dB), rising frequency.
    Table {
        /// Points.
        points: Vec<(f64, f64)>,
    },
    /// A digital filter, edges as fractions of its stage's output rate.
    Digital {
        /// Passband edge fraction.
        passband_edge: f64,
        /// Stopband edge fraction.
        stopband_edge: f64,
        /// Stopband attenuation in dB.
        attenuation: f64,
        /// Its group delay, when given (`delay` or `delay-samples`).
        delay: Option<DigitalDelay>,
    },
    /// A sinc (CIC) decimator of this order.
    Sinc {
        /// 1–6.
        order: u32,
    },
}

/// The declared group delay of a `digital` filter.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum DigitalDelay {
    /// `delay`: a duration in seconds (≥ 0).
    Seconds(f64),
    /// `delay-samples`: samples of the output rate of the stage the filter belongs to
    /// (for a converter's own filter, of the ADC output rate); ≥ 0, may be fractional.
    Samples(f64),
}

impl DigitalDelay {
    /// The delay in seconds for a filter whose stage outputs `output_rate_hz`.
    pub fn seconds(self, output_rate_hz: f64) -> f64 {
        match self {
            DigitalDelay::Seconds(s) => s,
            DigitalDelay::Samples(n) => n / output_rate_hz,
        }
    }
}

impl Response {
    /// The `response` keyword.
    pub fn keyword(&self) -> &'static str {
        match self {
            Response::Butterworth { .. } => "butterworth",
            Response::Bessel { .. } => "bessel",
            Response::Chebyshev { .. } => "chebyshev",
            Response::Table { .. } => "table",
            Response::Digital { .. } => "digital",
            Response::Sinc { .. } => "sinc",
        }
    }

    /// Whether the response is an analog one (has poles and a phase).
    pub fn is_analog(&self) -> bool {
        matches!(
            self,
            Response::Butterworth { .. } | Response::Bessel { .. } | Response::Chebyshev { .. }
        )
    }

    /// A short description, e.g. "4th-order Butterworth at 20 kHz".
    pub fn describe(&self) -> String {
        match self {
            Response::Butterworth { order, cutoff } => {
                format!(
                    "{}-order Butterworth at {}",
                    ordinal(*order),
                    format_hz(*cutoff)
                )
            }
            Response::Bessel { order, cutoff } => {
                format!("{}-order Bessel at {}", ordinal(*order), format_hz(*cutoff))
            }
            Response::Chebyshev {
                order,
                cutoff,
                ripple,
            } => format!(
                "{}-order Chebyshev ({} dB ripple) at {}",
                ordinal(*order),
                crate::words::sig6(*ripple),
                format_hz(*cutoff)
            ),
            Response::Table { points } => format!("table of {} points", points.len()),
            Response::Digital { attenuation, .. } => {
                format!(
                    "digital filter ({} dB stopband)",
                    crate::words::sig6(*attenuation)
                )
            }
            Response::Sinc { order } => format!("{}-order sinc", ordinal(*order)),
        }
    }
}

/// `1st`, `2nd`, `3rd`, `4th` …
pub fn ordinal(n: u32) -> String {
    let suffix = match (n % 10, n % 100) {
        (1, r) if r != 11 => "st",
        (2, r) if r != 12 => "nd",
        (3, r) if r != 13 => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}
