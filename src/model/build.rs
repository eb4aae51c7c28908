//! YAML node tree → [`Document`].
//!
//! Shape problems (wrong types, unknown or missing keys) are the schema's to report;
//! here a value that cannot be read is left out and its owner marked broken, so the
//! physics rules skip it. Quantities are parsed here and their problems reported as
//! `quantity` findings.

use super::quantity::{self, Exact, Kind};
use super::*;
use crate::declared;
use crate::finding::{Edit, Finding, Fix};
use crate::source::yaml::{Node, NodeKind};
use crate::source::{FileId, Span};

/// Reads one document.
pub struct Builder<'a> {
    file: FileId,
    text: &'a str,
    /// Findings produced while reading (`quantity`).
    pub findings: Vec<Finding>,
    broken: bool,
    /// While reading a decimation stage's filter: the stage's factor; while reading a
    /// converter's filter with an `oversampling-ratio`: that ratio. A `digital` filter's
    /// stopband edge must lie below half of it (half the input rate, in units of the
    /// output rate).
    rate_ratio: Option<u64>,
}

/// Build a document from its root node. Returns the document and the `quantity`
/// findings met on the way.
pub fn build(file: FileId, text: &str, role: Role, root: &Node) -> (Document, Vec<Finding>) {
    let mut b = Builder {
        file,
        text,
        findings: Vec::new(),
        broken: false,
        rate_ratio: None,
    };
    let doc = b.document(role, root);
    (doc, b.findings)
}

impl<'a> Builder<'a> {
    fn document(&mut self, role: Role, root: &Node) -> Document {
        let mut doc = Document {
            file: self.file,
            role,
            span: root.span,
            name: None,
            includes: Vec::new(),
            defaults: Defaults::default(),
            clocks: Vec::new(),
            sensors: Vec::new(),
            modules: Vec::new(),
            channels: Vec::new(),
            groups: Vec::new(),
            disturbances: Vec::new(),
            logger: None,
            rig_only_keys: Vec::new(),
        };
        let Some(entries) = root.as_map() else {
            return doc;
        };
        for (k, v) in entries {
            let Some(key) = k.as_str() else { continue };
            match key {
                "rig" | "catalog" => doc.name = self.string(v),
                "include" => doc.includes = self.list(v, |b, n| b.string(n)),
                "defaults" => doc.defaults = self.defaults(v),
                "clocks" => doc.clocks = self.list(v, Self::clock),
                "sensors" => doc.sensors = self.list(v, Self::sensor),
                "modules" => doc.modules = self.list(v, Self::module),
                "channels" => doc.channels = self.list(v, Self::channel),
                "groups" => doc.groups = self.list(v, Self::group),
                "disturbances" => doc.disturbances = self.list(v, Self::disturbance),
                "logger" => doc.logger = self.logger(v),
                _ => {}
            }
            if matches!(
                key,
                "channels" | "groups" | "disturbances" | "logger" | "defaults"
            ) {
                doc.rig_only_keys.push((key.to_string(), k.span));
            }
        }
        doc
    }

    fn list<T>(
        &mut self,
        node: &Node,
        mut item: impl FnMut(&mut Self, &Node) -> Option<T>,
    ) -> Vec<T> {
        node.as_seq()
            .map(|items| items.iter().filter_map(|n| item(self, n)).collect())
            .unwrap_or_default()
    }

    /// Run `f` with a fresh "broken" flag and return the flag it left.
    fn scoped<T>(&mut self, f: impl FnOnce(&mut Self) -> T) -> (T, bool) {
        let outer = std::mem::replace(&mut self.broken, false);
        let value = f(self);
        let broken = std::mem::replace(&mut self.broken, outer);
        self.broken |= broken;
        (value, broken)
    }

    fn string(&mut self, node: &Node) -> Option<Sp<String>> {
        match &node.kind {
            NodeKind::Str(s) => Some(Sp::new(s.clone(), node.span)),
            _ => {
                self.broken = true;
                None
            }
        }
    }

    fn strings(&mut self, node: &Node) -> Option<Vec<Sp<String>>> {
        if node.as_seq().is_none() {
            self.broken = true;
            return None;
        }
        Some(self.list(node, |b, n| b.string(n)))
    }

    fn uint(&mut self, node: &Node, min: u64, max: u64) -> Option<Sp<u64>> {
        match node.kind {
            NodeKind::Int(i) if i >= min as i128 && i <= max as i128 => {
                Some(Sp::new(i as u64, node.span))
            }
            // JSON Schema's "integer" admits 4.0: so do we.
            NodeKind::Float(f) if f.fract() == 0.0 && f >= min as f64 && f <= max as f64 => {
                Some(Sp::new(f as u64, node.span))
            }
            _ => {
                self.broken = true;
                None
            }
        }
    }

    fn small(&mut self, node: &Node, min: u32, max: u32) -> Option<Sp<u32>> {
        self.uint(node, min.into(), max.into())
            .map(|v| Sp::new(v.value as u32, v.span))
    }

    fn number(&mut self, node: &Node) -> Option<Sp<f64>> {
        match node.kind {
            NodeKind::Int(i) => Some(Sp::new(i as f64, node.span)),
            NodeKind::Float(f) if f.is_finite() => Some(Sp::new(f, node.span)),
            _ => {
                self.broken = true;
                None
            }
        }
    }

    /// The text a quantity was written with: the string, or a number's source text.
    fn quantity_text(&self, node: &Node) -> Option<String> {
        match &node.kind {
            NodeKind::Str(s) => Some(s.clone()),
            NodeKind::Int(_) | NodeKind::Float(_) => {
                let written = self
                    .text
                    .get(node.span.start as usize..node.span.end as usize)
                    .unwrap_or("");
                // An alias (`*f`) or a merged entry (`<<: *base`) has its span at the
                // alias, not at the number: then the number is written out again.
                if written.starts_with(|c: char| c.is_ascii_digit() || "+-.".contains(c)) {
                    Some(written.to_string())
                } else {
                    Some(match node.kind {
                        NodeKind::Int(i) => i.to_string(),
                        NodeKind::Float(f) => f.to_string(),
                        _ => unreachable!("matched above"),
                    })
                }
            }
            _ => None,
        }
    }

    /// Parse a quantity; `positive` refuses zero and negative values.
    fn quantity(&mut self, node: &Node, kind: Kind, positive: bool) -> Option<Sp<Exact>> {
        let Some(text) = self.quantity_text(node) else {
            self.broken = true;
            return None;
        };
        let result = quantity::parse(&text, kind).and_then(|v| {
            if positive {
                quantity::check_positive(&v, &text, kind).map(|_| v)
            } else {
                Ok(v)
            }
        });
        match result {
            Ok(v) => Some(Sp::new(v, node.span)),
            Err(e) => {
                self.broken = true;
                let label = match kind {
                    Kind::Frequency => "expected a frequency",
                    Kind::Level => "expected a level in dB",
                    Kind::Phase => "expected a phase in deg",
                    Kind::DataSize => "expected a data size",
                    Kind::DataRate => "expected a data rate",
                    Kind::Duration => "expected a duration",
                };
                let mut f = declared::QUANTITY
                    .finding(node.span, label, e.message)
                    .with_help_opt(e.help);
                // A unit in the wrong case has one right spelling: propose that edit
                // (kept only if verification confirms it). A plain or quoted string
                // is edited in place; a number's text never holds a unit.
                if let (Some((range, right)), NodeKind::Str(_)) = (e.unit_fix, &node.kind) {
                    let wrong = &text[range.clone()];
                    if let Some(edit) =
                        Edit::replace_within(self.text, node.span, &text, range, right)
                    {
                        f.help_without_fix = Some(format!(
                            "units are case-sensitive: use one of {}",
                            kind.units()
                                .iter()
                                .map(|u| u.0)
                                .collect::<Vec<_>>()
                                .join(" ")
                        ));
                        f.fix = Some(Fix {
                            description: format!("write the unit `{wrong}` as `{right}`"),
                            edits: vec![edit],
                        });
                    }
                }
                self.findings.push(f);
                None
            }
        }
    }

    fn quantity_f64(&mut self, node: &Node, kind: Kind, positive: bool) -> Option<Sp<f64>> {
        self.quantity(node, kind, positive)
            .map(|q| Sp::new(quantity::to_f64(&q.value), q.span))
    }

    fn hz(&mut self, node: &Node) -> Option<Sp<Exact>> {
        self.quantity(node, Kind::Frequency, true)
    }

    fn hz_f64(&mut self, node: &Node) -> Option<Sp<f64>> {
        self.quantity_f64(node, Kind::Frequency, true)
    }

    fn db(&mut self, node: &Node) -> Option<Sp<f64>> {
        self.quantity_f64(node, Kind::Level, false)
    }

    fn db_positive(&mut self, node: &Node) -> Option<Sp<f64>> {
        self.quantity_f64(node, Kind::Level, true)
    }

    fn entries<'n>(&mut self, node: &'n Node) -> &'n [(Node, Node)] {
        match node.as_map() {
            Some(m) => m,
            None => {
                self.broken = true;
                &[]
            }
        }
    }

    fn defaults(&mut self, node: &Node) -> Defaults {
        let mut d = Defaults::default();
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "margin" => d.margin = self.number(v),
                "alias-rejection" => d.alias_rejection = self.db_positive(v),
                "passband-tolerance" => d.passband_tolerance = self.db_positive(v),
                "oversampling-limit" => d.oversampling_limit = self.number(v),
                "phase-tolerance" => d.phase_tolerance = self.quantity_f64(v, Kind::Phase, true),
                _ => {}
            }
        }
        d
    }

    fn clock(&mut self, node: &Node) -> Option<Clock> {
        let mut name = None;
        let mut frequency = None;
        let mut source = None;
        let mut divide = None;
        let mut multiply = None;
        let (_, broken) = self.scoped(|b| {
            for (k, v) in b.entries(node) {
                match k.as_str().unwrap_or("") {
                    "name" => name = b.string(v),
                    "frequency" => frequency = b.hz(v),
                    "source" => source = b.string(v),
                    "divide" => divide = b.uint(v, 1, u32::MAX.into()),
                    "multiply" => multiply = b.uint(v, 1, u32::MAX.into()),
                    k if k.starts_with("x-") => {}
                    // An unknown key (reported by the schema), e.g. the `2 kHz` that a
                    // decimal comma splits off `{ frequency: 51,2 kHz }`: the clock's
                    // rate is not to be trusted, so nothing is derived from it.
                    _ => b.broken = true,
                }
            }
        });
        let def = match (frequency, source) {
            (_, source) if broken => ClockDef::Invalid { source },
            (Some(frequency), None) if divide.is_none() && multiply.is_none() => {
                ClockDef::Root { frequency }
            }
            (None, Some(source)) => ClockDef::Derived {
                source,
                divide,
                multiply,
            },
            (_, source) => ClockDef::Invalid { source },
        };
        Some(Clock {
            name: name?,
            item: node.span,
            def,
        })
    }

    fn sensor(&mut self, node: &Node) -> Option<Sensor> {
        let mut s = Sensor {
            name: Sp::new(String::new(), node.span),
            item: node.span,
            kind: None,
            bandwidth: None,
            bandwidth_unreadable: false,
            resonance: None,
            response: None,
        };
        let mut named = false;
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "name" => {
                    if let Some(n) = self.string(v) {
                        s.name = n;
                        named = true;
                    }
                }
                "kind" => s.kind = self.string(v),
                "bandwidth" => {
                    let (bandwidth, broken) = self.scoped(|b| b.hz(v));
                    s.bandwidth_unreadable = broken || bandwidth.is_none();
                    s.bandwidth = bandwidth;
                }
                "resonance" => {
                    let mut frequency = None;
                    let mut gain = None;
                    for (rk, rv) in self.entries(v) {
                        match rk.as_str().unwrap_or("") {
                            "frequency" => frequency = self.hz_f64(rv),
                            "gain" => gain = self.db(rv),
                            _ => {}
                        }
                    }
                    if let (Some(frequency), Some(gain)) = (frequency, gain) {
                        s.resonance = Some(Resonance {
                            frequency,
                            gain,
                            span: v.span,
                        });
                    }
                }
                "response" => s.response = self.filters(v, false),
                _ => {}
            }
        }
        named.then_some(s)
    }

    fn module(&mut self, node: &Node) -> Option<Module> {
        let mut m = Module {
            name: Sp::new(String::new(), node.span),
            item: node.span,
            adc_bits: None,
            max_rate: None,
            rates: None,
            sample_bits: None,
            filters: None,
            alias_rejection: None,
            throughput: None,
            modulator: None,
        };
        let mut named = false;
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "name" => {
                    if let Some(n) = self.string(v) {
                        m.name = n;
                        named = true;
                    }
                }
                "adc-bits" => m.adc_bits = self.small(v, 1, 32),
                "max-rate" => m.max_rate = self.hz(v),
                "rates" if v.as_seq().is_some() => {
                    let rates = self.list(v, |b, n| b.hz(n));
                    m.rates = Some(Sp::new(rates, v.span));
                }
                "sample-bits" => m.sample_bits = self.small(v, 1, 64),
                "filters" => m.filters = self.filters(v, false),
                "alias-rejection" => m.alias_rejection = self.db_positive(v),
                "throughput" => m.throughput = self.quantity_f64(v, Kind::DataRate, true),
                "modulator" => m.modulator = self.modulator(v),
                _ => {}
            }
        }
        named.then_some(m)
    }

    fn channel(&mut self, node: &Node) -> Option<Channel> {
        let mut c = Channel {
            name: Sp::new(String::new(), node.span),
            item: node.span,
            sensor: None,
            module: None,
            clock: None,
            band: None,
            filters: None,
            decimate: Vec::new(),
            alias_rejection: None,
            sample_bits: None,
            broken: false,
        };
        let mut named = false;
        let (_, broken) = self.scoped(|b| {
            for (k, v) in b.entries(node) {
                match k.as_str().unwrap_or("") {
                    "name" => {
                        if let Some(n) = b.string(v) {
                            c.name = n;
                            named = true;
                        }
                    }
                    "sensor" => c.sensor = b.string(v),
                    "module" => c.module = b.string(v),
                    "clock" => c.clock = b.string(v),
                    "band" => c.band = b.hz(v),
                    "filters" => c.filters = b.filters(v, false),
                    "decimate" => c.decimate = b.list(v, Self::stage),
                    "alias-rejection" => c.alias_rejection = b.db_positive(v),
                    "sample-bits" => c.sample_bits = b.small(v, 1, 64),
                    // `x-` keys are the lab's own metadata, free at any level.
                    k if k.starts_with("x-") => {}
                    // An unknown key (reported by the schema) may be a misspelt one:
                    // the channel is not checked further, so a typo gives one finding.
                    _ => b.broken = true,
                }
            }
        });
        c.broken = broken || c.clock.is_none();
        named.then_some(c)
    }

    fn stage(&mut self, node: &Node) -> Option<Stage> {
        let mut factor = None;
        let mut filter = None;
        let entries = self.entries(node);
        if let Some((_, v)) = entries.iter().find(|(k, _)| k.as_str() == Some("factor")) {
            factor = self.small(v, 2, u32::MAX);
        }
        if let Some((_, v)) = entries.iter().find(|(k, _)| k.as_str() == Some("filter")) {
            self.rate_ratio = factor.as_ref().map(|f| u64::from(f.value));
            filter = self.filter(v, true);
            self.rate_ratio = None;
        }
        let Some(factor) = factor else {
            self.broken = true;
            return None;
        };
        Some(Stage {
            factor,
            filter,
            span: node.span,
        })
    }

    fn filters(&mut self, node: &Node, in_stage: bool) -> Option<Sp<Vec<Filter>>> {
        if node.as_seq().is_none() {
            self.broken = true;
            return None;
        }
        let filters = self.list(node, |b, n| b.filter(n, in_stage));
        Some(Sp::new(filters, node.span))
    }

    fn filter(&mut self, node: &Node, in_stage: bool) -> Option<Filter> {
        let mut kind = None;
        let mut order = None;
        let mut cutoff = None;
        let mut ripple = None;
        let mut points = None;
        let mut passband = None;
        let mut stopband = None;
        let mut attenuation = None;
        let mut delay = None;
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "response" => kind = self.string(v),
                "order" => order = self.small(v, 1, 12),
                "cutoff" => cutoff = self.hz_f64(v),
                "ripple" => ripple = self.db_positive(v),
                "points" => points = self.points(v),
                "passband-edge" => passband = self.fraction(v),
                "stopband-edge" => stopband = self.fraction(v),
                "attenuation" => attenuation = self.db_positive(v),
                "delay" => {
                    delay = self
                        .quantity_f64(v, Kind::Duration, false)
                        .and_then(|d| self.non_negative(d, v, "a delay"))
                        .map(|d| DigitalDelay::Seconds(d.value))
                }
                "delay-samples" => {
                    delay = self
                        .number(v)
                        .and_then(|d| self.non_negative(d, v, "a delay in samples"))
                        .map(|d| DigitalDelay::Samples(d.value))
                }
                _ => {}
            }
        }
        let values = FilterValues {
            order: order.as_ref().map(|o| o.span),
            cutoff: cutoff.as_ref().map(|o| o.span),
            attenuation: attenuation.as_ref().map(|o| o.span),
            stopband: stopband.as_ref().map(|o| o.span),
        };
        let v = |o: Option<Sp<u32>>| o.map(|o| o.value);
        let f = |o: Option<Sp<f64>>| o.map(|o| o.value);
        let response = match kind.as_ref().map(|k| k.value.as_str()) {
            Some("butterworth") => Response::Butterworth {
                order: v(order)?,
                cutoff: f(cutoff)?,
            },
            Some("bessel") => Response::Bessel {
                order: v(order)?,
                cutoff: f(cutoff)?,
            },
            Some("chebyshev") => Response::Chebyshev {
                order: v(order)?,
                cutoff: f(cutoff)?,
                ripple: f(ripple)?,
            },
            Some("table") => Response::Table { points: points? },
            Some("digital") => Response::Digital {
                passband_edge: f(passband.clone())?,
                stopband_edge: self.check_edges(passband?, stopband?)?,
                attenuation: f(attenuation)?,
                delay,
            },
            Some("sinc") if in_stage && order.as_ref().is_some_and(|o| o.value <= 6) => {
                Response::Sinc { order: v(order)? }
            }
            _ => {
                self.broken = true;
                return None;
            }
        };
        Some(Filter {
            span: node.span,
            response,
            values,
        })
    }

    /// A `digital` filter's edges must satisfy 0 < passband < stopband, and the stopband
    /// edge must lie below half of [`Builder::rate_ratio`] when there is one; anything
    /// else is a located `schema` finding. Returns the stopband edge.
    fn check_edges(&mut self, passband: Sp<f64>, stopband: Sp<f64>) -> Option<f64> {
        let finding = if stopband.value <= passband.value {
            Some(
                declared::SCHEMA.finding(
stopband.span, "not above the passband edge",
                    format!(
                        "the stopband edge {} of a `digital` filter is not above its passband edge {}",
                        stopband.value, passband.value
                    ),
                )
                .with_label(passband.span, "passband edge")
                .with_help("a `digital` filter passes up to `passband-edge` and attenuates from `stopband-edge`: write 0 < passband-edge < stopband-edge"),
            )
        } else if let Some(m) = self.rate_ratio
            && stopband.value * 2.0 >= m as f64
        {
            Some(
                declared::SCHEMA.finding(
stopband.span, "not below half the input rate",
                    format!(
                        "the stopband edge {} of a `digital` filter is not below half its input rate ({} in units of its output rate)",
                        stopband.value,
                        m as f64 / 2.0
                    ),
                )
                .with_help("edges are fractions of the output rate; the stopband must start below half the rate the filter runs at"),
            )
        } else {
            None
        };
        match finding {
            Some(f) => {
                self.broken = true;
                self.findings.push(f);
                None
            }
            None => Some(stopband.value),
        }
    }

    /// Refuse a negative value with a `quantity` finding (zero is allowed: a delay may
    /// be zero).
    fn non_negative(&mut self, value: Sp<f64>, node: &Node, what: &str) -> Option<Sp<f64>> {
        if value.value >= 0.0 {
            return Some(value);
        }
        self.broken = true;
        self.findings.push(
            declared::QUANTITY
                .finding(
                    node.span,
                    "negative",
                    format!(
                        "{what} cannot be negative, found `{}`",
                        self.quantity_text(node).unwrap_or_default().trim()
                    ),
                )
                .with_help("a filter cannot answer before its input; write the delay as 0 or more"),
        );
        None
    }

    /// A module's `modulator` mapping.
    fn modulator(&mut self, node: &Node) -> Option<Modulator> {
        let mut rate = None;
        let mut ratio = None;
        let mut filter = None;
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "rate" => rate = self.hz(v),
                "oversampling-ratio" => ratio = self.uint(v, 1, u32::MAX.into()),
                _ => {}
            }
        }
        // The converter's filter runs at the modulator rate, so its stopband must lie
        // below half the oversampling ratio. That is checked where the ratio meets the
        // channels on the module (resolution), the same way for `rate` and
        // `oversampling-ratio`: the channels are named there and left unanalysed, rather
        // than analysed without the filter.
        if let Some((_, v)) = self
            .entries(node)
            .iter()
            .find(|(k, _)| k.as_str() == Some("filter"))
        {
            filter = self.filter(v, false);
        }
        let rate = match (rate, ratio) {
            (Some(r), None) => ModulatorRate::Rate(r),
            (None, Some(k)) => ModulatorRate::Ratio(k),
            _ => {
                // Both or neither: the schema reports it.
                self.broken = true;
                return None;
            }
        };
        Some(Modulator {
            span: node.span,
            rate,
            filter,
        })
    }

    fn fraction(&mut self, node: &Node) -> Option<Sp<f64>> {
        self.number(node)
            .filter(|x| x.value > 0.0 && x.value <= 1.0)
            .or_else(|| {
                self.broken = true;
                None
            })
    }

    fn points(&mut self, node: &Node) -> Option<Vec<(f64, f64)>> {
        let items = node.as_seq()?;
        let mut out = Vec::with_capacity(items.len());
        for item in items {
            let pair = item.as_seq().filter(|p| p.len() == 2);
            let Some(pair) = pair else {
                self.broken = true;
                return None;
            };
            let f = self.hz_f64(&pair[0])?;
            let a = self.db(&pair[1])?;
            if let Some(&(prev, _)) = out.last()
                && f.value <= prev
            {
                self.broken = true;
                self.findings.push(
                    declared::QUANTITY
                        .finding(
                            pair[0].span,
                            "not above the point before it",
                            format!(
                                "table points must rise in frequency, but {} follows {}",
                                crate::words::format_hz(f.value),
                                crate::words::format_hz(prev)
                            ),
                        )
                        .with_help("list the points in order of rising frequency"),
                );
                return None;
            }
            out.push((f.value, a.value));
        }
        if out.is_empty() {
            self.broken = true;
            return None;
        }
        Some(out)
    }

    fn group(&mut self, node: &Node) -> Option<Group> {
        let mut name = None;
        let mut channels = Vec::new();
        let mut tol = None;
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "name" => name = self.string(v),
                "channels" => channels = self.strings(v).unwrap_or_default(),
                "phase-tolerance" => tol = self.quantity_f64(v, Kind::Phase, true),
                _ => {}
            }
        }
        Some(Group {
            name: name?,
            item: node.span,
            channels,
            phase_tolerance: tol,
        })
    }

    fn disturbance(&mut self, node: &Node) -> Option<Disturbance> {
        let mut d = Disturbance {
            name: Sp::new(String::new(), node.span),
            item: node.span,
            frequency: None,
            level: None,
            channels: None,
        };
        let mut named = false;
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "name" => {
                    if let Some(n) = self.string(v) {
                        d.name = n;
                        named = true;
                    }
                }
                "frequency" => d.frequency = self.hz(v),
                "level" => d.level = self.db(v),
                "channels" => d.channels = self.strings(v),
                _ => {}
            }
        }
        named.then_some(d)
    }

    fn logger(&mut self, node: &Node) -> Option<Logger> {
        let mut l = Logger {
            span: node.span,
            throughput: None,
            storage: None,
            duration: None,
        };
        for (k, v) in self.entries(node) {
            match k.as_str().unwrap_or("") {
                "throughput" => l.throughput = self.quantity_f64(v, Kind::DataRate, true),
                "storage" => l.storage = self.quantity_f64(v, Kind::DataSize, true),
                "duration" => l.duration = self.quantity_f64(v, Kind::Duration, true),
                _ => {}
            }
        }
        Some(l)
    }
}

/// The span used for a document that is not a mapping or is empty.
pub fn document_span(file: FileId) -> Span {
    Span::point(file, 0)
}
