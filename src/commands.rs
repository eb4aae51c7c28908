//! The subcommands: each returns the text for stdout and the exit status, or a fatal
//! message for stderr (exit status 2).

use crate::cli::{CheckFormat, ColorChoice, Command, FailOn};
use foldcheck::campaign::{self, Fatal, Options};
use foldcheck::finding::Severity;
use foldcheck::report::{self, Counts, human, json};
use foldcheck::rules::RULES;
use std::io::IsTerminal;
use std::time::Instant;

type Outcome = Result<(String, u8), String>;

pub fn run(command: Command) -> Outcome {
    match command {
        Command::Check {
            paths,
            format,
            fail_on,
            color,
            settings,
            max_file_size,
        } => {
            let start = Instant::now();
            let paths = if paths.is_empty() {
                vec![".".into()]
            } else {
                paths
            };
            let opts = Options {
                settings,
                max_file_bytes: max_file_size.unwrap_or(campaign::DEFAULT_MAX_FILE_BYTES),
                keep_rigs: false,
                progress: std::io::stderr().is_terminal(),
                ..Options::default()
            };
            let out = campaign::run(&paths, &opts).map_err(|e| fatal(&e))?;
            if out.files == 0 {
                // Not an error (an empty campaign is clean), but worth saying: a wrong
                // directory would otherwise look like a clean one.
                eprintln!(
                    "foldcheck: no rig files (*.rig.yaml, *.rig.yml) found in the given paths"
                );
            }
            let text = match format {
                CheckFormat::Human => human::render(
                    &out.sources,
                    &out.findings,
                    out.files,
                    out.channels,
                    start.elapsed(),
                    color_for(color),
                ),
                CheckFormat::Json => {
                    json::render(&out.sources, &out.findings, out.files, out.channels)
                }
                CheckFormat::Sarif => report::sarif::render(&out.sources, &out.findings),
            };
            let code = u8::from(Counts::of(&out.findings).reaches(severity(fail_on)));
            Ok((text, code))
        }
        Command::Lsp => foldcheck::lsp::run_stdio()
            .map(|()| (String::new(), 0))
            .map_err(|e| format!("foldcheck lsp: {e}")),
        Command::Rules { rule } => match rule {
            None => {
                let mut s = String::new();
                let width = RULES.iter().map(|r| r.name.len()).max().unwrap_or(0);
                for r in RULES {
                    s.push_str(&format!(
                        "{:width$}  {:7}  {}\n",
                        r.name,
                        r.severity.as_str(),
                        r.summary
                    ));
                }
                Ok((s, 0))
            }
            Some(name) => match foldcheck::rules::rule(&name) {
                Some(r) => Ok((foldcheck::rules::describe(r), 0)),
                None => {
                    let hint = foldcheck::resolve::closest(&name, RULES.iter().map(|r| r.name))
                        .map(|b| format!("; did you mean `{b}`?"))
                        .unwrap_or_default();
                    Err(format!("foldcheck: no rule named `{name}`{hint}"))
                }
            },
        },
        Command::Schema { settings } => {
            let s = if settings {
                foldcheck::settings::SETTINGS_SCHEMA
            } else {
                foldcheck::model::schema::RIG_SCHEMA
            };
            Ok((s.to_string(), 0))
        }
        Command::Inspect {
            file,
            channel,
            plot,
            format,
            settings,
        } => foldcheck::inspect::run(
            &file,
            &channel,
            plot.as_deref(),
            format == crate::cli::InspectFormat::Json,
            settings,
        )
        .map(|t| (t, 0))
        .map_err(|e| format!("foldcheck: {e}")),
        Command::Diff {
            paths,
            rev,
            format,
            fail_on,
            settings,
        } => {
            let fmt = match format {
                crate::cli::DiffFormat::Human => foldcheck::diff::Format::Human,
                crate::cli::DiffFormat::Json => foldcheck::diff::Format::Json,
                crate::cli::DiffFormat::Markdown => foldcheck::diff::Format::Markdown,
            };
            foldcheck::diff::run(&paths, rev.as_deref(), fmt, severity(fail_on), settings)
                .map_err(|e| format!("foldcheck: {e}"))
        }
    }
}

fn severity(f: FailOn) -> Severity {
    match f {
        FailOn::Error => Severity::Error,
        FailOn::Warning => Severity::Warning,
        FailOn::Note => Severity::Note,
    }
}

fn color_for(c: ColorChoice) -> human::Color {
    match c {
        ColorChoice::Always => human::Color::Always,
        ColorChoice::Never => human::Color::Never,
        ColorChoice::Auto => {
            let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
            if !no_color && std::io::stdout().is_terminal() {
                human::Color::Always
            } else {
                human::Color::Never
            }
        }
    }
}

/// A fatal error for stderr; a settings error shows its span.
fn fatal(e: &Fatal) -> String {
    match e {
        Fatal::Settings(s) => {
            let mut out = format!("foldcheck: {e}\n");
            if let Some(span) = &s.span {
                let idx = foldcheck::source::LineIndex::new(&s.text);
                let (line, col) = idx.line_col(&s.text, span.start);
                let text_line = s.text.lines().nth(line - 1).unwrap_or("");
                out.push_str(&format!(
                    "  --> {}:{line}:{col}\n   |\n   | {text_line}\n   | {}^\n",
                    s.path.display(),
                    " ".repeat(col - 1)
                ));
            }
            out.trim_end().to_string()
        }
        other => format!("foldcheck: {other}"),
    }
}
