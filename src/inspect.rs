//! `foldcheck inspect` (being written).

use std::path::{Path, PathBuf};

/// Show one channel's chain.
pub fn run(
    _file: &Path,
    _channel: &str,
    _plot: Option<&Path>,
    _json: bool,
    _settings: Option<PathBuf>,
) -> Result<String, String> {
    Err("inspect is not available yet".to_string())
}
