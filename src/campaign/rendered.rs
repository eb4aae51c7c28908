//! `check`'s run: each rig finished and rendered as soon as it is linted, so that a
//! campaign's memory is its rendered output and the files being worked on, not every
//! finding at once.
//!
//! A rig's findings in its own file depend on nothing but the rig: settings levels,
//! de-duplication, suppressions, order, fingerprints (its owner and counters) and the
//! verification of fixes that edit only its file. They are finished, rendered to bytes
//! and dropped as soon as the rig is linted; the rig's text is released. What depends on
//! other rigs is finished once all are done, exactly as [`super::run`] finishes it: the
//! findings in shared catalogs (de-duplicated across rigs, suppressed by the catalogs'
//! comments), fixes that edit a catalog (verified in every rig that includes it), and a
//! rig whose fixes could not be decided alone (a re-lint added a finding in a catalog).
//!
//! The output is the one [`super::run`] gives, byte for byte. Where a campaign breaks
//! an assumption this rests on (two files shown under one name, two files of one name
//! in the run, a rig file also included as a catalog, a catalog finding counted with
//! a rig's rendered ones for its fingerprint), the campaign is linted again the whole
//! way and rendered from that.

use super::{
    Ctx, Fatal, Ghost, Job, Options, Outcome, RigOutcome, RigResult, canonical_or_self, dedup,
    discover, each_job, keep_at_level, lint_rig, roots_without_settings, sort,
};
use crate::finding::Finding;
use crate::fingerprint::{FileInfo, Owners};
use crate::report::Counts;
use crate::root::CampaignRoot;
use crate::settings::{Level, Settings};
use crate::source::{FileId, Sources};
use crate::suppress::{self, Suppression};
use std::borrow::Cow;
use std::collections::{HashMap, HashSet};
use std::hash::{Hash, Hasher};
use std::io::{Read, Seek, SeekFrom, Write};
use std::path::PathBuf;
use std::sync::Mutex;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

/// Renders one finding to the bytes it takes in the output (`None`: nothing shown, as
/// for a suppressed finding in the human report).
pub type Render<'r> = dyn Fn(&Sources, &Finding) -> Option<Vec<u8>> + Sync + 'r;

/// Rendered bytes held in memory at the most; the rest wait in a temporary file (a
/// campaign of a million channels renders to a few hundred megabytes).
const IN_MEMORY: usize = 16 << 20;

/// Where rendered bytes wait for the output: memory up to [`IN_MEMORY`], then an
/// unnamed temporary file (removed as soon as it is open; when none can be made, memory).
#[derive(Debug, Default)]
struct Spill {
    held: AtomicUsize,
    file: Mutex<Option<(std::fs::File, u64)>>,
    /// A temporary file was asked for (once).
    tried: AtomicBool,
    /// A write to the file failed: nothing more goes there.
    full: AtomicBool,
}

impl Spill {
    /// Keep `bytes`: in memory while there is room, else at the end of the file.
    fn keep(&self, bytes: Vec<u8>) -> Bytes {
        let held = self.held.fetch_add(bytes.len(), Ordering::Relaxed) + bytes.len();
        if held <= IN_MEMORY || bytes.is_empty() {
            return Bytes::Memory(bytes);
        }
        let mut file = self.file.lock().expect("no thread panicked");
        if file.is_none() && !self.tried.swap(true, Ordering::Relaxed) {
            *file = temporary_file().map(|f| (f, 0));
        }
        if let Some((f, end)) = file.as_mut()
            && !self.full.load(Ordering::Relaxed)
        {
            if f.seek(SeekFrom::Start(*end)).is_ok() && f.write_all(&bytes).is_ok() {
                let at = *end;
                *end += bytes.len() as u64;
                self.held.fetch_sub(bytes.len(), Ordering::Relaxed);
                return Bytes::File {
                    at,
                    len: bytes.len(),
                };
            }
            // The disk is full (or the file failed): what is in it stays readable, the
            // rest is kept in memory.
            self.full.store(true, Ordering::Relaxed);
        }
        Bytes::Memory(bytes)
    }

    /// Bytes kept by [`Spill::keep`].
    fn read(&self, bytes: &Bytes) -> std::io::Result<Vec<u8>> {
        match bytes {
            Bytes::Memory(b) => Ok(b.clone()),
            Bytes::File { at, len } => {
                let mut file = self.file.lock().expect("no thread panicked");
                let Some((f, _)) = file.as_mut() else {
                    // Never so: the file, once made, stays open.
                    return Err(std::io::Error::other("the temporary file is not open"));
                };
                f.seek(SeekFrom::Start(*at))?;
                let mut out = vec![0; *len];
                f.read_exact(&mut out)?;
                Ok(out)
            }
        }
    }
}

/// A new temporary file, open for reading and writing, with no name on disk
/// (`tempfile::tempfile`: `O_TMPFILE` where the system has it, else created and unlinked
/// at once), so it is gone when the process ends, however it ends.
fn temporary_file() -> Option<std::fs::File> {
    tempfile::tempfile().ok()
}

/// Rendered bytes, in memory or in the temporary file.
#[derive(Debug)]
enum Bytes {
    Memory(Vec<u8>),
    File { at: u64, len: usize },
}

/// The rendered findings of one file, in output order: one buffer (not one allocation
/// per finding) and where each finding ends in it.
#[derive(Debug)]
pub struct Chunk {
    bytes: Bytes,
    ends: Vec<usize>,
}

impl Chunk {
    /// Render `findings` (in output order) into one chunk.
    fn of<'a>(
        sources: &Sources,
        findings: impl IntoIterator<Item = &'a Finding>,
        render: &Render<'_>,
        spill: &Spill,
    ) -> Chunk {
        let mut bytes = Vec::new();
        let mut ends = Vec::new();
        for f in findings {
            if let Some(p) = render(sources, f) {
                bytes.extend_from_slice(&p);
                ends.push(bytes.len());
            }
        }
        bytes.shrink_to_fit();
        ends.shrink_to_fit();
        Chunk {
            bytes: spill.keep(bytes),
            ends,
        }
    }

    /// Each finding's bytes.
    fn pieces<'a>(
        &'a self,
        spill: &'a Spill,
    ) -> Box<dyn Iterator<Item = std::io::Result<Cow<'a, [u8]>>> + 'a> {
        let starts = std::iter::once(0).chain(self.ends.iter().copied());
        let ranges = starts.zip(self.ends.iter().copied());
        match &self.bytes {
            Bytes::Memory(b) => Box::new(ranges.map(move |(a, z)| Ok(Cow::Borrowed(&b[a..z])))),
            kept @ Bytes::File { .. } => match spill.read(kept) {
                Ok(b) => Box::new(
                    ranges
                        .map(move |(a, z)| Ok(Cow::Owned(b[a..z].to_vec())))
                        .collect::<Vec<_>>()
                        .into_iter(),
                ),
                Err(e) => Box::new(std::iter::once(Err(e))),
            },
        }
    }
}

/// A run rendered: every finding's bytes in output order, and the counts.
#[derive(Debug, Default)]
pub struct Rendered {
    /// The shown findings' bytes by file, in output order (file, line, column, rule).
    chunks: Vec<Chunk>,
    /// Where the chunks' bytes wait.
    spill: Spill,
    /// Counts by severity of all findings (suppressed ones included, as
    /// [`Counts::of`]).
    pub counts: Counts,
    /// Rig files linted.
    pub files: usize,
    /// Channels in them.
    pub channels: usize,
    /// Notes about the run for the human report.
    pub notes: Vec<String>,
    /// See [`Outcome::roots_without_settings`].
    pub roots_without_settings: Vec<CampaignRoot>,
}

impl Rendered {
    /// Each shown finding's bytes, in output order (reading them back can fail when they
    /// waited in a temporary file).
    pub fn pieces(&self) -> impl Iterator<Item = std::io::Result<Cow<'_, [u8]>>> {
        self.chunks.iter().flat_map(|c| c.pieces(&self.spill))
    }
}

/// What is left of a rig once it is linted.
struct Done {
    /// The rig (for fix verification of shared catalogs).
    outcome: RigOutcome,
    info: FileInfo,
    channels: usize,
    /// Its findings in other files (the catalogs it includes), finished with the
    /// campaign.
    elsewhere: Vec<Finding>,
    own: Own,
}

/// A rig's findings in its own file.
enum Own {
    /// Rendered: the bytes, the counts, what verification compares against, and
    /// hashes of (subject, rule) for the fingerprint check (only when the rig has
    /// findings elsewhere).
    Rendered {
        chunk: Chunk,
        counts: Counts,
        ghosts: Vec<Ghost>,
        subjects: HashSet<u64>,
    },
    /// Finished except for fix verification, which waits for the campaign.
    Waiting(Vec<Finding>),
}

/// Lint the given paths as [`super::run`] does (fixes verified), rendering each
/// finding with `render` as soon as its file is finished.
pub fn run_rendered(
    paths: &[PathBuf],
    opts: &Options,
    render: &Render<'_>,
) -> Result<Rendered, Fatal> {
    let whole = |render: &Render<'_>| -> Result<Rendered, Fatal> {
        let out = super::run(paths, opts)?;
        let spill = Spill::default();
        Ok(Rendered {
            chunks: vec![Chunk::of(&out.sources, &out.findings, render, &spill)],
            spill,
            counts: Counts::of(&out.findings),
            files: out.files,
            channels: out.channels,
            notes: out.notes,
            roots_without_settings: out.roots_without_settings,
        })
    };
    if opts.scope.is_some()
        || !opts.verify_fixes
        || opts.keep_rigs
        || opts.overlay.is_some()
        || opts.identity_base.is_some()
    {
        return whole(render);
    }
    let (jobs, notes) = discover(paths, opts)?;
    let roots = roots_without_settings(&jobs);
    let ctx = Ctx::new(opts);
    let spill = Spill::default();
    let done = each_job(&jobs, opts, |i, job| {
        let mut r = lint_rig(&ctx, job, false)?;
        r.job = i;
        Ok(finish_rig(
            &ctx,
            job,
            r,
            render,
            &spill,
            opts.max_file_bytes,
        ))
    })?;
    match finish_campaign(ctx, done, jobs, render, spill, opts.max_file_bytes) {
        Some(mut out) => {
            out.notes = notes;
            out.roots_without_settings = roots;
            Ok(out)
        }
        None => whole(render),
    }
}

fn subject_hash(subject: Option<&str>, rule: &str) -> u64 {
    let mut h = std::collections::hash_map::DefaultHasher::new();
    subject.hash(&mut h);
    rule.hash(&mut h);
    h.finish()
}

/// Finish one rig's findings in its own file (see the module documentation).
fn finish_rig(
    ctx: &Ctx,
    job: &Job,
    r: RigResult,
    render: &Render<'_>,
    spill: &Spill,
    max: u64,
) -> Done {
    let RigResult {
        mut loaded,
        findings,
        channels,
        rig: _,
        settings,
        includes,
        job: index,
    } = r;
    let file = loaded.file;
    // The order `finish` gathers them in: the file's own, then the rig's.
    let mut all = std::mem::take(&mut loaded.findings);
    all.extend(findings.into_iter().map(|mut f| {
        if f.primary.span.file != file {
            f.owner_file = Some(file);
        }
        f
    }));
    let default_settings = Settings::default();
    all.retain_mut(|f| {
        let s = if f.primary.span.file == file {
            &*settings
        } else {
            &default_settings
        };
        keep_at_level(s, f)
    });
    dedup(&mut all);
    let (mut own, elsewhere): (Vec<Finding>, Vec<Finding>) =
        all.into_iter().partition(|f| f.primary.span.file == file);
    let mut extra = Vec::new();
    suppress::apply(&mut loaded.suppressions, &mut own, &mut extra);
    own.extend(extra);
    let sources = ctx.sources.lock().expect("no thread panicked").clone();
    sort(&sources, &mut own);
    let path = sources.get(file).path.clone();
    let info = FileInfo {
        file,
        named: loaded.named.clone(),
        root: job.root.dir.clone(),
        path,
    };
    crate::fingerprint::assign(
        &mut own,
        &Owners::new(std::slice::from_ref(&info), None),
        &sources,
    );
    let outcome = RigOutcome {
        file,
        rig: None,
        includes,
        job: index,
    };
    // What the rig's re-lints may raise again outside its file: its findings in the
    // catalogs it includes and theirs, with their subjects (their identity).
    let context = || {
        let mut c: Vec<Finding> = elsewhere.to_vec();
        {
            let cats = ctx.catalogs.lock().expect("no thread panicked");
            for cell in cats.values() {
                if let Some(Ok(l)) = cell.get()
                    && outcome.includes.contains(&l.file)
                {
                    c.extend(
                        l.findings
                            .iter()
                            .filter(|f| default_settings.level(f.rule, f.severity) != Level::Off)
                            .cloned(),
                    );
                }
            }
        }
        crate::fingerprint::assign(&mut c, &Owners::default(), &sources);
        c.into_iter().map(ghost).collect()
    };
    let own = match verify_alone(job, &outcome, &sources, own, channels, max, context) {
        Ok(own) => {
            let counts = Counts::of(&own);
            let chunk = Chunk::of(&sources, &own, render, spill);
            let subjects = if elsewhere.is_empty() {
                HashSet::new()
            } else {
                own.iter()
                    .map(|f| subject_hash(f.subject.as_deref(), f.rule))
                    .collect()
            };
            // Not collected in place: a ghost is a tenth of a finding.
            let mut ghosts = Vec::with_capacity(own.len());
            ghosts.extend(own.into_iter().map(ghost));
            drop(sources);
            // Nothing else is rendered from the rig's file, unless a finding in a
            // catalog points into it.
            if elsewhere.is_empty() {
                ctx.sources
                    .lock()
                    .expect("no thread panicked")
                    .release_text(file);
            }
            Own::Rendered {
                chunk,
                counts,
                ghosts,
                subjects,
            }
        }
        Err(own) => Own::Waiting(own),
    };
    Done {
        outcome,
        info,
        channels,
        elsewhere,
        own,
    }
}

/// What verification keeps of a finished finding (its subject is set).
fn ghost(f: Finding) -> Ghost {
    Ghost {
        rule: f.rule,
        file: f.primary.span.file,
        subject: f.subject.unwrap_or_default().into_boxed_str(),
    }
}

/// Verify the fixes of a rig's own findings that edit only its file; `Err` (the findings
/// unchanged) when some fix edits another file or a verdict needs the whole campaign.
fn verify_alone(
    job: &Job,
    outcome: &RigOutcome,
    sources: &Sources,
    own: Vec<Finding>,
    channels: usize,
    max: u64,
    context: impl FnOnce() -> Vec<Ghost>,
) -> Result<Vec<Finding>, Vec<Finding>> {
    if own.iter().all(|f| f.fix.is_none()) {
        return Ok(own);
    }
    let path = super::absolute(&sources.get(outcome.file).path);
    let elsewhere = own.iter().filter_map(|f| f.fix.as_ref()).any(|fix| {
        crate::fix::edit_key(sources, fix).is_some_and(|k| k.iter().any(|e| e.path != path))
    });
    if elsewhere {
        return Err(own);
    }
    let mut out = Outcome {
        sources: sources.clone(),
        findings: own,
        files: 1,
        channels,
        rigs: vec![RigOutcome {
            file: outcome.file,
            rig: None,
            includes: outcome.includes.clone(),
            job: 0,
        }],
        jobs: vec![job.clone()],
        ghosts: context(),
        ..Outcome::default()
    };
    if crate::fix::verify_own_rig(&mut out, max) {
        Ok(out.findings)
    } else {
        Err(out.findings)
    }
}

/// Finish what depends on every rig and put the pieces in output order; `None` when the
/// campaign breaks an assumption of finishing rigs alone (see the module documentation).
fn finish_campaign(
    ctx: Ctx,
    done: Vec<Done>,
    jobs: Vec<Job>,
    render: &Render<'_>,
    spill: Spill,
    max: u64,
) -> Option<Rendered> {
    let catalogs = ctx.catalogs.into_inner().expect("no thread panicked");
    let sources = ctx.sources.into_inner().expect("no thread panicked");
    // Each file shown under its own name, and no rig file read as a catalog too.
    let mut displays = HashSet::new();
    if !sources.iter().all(|f| displays.insert(f.display.as_str())) {
        return None;
    }
    if jobs
        .iter()
        .any(|j| catalogs.contains_key(&canonical_or_self(&j.path)))
    {
        return None;
    }
    let mut infos: Vec<FileInfo> = done.iter().map(|d| d.info.clone()).collect();
    let mut findings: Vec<Finding> = Vec::new();
    let mut suppressions: Vec<Suppression> = Vec::new();
    let mut catalog_findings = Vec::new();
    for cell in catalogs.values() {
        if let Some(Ok(c)) = cell.get() {
            infos.push(FileInfo {
                file: c.file,
                named: c.named.clone(),
                root: c.root.clone(),
                path: sources.get(c.file).path.clone(),
            });
            catalog_findings.extend(c.findings.iter().cloned());
            suppressions.extend(c.suppressions.iter().cloned());
        }
    }
    // A rendered rig's owner is its name: no other file of the run may have it.
    let mut names: HashMap<&str, usize> = HashMap::new();
    for i in &infos {
        if let Some(n) = &i.named {
            *names.entry(n.as_str()).or_default() += 1;
        }
    }
    let mut counts = Counts::default();
    let mut channels = 0;
    let mut chunks: Vec<(String, Chunk)> = Vec::new();
    let mut ghosts = Vec::new();
    let mut subjects: HashMap<FileId, HashSet<u64>> = HashMap::new();
    let mut rigs = Vec::new();
    for d in done {
        channels += d.channels;
        findings.extend(d.elsewhere);
        match d.own {
            Own::Rendered {
                chunk,
                counts: c,
                ghosts: g,
                subjects: s,
            } => {
                if d.info.named.as_deref().is_some_and(|n| names[n] > 1) {
                    return None;
                }
                counts.error += c.error;
                counts.warning += c.warning;
                counts.note += c.note;
                counts.suppressed += c.suppressed;
                chunks.push((sources.get(d.info.file).display.clone(), chunk));
                ghosts.extend(g);
                subjects.insert(d.info.file, s);
            }
            Own::Waiting(f) => findings.extend(f),
        }
        rigs.push(d.outcome);
    }
    // The catalogs' own findings take the default settings, as in `finish`.
    let default_settings = Settings::default();
    catalog_findings.retain_mut(|f| keep_at_level(&default_settings, f));
    findings.extend(catalog_findings);
    dedup(&mut findings);
    let mut extra = Vec::new();
    suppress::apply(&mut suppressions, &mut findings, &mut extra);
    findings.extend(extra);
    sort(&sources, &mut findings);
    crate::fingerprint::assign(&mut findings, &Owners::new(&infos, None), &sources);
    // A rendered rig's fingerprint counters counted only its own findings.
    if findings.iter().any(|f| {
        let owner = f.owner_file.unwrap_or(f.primary.span.file);
        subjects
            .get(&owner)
            .is_some_and(|s| s.contains(&subject_hash(f.subject.as_deref(), f.rule)))
    }) {
        return None;
    }
    rigs.sort_by(|a, b| {
        sources
            .get(a.file)
            .display
            .cmp(&sources.get(b.file).display)
    });
    let mut out = Outcome {
        sources,
        findings,
        files: jobs.len(),
        channels,
        rigs,
        jobs,
        ghosts,
        ..Outcome::default()
    };
    crate::fix::verify(&mut out, max);
    let c = Counts::of(&out.findings);
    counts.error += c.error;
    counts.warning += c.warning;
    counts.note += c.note;
    counts.suppressed += c.suppressed;
    // The rest, one chunk per file, and every chunk in file order.
    let mut at = 0;
    while at < out.findings.len() {
        let file = out.findings[at].primary.span.file;
        let n = out.findings[at..]
            .iter()
            .take_while(|f| f.primary.span.file == file)
            .count();
        let chunk = Chunk::of(&out.sources, &out.findings[at..at + n], render, &spill);
        chunks.push((out.sources.get(file).display.clone(), chunk));
        at += n;
    }
    chunks.sort_by(|a, b| a.0.cmp(&b.0));
    Some(Rendered {
        chunks: chunks.into_iter().map(|(_, c)| c).collect(),
        spill,
        counts,
        files: out.files,
        channels: out.channels,
        notes: Vec::new(),
        roots_without_settings: Vec::new(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bytes_past_the_memory_limit_wait_in_a_file_and_read_back_the_same() {
        let spill = Spill::default();
        // 20 chunks of 1 MiB: the first 16 stay in memory, the rest go to the file.
        let chunks: Vec<Vec<u8>> = (0..20u8)
            .map(|i| (0..1 << 20).map(|k: u32| i ^ (k % 251) as u8).collect())
            .collect();
        let kept: Vec<Bytes> = chunks.iter().map(|c| spill.keep(c.clone())).collect();
        let in_file = kept
            .iter()
            .filter(|b| matches!(b, Bytes::File { .. }))
            .count();
        // A system without a writable temporary directory keeps everything in memory.
        if spill.file.lock().unwrap().is_some() {
            assert_eq!(in_file, 4);
        }
        for (c, k) in chunks.iter().zip(&kept) {
            assert_eq!(&spill.read(k).unwrap(), c);
        }
    }
}
