//! A generator over the rig format (docs/format.md): every document it writes has the
//! format's structure (the right sections, keys and kinds of value), while the values are
//! drawn towards the extremes — zero, negative, 2³²±1, 2⁶⁴, 1e±300, overflowing
//! exponents, long decimals, reversed edges — and names are drawn from a small pool so
//! that references resolve, dangle or collide.

use arbitrary::Arbitrary;
use std::fmt::Write;

/// Most list items written per section, to keep one input cheap.
const MAX_ITEMS: usize = 12;

/// A whole rig document.
#[derive(Arbitrary, Debug)]
pub struct Rig {
    include: Vec<Include>,
    defaults: Option<Defaults>,
    clocks: Vec<Clock>,
    sensors: Vec<Sensor>,
    modules: Vec<Module>,
    channels: Vec<Channel>,
    groups: Vec<Group>,
    disturbances: Vec<Disturbance>,
    logger: Option<Logger>,
}

/// A name from a pool of eight, so references meet definitions (or collide).
#[derive(Arbitrary, Debug, Clone, Copy)]
struct Name(u8);

impl Name {
    fn text(self, prefix: &str) -> String {
        format!("{prefix}{}", self.0 % 8)
    }
}

/// An include that cannot be read from the fuzzer's nonexistent campaign root.
#[derive(Arbitrary, Debug)]
enum Include {
    Missing,
    Outside,
    Nested,
}

/// A number drawn towards the extremes.
#[derive(Arbitrary, Debug)]
enum Number {
    Small(u8),
    Whole(u64),
    Negative(i32),
    Float(f64),
    Decimal { mantissa: u32, exponent: i16 },
    Special(Special),
}

#[derive(Arbitrary, Debug)]
enum Special {
    Zero,
    MinusZero,
    U32Max,
    U32MaxPlusOne,
    U64Max,
    U64MaxPlusOne,
    Huge,
    Tiny,
    Overflowing,
    Underflowing,
    LongDecimal,
    Half,
}

impl Number {
    fn text(&self) -> String {
        match self {
            Number::Small(n) => n.to_string(),
            Number::Whole(n) => n.to_string(),
            Number::Negative(n) => n.to_string(),
            // Debug keeps a decimal point or exponent (`1e300`, `0.1`, `NaN`, `inf`).
            Number::Float(x) => format!("{x:?}"),
            Number::Decimal { mantissa, exponent } => format!("{mantissa}e{exponent}"),
            Number::Special(s) => match s {
                Special::Zero => "0".into(),
                Special::MinusZero => "-0.0".into(),
                Special::U32Max => "4294967295".into(),
                Special::U32MaxPlusOne => "4294967296".into(),
                Special::U64Max => "18446744073709551615".into(),
                Special::U64MaxPlusOne => "18446744073709551616".into(),
                Special::Huge => "1e300".into(),
                Special::Tiny => "1e-300".into(),
                Special::Overflowing => "1e400".into(),
                Special::Underflowing => "1e-400".into(),
                Special::LongDecimal => format!("0.{}1", "0".repeat(60)),
                Special::Half => "0.5".into(),
            },
        }
    }
}

/// A quantity: a number and a unit index into the kind's units (one past the end: none).
#[derive(Arbitrary, Debug)]
struct Q(Number, u8);

const FREQUENCY: &[&str] = &["Hz", "kHz", "MHz", "GHz"];
const LEVEL: &[&str] = &["dB"];
const PHASE: &[&str] = &["deg"];
const SIZE: &[&str] = &["B", "kB", "GB", "TiB"];
const RATE: &[&str] = &["B/s", "kB/s", "MB/s", "GiB/s"];
const DURATION: &[&str] = &["ns", "us", "ms", "s", "min", "h", "d"];

impl Q {
    fn text(&self, units: &[&str]) -> String {
        match units.get(self.1 as usize % (units.len() + 1)) {
            Some(u) => format!("{} {u}", self.0.text()),
            None => self.0.text(),
        }
    }
}

#[derive(Arbitrary, Debug)]
struct Defaults {
    margin: Option<Number>,
    alias_rejection: Option<Q>,
    passband_tolerance: Option<Q>,
    oversampling_limit: Option<Number>,
    phase_tolerance: Option<Q>,
}

#[derive(Arbitrary, Debug)]
enum Clock {
    Root {
        name: Name,
        frequency: Q,
    },
    Derived {
        name: Name,
        source: Name,
        divide: Option<Number>,
        multiply: Option<Number>,
    },
}

#[derive(Arbitrary, Debug)]
struct Sensor {
    name: Name,
    bandwidth: Option<Q>,
    resonance: Option<(Q, Q)>,
    response: Option<Vec<Filter>>,
}

#[derive(Arbitrary, Debug)]
struct Modulator {
    rate: Option<Q>,
    oversampling_ratio: Option<Number>,
    filter: Option<Filter>,
}

#[derive(Arbitrary, Debug)]
struct Module {
    name: Name,
    adc_bits: Option<Number>,
    max_rate: Option<Q>,
    rates: Option<Vec<Q>>,
    sample_bits: Option<Number>,
    filters: Option<Vec<Filter>>,
    alias_rejection: Option<Q>,
    throughput: Option<Q>,
    modulator: Option<Modulator>,
}

#[derive(Arbitrary, Debug)]
enum Delay {
    Time(Q),
    Samples(Number),
}

#[derive(Arbitrary, Debug)]
enum Filter {
    Butterworth(Number, Q),
    Bessel(Number, Q),
    Chebyshev(Number, Q, Q),
    Table(Vec<(Q, Q)>),
    Digital {
        pass: Number,
        stop: Number,
        attenuation: Q,
        delay: Option<Delay>,
    },
    Sinc(Number),
}

impl Filter {
    fn text(&self) -> String {
        match self {
            Filter::Butterworth(o, c) | Filter::Bessel(o, c) => format!(
                "{{ response: {}, order: {}, cutoff: {} }}",
                if matches!(self, Filter::Butterworth(..)) {
                    "butterworth"
                } else {
                    "bessel"
                },
                o.text(),
                c.text(FREQUENCY)
            ),
            Filter::Chebyshev(o, c, r) => format!(
                "{{ response: chebyshev, order: {}, cutoff: {}, ripple: {} }}",
                o.text(),
                c.text(FREQUENCY),
                r.text(LEVEL)
            ),
            Filter::Table(points) => {
                let pts: Vec<String> = points
                    .iter()
                    .take(MAX_ITEMS)
                    .map(|(f, a)| format!("[{}, {}]", f.text(FREQUENCY), a.text(LEVEL)))
                    .collect();
                format!("{{ response: table, points: [{}] }}", pts.join(", "))
            }
            Filter::Digital {
                pass,
                stop,
                attenuation,
                delay,
            } => {
                let mut s = format!(
                    "{{ response: digital, passband-edge: {}, stopband-edge: {}, attenuation: {}",
                    pass.text(),
                    stop.text(),
                    attenuation.text(LEVEL)
                );
                match delay {
                    Some(Delay::Time(t)) => write!(s, ", delay: {}", t.text(DURATION)).unwrap(),
                    Some(Delay::Samples(n)) => write!(s, ", delay-samples: {}", n.text()).unwrap(),
                    None => {}
                }
                s.push_str(" }");
                s
            }
            Filter::Sinc(o) => format!("{{ response: sinc, order: {} }}", o.text()),
        }
    }
}

fn chain(filters: &[Filter]) -> String {
    let f: Vec<String> = filters.iter().take(MAX_ITEMS).map(Filter::text).collect();
    format!("[{}]", f.join(", "))
}

#[derive(Arbitrary, Debug)]
struct Stage {
    factor: Number,
    filter: Option<Filter>,
}

#[derive(Arbitrary, Debug)]
struct Channel {
    name: Name,
    clock: Name,
    sensor: Option<Name>,
    module: Option<Name>,
    band: Option<Q>,
    filters: Option<Vec<Filter>>,
    decimate: Vec<Stage>,
    alias_rejection: Option<Q>,
    sample_bits: Option<Number>,
}

#[derive(Arbitrary, Debug)]
struct Group {
    name: Name,
    channels: Vec<Name>,
    phase_tolerance: Option<Q>,
}

#[derive(Arbitrary, Debug)]
struct Disturbance {
    name: Name,
    frequency: Q,
    level: Option<Q>,
    channels: Option<Vec<Name>>,
}

#[derive(Arbitrary, Debug)]
struct Logger {
    throughput: Option<Q>,
    storage: Option<Q>,
    duration: Option<Q>,
}

fn names(list: &[Name], prefix: &str) -> String {
    let n: Vec<String> = list
        .iter()
        .take(MAX_ITEMS)
        .map(|n| n.text(prefix))
        .collect();
    format!("[{}]", n.join(", "))
}

/// `  key: value` lines of an item, the first one as `- key: value`.
struct Item<'a> {
    out: &'a mut String,
    first: bool,
}

impl<'a> Item<'a> {
    fn new(out: &'a mut String) -> Self {
        Item { out, first: true }
    }
    fn key(&mut self, key: &str, value: impl AsRef<str>) {
        let lead = if self.first { "  - " } else { "    " };
        self.first = false;
        writeln!(self.out, "{lead}{key}: {}", value.as_ref()).unwrap();
    }
    fn opt<T>(&mut self, key: &str, value: &Option<T>, show: impl Fn(&T) -> String) {
        if let Some(v) = value {
            self.key(key, show(v));
        }
    }
}

impl Rig {
    /// The rig as YAML text.
    pub fn text(&self) -> String {
        let mut s = String::from("format: 1\nrig: extreme-probe\n");
        if !self.include.is_empty() {
            s.push_str("include:\n");
            for i in self.include.iter().take(3) {
                let path = match i {
                    Include::Missing => "missing.yaml",
                    Include::Outside => "../../outside/catalog.yaml",
                    Include::Nested => "catalog/nested/deep.yaml",
                };
                writeln!(s, "  - {path}").unwrap();
            }
        }
        if let Some(d) = &self.defaults {
            s.push_str("defaults:\n");
            let mut kv = |k: &str, v: Option<String>| {
                if let Some(v) = v {
                    writeln!(s, "  {k}: {v}").unwrap();
                }
            };
            kv("margin", d.margin.as_ref().map(Number::text));
            kv(
                "alias-rejection",
                d.alias_rejection.as_ref().map(|q| q.text(LEVEL)),
            );
            kv(
                "passband-tolerance",
                d.passband_tolerance.as_ref().map(|q| q.text(LEVEL)),
            );
            kv(
                "oversampling-limit",
                d.oversampling_limit.as_ref().map(Number::text),
            );
            kv(
                "phase-tolerance",
                d.phase_tolerance.as_ref().map(|q| q.text(PHASE)),
            );
        }
        if !self.clocks.is_empty() {
            s.push_str("clocks:\n");
            for c in self.clocks.iter().take(MAX_ITEMS) {
                let mut it = Item::new(&mut s);
                match c {
                    Clock::Root { name, frequency } => {
                        it.key("name", name.text("k"));
                        it.key("frequency", frequency.text(FREQUENCY));
                    }
                    Clock::Derived {
                        name,
                        source,
                        divide,
                        multiply,
                    } => {
                        it.key("name", name.text("k"));
                        it.key("source", source.text("k"));
                        it.opt("divide", divide, Number::text);
                        it.opt("multiply", multiply, Number::text);
                    }
                }
            }
        }
        if !self.sensors.is_empty() {
            s.push_str("sensors:\n");
            for x in self.sensors.iter().take(MAX_ITEMS) {
                let mut it = Item::new(&mut s);
                it.key("name", x.name.text("s"));
                it.opt("bandwidth", &x.bandwidth, |q| q.text(FREQUENCY));
                it.opt("resonance", &x.resonance, |(f, g)| {
                    format!(
                        "{{ frequency: {}, gain: {} }}",
                        f.text(FREQUENCY),
                        g.text(LEVEL)
                    )
                });
                it.opt("response", &x.response, |r| chain(r));
            }
        }
        if !self.modules.is_empty() {
            s.push_str("modules:\n");
            for m in self.modules.iter().take(MAX_ITEMS) {
                let mut it = Item::new(&mut s);
                it.key("name", m.name.text("m"));
                it.opt("adc-bits", &m.adc_bits, Number::text);
                it.opt("max-rate", &m.max_rate, |q| q.text(FREQUENCY));
                it.opt("rates", &m.rates, |r| {
                    let r: Vec<String> = r
                        .iter()
                        .take(MAX_ITEMS)
                        .map(|q| q.text(FREQUENCY))
                        .collect();
                    format!("[{}]", r.join(", "))
                });
                it.opt("sample-bits", &m.sample_bits, Number::text);
                it.opt("filters", &m.filters, |f| chain(f));
                it.opt("alias-rejection", &m.alias_rejection, |q| q.text(LEVEL));
                it.opt("throughput", &m.throughput, |q| q.text(RATE));
                it.opt("modulator", &m.modulator, |md| {
                    let mut parts = Vec::new();
                    if let Some(r) = &md.rate {
                        parts.push(format!("rate: {}", r.text(FREQUENCY)));
                    }
                    if let Some(o) = &md.oversampling_ratio {
                        parts.push(format!("oversampling-ratio: {}", o.text()));
                    }
                    if let Some(f) = &md.filter {
                        parts.push(format!("filter: {}", f.text()));
                    }
                    format!("{{ {} }}", parts.join(", "))
                });
            }
        }
        if !self.channels.is_empty() {
            s.push_str("channels:\n");
            for c in self.channels.iter().take(MAX_ITEMS) {
                let mut it = Item::new(&mut s);
                it.key("name", c.name.text("ch"));
                it.key("clock", c.clock.text("k"));
                it.opt("sensor", &c.sensor, |n| n.text("s"));
                it.opt("module", &c.module, |n| n.text("m"));
                it.opt("band", &c.band, |q| q.text(FREQUENCY));
                it.opt("filters", &c.filters, |f| chain(f));
                if !c.decimate.is_empty() {
                    let stages: Vec<String> = c
                        .decimate
                        .iter()
                        .take(MAX_ITEMS)
                        .map(|st| match &st.filter {
                            Some(f) => {
                                format!("{{ factor: {}, filter: {} }}", st.factor.text(), f.text())
                            }
                            None => format!("{{ factor: {} }}", st.factor.text()),
                        })
                        .collect();
                    it.key("decimate", format!("[{}]", stages.join(", ")));
                }
                it.opt("alias-rejection", &c.alias_rejection, |q| q.text(LEVEL));
                it.opt("sample-bits", &c.sample_bits, Number::text);
            }
        }
        if !self.groups.is_empty() {
            s.push_str("groups:\n");
            for g in self.groups.iter().take(MAX_ITEMS) {
                let mut it = Item::new(&mut s);
                it.key("name", g.name.text("g"));
                it.key("channels", names(&g.channels, "ch"));
                it.opt("phase-tolerance", &g.phase_tolerance, |q| q.text(PHASE));
            }
        }
        if !self.disturbances.is_empty() {
            s.push_str("disturbances:\n");
            for d in self.disturbances.iter().take(MAX_ITEMS) {
                let mut it = Item::new(&mut s);
                it.key("name", d.name.text("d"));
                it.key("frequency", d.frequency.text(FREQUENCY));
                it.opt("level", &d.level, |q| q.text(LEVEL));
                it.opt("channels", &d.channels, |c| names(c, "ch"));
            }
        }
        if let Some(l) = &self.logger {
            s.push_str("logger:\n");
            let mut kv = |k: &str, v: Option<String>| {
                if let Some(v) = v {
                    writeln!(s, "  {k}: {v}").unwrap();
                }
            };
            kv("throughput", l.throughput.as_ref().map(|q| q.text(RATE)));
            kv("storage", l.storage.as_ref().map(|q| q.text(SIZE)));
            kv("duration", l.duration.as_ref().map(|q| q.text(DURATION)));
        }
        s
    }
}
