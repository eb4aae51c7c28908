//! `foldcheck diff`: what a configuration change does to the rigs.
//!
//! Both sides are linted with the real pipeline ([`campaign::run`], keeping the resolved
//! rigs). Rigs are matched by their path relative to the side's base (the directory
//! given, the parent of a single file, or the top of the git checkout for `--rev`);
//! clocks and channels are matched by name within a rig, never by position. For every
//! channel the comparison works out the final rate, the band, their ratio, the worst
//! alias attenuation and the required rejection on both sides; a channel is *changed*
//! when any of them differs. A changed channel whose own YAML is the same on both sides
//! is a *derived* change, and [`Cause`] names what upstream moved it (the first clock on
//! its clock path whose rate changed, its sensor, its module, or the thresholds).
//!
//! Findings are matched by fingerprint ([`crate::fingerprint`]: rule, owner and subject,
//! never the message, numbers or lines). A fingerprint on both sides is *unchanged* or
//! *changed* (its values, message or severity differ: shown before → after); one only on
//! the new side is *introduced*, one only on the old side *resolved*. The exit status is
//! 1 only when the change introduces a finding at or above `--fail-on`.

mod git;
mod render;

use crate::analysis;
use crate::campaign::{self, Fatal, Options, Outcome, RigOutcome};
use crate::finding::{Finding, Severity};
use crate::model::quantity::Exact;
use crate::model::{Filter, Module, Response, Sensor, Sp};
use crate::resolve::{RChannel, Rig};
use crate::source::FileId;
use crate::words::{ATTENUATION_CEILING_DB, finite};
use num_traits::CheckedDiv;
use serde_json::Value;
use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::path::{Component, Path, PathBuf};

pub use render::{human, json, markdown};

/// Output formats.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// Plain text.
    Human,
    /// JSON (version 1, see [`json`]).
    Json,
    /// Markdown for a review comment.
    Markdown,
}

/// Compare two files, two directories, or (with `rev`) the working tree with a git
/// revision, and render the result. Returns the text and the exit status (1 when the
/// change introduces a finding at or above `fail_on`); `Err` is a fatal error (exit 2).
pub fn run(
    paths: &[PathBuf],
    rev: Option<&str>,
    format: Format,
    fail_on: Severity,
    settings: Option<PathBuf>,
) -> Result<(String, u8), String> {
    let diff = match rev {
        Some(rev) => rev_diff(paths, rev, settings)?,
        None => pair_diff(paths, settings)?,
    };
    let text = match format {
        Format::Human => human(&diff),
        Format::Json => json(&diff),
        Format::Markdown => markdown(&diff),
    };
    Ok((text, diff.exit_status(fail_on)))
}

/// The result of a comparison.
#[derive(Clone, Debug)]
pub struct Diff {
    /// What the old side is ("old/", "HEAD").
    pub old: String,
    /// What the new side is ("new/", "the working tree").
    pub new: String,
    /// The revision compared with, for `--rev`: as given, and the commit it names.
    pub rev: Option<(String, String)>,
    /// Rig files added, removed, or not comparable (a side does not parse).
    pub rigs: Vec<RigNote>,
    /// Channels added, removed or changed, by rig then name.
    pub channels: Vec<ChannelChange>,
    /// Clocks whose rate changed, by defining file then name.
    pub clocks: Vec<ClockChange>,
    /// Findings of the new side that the old side does not have.
    pub introduced: Vec<DiffFinding>,
    /// Findings of the old side that the new side does not have.
    pub resolved: Vec<DiffFinding>,
    /// Findings on both sides (same fingerprint) whose values, message or severity
    /// differ: (old side, new side).
    pub changed: Vec<(DiffFinding, DiffFinding)>,
    /// Findings on both sides with the same values, message and severity.
    pub unchanged: usize,
}

impl Diff {
    /// 1 when an introduced finding is at or above `fail_on`, else 0.
    pub fn exit_status(&self, fail_on: Severity) -> u8 {
        u8::from(
            self.introduced
                .iter()
                .any(|f| f.finding.severity >= fail_on),
        )
    }
}

/// What happened to a rig file as a whole.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum RigStatus {
    /// Only on the new side.
    Added,
    /// Only on the old side.
    Removed,
    /// On both sides, but one side could not be read as a rig (see the findings).
    NotCompared,
}

/// A rig file that was added, removed or could not be compared.
#[derive(Clone, Debug)]
pub struct RigNote {
    /// The rig file as displayed.
    pub file: String,
    /// What happened.
    pub status: RigStatus,
}

/// Added, removed or changed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Status {
    /// Only on the new side.
    Added,
    /// Only on the old side.
    Removed,
    /// On both sides, with different numbers.
    Changed,
}

impl Status {
    /// The word used in output.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Added => "added",
            Status::Removed => "removed",
            Status::Changed => "changed",
        }
    }
}

/// The worst alias check of a channel: the lowest, over its checked rate changes, of
/// the attenuation at `fs − B` and the net attenuation of a sensor resonance that
/// folds into the band (read from the analysis).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Alias {
    /// Attenuation in dB (clamped at [`ATTENUATION_CEILING_DB`]).
    pub attenuation_db: f64,
    /// The rate change where it is lowest (0 = the ADC).
    pub stage: usize,
    /// The frequency that folds onto the band edge there, `fs − B`, in Hz.
    pub fold_from_hz: f64,
}

/// One channel's numbers on one side.
#[derive(Clone, Debug, PartialEq)]
pub struct Metrics {
    /// The clock it samples on.
    pub clock: Option<String>,
    /// The rate after the last stage, exact.
    pub final_rate: Option<Exact>,
    /// The band, exact.
    pub band: Option<Exact>,
    /// Final rate ÷ band, exact.
    pub ratio: Option<Exact>,
    /// Worst alias attenuation; `None` when no rate change is above twice the band.
    pub alias: Option<Alias>,
    /// The required rejection in dB (precedence of docs/model.md, "Sampling and folding").
    pub required_db: f64,
}

impl Metrics {
    /// A channel's numbers, read from its analysis (the same one the rules read):
    /// the worst alias check counts a sensor resonance that folds into the band.
    pub fn of(rig: &Rig, index: usize) -> Metrics {
        let ch = &rig.channels[index];
        let clock = ch.clock.map(|k| rig.clocks[k].def.name.value.clone());
        let band = ch.band.as_ref().map(|b| b.hz);
        let ctx = analysis::Context::default().with_fixes(false);
        let a = analysis::analyse_channel(rig, index, &ctx);
        let rates = a.rates.as_ref().ok();
        // A channel that did not resolve still has a final rate when its clock has one.
        let final_rate = rates.map(|r| r.final_rate).or_else(|| {
            let fs0 = rig.adc_rate(ch)?;
            crate::resolve::chain::Chain::with_adc_rate(rig, ch, fs0).map(|c| c.final_rate())
        });
        let ratio = match rates {
            Some(r) => r.final_ratio_exact,
            None => match (final_rate, band) {
                (Some(f), Some(b)) if b > Exact::from_integer(0) => f.checked_div(&b),
                _ => None,
            },
        };
        let alias = rates.and_then(|r| r.worst_fold()).map(|w| Alias {
            attenuation_db: finite(w.attenuation_db).min(ATTENUATION_CEILING_DB),
            stage: w.stage,
            fold_from_hz: w.fold_from_hz,
        });
        Metrics {
            clock,
            final_rate,
            band,
            ratio,
            alias,
            required_db: ch.rejection.0,
        }
    }
}

/// Hundredths, the precision attenuation is printed with: two values that print alike
/// are not a change.
fn hundredths(db: f64) -> i64 {
    (db * 100.0).round() as i64
}

/// The names of the numbers that differ between two sides, in output order.
fn changed_fields(a: &Metrics, b: &Metrics) -> Vec<&'static str> {
    let mut v = Vec::new();
    if a.clock != b.clock {
        v.push("clock");
    }
    if a.final_rate != b.final_rate {
        v.push("final_rate");
    }
    if a.band != b.band {
        v.push("band");
    }
    if a.ratio != b.ratio {
        v.push("ratio");
    }
    let alias = |m: &Metrics| m.alias.map(|x| (hundredths(x.attenuation_db), x.stage));
    if alias(a) != alias(b) {
        v.push("alias_attenuation");
    }
    if hundredths(a.required_db) != hundredths(b.required_db) {
        v.push("required_rejection");
    }
    v
}

/// Something upstream of a channel that changed and moved its numbers.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Cause {
    /// The first clock on the channel's clock path (root first) whose rate changed.
    Clock(String),
    /// Its sensor's definition changed (bandwidth, response).
    Sensor(String),
    /// Its module's definition changed (filters, rejection, ADC bits).
    Module(String),
    /// The rig's `defaults` or the settings changed the required rejection.
    Thresholds,
}

impl Cause {
    /// "clock `hall-25k6`".
    pub fn describe(&self) -> String {
        match self {
            Cause::Clock(n) => format!("clock `{n}`"),
            Cause::Sensor(n) => format!("sensor `{n}`"),
            Cause::Module(n) => format!("module `{n}`"),
            Cause::Thresholds => "the thresholds".to_string(),
        }
    }
}

/// A channel that was added, removed or changed.
#[derive(Clone, Debug)]
pub struct ChannelChange {
    /// The rig file as displayed (the new side's, unless removed).
    pub rig: String,
    /// The channel's name.
    pub name: String,
    /// What happened.
    pub status: Status,
    /// Whether the channel's own YAML differs (comments and spacing aside).
    pub edited: bool,
    /// What upstream moved its numbers (empty for added and removed channels).
    pub causes: Vec<Cause>,
    /// The numbers that differ (`final_rate`, `band`, `ratio`, `alias_attenuation`,
    /// `clock`, `required_rejection`).
    pub changed: Vec<&'static str>,
    /// The old side's numbers.
    pub before: Option<Metrics>,
    /// The new side's numbers.
    pub after: Option<Metrics>,
}

impl ChannelChange {
    /// A derived change: the channel's own YAML is the same, something upstream moved.
    pub fn is_derived(&self) -> bool {
        self.status == Status::Changed && !self.edited
    }
}

/// A clock whose rate changed (or that was added or removed in a rig on both sides).
#[derive(Clone, Debug)]
pub struct ClockChange {
    /// Its name.
    pub name: String,
    /// The file that defines it, as displayed.
    pub file: String,
    /// Old rate.
    pub before: Option<Exact>,
    /// New rate.
    pub after: Option<Exact>,
    /// The clock upstream whose change this one follows (none: its own definition
    /// changed).
    pub follows: Option<String>,
    /// Channels it reaches (directly or through derived clocks) before, over all rigs.
    pub channels_before: usize,
    /// Channels it reaches after, over all rigs.
    pub channels_after: usize,
    /// Rigs in which it changed.
    pub rigs: usize,
}

/// A finding that the change introduces or resolves, with its position on its side.
#[derive(Clone, Debug)]
pub struct DiffFinding {
    /// The finding.
    pub finding: Finding,
    /// Its file as displayed.
    pub file: String,
    /// 1-based line of the primary span.
    pub line: usize,
    /// 1-based column.
    pub column: usize,
    /// The finding in the JSON form of `check` (with `file` as displayed).
    pub json: Value,
    /// For a resolved finding that the new side still has but suppresses: the reason.
    pub now_suppressed: Option<String>,
}

/// One linted side and how to name its files.
struct Side {
    out: Outcome,
    /// Canonical base directory: rig and finding files are keyed relative to it.
    base: PathBuf,
    /// In a two-file diff, the rig file, keyed `""` so that the two rigs match.
    single: Option<PathBuf>,
    /// For the old side of `--rev`: its snapshot directory, the checkout it mirrors, and
    /// the current directory, to display its files as the working tree's would be.
    relocate: Option<(PathBuf, PathBuf, PathBuf)>,
    canonical: HashMap<FileId, PathBuf>,
}

impl Side {
    fn load(
        paths: &[PathBuf],
        settings: Option<PathBuf>,
        base: &Path,
        single: Option<&Path>,
        what: &str,
    ) -> Result<Side, String> {
        let opts = Options {
            settings,
            keep_rigs: true,
            // Both sides identify findings relative to their own base, so that a
            // finding has one fingerprint on both sides (docs/output.md).
            identity_base: Some(canonical_lenient(base)),
            ..Options::default()
        };
        let out = campaign::run(paths, &opts).map_err(|e| match e {
            Fatal::Settings(_) => format!(
                "{what}: {}",
                crate::report::fatal::render(&e, crate::report::human::Color::Never)
            ),
            other => other.to_string(),
        })?;
        let canonical = out
            .sources
            .iter()
            .map(|f| (f.id, canonical_lenient(&f.path)))
            .collect();
        Ok(Side {
            out,
            base: canonical_lenient(base),
            single: single.map(canonical_lenient),
            relocate: None,
            canonical,
        })
    }

    fn path(&self, file: FileId) -> &Path {
        &self.canonical[&file]
    }

    /// The file's key: its path relative to the base.
    fn key(&self, file: FileId) -> String {
        let p = self.path(file);
        if self.single.as_deref() == Some(p) {
            return String::new();
        }
        relative(p, &self.base)
    }

    /// The file as shown to the user (control characters escaped, as in every report).
    fn display(&self, file: FileId) -> String {
        if let Some((snapshot, top, cwd)) = &self.relocate
            && let Ok(rel) = self.path(file).strip_prefix(snapshot)
        {
            return crate::source::escape_control(&relative(&top.join(rel), cwd)).into_owned();
        }
        crate::source::escape_control(&self.out.sources.get(file).display).into_owned()
    }

    /// The YAML text of a span, comments and spacing normalised.
    fn text(&self, span: crate::source::Span) -> String {
        normalized(self.out.sources.get(span.file).slice(span))
    }

    fn diff_finding(&self, f: &Finding) -> DiffFinding {
        let src = self.out.sources.get(f.primary.span.file);
        let (line, column) = src.line_col(f.primary.span.start);
        let file = self.display(f.primary.span.file);
        let mut json = crate::report::json::finding(&self.out.sources, f);
        if let Value::Object(o) = &mut json {
            o.insert("file".into(), Value::from(file.clone()));
        }
        DiffFinding {
            finding: f.clone(),
            file,
            line,
            column,
            json,
            now_suppressed: None,
        }
    }

    fn rigs(&self) -> BTreeMap<String, &RigOutcome> {
        self.out
            .rigs
            .iter()
            .map(|r| (self.key(r.file), r))
            .collect()
    }
}

/// `foldcheck diff OLD NEW`.
fn pair_diff(paths: &[PathBuf], settings: Option<PathBuf>) -> Result<Diff, String> {
    let [old, new] = paths else {
        return Err(format!(
            "diff compares two paths, OLD and NEW (two files or two directories), or the working tree with --rev REV; {} given",
            match paths.len() {
                0 => "none".to_string(),
                n => n.to_string(),
            }
        ));
    };
    let meta = |p: &PathBuf| {
        std::fs::metadata(p).map_err(|e| match e.kind() {
            std::io::ErrorKind::NotFound => Fatal::NoSuchPath(p.clone()).to_string(),
            _ => Fatal::Unreadable(p.clone(), e.to_string()).to_string(),
        })
    };
    let (mo, mn) = (meta(old)?, meta(new)?);
    if mo.is_dir() != mn.is_dir() {
        return Err(mixed(old, mo.is_dir(), new));
    }
    let (o, n) = if mo.is_dir() {
        (
            Side::load(
                std::slice::from_ref(old),
                settings.clone(),
                old,
                None,
                "OLD",
            )?,
            Side::load(std::slice::from_ref(new), settings, new, None, "NEW")?,
        )
    } else {
        let parent = |p: &Path| {
            p.parent()
                .filter(|d| !d.as_os_str().is_empty())
                .unwrap_or(Path::new("."))
                .to_path_buf()
        };
        (
            Side::load(
                std::slice::from_ref(old),
                settings.clone(),
                &parent(old),
                Some(old),
                "OLD",
            )?,
            Side::load(
                std::slice::from_ref(new),
                settings,
                &parent(new),
                Some(new),
                "NEW",
            )?,
        )
    };
    Ok(compare(&o, &n, display_arg(old), display_arg(new), None))
}

fn display_arg(p: &Path) -> String {
    let s = p.to_string_lossy().replace('\\', "/");
    s.strip_prefix("./").map(str::to_string).unwrap_or(s)
}

fn mixed(a: &Path, a_is_dir: bool, b: &Path) -> String {
    let kind = |d: bool| if d { "a directory" } else { "a file" };
    format!(
        "cannot compare {} ({}) with {} ({}): give two files or two directories",
        a.display(),
        kind(a_is_dir),
        b.display(),
        kind(!a_is_dir)
    )
}

/// `foldcheck diff --rev REV [PATHS…]`.
fn rev_diff(paths: &[PathBuf], rev: &str, settings: Option<PathBuf>) -> Result<Diff, String> {
    let paths: Vec<PathBuf> = if paths.is_empty() {
        vec![PathBuf::from(".")]
    } else {
        paths.to_vec()
    };
    let cwd =
        std::env::current_dir().map_err(|e| format!("cannot read the current directory: {e}"))?;
    let cwd = canonical_lenient(&cwd);
    let anchor = existing_dir(&canonical_lenient(&paths[0]));
    let top = git::toplevel(&anchor)?;
    let commit = git::commit(&top, rev)?;
    let mut rels = Vec::new();
    for p in &paths {
        let c = canonical_lenient(p);
        let rel = c.strip_prefix(&top).map_err(|_| {
            format!(
                "{} is outside the git checkout at {}",
                p.display(),
                top.display()
            )
        })?;
        rels.push(rel.to_path_buf());
    }
    let snapshot = git::snapshot(&top, &commit, &rels)?;
    let snap = canonical_lenient(snapshot.path());
    let mut old_paths = Vec::new();
    let mut new_paths = Vec::new();
    for (p, rel) in paths.iter().zip(&rels) {
        let o = snap.join(rel);
        let (om, nm) = (std::fs::metadata(&o).ok(), std::fs::metadata(p).ok());
        match (&om, &nm) {
            (None, None) => {
                return Err(format!(
                    "{}: no such file or directory, neither in the working tree nor at {rev}",
                    p.display()
                ));
            }
            (Some(a), Some(b)) if a.is_dir() != b.is_dir() => {
                return Err(format!(
                    "{} is {} at {rev} but {} in the working tree: cannot compare them",
                    p.display(),
                    if a.is_dir() { "a directory" } else { "a file" },
                    if b.is_dir() { "a directory" } else { "a file" },
                ));
            }
            _ => {}
        }
        if om.is_some() {
            old_paths.push(o);
        }
        if nm.is_some() {
            new_paths.push(p.clone());
        }
    }
    let mut o = Side::load(&old_paths, settings.clone(), &snap, None, rev)?;
    o.relocate = Some((snap.clone(), top.clone(), cwd));
    let n = Side::load(&new_paths, settings, &top, None, "the working tree")?;
    let diff = compare(
        &o,
        &n,
        rev.to_string(),
        "the working tree".to_string(),
        Some((rev.to_string(), commit)),
    );
    drop(snapshot);
    Ok(diff)
}

/// Compare two linted sides.
fn compare(o: &Side, n: &Side, old: String, new: String, rev: Option<(String, String)>) -> Diff {
    let (origs, nrigs) = (o.rigs(), n.rigs());
    let keys: BTreeSet<&String> = origs.keys().chain(nrigs.keys()).collect();
    let mut rigs = Vec::new();
    let mut channels = Vec::new();
    let mut clocks: BTreeMap<ClockKey, ClockChange> = BTreeMap::new();
    for key in keys {
        match (origs.get(key), nrigs.get(key)) {
            (None, Some(nr)) => {
                let file = n.display(nr.file);
                rigs.push(RigNote {
                    file: file.clone(),
                    status: RigStatus::Added,
                });
                if let Some(rig) = &nr.rig {
                    channels.extend(one_sided(rig, &file, Status::Added));
                }
            }
            (Some(or), None) => {
                let file = o.display(or.file);
                rigs.push(RigNote {
                    file: file.clone(),
                    status: RigStatus::Removed,
                });
                if let Some(rig) = &or.rig {
                    channels.extend(one_sided(rig, &file, Status::Removed));
                }
            }
            (Some(or), Some(nr)) => {
                let file = n.display(nr.file);
                match (&or.rig, &nr.rig) {
                    (Some(a), Some(b)) => {
                        compare_channels(o, a, n, b, &file, &mut channels);
                        compare_clocks(o, a, n, b, &mut clocks);
                    }
                    _ => rigs.push(RigNote {
                        file,
                        status: RigStatus::NotCompared,
                    }),
                }
            }
            (None, None) => {} // every key comes from one of the sides
        }
    }
    let (introduced, resolved, changed, unchanged) = match_findings(o, n);
    Diff {
        old,
        new,
        rev,
        rigs,
        channels,
        clocks: clocks.into_values().collect(),
        introduced,
        resolved,
        changed,
        unchanged,
    }
}

fn one_sided(rig: &Rig, file: &str, status: Status) -> Vec<ChannelChange> {
    let mut v: Vec<ChannelChange> = rig
        .channels
        .iter()
        .enumerate()
        .map(|(i, ch)| {
            let m = Metrics::of(rig, i);
            ChannelChange {
                rig: file.to_string(),
                name: ch.def.name.value.clone(),
                status,
                edited: true,
                causes: Vec::new(),
                changed: Vec::new(),
                before: (status == Status::Removed).then(|| m.clone()),
                after: (status == Status::Added).then_some(m),
            }
        })
        .collect();
    v.sort_by(|a, b| a.name.cmp(&b.name));
    v
}

fn compare_channels(
    o: &Side,
    orig: &Rig,
    n: &Side,
    nrig: &Rig,
    file: &str,
    out: &mut Vec<ChannelChange>,
) {
    let by_name = |rig: &Rig| -> BTreeMap<String, usize> {
        rig.channels
            .iter()
            .enumerate()
            .map(|(i, c)| (c.def.name.value.clone(), i))
            .collect()
    };
    let (om, nm) = (by_name(orig), by_name(nrig));
    let names: BTreeSet<&String> = om.keys().chain(nm.keys()).collect();
    for name in names {
        let before = om.get(name).map(|&i| Metrics::of(orig, i));
        let after = nm.get(name).map(|&i| Metrics::of(nrig, i));
        let change = match (om.get(name), nm.get(name)) {
            (Some(&oi), Some(&ni)) => {
                let (a, b) = (before.as_ref().expect("old"), after.as_ref().expect("new"));
                let changed = changed_fields(a, b);
                if changed.is_empty() {
                    continue;
                }
                let (och, nch) = (&orig.channels[oi], &nrig.channels[ni]);
                let edited = o.text(och.def.item) != n.text(nch.def.item);
                let causes = upstream(orig, och, nrig, nch, &changed);
                ChannelChange {
                    rig: file.to_string(),
                    name: name.clone(),
                    status: Status::Changed,
                    edited,
                    causes,
                    changed,
                    before,
                    after,
                }
            }
            (_, Some(_)) => ChannelChange {
                rig: file.to_string(),
                name: name.clone(),
                status: Status::Added,
                edited: true,
                causes: Vec::new(),
                changed: Vec::new(),
                before,
                after,
            },
            _ => ChannelChange {
                rig: file.to_string(),
                name: name.clone(),
                status: Status::Removed,
                edited: true,
                causes: Vec::new(),
                changed: Vec::new(),
                before,
                after,
            },
        };
        out.push(change);
    }
}

fn clock_index(rig: &Rig, name: &str) -> Option<usize> {
    rig.clocks.iter().position(|c| c.def.name.value == name)
}

/// The first clock on `clock`'s path in the new rig (root first) whose rate differs
/// from the old rig's clock of the same name (or that the old rig lacks).
fn first_changed_clock(orig: &Rig, nrig: &Rig, clock: usize) -> Option<usize> {
    nrig.clock_path(clock).into_iter().find(|&i| {
        let name = &nrig.clocks[i].def.name.value;
        clock_index(orig, name).and_then(|j| orig.clocks[j].rate) != nrig.clocks[i].rate
    })
}

/// What upstream of a changed channel moved its numbers.
fn upstream(
    orig: &Rig,
    och: &RChannel,
    nrig: &Rig,
    nch: &RChannel,
    changed: &[&str],
) -> Vec<Cause> {
    let mut causes = Vec::new();
    let same_ref = |a: &Option<Sp<String>>, b: &Option<Sp<String>>| match (a, b) {
        (Some(a), Some(b)) => a.value == b.value,
        _ => false,
    };
    if changed.contains(&"final_rate")
        && same_ref(&och.def.clock, &nch.def.clock)
        && let Some(k) = nch.clock
        && let Some(i) = first_changed_clock(orig, nrig, k)
    {
        causes.push(Cause::Clock(nrig.clocks[i].def.name.value.clone()));
    }
    let has = |field: &str| changed.contains(&field);
    // Sensors, modules and thresholds are compared by value, so that a change that cannot
    // move this channel's numbers (a sensor's `kind`, a module's `throughput`) is not
    // named as a cause.
    let responses = |f: Option<&Sp<Vec<Filter>>>| -> Vec<Response> {
        f.map(|v| v.value.iter().map(|x| x.response.clone()).collect())
            .unwrap_or_default()
    };
    if same_ref(&och.def.sensor, &nch.def.sensor)
        && let (Some(a), Some(b)) = (och.sensor, nch.sensor)
    {
        let (sa, sb) = (&orig.sensors[a], &nrig.sensors[b]);
        let bandwidth = |s: &Sensor| s.bandwidth.as_ref().map(|b| b.value);
        let band_moved = has("band")
            && nch.band.as_ref().is_some_and(|b| b.from_sensor)
            && bandwidth(sa) != bandwidth(sb);
        let response_moved = has("alias_attenuation")
            && responses(sa.response.as_ref()) != responses(sb.response.as_ref());
        if band_moved || response_moved {
            causes.push(Cause::Sensor(sb.name.value.clone()));
        }
    }
    if same_ref(&och.def.module, &nch.def.module)
        && let (Some(a), Some(b)) = (och.module, nch.module)
    {
        let (ma, mb) = (&orig.modules[a], &nrig.modules[b]);
        let filters_moved = has("alias_attenuation")
            && nch.def.filters.is_none()
            && responses(ma.filters.as_ref()) != responses(mb.filters.as_ref());
        let value = |m: &Module| {
            (
                m.alias_rejection.as_ref().map(|r| r.value),
                m.adc_bits.as_ref().map(|r| r.value),
            )
        };
        let rejection_moved = has("required_rejection") && value(ma) != value(mb);
        if filters_moved || rejection_moved {
            causes.push(Cause::Module(mb.name.value.clone()));
        }
    }
    let rig_level = |r: &Rig| r.thresholds.alias_rejection.as_ref().map(|t| t.0);
    if has("required_rejection") && rig_level(orig) != rig_level(nrig) {
        causes.push(Cause::Thresholds);
    }
    causes
}

/// Clock changes are gathered over rigs: a catalog clock that two rigs include is one
/// entry, with the channels it reaches in both.
type ClockKey = (String, String, Option<Exact>, Option<Exact>);

fn compare_clocks(
    o: &Side,
    orig: &Rig,
    n: &Side,
    nrig: &Rig,
    acc: &mut BTreeMap<ClockKey, ClockChange>,
) {
    let names: BTreeSet<&String> = orig
        .clocks
        .iter()
        .chain(&nrig.clocks)
        .map(|c| &c.def.name.value)
        .collect();
    for name in names {
        let (oi, ni) = (clock_index(orig, name), clock_index(nrig, name));
        let before = oi.and_then(|i| orig.clocks[i].rate);
        let after = ni.and_then(|i| nrig.clocks[i].rate);
        if oi.is_some() && ni.is_some() && before == after {
            continue;
        }
        let (key, file) = match ni {
            Some(i) => {
                let f = nrig.clocks[i].def.name.span.file;
                (n.key(f), n.display(f))
            }
            None => {
                let f = orig.clocks[oi.expect("on one side")].def.name.span.file;
                (o.key(f), o.display(f))
            }
        };
        let follows = ni.and_then(|i| {
            first_changed_clock(orig, nrig, i)
                .filter(|&j| j != i)
                .map(|j| nrig.clocks[j].def.name.value.clone())
        });
        let reach = |rig: &Rig, i: Option<usize>| i.map_or(0, |i| rig.channels_under(i).len());
        let entry = acc
            .entry((key, name.clone(), before, after))
            .or_insert_with(|| ClockChange {
                name: name.clone(),
                file,
                before,
                after,
                follows,
                channels_before: 0,
                channels_after: 0,
                rigs: 0,
            });
        let (rb, ra) = (reach(orig, oi), reach(nrig, ni));
        entry.channels_before += rb;
        entry.channels_after += ra;
        // A rig counts when the clock reaches one of its channels on either side: a
        // catalog clock that a rig includes but does not use changes nothing there.
        if rb > 0 || ra > 0 {
            entry.rigs += 1;
        }
    }
}

/// Introduced, resolved, changed and unchanged findings, matched by fingerprint (see
/// the module documentation). Suppressed findings take no part: they neither introduce
/// nor keep a finding, but a resolved finding that the new side merely suppresses says
/// so.
type Matched = (
    Vec<DiffFinding>,
    Vec<DiffFinding>,
    Vec<(DiffFinding, DiffFinding)>,
    usize,
);

fn match_findings(o: &Side, n: &Side) -> Matched {
    let fp = |f: &Finding| f.fingerprint.clone().unwrap_or_default();
    fn index(side: &Side) -> HashMap<String, &Finding> {
        let mut m: HashMap<String, &Finding> = HashMap::new();
        for f in side.out.findings.iter().filter(|f| f.suppressed.is_none()) {
            m.entry(f.fingerprint.clone().unwrap_or_default())
                .or_insert(f);
        }
        m
    }
    let (old_by, new_by) = (index(o), index(n));
    let mut introduced = Vec::new();
    let mut changed = Vec::new();
    let mut unchanged = 0;
    for f in n.out.findings.iter().filter(|f| f.suppressed.is_none()) {
        match old_by.get(&fp(f)) {
            None => introduced.push(n.diff_finding(f)),
            Some(of) => {
                if of.values == f.values && of.message == f.message && of.severity == f.severity {
                    unchanged += 1;
                } else {
                    changed.push((o.diff_finding(of), n.diff_finding(f)));
                }
            }
        }
    }
    let suppressed: HashMap<String, &String> = n
        .out
        .findings
        .iter()
        .filter_map(|f| f.suppressed.as_ref().map(|r| (fp(f), r)))
        .collect();
    let mut resolved = Vec::new();
    for f in o.out.findings.iter().filter(|f| f.suppressed.is_none()) {
        let key = fp(f);
        if new_by.contains_key(&key) {
            continue;
        }
        let mut d = o.diff_finding(f);
        d.now_suppressed = suppressed.get(&key).map(|r| r.to_string());
        if let (Some(r), Value::Object(obj)) = (&d.now_suppressed, &mut d.json) {
            obj.insert("now_suppressed".into(), Value::from(r.clone()));
        }
        resolved.push(d);
    }
    (introduced, resolved, changed, unchanged)
}

/// A YAML fragment with comments removed and whitespace collapsed, so that re-spacing
/// or commenting a channel does not count as editing it.
fn normalized(text: &str) -> String {
    let mut out = String::new();
    for line in text.lines() {
        for word in strip_comment(line).split_whitespace() {
            if !out.is_empty() {
                out.push(' ');
            }
            out.push_str(word);
        }
    }
    out
}

/// A line without its `#` comment (a `#` at the start or after a space, outside quotes).
fn strip_comment(line: &str) -> &str {
    let (mut single, mut double, mut after_space) = (false, false, true);
    for (i, c) in line.char_indices() {
        match c {
            '\'' if !double => single = !single,
            '"' if !single => double = !double,
            '#' if !single && !double && after_space => return &line[..i],
            _ => {}
        }
        after_space = c.is_whitespace();
    }
    line
}

/// An absolute path with symbolic links resolved as far as the path exists (the rest is
/// normalised lexically).
fn canonical_lenient(p: &Path) -> PathBuf {
    let abs = campaign::absolute(p);
    let mut head = abs.clone();
    let mut tail = Vec::new();
    loop {
        if let Ok(c) = std::fs::canonicalize(&head) {
            let mut out = c;
            for part in tail.iter().rev() {
                out.push(part);
            }
            return out;
        }
        match (head.file_name().map(|n| n.to_os_string()), head.parent()) {
            (Some(name), Some(parent)) => {
                tail.push(name);
                head = parent.to_path_buf();
            }
            _ => return abs,
        }
    }
}

/// The path itself if it is a directory, else its nearest existing ancestor directory.
fn existing_dir(p: &Path) -> PathBuf {
    let mut at = Some(p);
    while let Some(d) = at {
        if d.is_dir() {
            return d.to_path_buf();
        }
        at = d.parent();
    }
    PathBuf::from(".")
}

/// `path` relative to `base` (both absolute), with `..` where it lies outside, `/`
/// separated.
fn relative(path: &Path, base: &Path) -> String {
    let p: Vec<Component> = path.components().collect();
    let b: Vec<Component> = base.components().collect();
    let common = p.iter().zip(&b).take_while(|(x, y)| x == y).count();
    let mut parts: Vec<String> = Vec::new();
    parts.extend(std::iter::repeat_n("..".to_string(), b.len() - common));
    parts.extend(
        p[common..]
            .iter()
            .map(|c| c.as_os_str().to_string_lossy().into_owned()),
    );
    if parts.is_empty() {
        ".".to_string()
    } else {
        parts.join("/")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn comments_and_spacing_are_not_edits() {
        let a = "name: sg-1   # root gauge\n    clock: frame\n    band: 2 kHz";
        let b = "name: sg-1\n    # moved here\n    clock:   frame\n    band: 2 kHz";
        assert_eq!(normalized(a), normalized(b));
        assert_ne!(
            normalized(a),
            normalized("name: sg-1\n clock: frame\n band: 3 kHz")
        );
        // a `#` inside quotes or a word is not a comment
        assert_eq!(
            strip_comment("kind: 'rack #2'  # note"),
            "kind: 'rack #2'  "
        );
        assert_eq!(strip_comment("kind: a#b"), "kind: a#b");
    }

    #[test]
    fn relative_paths_climb_out_of_the_base() {
        let base = Path::new("/lab/rigs");
        assert_eq!(
            relative(Path::new("/lab/rigs/bay/a.rig.yaml"), base),
            "bay/a.rig.yaml"
        );
        assert_eq!(
            relative(Path::new("/lab/catalog/c.yaml"), base),
            "../catalog/c.yaml"
        );
        assert_eq!(relative(base, base), ".");
    }
}
