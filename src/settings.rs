//! `foldcheck.toml`: rule severities, thresholds and exclusions for a campaign.
//!
//! ```toml
//! exclude = ["archive/**"]
//!
//! [rules]
//! oversampling = "off"
//! sampling-margin = "error"
//!
//! [thresholds]
//! margin = 2.56
//! alias-rejection = "90 dB"
//! ```
//!
//! An invalid settings file is a fatal error with its own span (exit status 2).

use crate::finding::Severity;
use crate::model::quantity::{self, Kind};
use crate::resolve::ThresholdSettings;
use std::collections::BTreeMap;
use std::ops::Range;
use std::path::{Path, PathBuf};

/// The settings file name.
pub const FILE_NAME: &str = "foldcheck.toml";

/// The JSON Schema of `foldcheck.toml` (draft 2020-12).
pub const SETTINGS_SCHEMA: &str = include_str!("../schemas/settings.schema.json");

/// A rule's configured level.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Level {
    /// Not reported.
    Off,
    /// Reported at this severity.
    On(Severity),
}

/// Parsed settings.
#[derive(Clone, Debug, Default)]
pub struct Settings {
    /// Where it was read from (None: built-in defaults).
    pub path: Option<PathBuf>,
    /// Per-rule levels.
    pub rules: BTreeMap<String, Level>,
    /// Thresholds.
    pub thresholds: ThresholdSettings,
    /// Exclusion globs, relative to the campaign root.
    pub exclude: globset::GlobSet,
    /// The globs as written.
    pub exclude_patterns: Vec<String>,
}

impl Settings {
    /// The level of a rule (its default severity when not configured).
    pub fn level(&self, rule: &str, default: Severity) -> Level {
        self.rules.get(rule).copied().unwrap_or(Level::On(default))
    }

    /// Whether a path (relative to the campaign root) is excluded.
    pub fn excluded(&self, relative: &Path) -> bool {
        self.exclude.is_match(relative)
    }
}

/// Why a settings file was refused.
#[derive(Debug)]
pub struct SettingsError {
    /// The file.
    pub path: PathBuf,
    /// Its text (empty if unreadable).
    pub text: String,
    /// The byte range at fault.
    pub span: Option<Range<usize>>,
    /// One clause.
    pub message: String,
}

impl std::fmt::Display for SettingsError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "invalid settings file {}: {}",
            self.path.display(),
            self.message
        )
    }
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct Raw {
    #[serde(default)]
    exclude: Vec<toml::Spanned<String>>,
    #[serde(default)]
    rules: BTreeMap<String, toml::Spanned<String>>,
    #[serde(default)]
    thresholds: Option<RawThresholds>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
struct RawThresholds {
    margin: Option<toml::Spanned<f64>>,
    alias_rejection: Option<toml::Spanned<toml::Value>>,
    passband_tolerance: Option<toml::Spanned<toml::Value>>,
    oversampling_limit: Option<toml::Spanned<f64>>,
    phase_tolerance: Option<toml::Spanned<toml::Value>>,
}

/// Find the nearest `foldcheck.toml` at or above `dir`.
pub fn discover(dir: &Path) -> Option<PathBuf> {
    let mut at = Some(dir);
    while let Some(d) = at {
        let candidate = d.join(FILE_NAME);
        if candidate.is_file() {
            return Some(candidate);
        }
        at = d.parent();
    }
    None
}

/// Read and check a settings file.
pub fn load(path: &Path) -> Result<Settings, SettingsError> {
    let refuse = |message: String| SettingsError {
        path: path.to_path_buf(),
        text: String::new(),
        span: None,
        message,
    };
    // Only a regular file is opened: reading a named pipe with no writer would block.
    match std::fs::metadata(path) {
        Ok(m) if !m.is_file() => {
            return Err(refuse(format!(
                "cannot read it: {}",
                crate::source::not_regular_file(&m)
            )));
        }
        Err(e) => return Err(refuse(format!("cannot read it: {e}"))),
        Ok(_) => {}
    }
    let text = std::fs::read_to_string(path).map_err(|e| SettingsError {
        path: path.to_path_buf(),
        text: String::new(),
        span: None,
        message: format!("cannot read it: {e}"),
    })?;
    parse(path, &text)
}

/// Parse settings text.
pub fn parse(path: &Path, text: &str) -> Result<Settings, SettingsError> {
    let err = |span: Option<Range<usize>>, message: String| SettingsError {
        path: path.to_path_buf(),
        text: text.to_string(),
        span,
        message,
    };
    let raw: Raw =
        toml::from_str(text).map_err(|e| err(e.span(), e.message().trim().to_string()))?;
    let mut s = Settings {
        path: Some(path.to_path_buf()),
        ..Default::default()
    };
    for (name, level) in raw.rules {
        if crate::rules::rule(&name).is_none() {
            let names = crate::rules::RULES.iter().map(|r| r.name);
            let hint = crate::words::closest(&name, names)
                .map(|b| format!("; did you mean `{b}`?"))
                .unwrap_or_default();
            // The key's span is not kept by the parser: point at the value.
            return Err(err(
                Some(level.span()),
                format!("unknown rule `{name}`{hint}"),
            ));
        }
        if crate::finding::is_input_rule(&name) {
            return Err(err(
                Some(level.span()),
                format!(
                    "`{name}` is an input rule: it is always an error and cannot be configured"
                ),
            ));
        }
        let l = match level.get_ref().as_str() {
            "off" => Level::Off,
            other => match Severity::parse(other) {
                Some(sev) => Level::On(sev),
                None => {
                    return Err(err(
                        Some(level.span()),
                        format!("`{other}` is not a level; use error, warning, note or off"),
                    ));
                }
            },
        };
        s.rules.insert(name, l);
    }
    if let Some(t) = raw.thresholds {
        let quantity = |v: Option<toml::Spanned<toml::Value>>,
                        kind: Kind|
         -> Result<Option<f64>, SettingsError> {
            let Some(v) = v else { return Ok(None) };
            let text_value = match v.get_ref() {
                toml::Value::String(s) => s.clone(),
                toml::Value::Integer(i) => i.to_string(),
                toml::Value::Float(f) => f.to_string(),
                other => {
                    return Err(err(
                        Some(v.span()),
                        format!("expected a {}, found {}", kind.noun(), other.type_str()),
                    ));
                }
            };
            let q = quantity::parse(&text_value, kind)
                .and_then(|q| quantity::check_positive(&q, &text_value, kind).map(|_| q))
                .map_err(|e| err(Some(v.span()), e.message))?;
            Ok(Some(quantity::to_f64(&q)))
        };
        let ratio =
            |v: Option<toml::Spanned<f64>>, what: &str| -> Result<Option<f64>, SettingsError> {
                match v {
                    Some(v) if *v.get_ref() <= 1.0 || !v.get_ref().is_finite() => Err(err(
                        Some(v.span()),
                        format!("`{what}` must be a number above 1"),
                    )),
                    Some(v) => Ok(Some(*v.get_ref())),
                    None => Ok(None),
                }
            };
        s.thresholds = ThresholdSettings {
            margin: ratio(t.margin, "margin")?,
            alias_rejection: quantity(t.alias_rejection, Kind::Level)?,
            passband_tolerance: quantity(t.passband_tolerance, Kind::Level)?,
            oversampling_limit: ratio(t.oversampling_limit, "oversampling-limit")?,
            phase_tolerance: quantity(t.phase_tolerance, Kind::Phase)?,
        };
    }
    let mut builder = globset::GlobSetBuilder::new();
    for pat in &raw.exclude {
        let glob = globset::GlobBuilder::new(pat.get_ref())
            .literal_separator(true)
            .build()
            .map_err(|e| {
                err(
                    Some(pat.span()),
                    format!("bad exclude pattern: {}", e.kind()),
                )
            })?;
        builder.add(glob);
        s.exclude_patterns.push(pat.get_ref().clone());
    }
    s.exclude = builder
        .build()
        .map_err(|e| err(None, format!("bad exclude patterns: {e}")))?;
    Ok(s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_levels_thresholds_and_excludes() {
        let s = parse(
            Path::new("foldcheck.toml"),
            "exclude = [\"old/**\"]\n[rules]\noversampling = \"off\"\nnyquist = \"warning\"\n[thresholds]\nmargin = 2.56\nalias-rejection = \"90 dB\"\n",
        )
        .unwrap();
        assert_eq!(s.level("oversampling", Severity::Note), Level::Off);
        assert_eq!(
            s.level("nyquist", Severity::Error),
            Level::On(Severity::Warning)
        );
        assert_eq!(
            s.level("storage", Severity::Error),
            Level::On(Severity::Error)
        );
        assert_eq!(s.thresholds.margin, Some(2.56));
        assert_eq!(s.thresholds.alias_rejection, Some(90.0));
        assert!(s.excluded(Path::new("old/a.rig.yaml")));
        assert!(!s.excluded(Path::new("new/a.rig.yaml")));
    }

    #[test]
    fn errors_carry_spans() {
        let text = "[rules]\nnyquits = \"off\"\n";
        let e = parse(Path::new("foldcheck.toml"), text).unwrap_err();
        assert!(
            e.message.contains("did you mean `nyquist`"),
            "{}",
            e.message
        );
        let span = e.span.unwrap();
        assert_eq!(&text[span], "\"off\"");
        let e = parse(Path::new("x"), "[thresholds]\nmargin = 0.5\n").unwrap_err();
        assert!(e.message.contains("above 1"));
        let e = parse(Path::new("x"), "[rules]\nnyquist = \"loud\"\n").unwrap_err();
        assert!(e.message.contains("not a level"));
        let e = parse(Path::new("x"), "colour = 1\n").unwrap_err();
        assert!(e.span.is_some());
    }
}
