//! Linting a campaign: discovering rig files, loading each file once (catalogs are
//! shared and cached), resolving, running the rules, applying settings and
//! suppressions, and sorting the findings.

use crate::declared;
use crate::finding::Finding;
use crate::model::build;
use crate::model::{Document, Role};
use crate::resolve::{self, Rig, Unchecked};
use crate::root::{CampaignRoot, RootKind};
use crate::settings::{self, Level, Settings};
use crate::source::yaml::{self, Node};
use crate::source::{FileId, LineIndex, Sources, Span, escape_control};
use crate::suppress::{self, Suppression};
use rayon::prelude::*;
use std::collections::HashMap;
use std::path::{Component, Path, PathBuf};
use std::sync::{Arc, Mutex, OnceLock};

mod rendered;
pub use rendered::{Render, Rendered, run_rendered};

/// The default largest file foldcheck reads (64 MiB).
pub const DEFAULT_MAX_FILE_BYTES: u64 = 64 * 1024 * 1024;

/// The deepest chain of includes (a rig including a catalog including another …) read:
/// real campaigns nest two or three deep; a deeper chain is refused with an `include`
/// finding rather than read with ever deeper recursion.
pub const MAX_INCLUDE_DEPTH: usize = 64;

/// Progress is shown for runs of at least this many files.
const PROGRESS_FROM: usize = 50;

/// How to run.
#[derive(Clone, Debug)]
pub struct Options {
    /// A settings file to use instead of discovering one.
    pub settings: Option<PathBuf>,
    /// Files larger than this are refused with a finding.
    pub max_file_bytes: u64,
    /// Keep each resolved rig in the outcome (for `diff` and `inspect`).
    pub keep_rigs: bool,
    /// Show progress on stderr (set it only when stderr is a terminal).
    pub progress: bool,
    /// Texts that stand in for files on disk (an editor's unsaved buffers), by
    /// absolute path: see [`Overlay`].
    pub overlay: Option<Arc<Overlay>>,
    /// Identify findings relative to this directory instead of their campaign roots:
    /// the fingerprint's campaign-root field is `.` and path owners are relative to it
    /// (`diff` sets it to each side's base, so that two sides laid out in different
    /// directories give a finding the same fingerprint; docs/output.md).
    pub identity_base: Option<PathBuf>,
    /// Analyse only this channel (with the members of its groups) in each rig that has
    /// it, as `inspect` does: the rig is resolved whole and the rules that read the rig
    /// (budgets from its rates, clocks, groups) run, but other channels are not
    /// analysed, so they raise no channel findings. Proposed fixes are then not
    /// verified and are dropped (their findings keep the help without a fix).
    pub scope: Option<String>,
    /// Verify proposed fixes before the outcome is returned (the default). The editor
    /// server turns this off and verifies the fixes of a range only when a code action
    /// asks for them ([`crate::fix::verify_only`]): until then a finding's `fix` and
    /// `help` are the rule's unverified proposal.
    pub verify_fixes: bool,
    /// Search fix candidates for failing channels (on by default). Verification's
    /// re-lints turn it off: they only need the findings, not new candidates.
    pub propose_fixes: bool,
}

/// Texts held in memory that stand in for the files at these paths: an editor's open
/// documents override what is on disk, and a path held here need not exist on disk.
/// Keys are absolute, normalised paths (see [`absolute`]); a link's target may be
/// given too.
pub type Overlay = HashMap<PathBuf, String>;

impl Default for Options {
    fn default() -> Self {
        Options {
            settings: None,
            max_file_bytes: DEFAULT_MAX_FILE_BYTES,
            keep_rigs: false,
            progress: false,
            overlay: None,
            identity_base: None,
            scope: None,
            verify_fixes: true,
            propose_fixes: true,
        }
    }
}

/// Why a run could not do its job (exit status 2).
#[derive(Debug)]
pub enum Fatal {
    /// A path on the command line does not exist.
    NoSuchPath(PathBuf),
    /// A path could not be read (permissions, not a regular file …).
    Unreadable(PathBuf, String),
    /// The settings file is invalid.
    Settings(settings::SettingsError),
}

impl std::fmt::Display for Fatal {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Fatal::NoSuchPath(p) => write!(
                f,
                "{}: no such file or directory",
                escape_control(&p.display().to_string())
            ),
            Fatal::Unreadable(p, why) => write!(
                f,
                "{}: {}",
                escape_control(&p.display().to_string()),
                escape_control(why)
            ),
            Fatal::Settings(e) => write!(f, "{e}"),
        }
    }
}

/// A linted rig.
#[derive(Debug)]
pub struct RigOutcome {
    /// The rig file.
    pub file: FileId,
    /// The rig, when it resolved and `keep_rigs` was set.
    pub rig: Option<Rig>,
    /// The catalogs it includes, directly or not.
    pub includes: Vec<FileId>,
    /// Its index in [`Outcome::jobs`].
    pub(crate) job: usize,
}

/// What a run found.
#[derive(Debug, Default)]
pub struct Outcome {
    /// Every file read.
    pub sources: Sources,
    /// Findings, sorted by file, line, column and rule.
    pub findings: Vec<Finding>,
    /// Rig files linted.
    pub files: usize,
    /// Channels in them.
    pub channels: usize,
    /// Per rig file, in path order.
    pub rigs: Vec<RigOutcome>,
    /// What was linted, to lint it again with edits applied.
    pub(crate) jobs: Vec<Job>,
    /// The texts that stood in for files.
    pub(crate) overlay: Option<Arc<Overlay>>,
    /// Notes about the run for the human report (a named file that settings exclude).
    pub notes: Vec<String>,
    /// The campaign roots used that no `foldcheck.toml` chose (git work tree's top, the
    /// current directory, …), in first-use order: the human report names them.
    pub roots_without_settings: Vec<CampaignRoot>,
    /// Findings already rendered and dropped ([`run_rendered`]), kept only as what fix
    /// verification compares against.
    pub(crate) ghosts: Vec<Ghost>,
}

/// What fix verification needs of a finding that was rendered and dropped: its rule,
/// file and subject (its identity across runs).
#[derive(Debug)]
pub(crate) struct Ghost {
    pub(crate) rule: &'static str,
    pub(crate) file: FileId,
    pub(crate) subject: Box<str>,
}

impl Outcome {
    /// The campaign root of a linted rig (src/root.rs).
    pub fn root(&self, rig: &RigOutcome) -> Option<&CampaignRoot> {
        self.jobs.get(rig.job).map(|j| &j.root)
    }
}

/// One loaded file: its text is in [`Sources`], its tree is kept for suppressions.
struct Loaded {
    file: FileId,
    doc: Option<Document>,
    findings: Vec<Finding>,
    suppressions: Vec<Suppression>,
    /// `rig:<name>` or `catalog:<name>` when the file names itself (for fingerprints).
    named: Option<String>,
    /// The campaign root it was first linted under (for fingerprints).
    root: PathBuf,
}

/// A catalog once loaded, or why it could not be read.
type CatalogLoad = Result<Arc<Loaded>, String>;

struct Ctx {
    sources: Mutex<Sources>,
    /// Each catalog, by canonical path, loaded once: the loaded file, or why it could
    /// not be read (kept, so every rig that includes it gets the same answer whichever
    /// thread loaded it first).
    catalogs: Mutex<HashMap<PathBuf, Arc<OnceLock<CatalogLoad>>>>,
    max_file_bytes: u64,
    overlay: Option<Arc<Overlay>>,
    /// See [`Options::scope`].
    scope: Option<String>,
    /// See [`Options::propose_fixes`].
    propose_fixes: bool,
}

impl Ctx {
    fn new(opts: &Options) -> Self {
        Ctx {
            sources: Mutex::new(Sources::new()),
            catalogs: Mutex::new(HashMap::new()),
            max_file_bytes: opts.max_file_bytes,
            overlay: opts.overlay.clone(),
            scope: opts.scope.clone(),
            propose_fixes: opts.propose_fixes,
        }
    }
}

/// The overlay's text for `path`, if it holds one (looked up by absolute path, then by
/// the file's real path).
fn overlay_text<'a>(overlay: Option<&'a Overlay>, path: &Path) -> Option<&'a str> {
    let overlay = overlay?;
    overlay
        .get(&absolute(path))
        .or_else(|| {
            std::fs::canonicalize(path)
                .ok()
                .and_then(|p| overlay.get(&p))
        })
        .map(String::as_str)
}

/// A rig file to lint, with its campaign root and settings.
#[derive(Clone, Debug)]
pub(crate) struct Job {
    pub(crate) path: PathBuf,
    display: String,
    pub(crate) root: CampaignRoot,
    pub(crate) settings: Arc<Settings>,
    /// A catalog named on the command line that no rig under its campaign root includes
    /// is checked on its own (syntax, schema, names, clocks).
    role: Role,
}

/// Lint the given paths (files and directories). Proposed fixes are verified (see
/// [`crate::fix`]): only those that work stay on their findings (unless
/// [`Options::verify_fixes`] is off).
pub fn run(paths: &[PathBuf], opts: &Options) -> Result<Outcome, Fatal> {
    let (jobs, notes) = discover(paths, opts)?;
    let roots = roots_without_settings(&jobs);
    let mut out = run_jobs(jobs, opts)?;
    out.notes = notes;
    out.roots_without_settings = roots;
    if opts.scope.is_some() {
        for f in &mut out.findings {
            f.drop_fix();
        }
    } else if opts.verify_fixes {
        crate::fix::verify(&mut out, opts.max_file_bytes);
    }
    Ok(out)
}

/// Lint these jobs (no verification of fixes).
pub(crate) fn run_jobs(jobs: Vec<Job>, opts: &Options) -> Result<Outcome, Fatal> {
    let ctx = Ctx::new(opts);
    let results = each_job(&jobs, opts, |i, job| {
        lint_rig(&ctx, job, opts.keep_rigs).map(|mut r| {
            r.job = i;
            r
        })
    })?;
    let n = jobs.len();
    Ok(finish(ctx, results, n, jobs, opts.identity_base.as_deref()))
}

/// Run `f` on every job in parallel (results in job order), showing progress.
fn each_job<T: Send>(
    jobs: &[Job],
    opts: &Options,
    f: impl Fn(usize, &Job) -> Result<T, Fatal> + Sync,
) -> Result<Vec<T>, Fatal> {
    let done = std::sync::atomic::AtomicUsize::new(0);
    let total = jobs.len();
    let show = opts.progress && total >= PROGRESS_FROM;
    let results: Vec<Result<T, Fatal>> = jobs
        .par_iter()
        .enumerate()
        .map(|(i, job)| {
            let r = f(i, job);
            let n = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            if show && (n.is_multiple_of(25) || n == total) {
                eprint!("\rfoldcheck: {n}/{total} files");
            }
            r
        })
        .collect();
    if show {
        eprint!("\r{}\r", " ".repeat(40));
    }
    results.into_iter().collect()
}

/// The rig files under `root` that include `catalog`, as jobs with `like`'s root and
/// settings (for verifying an edit to a shared catalog in every rig that uses it).
pub(crate) fn dependent_jobs(like: &Job, catalog: &Path) -> Vec<Job> {
    dependents(&like.root.dir, catalog)
        .into_iter()
        .map(|p| Job {
            display: relative_path(&absolute(Path::new(".")), &absolute(&p)),
            path: p,
            root: like.root.clone(),
            settings: like.settings.clone(),
            role: Role::Rig,
        })
        .collect()
}

/// The file a job lints, as the same file is named in [`Overlay`] keys.
pub(crate) fn job_file(job: &Job) -> PathBuf {
    identity(&job.path)
}

/// Lint one rig held in memory as if it were the file `name`: exactly the stages a rig
/// file goes through (YAML, schema and quantities, includes, resolution, every rule,
/// default settings, suppressions, sorting). Includes are read from the file system
/// relative to `name`, and may not leave `name`'s directory.
pub fn lint_text(name: &str, text: &str) -> (Sources, Vec<Finding>) {
    let (sources, findings, _) = lint_text_keeping_rig(name, text);
    (sources, findings)
}

/// [`lint_text`], also returning the resolved rig (when the text is a rig that reads).
pub fn lint_text_keeping_rig(name: &str, text: &str) -> (Sources, Vec<Finding>, Option<Rig>) {
    let path = PathBuf::from(name);
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let job = Job {
        display: display(&path),
        path: path.clone(),
        root: CampaignRoot {
            dir: absolute(dir),
            kind: RootKind::FileDirectory,
        },
        settings: Arc::new(Settings::default()),
        role: Role::Rig,
    };
    let mut overlay = Overlay::new();
    overlay.insert(absolute(&path), text.to_string());
    let opts = Options {
        overlay: Some(Arc::new(overlay)),
        keep_rigs: true,
        ..Options::default()
    };
    match run_jobs(vec![job], &opts) {
        Ok(mut out) => {
            crate::fix::verify(&mut out, DEFAULT_MAX_FILE_BYTES);
            let rig = out.rigs.pop().and_then(|r| r.rig);
            (out.sources, out.findings, rig)
        }
        // Only reading can fail, and the text comes from memory.
        Err(e) => unreachable!("an in-memory rig is always readable: {e}"),
    }
}

/// The channels of a rig that were neither analysed nor named in a finding: a finding
/// that names the channel, or whose place (primary or secondary) lies inside the
/// channel's item, the items of its clock path, its module or its sensor; or a failed
/// include's finding that lists the channel among those it left unchecked, or counts it
/// in its "and N more" (its `unchecked_channels` value, docs/format.md "include", minus
/// the names it lists). The promise is that this list is always empty (README,
/// "Limits"); tests and the fuzz targets check it.
pub fn silently_skipped(rig: &Rig, findings: &[Finding]) -> Vec<String> {
    // Channels named only in a failed include's message: the listed names, and how many
    // more it counts without naming them. A name is looked up as "`name`" in the list
    // rather than by splitting the list at backticks: a name that breaks the schema may
    // hold backticks itself.
    let mut listed: Vec<&str> = Vec::new();
    let mut counted = 0usize;
    for f in findings.iter().filter(|f| f.rule == "include") {
        let Some(total) = f.values.get("unchecked_channels").and_then(|v| v.as_u64()) else {
            continue;
        };
        let list = f
            .message
            .split_once(" not checked: ")
            .map_or("", |(_, list)| list);
        let mut names: Vec<&str> = rig
            .channels
            .iter()
            .map(|c| c.def.name.value.as_str())
            .filter(|name| list.contains(&format!("`{name}`")))
            .collect();
        names.sort_unstable();
        names.dedup();
        counted += (total as usize).saturating_sub(names.len());
        listed.extend(names);
    }
    let mut out = Vec::new();
    for c in rig.channels.iter().filter(|c| !c.ok) {
        let mut places = vec![c.def.item];
        if let Some(k) = c.clock {
            places.extend(rig.clock_path(k).iter().map(|&i| rig.clocks[i].def.item));
        }
        if let Some(m) = c.module {
            places.push(rig.modules[m].item);
        }
        if let Some(s) = c.sensor {
            places.push(rig.sensors[s].item);
        }
        let name = c.def.name.value.as_str();
        let named = listed.contains(&name)
            || findings.iter().any(|f| {
                f.channel.as_deref() == Some(name)
                    || std::iter::once(&f.primary)
                        .chain(&f.secondary)
                        .any(|l| places.iter().any(|p| p.contains(&l.span)))
            });
        if named {
            continue;
        }
        if counted > 0 {
            counted -= 1;
        } else {
            out.push(c.def.name.value.clone());
        }
    }
    out
}

/// The distinct campaign roots of the jobs that no settings file chose.
fn roots_without_settings(jobs: &[Job]) -> Vec<CampaignRoot> {
    let mut out: Vec<CampaignRoot> = Vec::new();
    for j in jobs {
        if !j.root.has_settings() && !out.contains(&j.root) {
            out.push(j.root.clone());
        }
    }
    out
}

/// Gather the rigs' findings, apply settings levels and suppressions, and sort.
fn finish(
    ctx: Ctx,
    results: Vec<RigResult>,
    files: usize,
    jobs: Vec<Job>,
    identity_base: Option<&Path>,
) -> Outcome {
    let mut findings = Vec::new();
    let mut suppressions: Vec<Suppression> = Vec::new();
    let mut channels = 0;
    let mut rigs = Vec::new();
    let mut file_settings: HashMap<FileId, Arc<Settings>> = HashMap::new();
    let mut infos = Vec::new();
    let info = |l: &Loaded, path: PathBuf| crate::fingerprint::FileInfo {
        file: l.file,
        named: l.named.clone(),
        root: l.root.clone(),
        path,
    };
    for r in results {
        let RigResult {
            loaded,
            findings: f,
            channels: n,
            rig,
            settings,
            includes,
            job,
        } = r;
        file_settings.insert(loaded.file, settings);
        let rig_file = loaded.file;
        infos.push(info(
            &loaded,
            ctx.sources
                .lock()
                .expect("no thread panicked")
                .get(rig_file)
                .path
                .clone(),
        ));
        findings.extend(loaded.findings);
        // What a rig raises about a catalog's parts is the rig's (fingerprint owner).
        findings.extend(f.into_iter().map(|mut f| {
            if f.primary.span.file != rig_file {
                f.owner_file = Some(rig_file);
            }
            f
        }));
        suppressions.extend(loaded.suppressions);
        channels += n;
        rigs.push(RigOutcome {
            file: loaded.file,
            rig,
            includes,
            job,
        });
    }
    // Catalog findings, once each.
    let catalogs = ctx.catalogs.into_inner().expect("no thread panicked");
    for cell in catalogs.values() {
        if let Some(Ok(c)) = cell.get() {
            let path = ctx
                .sources
                .lock()
                .expect("no thread panicked")
                .get(c.file)
                .path
                .clone();
            infos.push(info(c, path));
            findings.extend(c.findings.iter().cloned());
            suppressions.extend(c.suppressions.iter().cloned());
        }
    }
    let sources = ctx.sources.into_inner().expect("no thread panicked");

    // Settings: levels per file (a catalog takes the settings of the first rig seen).
    let default_settings = Arc::new(Settings::default());
    findings.retain_mut(|f| {
        let s = file_settings
            .get(&f.primary.span.file)
            .unwrap_or(&default_settings);
        keep_at_level(s, f)
    });
    dedup(&mut findings);
    let mut extra = Vec::new();
    suppress::apply(&mut suppressions, &mut findings, &mut extra);
    findings.extend(extra);
    sort(&sources, &mut findings);
    let owners = crate::fingerprint::Owners::new(&infos, identity_base);
    crate::fingerprint::assign(&mut findings, &owners, &sources);
    rigs.sort_by(|a, b| {
        sources
            .get(a.file)
            .display
            .cmp(&sources.get(b.file).display)
    });
    Outcome {
        sources,
        files,
        channels,
        findings,
        rigs,
        jobs,
        overlay: ctx.overlay,
        notes: Vec::new(),
        roots_without_settings: Vec::new(),
        ghosts: Vec::new(),
    }
}

/// Give a finding the severity its settings set; `false` when they turn its rule off.
fn keep_at_level(s: &Settings, f: &mut Finding) -> bool {
    match s.level(f.rule, f.severity) {
        Level::Off => false,
        Level::On(sev) => {
            f.severity = sev;
            true
        }
    }
}

/// Sort findings by file path, line, column and rule (the output order).
pub fn sort(sources: &Sources, findings: &mut [Finding]) {
    findings.sort_by(|a, b| {
        let fa = sources.get(a.primary.span.file);
        let fb = sources.get(b.primary.span.file);
        fa.display
            .cmp(&fb.display)
            .then(a.primary.span.start.cmp(&b.primary.span.start))
            .then(a.rule.cmp(b.rule))
            .then(a.message.cmp(&b.message))
    });
}

fn dedup(findings: &mut Vec<Finding>) {
    let mut seen = std::collections::HashSet::new();
    findings.retain(|f| seen.insert((f.rule, f.primary.span, f.message.clone())));
}

/// Turn the command line's paths into rig-file jobs.
fn discover(paths: &[PathBuf], opts: &Options) -> Result<(Vec<Job>, Vec<String>), Fatal> {
    let forced = match &opts.settings {
        Some(p) => Some(Arc::new(settings::load(p).map_err(Fatal::Settings)?)),
        None => None,
    };
    let mut cache: HashMap<PathBuf, Arc<Settings>> = HashMap::new();
    // The campaign root of a file (src/root.rs) and the settings that go with it.
    let mut settings_for =
        |file: &Path, walked: Option<&Path>| -> Result<(CampaignRoot, Arc<Settings>), Fatal> {
            if let (Some(s), Some(p)) = (&forced, &opts.settings) {
                let abs = absolute(p);
                let dir = abs.parent().map(Path::to_path_buf).unwrap_or_default();
                let root = CampaignRoot {
                    dir,
                    kind: RootKind::Settings(abs),
                };
                return Ok((root, s.clone()));
            }
            let root = crate::root::campaign_root_in(file, walked);
            match &root.kind {
                RootKind::Settings(file) => {
                    if let Some(s) = cache.get(file) {
                        return Ok((root, s.clone()));
                    }
                    let s = Arc::new(settings::load(file).map_err(Fatal::Settings)?);
                    cache.insert(file.clone(), s.clone());
                    Ok((root, s))
                }
                _ => Ok((root, Arc::new(Settings::default()))),
            }
        };
    let mut jobs = Vec::new();
    let mut notes = Vec::new();
    let mut seen = std::collections::HashSet::new();
    let overlay = opts.overlay.as_deref();
    for p in paths {
        let in_overlay = overlay_text(overlay, p).is_some();
        let meta = std::fs::metadata(p).map_err(|e| match e.kind() {
            std::io::ErrorKind::NotFound => Fatal::NoSuchPath(p.clone()),
            _ => Fatal::Unreadable(p.clone(), e.to_string()),
        });
        if !in_overlay && meta?.is_dir() {
            let walker = ignore::WalkBuilder::new(p)
                .require_git(false)
                .hidden(true)
                .sort_by_file_name(|a, b| a.cmp(b))
                .build();
            for entry in walker {
                let entry = entry.map_err(|e| Fatal::Unreadable(p.clone(), e.to_string()))?;
                let path = entry.path();
                let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
                if !(name.ends_with(".rig.yaml") || name.ends_with(".rig.yml")) {
                    continue;
                }
                // Directories are walked; symbolic links are not followed by the walk,
                // so a link named like a rig is linted through its target. Anything
                // else (a named pipe, a broken link) is linted too, and reading it fails
                // with a clear error instead of the file being skipped in silence.
                if entry.file_type().is_some_and(|t| t.is_dir())
                    || std::fs::metadata(path).is_ok_and(|m| m.is_dir())
                {
                    continue;
                }
                let (root, s) = settings_for(path, Some(p))?;
                if excluded(&s, &root.dir, path).is_some() || !seen.insert(identity(path)) {
                    continue;
                }
                jobs.push(Job {
                    path: path.to_path_buf(),
                    display: display(path),
                    root,
                    settings: s,
                    role: Role::Rig,
                });
            }
        } else {
            let (root, s) = settings_for(p, None)?;
            if let Some(pattern) = excluded(&s, &root.dir, p) {
                // Named on the command line: the user wants it linted. Say that the
                // settings would have left it out (docs/format.md, "exclude").
                notes.push(format!(
                    "{} is linted because it was named, although the settings exclude it (`{pattern}` in {})",
                    display(p),
                    s.path
                        .as_deref()
                        .map(|f| display(&relative_to_cwd(f)))
                        .unwrap_or_else(|| settings::FILE_NAME.to_string())
                ));
            }
            if is_catalog_file(p, overlay) {
                // Pre-commit passes changed files: a changed catalog means linting the
                // rigs that include it, searched for under the catalog's campaign root.
                let search = root.dir.clone();
                let deps = dependents(&search, &absolute(p));
                if deps.is_empty() {
                    if seen.insert(identity(p)) {
                        jobs.push(Job {
                            path: p.clone(),
                            display: display(p),
                            root,
                            settings: s,
                            role: Role::Catalog,
                        });
                    }
                    continue;
                }
                for dep in deps {
                    let (droot, ds) = settings_for(&dep, Some(&search))?;
                    if excluded(&ds, &droot.dir, &dep).is_some() || !seen.insert(identity(&dep)) {
                        continue;
                    }
                    jobs.push(Job {
                        // Shown relative to the working directory, as a named path
                        // would be (`../rigs/a.rig.yaml` from inside `catalog/`).
                        display: relative_path(&absolute(Path::new(".")), &absolute(&dep)),
                        path: dep,
                        root: droot,
                        settings: ds,
                        role: Role::Rig,
                    });
                }
                continue;
            }
            if !seen.insert(identity(p)) {
                continue;
            }
            jobs.push(Job {
                path: p.clone(),
                display: display(p),
                root,
                settings: s,
                role: Role::Rig,
            });
        }
    }
    Ok((jobs, notes))
}

/// Whether a file that is not named like a rig file is a catalog: a top-level
/// `catalog:` key (block style, as catalogs are written).
fn is_catalog_file(p: &Path, overlay: Option<&Overlay>) -> bool {
    let name = p.file_name().and_then(|n| n.to_str()).unwrap_or("");
    if name.ends_with(".rig.yaml") || name.ends_with(".rig.yml") {
        return false;
    }
    if let Some(text) = overlay_text(overlay, p) {
        return text.lines().any(|l| l.starts_with("catalog:"));
    }
    // Only a regular file is opened here: reading a named pipe would block.
    std::fs::metadata(p).is_ok_and(|m| m.is_file())
        && std::fs::read_to_string(p).is_ok_and(|t| t.lines().any(|l| l.starts_with("catalog:")))
}

/// The rig files under `root` that include `catalog` (directly or through other
/// catalogs), in path order.
fn dependents(root: &Path, catalog: &Path) -> Vec<PathBuf> {
    let target = canonical_or_self(catalog);
    let mut includes_of: HashMap<PathBuf, Vec<PathBuf>> = HashMap::new();
    let mut out = Vec::new();
    let walker = ignore::WalkBuilder::new(root)
        .require_git(false)
        .sort_by_file_name(|a, b| a.cmp(b))
        .build();
    for entry in walker.flatten() {
        let path = entry.path();
        let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
        if !(name.ends_with(".rig.yaml") || name.ends_with(".rig.yml")) {
            continue;
        }
        // Depth-first over include lists, each file once.
        let mut stack = vec![canonical_or_self(path)];
        let mut visited = std::collections::HashSet::new();
        let mut found = false;
        while let Some(f) = stack.pop() {
            if !visited.insert(f.clone()) {
                continue;
            }
            if f == target {
                found = true;
                break;
            }
            let incs = includes_of
                .entry(f.clone())
                .or_insert_with(|| include_list(&f));
            stack.extend(incs.iter().cloned());
        }
        if found {
            out.push(path.to_path_buf());
        }
    }
    out
}

/// The canonical paths a file's `include` list names (unreadable files: none).
fn include_list(path: &Path) -> Vec<PathBuf> {
    if !std::fs::metadata(path).is_ok_and(|m| m.is_file()) {
        return Vec::new();
    }
    let Ok(text) = std::fs::read_to_string(path) else {
        return Vec::new();
    };
    let lines = LineIndex::new(&text);
    let Ok(root) = yaml::parse(0, &text, &lines) else {
        return Vec::new();
    };
    let dir = path.parent().unwrap_or(Path::new(""));
    root.get("include")
        .and_then(|(_, v)| v.as_seq())
        .map(|items| {
            items
                .iter()
                .filter_map(|n| n.as_str())
                .filter_map(|s| std::fs::canonicalize(dir.join(s)).ok())
                .collect()
        })
        .unwrap_or_default()
}

/// A path relative to the working directory when it lies below it.
fn relative_to_cwd(p: &Path) -> PathBuf {
    let cwd = absolute(Path::new("."));
    let abs = absolute(p);
    abs.strip_prefix(&cwd).map(Path::to_path_buf).unwrap_or(abs)
}

/// The help of an include that leaves the campaign root: what the root is, and where a
/// `foldcheck.toml` would make a campaign that holds both files.
fn outside_help(campaign: &CampaignRoot, including: &Path, included: &Path) -> String {
    let from = including.parent().unwrap_or(Path::new("/"));
    let mut top = from.to_path_buf();
    while !included.starts_with(&top) && top.pop() {}
    let cwd = absolute(Path::new("."));
    let top = relative_path(&cwd, &top);
    let root = relative_path(&cwd, &campaign.dir);
    if campaign.has_settings() {
        format!(
            "the campaign root is `{root}`, the directory of its foldcheck.toml: move the catalog inside it, or move foldcheck.toml up to `{top}`, which holds both files"
        )
    } else {
        format!(
            "no foldcheck.toml was found, so the campaign root is {} (`{root}`): create a foldcheck.toml (it may be empty) in `{top}`, the campaign's top directory, which holds both files",
            campaign.describe()
        )
    }
}

/// The path of `to` relative to the directory `from` (both absolute and normalised),
/// `/`-separated; `.` when they are the same.
pub fn relative_path(from: &Path, to: &Path) -> String {
    let f: Vec<_> = from.components().collect();
    let t: Vec<_> = to.components().collect();
    let common = f.iter().zip(&t).take_while(|(a, b)| a == b).count();
    let mut parts: Vec<String> = vec!["..".to_string(); f.len() - common];
    parts.extend(
        t[common..]
            .iter()
            .map(|c| c.as_os_str().to_string_lossy().into_owned()),
    );
    if parts.is_empty() {
        ".".to_string()
    } else {
        parts.join("/")
    }
}

/// The file a path names, for linting each file once (a link and its target are one).
fn identity(p: &Path) -> PathBuf {
    std::fs::canonicalize(p).unwrap_or_else(|_| absolute(p))
}

/// The exclusion pattern of the settings that matches `path`, if any.
fn excluded<'s>(s: &'s Settings, root: &Path, path: &Path) -> Option<&'s str> {
    let abs = absolute(path);
    let rel = abs.strip_prefix(root).ok()?;
    let i = s.exclude.matches(rel).into_iter().next()?;
    s.exclude_patterns.get(i).map(String::as_str)
}

/// The path as the user gave it, with `./` prefixes removed.
fn display(p: &Path) -> String {
    // Only Windows separates directories with a backslash; elsewhere it is part of a name.
    let s = p.to_string_lossy();
    let s = if cfg!(windows) {
        s.replace('\\', "/")
    } else {
        s.into_owned()
    };
    s.strip_prefix("./").map(str::to_string).unwrap_or(s)
}

/// An absolute, lexically normalised path (no file-system access).
pub fn absolute(p: &Path) -> PathBuf {
    let joined = if p.is_absolute() {
        p.to_path_buf()
    } else {
        current_dir().join(p)
    };
    normalize(&joined)
}

/// The working directory, asked of the system once: foldcheck never changes it, and
/// asking costs a system call per path (a tenth of a campaign's time went there).
fn current_dir() -> &'static Path {
    static CWD: OnceLock<PathBuf> = OnceLock::new();
    CWD.get_or_init(|| std::env::current_dir().unwrap_or_default())
}

/// Remove `.` and resolve `..` lexically.
pub fn normalize(p: &Path) -> PathBuf {
    let mut out = PathBuf::new();
    for c in p.components() {
        match c {
            Component::CurDir => {}
            Component::ParentDir => {
                if !out.pop() {
                    out.push("..");
                }
            }
            other => out.push(other.as_os_str()),
        }
    }
    out
}

/// The finding for a file over the size limit (`size` when it is known up front).
fn too_large(id: FileId, size: Option<u64>, limit: u64) -> Finding {
    let what = match size {
        Some(n) => format!("the file is {n} bytes"),
        None => format!("the file holds more than {limit} bytes"),
    };
    declared::YAML_SYNTAX
        .finding(
            Span::point(id, 0),
            "file too large",
            format!("{what}, over the {limit}-byte limit for one rig or catalog"),
        )
        .with_help("split the rig, or raise the limit with --max-file-size")
}

/// Read a file's text for linting. Too-large and non-UTF-8 files become findings. Only
/// regular files are opened (a named pipe would block), and never more than the limit
/// is read, whatever size the file system reports.
fn read_file(ctx: &Ctx, path: &Path, display: String) -> Result<(FileId, Option<Finding>), String> {
    use std::io::Read;
    if let Some(text) = overlay_text(ctx.overlay.as_deref(), path) {
        let limit = ctx.max_file_bytes;
        let mut sources = ctx.sources.lock().expect("no thread panicked");
        if text.len() as u64 > limit {
            let id = sources.add(path, display, String::new());
            return Ok((id, Some(too_large(id, Some(text.len() as u64), limit))));
        }
        let id = sources.add(path, display, text.to_string());
        return Ok((id, None));
    }
    let meta = std::fs::metadata(path).map_err(|e| e.to_string())?;
    if !meta.is_file() {
        return Err(crate::source::not_regular_file(&meta));
    }
    let limit = ctx.max_file_bytes;
    let add_empty = |display: String| {
        ctx.sources
            .lock()
            .expect("no thread panicked")
            .add(path, display, String::new())
    };
    if meta.len() > limit {
        let id = add_empty(display);
        return Ok((id, Some(too_large(id, Some(meta.len()), limit))));
    }
    let file = std::fs::File::open(path).map_err(|e| e.to_string())?;
    let mut bytes = Vec::with_capacity(usize::try_from(meta.len()).unwrap_or(0));
    file.take(limit.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(|e| e.to_string())?;
    if bytes.len() as u64 > limit {
        // The file grew, or the file system reports no size (as /proc does).
        let id = add_empty(display);
        return Ok((id, Some(too_large(id, None, limit))));
    }
    match String::from_utf8(bytes) {
        Ok(text) => Ok((
            ctx.sources
                .lock()
                .expect("no thread panicked")
                .add(path, display, text),
            None,
        )),
        Err(e) => {
            let at = e.utf8_error().valid_up_to();
            let text = String::from_utf8_lossy(e.as_bytes()).into_owned();
            let id = ctx
                .sources
                .lock()
                .expect("no thread panicked")
                .add(path, display, text);
            let f = declared::YAML_SYNTAX
                .finding(
                    Span::point(id, at),
                    "not UTF-8",
                    format!("the file is not valid UTF-8 (byte {at} starts an invalid sequence)"),
                )
                .with_help("save the file as UTF-8");
            Ok((id, Some(f)))
        }
    }
}

/// Read, parse, check the shape of and build one file.
fn load(ctx: &Ctx, path: &Path, display: String, role: Role) -> Result<Loaded, String> {
    let (file, early) = read_file(ctx, path, display)?;
    if let Some(f) = early {
        return Ok(Loaded {
            file,
            doc: None,
            findings: vec![f],
            suppressions: Vec::new(),
            named: None,
            root: PathBuf::new(),
        });
    }
    Ok(load_added(ctx, file, role))
}

/// Parse, check the shape of and build a file already in [`Sources`].
fn load_added(ctx: &Ctx, file: FileId, role: Role) -> Loaded {
    // The text is immutable once added: share it (a copy would double a large file).
    let sf = ctx.sources.lock().expect("no thread panicked").shared(file);
    load_text(file, &sf.text, &sf.lines, role)
}

fn load_text(file: FileId, text: &str, lines: &LineIndex, role: Role) -> Loaded {
    let mut findings = Vec::new();
    let root: Option<Node> = match yaml::parse(file, text, lines) {
        Ok(n) => Some(n),
        Err(e) => {
            findings.push(
                declared::YAML_SYNTAX
                    .finding(e.span, "here", e.message)
                    .with_help(
                        "fix the YAML syntax; nothing else in the file is checked until it parses",
                    ),
            );
            None
        }
    };
    let (suppressions, sup_findings) = suppress::scan(file, text, lines, root.as_ref());
    findings.extend(sup_findings);
    let doc = root.as_ref().map(|root| {
        let schema = crate::model::schema::check(root, text);
        let (doc, quantity) = build::build(file, text, role, root);
        findings.extend(schema);
        findings.extend(quantity);
        doc
    });
    let named = doc.as_ref().and_then(|d| {
        let kind = match d.role {
            Role::Rig => "rig",
            Role::Catalog => "catalog",
        };
        d.name.as_ref().map(|n| format!("{kind}:{}", n.value))
    });
    Loaded {
        file,
        doc,
        findings,
        suppressions,
        named,
        root: PathBuf::new(),
    }
}

/// One rig's result before settings and suppressions.
struct RigResult {
    loaded: Loaded,
    findings: Vec<Finding>,
    channels: usize,
    rig: Option<Rig>,
    settings: Arc<Settings>,
    includes: Vec<FileId>,
    job: usize,
}

/// Read and lint one rig file.
fn lint_rig(ctx: &Ctx, job: &Job, keep: bool) -> Result<RigResult, Fatal> {
    let loaded = load(ctx, &job.path, job.display.clone(), job.role)
        .map_err(|why| Fatal::Unreadable(job.path.clone(), why))?;
    Ok(lint_loaded(ctx, job, keep, loaded))
}

/// Lint a loaded rig: includes, resolution and the rules.
fn lint_loaded(ctx: &Ctx, job: &Job, keep: bool, mut loaded: Loaded) -> RigResult {
    let mut out = Vec::new();
    loaded.root = job.root.dir.clone();
    let result = |loaded, out, channels, rig, includes| RigResult {
        loaded,
        findings: out,
        channels,
        rig,
        settings: job.settings.clone(),
        includes,
        job: 0,
    };
    let Some(doc) = loaded.doc.take() else {
        return result(loaded, out, 0, None, Vec::new());
    };
    if job.role == Role::Catalog {
        // A catalog on its own: names and the clock graph, no physics.
        let (_, resolve_findings) = resolve::resolve(&[&doc], &job.settings.thresholds);
        out.extend(resolve_findings);
        loaded.doc = Some(doc);
        return result(loaded, out, 0, None, Vec::new());
    }
    let channels = doc.channels.len();
    // Includes, depth first, each catalog once per rig.
    let mut catalogs = Included::default();
    let mut stack = vec![absolute(&job.path)];
    let mut failed = Vec::new();
    let root = canonical_or_self(&job.root.dir);
    include_all(
        ctx,
        &doc,
        &job.path,
        &job.display,
        &root,
        &job.root,
        &mut stack,
        &mut catalogs,
        &mut out,
        &mut failed,
    );
    let mut docs: Vec<&Document> = vec![&doc];
    docs.extend(catalogs.list.iter().filter_map(|c| c.doc.as_ref()));
    let (rig, resolve_findings, unchecked) =
        resolve::resolve_incomplete(&docs, &job.settings.thresholds, !failed.is_empty());
    // The resolved rig holds what the rules read: the rig's model is not needed past
    // here, and dropping it before the analysis keeps the two from being held at once
    // (they are the largest parts of a large file's run).
    drop(docs);
    drop(doc);
    report_unchecked(&mut out, &failed, &unchecked);
    out.extend(resolve_findings);
    // One analysis per channel; rules whose level is `off` are neither computed nor run.
    let on = |rule: &str| {
        crate::rules::rule(rule).is_none_or(|r| job.settings.level(rule, r.severity) != Level::Off)
    };
    let actx = crate::analysis::Context::new(crate::analysis::Enabled::from_fn(on))
        .with_fixes(ctx.propose_fixes);
    let scope = ctx
        .scope
        .as_deref()
        .and_then(|name| rig.channel(name))
        .map(|ci| rig.scope_of(ci));
    let analysis = match &scope {
        Some(channels) => crate::analysis::analyse_only(&rig, channels, &actx),
        None => crate::analysis::analyse_rig(&rig, &actx),
    };
    out.extend(crate::rules::check_analysis(&analysis, on));
    drop(analysis);
    // Nothing will be rendered from a clean rig: let its text go too (unless the caller
    // keeps the rigs, as `diff` and `inspect` do).
    if !keep && out.is_empty() && loaded.findings.is_empty() && loaded.suppressions.is_empty() {
        ctx.sources
            .lock()
            .expect("no thread panicked")
            .release_text(loaded.file);
    }
    let includes = catalogs
        .list
        .iter()
        .map(|c| c.file)
        .filter(|f| *f != FileId::MAX)
        .collect();
    result(loaded, out, channels, keep.then_some(rig), includes)
}

fn canonical_or_self(p: &Path) -> PathBuf {
    std::fs::canonicalize(p).unwrap_or_else(|_| p.to_path_buf())
}

/// The catalogs one rig includes, in include order, and their canonical paths (so that
/// a catalog reached along two paths is read once, without asking the file system
/// again for every catalog already included).
#[derive(Default)]
struct Included {
    list: Vec<Arc<Loaded>>,
    real: std::collections::HashSet<PathBuf>,
}

#[allow(clippy::too_many_arguments)]
fn include_all(
    ctx: &Ctx,
    doc: &Document,
    path: &Path,
    display_path: &str,
    root: &Path,
    campaign: &CampaignRoot,
    stack: &mut Vec<PathBuf>,
    catalogs: &mut Included,
    out: &mut Vec<Finding>,
    failures: &mut Vec<FailedInclude>,
) {
    let dir = path.parent().unwrap_or(Path::new(""));
    let display_dir = Path::new(display_path).parent().unwrap_or(Path::new(""));
    for inc in &doc.includes {
        let target = dir.join(&inc.value);
        let abs = absolute(&target);
        let include_finding = |label: &str, message: String, help: &str| {
            declared::INCLUDE
                .finding(inc.span, label, message)
                .with_help(help)
        };
        if stack.len() > MAX_INCLUDE_DEPTH {
            out.push(include_finding(
                "one include too deep",
                format!(
                    "includes nest more than {MAX_INCLUDE_DEPTH} deep, over the limit for reading a campaign safely"
                ),
                "include the catalogs from fewer levels (a rig may include many catalogs directly)",
            ));
            continue;
        }
        if stack.contains(&abs) {
            let mut chain: Vec<String> = stack
                .iter()
                .skip_while(|p| **p != abs)
                .map(|p| {
                    p.file_name()
                        .map(|n| n.to_string_lossy().into_owned())
                        .unwrap_or_default()
                })
                .collect();
            chain.push(
                abs.file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default(),
            );
            out.push(include_finding(
                "includes a file that is already being included",
                format!("include loop: {}", chain.join(" → ")),
                "remove one include of the loop",
            ));
            continue;
        }
        let real = match std::fs::canonicalize(&target) {
            Ok(r) => r,
            Err(e) => {
                let what = if e.kind() == std::io::ErrorKind::NotFound {
                    "does not exist"
                } else {
                    "cannot be read"
                };
                let help = match closest_file(&target) {
                    Some(name) => {
                        let written = match inc.value.rfind('/') {
                            Some(i) => format!("{}{name}", &inc.value[..=i]),
                            None => name,
                        };
                        format!(
                            "did you mean `{written}`? (the path is relative to the including file)"
                        )
                    }
                    None => "check the path: it is relative to the including file".to_string(),
                };
                failures.push(FailedInclude::Reported(out.len()));
                out.push(include_finding(
                    "no such file",
                    format!("the included file `{}` {what}", inc.value),
                    &help,
                ));
                continue;
            }
        };
        if !real.starts_with(root) {
            let help = outside_help(campaign, &absolute(path), &abs);
            failures.push(FailedInclude::Reported(out.len()));
            out.push(include_finding(
                "outside the campaign root",
                format!(
                    "the included file `{}` lies outside the campaign root",
                    inc.value
                ),
                &help,
            ));
            continue;
        }
        if !catalogs.real.insert(real.clone()) {
            continue; // included twice along different paths: once is enough
        }
        let cell = {
            let mut map = ctx.catalogs.lock().expect("no thread panicked");
            map.entry(real.clone()).or_default().clone()
        };
        let display = display(&normalize(&display_dir.join(&inc.value)));
        let loaded = cell.get_or_init(|| {
            load(ctx, &real, display.clone(), Role::Catalog).map(|mut l| {
                l.root = root.to_path_buf();
                Arc::new(l)
            })
        });
        let loaded = match loaded {
            Ok(l) => l,
            Err(why) => {
                failures.push(FailedInclude::Reported(out.len()));
                out.push(include_finding(
                    "cannot be read",
                    format!("the included file `{}` cannot be read: {why}", inc.value),
                    "include a regular file (a catalog of clocks, sensors and modules)",
                ));
                continue;
            }
        };
        let loaded = loaded.clone();
        if let Some(cdoc) = &loaded.doc {
            if let Some((key, span)) = cdoc.rig_only_keys.first() {
                out.push(
                    include_finding(
                        "holds rig-only sections",
                        format!("the included file `{}` holds `{key}`, which only a rig may hold", inc.value),
                        "move channels, groups, disturbances, logger and defaults into the rig; a catalog holds clocks, sensors and modules",
                    )
                    .with_label(*span, format!("`{key}` in a catalog")),
                );
            }
            stack.push(abs.clone());
            let cdoc_path = real.clone();
            let cdisplay = ctx
                .sources
                .lock()
                .expect("no thread panicked")
                .get(loaded.file)
                .display
                .clone();
            catalogs.list.push(loaded.clone());
            include_all(
                ctx, cdoc, &cdoc_path, &cdisplay, root, campaign, stack, catalogs, out, failures,
            );
            stack.pop();
        } else {
            // It does not parse (its own finding says why): what it defines is unknown.
            failures.push(FailedInclude::Unparsed(inc.span, inc.value.clone()));
            catalogs.list.push(loaded);
        }
    }
}
/// For a missing include target, the closest existing YAML file name in its directory.
fn closest_file(target: &Path) -> Option<String> {
    let name = target.file_name()?.to_str()?;
    let dir = target.parent()?;
    let entries = std::fs::read_dir(if dir.as_os_str().is_empty() {
        Path::new(".")
    } else {
        dir
    })
    .ok()?;
    let names: Vec<String> = entries
        .flatten()
        .filter(|e| e.file_type().is_ok_and(|t| t.is_file()))
        .filter_map(|e| e.file_name().into_string().ok())
        .filter(|n| n.ends_with(".yaml") || n.ends_with(".yml"))
        .collect();
    crate::words::closest(name, names.iter().map(String::as_str)).map(str::to_string)
}

/// An include that failed, so the names it may define are unknown.
enum FailedInclude {
    /// Reported by the `include` finding at this index of the rig's findings.
    Reported(usize),
    /// The file was read but does not parse (reported in that file): the include's
    /// span and path.
    Unparsed(Span, String),
}

/// How many channel names a failed include's finding lists before giving a count.
const LISTED_CHANNELS: usize = 10;

/// Say on the first failed include what it left unchecked, instead of one
/// `unknown-reference` finding per reference (docs/format.md, "include").
fn report_unchecked(out: &mut Vec<Finding>, failed: &[FailedInclude], unchecked: &Unchecked) {
    let Some(first) = failed.first() else { return };
    if unchecked.references == 0 {
        return;
    }
    let n = unchecked.references;
    let mut text = format!(
        "{n} reference{} to clocks, sensors or modules it may define could not be checked",
        if n == 1 { "" } else { "s" }
    );
    let chans = &unchecked.channels;
    if !chans.is_empty() {
        let listed: Vec<String> = chans
            .iter()
            .take(LISTED_CHANNELS)
            .map(|c| format!("`{c}`"))
            .collect();
        let more = chans.len().saturating_sub(LISTED_CHANNELS);
        text.push_str(&format!(
            ", so {} channel{} {} not checked: {}{}",
            chans.len(),
            if chans.len() == 1 { "" } else { "s" },
            if chans.len() == 1 { "was" } else { "were" },
            listed.join(", "),
            if more > 0 {
                format!(" and {more} more")
            } else {
                String::new()
            }
        ));
    }
    let mut values = serde_json::Map::new();
    values.insert("unchecked_references".into(), n.into());
    values.insert("unchecked_channels".into(), chans.len().into());
    match first {
        FailedInclude::Reported(i) => {
            if let Some(f) = out.get_mut(*i) {
                f.message = format!("{}; {text}", f.message);
                f.values.extend(values);
            }
        }
        FailedInclude::Unparsed(span, value) => {
            let mut f = declared::INCLUDE
                .finding(
                    *span,
                    "does not parse",
                    format!("the included file `{value}` does not parse; {text}"),
                )
                .with_help("fix the included file's YAML syntax (its own finding says where)");
            f.values = values;
            out.push(f);
        }
    }
}
