//! `foldcheck inspect FILE CHANNEL`: one channel's signal chain, worked out by the same
//! pipeline as `check` (load, resolve, rules) and laid out for a person.
//!
//! [`inspect`] gathers everything into an [`Inspection`]: the clock path with the exact
//! rate at every step, the sensor, module and band, the required rejection and where it
//! comes from, and for every rate change the ratio, the folding frequency `fs − B`, the
//! attenuation there (per filter), the resonance and disturbance folds, the passband
//! droop and the chain phase at the band edge, plus the channel's findings of the same
//! run. The renderers ([`text`], [`json`], [`plot`]) only lay it out.

pub mod json;
pub mod list;
pub mod plot;
pub mod text;

use crate::analysis::{self, Context, Enabled, Verdict};
use crate::campaign::{self, Options};
use crate::finding::{Finding, Severity};
use crate::model::quantity::{self, Exact, to_f64};
use crate::model::{ClockDef, Filter};
use crate::resolve::chain::Chain;
use crate::resolve::{Origin, RChannel, Rig, ThresholdSettings};
use crate::settings;
use crate::source::{Sources, Span};
use crate::words::{db_text, format_hz};
use std::path::{Path, PathBuf};

/// Show one channel's chain: the text (or JSON) for stdout; with `plot`, also write its
/// spectrum as SVG to that file. `Err` is a fatal message (exit status 2).
pub fn run(
    file: &Path,
    channel: Option<&str>,
    plot: Option<&Path>,
    json: bool,
    settings: Option<PathBuf>,
) -> Result<String, String> {
    if let Some(p) = plot {
        plot::check_target(p)?;
    }
    if file.is_dir() {
        return Err(format!(
            "{}: is a directory; name the rig file that holds the channel",
            file.display()
        ));
    }
    let opts = Options {
        keep_rigs: true,
        settings: settings.clone(),
        // Analyse the channel shown (and its groups), not the whole rig; with no channel
        // named, the whole rig.
        scope: channel.map(str::to_string),
        ..Default::default()
    };
    let out = campaign::run(&[file.to_path_buf()], &opts)
        .map_err(|e| crate::report::fatal::render(&e, crate::report::human::Color::Never))?;
    let Some(channel) = channel else {
        if plot.is_some() {
            return Err("--plot draws one channel: name it after the file".to_string());
        }
        return list::channels(&out, file, json);
    };
    // A catalog: the rig that includes it and has this channel (README, "inspect").
    let outcome = &out.rigs[list::pick_rig(&out, file, channel)?];
    let rig_path = out.sources.get(outcome.file).path.clone();
    let file = rig_path.as_path();
    let Some(rig) = &outcome.rig else {
        let sf = out.sources.get(outcome.file);
        let first = out
            .findings
            .iter()
            .find(|f| f.primary.span.file == outcome.file);
        return Err(match first {
            Some(f) => {
                let (line, col) = sf.line_col(f.primary.span.start);
                format!(
                    "{}:{line}:{col}: the rig cannot be read: {}",
                    sf.display, f.message
                )
            }
            None => format!("{}: the rig cannot be read", sf.display),
        });
    };
    let Some(ci) = rig.channel(channel) else {
        return Err(unknown_channel(rig, channel));
    };
    let thresholds = settings_thresholds(file, settings.as_deref());
    let ins = inspect(rig, ci, &out.sources, &out.findings, &thresholds);
    let mut plot_note = None;
    if let Some(p) = plot {
        let read: Vec<&Path> = out.sources.iter().map(|s| s.path.as_path()).collect();
        let data = plot_data(rig, ci, &ins).ok_or_else(|| {
            format!(
                "cannot draw `{channel}`: its chain did not resolve (see its findings: run without --plot)"
            )
        })?;
        plot::write(p, &plot::render(&data)?, &read)?;
        plot_note = Some(p.display().to_string());
    }
    Ok(if json {
        json::render(&ins, plot_note.as_deref())
    } else {
        text::render(&ins, plot_note.as_deref())
    })
}

/// The fatal message for a channel name the rig does not define.
fn unknown_channel(rig: &Rig, name: &str) -> String {
    let rig_name = rig.name.as_ref().map_or_else(
        || "the rig".to_string(),
        |n| format!("the rig `{}`", n.value),
    );
    let names = || rig.channels.iter().map(|c| c.def.name.value.as_str());
    if rig.channels.is_empty() {
        return format!("{rig_name} has no channels");
    }
    match crate::words::closest(name, names()) {
        Some(best) => format!("{rig_name} has no channel `{name}`; did you mean `{best}`?"),
        None => {
            let mut known: Vec<&str> = names().collect();
            let more = known.len().saturating_sub(8);
            known.truncate(8);
            let tail = if more > 0 {
                format!(" and {more} more")
            } else {
                String::new()
            };
            format!(
                "{rig_name} has no channel `{name}`; its channels are {}{tail}",
                known.join(", ")
            )
        }
    }
}

/// The settings file that applies to `file` (named or discovered), its thresholds and the
/// rules it leaves on, for saying where each threshold comes from (`inspect`, `report`).
/// The campaign run has already checked it.
pub fn settings_thresholds(
    file: &Path,
    named: Option<&Path>,
) -> (Option<String>, ThresholdSettings, Enabled) {
    let path = match named {
        Some(p) => Some(p.to_path_buf()),
        None => {
            let dir = file
                .parent()
                .filter(|d| !d.as_os_str().is_empty())
                .unwrap_or(Path::new("."));
            settings::discover(&campaign::absolute(dir))
        }
    };
    match path.and_then(|p| settings::load(&p).ok().map(|s| (p, s))) {
        Some((p, s)) => {
            let enabled = Enabled::from_fn(|rule| {
                crate::rules::rule(rule)
                    .is_none_or(|r| s.level(rule, r.severity) != settings::Level::Off)
            });
            (Some(p.display().to_string()), s.thresholds, enabled)
        }
        None => (None, ThresholdSettings::default(), Enabled::ALL),
    }
}

/// Everything `inspect` shows about one channel.
#[derive(Clone, Debug)]
pub struct Inspection {
    /// The rig file as given on the command line.
    pub file: String,
    /// The rig's name.
    pub rig: Option<String>,
    /// The channel's name.
    pub channel: String,
    /// Where the channel is defined: `file:line:column`.
    pub defined_at: String,
    /// Every reference resolved and no value broken (the rate analysis needs it).
    pub resolved: bool,
    /// The channel's clock and its path from the root.
    pub clock: Option<ClockInfo>,
    /// The sensor, if the channel names one.
    pub sensor: Option<SensorInfo>,
    /// The module, if the channel names one.
    pub module: Option<ModuleInfo>,
    /// The band and where it comes from.
    pub band: Option<Sourced>,
    /// The filters in the chain, in signal order (sensor, ADC chain, decimation stages).
    pub filters: Vec<FilterInfo>,
    /// Where the ADC-level chain is written ("the channel's `filters`" …), if anywhere.
    pub filters_from: Option<String>,
    /// Whether the channel says `filters: []` (no filters, overriding its module's).
    pub filters_empty_override: bool,
    /// The required rejection in dB and where it comes from.
    pub rejection: Sourced,
    /// The thresholds that apply to the channel.
    pub thresholds: Vec<Threshold>,
    /// Stored bits per sample.
    pub sample_bits: u32,
    /// The rate analysis, when the channel resolved and has a band.
    pub analysis: Option<Analysis>,
    /// Why there is no analysis, when there is none.
    pub no_analysis: Option<String>,
    /// Every computed rule verdict of the channel (a failing one is a finding of
    /// `check`, same rule and stage).
    pub verdicts: Vec<Verdict>,
    /// The channel's fix candidate, as the analysis confirmed it.
    pub fix: Option<FixInfo>,
    /// The findings of the same run about the channel, or inside its item or the items
    /// of the clocks on its path, its sensor and its module, in output order.
    pub findings: Vec<FindingInfo>,
}

/// A fix candidate, for showing.
#[derive(Clone, Debug)]
pub struct FixInfo {
    /// What it does.
    pub description: String,
    /// The help line built from it.
    pub help: String,
    /// Its edits.
    pub edits: Vec<EditInfo>,
}

/// One edit of a fix.
#[derive(Clone, Debug)]
pub struct EditInfo {
    /// The file, as displayed.
    pub file: String,
    /// First byte.
    pub start: usize,
    /// Byte after the last.
    pub end: usize,
    /// The new text.
    pub replacement: String,
}

/// A value and where it comes from.
#[derive(Clone, Debug)]
pub struct Sourced {
    /// The value (Hz for a band, dB for a rejection).
    pub value: f64,
    /// Where it comes from, in words, with `file:line:column` when it is written.
    pub from: String,
    /// Where it comes from, in words only ("the rig's `defaults.alias-rejection`").
    pub what: String,
}

/// A threshold that applies to the channel.
#[derive(Clone, Debug)]
pub struct Threshold {
    /// The key as written in `defaults` and foldcheck.toml (`margin` …).
    pub key: &'static str,
    /// The JSON name (`margin`, `passband_tolerance_db` …).
    pub json_key: &'static str,
    /// Its value.
    pub value: f64,
    /// The unit to print after it ("", " dB", " deg").
    pub unit: &'static str,
    /// Where it comes from.
    pub from: String,
}

/// The channel's clock.
#[derive(Clone, Debug)]
pub struct ClockInfo {
    /// The name the channel gives.
    pub name: String,
    /// Whether a clock of that name exists.
    pub found: bool,
    /// Root first, the channel's clock last (empty when not found).
    pub path: Vec<ClockStep>,
    /// Whether the path ends at a root oscillator (no loop, no missing source).
    pub complete: bool,
}

/// One clock on a clock path.
#[derive(Clone, Debug)]
pub struct ClockStep {
    /// Its name.
    pub name: String,
    /// Divider from its source (None for a root).
    pub divide: Option<u64>,
    /// Multiplier from its source (None for a root).
    pub multiply: Option<u64>,
    /// Its exact rate, if known.
    pub rate: Option<Exact>,
}

impl ClockStep {
    /// Whether this clock is a root oscillator.
    pub fn is_root(&self) -> bool {
        self.divide.is_none() && self.multiply.is_none()
    }
}

/// The channel's sensor.
#[derive(Clone, Debug)]
pub struct SensorInfo {
    /// The name the channel gives.
    pub name: String,
    /// Whether a sensor of that name exists.
    pub found: bool,
    /// Its `kind` text.
    pub kind: Option<String>,
    /// Its bandwidth in Hz.
    pub bandwidth_hz: Option<f64>,
    /// Its resonance: frequency in Hz and gain in dB.
    pub resonance: Option<(f64, f64)>,
}

/// The channel's module.
#[derive(Clone, Debug)]
pub struct ModuleInfo {
    /// The name the channel gives.
    pub name: String,
    /// Whether a module of that name exists.
    pub found: bool,
    /// ADC resolution.
    pub adc_bits: Option<u32>,
    /// Highest ADC rate in Hz.
    pub max_rate_hz: Option<f64>,
    /// The only ADC rates it supports, Hz.
    pub rates_hz: Vec<f64>,
    /// Its delta-sigma modulator, described ("64 × the ADC rate = 3.2768 MHz").
    pub modulator: Option<String>,
}

/// One filter of the chain.
#[derive(Clone, Debug)]
pub struct FilterInfo {
    /// "sensor response", "channel filter", "module filter" or "decimation stage k".
    pub place: String,
    /// 0 for the sensor response and the ADC chain, k for the k-th decimation stage.
    pub stage: usize,
    /// The `response` keyword.
    pub response: &'static str,
    /// "4th-order Butterworth at 20 kHz" …
    pub description: String,
}

/// One of the channel's findings.
#[derive(Clone, Debug)]
pub struct FindingInfo {
    /// The rule.
    pub rule: &'static str,
    /// Its severity.
    pub severity: Severity,
    /// The file of its primary span.
    pub file: String,
    /// 1-based line.
    pub line: usize,
    /// 1-based column.
    pub column: usize,
    /// The message.
    pub message: String,
    /// The help line.
    pub help: Option<String>,
    /// The reason of the suppression that covers it.
    pub suppressed: Option<String>,
}

pub use crate::analysis::{
    AliasCheck, DelayInfo, DisturbanceInfo, DisturbanceOutcome, DisturbanceStep, PassbandInfo,
    RateAnalysis as Analysis, ResonanceCheck, StageInfo,
};

fn position(sources: &Sources, span: Span) -> String {
    let sf = sources.get(span.file);
    let (line, col) = sf.line_col(span.start);
    format!("{}:{line}:{col}", sf.display)
}

fn origin_text(origin: &Origin, sources: &Sources, settings_path: Option<&str>) -> String {
    match origin {
        Origin::Settings => match settings_path {
            Some(p) => format!("the settings file {p}"),
            None => origin.describe(),
        },
        Origin::Builtin => "the built-in default".to_string(),
        other => match other.span() {
            Some(span) => format!("{} at {}", other.describe(), position(sources, span)),
            None => other.describe(),
        },
    }
}

fn channel_findings(
    rig: &Rig,
    ch: &RChannel,
    sources: &Sources,
    findings: &[Finding],
) -> Vec<FindingInfo> {
    let name = &ch.def.name.value;
    // The channel's own item, and the parts it uses: a broken clock on its path, sensor
    // or module explains why the channel does not resolve.
    let mut items = vec![ch.def.item];
    if let Some(k) = ch.clock {
        items.extend(rig.clock_path(k).iter().map(|&i| rig.clocks[i].def.item));
    }
    items.extend(ch.sensor.map(|i| rig.sensors[i].item));
    items.extend(ch.module.map(|i| rig.modules[i].item));
    findings
        .iter()
        .filter(|f| {
            f.channel.as_deref() == Some(name.as_str())
                || (f.channel.is_none()
                    && items
                        .iter()
                        .any(|it| it.file == f.primary.span.file && it.contains(&f.primary.span)))
        })
        .map(|f| {
            let sf = sources.get(f.primary.span.file);
            let (line, column) = sf.line_col(f.primary.span.start);
            FindingInfo {
                rule: f.rule,
                severity: f.severity,
                file: sf.display.clone(),
                line,
                column,
                message: f.message.clone(),
                help: f.help.clone(),
                suppressed: f.suppressed.clone(),
            }
        })
        .collect()
}

/// The filters of a channel's chain in signal order: the sensor's response, the ADC
/// chain (the channel's or its module's), the converter's own filter, then each
/// decimation stage's filter — the order in which [`Chain::contributions`] lists them.
fn chain_filters(rig: &Rig, ch: &RChannel) -> Vec<FilterInfo> {
    let mut filters = Vec::new();
    if let Some(resp) = ch.sensor.and_then(|s| rig.sensors[s].response.as_ref()) {
        filters.extend(
            resp.value
                .iter()
                .map(|f| filter_info("sensor response", 0, f)),
        );
    }
    let adc_place = ch.filters_origin.place();
    filters.extend(ch.filters.iter().map(|f| filter_info(adc_place, 0, f)));
    if let Some(f) = ch
        .module
        .and_then(|m| rig.modules[m].modulator.as_ref())
        .and_then(|m| m.filter.as_ref())
    {
        filters.push(filter_info("converter filter", 0, f));
    }
    for (k, st) in ch.def.decimate.iter().enumerate() {
        if let Some(f) = &st.filter {
            filters.push(filter_info(
                &format!("decimation stage {}", k + 1),
                k + 1,
                f,
            ));
        }
    }
    filters
}

fn filter_info(place: &str, stage: usize, f: &Filter) -> FilterInfo {
    FilterInfo {
        place: place.to_string(),
        stage,
        response: f.response.keyword(),
        description: f.response.describe(),
    }
}

/// Work out what `inspect` shows for channel `ci` of `rig`. `settings` is the settings
/// file that applies (its display path and thresholds), for saying where values come
/// from.
pub fn inspect(
    rig: &Rig,
    ci: usize,
    sources: &Sources,
    findings: &[Finding],
    settings: &(Option<String>, ThresholdSettings, Enabled),
) -> Inspection {
    let ch = &rig.channels[ci];
    let (settings_path, set, enabled) = (settings.0.as_deref(), &settings.1, settings.2);

    let clock = ch.def.clock.as_ref().map(|c| match ch.clock {
        Some(k) => {
            let ids = rig.clock_path(k);
            let path: Vec<ClockStep> = ids
                .iter()
                .map(|&i| {
                    let rc = &rig.clocks[i];
                    let (divide, multiply) = match &rc.def.def {
                        ClockDef::Derived {
                            divide, multiply, ..
                        } => (
                            Some(divide.as_ref().map_or(1, |d| d.value)),
                            Some(multiply.as_ref().map_or(1, |m| m.value)),
                        ),
                        _ => (None, None),
                    };
                    ClockStep {
                        name: rc.def.name.value.clone(),
                        divide,
                        multiply,
                        rate: rc.rate,
                    }
                })
                .collect();
            let complete = ids
                .first()
                .is_some_and(|&r| matches!(rig.clocks[r].def.def, ClockDef::Root { .. }))
                && rig.clocks[k].rate.is_some();
            ClockInfo {
                name: c.value.clone(),
                found: true,
                path,
                complete,
            }
        }
        None => ClockInfo {
            name: c.value.clone(),
            found: false,
            path: Vec::new(),
            complete: false,
        },
    });

    let sensor = ch.def.sensor.as_ref().map(|s| {
        let found = ch.sensor.map(|i| &rig.sensors[i]);
        SensorInfo {
            name: s.value.clone(),
            found: found.is_some(),
            kind: found.and_then(|s| s.kind.as_ref()).map(|k| k.value.clone()),
            bandwidth_hz: found
                .and_then(|s| s.bandwidth.as_ref())
                .map(|b| to_f64(&b.value)),
            resonance: found
                .and_then(|s| s.resonance.as_ref())
                .map(|r| (r.frequency.value, r.gain.value)),
        }
    });

    let module = ch.def.module.as_ref().map(|m| {
        let found = ch.module.map(|i| &rig.modules[i]);
        ModuleInfo {
            name: m.value.clone(),
            found: found.is_some(),
            adc_bits: found.and_then(|m| m.adc_bits.as_ref()).map(|b| b.value),
            max_rate_hz: found
                .and_then(|m| m.max_rate.as_ref())
                .map(|r| to_f64(&r.value)),
            rates_hz: found
                .and_then(|m| m.rates.as_ref())
                .map(|r| r.value.iter().map(|x| to_f64(&x.value)).collect())
                .unwrap_or_default(),
            modulator: found.and_then(|m| m.modulator.as_ref()).map(|md| {
                let rate = rig
                    .adc_rate(ch)
                    .and_then(|fs| md.rate_for(fs))
                    .map(|r| format_hz(to_f64(&r)));
                match (&md.rate, rate) {
                    (crate::model::ModulatorRate::Ratio(k), Some(r)) => {
                        format!("{} × the ADC rate = {r}", k.value)
                    }
                    (crate::model::ModulatorRate::Ratio(k), None) => {
                        format!("{} × the ADC rate", k.value)
                    }
                    (crate::model::ModulatorRate::Rate(r), _) => format_hz(to_f64(&r.value)),
                }
            }),
        }
    });

    let band = ch.band.as_ref().map(|b| Sourced {
        value: to_f64(&b.hz),
        what: if b.from_sensor {
            "the sensor's `bandwidth`".to_string()
        } else {
            "the channel's `band`".to_string()
        },
        from: if b.from_sensor {
            format!(
                "the sensor's `bandwidth` at {} (the channel sets no `band`)",
                position(sources, b.span)
            )
        } else {
            format!("the channel's `band` at {}", position(sources, b.span))
        },
    });

    let filters = chain_filters(rig, ch);
    let filters_from = ch
        .filters_span
        .map(|(span, what)| format!("{what} at {}", position(sources, span)));
    let filters_empty_override = ch.def.filters.as_ref().is_some_and(|f| f.value.is_empty());

    let rejection = Sourced {
        value: ch.rejection.0,
        from: origin_text(&ch.rejection.1, sources, settings_path),
        what: match &ch.rejection.1 {
            Origin::Builtin => "the built-in default".to_string(),
            other => other.describe(),
        },
    };

    let t = &rig.thresholds;
    let threshold_from = |key: &str, in_settings: bool| -> String {
        match rig.threshold_spans.get(key) {
            Some(span) => format!("the rig's `defaults.{key}` at {}", position(sources, *span)),
            None if in_settings => match settings_path {
                Some(p) => format!("the settings file {p}"),
                None => "the settings file".to_string(),
            },
            None => "the built-in default".to_string(),
        }
    };
    let thresholds = vec![
        Threshold {
            key: "margin",
            json_key: "margin",
            value: t.margin,
            unit: "",
            from: threshold_from("margin", set.margin.is_some()),
        },
        Threshold {
            key: "passband-tolerance",
            json_key: "passband_tolerance_db",
            value: t.passband_tolerance,
            unit: " dB",
            from: threshold_from("passband-tolerance", set.passband_tolerance.is_some()),
        },
        Threshold {
            key: "oversampling-limit",
            json_key: "oversampling_limit",
            value: t.oversampling_limit,
            unit: "",
            from: threshold_from("oversampling-limit", set.oversampling_limit.is_some()),
        },
        Threshold {
            key: "phase-tolerance",
            json_key: "phase_tolerance_deg",
            value: t.phase_tolerance,
            unit: " deg",
            from: threshold_from("phase-tolerance", set.phase_tolerance.is_some()),
        },
    ];

    let ca = analysis::analyse_channel(rig, ci, &Context::new(enabled));
    let verdicts = ca.verdicts();
    let fix = ca.fix.as_ref().map(|f| FixInfo {
        description: f.description.clone(),
        help: f.help.clone(),
        edits: f
            .edits
            .iter()
            .map(|e| EditInfo {
                file: sources.get(e.span.file).display.clone(),
                start: e.span.start as usize,
                end: e.span.end as usize,
                replacement: e.replacement.clone(),
            })
            .collect(),
    });
    let (analysis, no_analysis) = match ca.rates {
        Ok(a) => (Some(a), None),
        Err(why) => (None, Some(why.reason().to_string())),
    };

    Inspection {
        file: sources.get(rig.file).display.clone(),
        rig: rig.name.as_ref().map(|n| n.value.clone()),
        channel: ch.def.name.value.clone(),
        defined_at: position(sources, ch.def.name.span),
        resolved: ch.ok,
        clock,
        sensor,
        module,
        band,
        filters,
        filters_from,
        filters_empty_override,
        rejection,
        thresholds,
        sample_bits: ch.sample_bits,
        analysis,
        no_analysis,
        verdicts,
        fix,
        findings: channel_findings(rig, ch, sources, findings),
    }
}

/// Which image a folding frequency belongs to: `fs − B = 43 kHz`, `2·fs − B = 91 kHz`,
/// or a point inside an image band (`98 kHz, inside 2·fs ± B`). `rate` is the rate the
/// images repeat at, `name` its symbol.
pub fn image_name(f: f64, rate: f64, band: f64, name: &str) -> String {
    let n = (f / rate).round().max(1.0);
    let k = if n == 1.0 {
        name.to_string()
    } else {
        format!("{}·{name}", crate::words::sig6(n))
    };
    let tol = 1e-9 * f.abs().max(1.0);
    if (f - (n * rate - band)).abs() <= tol {
        format!("{k} − B = {}", format_hz(f))
    } else if (f - (n * rate + band)).abs() <= tol {
        format!("{k} + B = {}", format_hz(f))
    } else {
        format!("{}, inside {k} ± B", format_hz(f))
    }
}

/// What the plot shows, worked out here so that [`plot`] only draws.
pub fn plot_data(rig: &Rig, ci: usize, ins: &Inspection) -> Option<plot::PlotData> {
    let a = ins.analysis.as_ref()?;
    let ch = &rig.channels[ci];
    let chain = Chain::new(rig, ch)?;
    let band = a.band_hz;
    let fs0 = a.stages[0].rate_hz();
    let required = ins.rejection.value;

    // Markers that want to be on the plot.
    let mut wanted: Vec<f64> = Vec::new();
    if let Some((fr, _)) = ins.sensor.as_ref().and_then(|s| s.resonance) {
        wanted.push(fr);
    }
    wanted.extend(a.disturbances.iter().map(|d| d.frequency_hz));
    let f_min = band / 20.0;
    let cap = 100.0 * fs0;
    let mut f_max = 3.5 * fs0;
    for &f in &wanted {
        if f > f_max && f <= cap {
            f_max = f * 1.3;
        }
    }
    // A converter's worst modulator image is worth the wider axis, however far up.
    let modulator = a.stages[0].modulator.as_ref();
    if let Some((fmod, m)) = modulator {
        f_max = f_max.max((fmod + band) * 1.3).max(m.fold_from_hz * 1.3);
    }

    // Curves: the chain up to the ADC, and the whole chain when a stage has a filter.
    let last = chain.changes.len() - 1;
    let stage_filters = chain.changes.iter().any(|rc| rc.filter.is_some());
    let mut xs = plot::log_points(f_min, f_max, 900);
    let mut exact_points = vec![band];
    exact_points.extend(a.stages.iter().map(|s| s.rate_hz() - band));
    exact_points.extend(wanted.iter().copied());
    for p in exact_points {
        if p > f_min && p < f_max {
            xs.push(p);
        }
    }
    xs.sort_by(f64::total_cmp);
    xs.dedup();
    let adc_label = if chain.has_analog_filter() {
        "chain up to the ADC (sensor response and the ADC's filters)".to_string()
    } else {
        "chain up to the ADC: no filter (0 dB everywhere)".to_string()
    };
    let mut curves = vec![plot::Curve {
        label: adc_label,
        points: xs
            .iter()
            .map(|&f| (f, chain.attenuation_db(f, 0)))
            .collect(),
        full_chain: false,
    }];
    if last > 0 && stage_filters {
        curves.push(plot::Curve {
            label: "whole chain, with the decimation filters".to_string(),
            points: xs
                .iter()
                .map(|&f| (f, chain.attenuation_db(f, last)))
                .collect(),
            full_chain: true,
        });
    }

    let mut markers = Vec::new();
    let stages_named = a.stages.len() > 1;
    for s in &a.stages {
        let name = match (s.stage, stages_named) {
            (0, false) => "fs − B".to_string(),
            (0, true) => "ADC: fs − B".to_string(),
            (k, _) => format!("stage {k}: fs − B"),
        };
        if let Some(al) = &s.alias {
            let prefix = match (s.stage, stages_named) {
                (0, false) => String::new(),
                (0, true) => "ADC: ".to_string(),
                (k, _) => format!("stage {k}: "),
            };
            markers.push(plot::Marker {
                kind: plot::MarkerKind::Fold,
                frequency_hz: al.fold_from_hz,
                attenuation_db: al.attenuation_db,
                label: format!(
                    "{prefix}{}: {}",
                    image_name(al.fold_from_hz, s.rate_hz(), band, "fs"),
                    crate::words::format_db(al.attenuation_db)
                ),
                pass: Some(al.pass),
                required_db: None,
            });
        } else if s.checked && !s.nyquist_ok && s.rate_hz() > band {
            // The band folds onto itself: fs − B lies inside it.
            let f = s.rate_hz() - band;
            markers.push(plot::Marker {
                kind: plot::MarkerKind::Fold,
                frequency_hz: f,
                attenuation_db: chain.attenuation_db(f, s.stage),
                label: format!("{name} = {}: inside the band", format_hz(f)),
                pass: Some(false),
                required_db: None,
            });
        }
    }
    if let Some((fmod, m)) = modulator {
        let n = (m.fold_from_hz / fmod).round().max(1.0);
        let k = if n == 1.0 {
            String::new()
        } else {
            format!("{}", n as u64)
        };
        let side = if m.fold_from_hz < n * fmod {
            "−"
        } else {
            "+"
        };
        markers.push(plot::Marker {
            kind: plot::MarkerKind::Modulator,
            frequency_hz: m.fold_from_hz,
            attenuation_db: m.attenuation_db,
            label: format!(
                "modulator: {k}f_mod {side} B = {}: {} (analog chain alone)",
                format_hz(m.fold_from_hz),
                crate::words::format_db(m.attenuation_db)
            ),
            pass: Some(m.pass),
            required_db: None,
        });
    }
    if let Some((fr, gain)) = ins.sensor.as_ref().and_then(|s| s.resonance) {
        // The rate change where the resonance folds into the band, else the ADC.
        let folding = a
            .stages
            .iter()
            .filter_map(|s| s.resonance.as_ref())
            .find(|r| r.folds_into_band);
        let r = folding.or_else(|| a.stages[0].resonance.as_ref());
        if let Some(r) = r {
            let lands = if r.folds_into_band {
                format!(" → {}", format_hz(r.lands_at_hz))
            } else {
                String::new()
            };
            markers.push(plot::Marker {
                kind: plot::MarkerKind::Resonance,
                frequency_hz: fr,
                attenuation_db: r.net_db,
                label: format!(
                    "resonance {} (+{} dB){lands}: net {}",
                    format_hz(fr),
                    crate::words::sig6(gain),
                    crate::words::format_db(r.net_db)
                ),
                pass: r.pass,
                required_db: None,
            });
        }
    }
    for d in &a.disturbances {
        let (label, att, pass, req) = match &d.outcome {
            DisturbanceOutcome::FoldsIn { stage, pass } => {
                let st = d.steps.iter().find(|s| s.stage == *stage);
                let att = st.map_or(0.0, |s| s.attenuation_db);
                (
                    format!(
                        "{} {} → {}: {}, needs {}",
                        d.name,
                        format_hz(d.frequency_hz),
                        format_hz(st.map_or(0.0, |s| s.lands_at_hz)),
                        crate::words::format_db(att),
                        db_text(d.required_db)
                    ),
                    att,
                    Some(*pass),
                    Some(d.required_db),
                )
            }
            DisturbanceOutcome::InBand => (
                format!("{} {} (in the band)", d.name, format_hz(d.frequency_hz)),
                chain.attenuation_db(d.frequency_hz, 0),
                None,
                None,
            ),
            DisturbanceOutcome::StaysOut | DisturbanceOutcome::NotChecked { .. } => (
                format!("{} {}", d.name, format_hz(d.frequency_hz)),
                chain.attenuation_db(d.frequency_hz, 0),
                None,
                None,
            ),
        };
        markers.push(plot::Marker {
            kind: plot::MarkerKind::Disturbance,
            frequency_hz: d.frequency_hz,
            attenuation_db: att,
            label,
            pass,
            required_db: req,
        });
    }
    let notes: Vec<String> = markers
        .iter()
        .filter(|m| m.frequency_hz < f_min || m.frequency_hz > f_max)
        .map(|m| format!("{}: outside the plotted range", m.label))
        .collect();
    markers.retain(|m| m.frequency_hz >= f_min && m.frequency_hz <= f_max);

    // Images of the band around multiples of every rate change's rate; a stage leaves
    // out the images an earlier rate change already folded (multiples of its factor).
    let mut images = Vec::new();
    let mut half_rates = Vec::new();
    // The modulator's own images are drawn as such, not as the ADC's.
    let mod_ratio = modulator.map_or(0, |(fmod, _)| (fmod / fs0).round() as u32);
    for rc in &chain.changes {
        let fs = rc.fs_hz();
        let skip = if rc.stage == 0 { mod_ratio } else { rc.factor };
        let name = if rc.stage == 0 {
            "ADC".to_string()
        } else {
            format!("stage {} (÷{})", rc.stage, rc.factor)
        };
        half_rates.push(plot::HalfRate {
            stage: rc.stage,
            frequency_hz: fs / 2.0,
            label: format!("{name} at {}", format_hz(fs)),
        });
        let mut k = 1u32;
        let mut drawn = 0;
        while f64::from(k) * fs - band < f_max && drawn < 200 {
            if skip > 1 && k.is_multiple_of(skip) {
                k += 1;
                continue;
            }
            let c = f64::from(k) * fs;
            let label = match (rc.stage, drawn) {
                (0, 0) => "fs ± B".to_string(),
                (0, 1..=2) => format!("{k}fs ± B"),
                (st, 0) => format!("fs{st} ± B"),
                _ => String::new(),
            };
            images.push(plot::Image {
                low_hz: (c - band).max(f_min),
                high_hz: (c + band).min(f_max),
                label,
                stage: Some(rc.stage),
            });
            drawn += 1;
            k += 1;
        }
    }
    if let Some(fmod) = chain.modulator_rate_hz() {
        let mut k = 1u32;
        while f64::from(k) * fmod - band < f_max && k <= 50 {
            let c = f64::from(k) * fmod;
            images.push(plot::Image {
                low_hz: (c - band).max(f_min),
                high_hz: (c + band).min(f_max),
                // The modulator marker names the first image when it is drawn.
                label: if k == 1 && modulator.is_none() {
                    "f_mod ± B".to_string()
                } else {
                    String::new()
                },
                stage: None,
            });
            k += 1;
        }
    }
    let phase = group_phase_panel(rig, ci);

    let rig_name = ins.rig.as_deref().unwrap_or("rig");
    let mut subtitle = format!("ADC {}", format_hz(fs0));
    if last > 0 {
        subtitle.push_str(&format!(
            ", {} after {} decimation stage{}",
            format_hz(a.final_rate_hz),
            last,
            if last == 1 { "" } else { "s" }
        ));
    }
    subtitle.push_str(&format!(
        " · band {} · required rejection {}",
        format_hz(band),
        db_text(required)
    ));
    Some(plot::PlotData {
        title: format!("{rig_name} / {}", ins.channel),
        subtitle,
        f_min,
        f_max,
        band_hz: band,
        band_label: format!("band 0 – {}", format_hz(band)),
        required_db: required,
        required_label: format!(
            "required rejection {} ({})",
            db_text(required),
            ins.rejection.what
        ),
        curves,
        markers,
        images,
        half_rates,
        phase,
        notes,
    })
}

/// The phase panel of the first group the channel belongs to: every member's phase
/// (analog phase less the digital delays) over the group's common band.
fn group_phase_panel(rig: &Rig, ci: usize) -> Option<plot::PhasePanel> {
    let gi = rig.group_members.iter().position(|m| m.contains(&ci))?;
    let mut members: Vec<usize> = rig.group_members[gi]
        .iter()
        .copied()
        .filter(|&c| rig.channels[c].ok)
        .collect();
    members.sort_by_key(|&c| c != ci);
    members.dedup();
    let chains: Vec<(usize, Chain)> = members
        .iter()
        .filter_map(|&c| Some((c, Chain::new(rig, &rig.channels[c])?)))
        .collect();
    let common = members
        .iter()
        .filter_map(|&c| {
            rig.channels[c]
                .band
                .as_ref()
                .map(|b| quantity::to_f64(&b.hz))
        })
        .fold(f64::INFINITY, f64::min);
    if chains.len() < 2 || !common.is_finite() {
        return None;
    }
    let curves = chains
        .iter()
        .map(|(c, chain)| {
            let pts = (0..=200)
                .map(|i| {
                    let f = common * f64::from(i) / 200.0;
                    (f, chain.total_phase_deg(f))
                })
                .collect();
            let label = format!(
                "{}: latency {} (digital {})",
                rig.channels[*c].def.name.value,
                crate::words::format_seconds(chain.latency_s()),
                crate::words::format_seconds(chain.digital_delay_s())
            );
            (label, pts)
        })
        .collect();
    Some(plot::PhasePanel {
        title: format!(
            "phase in group `{}` over the common {} band (analog phase less 360°·f·digital delay)",
            rig.groups[gi].name.value,
            format_hz(common)
        ),
        band_hz: common,
        curves,
    })
}
