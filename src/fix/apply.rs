//! `foldcheck fix`: apply every verified fix to the files.
//!
//! Fixes are applied to the texts in memory, the campaign is linted again with the
//! edited texts, and fixes that appear only then are applied too (up to
//! [`MAX_ROUNDS`] rounds), so a second run has nothing left to do. Only then are files
//! written, each atomically (a temporary file in the same directory, renamed over the
//! file), never through a link that leads outside the campaign root and never outside
//! it. Edits replace only the bytes of values: comments, key order, quoting, line
//! endings and a byte-order mark stay as they were.

use super::{PathEdit, apply_to_text, edit_key};
use crate::campaign::{self, Fatal, Options, Outcome, Overlay, absolute};
use crate::finding::Finding;
use crate::source::Sources;
use serde_json::{Value, json};
use std::collections::{BTreeMap, BTreeSet, HashSet};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// Rounds of apply-and-lint-again before the texts are written.
pub const MAX_ROUNDS: usize = 10;

/// What `fix` should apply.
#[derive(Clone, Debug, Default)]
pub struct Choice {
    /// Only fixes of findings of these rules (all when empty).
    pub rules: Vec<String>,
    /// Also apply edits to shared catalogs.
    pub include_catalogs: bool,
}

/// A fix as reported: the finding it serves and its edits.
#[derive(Clone, Debug)]
pub struct Reported {
    /// The finding's rule.
    pub rule: &'static str,
    /// The finding's file, as shown.
    pub file: String,
    /// 1-based line and column of the finding.
    pub line: usize,
    /// 1-based column (characters).
    pub column: usize,
    /// The finding's channel, if any.
    pub channel: Option<String>,
    /// The finding's fingerprint, if any.
    pub fingerprint: Option<String>,
    /// What the fix does.
    pub description: String,
    /// The edits as JSON objects (`file`, `start`, `end`, `line`, `column`, …).
    pub edits: Vec<Value>,
}

impl Reported {
    fn of(sources: &Sources, f: &Finding) -> Reported {
        let file = sources.get(f.primary.span.file);
        let (line, column) = file.line_col(f.primary.span.start);
        let fix = f
            .fix
            .as_ref()
            .expect("only findings with a fix are reported");
        Reported {
            rule: f.rule,
            file: file.display.clone(),
            line,
            column,
            channel: f.channel.clone(),
            fingerprint: f.fingerprint.clone(),
            description: fix.description.clone(),
            edits: crate::report::json::fix_edits(sources, fix),
        }
    }

    /// As a JSON object.
    pub fn to_json(&self) -> Value {
        let mut o = json!({
            "rule": self.rule,
            "file": self.file,
            "line": self.line,
            "column": self.column,
            "description": self.description,
            "edits": self.edits,
        });
        if let Some(c) = &self.channel {
            o["channel"] = json!(c);
        }
        if let Some(fp) = &self.fingerprint {
            o["fingerprint"] = json!(fp);
        }
        o
    }

    /// One line for people: `file:line:col rule: description`.
    pub fn line_text(&self) -> String {
        format!(
            "{}:{}:{} {}: {}",
            self.file, self.line, self.column, self.rule, self.description
        )
    }
}

/// One file's change.
#[derive(Clone, Debug)]
pub struct FileChange {
    /// The file as shown.
    pub display: String,
    /// Where the new text is written (the file itself, links resolved).
    pub target: PathBuf,
    /// The text before.
    pub before: String,
    /// The text after.
    pub after: String,
    /// Why it may not be written, if it may not (outside the campaign root).
    pub refused: Option<String>,
}

/// What `fix` does or would do.
#[derive(Debug, Default)]
pub struct Plan {
    /// Fixes applied, in the order found.
    pub applied: Vec<Reported>,
    /// Fixes that edit the same bytes differently: none of them is applied.
    pub conflicts: Vec<Vec<Reported>>,
    /// Fixes to shared catalogs left out (without `--include-catalogs`).
    pub skipped_catalog: Vec<Reported>,
    /// The files that change, in path order.
    pub changes: Vec<FileChange>,
}

/// Work out every verified fix for `paths` and the texts they lead to (nothing is
/// written).
pub fn plan(paths: &[PathBuf], opts: &Options, choice: &Choice) -> Result<Plan, Fatal> {
    let mut plan = Plan::default();
    let mut overlay: Overlay = opts
        .overlay
        .as_ref()
        .map(|o| (**o).clone())
        .unwrap_or_default();
    // The first text of each file changed, and where it is written.
    let mut originals: BTreeMap<PathBuf, (String, String, Result<PathBuf, String>)> =
        BTreeMap::new();
    let mut conflicted: HashSet<(Vec<PathEdit>, Vec<PathEdit>)> = HashSet::new();
    for round in 0..MAX_ROUNDS {
        let o = Options {
            overlay: Some(Arc::new(overlay.clone())),
            ..opts.clone()
        };
        let out = campaign::run(paths, &o)?;
        let catalogs = catalog_paths(&out);
        let roots = roots_of(&out);
        // Distinct edit sets, each with the findings it serves.
        let mut sets: BTreeMap<Vec<PathEdit>, Vec<usize>> = BTreeMap::new();
        for (i, f) in out.findings.iter().enumerate() {
            let Some(fix) = &f.fix else { continue };
            if !choice.rules.is_empty() && !choice.rules.iter().any(|r| r == f.rule) {
                continue;
            }
            let Some(key) = edit_key(&out.sources, fix) else {
                continue;
            };
            if key.iter().any(|e| catalogs.contains(&e.path)) && !choice.include_catalogs {
                if round == 0 {
                    plan.skipped_catalog.push(Reported::of(&out.sources, f));
                }
                continue;
            }
            sets.entry(key).or_default().push(i);
        }
        // Conflicts: two sets editing overlapping bytes differently.
        let keys: Vec<&Vec<PathEdit>> = sets.keys().collect();
        let mut bad: BTreeSet<usize> = BTreeSet::new();
        for (a, b) in conflicting(&keys) {
            bad.insert(a);
            bad.insert(b);
            if conflicted.insert((keys[a].clone(), keys[b].clone())) {
                plan.conflicts.push(
                    [keys[a], keys[b]]
                        .iter()
                        .flat_map(|k| sets[*k].iter())
                        .map(|&i| Reported::of(&out.sources, &out.findings[i]))
                        .collect(),
                );
            }
        }
        let mut edits: BTreeSet<&PathEdit> = BTreeSet::new();
        for (n, (key, idxs)) in sets.iter().enumerate() {
            if bad.contains(&n) {
                continue;
            }
            edits.extend(key.iter());
            for &i in idxs {
                plan.applied
                    .push(Reported::of(&out.sources, &out.findings[i]));
            }
        }
        if edits.is_empty() {
            break;
        }
        let by_file: BTreeMap<&PathBuf, Vec<&PathEdit>> =
            edits.iter().fold(BTreeMap::new(), |mut m, e| {
                m.entry(&e.path).or_insert_with(Vec::new).push(*e);
                m
            });
        for (path, list) in by_file {
            let Some(file) = out.sources.iter().find(|f| &absolute(&f.path) == path) else {
                continue;
            };
            originals.entry(path.clone()).or_insert_with(|| {
                (
                    file.display.clone(),
                    file.text.clone(),
                    target_of(&file.path, &roots),
                )
            });
            let new_text = apply_to_text(&file.text, &list);
            overlay.insert(path.clone(), new_text);
        }
    }
    for (path, (display, before, target)) in originals {
        let after = overlay.get(&path).cloned().unwrap_or_default();
        if after == before {
            continue;
        }
        let (target, refused) = match target {
            Ok(t) => (t, None),
            Err(why) => (path, Some(why)),
        };
        plan.changes.push(FileChange {
            display,
            target,
            before,
            after,
            refused,
        });
    }
    Ok(plan)
}

/// The pairs of edit sets (by index) that touch the same bytes with different edits:
/// neither of a pair is applied. Identical edits in two sets are no conflict (they are
/// applied once).
pub fn conflicting(keys: &[&Vec<PathEdit>]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    for a in 0..keys.len() {
        for b in a + 1..keys.len() {
            if conflict(keys[a], keys[b]) {
                out.push((a, b));
            }
        }
    }
    out
}

/// Whether two edit sets touch overlapping bytes with different edits.
fn conflict(a: &[PathEdit], b: &[PathEdit]) -> bool {
    a.iter().any(|x| {
        b.iter().any(|y| {
            x.path == y.path
                && x != y
                && (x.start < y.end && y.start < x.end
                    || x.start == y.start
                    || x.start == x.end && y.start <= x.start && x.start <= y.end
                    || y.start == y.end && x.start <= y.start && y.start <= x.end)
        })
    })
}

/// The absolute paths of catalogs (files some rig includes that are no rig's own).
fn catalog_paths(out: &Outcome) -> HashSet<PathBuf> {
    let rigs: HashSet<PathBuf> = out
        .rigs
        .iter()
        .map(|r| absolute(&out.sources.get(r.file).path))
        .collect();
    out.rigs
        .iter()
        .flat_map(|r| r.includes.iter())
        .map(|&f| absolute(&out.sources.get(f).path))
        .filter(|p| !rigs.contains(p))
        .collect()
}

/// Each linted file's campaign root (canonical), by absolute path.
fn roots_of(out: &Outcome) -> Vec<(PathBuf, PathBuf)> {
    let mut v = Vec::new();
    for r in &out.rigs {
        let root = &out.jobs[r.job].root.dir;
        let root = std::fs::canonicalize(root).unwrap_or_else(|_| root.clone());
        v.push((absolute(&out.sources.get(r.file).path), root.clone()));
        for &f in &r.includes {
            v.push((absolute(&out.sources.get(f).path), root.clone()));
        }
    }
    v
}

/// Where a file's new text goes (the file itself, links resolved), or why it may not
/// be written: its real place lies outside the campaign root.
fn target_of(path: &Path, roots: &[(PathBuf, PathBuf)]) -> Result<PathBuf, String> {
    let abs = absolute(path);
    let Some((_, root)) = roots.iter().find(|(p, _)| *p == abs) else {
        return Err(format!(
            "{}: not written: not part of the campaign",
            path.display()
        ));
    };
    match std::fs::canonicalize(path) {
        Ok(real) if real.starts_with(root) => Ok(real),
        Ok(real) => Err(format!(
            "{}: not written: it leads to {}, outside the campaign root {}",
            path.display(),
            real.display(),
            root.display()
        )),
        Err(e) => Err(format!("{}: not written: {e}", path.display())),
    }
}

/// Write the changed files: each through a temporary file in its own directory, then
/// renamed over it (keeping its permissions). Files whose change is refused are not
/// written; the refusals are returned with the files written.
pub fn write(plan: &Plan) -> (Vec<String>, Vec<String>) {
    let mut written = Vec::new();
    let mut refused = Vec::new();
    for c in &plan.changes {
        if let Some(why) = &c.refused {
            refused.push(why.clone());
            continue;
        }
        match write_atomically(&c.target, c.after.as_bytes()) {
            Ok(()) => written.push(c.display.clone()),
            Err(e) => refused.push(format!("{}: not written: {e}", c.display)),
        }
    }
    (written, refused)
}

fn write_atomically(target: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = target.parent().unwrap_or(Path::new("."));
    let meta = std::fs::metadata(target)?;
    let mut tmp = tempfile::Builder::new()
        .prefix(".foldcheck-fix-")
        .tempfile_in(dir)?;
    tmp.write_all(bytes)?;
    tmp.as_file().sync_all()?;
    std::fs::set_permissions(tmp.path(), meta.permissions())?;
    tmp.persist(target).map_err(|e| e.error)?;
    Ok(())
}

/// The changes as one unified diff (`a/` and `b/` prefixes on the shown paths), which
/// `git apply` and `patch -p1` accept.
pub fn unified_diff(plan: &Plan) -> String {
    let mut out = String::new();
    for c in &plan.changes {
        let diff = similar::TextDiff::from_lines(&c.before, &c.after);
        let text = diff
            .unified_diff()
            .context_radius(3)
            .header(&format!("a/{}", c.display), &format!("b/{}", c.display))
            .to_string();
        out.push_str(&text);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn edit(path: &str, start: usize, end: usize, text: &str) -> PathEdit {
        PathEdit {
            path: PathBuf::from(path),
            start,
            end,
            replacement: text.to_string(),
        }
    }

    #[test]
    fn two_fixes_editing_one_value_differently_conflict() {
        let divide_by_4 = vec![edit("/r/a.rig.yaml", 100, 103, "4")];
        let divide_by_8 = vec![edit("/r/a.rig.yaml", 100, 103, "8")];
        let overlapping = vec![edit("/r/a.rig.yaml", 102, 110, "x")];
        let same_as_first = vec![
            edit("/r/a.rig.yaml", 100, 103, "4"),
            edit("/r/a.rig.yaml", 200, 201, "y"),
        ];
        let elsewhere = vec![edit("/r/b.rig.yaml", 100, 103, "8")];
        let keys = [
            &divide_by_4,
            &divide_by_8,
            &overlapping,
            &same_as_first,
            &elsewhere,
        ];
        assert_eq!(
            conflicting(&keys),
            vec![(0, 1), (0, 2), (1, 2), (1, 3), (2, 3)],
            "one shared identical edit (0 and 3) is no conflict; another file is none"
        );
    }

    #[test]
    fn edits_apply_in_order_and_keep_every_other_byte() {
        let text = "\u{feff}a: 3 KHz # c\r\nb: Butterworth\r\n";
        let e1 = edit("/f", 8, 11, "kHz");
        let e2 = edit("/f", 20, 31, "butterworth");
        assert_eq!(&text[8..11], "KHz");
        assert_eq!(&text[20..31], "Butterworth");
        assert_eq!(
            apply_to_text(text, &[&e1, &e2]),
            "\u{feff}a: 3 kHz # c\r\nb: butterworth\r\n"
        );
    }
}
