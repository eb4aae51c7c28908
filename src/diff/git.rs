//! The old side of `diff --rev`: the rig-related files of a git revision, written into a
//! temporary directory with the checkout's layout, so that includes and settings resolve
//! the same way as in the working tree. Uses the `git` command; never touches the
//! checkout.

use std::io::{BufRead, BufReader, Read, Write};
use std::path::{Component, Path, PathBuf};
use std::process::{Command, Stdio};

/// Run `git -C dir ARGS` and return its stdout, or its stderr as the error.
fn git(dir: &Path, args: &[&str]) -> Result<Vec<u8>, String> {
    let out = Command::new("git")
        .arg("-C")
        .arg(dir)
        .args(args)
        .stdin(Stdio::null())
        .output()
        .map_err(|e| format!("cannot run git: {e}"))?;
    if out.status.success() {
        Ok(out.stdout)
    } else {
        Err(String::from_utf8_lossy(&out.stderr).trim().to_string())
    }
}

/// The top directory of the git checkout holding `dir`, canonical.
pub fn toplevel(dir: &Path) -> Result<PathBuf, String> {
    let out = git(dir, &["rev-parse", "--show-toplevel"]).map_err(|why| {
        if why.starts_with("cannot run git") {
            why
        } else {
            format!(
                "--rev compares with a git revision, but {} is not inside a git checkout",
                dir.display()
            )
        }
    })?;
    let text = String::from_utf8_lossy(&out);
    let top = PathBuf::from(text.trim_end_matches(['\n', '\r']));
    std::fs::canonicalize(&top).map_err(|e| format!("{}: {e}", top.display()))
}

/// The commit `rev` names, as a full object id.
pub fn commit(top: &Path, rev: &str) -> Result<String, String> {
    let unknown = || format!("unknown git revision `{rev}`");
    if rev.is_empty() || rev.starts_with('-') {
        return Err(unknown());
    }
    let spec = format!("{rev}^{{commit}}");
    let out = git(
        top,
        &[
            "rev-parse",
            "--verify",
            "--quiet",
            "--end-of-options",
            &spec,
        ],
    )
    .map_err(|why| {
        if why.starts_with("cannot run git") {
            why
        } else {
            unknown()
        }
    })?;
    let id = String::from_utf8_lossy(&out).trim().to_string();
    if id.is_empty() {
        Err(unknown())
    } else {
        Ok(id)
    }
}

/// A temporary directory, removed when dropped.
#[derive(Debug)]
pub struct Snapshot(PathBuf);

impl Snapshot {
    /// Its path.
    pub fn path(&self) -> &Path {
        &self.0
    }

    fn create() -> Result<Snapshot, String> {
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.subsec_nanos())
            .unwrap_or(0);
        let tmp = std::env::temp_dir();
        for attempt in 0..100u32 {
            let dir = tmp.join(format!(
                "foldcheck-rev-{}-{nanos:08x}-{attempt}",
                std::process::id()
            ));
            match std::fs::create_dir(&dir) {
                Ok(()) => return Ok(Snapshot(dir)),
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
                Err(e) => {
                    return Err(format!(
                        "cannot create a temporary directory in {}: {e}",
                        tmp.display()
                    ));
                }
            }
        }
        Err(format!(
            "cannot create a temporary directory in {}",
            tmp.display()
        ))
    }
}

impl Drop for Snapshot {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// Whether a path in the tree is one the old side may need: YAML (rigs and the catalogs
/// they include, wherever they are), settings files, and the paths named.
fn wanted(path: &str, named: &[String]) -> bool {
    let name = path.rsplit('/').next().unwrap_or(path);
    name.ends_with(".yaml")
        || name.ends_with(".yml")
        || name == crate::settings::FILE_NAME
        || named.iter().any(|n| n == path)
}

/// A tree path that stays inside the snapshot (git never writes others, but check).
fn safe(path: &str) -> Option<PathBuf> {
    let p = Path::new(path);
    p.components()
        .all(|c| matches!(c, Component::Normal(_)))
        .then(|| p.to_path_buf())
}

/// Write the wanted files of `commit` into a new temporary directory. `named` are the
/// command line's paths relative to `top`.
pub fn snapshot(top: &Path, commit: &str, named: &[PathBuf]) -> Result<Snapshot, String> {
    let named: Vec<String> = named
        .iter()
        .map(|p| p.to_string_lossy().replace('\\', "/"))
        .collect();
    let listing = git(top, &["ls-tree", "-r", "-z", "--full-tree", commit])
        .map_err(|why| format!("cannot list the files of {commit}: {why}"))?;
    // Entries: "<mode> SP <type> SP <object> TAB <path>" separated by NUL.
    let mut blobs: Vec<(String, PathBuf)> = Vec::new();
    for entry in listing.split(|b| *b == 0).filter(|e| !e.is_empty()) {
        let Some(tab) = entry.iter().position(|b| *b == b'\t') else {
            continue;
        };
        let head = String::from_utf8_lossy(&entry[..tab]);
        let Ok(path) = std::str::from_utf8(&entry[tab + 1..]) else {
            continue; // a non-UTF-8 name cannot be a rig the working tree side reads either
        };
        let mut fields = head.split(' ');
        let (Some(mode), Some(kind), Some(oid)) = (fields.next(), fields.next(), fields.next())
        else {
            continue;
        };
        // Regular files only: symbolic links (120000) and submodules are not followed.
        if kind != "blob" || !(mode == "100644" || mode == "100755") || !wanted(path, &named) {
            continue;
        }
        if let Some(rel) = safe(path) {
            blobs.push((oid.to_string(), rel));
        }
    }
    let snap = Snapshot::create()?;
    // Mark the snapshot as a work tree's top, so that a file's campaign root (src/root.rs)
    // is found at the same place on both sides when no foldcheck.toml chooses it.
    std::fs::create_dir(snap.path().join(".git"))
        .map_err(|e| format!("cannot write into {}: {e}", snap.path().display()))?;
    write_blobs(top, &blobs, snap.path())?;
    Ok(snap)
}

/// Read the blobs with one `git cat-file --batch` and write each under `dir`.
fn write_blobs(top: &Path, blobs: &[(String, PathBuf)], dir: &Path) -> Result<(), String> {
    if blobs.is_empty() {
        return Ok(());
    }
    let mut child = Command::new("git")
        .arg("-C")
        .arg(top)
        .args(["cat-file", "--batch"])
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .map_err(|e| format!("cannot run git: {e}"))?;
    let mut stdin = child.stdin.take().expect("stdin is piped");
    let ids: String = blobs.iter().map(|(oid, _)| format!("{oid}\n")).collect();
    // Feed the ids from another thread, so a large output cannot block the input.
    let feeder = std::thread::spawn(move || stdin.write_all(ids.as_bytes()));
    let mut out = BufReader::new(child.stdout.take().expect("stdout is piped"));
    let result = (|| -> Result<(), String> {
        for (oid, rel) in blobs {
            let mut header = String::new();
            out.read_line(&mut header)
                .map_err(|e| format!("cannot read from git cat-file: {e}"))?;
            let mut fields = header.split_whitespace();
            let size = match (fields.next(), fields.next(), fields.next()) {
                (Some(id), Some("blob"), Some(size)) if id == oid => size
                    .parse::<usize>()
                    .map_err(|_| format!("git cat-file gave a bad header: {header:?}"))?,
                _ => return Err(format!("git cat-file cannot read object {oid}: {header:?}")),
            };
            let mut content = vec![0u8; size];
            out.read_exact(&mut content)
                .map_err(|e| format!("cannot read object {oid} from git: {e}"))?;
            let mut newline = [0u8; 1];
            out.read_exact(&mut newline)
                .map_err(|e| format!("cannot read object {oid} from git: {e}"))?;
            let target = dir.join(rel);
            if let Some(parent) = target.parent() {
                std::fs::create_dir_all(parent)
                    .map_err(|e| format!("cannot create {}: {e}", parent.display()))?;
            }
            std::fs::write(&target, &content)
                .map_err(|e| format!("cannot write {}: {e}", target.display()))?;
        }
        Ok(())
    })();
    drop(out);
    let fed = feeder.join();
    let status = child.wait();
    result?;
    match fed {
        Ok(Ok(())) => {}
        Ok(Err(e)) => return Err(format!("cannot write to git cat-file: {e}")),
        Err(_) => return Err("cannot write to git cat-file".to_string()),
    }
    match status {
        Ok(s) if s.success() => Ok(()),
        Ok(s) => Err(format!("git cat-file failed ({s})")),
        Err(e) => Err(format!("git cat-file failed: {e}")),
    }
}
