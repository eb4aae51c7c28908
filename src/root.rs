//! Where a campaign starts: the campaign root of a file.
//!
//! The campaign root is the directory that a rig's includes may not leave, that
//! settings exclusions are relative to, and that identifies a campaign inside a
//! repository. For a file it is, in this order (docs/format.md, "Campaign root"):
//!
//! 1. the directory of the nearest `foldcheck.toml` at or above the file;
//! 2. else the top of the git work tree holding the file (found by walking up for a
//!    `.git` directory or file; no git process is run);
//! 3. else the current directory, when the file lies below it;
//! 4. else the directory named on the command line that the file was found under;
//! 5. else the file's own directory.
//!
//! [`campaign_root`] is the one function every command uses.

use crate::settings;
use std::path::{Path, PathBuf};

/// How a campaign root was chosen.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum RootKind {
    /// The directory of this settings file.
    Settings(PathBuf),
    /// The top of a git work tree.
    Git,
    /// The current directory.
    WorkingDirectory,
    /// The directory named on the command line that the file was found under.
    Named,
    /// The file's own directory.
    FileDirectory,
}

/// A file's campaign root.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct CampaignRoot {
    /// The directory: absolute and lexically normalised.
    pub dir: PathBuf,
    /// Why this directory.
    pub kind: RootKind,
}

impl CampaignRoot {
    /// Whether the root came from a settings file.
    pub fn has_settings(&self) -> bool {
        matches!(self.kind, RootKind::Settings(_))
    }

    /// A short phrase for the human report: "the git work tree's top", …
    pub fn describe(&self) -> &'static str {
        match self.kind {
            RootKind::Settings(_) => "the directory of foldcheck.toml",
            RootKind::Git => "the top of the git work tree",
            RootKind::WorkingDirectory => "the current directory",
            RootKind::Named => "the directory named on the command line",
            RootKind::FileDirectory => "the file's own directory",
        }
    }
}

/// The campaign root of `file` (a path to a file, relative or absolute; it need not
/// exist).
pub fn campaign_root(file: &Path) -> CampaignRoot {
    campaign_root_in(file, None)
}

/// The campaign root of `file` that was found by walking the directory `walked`
/// (named on the command line): as [`campaign_root`], with `walked` tried after the
/// current directory.
pub fn campaign_root_in(file: &Path, walked: Option<&Path>) -> CampaignRoot {
    let abs = crate::campaign::absolute(file);
    let dir = abs
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_else(|| abs.clone());
    if let Some(s) = settings::discover(&dir) {
        let root = s.parent().map(Path::to_path_buf).unwrap_or_default();
        return CampaignRoot {
            dir: root,
            kind: RootKind::Settings(s),
        };
    }
    if let Some(top) = git_top(&dir) {
        return CampaignRoot {
            dir: top,
            kind: RootKind::Git,
        };
    }
    let cwd = crate::campaign::absolute(Path::new("."));
    if abs.starts_with(&cwd) && abs != cwd {
        return CampaignRoot {
            dir: cwd,
            kind: RootKind::WorkingDirectory,
        };
    }
    if let Some(w) = walked {
        let w = crate::campaign::absolute(w);
        if abs.starts_with(&w) && abs != w {
            return CampaignRoot {
                dir: w,
                kind: RootKind::Named,
            };
        }
    }
    CampaignRoot {
        dir,
        kind: RootKind::FileDirectory,
    }
}

/// The top of the git work tree holding `dir`: the nearest directory at or above it
/// that holds a `.git` entry (a directory, or a file as in linked work trees and
/// submodules). `dir` is made absolute first.
pub fn git_top(dir: &Path) -> Option<PathBuf> {
    let abs = crate::campaign::absolute(dir);
    let mut at = Some(abs.as_path());
    while let Some(d) = at {
        if std::fs::symlink_metadata(d.join(".git")).is_ok() {
            return Some(d.to_path_buf());
        }
        at = d.parent();
    }
    None
}

/// The campaign root's path relative to the top of the git work tree holding it,
/// `/`-separated: `.` when they are the same or there is no git work tree (the
/// campaign part of a finding's identity, docs/output.md).
pub fn relative_to_git_top(root: &Path) -> String {
    let abs = crate::campaign::absolute(root);
    let Some(top) = git_top(&abs) else {
        return ".".to_string();
    };
    match abs.strip_prefix(&top) {
        Ok(rel) if !rel.as_os_str().is_empty() => rel
            .components()
            .map(|c| c.as_os_str().to_string_lossy().into_owned())
            .collect::<Vec<_>>()
            .join("/"),
        _ => ".".to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn touch(p: &Path) {
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, "").unwrap();
    }

    // The working directory of unit tests is the crate, itself inside a git work tree
    // or not; these tests use temporary directories outside it, so step 3 never applies.
    #[test]
    fn settings_file_wins_over_git() {
        let t = tempfile::tempdir().unwrap();
        std::fs::create_dir(t.path().join(".git")).unwrap();
        touch(&t.path().join("lab/foldcheck.toml"));
        let rig = t.path().join("lab/rigs/a.rig.yaml");
        touch(&rig);
        let r = campaign_root(&rig);
        assert_eq!(r.dir, t.path().join("lab"));
        assert_eq!(
            r.kind,
            RootKind::Settings(t.path().join("lab/foldcheck.toml"))
        );
        assert_eq!(relative_to_git_top(&r.dir), "lab");
    }

    #[test]
    fn git_top_without_settings_also_for_a_git_file() {
        let t = tempfile::tempdir().unwrap();
        // A linked work tree has a `.git` file, not a directory.
        touch(&t.path().join(".git"));
        let rig = t.path().join("rigs/a.rig.yaml");
        touch(&rig);
        let r = campaign_root(&rig);
        assert_eq!(r.dir, t.path());
        assert_eq!(r.kind, RootKind::Git);
        assert_eq!(relative_to_git_top(&r.dir), ".");
    }

    #[test]
    fn outside_git_and_cwd_the_named_directory_then_the_files_own() {
        let t = tempfile::tempdir().unwrap();
        let rig = t.path().join("rigs/a.rig.yaml");
        touch(&rig);
        if git_top(t.path()).is_some() {
            return; // the temporary directory lies inside a work tree on this machine
        }
        let r = campaign_root_in(&rig, Some(t.path()));
        assert_eq!((r.dir, r.kind), (t.path().to_path_buf(), RootKind::Named));
        let r = campaign_root(&rig);
        assert_eq!(
            (r.dir, r.kind),
            (t.path().join("rigs"), RootKind::FileDirectory)
        );
        assert_eq!(relative_to_git_top(t.path()), ".");
    }
}
