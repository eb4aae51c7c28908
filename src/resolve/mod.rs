//! Resolution: names, references, the clock graph with exact rates, and each channel's
//! inherited settings. Reads a rig document and the catalogs it includes; produces a
//! [`Rig`] that the rules read, plus `duplicate-name`, `unknown-reference` and
//! `clock-cycle` findings.

pub mod chain;
mod clocks;

use crate::declared;
use crate::finding::{Edit, Finding, Fix};
use crate::model::quantity::{Exact, to_f64};
use crate::model::*;
use crate::source::{FileId, Span};
use crate::words::{closest, closest_unambiguous, format_hz};
use std::collections::HashMap;

pub use chain::RateChange;

/// Thresholds after precedence (rig `defaults` over settings over built-in values).
#[derive(Clone, Debug)]
pub struct Thresholds {
    /// fs / band below this is a `sampling-margin` finding.
    pub margin: f64,
    /// Required rejection from the rig or settings, if either sets one.
    pub alias_rejection: Option<(f64, Origin)>,
    /// Droop allowed at the band edge, dB.
    pub passband_tolerance: f64,
    /// fs / band above this is an `oversampling` note.
    pub oversampling_limit: f64,
    /// Allowed phase mismatch in a group, degrees.
    pub phase_tolerance: f64,
}

impl Default for Thresholds {
    fn default() -> Self {
        Thresholds {
            margin: 2.5,
            alias_rejection: None,
            passband_tolerance: 0.5,
            oversampling_limit: 20.0,
            phase_tolerance: 2.0,
        }
    }
}

/// Thresholds a settings file may set (all optional).
#[derive(Clone, Debug, Default)]
pub struct ThresholdSettings {
    /// `margin`.
    pub margin: Option<f64>,
    /// `alias-rejection` in dB.
    pub alias_rejection: Option<f64>,
    /// `passband-tolerance` in dB.
    pub passband_tolerance: Option<f64>,
    /// `oversampling-limit`.
    pub oversampling_limit: Option<f64>,
    /// `phase-tolerance` in degrees.
    pub phase_tolerance: Option<f64>,
}

/// Where a setting came from, for help text and labels.
#[derive(Clone, Debug, PartialEq)]
pub enum Origin {
    /// Written at this span.
    At(Span, &'static str),
    /// From the settings file.
    Settings,
    /// Derived from the module's `adc-bits` (ideal dynamic range).
    AdcBits(Span, u32),
    /// The built-in default.
    Builtin,
}

impl Origin {
    /// A short phrase: "the channel's `alias-rejection`", "foldcheck.toml" …
    pub fn describe(&self) -> String {
        match self {
            Origin::At(_, what) => what.to_string(),
            Origin::Settings => "the settings file".to_string(),
            Origin::AdcBits(_, bits) => format!("the ideal dynamic range of a {bits}-bit ADC"),
            Origin::Builtin => "the built-in default".to_string(),
        }
    }

    /// The span, if the value is written in a rig or catalog.
    pub fn span(&self) -> Option<Span> {
        match self {
            Origin::At(s, _) | Origin::AdcBits(s, _) => Some(*s),
            _ => None,
        }
    }
}

/// A clock after resolution.
#[derive(Clone, Debug)]
pub struct RClock {
    /// What the file says.
    pub def: Clock,
    /// The source clock, if derived and found.
    pub parent: Option<usize>,
    /// Exact rate in Hz, when it can be worked out.
    pub rate: Option<Exact>,
    /// The root of its tree.
    pub root: Option<usize>,
    /// Part of a dependency loop (reported once as `clock-cycle`).
    pub in_cycle: bool,
}

/// The band of a channel and where it comes from.
#[derive(Clone, Debug)]
pub struct Band {
    /// Hz, exact.
    pub hz: Exact,
    /// Where it is written (the channel's `band` or the sensor's `bandwidth`).
    pub span: Span,
    /// Whether it is the sensor's bandwidth (the channel gives none).
    pub from_sensor: bool,
}

/// Whose ADC filter chain a channel uses.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FilterOrigin {
    /// The channel's own `filters` (or none at all).
    Channel,
    /// Its module's `filters` (the channel declares none).
    Module,
}

impl FilterOrigin {
    /// "channel filter" or "module filter", for naming a filter's place in a chain.
    pub fn place(self) -> &'static str {
        match self {
            FilterOrigin::Channel => "channel filter",
            FilterOrigin::Module => "module filter",
        }
    }
}

/// A channel after resolution.
#[derive(Clone, Debug)]
pub struct RChannel {
    /// What the file says.
    pub def: Channel,
    /// Index of its clock in [`Rig::clocks`].
    pub clock: Option<usize>,
    /// Index of its sensor.
    pub sensor: Option<usize>,
    /// Index of its module.
    pub module: Option<usize>,
    /// Band, if known.
    pub band: Option<Band>,
    /// Its analog/ADC-level filter chain (own or the module's).
    pub filters: Vec<Filter>,
    /// Where that chain is written, if anywhere.
    pub filters_span: Option<(Span, &'static str)>,
    /// Whose chain it is: the channel's own or its module's.
    pub filters_origin: FilterOrigin,
    /// Required rejection in dB and where it comes from.
    pub rejection: (f64, Origin),
    /// Stored bits per sample.
    pub sample_bits: u32,
    /// Every reference resolved and no value broken: the physics rules may run.
    pub ok: bool,
}

/// A rig and what it includes, resolved.
#[derive(Clone, Debug)]
pub struct Rig {
    /// The rig file.
    pub file: FileId,
    /// Its `rig:` name.
    pub name: Option<Sp<String>>,
    /// Its document span.
    pub span: Span,
    /// Effective thresholds.
    pub thresholds: Thresholds,
    /// Where each threshold came from, for labels (`margin`, …).
    pub threshold_spans: HashMap<&'static str, Span>,
    /// Clocks of the rig and its catalogs.
    pub clocks: Vec<RClock>,
    /// Sensors.
    pub sensors: Vec<Sensor>,
    /// Modules.
    pub modules: Vec<Module>,
    /// Channels.
    pub channels: Vec<RChannel>,
    /// Groups.
    pub groups: Vec<Group>,
    /// Group members resolved to channel indexes (unknown names left out).
    pub group_members: Vec<Vec<usize>>,
    /// Disturbances.
    pub disturbances: Vec<Disturbance>,
    /// Channels each disturbance reaches, ascending and without repeats (see
    /// [`Rig::reaches`]).
    pub disturbance_targets: Vec<Vec<usize>>,
    /// Logger limits.
    pub logger: Option<Logger>,
    /// How many channels sample on each clock, directly or through derived clocks.
    pub fanout: Vec<usize>,
}

impl Rig {
    /// Whether disturbance `d` reaches channel `channel` (a binary search: a rig of
    /// 100 000 channels asks it for every channel).
    pub fn reaches(&self, d: usize, channel: usize) -> bool {
        self.disturbance_targets
            .get(d)
            .is_some_and(|t| t.binary_search(&channel).is_ok())
    }

    /// A channel and the members of every group it belongs to (indices into
    /// [`Rig::channels`], sorted): what must be analysed to show that channel.
    pub fn scope_of(&self, channel: usize) -> Vec<usize> {
        let mut out = vec![channel];
        for members in self.group_members.iter().filter(|m| m.contains(&channel)) {
            out.extend(members);
        }
        out.sort_unstable();
        out.dedup();
        out
    }

    /// The clock path from the root to `clock` (inclusive), root first.
    pub fn clock_path(&self, clock: usize) -> Vec<usize> {
        let mut path = vec![clock];
        let mut at = clock;
        while let Some(p) = self.clocks[at].parent {
            if path.contains(&p) || self.clocks[at].in_cycle {
                break;
            }
            path.push(p);
            at = p;
        }
        path.reverse();
        path
    }

    /// Whether `clock` is `ancestor` or derived from it.
    pub fn derives_from(&self, clock: usize, ancestor: usize) -> bool {
        self.clock_path(clock).contains(&ancestor)
    }

    /// The channels sampling on `clock` or on a clock derived from it.
    pub fn channels_under(&self, clock: usize) -> Vec<usize> {
        self.channels
            .iter()
            .enumerate()
            .filter(|(_, c)| c.clock.is_some_and(|k| self.derives_from(k, clock)))
            .map(|(i, _)| i)
            .collect()
    }

    /// The channel's ADC rate in Hz, exact.
    pub fn adc_rate(&self, ch: &RChannel) -> Option<Exact> {
        self.clocks[ch.clock?].rate
    }

    /// Find a channel by name.
    pub fn channel(&self, name: &str) -> Option<usize> {
        self.channels.iter().position(|c| c.def.name.value == name)
    }
}

struct Names<'a> {
    section: &'static str,
    seen: HashMap<&'a str, (usize, Span)>,
    /// A failed include might have defined names of this section: a miss is recorded
    /// in `deferred` instead of being reported.
    open: bool,
    deferred: std::cell::RefCell<Vec<Span>>,
    /// The rig file (its definitions are read first).
    rig: FileId,
}

impl<'a> Names<'a> {
    fn new(section: &'static str, rig: FileId) -> Self {
        Names {
            section,
            seen: HashMap::new(),
            open: false,
            deferred: std::cell::RefCell::new(Vec::new()),
            rig,
        }
    }

    /// Register a name; a second definition is a `duplicate-name` finding.
    fn add(&mut self, name: &'a Sp<String>, index: usize, out: &mut Vec<Finding>) -> bool {
        if let Some((_, first)) = self.seen.get(name.value.as_str()) {
            // The rig is read first, so its definition is `first` when a catalog defines
            // the name again; the rig's is the one to rename (the catalog serves other
            // rigs), so the finding is filed there.
            let (again, first) = if first.file != name.span.file && first.file == self.rig {
                (*first, name.span)
            } else {
                (name.span, *first)
            };
            let first = &first;
            out.push(
                declared::DUPLICATE_NAME
                    .finding(
                        again,
                        "defined again here",
                        format!(
                            "the {} name `{}` is defined twice",
                            self.section, name.value
                        ),
                    )
                    .with_label(*first, "first defined here")
                    .with_help(format!(
                        "rename one of them; {} names must be unique across a rig and its includes",
                        self.section
                    )),
            );
            return false;
        }
        self.seen.insert(&name.value, (index, name.span));
        true
    }

    fn get(&self, name: &str) -> Option<usize> {
        self.seen.get(name).map(|(i, _)| *i)
    }

    fn lookup(&self, what: &str, r: &Sp<String>, out: &mut Vec<Finding>) -> Option<usize> {
        if let Some(i) = self.get(&r.value) {
            return Some(i);
        }
        if self.open {
            self.deferred.borrow_mut().push(r.span);
            return None;
        }
        let mut f = declared::UNKNOWN_REFERENCE.finding(
            r.span,
            format!("no {} of this name", self.section),
            format!(
                "{what} names the {} `{}`, which is not defined",
                self.section, r.value
            ),
        );
        let generic = if self.seen.is_empty() {
            None
        } else {
            let mut known: Vec<&str> = self.seen.keys().copied().collect();
            known.sort_unstable();
            known.truncate(8);
            Some(format!("defined {}s: {}", self.section, known.join(", ")))
        };
        // An unambiguous closest name (strictly closer than every other) is proposed as
        // a fix; verification keeps it only if the rig is then clean of new problems.
        if let Some(best) = closest_unambiguous(&r.value, self.seen.keys().copied())
            && let Some(edit) = Edit::replace_spanned(r.span, &r.value, best)
        {
            f = f.with_fix_and_help(
                Fix {
                    description: format!("name the {} `{best}`", self.section),
                    edits: vec![edit],
                },
                format!("did you mean `{best}`?"),
                generic,
            );
            out.push(f);
            return None;
        }
        f.help = Some(match closest(&r.value, self.seen.keys().copied()) {
            Some(best) => format!("did you mean `{best}`?"),
            None if self.seen.is_empty() => {
                format!("no {} is defined in this rig or its includes", self.section)
            }
            None => {
                let mut known: Vec<&str> = self.seen.keys().copied().collect();
                known.sort_unstable();
                known.truncate(8);
                format!("defined {}s: {}", self.section, known.join(", "))
            }
        });
        out.push(f);
        None
    }
}

/// Resolve a rig. `docs[0]` is the rig file; the rest are the catalogs it includes
/// (in include order). Returns the rig and the resolution findings.
pub fn resolve(docs: &[&Document], settings: &ThresholdSettings) -> (Rig, Vec<Finding>) {
    let (rig, out, _) = resolve_incomplete(docs, settings, false);
    (rig, out)
}

/// What resolution left unchecked because an include failed.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Unchecked {
    /// References to clocks, sensors or modules that are defined nowhere that was read.
    pub references: usize,
    /// The channels left out because of them, in document order.
    pub channels: Vec<String>,
}

/// As [`resolve`], for a rig one of whose includes failed (`incomplete`): references
/// to clocks, sensors and modules that nothing read defines are not reported one by one
/// (the failed include may define them) but counted, with the channels they leave out
/// (docs/format.md, "include").
pub fn resolve_incomplete(
    docs: &[&Document],
    settings: &ThresholdSettings,
    incomplete: bool,
) -> (Rig, Vec<Finding>, Unchecked) {
    let mut out = Vec::new();
    let rig_doc = docs[0];

    // Sections across the rig and its includes: the rig's own entries first, so a
    // duplicate is reported in the catalog, whose entry is the one left out.
    let order: Vec<&Document> = docs.to_vec();
    let mut clock_names = Names::new("clock", rig_doc.file);
    let mut clocks_def: Vec<Clock> = Vec::new();
    let mut sensor_names = Names::new("sensor", rig_doc.file);
    let mut sensors: Vec<Sensor> = Vec::new();
    let mut module_names = Names::new("module", rig_doc.file);
    let mut modules: Vec<Module> = Vec::new();
    clock_names.open = incomplete;
    sensor_names.open = incomplete;
    module_names.open = incomplete;
    for doc in &order {
        for c in &doc.clocks {
            if clock_names.add(&c.name, clocks_def.len(), &mut out) {
                clocks_def.push(c.clone());
            }
        }
        for s in &doc.sensors {
            if sensor_names.add(&s.name, sensors.len(), &mut out) {
                sensors.push(s.clone());
            }
        }
        for m in &doc.modules {
            if module_names.add(&m.name, modules.len(), &mut out) {
                modules.push(m.clone());
            }
        }
    }

    let clocks = clocks::resolve_clocks(
        &clocks_def,
        &|r: &Sp<String>, out: &mut Vec<Finding>| {
            clock_names.lookup("the clock's `source`", r, out)
        },
        &mut out,
    );

    // Thresholds: rig defaults > settings > built-in.
    let d = &rig_doc.defaults;
    let mut threshold_spans = HashMap::new();
    let mut pick =
        |key: &'static str, rig: &Option<Sp<f64>>, set: Option<f64>, builtin: f64| -> f64 {
            if let Some(v) = rig {
                threshold_spans.insert(key, v.span);
                v.value
            } else {
                set.unwrap_or(builtin)
            }
        };
    let base = Thresholds::default();
    let thresholds = Thresholds {
        margin: pick("margin", &d.margin, settings.margin, base.margin),
        alias_rejection: match (&d.alias_rejection, settings.alias_rejection) {
            (Some(v), _) => Some((
                v.value,
                Origin::At(v.span, "the rig's `defaults.alias-rejection`"),
            )),
            (None, Some(v)) => Some((v, Origin::Settings)),
            _ => None,
        },
        passband_tolerance: pick(
            "passband-tolerance",
            &d.passband_tolerance,
            settings.passband_tolerance,
            base.passband_tolerance,
        ),
        oversampling_limit: pick(
            "oversampling-limit",
            &d.oversampling_limit,
            settings.oversampling_limit,
            base.oversampling_limit,
        ),
        phase_tolerance: pick(
            "phase-tolerance",
            &d.phase_tolerance,
            settings.phase_tolerance,
            base.phase_tolerance,
        ),
    };

    // Channels.
    let mut channel_names = Names::new("channel", rig_doc.file);
    let mut channels: Vec<RChannel> = Vec::new();
    // (module, ADC rate) pairs whose modulator rate is no multiple of the ADC rate,
    // with the first channel concerned and how many more.
    let mut modulator_misfits: Vec<((usize, Exact), String, usize)> = Vec::new();
    // (module, ADC rate) pairs whose converter filter's stopband edge is not below half
    // the modulator rate given by `rate` (with an `oversampling-ratio` the builder
    // checks it): the first channel and how many more.
    let mut modulator_edges: Vec<((usize, Exact), String, usize)> = Vec::new();
    for c in &rig_doc.channels {
        if !channel_names.add(&c.name, channels.len(), &mut out) {
            continue;
        }
        let what = format!("channel `{}`", c.name.value);
        let clock = c
            .clock
            .as_ref()
            .and_then(|r| clock_names.lookup(&what, r, &mut out));
        let sensor = c
            .sensor
            .as_ref()
            .and_then(|r| sensor_names.lookup(&what, r, &mut out));
        let module = c
            .module
            .as_ref()
            .and_then(|r| module_names.lookup(&what, r, &mut out));
        let refs_ok = c.clock.is_some()
            && clock.is_some()
            && (c.sensor.is_none() || sensor.is_some())
            && (c.module.is_none() || module.is_some());
        let m = module.map(|i| &modules[i]);
        let s = sensor.map(|i| &sensors[i]);
        let band = match (&c.band, s.and_then(|s| s.bandwidth.as_ref())) {
            (Some(b), _) => Some(Band {
                hz: b.value,
                span: b.span,
                from_sensor: false,
            }),
            (None, Some(bw)) => Some(Band {
                hz: bw.value,
                span: bw.span,
                from_sensor: true,
            }),
            _ => None,
        };
        let (filters, filters_span, filters_origin) =
            match (&c.filters, m.and_then(|m| m.filters.as_ref())) {
                (Some(f), _) => (
                    f.value.clone(),
                    Some((f.span, "the channel's `filters`")),
                    FilterOrigin::Channel,
                ),
                (None, Some(f)) => (
                    f.value.clone(),
                    Some((f.span, "the module's `filters`")),
                    FilterOrigin::Module,
                ),
                _ => (Vec::new(), None, FilterOrigin::Channel),
            };
        let rejection = if let Some(r) = &c.alias_rejection {
            (
                r.value,
                Origin::At(r.span, "the channel's `alias-rejection`"),
            )
        } else if let Some(r) = m.and_then(|m| m.alias_rejection.as_ref()) {
            (
                r.value,
                Origin::At(r.span, "the module's `alias-rejection`"),
            )
        } else if let Some((v, o)) = &thresholds.alias_rejection {
            (*v, o.clone())
        } else if let Some(bits) = m.and_then(|m| m.adc_bits.as_ref()) {
            (
                crate::signal::fold::ideal_dynamic_range_db(bits.value),
                Origin::AdcBits(bits.span, bits.value),
            )
        } else {
            (40.0, Origin::Builtin)
        };
        let sample_bits = c
            .sample_bits
            .as_ref()
            .map(|b| b.value)
            .or_else(|| m.and_then(|m| m.sample_bits.as_ref()).map(|b| b.value))
            .or_else(|| {
                m.and_then(|m| m.adc_bits.as_ref())
                    .map(|b| b.value.div_ceil(8) * 8)
            })
            .unwrap_or(32);
        let clock_ok = clock.is_some_and(|k| clocks[k].rate.is_some());
        // The decimated rates must stay representable exactly.
        let mut rate = clock.and_then(|k| clocks[k].rate);
        let mut stages_ok = true;
        for st in &c.decimate {
            let Some(r) = rate else { break };
            rate = num_traits::CheckedDiv::checked_div(
                &r,
                &Exact::from_integer(st.factor.value.into()),
            );
            if rate.is_none() {
                stages_ok = false;
                out.push(declared::QUANTITY.finding(
st.factor.span, "rate out of range",
                    format!("the rate after this decimation stage of `{}` cannot be represented exactly: its fraction outgrows 128 bits", c.name.value),
                ));
            }
        }
        // A delta-sigma modulator runs at an integer multiple of the ADC output rate.
        let mut modulator_ok = true;
        if let (Some(mi), Some(adc)) = (module, clock.and_then(|k| clocks[k].rate))
            && let Some(md) = &modules[mi].modulator
            && let ModulatorRate::Rate(r) = &md.rate
            && !(r.value / adc).is_integer()
        {
            modulator_ok = false;
            let key = (mi, adc);
            match modulator_misfits.iter_mut().find(|(k, _, _)| *k == key) {
                Some((_, _, others)) => *others += 1,
                None => modulator_misfits.push((key, c.name.value.clone(), 0)),
            }
        }
        // Its converter filter's edges are fractions of the ADC rate and the filter runs
        // at the modulator rate: the stopband edge must lie below half of it.
        if modulator_ok
            && let (Some(mi), Some(adc)) = (module, clock.and_then(|k| clocks[k].rate))
            && let Some(md) = &modules[mi].modulator
            && let Some(Filter {
                response: Response::Digital { stopband_edge, .. },
                ..
            }) = &md.filter
            && *stopband_edge * 2.0 >= oversampling_ratio(md, adc)
        {
            modulator_ok = false;
            let key = (mi, adc);
            match modulator_edges.iter_mut().find(|(k, _, _)| *k == key) {
                Some((_, _, others)) => *others += 1,
                None => modulator_edges.push((key, c.name.value.clone(), 0)),
            }
        }
        channels.push(RChannel {
            def: c.clone(),
            clock,
            sensor,
            module,
            band,
            filters,
            filters_span,
            filters_origin,
            rejection,
            sample_bits,
            ok: refs_ok && clock_ok && stages_ok && modulator_ok && !c.broken,
        });
    }
    for ((mi, adc), first, others) in modulator_misfits {
        let md = modules[mi]
            .modulator
            .as_ref()
            .expect("only modules with a modulator are listed");
        let rate = md.rate_for(adc).map_or(f64::NAN, |r| to_f64(&r));
        let users = match others {
            0 => format!("channel `{first}`"),
            n => format!("channel `{first}` and {n} more"),
        };
        let ratio = rate / to_f64(&adc);
        out.push(
            declared::QUANTITY.finding(
md.rate_span(), "not a multiple of the ADC rate",
                format!(
                    "the modulator rate {} of module `{}` is not an integer multiple of the {} ADC rate of {users}",
                    format_hz(rate),
                    modules[mi].name.value,
                    format_hz(to_f64(&adc))
                ),
            )
            .with_help(format!(
                "a delta-sigma converter's output rate is its modulator rate divided by a whole number: write `oversampling-ratio: {}` or a `rate` of {}",
                ratio.round().max(1.0),
                format_hz(ratio.round().max(1.0) * to_f64(&adc))
            )),
        );
    }

    for ((mi, adc), first, others) in modulator_edges {
        let md = modules[mi]
            .modulator
            .as_ref()
            .expect("only modules with a modulator are listed");
        let Some(filter) = &md.filter else { continue };
        let Response::Digital { stopband_edge, .. } = filter.response else {
            continue;
        };
        let ratio = md.rate_for(adc).map_or(f64::NAN, |r| to_f64(&(r / adc)));
        let users = match others {
            0 => format!("channel `{first}`"),
            n => format!("channel `{first}` and {n} more"),
        };
        out.push(
            declared::SCHEMA
                .finding(
                    filter.values.stopband.unwrap_or(filter.span),
                    "not below half the modulator rate",
                    format!(
                        "the stopband edge {stopband_edge} of module `{}`'s converter filter is not below half its input rate ({} in units of the {} ADC rate of {users}, with the modulator at {})",
                        modules[mi].name.value,
                        ratio / 2.0,
                        format_hz(to_f64(&adc)),
                        format_hz(ratio * to_f64(&adc)),
                    ),
                )
                .with_label(md.rate_span(), "modulator rate")
                .with_help("the converter's filter runs at the modulator rate and its edges are fractions of the ADC output rate: its stopband must start below half the oversampling ratio"),
        );
    }

    let mut group_names = Names::new("group", rig_doc.file);
    let mut groups = Vec::new();
    let mut group_members = Vec::new();
    for g in &rig_doc.groups {
        if !group_names.add(&g.name, groups.len(), &mut out) {
            continue;
        }
        let what = format!("group `{}`", g.name.value);
        let members = g
            .channels
            .iter()
            .filter_map(|r| channel_names.lookup(&what, r, &mut out))
            .collect();
        groups.push(g.clone());
        group_members.push(members);
    }

    let mut dist_names = Names::new("disturbance", rig_doc.file);
    let mut disturbances = Vec::new();
    let mut disturbance_targets = Vec::new();
    for d in &rig_doc.disturbances {
        if !dist_names.add(&d.name, disturbances.len(), &mut out) {
            continue;
        }
        let what = format!("disturbance `{}`", d.name.value);
        let targets = match &d.channels {
            Some(list) => {
                let mut t: Vec<usize> = list
                    .iter()
                    .filter_map(|r| channel_names.lookup(&what, r, &mut out))
                    .collect();
                t.sort_unstable();
                t.dedup();
                t
            }
            None => (0..channels.len()).collect(),
        };
        disturbances.push(d.clone());
        disturbance_targets.push(targets);
    }

    let mut rig = Rig {
        fanout: vec![0; clocks.len()],
        file: rig_doc.file,
        name: rig_doc.name.clone(),
        span: rig_doc.span,
        thresholds,
        threshold_spans,
        clocks,
        sensors,
        modules,
        channels,
        groups,
        group_members,
        disturbances,
        disturbance_targets,
        logger: rig_doc.logger.clone(),
    };
    for ci in 0..rig.channels.len() {
        if let Some(k) = rig.channels[ci].clock {
            for c in rig.clock_path(k) {
                rig.fanout[c] += 1;
            }
        }
    }
    let unchecked = unchecked(
        &rig,
        &[&clock_names, &sensor_names, &module_names],
        &rig_doc.channels,
    );
    (rig, out, unchecked)
}

/// The references deferred because of a failed include, and the channels they leave
/// out: a channel with a deferred reference of its own, or whose clock derives from a
/// clock with a deferred `source`.
/// The ratio of a modulator's rate to the ADC output rate `adc`: the oversampling ratio
/// as written, or the written `rate` divided by the ADC rate (NaN when that overflows).
fn oversampling_ratio(md: &Modulator, adc: Exact) -> f64 {
    match &md.rate {
        ModulatorRate::Ratio(k) => k.value as f64,
        ModulatorRate::Rate(_) => md.rate_for(adc).map_or(f64::NAN, |r| to_f64(&(r / adc))),
    }
}

fn unchecked(rig: &Rig, names: &[&Names], defs: &[Channel]) -> Unchecked {
    let deferred: Vec<Span> = names
        .iter()
        .flat_map(|n| n.deferred.borrow().clone())
        .collect();
    if deferred.is_empty() {
        return Unchecked::default();
    }
    let clock_open = |k: usize| {
        rig.clock_path(k)
            .iter()
            .any(|&c| match &rig.clocks[c].def.def {
                ClockDef::Derived { source, .. } => deferred.contains(&source.span),
                _ => false,
            })
    };
    let mut channels = Vec::new();
    for c in defs {
        let own = [&c.clock, &c.sensor, &c.module]
            .into_iter()
            .flatten()
            .any(|r| deferred.contains(&r.span));
        let via_clock = rig
            .channel(&c.name.value)
            .and_then(|i| rig.channels[i].clock)
            .is_some_and(clock_open);
        if (own || via_clock) && !channels.contains(&c.name.value) {
            channels.push(c.name.value.clone());
        }
    }
    Unchecked {
        references: deferred.len(),
        channels,
    }
}
