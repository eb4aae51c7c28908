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
//! - `round-trip`: the release binary `foldcheck lsp` over stdio, from sending
//!   `didSave` to receiving its `publishDiagnostics` (the whole server: analysis,
//!   diagnostics with related information, JSON over the pipe; no debounce on save).
//!
//! Each is timed `REPEATS` times (default 40) after two warm-up runs; the median and the
//! fastest are printed, and the ratio of the medians to `check-core`.

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

fn time(repeats: usize, mut f: impl FnMut()) -> (Duration, Duration) {
    f();
    f();
    let mut v = Vec::with_capacity(repeats);
    for _ in 0..repeats {
        let t = Instant::now();
        f();
        v.push(t.elapsed());
    }
    median(v)
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

    let check = time(repeats, || {
        let out = campaign::run(std::slice::from_ref(&path), &Options::default()).unwrap();
        std::hint::black_box(out.findings.len());
    });

    let mut overlay = Overlay::new();
    overlay.insert(path.clone(), text.clone());
    let overlay = Arc::new(overlay);
    let mut findings = 0;
    let analyse = time(repeats, || {
        let snap = snapshot::analyse(&path, overlay.clone());
        findings = snap.outcome.findings.len();
        std::hint::black_box(snap.occurrences.len());
    });

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
    let round_trip = time(repeats, || {
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
        "rig: {rig} ({channels} channels, {findings} findings, {diagnostics} diagnostics), {repeats} runs each"
    );
    println!("| step | median | fastest | ratio to check-core |");
    println!("|---|---|---|---|");
    for (name, (med, min)) in [
        ("check-core", check),
        ("analyse", analyse),
        ("round-trip", round_trip),
    ] {
        println!(
            "| {name} | {:.2} ms | {:.2} ms | {:.2} |",
            ms(med),
            ms(min),
            ms(med) / ms(check.0)
        );
    }
}
