//! `foldcheck diff` (being written).

use crate::finding::Severity;
use std::path::{Path, PathBuf};

/// Output formats.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// Plain text.
    Human,
    /// JSON.
    Json,
    /// Markdown.
    Markdown,
}

/// Compare.
pub fn run(
    _paths: &[PathBuf],
    _rev: Option<&str>,
    _format: Format,
    _fail_on: Severity,
    _settings: Option<PathBuf>,
) -> Result<(String, u8), String> {
    let _ = Path::new("");
    Err("diff is not available yet".to_string())
}
