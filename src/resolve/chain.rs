//! A channel's signal chain: its rate changes (the ADC and each decimation stage) and the
//! attenuation and phase its filters give at any frequency.

use super::{FilterOrigin, RChannel, Rig};
use crate::model::quantity::{Exact, to_f64};
use crate::model::{Filter, Response};
use crate::signal::analog::{Analog, AnalogKind};
use crate::signal::{digital, table};
use crate::source::Span;
use num_traits::CheckedDiv;

/// One rate change: the ADC (stage 0) or a decimation stage (k ≥ 1).
#[derive(Clone, Debug)]
pub struct RateChange<'a> {
    /// 0 for the ADC, k for the k-th decimation stage.
    pub stage: usize,
    /// Output rate, exact.
    pub fs: Exact,
    /// Input rate (None for the ADC).
    pub fs_in: Option<Exact>,
    /// Decimation factor (1 for the ADC).
    pub factor: u32,
    /// The YAML that sets this rate: the channel's `clock` or the stage's `factor`.
    pub span: Span,
    /// The stage's digital filter, if any (borrowed from the channel: building a chain
    /// copies no filter).
    pub filter: Option<&'a Filter>,
}

impl RateChange<'_> {
    /// Output rate in Hz.
    pub fn fs_hz(&self) -> f64 {
        to_f64(&self.fs)
    }
}

/// How a filter is placed: at the ADC, in a delta-sigma converter, or in a decimation
/// stage.
#[derive(Clone, Copy, Debug)]
pub struct Placement {
    /// The output rate of the stage the filter belongs to (for `digital` edges).
    pub output_rate: f64,
    /// The rate the filter runs at and the factor it decimates by: a decimation stage's
    /// input rate and factor, or a converter's modulator rate and oversampling ratio.
    /// A `digital` filter is periodic in that rate. `None` for an ADC-chain filter of a
    /// converter without a described modulator (its stopband value holds).
    pub stage: Option<(f64, u32)>,
}

/// Attenuation of one filter at `f` Hz.
pub fn filter_attenuation_db(r: &Response, f: f64, at: Placement) -> f64 {
    match r {
        Response::Butterworth { .. } | Response::Bessel { .. } | Response::Chebyshev { .. } => {
            analog(r).map_or(0.0, |a| a.attenuation_db(f))
        }
        Response::Table { points } => table::table_attenuation_db(points, f),
        Response::Digital {
            passband_edge,
            stopband_edge,
            attenuation,
            ..
        } => digital::digital_attenuation_db(
            passband_edge * at.output_rate,
            stopband_edge * at.output_rate,
            *attenuation,
            f,
            at.stage.map(|(fin, _)| fin),
        ),
        // A sinc filter only exists inside a decimation stage (the schema says so).
        Response::Sinc { order } => match at.stage {
            Some((fin, m)) => digital::sinc_attenuation_db(*order, m, fin, f),
            None => 0.0,
        },
    }
}

/// The analog prototype of a response, if it has one.
pub fn analog(r: &Response) -> Option<Analog> {
    let (kind, order, cutoff) = match *r {
        Response::Butterworth { order, cutoff } => (AnalogKind::Butterworth, order, cutoff),
        Response::Bessel { order, cutoff } => (AnalogKind::Bessel, order, cutoff),
        Response::Chebyshev {
            order,
            cutoff,
            ripple,
        } => (AnalogKind::Chebyshev { ripple_db: ripple }, order, cutoff),
        _ => return None,
    };
    Some(Analog {
        kind,
        order,
        cutoff_hz: cutoff,
    })
}

/// The chain of one channel.
#[derive(Clone, Debug)]
pub struct Chain<'a> {
    /// The rig.
    pub rig: &'a Rig,
    /// The channel.
    pub channel: &'a RChannel,
    /// Its rate changes, ADC first.
    pub changes: Vec<RateChange<'a>>,
}

/// Where a filter sits in a chain (decided by where it is written, never by its label).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FilterPlace {
    /// The sensor's own response.
    Sensor,
    /// The channel's own filters, or its module's.
    Front(FilterOrigin),
    /// The converter's digital filter (its module's modulator).
    Converter,
    /// The filter of decimation stage k (1-based).
    Stage(usize),
}

impl FilterPlace {
    /// The short name a contribution carries: "sensor response", "channel filter",
    /// "module filter", "converter filter", "decimation filter".
    pub fn short(self) -> &'static str {
        match self {
            FilterPlace::Sensor => "sensor response",
            FilterPlace::Front(o) => o.place(),
            FilterPlace::Converter => "converter filter",
            FilterPlace::Stage(_) => "decimation filter",
        }
    }

    /// The name with the stage: as [`FilterPlace::short`], "decimation stage k" for a
    /// stage's filter.
    pub fn name(self) -> String {
        match self {
            FilterPlace::Stage(k) => format!("decimation stage {k}"),
            other => other.short().to_string(),
        }
    }
}

/// A filter named by its place in a chain, as `inspect` and the editor show it
/// ("decimation stage 1: 5th-order sinc", "channel filter: 4th-order Butterworth at
/// 20 kHz"). The text is made only when it is shown (`Display`): analysing a channel
/// builds none.
#[derive(Clone, Debug, PartialEq)]
pub struct FilterName {
    /// Where the filter sits.
    pub place: FilterPlace,
    /// Its response.
    pub response: Response,
}

impl std::fmt::Display for FilterName {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.place.name(), self.response.describe())
    }
}

/// One contribution to a chain's attenuation, for `inspect`.
#[derive(Clone, Debug)]
pub struct Contribution {
    /// Where the filter sits in the chain.
    pub place: FilterPlace,
    /// Where the filter is written.
    pub span: Span,
    /// Attenuation in dB.
    pub db: f64,
    /// The filter's response.
    pub response: Response,
    /// Where it is placed (its rates).
    pub placement: Placement,
}

impl Contribution {
    /// What it is ("channel filter: 4th-order Butterworth at 20 kHz"), made when asked.
    pub fn what(&self) -> String {
        format!("{}: {}", self.place.short(), self.response.describe())
    }

    /// The filter named by its place ("decimation stage 2: …" for a stage's filter).
    pub fn name(&self) -> FilterName {
        FilterName {
            place: self.place,
            response: self.response.clone(),
        }
    }
}

impl<'a> Chain<'a> {
    /// The chain of a channel whose clock rate is known.
    pub fn new(rig: &'a Rig, channel: &'a RChannel) -> Option<Chain<'a>> {
        let clock = channel.clock?;
        let fs0 = rig.clocks[clock].rate?;
        Chain::with_adc_rate(rig, channel, fs0)
    }

    /// The chain of a channel sampled at `fs0` instead of its clock's rate (for trying
    /// out a clock change: every later rate follows).
    pub fn with_adc_rate(rig: &'a Rig, channel: &'a RChannel, fs0: Exact) -> Option<Chain<'a>> {
        let mut changes = vec![RateChange {
            stage: 0,
            fs: fs0,
            fs_in: None,
            factor: 1,
            span: channel
                .def
                .clock
                .as_ref()
                .map_or(channel.def.name.span, |c| c.span),
            filter: None,
        }];
        let mut fs = fs0;
        for (k, st) in channel.def.decimate.iter().enumerate() {
            // Overflow is reported by the resolver, which marks the channel.
            let next = fs.checked_div(&Exact::from_integer(st.factor.value.into()))?;
            changes.push(RateChange {
                stage: k + 1,
                fs: next,
                fs_in: Some(fs),
                factor: st.factor.value,
                span: st.factor.span,
                filter: st.filter.as_ref(),
            });
            fs = next;
        }
        Some(Chain {
            rig,
            channel,
            changes,
        })
    }

    /// The delta-sigma modulator of the channel's module, if it describes one.
    pub fn modulator(&self) -> Option<&'a crate::model::Modulator> {
        self.channel
            .module
            .and_then(|m| self.rig.modules[m].modulator.as_ref())
    }

    /// The modulator rate in Hz, if the module describes a modulator.
    pub fn modulator_rate_hz(&self) -> Option<f64> {
        self.modulator()
            .and_then(|m| m.rate_for(self.adc_rate()))
            .map(|r| to_f64(&r))
    }

    /// The final rate (after the last stage).
    pub fn final_rate(&self) -> Exact {
        self.changes.last().expect("the ADC is always there").fs
    }

    /// The ADC rate.
    pub fn adc_rate(&self) -> Exact {
        self.changes[0].fs
    }

    /// The filters seen up to and including rate change `upto`, with their placement.
    fn filters_upto(
        &self,
        upto: usize,
        rate: Option<f64>,
    ) -> Vec<(&'a Filter, Placement, FilterPlace)> {
        let fs0 = match rate {
            Some(r) if upto == 0 => r,
            _ => to_f64(&self.changes[0].fs),
        };
        let analog_at = Placement {
            output_rate: fs0,
            stage: None,
        };
        // A converter with a described modulator runs its digital filters at the
        // modulator rate, so they repeat there; without one they hold their stopband.
        let adc = match self.modulator_rate_hz() {
            Some(fmod) if fmod.is_finite() && fmod >= fs0 => Placement {
                output_rate: fs0,
                stage: Some((fmod, (fmod / fs0).round().max(1.0) as u32)),
            },
            _ => analog_at,
        };
        let mut v: Vec<(&'a Filter, Placement, FilterPlace)> = Vec::new();
        if let Some(s) = self.channel.sensor.map(|i| &self.rig.sensors[i])
            && let Some(resp) = &s.response
        {
            v.extend(
                resp.value
                    .iter()
                    .map(|f| (f, analog_at, FilterPlace::Sensor)),
            );
        }
        let origin = FilterPlace::Front(self.channel.filters_origin);
        v.extend(self.channel.filters.iter().map(|f| {
            let at = if f.response.is_analog() || matches!(f.response, Response::Table { .. }) {
                analog_at
            } else {
                adc
            };
            (f, at, origin)
        }));
        if let Some(f) = self.modulator().and_then(|m| m.filter.as_ref()) {
            v.push((f, adc, FilterPlace::Converter));
        }
        for (k, st) in self.channel.def.decimate.iter().enumerate().take(upto) {
            if let Some(f) = &st.filter {
                let ch = &self.changes[k + 1];
                let fin = to_f64(&ch.fs_in.expect("a stage has an input"));
                let at = match rate {
                    Some(r) if k + 1 == upto => Placement {
                        output_rate: r,
                        stage: Some((fin, (fin / r).round().max(1.0) as u32)),
                    },
                    _ => Placement {
                        output_rate: ch.fs_hz(),
                        stage: Some((fin, ch.factor)),
                    },
                };
                v.push((f, at, FilterPlace::Stage(k + 1)));
            }
        }
        v
    }

    /// Total attenuation at `f` Hz of everything up to and including rate change
    /// `upto` (0 = the ADC: analog filters and sensor response only).
    pub fn attenuation_db(&self, f: f64, upto: usize) -> f64 {
        self.attenuation_db_at(f, upto, None)
    }

    /// As [`Chain::attenuation_db`], with rate change `upto` moved to output rate `rate`
    /// (for trying out a fix: digital filter edges follow the rate they belong to).
    pub fn attenuation_db_at(&self, f: f64, upto: usize, rate: Option<f64>) -> f64 {
        self.filters_upto(upto, rate)
            .into_iter()
            .map(|(flt, at, _)| filter_attenuation_db(&flt.response, f, at))
            .sum()
    }

    /// Each filter's share of the attenuation at `f` up to rate change `upto`.
    pub fn contributions(&self, f: f64, upto: usize) -> Vec<Contribution> {
        self.filters_upto(upto, None)
            .into_iter()
            .map(|(flt, at, place)| Contribution {
                place,
                span: flt.span,
                db: filter_attenuation_db(&flt.response, f, at),
                response: flt.response.clone(),
                placement: at,
            })
            .collect()
    }

    /// Analog phase of the whole chain at `f` Hz, degrees: the unwrapped phase of every
    /// analog filter (sensor response, filters, analog filters in stages), continuous
    /// from 0 at DC. Digital delays are not included (see [`Chain::total_phase_deg`]).
    pub fn phase_deg(&self, f: f64) -> f64 {
        self.filters_upto(self.changes.len() - 1, None)
            .into_iter()
            .filter_map(|(flt, _, _)| analog(&flt.response))
            .map(|a| a.phase_deg(f))
            .sum()
    }

    /// Where energy at `f` Hz sits after rate changes `0..=upto`: the digital-domain
    /// frequency, folded at every rate change in turn.
    pub fn folded_through(&self, f: f64, upto: usize) -> f64 {
        self.changes
            .iter()
            .take(upto + 1)
            .fold(f, |x, rc| crate::signal::fold::fold(x, rc.fs_hz()))
    }

    /// Whether the chain has any filter that attenuates before the ADC.
    pub fn has_analog_filter(&self) -> bool {
        !self.filters_upto(0, None).is_empty()
    }

    /// The delay of every digital filter of the chain, in signal order: the converter's
    /// filters, then each decimation stage's. A `sinc` stage delays by N·(M − 1)/2
    /// samples of its input rate; a `digital` filter by its `delay` or `delay-samples`
    /// (samples of its stage's output rate), `None` when it gives neither.
    pub fn digital_delays(&self) -> Vec<StageDelay> {
        let mut v = Vec::new();
        let fs0 = to_f64(&self.adc_rate());
        let origin = FilterPlace::Front(self.channel.filters_origin);
        let adc_filters = self.channel.filters.iter().map(|f| (f, origin)).chain(
            self.modulator()
                .and_then(|m| m.filter.as_ref())
                .map(|f| (f, FilterPlace::Converter)),
        );
        for (f, place) in adc_filters {
            if let Response::Digital { delay, .. } = &f.response {
                v.push(StageDelay {
                    stage: 0,
                    filter: f.span,
                    what: FilterName {
                        place,
                        response: f.response.clone(),
                    },
                    delay_s: delay.map(|d| d.seconds(fs0)),
                    samples: delay.map(|d| (d.seconds(fs0) * fs0, fs0)),
                });
            }
        }
        for (rc, st) in self.changes.iter().skip(1).zip(&self.channel.def.decimate) {
            let Some(f) = &st.filter else { continue };
            let fin = rc.fs_in.map_or(f64::NAN, |r| to_f64(&r));
            let fout = rc.fs_hz();
            let (delay_s, samples) = match &f.response {
                Response::Sinc { order } => {
                    let n = crate::signal::digital::sinc_delay_samples(*order, rc.factor);
                    (Some(n / fin), Some((n, fin)))
                }
                Response::Digital { delay, .. } => (
                    delay.map(|d| d.seconds(fout)),
                    delay.map(|d| (d.seconds(fout) * fout, fout)),
                ),
                _ => continue,
            };
            v.push(StageDelay {
                stage: rc.stage,
                filter: f.span,
                what: FilterName {
                    place: FilterPlace::Stage(rc.stage),
                    response: f.response.clone(),
                },
                delay_s,
                samples,
            });
        }
        v
    }

    /// The sum of the known digital delays, seconds (unknown ones count as zero).
    pub fn digital_delay_s(&self) -> f64 {
        self.digital_delays().iter().filter_map(|d| d.delay_s).sum()
    }

    /// Group delay of the analog part of the chain at `f` Hz, seconds: the sum of every
    /// analog filter's closed-form group delay (`table` responses carry none).
    pub fn analog_group_delay_s(&self, f: f64) -> f64 {
        self.filters_upto(self.changes.len() - 1, None)
            .into_iter()
            .filter_map(|(flt, _, _)| analog(&flt.response))
            .map(|a| a.group_delay_s(f))
            .sum()
    }

    /// The channel's latency, seconds: its digital delays plus the analog group delay at
    /// DC (see docs/model.md).
    pub fn latency_s(&self) -> f64 {
        self.digital_delay_s() + self.analog_group_delay_s(0.0)
    }

    /// Phase of the whole chain at `f` Hz, degrees, for comparisons within a group: the
    /// unwrapped analog phase less 360°·f·(the sum of the digital delays). Never wrapped:
    /// a whole-cycle lag is a real time offset for a broadband signal.
    pub fn total_phase_deg(&self, f: f64) -> f64 {
        self.phase_deg(f) - 360.0 * f * self.digital_delay_s()
    }

    /// [`Chain::total_phase_deg`] as a function of `f`, with the chain's filters, their
    /// poles and the digital delay worked out once: the same value at every `f`, for
    /// callers that evaluate it at hundreds of frequencies (a group's phase comparison).
    pub fn total_phase_fn(&self) -> TotalPhase {
        TotalPhase {
            curves: self
                .filters_upto(self.changes.len() - 1, None)
                .into_iter()
                .filter_map(|(flt, _, _)| analog(&flt.response))
                .map(|a| a.phase_curve())
                .collect(),
            delay_s: self.digital_delay_s(),
        }
    }
    /// The worst image at rate change `upto` for a band of `band` Hz (docs/model.md
    /// §3): the frequency of the least attenuated point of every image band
    /// `[n·fs − B, n·fs + B]` (n ≥ 1) of the original axis, and the attenuation there.
    ///
    /// Each band is searched at its edges, the table points inside it, the passband
    /// zeros of Chebyshev filters inside it and the break points of the periodic digital
    /// filters (multiples of their rate, ± their edges). Bands an earlier rate change
    /// already folded (n a multiple of this stage's factor) and the modulator images
    /// (n·fs a multiple of the modulator rate, their own check) are left out. Bound:
    /// only the first band when every response keeps rising beyond it (Butterworth and
    /// Bessel, Chebyshev with its cutoff at or below fs − B, no table, no periodic
    /// digital filter); else every band starting below the last frequency where a
    /// response stops rising (a table's last point, a Chebyshev cutoff), plus the ADC
    /// rate, or the modulator rate when the converter has a filter, capped at
    /// [`MAX_IMAGE_BANDS`] bands. Ties go to the lowest frequency.
    pub fn worst_image(&self, upto: usize, band: f64) -> (f64, f64) {
        let rc = &self.changes[upto];
        let fs = rc.fs_hz();
        let filters = self.filters_upto(upto, None);
        let fs0 = to_f64(&self.adc_rate());
        let fmod = self.modulator_rate_hz();
        // Where responses stop rising, and the break points of the periodic filters.
        let mut stops_rising: f64 = 0.0;
        let mut periodic: Vec<(f64, Vec<f64>)> = Vec::new();
        let mut tables: Vec<f64> = Vec::new();
        let mut cheb_zeros: Vec<f64> = Vec::new();
        for (flt, at, _) in &filters {
            match &flt.response {
                Response::Table { points } => {
                    tables.extend(points.iter().map(|p| p.0));
                    stops_rising = stops_rising.max(points.last().map_or(0.0, |p| p.0));
                }
                Response::Chebyshev { order, cutoff, .. } => {
                    let n = f64::from(*order);
                    cheb_zeros.extend((1..=*order).map(|k| {
                        cutoff
                            * (std::f64::consts::PI * (2.0 * f64::from(k) - 1.0) / (2.0 * n)).cos()
                    }));
                    if *cutoff > fs - band {
                        stops_rising = stops_rising.max(*cutoff);
                    }
                }
                Response::Digital {
                    passband_edge,
                    stopband_edge,
                    ..
                } => {
                    if let Some((fin, _)) = at.stage {
                        let edges = vec![
                            passband_edge * at.output_rate,
                            stopband_edge * at.output_rate,
                        ];
                        periodic.push((fin, edges));
                    }
                }
                Response::Sinc { .. } => {
                    if let Some((fin, _)) = at.stage {
                        periodic.push((fin, Vec::new()));
                    }
                }
                _ => {}
            }
        }
        let simple = tables.is_empty() && stops_rising == 0.0 && periodic.is_empty();
        let converter_filter = self.modulator().is_some_and(|m| m.filter.is_some());
        let period = match fmod {
            Some(m) if converter_filter => m,
            _ => fs0,
        };
        let bound = stops_rising + period;
        let last_n = if simple {
            1
        } else {
            (((bound + band) / fs).ceil() as u64).clamp(1, MAX_IMAGE_BANDS)
        };
        let skip_factor = if upto == 0 { 0 } else { u64::from(rc.factor) };
        let mod_ratio = match fmod {
            Some(m) if upto == 0 => (m / fs).round() as u64,
            _ => 0,
        };
        // The filters are looked up once, not once per frequency tried (the same sum,
        // in the same order, as `attenuation_db`).
        let att = |f: f64| -> f64 {
            filters
                .iter()
                .map(|(flt, at, _)| filter_attenuation_db(&flt.response, f, *at))
                .sum()
        };
        let mut best: Option<(f64, f64)> = None;
        let consider = |f: f64, best: &mut Option<(f64, f64)>| {
            let a = att(f);
            match best {
                Some((bf, ba)) if a > *ba || (a == *ba && f >= *bf) => {}
                _ => *best = Some((f, a)),
            }
        };
        for n in 1..=last_n {
            if (skip_factor > 1 && n.is_multiple_of(skip_factor))
                || (mod_ratio > 1 && n.is_multiple_of(mod_ratio))
            {
                continue;
            }
            let centre = n as f64 * fs;
            let (lo, hi) = (centre - band, centre + band);
            consider(lo, &mut best);
            consider(hi, &mut best);
            for &p in tables.iter().chain(&cheb_zeros) {
                if p > lo && p < hi {
                    consider(p, &mut best);
                }
            }
            for (fin, edges) in &periodic {
                let first = (lo / fin).floor() as i64;
                let last = (hi / fin).ceil() as i64;
                for m in first..=last {
                    let base = m as f64 * fin;
                    for p in
                        std::iter::once(base).chain(edges.iter().flat_map(|e| [base - e, base + e]))
                    {
                        if p > lo && p < hi {
                            consider(p, &mut best);
                        }
                    }
                }
            }
        }
        best.unwrap_or((fs - band, att(fs - band)))
    }

    /// The worst modulator image for a band of `band` Hz: the least attenuated point of
    /// `[k·f_mod − B, k·f_mod + B]` (k ≥ 1) against the analog chain alone (sensor
    /// response and analog filters: the converter's own filter repeats there). `None`
    /// without a described modulator. Bound: the first image suffices unless a response
    /// stops rising (a table's last point, a Chebyshev cutoff) above it; then every
    /// image starting below that point plus one more. Ties go to the lowest frequency.
    pub fn worst_modulator_image(&self, band: f64) -> Option<(f64, f64)> {
        let fmod = self.modulator_rate_hz()?;
        let analog: Vec<(&Filter, Placement)> = self
            .filters_upto(0, None)
            .into_iter()
            .filter(|(f, _, _)| {
                f.response.is_analog() || matches!(f.response, Response::Table { .. })
            })
            .map(|(f, at, _)| (f, at))
            .collect();
        let att = |f: f64| -> f64 {
            analog
                .iter()
                .map(|(flt, at)| filter_attenuation_db(&flt.response, f, *at))
                .sum()
        };
        let mut points: Vec<f64> = Vec::new();
        let mut stops_rising: f64 = 0.0;
        for (flt, _) in &analog {
            match &flt.response {
                Response::Table { points: p } => {
                    points.extend(p.iter().map(|p| p.0));
                    stops_rising = stops_rising.max(p.last().map_or(0.0, |p| p.0));
                }
                Response::Chebyshev { order, cutoff, .. } => {
                    let n = f64::from(*order);
                    points.extend((1..=*order).map(|k| {
                        cutoff
                            * (std::f64::consts::PI * (2.0 * f64::from(k) - 1.0) / (2.0 * n)).cos()
                    }));
                    stops_rising = stops_rising.max(*cutoff);
                }
                _ => {}
            }
        }
        let last_k = (((stops_rising + band) / fmod).ceil() as u64 + 1).clamp(1, MAX_IMAGE_BANDS);
        let mut best: Option<(f64, f64)> = None;
        for k in 1..=last_k {
            let centre = k as f64 * fmod;
            let (lo, hi) = (centre - band, centre + band);
            for f in [lo, hi]
                .into_iter()
                .chain(points.iter().copied().filter(|&p| p > lo && p < hi))
            {
                let a = att(f);
                match best {
                    Some((bf, ba)) if a > ba || (a == ba && f >= bf) => {}
                    _ => best = Some((f, a)),
                }
            }
        }
        best
    }
}

/// The most image bands [`Chain::worst_image`] searches at one rate change.
pub const MAX_IMAGE_BANDS: u64 = 100_000;

/// The delay of one digital filter of a chain.
#[derive(Clone, Debug, PartialEq)]
pub struct StageDelay {
    /// 0 for a filter at the ADC (the converter's), k for decimation stage k.
    pub stage: usize,
    /// The filter's mapping.
    pub filter: Span,
    /// The filter, named by its place ("decimation stage 1: 5th-order sinc") when shown.
    pub what: FilterName,
    /// Its delay in seconds, `None` when the filter does not give it.
    pub delay_s: Option<f64>,
    /// The same delay in samples, and the rate they are counted at (Hz): a sinc's input
    /// rate, a `digital` filter's output rate.
    pub samples: Option<(f64, f64)>,
}

/// A chain's total phase, ready to evaluate: see [`Chain::total_phase_fn`]. Two equal
/// values describe the same curve.
#[derive(Clone, Debug, PartialEq)]
pub struct TotalPhase {
    curves: Vec<crate::signal::analog::PhaseCurve>,
    delay_s: f64,
}

impl TotalPhase {
    /// Degrees at `f` Hz, as [`Chain::total_phase_deg`].
    pub fn deg(&self, f: f64) -> f64 {
        self.curves.iter().map(|c| c.deg(f)).sum::<f64>() - 360.0 * f * self.delay_s
    }
}

/// [`max_phase_difference`] of two chains' phases; two equal curves differ by zero
/// everywhere, which the search would find at its first grid point, so it is skipped.
pub fn max_total_phase_difference(a: &TotalPhase, b: &TotalPhase, top: f64) -> (f64, f64) {
    if a == b {
        return (top / PHASE_GRID as f64, 0.0);
    }
    max_phase_difference(|f| a.deg(f), |f| b.deg(f), top)
}

/// Grid points of [`max_phase_difference`]'s first pass.
const PHASE_GRID: usize = 512;

/// Where two phase curves differ most over `(0, top]`: `(frequency, a − b)` with the
/// largest |a − b|, ties to the lowest frequency. The curves are smooth (sums of pole
/// angles and straight lines), so a grid of 512 points followed by a golden-section
/// refinement inside the best cell and its neighbours finds the maximum to far better
/// than the 0.01 deg the messages show; the band edge is always a candidate.
pub fn max_phase_difference(
    a: impl Fn(f64) -> f64,
    b: impl Fn(f64) -> f64,
    top: f64,
) -> (f64, f64) {
    const N: usize = PHASE_GRID;
    let d = |f: f64| a(f) - b(f);
    let step = top / N as f64;
    let mut best = (step, d(step));
    let mut best_i = 1;
    for i in 2..=N {
        let f = if i == N { top } else { step * i as f64 };
        let v = d(f);
        // Strictly larger only: ties stay with the lower frequency.
        if v.abs() > best.1.abs() {
            best = (f, v);
            best_i = i;
        }
    }
    // Refine between the neighbouring grid points (an interior extremum).
    if best_i < N {
        let (mut lo, mut hi) = (step * (best_i as f64 - 1.0), step * (best_i as f64 + 1.0));
        let g = (5f64.sqrt() - 1.0) / 2.0;
        let mut x1 = hi - g * (hi - lo);
        let mut x2 = lo + g * (hi - lo);
        let (mut v1, mut v2) = (d(x1).abs(), d(x2).abs());
        for _ in 0..80 {
            if v1 >= v2 {
                hi = x2;
                x2 = x1;
                v2 = v1;
                x1 = hi - g * (hi - lo);
                v1 = d(x1).abs();
            } else {
                lo = x1;
                x1 = x2;
                v1 = v2;
                x2 = lo + g * (hi - lo);
                v2 = d(x2).abs();
            }
        }
        let f = (lo + hi) / 2.0;
        let v = d(f);
        if f > 0.0 && f <= top && v.abs() > best.1.abs() {
            best = (f, v);
        }
    }
    best
}
