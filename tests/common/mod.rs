//! Helpers shared by the black-box tests: run the real binary and read its JSON.
#![allow(dead_code)]

use serde_json::Value;
use std::path::Path;
use std::process::{Command, Output};

/// Run `foldcheck` with arguments in a working directory.
pub fn run_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_foldcheck"))
        .args(args)
        .current_dir(dir)
        .env_remove("NO_COLOR")
        .output()
        .expect("the binary runs")
}

/// Run `foldcheck check --format json` on paths and parse the report strictly.
pub fn check_json(dir: &Path, paths: &[&str]) -> (Value, i32) {
    let mut args = vec!["check", "--format", "json"];
    args.extend_from_slice(paths);
    let out = run_in(dir, &args);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        !stderr.contains("panicked"),
        "the binary panicked: {stderr}"
    );
    let v: Value = serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "stdout is not JSON ({e}): {}\nstderr: {stderr}",
            String::from_utf8_lossy(&out.stdout)
        )
    });
    (v, out.status.code().expect("exited normally"))
}

/// The rule names of a JSON report's findings, sorted and deduplicated.
pub fn rules_of(report: &Value) -> Vec<String> {
    let mut v: Vec<String> = report["findings"]
        .as_array()
        .expect("findings array")
        .iter()
        .map(|f| f["rule"].as_str().expect("rule").to_string())
        .collect();
    v.sort();
    v.dedup();
    v
}

/// One finding in the plain expected-file form:
/// `severity rule line:col-line:col message`, then `  help: …` when there is help.
pub fn plain(f: &Value) -> String {
    format!(
        "{} {} {}:{}-{}:{} {}{}{}",
        f["severity"].as_str().unwrap(),
        f["rule"].as_str().unwrap(),
        f["line"],
        f["column"],
        f["end_line"],
        f["end_column"],
        f["message"].as_str().unwrap(),
        f["suppressed"]
            .as_str()
            .map(|r| format!(" [suppressed: {r}]"))
            .unwrap_or_default(),
        f["help"]
            .as_str()
            .map(|h| format!("\n  help: {h}"))
            .unwrap_or_default()
    )
}

/// A language client for black-box tests of `foldcheck lsp`: runs the real binary,
/// frames JSON-RPC messages with `Content-Length` headers, and reads them back on a
/// thread so that every wait has a timeout (a hung server fails the test, never hangs it).
pub struct LspClient {
    child: std::process::Child,
    stdin: Option<std::process::ChildStdin>,
    rx: std::sync::mpsc::Receiver<Value>,
    stash: Vec<Value>,
    next_id: i64,
}

impl LspClient {
    /// Start `foldcheck lsp` in `dir`.
    pub fn start(dir: &Path) -> LspClient {
        use std::io::{BufRead, Read};
        let mut child = Command::new(env!("CARGO_BIN_EXE_foldcheck"))
            .arg("lsp")
            .current_dir(dir)
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::inherit())
            .spawn()
            .expect("the binary starts");
        let stdout = child.stdout.take().unwrap();
        let (tx, rx) = std::sync::mpsc::channel();
        std::thread::spawn(move || {
            let mut r = std::io::BufReader::new(stdout);
            loop {
                let mut len = None;
                loop {
                    let mut line = String::new();
                    if r.read_line(&mut line).unwrap_or(0) == 0 {
                        return;
                    }
                    let line = line.trim_end();
                    if line.is_empty() {
                        break;
                    }
                    if let Some(n) = line.strip_prefix("Content-Length: ") {
                        len = n.parse::<usize>().ok();
                    }
                }
                let mut body = vec![0; len.expect("a Content-Length header")];
                r.read_exact(&mut body).expect("a whole message");
                let v: Value = serde_json::from_slice(&body).expect("the server sends JSON");
                if tx.send(v).is_err() {
                    return;
                }
            }
        });
        LspClient {
            stdin: child.stdin.take(),
            child,
            rx,
            stash: Vec::new(),
            next_id: 0,
        }
    }

    /// Send one message (a JSON value, or raw bytes for malformed input tests).
    pub fn send_raw(&mut self, body: &[u8]) {
        use std::io::Write;
        let stdin = self.stdin.as_mut().expect("stdin open");
        write!(stdin, "Content-Length: {}\r\n\r\n", body.len()).unwrap();
        stdin.write_all(body).unwrap();
        stdin.flush().unwrap();
    }

    /// Send a notification.
    pub fn notify(&mut self, method: &str, params: Value) {
        let m = serde_json::json!({"jsonrpc": "2.0", "method": method, "params": params});
        self.send_raw(m.to_string().as_bytes());
    }

    /// Send a request and wait for its whole response (`result` or `error` object).
    pub fn request(&mut self, method: &str, params: Value) -> Value {
        self.next_id += 1;
        let id = self.next_id;
        let m = serde_json::json!({"jsonrpc": "2.0", "id": id, "method": method, "params": params});
        self.send_raw(m.to_string().as_bytes());
        self.wait(|v| v.get("id") == Some(&Value::from(id)) && v.get("method").is_none())
    }

    /// The next message matching `pred` (earlier ones that do not match are kept).
    pub fn wait(&mut self, pred: impl Fn(&Value) -> bool) -> Value {
        if let Some(i) = self.stash.iter().position(&pred) {
            return self.stash.remove(i);
        }
        loop {
            let v = self
                .rx
                .recv_timeout(std::time::Duration::from_secs(20))
                .expect("the server answers within 20 s");
            if pred(&v) {
                return v;
            }
            self.stash.push(v);
        }
    }

    /// The next `publishDiagnostics` for `uri`: its `diagnostics` array.
    pub fn diagnostics(&mut self, uri: &str) -> Value {
        let v = self.wait(|v| {
            v["method"] == "textDocument/publishDiagnostics" && v["params"]["uri"] == uri
        });
        v["params"]["diagnostics"].clone()
    }

    /// Whether a message arrives within `ms` milliseconds (for "nothing is sent" checks).
    pub fn quiet_for(&mut self, ms: u64) -> bool {
        match self.rx.recv_timeout(std::time::Duration::from_millis(ms)) {
            Ok(v) => {
                self.stash.push(v);
                false
            }
            Err(_) => true,
        }
    }

    /// `exit` without `shutdown`; the exit status of the server.
    pub fn exit_now(mut self) -> std::process::ExitStatus {
        self.notify("exit", Value::Null);
        drop(self.stdin.take());
        self.child.wait().expect("the server exits")
    }

    /// `shutdown` then `exit`; the exit status of the server.
    pub fn shutdown(mut self) -> std::process::ExitStatus {
        let r = self.request("shutdown", Value::Null);
        assert_eq!(r["result"], Value::Null, "shutdown answers null: {r}");
        self.notify("exit", Value::Null);
        drop(self.stdin.take());
        self.child.wait().expect("the server exits")
    }
}

/// A `file://` URI for an absolute path (ASCII paths, as the test temp dirs are).
pub fn file_uri(p: &Path) -> String {
    format!("file://{}", p.display())
}

/// The validator of `schemas/output.schema.json`, the contract of `check --format json`
/// (docs/output.md).
#[allow(dead_code)]
pub fn output_schema() -> jsonschema::Validator {
    let schema: Value =
        serde_json::from_str(foldcheck::report::json::OUTPUT_SCHEMA).expect("the schema is JSON");
    jsonschema::draft202012::new(&schema).expect("a valid 2020-12 schema")
}

/// The position each finding of a human report opens with: the `file:line:col` in the
/// first line after the message (miette's `╭─[file:line:col]`), in report order.
#[allow(dead_code)]
pub fn opening_positions(human: &str) -> Vec<String> {
    let lines: Vec<&str> = human.lines().collect();
    let mut out = Vec::new();
    let mut i = 0;
    while i < lines.len() {
        let l = lines[i];
        let starts_message = ["  × ", "  ⚠ ", "  ☞ "].iter().any(|m| l.starts_with(m));
        if starts_message {
            let mut j = i + 1;
            while j < lines.len() && lines[j].starts_with("  │ ") {
                j += 1;
            }
            let next = lines.get(j).map_or("", |l| l.trim());
            out.push(
                next.strip_prefix("╭─[")
                    .and_then(|s| s.strip_suffix(']'))
                    .unwrap_or(next)
                    .to_string(),
            );
            i = j;
        }
        i += 1;
    }
    out
}

/// `file:line:column` of each unsuppressed finding of a JSON report, in report order.
#[allow(dead_code)]
pub fn json_positions(report: &Value) -> Vec<String> {
    report["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .filter(|f| f.get("suppressed").is_none())
        .map(|f| {
            format!(
                "{}:{}:{}",
                f["file"].as_str().unwrap(),
                f["line"],
                f["column"]
            )
        })
        .collect()
}
