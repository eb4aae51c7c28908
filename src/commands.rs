//! The subcommands: each returns the text for stdout and the exit status, or a fatal
//! message for stderr (exit status 2).

use crate::cli::{CheckFormat, ColorChoice, Command, FailOn};
use foldcheck::campaign::{self, Fatal, Options};
use foldcheck::finding::Severity;
use foldcheck::fix::apply as fix;
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
                progress: std::io::stderr().is_terminal(),
                ..Options::default()
            };
            // Each rig's findings are rendered as soon as the rig is finished: the run
            // keeps their bytes, not the findings.
            let base = report::sarif::uri_base();
            let human_color = color_for(color);
            let render = |sources: &foldcheck::source::Sources,
                          f: &foldcheck::finding::Finding|
             -> Option<Vec<u8>> {
                match format {
                    CheckFormat::Human => {
                        human::piece(sources, f, human_color).map(String::into_bytes)
                    }
                    CheckFormat::Json => Some(json::finding_text(sources, f)),
                    CheckFormat::Sarif => Some(report::sarif::result_text(sources, &base, f)),
                }
            };
            let out = campaign::run_rendered(&paths, &opts, &render)
                .map_err(|e| fatal(&e, color_for(color)))?;
            if out.files == 0 {
                // Not an error (an empty campaign is clean), but worth saying: a wrong
                // directory would otherwise look like a clean one.
                eprintln!(
                    "foldcheck: no rig files (*.rig.yaml, *.rig.yml) found in the given paths"
                );
            }
            if format == CheckFormat::Human {
                for n in &out.notes {
                    eprintln!("foldcheck: note: {n}");
                }
                if out.files > 0 {
                    root_note(&out.roots_without_settings);
                }
            }
            // Streamed to stdout piece by piece: the report is never held whole.
            let written = {
                use std::io::Write as _;
                let mut w = std::io::BufWriter::new(std::io::stdout().lock());
                match format {
                    CheckFormat::Human => {
                        out.pieces()
                            .try_for_each(|p| w.write_all(&p?))
                            .and_then(|()| {
                                w.write_all(
                                    human::summary_of(
                                        out.counts,
                                        out.files,
                                        out.channels,
                                        start.elapsed(),
                                    )
                                    .as_bytes(),
                                )
                            })
                    }
                    CheckFormat::Json => json::write_pieces(
                        &mut w,
                        out.pieces(),
                        out.files,
                        out.channels,
                        out.counts,
                    ),
                    CheckFormat::Sarif => report::sarif::write_pieces(&mut w, out.pieces(), &base),
                }
                .and_then(|()| w.flush())
            };
            match written {
                Ok(()) => {}
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => {}
                Err(e) => return Err(format!("foldcheck: cannot write the output: {e}")),
            }
            let text = String::new();
            let code = u8::from(out.counts.reaches(severity(fail_on)));
            Ok((text, code))
        }
        // The protocol's exit status: 0 after `shutdown` then `exit`, 1 after `exit` alone.
        Command::Lsp => foldcheck::lsp::run_stdio()
            .map(|clean| (String::new(), u8::from(!clean)))
            .map_err(|e| format!("foldcheck lsp: {e}")),
        Command::Fix {
            paths,
            rules,
            dry_run,
            include_catalogs,
            format,
            fail_on,
            color,
            settings,
        } => {
            for r in &rules {
                if foldcheck::rules::rule(r).is_none() {
                    return Err(format!("foldcheck: no rule named `{r}`"));
                }
            }
            let paths = if paths.is_empty() {
                vec![".".into()]
            } else {
                paths
            };
            let opts = Options {
                settings,
                ..Options::default()
            };
            let choice = fix::Choice {
                rules,
                include_catalogs,
            };
            let plan =
                fix::plan(&paths, &opts, &choice).map_err(|e| fatal(&e, human::Color::Never))?;
            let (written, refused) = if dry_run {
                (Vec::new(), Vec::new())
            } else {
                fix::write(&plan)
            };
            for r in &refused {
                eprintln!("foldcheck: {r}");
            }
            // Lint the result: the files as written, or (dry run) the planned texts.
            let after_opts = if dry_run {
                let overlay: campaign::Overlay = plan
                    .changes
                    .iter()
                    .map(|c| (c.target.clone(), c.after.clone()))
                    .collect();
                Options {
                    overlay: Some(std::sync::Arc::new(overlay)),
                    ..opts.clone()
                }
            } else {
                opts.clone()
            };
            let start = Instant::now();
            let out =
                campaign::run(&paths, &after_opts).map_err(|e| fatal(&e, human::Color::Never))?;
            let code = u8::from(Counts::of(&out.findings).reaches(severity(fail_on)));
            let text = match format {
                crate::cli::FixFormat::Json => {
                    let report: serde_json::Value = serde_json::from_str(&json::render(
                        &out.sources,
                        &out.findings,
                        out.files,
                        out.channels,
                    ))
                    .expect("our own JSON parses");
                    let v = serde_json::json!({
                        "version": 1,
                        "dry_run": dry_run,
                        "fixes": plan.applied.iter().map(fix::Reported::to_json).collect::<Vec<_>>(),
                        "conflicts": plan.conflicts.iter().map(|c| c.iter().map(fix::Reported::to_json).collect::<Vec<_>>()).collect::<Vec<_>>(),
                        "skipped_catalog_fixes": plan.skipped_catalog.iter().map(fix::Reported::to_json).collect::<Vec<_>>(),
                        "files": plan.changes.iter().map(|c| serde_json::json!({
                            "file": c.display,
                            "written": written.contains(&c.display),
                            "refused": c.refused,
                        })).collect::<Vec<_>>(),
                        "remaining": report["findings"],
                        "summary": report["summary"],
                    });
                    let mut s = serde_json::to_string_pretty(&v).expect("JSON values serialise");
                    s.push('\n');
                    s
                }
                crate::cli::FixFormat::Human => {
                    let mut s = String::new();
                    if dry_run {
                        s.push_str(&fix::unified_diff(&plan));
                    } else {
                        for r in &plan.applied {
                            s.push_str(&format!("fixed {}\n", r.line_text()));
                        }
                    }
                    for c in &plan.conflicts {
                        s.push_str("not fixed: these fixes edit the same text differently:\n");
                        for r in c {
                            s.push_str(&format!("  {}\n", r.line_text()));
                        }
                    }
                    for r in &plan.skipped_catalog {
                        s.push_str(&format!(
                            "not fixed (edits a shared catalog; pass --include-catalogs): {}\n",
                            r.line_text()
                        ));
                    }
                    if dry_run {
                        eprint!("{}", summary_line(&plan, true));
                    } else {
                        s.push_str(&summary_line(&plan, false));
                        s.push_str(&human::render(
                            &out.sources,
                            &out.findings,
                            out.files,
                            out.channels,
                            start.elapsed(),
                            color_for(color),
                        ));
                    }
                    s
                }
            };
            Ok((text, code))
        }
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
                    let hint = foldcheck::words::closest(&name, RULES.iter().map(|r| r.name))
                        .map(|b| format!("; did you mean `{b}`?"))
                        .unwrap_or_default();
                    Err(format!("foldcheck: no rule named `{name}`{hint}"))
                }
            },
        },
        Command::Completions { shell } => {
            let mut cmd = <crate::cli::Cli as clap::CommandFactory>::command();
            let mut buf = Vec::new();
            clap_complete::generate(shell, &mut cmd, "foldcheck", &mut buf);
            String::from_utf8(buf)
                .map(|s| (s, 0))
                .map_err(|e| format!("foldcheck: the completion script is not UTF-8: {e}"))
        }
        Command::Man => man_page()
            .map(|s| (s, 0))
            .map_err(|e| format!("foldcheck: cannot render the manual page: {e}")),
        Command::Schema { settings, output } => {
            let s = if settings {
                foldcheck::settings::SETTINGS_SCHEMA
            } else if output {
                foldcheck::report::json::OUTPUT_SCHEMA
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
            channel.as_deref(),
            plot.as_deref(),
            format == crate::cli::InspectFormat::Json,
            settings,
        )
        .map(|t| (t, 0))
        .map_err(|e| format!("foldcheck: {e}")),
        Command::Report {
            paths,
            output,
            format,
            plots,
            settings,
        } => {
            use crate::cli::{PlotChoice, ReportFormat};
            use foldcheck::sheet::{self, Format, Plots};
            let paths = if paths.is_empty() {
                vec![".".into()]
            } else {
                paths
            };
            let format = match format {
                ReportFormat::Html => Format::Html,
                ReportFormat::Csv => Format::Csv,
                ReportFormat::Json => Format::Json,
            };
            let plots = match plots {
                PlotChoice::Failing => Plots::Failing,
                PlotChoice::All => Plots::All,
                PlotChoice::None => Plots::None,
            };
            sheet::run(&paths, format, output.as_deref(), plots, settings)
                .map(|t| (t, 0))
                .map_err(|e| format!("foldcheck: {e}"))
        }
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

/// "3 fixes applied in 2 files" (or "would be applied").
fn summary_line(plan: &fix::Plan, dry_run: bool) -> String {
    let n = plan.applied.len();
    let files = plan.changes.iter().filter(|c| c.refused.is_none()).count();
    format!(
        "{n} fix{} {} in {files} file{}\n",
        if n == 1 { "" } else { "es" },
        if dry_run {
            "would be applied"
        } else {
            "applied"
        },
        if files == 1 { "" } else { "s" }
    )
}

/// Say which campaign root was used when no foldcheck.toml chose it (docs/format.md,
/// "Campaign root"): on stderr, before the report.
fn root_note(roots: &[foldcheck::root::CampaignRoot]) {
    let cwd = campaign::absolute(std::path::Path::new("."));
    for r in roots.iter().take(3) {
        eprintln!(
            "foldcheck: note: no foldcheck.toml found; campaign root `{}` ({})",
            campaign::relative_path(&cwd, &r.dir),
            r.describe()
        );
    }
    if roots.len() > 3 {
        eprintln!(
            "foldcheck: note: and {} more campaign roots without foldcheck.toml",
            roots.len() - 3
        );
    }
}

/// One manual page for the whole tool: name, synopsis, description and options, then a
/// section per subcommand with its synopsis and options (no separate pages to install).
fn man_page() -> Result<String, std::io::Error> {
    let cmd = <crate::cli::Cli as clap::CommandFactory>::command();
    let man = clap_mangen::Man::new(cmd.clone());
    let mut buf = Vec::new();
    man.render_title(&mut buf)?;
    man.render_name_section(&mut buf)?;
    man.render_synopsis_section(&mut buf)?;
    man.render_description_section(&mut buf)?;
    man.render_options_section(&mut buf)?;
    for sub in cmd.get_subcommands().filter(|s| !s.is_hide_set()) {
        let name = sub.get_name().to_string();
        let about = sub.get_about().map(|a| a.to_string()).unwrap_or_default();
        let sub = sub.clone().bin_name(format!("foldcheck {name}"));
        let mut part = Vec::new();
        let m = clap_mangen::Man::new(sub);
        m.render_synopsis_section(&mut part)?;
        m.render_options_section(&mut part)?;
        let part = String::from_utf8_lossy(&part)
            .replace(".SH SYNOPSIS", ".SS Synopsis")
            .replace(".SH OPTIONS", ".SS Options");
        buf.extend_from_slice(
            format!(
                ".SH \"FOLDCHECK {}\"\n{}\n",
                name.to_uppercase(),
                roff_escape(&about)
            )
            .as_bytes(),
        );
        buf.extend_from_slice(part.as_bytes());
    }
    man.render_version_section(&mut buf)?;
    String::from_utf8(buf).map_err(std::io::Error::other)
}

/// Text safe for a roff line: backslashes and hyphens escaped, no leading dot or quote.
fn roff_escape(text: &str) -> String {
    let t = text.replace('\\', "\\e").replace('-', "\\-");
    if t.starts_with('.') || t.starts_with('\'') {
        format!("\\&{t}")
    } else {
        t
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

/// A fatal error for stderr (see [`foldcheck::report::fatal`]).
fn fatal(e: &Fatal, color: human::Color) -> String {
    format!("foldcheck: {}", foldcheck::report::fatal::render(e, color))
}
