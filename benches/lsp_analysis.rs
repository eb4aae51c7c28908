//! How long the editor server takes to analyse an open rig (run by bench/lsp.sh).
//!
//!     cargo bench --bench lsp_analysis -- RIG [REPEATS]
//!
//! Side by side in one run, on the same rig file (its catalog read from disk):
//! - `check-core`: `campaign::run` on the file, as `foldcheck check` does before it
//!   renders (no rigs kept, no editor texts);
//! - `analyse`: what the server runs on each change, `lsp::snapshot::analyse` with the
//!   rig's text held in memory (the run, the resolved rig kept for navigation, the index
//!   of names);
//! - `analyse + verify all`: that analysis followed by verifying every proposed fix of
//!   the document, which the server did on every change before fixes were verified
//!   lazily (it now verifies a range when a code action asks for it);
//! - `round-trip`: the release binary `foldcheck lsp` over stdio, from sending
//!   `didSave` to receiving its `publishDiagnostics` (the whole server: analysis,
//!   diagnostics with related information, JSON over the pipe; no debounce on save);
//! - `verify one code action's range`: what a code action on one finding adds.
//!
//! It also prints how many findings' help lines differ from `check`'s before the fixes
//! are verified (proposals that verification would drop) and after (must be 0).
//!
//! Each is timed `REPEATS` times (default 40) after two warm-up runs; the median and the
//! fastest are printed, the CPU time per run (all threads, from `/proc`: of this process,
//! or of the server for the round trip; it does not grow when the machine is busy), the
//! machine's load average, and the ratio of the medians to `check-core`.

use foldcheck::campaign::{self, Options, Overlay};
use foldcheck::lsp::snapshot;
use std::io::{BufRead, BufReader, Write};
use std::path::PathBuf;
use std::process::{Command, Stdio};
use std::sync::Arc;
use std::time::{Duration, Instant};

fn median(mut v: Vec<Duration>) -> (Duration, Duration) {
    v.sort();
    (v[v.len() / 2], v[0])
}

/// CPU time (user + system, all threads) a process has used so far, in milliseconds,
/// from `/proc/<pid>/stat` (Linux; clock ticks of 10 ms, the usual `CLK_TCK` of 100).
/// `None` where there is no such file.
fn cpu_ms(pid: &str) -> Option<f64> {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).ok()?;
    // Fields after the command name (which may hold spaces) start at field 3.
    let rest = &stat[stat.rfind(')')? + 2..];
    let f: Vec<&str> = rest.split(' ').collect();
    let ticks: f64 = f.get(11)?.parse::<f64>().ok()? + f.get(12)?.parse::<f64>().ok()?;
    Some(ticks * 10.0)
}

/// Median and fastest wall time of `repeats` runs of `f` (after two warm-up runs), and
/// the mean CPU time per run that process `pid` used meanwhile (a load-independent
/// figure on a shared machine; `NaN` when it cannot be read).
fn time(repeats: usize, pid: &str, mut f: impl FnMut()) -> (Duration, Duration, f64) {
    f();
    f();
    let mut v = Vec::with_capacity(repeats);
    let cpu0 = cpu_ms(pid);
    for _ in 0..repeats {
        let t = Instant::now();
        f();
        v.push(t.elapsed());
    }
    let cpu = match (cpu0, cpu_ms(pid)) {
        (Some(a), Some(b)) => (b - a) / repeats as f64,
        _ => f64::NAN,
    };
    let (med, min) = median(v);
    (med, min, cpu)
}

fn send(stdin: &mut impl Write, v: serde_json::Value) {
    let body = v.to_string();
    write!(stdin, "Content-Length: {}\r\n\r\n{body}", body.len()).unwrap();
    stdin.flush().unwrap();
}

fn recv(r: &mut impl BufRead) -> serde_json::Value {
    let mut len = 0;
    loop {
        let mut line = String::new();
        assert!(r.read_line(&mut line).unwrap() > 0, "the server closed");
        let line = line.trim_end();
        if line.is_empty() {
            break;
        }
        if let Some(n) = line.strip_prefix("Content-Length: ") {
            len = n.parse().unwrap();
        }
    }
    let mut body = vec![0; len];
    r.read_exact(&mut body).unwrap();
    serde_json::from_slice(&body).unwrap()
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| a != "--bench")
        .collect();
    let Some(rig) = args.first() else {
        // `cargo test --all-targets` runs every bench without arguments: say how to use it
        // and pass, as the other benches do.
        eprintln!("usage: lsp_analysis RIG [REPEATS]");
        return;
    };
    let repeats: usize = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(40);
    let path = campaign::absolute(&PathBuf::from(rig));
    let text = std::fs::read_to_string(&path).expect("the rig is readable");
    let channels = text.matches("\n  - name:").count();

    let check = time(repeats, "self", || {
        let out = campaign::run(std::slice::from_ref(&path), &Options::default()).unwrap();
        std::hint::black_box(out.findings.len());
    });

    let mut overlay = Overlay::new();
    overlay.insert(path.clone(), text.clone());
    let overlay = Arc::new(overlay);
    let mut findings = 0;
    let analyse = time(repeats, "self", || {
        let snap = snapshot::analyse(&path, overlay.clone());
        findings = snap.outcome.findings.len();
        std::hint::black_box(snap.occurrences.len());
    });
    // What the server ran on each change before fixes were verified lazily: the same
    // analysis, then every proposed fix of the document verified.
    let analyse_verify = time(repeats, "self", || {
        let mut snap = snapshot::analyse(&path, overlay.clone());
        snap.verify_range(0, usize::MAX);
        std::hint::black_box(snap.occurrences.len());
    });
    // A code action on the first finding with a proposed fix: verifying that range only
    // (the analysis before it is not timed).
    let mut snap = snapshot::analyse(&path, overlay.clone());
    let first = snap
        .outcome
        .findings
        .iter()
        .find(|f| f.fix.is_some())
        .map(|f| (f.primary.span.start as usize, f.primary.span.end as usize));
    let mut one_action = Vec::with_capacity(repeats);
    if let Some((a, b)) = first {
        for _ in 0..repeats + 2 {
            let mut s = snapshot::analyse(&path, overlay.clone());
            let t = Instant::now();
            s.verify_range(a, b);
            one_action.push(t.elapsed());
        }
        one_action.drain(..2);
    }
    // The diagnostics must not depend on when fixes are verified: once every fix of the
    // document is verified, each finding's help equals `check`'s.
    let checked = campaign::run(std::slice::from_ref(&path), &Options::default()).unwrap();
    let proposed_help: Vec<Option<String>> = snap
        .outcome
        .findings
        .iter()
        .map(|f| f.help.clone())
        .collect();
    snap.verify_range(0, usize::MAX);
    let differ_before = proposed_help
        .iter()
        .zip(&checked.findings)
        .filter(|(h, f)| **h != f.help)
        .count();
    let differ_after = snap
        .outcome
        .findings
        .iter()
        .zip(&checked.findings)
        .filter(|(a, f)| a.help != f.help || a.message != f.message || a.rule != f.rule)
        .count();
    let with_fix = checked.findings.iter().filter(|f| f.fix.is_some()).count();

    let mut child = Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .arg("lsp")
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .spawn()
        .expect("the server starts");
    let mut stdin = child.stdin.take().unwrap();
    let mut stdout = BufReader::new(child.stdout.take().unwrap());
    send(
        &mut stdin,
        serde_json::json!({"jsonrpc": "2.0", "id": 1, "method": "initialize",
                           "params": {"capabilities": {}}}),
    );
    recv(&mut stdout);
    send(
        &mut stdin,
        serde_json::json!({"jsonrpc": "2.0", "method": "initialized", "params": {}}),
    );
    let uri = format!("file://{}", path.display());
    send(
        &mut stdin,
        serde_json::json!({"jsonrpc": "2.0", "method": "textDocument/didOpen", "params": {
            "textDocument": {"uri": uri, "languageId": "yaml", "version": 1, "text": text}}}),
    );
    let published = recv(&mut stdout);
    let diagnostics = published["params"]["diagnostics"]
        .as_array()
        .map_or(0, Vec::len);
    let child_pid = child.id().to_string();
    let round_trip = time(repeats, &child_pid, || {
        send(
            &mut stdin,
            serde_json::json!({"jsonrpc": "2.0", "method": "textDocument/didSave",
                               "params": {"textDocument": {"uri": uri}}}),
        );
        let m = recv(&mut stdout);
        assert_eq!(m["method"], "textDocument/publishDiagnostics");
    });
    send(
        &mut stdin,
        serde_json::json!({"jsonrpc": "2.0", "id": 2, "method": "shutdown"}),
    );
    recv(&mut stdout);
    send(
        &mut stdin,
        serde_json::json!({"jsonrpc": "2.0", "method": "exit"}),
    );
    drop(stdin);
    let _ = child.wait();

    let ms = |d: Duration| d.as_secs_f64() * 1e3;
    println!(
        "rig: {rig} ({channels} channels, {findings} findings, {diagnostics} diagnostics, \
         {with_fix} verified fixes), {repeats} runs each"
    );
    println!(
        "help lines that differ from check's: {differ_before} before verification (proposals \
         that fail it), {differ_after} after verifying the document's fixes (must be 0)"
    );
    println!(
        "load average: {}",
        std::fs::read_to_string("/proc/loadavg")
            .unwrap_or_default()
            .trim()
    );
    println!("| step | median | fastest | CPU per run | ratio to check-core (median) |");
    println!("|---|---|---|---|---|");
    let mut steps = vec![
        ("check-core", check),
        ("analyse", analyse),
        ("analyse + verify all", analyse_verify),
        ("round-trip", round_trip),
    ];
    if !one_action.is_empty() {
        let (med, min) = median(one_action);
        steps.push(("verify one code action's range", (med, min, f64::NAN)));
    }
    for (name, (med, min, cpu)) in steps {
        let cpu = if cpu.is_nan() {
            "–".to_string()
        } else {
            format!("{cpu:.1} ms")
        };
        println!(
            "| {name} | {:.2} ms | {:.2} ms | {cpu} | {:.2} |",
            ms(med),
            ms(min),
            ms(med) / ms(check.0)
        );
    }
}
