//! A finding's stable identity: its fingerprint (docs/output.md, "Fingerprints").
//!
//! The fingerprint is the first 8 bytes of SHA-256, written as 16 lowercase hex digits,
//! over these fields joined by NUL bytes:
//!
//! 1. `foldcheck/v1`;
//! 2. the rule;
//! 3. the campaign root's path relative to the top of the git work tree (`.` when they
//!    are the same or there is no git work tree);
//! 4. the owner: `rig:<name>`, `catalog:<name>`, or `path:<path relative to the campaign
//!    root>` when the file has no name or shares its name with another file of the run;
//!    a finding a rig raises about something a catalog defines is owned by the rig;
//! 5. the subject key path (`channel/<name>`, `group/<name>/pair/<a>/<b>`,
//!    `channels/<name>/filters/2/cutoff`, ...);
//! 6. only when one owner and subject hold several findings of one rule: a counter,
//!    1, 2, ... in output order.
//!
//! Never the message, numbers, lines or the stage a rule reports as its worst, so a
//! finding keeps its fingerprint when its numbers move. [`fingerprint`] is the one
//! function that computes it; [`assign`] gives every finding of a run its subject and
//! fingerprint.

use crate::finding::Finding;
use crate::source::yaml::{Node, NodeKind};
use crate::source::{FileId, Sources, Span};
use sha2::{Digest, Sha256};
use std::collections::HashMap;
use std::path::{Path, PathBuf};

/// The first field of every fingerprint: the scheme's name and version.
pub const SCHEME: &str = "foldcheck/v1";

/// The fingerprint of one finding from its fields (see the module documentation).
///
/// ```
/// let a = foldcheck::fingerprint::fingerprint("nyquist", ".", "rig:bay-3", "channel/acc-1", None);
/// assert_eq!(a.len(), 16);
/// assert_ne!(a, foldcheck::fingerprint::fingerprint("nyquist", ".", "rig:bay-3", "channel/acc-2", None));
/// ```
pub fn fingerprint(
    rule: &str,
    root: &str,
    owner: &str,
    subject: &str,
    counter: Option<usize>,
) -> String {
    let mut h = Sha256::new();
    let counter = counter.map(|n| n.to_string());
    let mut fields = vec![SCHEME, rule, root, owner, subject];
    if let Some(c) = &counter {
        fields.push(c);
    }
    for (i, field) in fields.iter().enumerate() {
        if i > 0 {
            h.update([0u8]);
        }
        h.update(field.as_bytes());
    }
    let digest = h.finalize();
    digest[..8].iter().map(|b| format!("{b:02x}")).collect()
}

/// Field 3: the campaign root relative to the top of the git work tree (one function
/// for it: [`crate::root::relative_to_git_top`]).
pub fn root_field(root: &Path) -> String {
    crate::root::relative_to_git_top(root)
}

/// A relative path written with `/` between its components (a backslash inside a
/// component stays what it is: a character of the name).
pub fn rel_slash(p: &Path) -> String {
    p.components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join("/")
}

/// One segment of a key path: `/` and `%` inside a name are written `%2F` and `%25`, so
/// a name cannot pose as two segments.
pub fn segment(s: &str) -> String {
    if !s.contains(['/', '%', '\0']) {
        return s.to_string();
    }
    s.replace('%', "%25")
        .replace('/', "%2F")
        .replace('\0', "%00")
}

/// The key path of the node at `span` in a document: mapping keys by their text, list
/// items by their `name` when they have one and by their index otherwise, e.g.
/// `channels/acc-1/filters/2/cutoff`. A span on a key names that key's entry. The empty
/// string is the document itself.
pub fn key_path(root: &Node, span: Span, text: &str) -> String {
    let mut out: Vec<String> = Vec::new();
    let mut node = root;
    'descend: loop {
        match &node.kind {
            NodeKind::Map(entries) => {
                for (k, v) in entries {
                    let entry = k.span.join(&v.span);
                    if k.span.contains(&span) {
                        out.push(segment(&k.key_text(text)));
                        break 'descend;
                    }
                    if entry.contains(&span) && !(span.is_empty() && span.start == entry.end) {
                        out.push(segment(&k.key_text(text)));
                        node = v;
                        continue 'descend;
                    }
                }
                break;
            }
            NodeKind::Seq(items) => {
                for (i, item) in items.iter().enumerate() {
                    if item.span.contains(&span)
                        && !(span.is_empty() && span.start == item.span.end)
                    {
                        out.push(item_name(item).map_or_else(|| i.to_string(), |n| segment(&n)));
                        node = item;
                        continue 'descend;
                    }
                }
                break;
            }
            _ => break,
        }
    }
    out.join("/")
}

/// A list item's `name`, when it is a mapping with a scalar `name`.
fn item_name(item: &Node) -> Option<String> {
    let (_, v) = item.get("name")?;
    match &v.kind {
        NodeKind::Str(s) => Some(s.clone()),
        NodeKind::Int(i) => Some(i.to_string()),
        _ => None,
    }
}

/// The subject of a finding that did not set one: a physics rule about a channel is
/// about `channel/<name>`; anything else is about the node its primary span names
/// (input rules: the key path of the value concerned).
fn default_subject(f: &Finding, trees: &mut Trees) -> String {
    let physics =
        crate::rules::rule(f.rule).is_some_and(|r| r.stage == crate::rules::Stage::Physics);
    if physics && let Some(ch) = &f.channel {
        return format!("channel/{}", segment(ch));
    }
    if f.rule == "yaml-syntax" {
        // The file has no tree (and parsing it again would cost what it cost once).
        return String::new();
    }
    trees.key_path(f.primary.span)
}

/// Per-file trees, parsed again only for files whose findings need a key path.
pub struct Trees<'a> {
    sources: &'a Sources,
    parsed: HashMap<FileId, Option<Node>>,
}

impl<'a> Trees<'a> {
    /// No tree parsed yet.
    pub fn new(sources: &'a Sources) -> Self {
        Trees {
            sources,
            parsed: HashMap::new(),
        }
    }

    /// The key path of `span` in its file ("" when the file does not parse or its text
    /// was released).
    pub fn key_path(&mut self, span: Span) -> String {
        if span.file as usize >= self.sources.len() {
            return String::new();
        }
        let sf = self.sources.get(span.file);
        let tree = self
            .parsed
            .entry(span.file)
            .or_insert_with(|| crate::source::yaml::parse(sf.id, &sf.text, &sf.lines).ok());
        match tree {
            Some(root) => key_path(root, span, &sf.text),
            None => String::new(),
        }
    }
}

/// The owner of each file of a run, and its campaign root field.
#[derive(Default, Debug)]
pub struct Owners {
    /// File → (owner, campaign root field).
    files: HashMap<FileId, (String, String)>,
}

/// What the run knows about a file, for [`Owners::new`].
#[derive(Debug, Clone)]
pub struct FileInfo {
    /// The file.
    pub file: FileId,
    /// `rig:<name>` or `catalog:<name>` when the file names itself.
    pub named: Option<String>,
    /// The campaign root the file was linted under (absolute).
    pub root: PathBuf,
    /// The file's path (absolute or relative to the working directory).
    pub path: PathBuf,
}

impl Owners {
    /// Work out every file's owner: its name, unless it has none or another file of the
    /// run has the same one; then its path relative to its campaign root. With `base`,
    /// every file is identified relative to `base` instead (root field `.`).
    pub fn new(infos: &[FileInfo], base: Option<&Path>) -> Self {
        let mut count: HashMap<&str, usize> = HashMap::new();
        for i in infos {
            if let Some(n) = &i.named {
                *count.entry(n.as_str()).or_default() += 1;
            }
        }
        let mut root_fields: HashMap<&Path, String> = HashMap::new();
        let mut files = HashMap::new();
        for i in infos {
            let (root, dir) = match base {
                Some(b) => (".".to_string(), b),
                None => (
                    root_fields
                        .entry(i.root.as_path())
                        .or_insert_with(|| root_field(&i.root))
                        .clone(),
                    i.root.as_path(),
                ),
            };
            let owner = match &i.named {
                Some(n) if count[n.as_str()] == 1 => n.clone(),
                _ => format!("path:{}", relative_path(&i.path, dir)),
            };
            files.insert(i.file, (owner, root));
        }
        Owners { files }
    }

    /// The owner and root field of a file (`path:?` and `.` for a file the run did not
    /// register).
    pub fn of(&self, file: FileId) -> (&str, &str) {
        self.files
            .get(&file)
            .map_or(("path:?", "."), |(o, r)| (o.as_str(), r.as_str()))
    }
}

/// `path` relative to `root`, `/`-separated (both made absolute and canonical first);
/// the path as given when it lies outside the root.
fn relative_path(path: &Path, root: &Path) -> String {
    let canon =
        |p: &Path| std::fs::canonicalize(p).unwrap_or_else(|_| crate::campaign::absolute(p));
    let (p, r) = (canon(path), canon(root));
    match p.strip_prefix(&r) {
        Ok(rel) => rel_slash(rel),
        Err(_) => rel_slash(path),
    }
}

/// Give every finding its subject (when its rule did not set one) and its fingerprint.
/// A finding is owned by its [`Finding::owner_file`] when set, else by the file of its
/// primary span; findings must be in output order, which orders the counters.
pub fn assign(findings: &mut [Finding], owners: &Owners, sources: &Sources) {
    let mut trees = Trees::new(sources);
    let mut keys: Vec<(usize, String, String, String)> = Vec::with_capacity(findings.len());
    let mut groups: HashMap<(String, String, String, &'static str), usize> = HashMap::new();
    for (i, f) in findings.iter_mut().enumerate() {
        if f.subject.is_none() {
            f.subject = Some(default_subject(f, &mut trees));
        }
        let (owner, root) = owners.of(f.owner_file.unwrap_or(f.primary.span.file));
        let subject = f.subject.clone().unwrap_or_default();
        *groups
            .entry((root.to_string(), owner.to_string(), subject.clone(), f.rule))
            .or_default() += 1;
        keys.push((i, root.to_string(), owner.to_string(), subject));
    }
    let mut seen: HashMap<(String, String, String, &'static str), usize> = HashMap::new();
    for (i, root, owner, subject) in keys {
        let rule = findings[i].rule;
        let key = (root, owner, subject, rule);
        let counter = if groups[&key] > 1 {
            let n = seen.entry(key.clone()).or_default();
            *n += 1;
            Some(*n)
        } else {
            None
        };
        let (root, owner, subject, rule) = key;
        findings[i].fingerprint = Some(fingerprint(rule, &root, &owner, &subject, counter));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source::LineIndex;

    fn path_at(text: &str, needle: &str) -> String {
        let idx = LineIndex::new(text);
        let root = crate::source::yaml::parse(0, text, &idx).unwrap();
        let at = text.find(needle).unwrap();
        key_path(&root, Span::new(0, at, at + needle.len()), text)
    }

    #[test]
    fn key_paths_name_named_items_by_name_and_others_by_index() {
        let text = "channels:\n  - name: acc-1\n    filters:\n      - { response: butterworth, order: 4, cutoff: 2 kHz }\n      - { response: bessel, order: 2, cutoff: 3 kHz }\n      - { response: butterworth, order: 2, cutoff: 9 kHz }\ninclude:\n  - a.yaml\n  - b.yaml\n";
        assert_eq!(path_at(text, "9 kHz"), "channels/acc-1/filters/2/cutoff");
        assert_eq!(
            path_at(text, "cutoff: 9 kHz"),
            "channels/acc-1/filters/2/cutoff"
        );
        assert_eq!(path_at(text, "b.yaml"), "include/1");
        assert_eq!(path_at(text, "acc-1"), "channels/acc-1/name");
        assert_eq!(path_at(text, "channels"), "channels");
    }

    #[test]
    fn names_cannot_pose_as_two_segments() {
        assert_eq!(segment("a/b"), "a%2Fb");
        assert_eq!(segment("50%"), "50%25");
        assert_ne!(segment("a/b"), format!("{}/{}", segment("a"), segment("b")));
    }

    /// An independent check of the hash: the value below was computed with Python's
    /// standard library (`hashlib.sha256`), outside this program:
    /// `hashlib.sha256(b"\0".join([b"foldcheck/v1", b"nyquist", b".", b"rig:bay-3",
    /// b"channel/acc-1"])).hexdigest()[:16]`.
    #[test]
    fn fingerprint_matches_python_hashlib() {
        assert_eq!(
            fingerprint("nyquist", ".", "rig:bay-3", "channel/acc-1", None),
            PY_NYQUIST_ACC1
        );
        assert_eq!(
            fingerprint("nyquist", ".", "rig:bay-3", "channel/acc-1", Some(2)),
            PY_NYQUIST_ACC1_COUNTER2
        );
    }

    /// SHA-256 of the empty string is a published test vector (FIPS 180-2 examples;
    /// e3b0c442 98fc1c14 ...): with no fields joined, the hash is its first 8 bytes. This
    /// pins the byte order and hex formatting independently of Python.
    #[test]
    fn digest_prefix_matches_the_published_empty_string_vector() {
        let d = Sha256::digest(b"");
        let hex: String = d[..8].iter().map(|b| format!("{b:02x}")).collect();
        assert_eq!(hex, "e3b0c44298fc1c14");
    }

    const PY_NYQUIST_ACC1: &str = "f495e43de9ccb956";
    const PY_NYQUIST_ACC1_COUNTER2: &str = "f836a439dffb0a16";
}
