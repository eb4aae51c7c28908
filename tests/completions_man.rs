//! `foldcheck completions SHELL` and `foldcheck man`: the scripts parse in their shells
//! (when installed) and name every subcommand; the manual page renders with groff (when
//! installed) without warnings, else passes a structural check of its roff requests.

mod common;

use std::io::Write;
use std::process::{Command, Stdio};

const SUBCOMMANDS: [&str; 6] = ["check", "diff", "inspect", "rules", "schema", "completions"];

fn run(args: &[&str]) -> (String, i32) {
    let out = common::run_in(std::path::Path::new("."), args);
    (
        String::from_utf8(out.stdout).expect("UTF-8 output"),
        out.status.code().expect("exit status"),
    )
}

fn installed(program: &str) -> bool {
    Command::new(program)
        .arg("--version")
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .status()
        .is_ok()
}

/// `shell -n` (parse without running) on the script; its stderr on failure.
fn parses(shell: &str, script: &str) -> Result<(), String> {
    let mut f = tempfile::NamedTempFile::new().unwrap();
    f.write_all(script.as_bytes()).unwrap();
    let out = Command::new(shell)
        .arg("-n")
        .arg(f.path())
        .output()
        .expect("the shell runs");
    if out.status.success() && out.stderr.is_empty() {
        Ok(())
    } else {
        Err(String::from_utf8_lossy(&out.stderr).into_owned())
    }
}

#[test]
fn every_shell_gets_a_script_that_names_the_subcommands() {
    for shell in ["bash", "zsh", "fish", "powershell", "elvish"] {
        let (script, code) = run(&["completions", shell]);
        assert_eq!(code, 0, "{shell}");
        for sub in SUBCOMMANDS {
            assert!(script.contains(sub), "{shell} script lacks `{sub}`");
        }
        assert!(script.contains("fail-on"), "{shell}: options too");
    }
    let (_, code) = run(&["completions", "tcsh"]);
    assert_eq!(code, 2, "an unknown shell is a usage error");
}

#[test]
fn the_bash_script_parses_and_completes_subcommands() {
    let (script, _) = run(&["completions", "bash"]);
    assert!(installed("bash"), "bash is needed for this test");
    parses("bash", &script).unwrap();
    // The check can fail: a truncated script does not parse.
    let cut = &script[..script.len() / 2];
    assert!(
        parses("bash", cut).is_err(),
        "bash -n rejects a broken script"
    );
    // Source it and ask for the completions of `foldcheck ch`.
    let probe = format!(
        "{script}\nCOMP_WORDS=(foldcheck ch); COMP_CWORD=1; COMP_LINE='foldcheck ch'; COMP_POINT=12\n_foldcheck foldcheck ch foldcheck\nprintf '%s\\n' \"${{COMPREPLY[@]}}\"\n"
    );
    let out = Command::new("bash").arg("-c").arg(&probe).output().unwrap();
    let words = String::from_utf8_lossy(&out.stdout);
    assert_eq!(
        words.trim(),
        "check",
        "stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
}

#[test]
fn zsh_and_fish_scripts_parse_when_those_shells_are_installed() {
    for shell in ["zsh", "fish"] {
        if !installed(shell) {
            eprintln!("{shell} is not installed: its script is checked for subcommands only");
            continue;
        }
        let (script, _) = run(&["completions", shell]);
        parses(shell, &script).unwrap();
    }
}

#[test]
fn the_manual_page_renders_and_covers_every_subcommand() {
    let (page, code) = run(&["man"]);
    assert_eq!(code, 0);
    assert!(page.contains(".TH foldcheck 1"), "a title line");
    for section in [".SH NAME", ".SH SYNOPSIS", ".SH DESCRIPTION", ".SH OPTIONS"] {
        assert!(page.contains(section), "{section}");
    }
    for sub in SUBCOMMANDS {
        let heading = format!(".SH \"FOLDCHECK {}\"", sub.to_uppercase());
        assert!(page.contains(&heading), "{heading}");
    }
    // Every line is a request (`.XX`), an escape-led line or text; no stray NUL.
    assert!(!page.contains('\0'));
    for line in page.lines() {
        if let Some(req) = line.strip_prefix('.') {
            let name: String = req.chars().take_while(|c| !c.is_whitespace()).collect();
            assert!(
                [
                    "TH", "SH", "SS", "TP", "PP", "IP", "RS", "RE", "br", "sp", "ie", "el", "ds",
                    "B", "I", "nf", "fi", "EX", "EE"
                ]
                .contains(&name.as_str())
                    || name.is_empty(),
                "unknown roff request `.{name}` in: {line}"
            );
        }
    }
    if installed("groff") {
        let mut child = Command::new("groff")
            .args(["-man", "-Tutf8", "-ww"])
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .unwrap();
        child
            .stdin
            .take()
            .unwrap()
            .write_all(page.as_bytes())
            .unwrap();
        let out = child.wait_with_output().unwrap();
        assert!(out.status.success());
        assert_eq!(String::from_utf8_lossy(&out.stderr), "", "groff warnings");
        // grotty marks bold and underline by overstriking (`X\bX`): keep the last char.
        let mut text = String::new();
        for c in String::from_utf8_lossy(&out.stdout).chars() {
            if c == '\u{8}' {
                text.pop();
            } else {
                text.push(c);
            }
        }
        assert!(text.contains("FOLDCHECK INSPECT"), "rendered headings");
        assert!(text.contains("--fail-on"), "rendered options");
    } else {
        eprintln!("groff is not installed: the manual page was checked structurally only");
    }
}
