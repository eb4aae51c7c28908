//! Fixes: verifying the edits a finding proposes before anything shows them, and
//! applying verified fixes to the files (`foldcheck fix`, see [`apply`]).
//!
//! A rule (or an earlier stage) may attach a candidate [`Fix`] to a finding. After the
//! campaign's findings are known, [`verify`] applies each distinct set of edits to the
//! texts in memory, lints again only the rigs that read an edited file (for a shared
//! catalog, every rig under the campaign root that includes it), and keeps the fix only
//! if this finding is gone and nothing at `warning` or above was added. Findings that
//! share one edit set (one divider fixing three channels) are verified once. A dropped
//! fix takes its help line with it ([`Finding::drop_fix`]): the help never proposes a
//! change that fails this check.
//!
//! Cost: the edit sets that touch only one file are tried together, in one run of the
//! rigs that read it; only when the combination adds a finding are the halves tried
//! again, down to single sets. A rig with 200 independent misspelt references is
//! linted twice, not 201 times. (So a fix kept from a combined run was verified beside
//! the file's other fixes, as `foldcheck fix` applies them.) Edits to one shared
//! catalog are tried the same way, in every rig that includes the catalog.

pub mod apply;

use crate::campaign::{self, Job, Options, Outcome, Overlay, absolute};
use crate::finding::{Finding, Fix, Severity};
use crate::resolve::Rig;
use crate::source::{FileId, Sources, Span};
use rayon::prelude::*;
use std::collections::{BTreeMap, HashMap, HashSet};
use std::path::PathBuf;
use std::sync::{Arc, Mutex};

/// One edit named by the file's absolute path, comparable across runs (file ids are
/// not).
#[derive(Clone, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct PathEdit {
    /// The file.
    pub path: PathBuf,
    /// First byte replaced.
    pub start: usize,
    /// One past the last byte replaced.
    pub end: usize,
    /// The new text.
    pub replacement: String,
}

/// A fix's edits by path, sorted and without repeats; `None` when they cannot be
/// applied to the texts at hand (out of range, not on character boundaries,
/// overlapping, or replacing an alias, anchor or tag).
pub fn edit_key(sources: &Sources, fix: &Fix) -> Option<Vec<PathEdit>> {
    let mut key = Vec::with_capacity(fix.edits.len());
    for e in &fix.edits {
        if e.span.file as usize >= sources.len() {
            return None;
        }
        let file = sources.get(e.span.file);
        let (start, end) = (e.span.start as usize, e.span.end as usize);
        if end > file.text.len()
            || !file.text.is_char_boundary(start)
            || !file.text.is_char_boundary(end)
        {
            return None;
        }
        // An edit never replaces YAML's own syntax: an alias, an anchor or a tag.
        if file.text[start..end].starts_with(['*', '&', '!']) {
            return None;
        }
        key.push(PathEdit {
            path: absolute(&file.path),
            start,
            end,
            replacement: e.replacement.clone(),
        });
    }
    key.sort();
    key.dedup();
    for w in key.windows(2) {
        if w[0].path == w[1].path && w[1].start < w[0].end {
            return None;
        }
    }
    if key.is_empty() { None } else { Some(key) }
}

/// Apply sorted, non-overlapping edits of one file to its text.
pub fn apply_to_text(text: &str, edits: &[&PathEdit]) -> String {
    let mut out = String::with_capacity(text.len());
    let mut at = 0;
    for e in edits {
        out.push_str(&text[at..e.start]);
        out.push_str(&e.replacement);
        at = e.end;
    }
    out.push_str(&text[at..]);
    out
}

/// Where byte offsets move when edits are applied: per file, each edit's start, end
/// and new length.
#[derive(Default)]
struct Shift(HashMap<PathBuf, Vec<(usize, usize, usize)>>);

impl Shift {
    fn of(key: &[PathEdit]) -> Shift {
        let mut m: HashMap<PathBuf, Vec<(usize, usize, usize)>> = HashMap::new();
        for e in key {
            m.entry(e.path.clone())
                .or_default()
                .push((e.start, e.end, e.replacement.len()));
        }
        Shift(m)
    }

    /// Where offset `o` of `path` lies after the edits (inside an edit: its start).
    fn map(&self, path: &PathBuf, o: usize) -> usize {
        let Some(edits) = self.0.get(path) else {
            return o;
        };
        let mut delta: isize = 0;
        for &(s, e, n) in edits {
            if o < s {
                break;
            }
            if s < o && o < e {
                return (s as isize + delta) as usize;
            }
            if e <= o {
                delta += n as isize - (e - s) as isize;
            }
        }
        (o as isize + delta) as usize
    }
}

/// What makes two findings of two runs the same finding: the rule, the file and the
/// subject key path (or the channel, or the place and label). Not the fingerprint
/// itself: a fingerprint's owner part depends on which rigs a run holds (a name shared
/// by two rigs), and verification lints only the rigs an edit reaches.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
struct Identity(&'static str, PathBuf, String);

fn identity(sources: &Sources, f: &Finding, shift: Option<&Shift>) -> Identity {
    identity_at(absolute(&sources.get(f.primary.span.file).path), f, shift)
}

/// [`identity`] of a finding whose file's absolute path is known.
fn identity_at(path: PathBuf, f: &Finding, shift: Option<&Shift>) -> Identity {
    let what = match (&f.subject, &f.channel) {
        (Some(s), _) => format!("subject:{s}"),
        (None, Some(c)) => format!("channel:{c}"),
        (None, None) => {
            let at = f.primary.span.start as usize;
            let at = shift.map_or(at, |s| s.map(&path, at));
            format!("at:{at}:{}", f.primary.text)
        }
    };
    Identity(f.rule, path, what)
}

/// The result of verifying one edit set.
struct Verdict {
    /// Findings (indexes into the outcome) whose fix stays.
    keep: Vec<usize>,
    /// For an edit to a shared catalog: how many channels it reaches, and in which
    /// rigs (their names, sorted).
    reach: Option<(usize, Vec<String>)>,
}

/// Verify every proposed fix of `out` (see the module documentation): fixes that work
/// stay, the others are dropped with their help.
pub fn verify(out: &mut Outcome, max_file_bytes: u64) {
    verify_where(out, max_file_bytes, |_| true);
}

/// Verify the proposed fixes of the findings `which` (indexes into `out.findings`) and
/// of the findings that share their edits, as [`verify`] does for all; the other
/// findings are left as they are. Returns the findings whose fix was verified (kept or
/// dropped). The editor server calls this when a code action asks for a range, so that
/// analysing a change costs no verification (see [`campaign::Options::verify_fixes`]).
pub fn verify_only(out: &mut Outcome, max_file_bytes: u64, which: &HashSet<usize>) -> Vec<usize> {
    verify_where(out, max_file_bytes, |members| {
        members.iter().any(|i| which.contains(i))
    })
}

/// [`verify`] for the edit sets whose findings `chosen` selects; the findings verified.
fn verify_where(
    out: &mut Outcome,
    max_file_bytes: u64,
    chosen: impl Fn(&[usize]) -> bool,
) -> Vec<usize> {
    verify_inner(out, max_file_bytes, chosen, false)
        .expect("a whole run's verification is never left undecided")
}

/// Verify the fixes of a run that holds one rig of a larger campaign, before the other
/// rigs are done (`check` finishing each rig as it is linted). Only edits to the rig's own
/// file are tried, and a verdict is taken only when the rig's own findings decide it:
/// when a re-lint adds a finding in another file (a shared catalog, whose findings
/// before the edit are only known once every rig is done), nothing is changed and
/// `false` is returned, and the rig is finished with the campaign instead.
pub(crate) fn verify_own_rig(out: &mut Outcome, max_file_bytes: u64) -> bool {
    verify_inner(out, max_file_bytes, |_| true, true).is_some()
}

/// Work out every verdict first, then apply them; `None` (nothing applied) when a
/// `partial` run met a verdict its findings cannot decide.
fn verify_inner(
    out: &mut Outcome,
    max_file_bytes: u64,
    chosen: impl Fn(&[usize]) -> bool,
    partial: bool,
) -> Option<Vec<usize>> {
    let mut groups: BTreeMap<Vec<PathEdit>, Vec<usize>> = BTreeMap::new();
    let mut unusable = Vec::new();
    for (i, f) in out.findings.iter().enumerate() {
        if let Some(fix) = &f.fix {
            match edit_key(&out.sources, fix) {
                Some(k) => groups.entry(k).or_default().push(i),
                None => unusable.push(i),
            }
        }
    }
    let mut done: Vec<usize> = Vec::new();
    let unusable: Vec<usize> = unusable.into_iter().filter(|&i| chosen(&[i])).collect();
    done.extend(&unusable);
    groups.retain(|_, members| chosen(members));
    done.extend(groups.values().flatten().copied());
    let groups: Vec<(Vec<PathEdit>, Vec<usize>)> = groups.into_iter().collect();
    let mut verdicts: Vec<(usize, Verdict)> = Vec::new();
    if !groups.is_empty() {
        let ctx = VerifyCtx::new(out, max_file_bytes, partial);
        let batches = batches(&groups);
        verdicts = batches
            .par_iter()
            .flat_map_iter(|b| ctx.verify_batch(&groups, b))
            .collect();
        if ctx.undecided.load(std::sync::atomic::Ordering::Relaxed) {
            return None;
        }
    }
    for i in unusable {
        out.findings[i].drop_fix();
    }
    verdicts.sort_by_key(|(g, _)| *g);
    for (g, v) in verdicts {
        for &i in &groups[g].1 {
            if !v.keep.contains(&i) {
                out.findings[i].drop_fix();
            } else if let Some((channels, rigs)) = v.reach.as_ref()
                && let f = &mut out.findings[i]
                && let Some(fix) = &mut f.fix
            {
                const NAMED: usize = 5;
                let mut names: Vec<String> =
                    rigs.iter().take(NAMED).map(|r| format!("`{r}`")).collect();
                if rigs.len() > NAMED {
                    names.push(format!("{} more", rigs.len() - NAMED));
                }
                let reached = format!(
                    "{} (in a shared catalog: reaches {channels} channel{} in {} rig{}: {})",
                    fix.description,
                    if *channels == 1 { "" } else { "s" },
                    rigs.len(),
                    if rigs.len() == 1 { "" } else { "s" },
                    names.join(", "),
                );
                // The help says what the fix does: it names the reach too.
                if let Some(help) = &mut f.help {
                    *help = help.replacen(&fix.description, &reached, 1);
                }
                fix.description = reached;
            }
        }
    }
    Some(done)
}

/// Edit sets that can be tried together: the sets that edit only one file (a rig's own
/// file or a catalog), per file, in runs of sets whose edits do not overlap; a set that
/// edits several files alone.
fn batches(groups: &[(Vec<PathEdit>, Vec<usize>)]) -> Vec<Vec<usize>> {
    let mut out: Vec<Vec<usize>> = Vec::new();
    let mut by_rig: BTreeMap<&PathBuf, Vec<Vec<usize>>> = BTreeMap::new();
    for (g, (key, _)) in groups.iter().enumerate() {
        let path = &key[0].path;
        if key.iter().any(|e| &e.path != path) {
            out.push(vec![g]);
            continue;
        }
        let runs = by_rig.entry(path).or_default();
        let overlaps = |run: &Vec<usize>| {
            run.iter().any(|&h| {
                groups[h].0.iter().any(|a| {
                    key.iter()
                        .any(|b| a.start < b.end && b.start < a.end || a.start == b.start)
                })
            })
        };
        match runs.iter_mut().find(|run| !overlaps(run)) {
            Some(run) => run.push(g),
            None => runs.push(vec![g]),
        }
    }
    out.extend(by_rig.into_values().flatten());
    out
}

/// What [`VerifyCtx::check`] found: the findings whose fix stays, and the edited run
/// with its offset map when a shared catalog was edited.
type Checked = (Vec<usize>, Option<(Outcome, Shift)>);

/// Rigs outside the run that include an edited catalog, and their findings before the
/// edit (identity, file, offset).
type Extra = (Vec<Job>, Vec<(Identity, PathBuf, usize)>);

/// What verification reads from the first run.
struct VerifyCtx<'a> {
    out: &'a Outcome,
    max_file_bytes: u64,
    /// Each rig's job and the absolute paths of the files it reads (itself first).
    rig_files: Vec<(usize, Vec<PathBuf>)>,
    /// Files that are some rig's own file.
    rig_paths: HashSet<PathBuf>,
    /// Texts by absolute path.
    texts: HashMap<PathBuf, FileId>,
    /// Each file's absolute path, by id (asked once, not once per finding per check).
    abs: Vec<PathBuf>,
    /// The findings (indexes) by the file of their primary label: a check reads those
    /// of the files it re-lints, not every finding of the run.
    by_file: Vec<Vec<usize>>,
    /// For each edited catalog: rigs under the root that include it but were not linted
    /// in this run, with the identities of their findings before the edit.
    extra: Mutex<HashMap<PathBuf, Arc<Extra>>>,
    /// See [`verify_own_rig`]: a re-lint that adds a finding outside the run's rig files
    /// leaves the verdict undecided.
    partial: bool,
    /// Set when a `partial` verdict could not be decided.
    undecided: std::sync::atomic::AtomicBool,
}

impl<'a> VerifyCtx<'a> {
    fn new(out: &'a Outcome, max_file_bytes: u64, partial: bool) -> Self {
        let path_of = |id: FileId| absolute(&out.sources.get(id).path);
        let rig_files: Vec<(usize, Vec<PathBuf>)> = out
            .rigs
            .iter()
            .map(|r| {
                let mut files = vec![path_of(r.file)];
                files.extend(r.includes.iter().map(|&f| path_of(f)));
                (r.job, files)
            })
            .collect();
        let rig_paths = rig_files.iter().map(|(_, f)| f[0].clone()).collect();
        let abs: Vec<PathBuf> = out.sources.iter().map(|f| absolute(&f.path)).collect();
        let texts = out
            .sources
            .iter()
            .map(|f| (abs[f.id as usize].clone(), f.id))
            .collect();
        let mut by_file: Vec<Vec<usize>> = vec![Vec::new(); abs.len()];
        for (i, f) in out.findings.iter().enumerate() {
            if let Some(list) = by_file.get_mut(f.primary.span.file as usize) {
                list.push(i);
            }
        }
        VerifyCtx {
            out,
            max_file_bytes,
            rig_files,
            rig_paths,
            texts,
            abs,
            by_file,
            extra: Mutex::new(HashMap::new()),
            partial,
            undecided: std::sync::atomic::AtomicBool::new(false),
        }
    }

    fn options(&self, overlay: Overlay, keep_rigs: bool) -> Options {
        Options {
            max_file_bytes: self.max_file_bytes,
            keep_rigs,
            overlay: Some(Arc::new(overlay)),
            // A re-lint only needs the findings: no new fix candidates.
            propose_fixes: false,
            ..Options::default()
        }
    }

    fn base_overlay(&self) -> Overlay {
        self.out
            .overlay
            .as_ref()
            .map(|o| (**o).clone())
            .unwrap_or_default()
    }

    /// Rigs outside this run that include `catalog` (found under the root of `like`),
    /// and their findings before any edit.
    fn extra_for(&self, catalog: &PathBuf, like: &Job, linted: &HashSet<PathBuf>) -> Arc<Extra> {
        if let Some(e) = self.extra.lock().expect("no thread panicked").get(catalog) {
            return e.clone();
        }
        let jobs: Vec<Job> = campaign::dependent_jobs(like, catalog)
            .into_iter()
            .filter(|j| !linted.contains(&campaign::job_file(j)))
            .collect();
        let mut before = Vec::new();
        if !jobs.is_empty()
            && let Ok(o) =
                campaign::run_jobs(jobs.clone(), &self.options(self.base_overlay(), false))
        {
            for f in &o.findings {
                let p = absolute(&o.sources.get(f.primary.span.file).path);
                before.push((
                    identity(&o.sources, f, None),
                    p,
                    f.primary.span.start as usize,
                ));
            }
        }
        let e = Arc::new((jobs, before));
        self.extra
            .lock()
            .expect("no thread panicked")
            .insert(catalog.clone(), e.clone());
        e
    }

    /// Verify the edit sets `members` (indexes into `groups`) applied together. When
    /// the combination adds a finding, verify each half again, down to single sets, so
    /// a rig with many independent fixes costs one run, not one per fix.
    fn verify_batch(
        &self,
        groups: &[(Vec<PathEdit>, Vec<usize>)],
        members: &[usize],
    ) -> Vec<(usize, Verdict)> {
        if self.undecided.load(std::sync::atomic::Ordering::Relaxed) {
            return Vec::new(); // the whole run is finished later: stop trying
        }
        let mut key: Vec<PathEdit> = members
            .iter()
            .flat_map(|&g| groups[g].0.iter().cloned())
            .collect();
        key.sort();
        key.dedup();
        let idxs: Vec<usize> = members
            .iter()
            .flat_map(|&g| groups[g].1.iter().copied())
            .collect();
        match self.check(&key, &idxs) {
            Some((keep, after)) => members
                .iter()
                .map(|&g| {
                    let reach = after
                        .as_ref()
                        .map(|(out, shift)| reach(out, &groups[g].0, shift));
                    let keep = groups[g]
                        .1
                        .iter()
                        .copied()
                        .filter(|i| keep.contains(i))
                        .collect();
                    (g, Verdict { keep, reach })
                })
                .collect(),
            None if members.len() == 1 => vec![(
                members[0],
                Verdict {
                    keep: Vec::new(),
                    reach: None,
                },
            )],
            None => {
                let (a, b) = members.split_at(members.len() / 2);
                let (mut x, y) = rayon::join(
                    || self.verify_batch(groups, a),
                    || self.verify_batch(groups, b),
                );
                x.extend(y);
                x
            }
        }
    }

    /// Apply `key`, lint the rigs it reaches, and say which of the findings `idxs` are
    /// gone (with the edited run when a shared catalog was edited, to count what each
    /// edit reaches); `None` when the edits add a finding at `warning` or above (or
    /// cannot be tried).
    fn check(&self, key: &[PathEdit], idxs: &[usize]) -> Option<Checked> {
        let reject = None;
        // The edited texts.
        let mut overlay = self.base_overlay();
        let mut edited: Vec<PathBuf> = key.iter().map(|e| e.path.clone()).collect();
        edited.dedup();
        for path in &edited {
            let Some(&id) = self.texts.get(path) else {
                return reject;
            };
            let text = &self.out.sources.get(id).text;
            let edits: Vec<&PathEdit> = key.iter().filter(|e| &e.path == path).collect();
            if edits.iter().any(|e| e.end > text.len()) {
                return reject;
            }
            overlay.insert(path.clone(), apply_to_text(text, &edits));
        }
        // The rigs that read an edited file.
        let affected: Vec<&(usize, Vec<PathBuf>)> = self
            .rig_files
            .iter()
            .filter(|(_, files)| files.iter().any(|f| edited.contains(f)))
            .collect();
        let Some(first) = affected.first() else {
            return reject;
        };
        let mut jobs: Vec<Job> = affected
            .iter()
            .map(|(j, _)| self.out.jobs[*j].clone())
            .collect();
        let files: HashSet<&PathBuf> = affected.iter().flat_map(|(_, f)| f.iter()).collect();
        let catalogs: Vec<&PathBuf> = edited
            .iter()
            .filter(|p| !self.rig_paths.contains(*p))
            .collect();
        let shift = Shift::of(key);
        let mut before: HashSet<Identity> = self
            .abs
            .iter()
            .zip(&self.by_file)
            .filter(|(path, _)| files.contains(path))
            .flat_map(|(path, list)| {
                list.iter()
                    .map(|&i| identity_at(path.clone(), &self.out.findings[i], Some(&shift)))
            })
            .collect();
        // Findings already rendered (a rig finished before the campaign): each has its
        // subject, so its identity does not move with an edit.
        before.extend(
            self.out
                .ghosts
                .iter()
                .filter(|g| files.contains(&self.abs[g.file as usize]))
                .map(|g| {
                    Identity(
                        g.rule,
                        self.abs[g.file as usize].clone(),
                        format!("subject:{}", g.subject),
                    )
                }),
        );
        if !catalogs.is_empty() {
            let linted: HashSet<PathBuf> = self.out.jobs.iter().map(campaign::job_file).collect();
            let like = &self.out.jobs[first.0];
            for c in &catalogs {
                let extra = self.extra_for(c, like, &linted);
                for j in &extra.0 {
                    if !jobs
                        .iter()
                        .any(|k| campaign::job_file(k) == campaign::job_file(j))
                    {
                        jobs.push(j.clone());
                    }
                }
                for (id, path, at) in &extra.1 {
                    before.insert(match id {
                        Identity(rule, p, w) if w.starts_with("at:") => {
                            let label = w.splitn(3, ':').nth(2).unwrap_or("");
                            Identity(
                                rule,
                                p.clone(),
                                format!("at:{}:{label}", shift.map(path, *at)),
                            )
                        }
                        other => other.clone(),
                    });
                }
            }
        }
        let Ok(after) = campaign::run_jobs(jobs, &self.options(overlay, !catalogs.is_empty()))
        else {
            return reject;
        };
        // Each file's absolute path once, not once per finding.
        let after_abs: Vec<PathBuf> = after.sources.iter().map(|f| absolute(&f.path)).collect();
        let after_list: Vec<Identity> = after
            .findings
            .iter()
            .map(|f| identity_at(after_abs[f.primary.span.file as usize].clone(), f, None))
            .collect();
        let mut added = after
            .findings
            .iter()
            .zip(&after_list)
            .filter(|(f, id)| {
                f.severity >= Severity::Warning && f.suppressed.is_none() && !before.contains(*id)
            })
            .map(|(f, _)| f);
        if self.partial {
            // Only a finding in the rig's own file is known to be new.
            let (own, other): (Vec<&Finding>, Vec<&Finding>) = added.partition(|f| {
                self.rig_paths
                    .contains(&after_abs[f.primary.span.file as usize])
            });
            if !own.is_empty() {
                return None;
            }
            if !other.is_empty() {
                self.undecided
                    .store(true, std::sync::atomic::Ordering::Relaxed);
                return None;
            }
        } else if added.next().is_some() {
            return None;
        }
        let after_ids: HashSet<Identity> = after_list.into_iter().collect();
        let keep: Vec<usize> = idxs
            .iter()
            .copied()
            .filter(|&i| {
                let f = &self.out.findings[i];
                let path = self.abs[f.primary.span.file as usize].clone();
                !after_ids.contains(&identity_at(path, f, Some(&shift)))
            })
            .collect();
        let edited_run = (!catalogs.is_empty()).then_some((after, shift));
        Some((keep, edited_run))
    }
}

/// Channels (and rigs) whose clock path, module or sensor is written where an edit
/// lands, counted in the edited run.
fn reach(after: &Outcome, key: &[PathEdit], shift: &Shift) -> (usize, Vec<String>) {
    let spans: Vec<Span> = after
        .sources
        .iter()
        .flat_map(|f| {
            let path = absolute(&f.path);
            key.iter().filter(move |e| e.path == path).map(move |e| {
                let start = shift.map(&e.path, e.start);
                Span::new(f.id, start, start + e.replacement.len())
            })
        })
        .collect();
    let hit = |item: Span| spans.iter().any(|s| item.contains(s));
    let mut channels = 0;
    let mut rigs = Vec::new();
    for r in &after.rigs {
        let Some(rig) = &r.rig else { continue };
        let n = rig
            .channels
            .iter()
            .filter(|c| channel_reached(rig, c, &hit))
            .count();
        if n > 0 {
            channels += n;
            rigs.push(match &rig.name {
                Some(name) => name.value.clone(),
                None => after.sources.get(r.file).display.clone(),
            });
        }
    }
    rigs.sort();
    (channels, rigs)
}

fn channel_reached(rig: &Rig, c: &crate::resolve::RChannel, hit: &dyn Fn(Span) -> bool) -> bool {
    c.clock.is_some_and(|k| {
        rig.clock_path(k)
            .iter()
            .any(|&i| hit(rig.clocks[i].def.item))
    }) || c.module.is_some_and(|m| hit(rig.modules[m].item))
        || c.sensor.is_some_and(|s| hit(rig.sensors[s].item))
}
