//! One analysis of an open document, as the editor server reads it: the campaign run over
//! the document (with every open document's text standing in for its file), and an index
//! of where each clock, sensor, module, channel and group is defined and referenced.
//!
//! Nothing here decides a verdict: findings come from the run, numbers for hovers from
//! `inspect`'s view of the same rig.

use crate::campaign::{self, Options, Outcome, Overlay};
use crate::resolve::Rig;
use crate::source::{FileId, Span};
use std::collections::HashSet;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// What a name names.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum SymbolKind {
    /// A clock.
    Clock,
    /// A sensor.
    Sensor,
    /// A module.
    Module,
    /// A channel.
    Channel,
    /// A group.
    Group,
}

impl SymbolKind {
    /// The word for people.
    pub fn noun(self) -> &'static str {
        match self {
            SymbolKind::Clock => "clock",
            SymbolKind::Sensor => "sensor",
            SymbolKind::Module => "module",
            SymbolKind::Channel => "channel",
            SymbolKind::Group => "group",
        }
    }
}

/// One place a name is written: its definition or a reference to it.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Occurrence {
    /// What it names.
    pub kind: SymbolKind,
    /// The name.
    pub name: String,
    /// Where the name is defined (the identity of the symbol).
    pub def: Span,
    /// Where this occurrence is written.
    pub at: Span,
}

/// Something a hover can describe, found by position.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Target {
    /// A name (definition or reference): index into [`Snapshot::occurrences`].
    Name(usize),
    /// A channel's `band` value: (rig, channel).
    Band(usize, usize),
    /// A filter of a channel's ADC chain: (rig, channel, index in its chain).
    Filter(usize, usize, usize),
    /// A filter of a module's chain or a sensor's response: (rig, channel using it, or
    /// none) and the filter's span.
    SharedFilter(usize, Option<usize>, Span),
    /// A decimation stage (its item or its filter): (rig, channel, stage 1-based).
    Stage(usize, usize, usize),
    /// Anywhere else in a channel's item: (rig, channel).
    Channel(usize, usize),
}

/// One analysis of one open document.
#[derive(Debug)]
pub struct Snapshot {
    /// The document's path (absolute; the key of the overlay).
    pub path: PathBuf,
    /// The run: every file read, the findings, the resolved rigs.
    pub outcome: Outcome,
    /// Why the run could not be done (an invalid settings file), if it could not.
    pub fatal: Option<String>,
    /// The document's id in `outcome.sources`.
    pub file: Option<FileId>,
    /// Names: definitions and references, in this document and the files it reaches.
    pub occurrences: Vec<Occurrence>,
    /// Spans a hover can describe, with what they are.
    pub targets: Vec<(Span, Target)>,
    /// Findings (indexes into `outcome.findings`) whose proposed fix has been verified.
    /// The analysis of a change verifies none: a code action verifies the fixes of its
    /// range (see [`Snapshot::verify_range`]); until then a finding's `fix` and `help`
    /// are the rule's proposal.
    pub verified: HashSet<usize>,
}

/// The key files are compared by: the real path when the file exists, else the absolute
/// normalised path.
pub fn file_key(p: &Path) -> PathBuf {
    std::fs::canonicalize(p).unwrap_or_else(|_| campaign::absolute(p))
}

/// Analyse the document at `path` (absolute) with the texts of `overlay` standing in
/// for their files: the same stages as `foldcheck check` on that path, except that
/// proposed fixes are not verified yet (see [`Snapshot::verify_range`]).
pub fn analyse(path: &Path, overlay: Arc<Overlay>) -> Snapshot {
    let opts = Options {
        keep_rigs: true,
        overlay: Some(overlay),
        verify_fixes: false,
        ..Options::default()
    };
    let (outcome, fatal) = match campaign::run(&[path.to_path_buf()], &opts) {
        Ok(o) => (o, None),
        Err(e) => (Outcome::default(), Some(e.to_string())),
    };
    let key = file_key(path);
    let file = outcome
        .sources
        .iter()
        .find(|sf| file_key(&sf.path) == key)
        .map(|sf| sf.id);
    let mut snap = Snapshot {
        path: path.to_path_buf(),
        outcome,
        fatal,
        file,
        occurrences: Vec::new(),
        targets: Vec::new(),
        verified: HashSet::new(),
    };
    snap.index();
    snap
}

impl Snapshot {
    /// Verify the proposed fixes of this document's findings whose primary span touches
    /// the bytes `start..=end` (and of the findings that share their edits), as `check`
    /// verifies every fix. `true` when a fix was dropped, so that a finding's help
    /// changed (the diagnostics are then published again).
    pub fn verify_range(&mut self, start: usize, end: usize) -> bool {
        let Some(file) = self.file else {
            return false;
        };
        let which: HashSet<usize> = self
            .outcome
            .findings
            .iter()
            .enumerate()
            .filter(|(i, f)| {
                f.fix.is_some()
                    && !self.verified.contains(i)
                    && f.primary.span.file == file
                    && (f.primary.span.start as usize) <= end
                    && start <= f.primary.span.end as usize
            })
            .map(|(i, _)| i)
            .collect();
        if which.is_empty() {
            return false;
        }
        let had: HashSet<usize> = self
            .outcome
            .findings
            .iter()
            .enumerate()
            .filter(|(_, f)| f.fix.is_some())
            .map(|(i, _)| i)
            .collect();
        let done =
            crate::fix::verify_only(&mut self.outcome, campaign::DEFAULT_MAX_FILE_BYTES, &which);
        self.verified.extend(done.iter().copied());
        done.iter()
            .any(|&i| had.contains(&i) && self.outcome.findings[i].fix.is_none())
    }

    /// The rigs navigation reads: the document's own rig, or (for a catalog) every rig
    /// of the run that includes it.
    fn rigs(&self) -> Vec<(usize, &Rig)> {
        let Some(file) = self.file else {
            return Vec::new();
        };
        let all = || {
            self.outcome
                .rigs
                .iter()
                .enumerate()
                .filter_map(|(i, r)| r.rig.as_ref().map(|rig| (i, rig)))
        };
        let own: Vec<_> = all().filter(|(_, r)| r.file == file).collect();
        if !own.is_empty() {
            return own;
        }
        all().collect()
    }

    /// A resolved rig of this snapshot by index into `outcome.rigs`.
    pub fn rig(&self, i: usize) -> Option<&Rig> {
        self.outcome.rigs.get(i).and_then(|r| r.rig.as_ref())
    }

    fn index(&mut self) {
        let mut occ: Vec<Occurrence> = Vec::new();
        let mut targets: Vec<(Span, Target)> = Vec::new();
        for (ri, rig) in self.rigs() {
            let mut push = |kind, name: &str, def: Span, at: Span| {
                let o = Occurrence {
                    kind,
                    name: name.to_string(),
                    def,
                    at,
                };
                if !occ.contains(&o) {
                    occ.push(o);
                }
            };
            for c in &rig.clocks {
                let d = &c.def.name;
                push(SymbolKind::Clock, &d.value, d.span, d.span);
                if let (crate::model::ClockDef::Derived { source, .. }, Some(p)) =
                    (&c.def.def, c.parent)
                {
                    let pd = &rig.clocks[p].def.name;
                    push(SymbolKind::Clock, &pd.value, pd.span, source.span);
                }
            }
            for s in &rig.sensors {
                push(SymbolKind::Sensor, &s.name.value, s.name.span, s.name.span);
                if let Some(resp) = &s.response {
                    for f in &resp.value {
                        targets.push((f.span, Target::SharedFilter(ri, None, f.span)));
                    }
                }
            }
            for (mi, m) in rig.modules.iter().enumerate() {
                push(SymbolKind::Module, &m.name.value, m.name.span, m.name.span);
                if let Some(fs) = &m.filters {
                    let user = rig.channels.iter().position(|c| c.module == Some(mi));
                    for f in &fs.value {
                        targets.push((f.span, Target::SharedFilter(ri, user, f.span)));
                    }
                }
            }
            for (ci, ch) in rig.channels.iter().enumerate() {
                let d = &ch.def;
                push(SymbolKind::Channel, &d.name.value, d.name.span, d.name.span);
                if let (Some(r), Some(k)) = (&d.clock, ch.clock) {
                    let n = &rig.clocks[k].def.name;
                    push(SymbolKind::Clock, &n.value, n.span, r.span);
                }
                if let (Some(r), Some(k)) = (&d.sensor, ch.sensor) {
                    let n = &rig.sensors[k].name;
                    push(SymbolKind::Sensor, &n.value, n.span, r.span);
                }
                if let (Some(r), Some(k)) = (&d.module, ch.module) {
                    let n = &rig.modules[k].name;
                    push(SymbolKind::Module, &n.value, n.span, r.span);
                }
                targets.push((d.item, Target::Channel(ri, ci)));
                if let Some(b) = &d.band {
                    targets.push((b.span, Target::Band(ri, ci)));
                }
                if let Some(fs) = &d.filters {
                    for (j, f) in fs.value.iter().enumerate() {
                        targets.push((f.span, Target::Filter(ri, ci, j)));
                    }
                }
                for (k, st) in d.decimate.iter().enumerate() {
                    targets.push((st.span, Target::Stage(ri, ci, k + 1)));
                    if let Some(f) = &st.filter {
                        targets.push((f.span, Target::Stage(ri, ci, k + 1)));
                    }
                }
            }
            for g in &rig.groups {
                push(SymbolKind::Group, &g.name.value, g.name.span, g.name.span);
                for m in &g.channels {
                    if let Some(ci) = rig.channel(&m.value) {
                        let n = &rig.channels[ci].def.name;
                        push(SymbolKind::Channel, &n.value, n.span, m.span);
                    }
                }
            }
            for d in &rig.disturbances {
                for m in d.channels.iter().flatten() {
                    if let Some(ci) = rig.channel(&m.value) {
                        let n = &rig.channels[ci].def.name;
                        push(SymbolKind::Channel, &n.value, n.span, m.span);
                    }
                }
            }
        }
        for (i, o) in occ.iter().enumerate() {
            targets.push((o.at, Target::Name(i)));
        }
        self.occurrences = occ;
        self.targets = targets;
    }

    /// The smallest target containing byte `offset` of file `file` (a position just past
    /// the end of a name still counts as on it).
    pub fn target_at(&self, file: FileId, offset: usize) -> Option<Target> {
        let offset = u32::try_from(offset).ok()?;
        self.targets
            .iter()
            .filter(|(s, _)| s.file == file && s.start <= offset && offset <= s.end)
            .min_by_key(|(s, _)| s.len())
            .map(|(_, t)| *t)
    }

    /// The name written at byte `offset` of `file`, if any.
    pub fn occurrence_at(&self, file: FileId, offset: usize) -> Option<&Occurrence> {
        let offset = u32::try_from(offset).ok()?;
        self.occurrences
            .iter()
            .filter(|o| o.at.file == file && o.at.start <= offset && offset <= o.at.end)
            .min_by_key(|o| o.at.len())
    }

    /// Every occurrence of the symbol defined at `def`, the definition first, then in
    /// file and text order.
    pub fn references(&self, def: Span) -> Vec<&Occurrence> {
        let mut out: Vec<&Occurrence> = self.occurrences.iter().filter(|o| o.def == def).collect();
        out.sort_by_key(|o| (o.at != o.def, o.at.file, o.at.start));
        out
    }

    /// The distinct names of one kind, sorted, for completion.
    pub fn names(&self, kind: SymbolKind) -> Vec<String> {
        let mut names: Vec<String> = self
            .occurrences
            .iter()
            .filter(|o| o.kind == kind && o.at == o.def)
            .map(|o| o.name.clone())
            .collect();
        names.sort();
        names.dedup();
        names
    }
}
