//! The three renderings of a [`Diff`]: plain text, JSON and Markdown. They render only;
//! every number and cause is worked out in the comparison.

use super::{Alias, ChannelChange, ClockChange, Diff, DiffFinding, Metrics, RigStatus, Status};
use crate::finding::Severity;
use crate::model::quantity::{Exact, to_f64};
use crate::source::escape_control;
use crate::words::{format_db, format_hz, plural, round_to, sig6};
use serde_json::{Map, Value, json};

const NONE: &str = "—";

fn rate(r: Option<Exact>) -> String {
    r.map_or(NONE.to_string(), |r| format_hz(to_f64(&r)))
}

fn ratio(r: Option<Exact>) -> String {
    r.map_or(NONE.to_string(), |r| sig6(round_to(to_f64(&r), 4)))
}

fn attenuation(a: Option<Alias>) -> String {
    a.map_or(NONE.to_string(), |a| format_db(a.attenuation_db))
}

fn stage(a: Option<Alias>) -> String {
    match a {
        Some(Alias { stage: 0, .. }) => " at the ADC".to_string(),
        Some(a) => format!(" at decimation stage {}", a.stage),
        None => String::new(),
    }
}

/// "a → b", or "a" when both are the same.
fn arrow(a: String, b: String) -> String {
    if a == b { a } else { format!("{a} → {b}") }
}

/// One number before → after, for a channel on one or both sides.
fn both(c: &ChannelChange, f: impl Fn(&Metrics) -> String) -> String {
    match (&c.before, &c.after) {
        (Some(a), Some(b)) => arrow(f(a), f(b)),
        (Some(m), None) | (None, Some(m)) => f(m),
        (None, None) => NONE.to_string(),
    }
}

fn clock_of(m: &Metrics) -> String {
    m.clock.clone().unwrap_or_else(|| NONE.to_string())
}

/// "derived from clock `hall-25k6`", "edited", "added" …
fn change_text(c: &ChannelChange) -> String {
    let causes = c
        .causes
        .iter()
        .map(|x| x.describe())
        .collect::<Vec<_>>()
        .join(", ");
    match c.status {
        Status::Added | Status::Removed => c.status.as_str().to_string(),
        Status::Changed if c.edited && causes.is_empty() => "edited".to_string(),
        Status::Changed if c.edited => format!("edited; upstream {causes} changed too"),
        Status::Changed if causes.is_empty() => "derived".to_string(),
        Status::Changed => format!("derived from {causes}"),
    }
}

fn clock_text(k: &ClockChange) -> String {
    let rates = arrow(rate(k.before), rate(k.after));
    let follows = k
        .follows
        .as_ref()
        .map(|f| format!(", follows `{f}`"))
        .unwrap_or_default();
    let reach = if k.channels_before == k.channels_after {
        plural(k.channels_after, "channel")
    } else {
        format!(
            "{} (was {})",
            plural(k.channels_after, "channel"),
            k.channels_before
        )
    };
    format!(
        "{rates}{follows}, reaches {reach} in {}",
        plural(k.rigs, "rig")
    )
}

#[derive(Default)]
struct Tally {
    error: usize,
    warning: usize,
    note: usize,
}

impl Tally {
    fn of(fs: &[DiffFinding]) -> Tally {
        let mut t = Tally::default();
        for f in fs {
            match f.finding.severity {
                Severity::Error => t.error += 1,
                Severity::Warning => t.warning += 1,
                Severity::Note => t.note += 1,
            }
        }
        t
    }

    fn text(&self) -> String {
        format!(
            "{}, {}, {}",
            plural(self.error, "error"),
            plural(self.warning, "warning"),
            plural(self.note, "note")
        )
    }

    fn json(&self) -> Value {
        json!({ "error": self.error, "warning": self.warning, "note": self.note })
    }
}

fn count(d: &Diff, s: Status) -> usize {
    d.channels.iter().filter(|c| c.status == s).count()
}

fn heading(d: &Diff) -> String {
    match &d.rev {
        Some((rev, commit)) => format!("{rev} ({}) → {}", &commit[..commit.len().min(12)], d.new),
        None => format!("{} → {}", d.old, d.new),
    }
}

fn summary_line(d: &Diff) -> String {
    let changed = count(d, Status::Changed);
    let derived = d.channels.iter().filter(|c| c.is_derived()).count();
    format!(
        "{} changed ({derived} derived), {} added, {} removed; {} changed; introduced {}; resolved {}; {} changed, {} unchanged\n",
        plural(changed, "channel"),
        count(d, Status::Added),
        count(d, Status::Removed),
        plural(d.clocks.len(), "clock"),
        Tally::of(&d.introduced).text(),
        Tally::of(&d.resolved).text(),
        plural(d.changed.len(), "finding"),
        d.unchanged,
    )
}

/// What differs between the two sides of a changed finding, one `key: before → after`
/// per differing value (then severity), in the new side's value order.
fn value_changes(old: &DiffFinding, new: &DiffFinding) -> Vec<String> {
    let (a, b) = (&old.finding, &new.finding);
    let show = |v: Option<&Value>| v.map_or("none".to_string(), |v| v.to_string());
    let mut keys: Vec<&String> = b.values.keys().collect();
    keys.extend(a.values.keys().filter(|k| !b.values.contains_key(*k)));
    let mut out: Vec<String> = keys
        .into_iter()
        .filter(|k| a.values.get(*k) != b.values.get(*k))
        .map(|k| format!("{k}: {} → {}", show(a.values.get(k)), show(b.values.get(k))))
        .collect();
    if a.severity != b.severity {
        out.push(format!(
            "severity: {} → {}",
            a.severity.as_str(),
            b.severity.as_str()
        ));
    }
    out
}

/// Plain text: clocks, rig files, channels per rig, introduced and resolved findings,
/// and one summary line. Deterministic (no timings).
pub fn human(d: &Diff) -> String {
    let mut s = format!("comparing {}\n", heading(d));
    if !d.clocks.is_empty() {
        s.push_str("\nclocks whose rate changed\n");
        for k in &d.clocks {
            s.push_str(&format!("  {} ({}): {}\n", k.name, k.file, clock_text(k)));
        }
    }
    if !d.rigs.is_empty() {
        s.push_str("\nrig files\n");
        for r in &d.rigs {
            let what = match r.status {
                RigStatus::Added => "added  ",
                RigStatus::Removed => "removed",
                RigStatus::NotCompared => "not compared (a side cannot be read as a rig):",
            };
            s.push_str(&format!("  {what} {}\n", r.file));
        }
    }
    let mut rig: Option<&str> = None;
    for c in &d.channels {
        if rig != Some(c.rig.as_str()) {
            s.push_str(&format!("\nchannels of {}\n", c.rig));
            rig = Some(&c.rig);
        }
        match c.status {
            Status::Changed => {
                s.push_str(&format!("  changed {}: {}\n", c.name, change_text(c)));
                let line = |label: &str, value: String| format!("      {label:<19}{value}\n");
                s.push_str(&line("clock", both(c, clock_of)));
                s.push_str(&line("final rate", both(c, |m| rate(m.final_rate))));
                s.push_str(&line("band", both(c, |m| rate(m.band))));
                s.push_str(&line("ratio", both(c, |m| ratio(m.ratio))));
                s.push_str(&line(
                    "alias attenuation",
                    both(c, |m| format!("{}{}", attenuation(m.alias), stage(m.alias))),
                ));
                s.push_str(&line(
                    "required rejection",
                    both(c, |m| format_db(m.required_db)),
                ));
            }
            Status::Added | Status::Removed => {
                s.push_str(&format!(
                    "  {:<7} {}: clock {}, final rate {}, band {}, ratio {}, alias attenuation {}{}\n",
                    c.status.as_str(),
                    c.name,
                    both(c, clock_of),
                    both(c, |m| rate(m.final_rate)),
                    both(c, |m| rate(m.band)),
                    both(c, |m| ratio(m.ratio)),
                    both(c, |m| attenuation(m.alias)),
                    both(c, |m| stage(m.alias)),
                ));
            }
        }
    }
    for (title, list, with_help) in [
        ("introduced findings", &d.introduced, true),
        ("resolved findings", &d.resolved, false),
    ] {
        if list.is_empty() {
            s.push_str(&format!("\n{title}: none\n"));
            continue;
        }
        s.push_str(&format!("\n{title}: {}\n", list.len()));
        for f in list {
            s.push_str(&format!(
                "  {}:{}:{}  {}  {}  {}\n",
                escape_control(&f.file),
                f.line,
                f.column,
                f.finding.severity.as_str(),
                f.finding.rule,
                escape_control(&f.finding.message)
            ));
            if let Some(r) = &f.now_suppressed {
                s.push_str(&format!("      now suppressed: {}\n", escape_control(r)));
            }
            if with_help && let Some(h) = &f.finding.help {
                s.push_str(&format!("      help: {}\n", escape_control(h)));
            }
        }
    }
    if d.changed.is_empty() {
        s.push_str("\nchanged findings: none\n");
    } else {
        s.push_str(&format!("\nchanged findings: {}\n", d.changed.len()));
        for (old, new) in &d.changed {
            s.push_str(&format!(
                "  {}:{}:{}  {}  {}  {}\n      was: {}\n",
                new.file,
                new.line,
                new.column,
                new.finding.severity.as_str(),
                new.finding.rule,
                new.finding.message,
                old.finding.message
            ));
            for c in value_changes(old, new) {
                s.push_str(&format!("      {c}\n"));
            }
        }
    }
    s.push('\n');
    s.push_str(&summary_line(d));
    s
}

fn opt_f64(v: Option<f64>) -> Value {
    v.map_or(Value::Null, Value::from)
}

fn metrics_json(m: &Option<Metrics>) -> Value {
    let Some(m) = m else {
        return Value::Null;
    };
    json!({
        "clock": m.clock,
        "final_rate_hz": opt_f64(m.final_rate.map(|r| to_f64(&r))),
        "band_hz": opt_f64(m.band.map(|r| to_f64(&r))),
        "ratio": opt_f64(m.ratio.map(|r| round_to(to_f64(&r), 4))),
        "alias_attenuation_db": opt_f64(m.alias.map(|a| round_to(a.attenuation_db, 2))),
        "alias_stage": m.alias.map(|a| a.stage),
        "fold_from_hz": opt_f64(m.alias.map(|a| a.fold_from_hz)),
        "required_db": round_to(m.required_db, 2),
    })
}

/// JSON, version 1:
///
/// ```json
/// {
///   "version": 1,
///   "old": "old", "new": "new",
///   "rev": null,                       // or { "name": "HEAD", "commit": "<id>" }
///   "rigs": [ { "file": "…", "status": "added" | "removed" | "not-compared" } ],
///   "clocks": [ { "clock": "hall-25k6", "file": "catalog/hall.yaml",
///                 "rate_before_hz": 25600.0, "rate_after_hz": 12800.0,
///                 "follows": null, "channels_before": 7, "channels_after": 7, "rigs": 2 } ],
///   "channels": [ { "rig": "bay2.rig.yaml", "channel": "root-sg-le-0",
///                   "status": "added" | "removed" | "changed",
///                   "edited": false, "derived": true,
///                   "causes": [ { "kind": "clock" | "sensor" | "module" | "thresholds",
///                                 "name": "hall-25k6" } ],
///                   "changed": ["final_rate", "ratio"],
///                   "before": METRICS | null, "after": METRICS | null } ],
///   "introduced": [ FINDING ], "resolved": [ FINDING ],
///   "summary": { "channels": { "added": 0, "removed": 0, "changed": 3, "derived": 3 },
///                "clocks": 2,
///                "introduced": { "error": 1, "warning": 1, "note": 0 },
///                "resolved": { "error": 0, "warning": 0, "note": 0 } }
/// }
/// ```
///
/// METRICS is `{ "clock", "final_rate_hz", "band_hz", "ratio", "alias_attenuation_db",
/// "alias_stage", "fold_from_hz", "required_db" }` (null where unknown). FINDING is a
/// finding as `check --format json` writes it, its position on its own side; a resolved
/// finding the new side suppresses carries `"now_suppressed": "<reason>"`.
pub fn json(d: &Diff) -> String {
    let rigs: Vec<Value> = d
        .rigs
        .iter()
        .map(|r| {
            json!({
                "file": r.file,
                "status": match r.status {
                    RigStatus::Added => "added",
                    RigStatus::Removed => "removed",
                    RigStatus::NotCompared => "not-compared",
                },
            })
        })
        .collect();
    let clocks: Vec<Value> = d
        .clocks
        .iter()
        .map(|k| {
            json!({
                "clock": k.name,
                "file": k.file,
                "rate_before_hz": opt_f64(k.before.map(|r| to_f64(&r))),
                "rate_after_hz": opt_f64(k.after.map(|r| to_f64(&r))),
                "follows": k.follows,
                "channels_before": k.channels_before,
                "channels_after": k.channels_after,
                "rigs": k.rigs,
            })
        })
        .collect();
    let channels: Vec<Value> = d
        .channels
        .iter()
        .map(|c| {
            let causes: Vec<Value> = c
                .causes
                .iter()
                .map(|x| {
                    let (kind, name) = match x {
                        super::Cause::Clock(n) => ("clock", Some(n)),
                        super::Cause::Sensor(n) => ("sensor", Some(n)),
                        super::Cause::Module(n) => ("module", Some(n)),
                        super::Cause::Thresholds => ("thresholds", None),
                    };
                    json!({ "kind": kind, "name": name })
                })
                .collect();
            let mut o = Map::new();
            o.insert("rig".into(), json!(c.rig));
            o.insert("channel".into(), json!(c.name));
            o.insert("status".into(), json!(c.status.as_str()));
            o.insert("edited".into(), json!(c.edited));
            o.insert("derived".into(), json!(c.is_derived()));
            o.insert("causes".into(), Value::Array(causes));
            o.insert("changed".into(), json!(c.changed));
            o.insert("before".into(), metrics_json(&c.before));
            o.insert("after".into(), metrics_json(&c.after));
            Value::Object(o)
        })
        .collect();
    let v = json!({
        "version": 1,
        "old": d.old,
        "new": d.new,
        "rev": d.rev.as_ref().map(|(name, commit)| json!({ "name": name, "commit": commit })),
        "rigs": rigs,
        "clocks": clocks,
        "channels": channels,
        "introduced": d.introduced.iter().map(|f| f.json.clone()).collect::<Vec<_>>(),
        "resolved": d.resolved.iter().map(|f| f.json.clone()).collect::<Vec<_>>(),
        "changed": d.changed.iter().map(|(old, new)| json!({
            "fingerprint": new.finding.fingerprint,
            "before": old.json,
            "after": new.json,
        })).collect::<Vec<_>>(),
        "summary": {
            "channels": {
                "added": count(d, Status::Added),
                "removed": count(d, Status::Removed),
                "changed": count(d, Status::Changed),
                "derived": d.channels.iter().filter(|c| c.is_derived()).count(),
            },
            "clocks": d.clocks.len(),
            "introduced": Tally::of(&d.introduced).json(),
            "resolved": Tally::of(&d.resolved).json(),
            "changed_findings": d.changed.len(),
            "unchanged_findings": d.unchanged,
        },
    });
    let mut s = serde_json::to_string_pretty(&v).expect("JSON values serialise");
    s.push('\n');
    s
}

/// A table cell: pipes escaped, line breaks flattened.
fn cell(s: &str) -> String {
    s.replace('|', "\\|").replace('\n', " ")
}

/// Markdown for a review comment: a table with one row per added, removed or changed
/// channel (rate, band, ratio and worst alias attenuation before → after), the clocks
/// whose rate changed, then the introduced and resolved findings as lists.
pub fn markdown(d: &Diff) -> String {
    let mut s = format!("### foldcheck diff: {}\n\n", heading(d));
    if d.channels.is_empty() {
        s.push_str("No channel changed.\n");
    } else {
        s.push_str("| rig | channel | change | clock | final rate | band | ratio | worst alias attenuation |\n");
        s.push_str("|---|---|---|---|---|---|---|---|\n");
        for c in &d.channels {
            let alias = both(c, |m| {
                let stage = match m.alias {
                    Some(Alias { stage: k, .. }) if k > 0 => format!(" (stage {k})"),
                    _ => String::new(),
                };
                format!("{}{stage}", attenuation(m.alias))
            });
            s.push_str(&format!(
                "| `{}` | `{}` | {} | {} | {} | {} | {} | {} |\n",
                cell(&c.rig),
                cell(&c.name),
                cell(&change_text(c)),
                cell(&both(c, |m| match &m.clock {
                    Some(k) => format!("`{k}`"),
                    None => NONE.to_string(),
                })),
                cell(&both(c, |m| rate(m.final_rate))),
                cell(&both(c, |m| rate(m.band))),
                cell(&both(c, |m| ratio(m.ratio))),
                cell(&alias),
            ));
        }
    }
    if !d.clocks.is_empty() {
        s.push_str("\n**Clocks whose rate changed**\n\n");
        for k in &d.clocks {
            s.push_str(&format!(
                "- `{}` (`{}`): {}\n",
                k.name,
                k.file,
                clock_text(k)
            ));
        }
    }
    if !d.rigs.is_empty() {
        s.push_str("\n**Rig files**\n\n");
        for r in &d.rigs {
            let what = match r.status {
                RigStatus::Added => "added",
                RigStatus::Removed => "removed",
                RigStatus::NotCompared => "not compared (a side cannot be read as a rig)",
            };
            s.push_str(&format!("- `{}`: {what}\n", r.file));
        }
    }
    for (title, list) in [
        ("Introduced findings", &d.introduced),
        ("Resolved findings", &d.resolved),
    ] {
        if list.is_empty() {
            s.push_str(&format!("\n**{title}**: none\n"));
            continue;
        }
        s.push_str(&format!("\n**{title}** ({})\n\n", list.len()));
        for f in list {
            let suppressed = f
                .now_suppressed
                .as_ref()
                .map(|r| format!(" (now suppressed: {r})"))
                .unwrap_or_default();
            s.push_str(&format!(
                "- **{}** `{}` at `{}:{}:{}`: {}{suppressed}\n",
                f.finding.severity.as_str(),
                f.finding.rule,
                escape_control(&f.file),
                f.line,
                f.column,
                escape_control(&f.finding.message).replace('\n', " ")
            ));
        }
    }
    if !d.changed.is_empty() {
        s.push_str(&format!("\n**Changed findings** ({})\n\n", d.changed.len()));
        for (old, new) in &d.changed {
            let changes = value_changes(old, new)
                .iter()
                .map(|c| format!("`{c}`"))
                .collect::<Vec<_>>()
                .join(", ");
            s.push_str(&format!(
                "- **{}** `{}` at `{}:{}:{}`: {} (was: {}){}\n",
                new.finding.severity.as_str(),
                new.finding.rule,
                new.file,
                new.line,
                new.column,
                cell(&new.finding.message),
                cell(&old.finding.message),
                if changes.is_empty() {
                    String::new()
                } else {
                    format!("; {changes}")
                }
            ));
        }
    }
    s.push('\n');
    s.push_str(&summary_line(d));
    s
}
