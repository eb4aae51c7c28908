//! `foldcheck report`: a campaign's channel sheet, as one self-contained HTML page
//! ([`html`]) or as a table for spreadsheets ([`table`]: CSV or JSON).
//!
//! [`gather`] runs nothing of its own: it takes the outcome of the same campaign run as
//! `check` and, for every channel of every rig, the same [`Inspection`] that `inspect`
//! shows (built from the channel's one analysis, `crate::analysis`). A row's status is
//! the worst severity among the channel's active findings; its numbers are the
//! inspection's (so the CSV holds the numbers of `inspect --format json`). Groups are
//! compared with the `group-phase` rule's own comparison, and the budget adds the
//! channels' data rates as the `throughput` rule does. The renderers only lay it out.

pub mod html;
pub mod table;

use crate::analysis::AliasFailure;
use crate::campaign::Outcome;
use crate::finding::{Finding, Severity};
use crate::fingerprint::segment;
use crate::inspect::{self, FindingInfo, Inspection, Threshold};
use crate::model::quantity::to_f64;
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::rules::{PairComparison, channel_rates, compare_pair};
use crate::source::Sources;
use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};

/// What `foldcheck report` writes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// The HTML page ([`html`]).
    Html,
    /// The channel table as CSV ([`table::csv`]).
    Csv,
    /// The channel table as JSON ([`table::json`]).
    Json,
}

/// Run `foldcheck report`: lint `paths` as `check` does, gather the sheet and render it.
/// With `output`, the result is written there atomically (never over a file the run
/// read) and the returned text is empty; otherwise it is the text for stdout. `Err` is
/// a fatal message (exit status 2). The report is made whatever the findings: its exit
/// status is 0.
pub fn run(
    paths: &[PathBuf],
    format: Format,
    output: Option<&Path>,
    plots: Plots,
    settings: Option<PathBuf>,
) -> Result<String, String> {
    if let Some(p) = output
        && p.is_dir()
    {
        return Err(format!("{}: is a directory", p.display()));
    }
    let opts = crate::campaign::Options {
        keep_rigs: true,
        settings: settings.clone(),
        ..Default::default()
    };
    let out = crate::campaign::run(paths, &opts).map_err(|e| e.to_string())?;
    if out.files == 0 {
        eprintln!("foldcheck: no rig files (*.rig.yaml, *.rig.yml) found in the given paths");
    }
    let sheet = gather(&out, settings.as_deref(), plots);
    let text = match format {
        Format::Html => html::render(&sheet),
        Format::Csv => table::csv(&sheet)?,
        Format::Json => table::json(&sheet),
    };
    let Some(path) = output else {
        return Ok(text);
    };
    let read: Vec<&Path> = out.sources.iter().map(|s| s.path.as_path()).collect();
    write_atomically(path, text.as_bytes(), &read)?;
    Ok(String::new())
}

/// Write `bytes` to `path` through a temporary file in the same directory, renamed over
/// it; refuses a path that is one of the files read.
fn write_atomically(path: &Path, bytes: &[u8], read: &[&Path]) -> Result<(), String> {
    let canonical = |p: &Path| std::fs::canonicalize(p).ok();
    if let Some(target) = canonical(path)
        && read.iter().any(|r| canonical(r).as_ref() == Some(&target))
    {
        return Err(format!(
            "{}: refusing to write the report over a file foldcheck reads",
            path.display()
        ));
    }
    let dir = match path.parent() {
        Some(d) if !d.as_os_str().is_empty() => d.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let fail = |e: std::io::Error| format!("{}: cannot write the report: {e}", path.display());
    let mut tmp = tempfile::NamedTempFile::new_in(&dir).map_err(fail)?;
    // A report is an ordinary file to share: not the temporary file's private mode.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(path).map_or(0o644, |m| m.permissions().mode() & 0o777);
        std::fs::set_permissions(tmp.path(), std::fs::Permissions::from_mode(mode))
            .map_err(fail)?;
    }
    tmp.write_all(bytes)
        .and_then(|_| tmp.as_file().sync_all())
        .map_err(fail)?;
    tmp.persist(path).map_err(|e| fail(e.error))?;
    Ok(())
}

/// Which channels get their spectrum drawn into the HTML page.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Plots {
    /// None.
    None,
    /// Channels with an active error or warning (the default: keeps the file small).
    Failing,
    /// Every channel that was analysed.
    All,
}

/// The whole sheet.
#[derive(Debug)]
pub struct Sheet {
    /// The campaign roots of the rigs (usually one), as displayed.
    pub roots: Vec<String>,
    /// The tool's version.
    pub version: &'static str,
    /// The date of the report, `YYYY-MM-DD HH:MM UTC`.
    pub date: String,
    /// The settings files in force (display paths); empty when none applies.
    pub settings: Vec<String>,
    /// Rig files read.
    pub files: usize,
    /// One entry per rig file, in path order.
    pub rigs: Vec<RigSheet>,
    /// Active findings by severity: errors, warnings, notes.
    pub by_severity: [usize; 3],
    /// Suppressed findings.
    pub suppressed: usize,
    /// Active findings by rule, in rule-name order.
    pub by_rule: BTreeMap<&'static str, usize>,
}

/// One rig file.
#[derive(Debug)]
pub struct RigSheet {
    /// The file, as displayed.
    pub file: String,
    /// The rig's name.
    pub name: Option<String>,
    /// Whether the rig could be read and resolved (otherwise only its findings show).
    pub read: bool,
    /// The thresholds in force and where each comes from.
    pub thresholds: Vec<Threshold>,
    /// One row per channel, in the rig's order.
    pub rows: Vec<Row>,
    /// Its groups.
    pub groups: Vec<GroupSheet>,
    /// The logger's budget, when the rig has a logger.
    pub budget: Option<Budget>,
    /// Findings of the file that belong to no channel (a module's throughput, a broken
    /// file …).
    pub other_findings: Vec<FindingInfo>,
}

/// A row's overall status.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Status {
    /// No active finding.
    Pass,
    /// No active finding of its own, but its rates were not analysed (it did not
    /// resolve, or has no band): never shown as passing.
    Unchecked,
    /// Its worst active finding is a note.
    Note,
    /// … a warning.
    Warning,
    /// … an error.
    Error,
}

impl Status {
    /// The word used in every output: `pass`, `note`, `warning`, `error`.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Pass => "pass",
            Status::Unchecked => "unchecked",
            Status::Note => "note",
            Status::Warning => "warning",
            Status::Error => "error",
        }
    }

    /// A symbol shown beside the word (status is never told by colour alone).
    pub fn symbol(self) -> &'static str {
        match self {
            Status::Pass => "\u{2714}",
            Status::Unchecked => "?",
            Status::Note => "\u{2139}",
            Status::Warning => "\u{25b2}",
            Status::Error => "\u{2716}",
        }
    }

    fn of(s: Severity) -> Status {
        match s {
            Severity::Error => Status::Error,
            Severity::Warning => Status::Warning,
            Severity::Note => Status::Note,
        }
    }
}

/// One channel.
#[derive(Debug)]
pub struct Row {
    /// What `inspect` shows for it.
    pub ins: Inspection,
    /// The lowest alias check (the analysis' `worst_fold`).
    pub worst: Option<AliasFailure>,
    /// The chain's latency (analog group delay plus digital delay), seconds.
    pub latency_s: Option<f64>,
    /// False when a digital filter gives no delay (it counts as zero in `latency_s`).
    pub latency_complete: bool,
    /// The worst severity among its active findings.
    pub status: Status,
    /// The rules whose verdict fails, with the stage or the disturbance.
    pub failing: Vec<String>,
    /// Its spectrum, SVG, when drawn.
    pub svg: Option<String>,
}

impl Row {
    /// The ADC rate, Hz.
    pub fn adc_rate_hz(&self) -> Option<f64> {
        self.ins
            .analysis
            .as_ref()
            .and_then(|a| a.stages.first())
            .map(|s| s.rate_hz())
    }

    /// Where the worst alias check is: `ADC`, `stage k`, or `modulator` (an image of a
    /// delta-sigma converter's modulator rate).
    pub fn worst_at(&self) -> Option<String> {
        self.worst.as_ref().map(|w| {
            if w.modulator_hz.is_some() {
                "modulator".to_string()
            } else {
                stage_name(w.stage)
            }
        })
    }
}

/// `ADC` for stage 0, `stage k` otherwise.
pub fn stage_name(stage: usize) -> String {
    if stage == 0 {
        "ADC".to_string()
    } else {
        format!("stage {stage}")
    }
}

/// A group and how its members compare.
#[derive(Debug)]
pub struct GroupSheet {
    /// Its name.
    pub name: String,
    /// Its members' names.
    pub members: Vec<String>,
    /// The common band (the smallest of the members' bands), Hz.
    pub common_band_hz: Option<f64>,
    /// The phase tolerance, degrees.
    pub tolerance_deg: f64,
    /// Each pair of analysed members: names, comparison, and the worst status of the
    /// `group-*` findings about that pair.
    pub pairs: Vec<(String, String, PairComparison, Status)>,
    /// The findings about the group (`group-clock`, `group-phase`, `group-incomplete`).
    pub findings: Vec<FindingInfo>,
}

/// The logger's budget, with its arithmetic.
#[derive(Debug)]
pub struct Budget {
    /// Each channel's data rate: name, final rate (Hz), bits, bytes per second.
    pub terms: Vec<(String, f64, u32, f64)>,
    /// Their sum, bytes per second.
    pub total_bytes_per_s: f64,
    /// The logger's throughput, bytes per second.
    pub throughput: Option<f64>,
    /// The logger's storage, bytes.
    pub storage: Option<f64>,
    /// The recording duration, seconds.
    pub duration_s: Option<f64>,
    /// The findings about the logger (`throughput`, `storage`).
    pub findings: Vec<FindingInfo>,
}

/// Build the sheet of a campaign run made with `keep_rigs`. `settings` is the settings
/// file named on the command line, if any.
pub fn gather(out: &Outcome, settings: Option<&Path>, plots: Plots) -> Sheet {
    let mut roots: Vec<String> = Vec::new();
    let mut settings_files: Vec<String> = Vec::new();
    let mut rigs = Vec::new();
    for ro in &out.rigs {
        if let Some(root) = out.root(ro) {
            let d = root.dir.display().to_string();
            if !roots.contains(&d) {
                roots.push(d);
            }
        }
        let sf = out.sources.get(ro.file);
        let Some(rig) = &ro.rig else {
            rigs.push(RigSheet {
                file: sf.display.clone(),
                name: None,
                read: false,
                thresholds: Vec::new(),
                rows: Vec::new(),
                groups: Vec::new(),
                budget: None,
                other_findings: file_findings(&out.sources, &out.findings, ro.file, |_| true),
            });
            continue;
        };
        let st = inspect::settings_thresholds(&sf.path, settings);
        if let Some(p) = &st.0
            && !settings_files.contains(p)
        {
            settings_files.push(p.clone());
        }
        rigs.push(rig_sheet(rig, &out.sources, &out.findings, &st, plots));
    }
    let mut by_severity = [0; 3];
    let mut suppressed = 0;
    let mut by_rule = BTreeMap::new();
    for f in &out.findings {
        if f.suppressed.is_some() {
            suppressed += 1;
            continue;
        }
        by_severity[match f.severity {
            Severity::Error => 0,
            Severity::Warning => 1,
            Severity::Note => 2,
        }] += 1;
        *by_rule.entry(f.rule).or_insert(0) += 1;
    }
    Sheet {
        roots,
        version: env!("CARGO_PKG_VERSION"),
        date: now_text(),
        settings: settings_files,
        files: out.files,
        rigs,
        by_severity,
        suppressed,
        by_rule,
    }
}

fn file_findings(
    sources: &Sources,
    findings: &[Finding],
    file: crate::source::FileId,
    keep: impl Fn(&Finding) -> bool,
) -> Vec<FindingInfo> {
    findings
        .iter()
        .filter(|f| f.primary.span.file == file && keep(f))
        .map(|f| finding_info(sources, f))
        .collect()
}

fn finding_info(sources: &Sources, f: &Finding) -> FindingInfo {
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
}

/// The worst status of the active findings among `list`.
fn worst<'a>(list: impl Iterator<Item = &'a Finding>) -> Status {
    list.filter(|f| f.suppressed.is_none())
        .map(|f| Status::of(f.severity))
        .max()
        .unwrap_or(Status::Pass)
}

fn rig_sheet(
    rig: &Rig,
    sources: &Sources,
    findings: &[Finding],
    st: &(
        Option<String>,
        crate::resolve::ThresholdSettings,
        crate::analysis::Enabled,
    ),
    plots: Plots,
) -> RigSheet {
    // Only the findings of this rig's files go to `inspect` (the whole campaign's list
    // would make every channel scan every finding).
    let mine: Vec<Finding> = findings
        .iter()
        .filter(|f| f.primary.span.file == rig.file || f.owner_file == Some(rig.file))
        .cloned()
        .collect();
    let mut rows = Vec::with_capacity(rig.channels.len());
    for ci in 0..rig.channels.len() {
        let ins = inspect::inspect(rig, ci, sources, &mine, st);
        let status = ins
            .findings
            .iter()
            .filter(|f| f.suppressed.is_none())
            .map(|f| Status::of(f.severity))
            .max()
            .unwrap_or(Status::Pass)
            .max(if ins.analysis.is_none() {
                Status::Unchecked
            } else {
                Status::Pass
            });
        let failing = ins
            .verdicts
            .iter()
            .filter(|v| !v.pass)
            .map(|v| {
                let mut s = v.rule.to_string();
                if let Some(k) = v.stage {
                    s.push_str(&format!(" ({})", stage_name(k)));
                }
                if let Some(a) = &v.about {
                    s.push_str(&format!(" ({a})"));
                }
                s
            })
            .collect();
        let worst = ins.analysis.as_ref().and_then(|a| a.worst_fold());
        // The analysis' own delays: the same latency `inspect` shows, not computed again.
        let delays = ins.analysis.as_ref().map(|a| &a.delays);
        let latency_s = delays.map(|d| d.latency_s);
        let latency_complete = delays.is_none_or(|d| d.complete);
        let draw = match plots {
            Plots::None => false,
            Plots::All => true,
            Plots::Failing => status >= Status::Warning,
        };
        let svg = if draw {
            inspect::plot_data(rig, ci, &ins)
                .and_then(|d| inspect::plot::render(&d).ok())
                .map(|s| inline_svg(&s))
        } else {
            None
        };
        rows.push(Row {
            ins,
            worst,
            latency_s,
            latency_complete,
            status,
            failing,
            svg,
        });
    }
    let groups = rig
        .groups
        .iter()
        .enumerate()
        .map(|(gi, g)| group_sheet(rig, gi, g, sources, &mine))
        .collect();
    let budget = rig.logger.as_ref().map(|l| Budget {
        terms: channel_rates(rig)
            .into_iter()
            .map(|(c, bytes)| {
                let ch = &rig.channels[c];
                let fr = Chain::new(rig, ch).map_or(0.0, |k| to_f64(&k.final_rate()));
                (ch.def.name.value.clone(), fr, ch.sample_bits, bytes)
            })
            .collect(),
        total_bytes_per_s: channel_rates(rig).iter().map(|(_, b)| b).sum(),
        throughput: l.throughput.as_ref().map(|t| t.value),
        storage: l.storage.as_ref().map(|t| t.value),
        duration_s: l.duration.as_ref().map(|t| t.value),
        findings: mine
            .iter()
            .filter(|f| f.subject.as_deref() == Some("logger"))
            .map(|f| finding_info(sources, f))
            .collect(),
    });
    let names: Vec<&str> = rig
        .channels
        .iter()
        .map(|c| c.def.name.value.as_str())
        .collect();
    // A finding shows once: under its channel, its group or the budget, else here.
    let group_subjects: Vec<String> = rig
        .groups
        .iter()
        .map(|g| group_subject(&g.name.value))
        .collect();
    let shown_elsewhere = |f: &Finding| {
        f.subject.as_deref().is_some_and(|s| {
            (rig.logger.is_some() && s == "logger")
                || group_subjects.iter().any(|g| about_group(g, s))
        })
    };
    let other_findings = file_findings(sources, findings, rig.file, |f| {
        f.channel.as_deref().is_none_or(|c| !names.contains(&c)) && !shown_elsewhere(f)
    });
    RigSheet {
        file: sources.get(rig.file).display.clone(),
        name: rig.name.as_ref().map(|n| n.value.clone()),
        read: true,
        thresholds: rows
            .first()
            .map(|r| r.ins.thresholds.clone())
            .unwrap_or_default(),
        rows,
        groups,
        budget,
        other_findings,
    }
}

fn group_sheet(
    rig: &Rig,
    gi: usize,
    g: &crate::model::Group,
    sources: &Sources,
    findings: &[Finding],
) -> GroupSheet {
    let subject = group_subject(&g.name.value);
    let about = |f: &&Finding| {
        f.subject
            .as_deref()
            .is_some_and(|s| about_group(&subject, s))
    };
    let members = rig.group_members.get(gi).cloned().unwrap_or_default();
    let common = members
        .iter()
        .filter_map(|&c| rig.channels[c].band.as_ref().map(|b| to_f64(&b.hz)))
        .fold(f64::INFINITY, f64::min);
    let chains: Vec<(usize, Chain)> = members
        .iter()
        .filter(|&&c| rig.channels[c].ok)
        .filter_map(|&c| Some((c, Chain::new(rig, &rig.channels[c])?)))
        .collect();
    let mut pairs = Vec::new();
    if common.is_finite() {
        for i in 0..chains.len() {
            for j in i + 1..chains.len() {
                let (a, b) = (&chains[i], &chains[j]);
                let (an, bn) = (
                    &rig.channels[a.0].def.name.value,
                    &rig.channels[b.0].def.name.value,
                );
                let pair =
                    |x: &str, y: &str| format!("{subject}/pair/{}/{}", segment(x), segment(y));
                let (p1, p2) = (pair(an, bn), pair(bn, an));
                let status = worst(findings.iter().filter(|f| {
                    f.subject
                        .as_deref()
                        .is_some_and(|s| s.starts_with(&p1) || s.starts_with(&p2))
                }));
                pairs.push((
                    an.clone(),
                    bn.clone(),
                    compare_pair(&a.1, &b.1, common),
                    status,
                ));
            }
        }
    }
    GroupSheet {
        name: g.name.value.clone(),
        members: g.channels.iter().map(|c| c.value.clone()).collect(),
        common_band_hz: common.is_finite().then_some(common),
        tolerance_deg: g
            .phase_tolerance
            .as_ref()
            .map_or(rig.thresholds.phase_tolerance, |t| t.value),
        pairs,
        findings: findings
            .iter()
            .filter(about)
            .map(|f| finding_info(sources, f))
            .collect(),
    }
}

/// The subject key of a group's findings (`group/<name>`).
fn group_subject(name: &str) -> String {
    format!("group/{}", segment(name))
}

/// Whether a finding's subject `s` is about the group whose subject is `group` (the
/// group itself or one of its pairs).
fn about_group(group: &str, s: &str) -> bool {
    s == group || s.strip_prefix(group).is_some_and(|r| r.starts_with('/'))
}

/// The SVG of a plot without its XML declaration, ready to sit inside HTML.
fn inline_svg(svg: &str) -> String {
    let s = svg.trim_start();
    match s.strip_prefix("<?xml") {
        Some(rest) => rest
            .find("?>")
            .map_or(s, |i| rest[i + 2..].trim_start())
            .to_string(),
        None => s.to_string(),
    }
}

/// The current time as `YYYY-MM-DD HH:MM UTC`; `SOURCE_DATE_EPOCH` (seconds), when set,
/// stands in for the clock so that a report can be made reproducibly.
fn now_text() -> String {
    let secs = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map_or(0, |d| d.as_secs() as i64)
        });
    let (days, rem) = (secs.div_euclid(86_400), secs.rem_euclid(86_400));
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02} {:02}:{:02} UTC",
        rem / 3600,
        (rem % 3600) / 60
    )
}

/// Days since 1970-01-01 to a proleptic Gregorian date (H. Hinnant's `civil_from_days`
/// algorithm, "chrono-Compatible Low-Level Date Algorithms").
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m, d)
}

#[cfg(test)]
mod tests {
    use super::civil_from_days;

    #[test]
    fn dates_match_the_unix_calendar() {
        // Reference values: `date -u -d @SECONDS +%F` (GNU coreutils).
        assert_eq!(civil_from_days(0), (1970, 1, 1));
        assert_eq!(civil_from_days(951_782_400 / 86_400), (2000, 2, 29));
        assert_eq!(civil_from_days(1_798_761_600 / 86_400), (2027, 1, 1));
        assert_eq!(civil_from_days(-1), (1969, 12, 31));
    }
}
