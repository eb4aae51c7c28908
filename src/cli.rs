//! The command line (clap definitions only).

use clap::{Parser, Subcommand, ValueEnum};
use std::path::PathBuf;

/// Lint the configuration files of data-acquisition rigs: exact sample rates through the
/// clock tree, the sampling theorem, anti-alias filtering at every rate change, and more.
#[derive(Parser, Debug)]
#[command(name = "foldcheck", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Output formats of `check`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum CheckFormat {
    /// Reports with source excerpts and a summary line.
    Human,
    /// JSON, version 1.
    Json,
    /// SARIF 2.1.0.
    Sarif,
}

/// Output formats of `fix`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum FixFormat {
    /// What was fixed, what is left (with `--dry-run`: a unified diff).
    Human,
    /// JSON: the fixes, conflicts, skipped catalog fixes, changed files and what is left.
    Json,
}

/// Output formats of `diff`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum DiffFormat {
    /// Plain text.
    Human,
    /// JSON.
    Json,
    /// A Markdown table for a review comment.
    Markdown,
}

/// Output formats of `inspect`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum InspectFormat {
    /// Plain text.
    Human,
    /// JSON.
    Json,
}

/// Output formats of `report`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum ReportFormat {
    /// One self-contained HTML page.
    Html,
    /// The channel table as CSV (columns in docs/output.md).
    Csv,
    /// The channel table as JSON.
    Json,
}

/// Which channels of the HTML report get their spectrum drawn.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum PlotChoice {
    /// Channels with an active error or warning.
    Failing,
    /// Every analysed channel (a large file for a large campaign).
    All,
    /// None.
    None,
}

/// Lowest severity that fails the run.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum FailOn {
    /// Errors only.
    Error,
    /// Warnings and errors.
    Warning,
    /// Any finding.
    Note,
}

/// When to colour.
#[derive(Clone, Copy, Debug, PartialEq, Eq, ValueEnum)]
pub enum ColorChoice {
    /// When stdout is a terminal and NO_COLOR is not set.
    Auto,
    /// Always.
    Always,
    /// Never.
    Never,
}

/// The subcommands.
#[derive(Subcommand, Debug)]
pub enum Command {
    /// Lint files and directories (default: the current directory).
    Check {
        /// Rig files (any name) and directories (every *.rig.yaml / *.rig.yml below).
        paths: Vec<PathBuf>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = CheckFormat::Human)]
        format: CheckFormat,
        /// Lowest severity that makes the exit status 1.
        #[arg(long, value_enum, default_value_t = FailOn::Error)]
        fail_on: FailOn,
        /// Colour the human format.
        #[arg(long, value_enum, default_value_t = ColorChoice::Auto)]
        color: ColorChoice,
        /// Use this settings file instead of discovering foldcheck.toml.
        #[arg(long, value_name = "FILE")]
        settings: Option<PathBuf>,
        /// Refuse files larger than this many bytes (default 64 MiB).
        #[arg(long, value_name = "BYTES")]
        max_file_size: Option<u64>,
    },
    /// Apply every verified fix, then lint again and show what is left.
    Fix {
        /// Rig files and directories, as for `check` (default: the current directory).
        paths: Vec<PathBuf>,
        /// Only fix findings of this rule (may be given more than once).
        #[arg(long = "rule", value_name = "RULE")]
        rules: Vec<String>,
        /// Print the changes as a unified diff instead of writing them.
        #[arg(long)]
        dry_run: bool,
        /// Also apply fixes that edit a shared catalog (they reach every rig that
        /// includes it).
        #[arg(long)]
        include_catalogs: bool,
        /// Output format.
        #[arg(long, value_enum, default_value_t = FixFormat::Human)]
        format: FixFormat,
        /// Lowest severity left after fixing that makes the exit status 1.
        #[arg(long, value_enum, default_value_t = FailOn::Error)]
        fail_on: FailOn,
        /// Colour the human format.
        #[arg(long, value_enum, default_value_t = ColorChoice::Auto)]
        color: ColorChoice,
        /// Use this settings file instead of discovering foldcheck.toml.
        #[arg(long, value_name = "FILE")]
        settings: Option<PathBuf>,
    },
    /// Compare two files or two directories, or the working tree with a git revision.
    Diff {
        /// OLD and NEW (files or directories); with --rev, the paths to compare.
        paths: Vec<PathBuf>,
        /// Compare the working tree with this git revision.
        #[arg(long, value_name = "REV")]
        rev: Option<String>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = DiffFormat::Human)]
        format: DiffFormat,
        /// Lowest severity of an introduced finding that makes the exit status 1.
        #[arg(long, value_enum, default_value_t = FailOn::Error)]
        fail_on: FailOn,
        /// Use this settings file instead of discovering foldcheck.toml.
        #[arg(long, value_name = "FILE")]
        settings: Option<PathBuf>,
    },
    /// Show one channel's chain: clock path, rates, attenuation and phase where it matters.
    Inspect {
        /// The rig file, or a catalog (the rig that includes it and has the channel).
        file: PathBuf,
        /// The channel's name; without it, every channel with its final rate, band,
        /// ratio and verdict.
        channel: Option<String>,
        /// Draw the channel's spectrum to this SVG file.
        #[arg(long, value_name = "FILE.svg")]
        plot: Option<PathBuf>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = InspectFormat::Human)]
        format: InspectFormat,
        /// Use this settings file instead of discovering foldcheck.toml.
        #[arg(long, value_name = "FILE")]
        settings: Option<PathBuf>,
    },
    /// Write a campaign's channel sheet: one self-contained HTML page, or a CSV or JSON
    /// table with one row per channel.
    Report {
        /// Rig files and directories, as for `check` (default: the current directory).
        paths: Vec<PathBuf>,
        /// Write to this file instead of stdout.
        #[arg(long, short = 'o', value_name = "FILE")]
        output: Option<PathBuf>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = ReportFormat::Html)]
        format: ReportFormat,
        /// Which channels get their spectrum drawn in the HTML page.
        #[arg(long, value_enum, default_value_t = PlotChoice::Failing)]
        plots: PlotChoice,
        /// Use this settings file instead of discovering foldcheck.toml.
        #[arg(long, value_name = "FILE")]
        settings: Option<PathBuf>,
    },
    /// List the rules, or show one rule's full explanation.
    Rules {
        /// A rule name.
        rule: Option<String>,
    },
    /// Serve the Language Server Protocol on stdin/stdout, for editors (rig files and
    /// catalogs: diagnostics as you type, hover, go to definition, completion, quick fixes).
    Lsp,
    /// Print the JSON Schema of the rig format.
    Schema {
        /// Print the schema of foldcheck.toml instead.
        #[arg(long, conflicts_with = "output")]
        settings: bool,
        /// Print the schema of `check --format json` output instead (docs/output.md).
        #[arg(long)]
        output: bool,
    },
    /// Print a shell completion script (see the README for where to put it).
    Completions {
        /// The shell.
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
    /// Print the manual page (roff), e.g. `foldcheck man > foldcheck.1`.
    Man,
}
