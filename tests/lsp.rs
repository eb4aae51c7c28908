//! `foldcheck lsp` driven over stdio as an editor would: JSON-RPC messages in, the exact
//! responses and notifications out (the protocol is the Language Server Protocol 3.17;
//! positions count UTF-16 code units unless UTF-8 is negotiated).

mod common;

use common::{LspClient, file_uri};
use serde_json::{Value, json};

/// A made-up listening room: a catalog with the lab's oscillator and a microphone, and a
/// rig with one channel. The sensor line holds multibyte characters and an emoji before
/// the value the tests edit.
const CATALOG: &str = "\
format: 1
catalog: lab-parts
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: frame-48k
    source: osc
    divide: 512
";

const RIG: &str = "\
format: 1
rig: listening-room
include:
  - lab/parts.yaml
clocks:
  - name: frame-96k
    source: osc
    divide: 256
sensors:
  - { name: mic-20k, kind: \"Messmikrofon Größe ½ 😀\", bandwidth: 20 kHz }
channels:
  - name: mic-left
    sensor: mic-20k
    clock: frame-96k
    band: 20 kHz
    filters: [{ response: butterworth, order: 8, cutoff: 24 kHz }]
";

fn setup() -> (tempfile::TempDir, String, String) {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("lab")).unwrap();
    std::fs::write(dir.path().join("lab/parts.yaml"), CATALOG).unwrap();
    std::fs::write(dir.path().join("room.rig.yaml"), RIG).unwrap();
    let rig = file_uri(&dir.path().join("room.rig.yaml"));
    let cat = file_uri(&dir.path().join("lab/parts.yaml"));
    (dir, rig, cat)
}

fn initialize(c: &mut LspClient, capabilities: Value) -> Value {
    let r = c.request(
        "initialize",
        json!({ "processId": null, "rootUri": null, "capabilities": capabilities }),
    );
    c.notify("initialized", json!({}));
    r
}

fn open(c: &mut LspClient, uri: &str, text: &str) {
    c.notify(
        "textDocument/didOpen",
        json!({ "textDocument": { "uri": uri, "languageId": "yaml", "version": 1, "text": text } }),
    );
}

fn pos(line: u32, character: u32) -> Value {
    json!({ "line": line, "character": character })
}

fn range(l0: u32, c0: u32, l1: u32, c1: u32) -> Value {
    json!({ "start": pos(l0, c0), "end": pos(l1, c1) })
}

/// Byte offset of a UTF-16 position (for applying the server's edits here).
fn utf16_offset(text: &str, p: &Value) -> usize {
    let line = p["line"].as_u64().unwrap() as usize;
    let ch = p["character"].as_u64().unwrap() as usize;
    let start: usize = text.split_inclusive('\n').take(line).map(str::len).sum();
    let mut units = 0;
    for (i, c) in text[start..].char_indices() {
        if units >= ch || c == '\n' {
            return start + i;
        }
        units += c.len_utf16();
    }
    text.len()
}

fn apply_edits(text: &str, edits: &[Value]) -> String {
    let mut edits: Vec<(usize, usize, &str)> = edits
        .iter()
        .map(|e| {
            (
                utf16_offset(text, &e["range"]["start"]),
                utf16_offset(text, &e["range"]["end"]),
                e["newText"].as_str().unwrap(),
            )
        })
        .collect();
    edits.sort_by_key(|e| std::cmp::Reverse(e.0));
    let mut out = text.to_string();
    for (a, b, t) in edits {
        out.replace_range(a..b, t);
    }
    out
}

/// Check and remove the fingerprint each diagnostic carries in `data` (16 lowercase hex
/// digits, docs/output.md "Fingerprints"), so the rest compares structurally.
fn strip_fp(mut diags: Value) -> Value {
    for d in diags.as_array_mut().into_iter().flatten() {
        let fp = d["data"]["fingerprint"]
            .as_str()
            .expect("every diagnostic carries its finding's fingerprint")
            .to_string();
        assert!(
            fp.len() == 16
                && fp
                    .bytes()
                    .all(|b| b.is_ascii_digit() || (b'a'..=b'f').contains(&b)),
            "16 lowercase hex digits: {fp}"
        );
        let data = d["data"].as_object_mut().unwrap();
        data.remove("fingerprint");
        if data.is_empty() {
            d.as_object_mut().unwrap().remove("data");
        }
    }
    diags
}

#[test]
fn a_session_from_initialize_to_exit() {
    let (dir, rig, cat) = setup();
    let mut c = LspClient::start(dir.path());

    // No `general.positionEncodings` offered: UTF-16, the protocol's default.
    let init = initialize(&mut c, json!({}));
    assert_eq!(
        init["result"],
        json!({
            "capabilities": {
                "positionEncoding": "utf-16",
                "textDocumentSync": { "openClose": true, "change": 2, "save": { "includeText": false } },
                "hoverProvider": true,
                "definitionProvider": true,
                "referencesProvider": true,
                "completionProvider": { "triggerCharacters": [" ", ":", "[", ","] },
                "codeActionProvider": { "codeActionKinds": ["quickfix"] }
            },
            "serverInfo": { "name": "foldcheck", "version": env!("CARGO_PKG_VERSION") }
        })
    );

    // Open: the rig is clean (96 kHz for a 20 kHz band; an 8th-order Butterworth at
    // 24 kHz gives 10·log10(1 + (76/24)^16) = 80.10 dB at 76 kHz, the published
    // Butterworth magnitude, above the 40 dB default).
    open(&mut c, &rig, RIG);
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));

    // A change that introduces a finding, on the line with `ß`, `½` and an emoji before
    // the value: `kHz` → `KHz` (an incremental edit in UTF-16 units: the emoji is two).
    let line = RIG.lines().nth(9).unwrap();
    let k = line.find("kHz").unwrap();
    let k16 = line[..k].encode_utf16().count() as u32;
    // `ö`, `ß` and `½` are two bytes and one UTF-16 unit each; the emoji four bytes and
    // two units (a surrogate pair): 5 bytes more than units.
    assert_eq!(
        (k, k16),
        (73, 68),
        "bytes and UTF-16 units differ on this line"
    );
    c.notify(
        "textDocument/didChange",
        json!({
            "textDocument": { "uri": rig, "version": 2 },
            "contentChanges": [{ "range": range(9, k16, 9, k16 + 1), "text": "K" }]
        }),
    );
    let introduced = c.diagnostics(&rig);
    assert_eq!(
        strip_fp(introduced.clone()),
        json!([{
            "range": range(9, k16 - 3, 9, k16 + 3),
            "severity": 1,
            "code": "quantity",
            "source": "foldcheck",
            "message": "unknown unit `KHz` in `20 KHz`; units are case-sensitive\nhelp: write `20 kHz`"
        }])
    );

    // Its code actions: the verified fix as a quick fix (the edit replaces the unit
    // only), and no "suppress" (an input rule cannot be suppressed).
    let bad = RIG.replace("bandwidth: 20 kHz", "bandwidth: 20 KHz");
    let diags = introduced.clone();
    let actions = c.request(
        "textDocument/codeAction",
        json!({ "textDocument": { "uri": rig }, "range": range(9, k16, 9, k16),
                "context": { "diagnostics": diags } }),
    );
    assert_eq!(
        actions["result"],
        json!([{
            "title": "write the unit `KHz` as `kHz`",
            "kind": "quickfix",
            "diagnostics": diags,
            "edit": { "changes": { rig.clone(): [{ "range": range(9, k16, 9, k16 + 3), "newText": "kHz" }] } },
            "isPreferred": true
        }])
    );

    // Applying its edit is the change that removes the finding again.
    let edits = actions["result"][0]["edit"]["changes"][&rig]
        .as_array()
        .unwrap();
    let fixed = apply_edits(&bad, edits);
    assert_eq!(fixed, RIG);
    c.notify(
        "textDocument/didChange",
        json!({
            "textDocument": { "uri": rig, "version": 3 },
            "contentChanges": [{ "range": edits[0]["range"], "text": edits[0]["newText"] }]
        }),
    );
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));

    // Hover on the channel's name: rates through the clock path, ratio, attenuation,
    // latency. The latency of an n-th order Butterworth at DC is 1/(ωc·sin(π/2n)) (the
    // group delay at DC from its poles on the circle of radius ωc, a textbook closed
    // form): 1/(2π·24 kHz·sin(π/16)) = 33.9917 µs.
    let h = c.request(
        "textDocument/hover",
        json!({ "textDocument": { "uri": rig }, "position": pos(11, 12) }),
    );
    assert_eq!(
        h["result"]["contents"]["value"],
        "**channel `mic-left`**\n\n\
         clock: `osc` 24.576 MHz → ÷ 256 `frame-96k` 96 kHz\n\n\
         band: 20 kHz (the channel's `band`)\n\n\
         | rate change | rate | ratio | folds from | attenuation | required |\n\
         |---|---|---|---|---|---|\n\
         | ADC | 96 kHz | 4.8 | 76 kHz | 80.10 dB | 40 dB ✓ |\n\n\
         worst alias attenuation: 80.10 dB at ADC (from 76 kHz), 40 dB required\n\n\
         final rate 96 kHz, ratio 4.8; droop at the band edge 0.23 dB (tolerance 0.50 dB)\n\n\
         latency 33.9917 µs (digital delays and the analog group delay at DC)\n"
    );
    let expected = 1.0 / (2.0 * std::f64::consts::PI * 24e3 * (std::f64::consts::PI / 16.0).sin());
    assert!((expected * 1e6 - 33.9917).abs() < 5e-5, "{expected}");

    // Go to definition: `osc` in the rig is defined in the catalog.
    let d = c.request(
        "textDocument/definition",
        json!({ "textDocument": { "uri": rig }, "position": pos(6, 13) }),
    );
    assert_eq!(
        d["result"],
        json!({ "uri": cat, "range": range(3, 10, 3, 13) })
    );

    // Find references of the rig's clock: its definition and the channel's `clock`.
    let r = c.request(
        "textDocument/references",
        json!({ "textDocument": { "uri": rig }, "position": pos(13, 14),
                "context": { "includeDeclaration": true } }),
    );
    assert_eq!(
        r["result"],
        json!([
            { "uri": rig, "range": range(5, 10, 5, 19) },
            { "uri": rig, "range": range(13, 11, 13, 20) }
        ])
    );

    // Completion of clock names at the channel's `clock`, across the include.
    let comp = c.request(
        "textDocument/completion",
        json!({ "textDocument": { "uri": rig }, "position": pos(13, 17) }),
    );
    let items = |labels: &[&str], kind: u32, detail: &str, r: Value| -> Value {
        Value::Array(
            labels
                .iter()
                .enumerate()
                .map(|(i, l)| {
                    json!({ "label": l, "kind": kind, "detail": detail,
                            "sortText": format!("{i:04}"),
                            "textEdit": { "range": r, "newText": l } })
                })
                .collect(),
        )
    };
    assert_eq!(
        comp["result"],
        items(
            &["frame-48k", "frame-96k", "osc"],
            18,
            "clock",
            range(13, 11, 13, 17)
        )
    );
    // ... and of a unit after a number (the emoji line: UTF-16 columns).
    let comp = c.request(
        "textDocument/completion",
        json!({ "textDocument": { "uri": rig }, "position": pos(9, k16 + 1) }),
    );
    assert_eq!(
        comp["result"],
        items(
            &["Hz", "kHz", "MHz", "GHz"],
            11,
            "frequency",
            range(9, k16, 9, k16 + 1)
        )
    );

    // A change that makes a physics finding: a 4 kHz band on a 96 kHz clock is 24×
    // oversampled, above the default limit of 20.
    let text = RIG.replace("band: 20 kHz", "band: 4 kHz");
    c.notify(
        "textDocument/didChange",
        json!({
            "textDocument": { "uri": rig, "version": 4 },
            "contentChanges": [{ "range": range(14, 10, 14, 12), "text": "4" }]
        }),
    );
    let raw = c.diagnostics(&rig);
    let diags = strip_fp(raw.clone());
    assert_eq!(
        diags,
        json!([{
            "range": range(13, 11, 13, 20),
            "severity": 3,
            "code": "oversampling",
            "source": "foldcheck",
            "message": "`mic-left` ends at 96 kHz, 24× its 4 kHz band (the limit is 20×)\nhelp: decimate (with a filter) by a factor from 2 to 9, or divide the clock down: a final rate of 80 kHz or less is within the limit",
            "relatedInformation": [{
                "location": { "uri": rig, "range": range(14, 10, 14, 15) },
                "message": "band 4 kHz"
            }]
        }])
    );

    // Code actions there: suppress with a reason (oversampling is not an input rule).
    let actions = c.request(
        "textDocument/codeAction",
        json!({ "textDocument": { "uri": rig }, "range": range(13, 11, 13, 11),
                "context": { "diagnostics": raw } }),
    );
    let comment = "    # foldcheck: allow oversampling -- TODO: say why this is acceptable\n";
    assert_eq!(
        actions["result"],
        json!([{
            "title": "Suppress `oversampling` here, with a reason",
            "kind": "quickfix",
            "diagnostics": raw,
            "edit": { "changes": { rig.clone(): [{ "range": range(13, 0, 13, 0), "newText": comment }] } }
        }])
    );
    // Apply the edit as an editor would: the finding is suppressed, nothing is shown.
    let edits = actions["result"][0]["edit"]["changes"][&rig]
        .as_array()
        .unwrap();
    let edited = apply_edits(&text, edits);
    assert!(edited.contains(&format!(
        "    sensor: mic-20k\n{comment}    clock: frame-96k\n"
    )));
    c.notify(
        "textDocument/didChange",
        json!({ "textDocument": { "uri": rig, "version": 5 },
                "contentChanges": [{ "text": edited }] }),
    );
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));

    // A request the server does not know gets an error response, not silence.
    let unknown = c.request("textDocument/prepareRename", json!({}));
    assert_eq!(
        unknown["error"],
        json!({ "code": -32601, "message": "foldcheck does not handle `textDocument/prepareRename`" })
    );

    assert!(c.shutdown().success(), "exit after shutdown is status 0");
}

#[test]
fn utf8_is_used_when_the_client_offers_it() {
    let (dir, rig, _) = setup();
    let mut c = LspClient::start(dir.path());
    let init = initialize(
        &mut c,
        json!({ "general": { "positionEncodings": ["utf-16", "utf-8"] } }),
    );
    assert_eq!(init["result"]["capabilities"]["positionEncoding"], "utf-8");
    open(&mut c, &rig, &RIG.replace("20 kHz", "20 KHz"));
    let diags = strip_fp(c.diagnostics(&rig));
    // Byte columns: `20 KHz` starts at byte 70 of the emoji line (65 in UTF-16).
    let line = RIG.lines().nth(9).unwrap();
    assert_eq!(line.find("20 kHz"), Some(70));
    assert_eq!(diags[0]["range"], range(9, 70, 9, 76));
    assert!(c.shutdown().success());
}

#[test]
fn exit_without_shutdown_is_status_1() {
    // The protocol: the server exits with 0 after `shutdown`, with 1 without it.
    let dir = tempfile::tempdir().unwrap();
    let mut c = LspClient::start(dir.path());
    initialize(&mut c, json!({}));
    assert_eq!(c.exit_now().code(), Some(1));
}

#[test]
fn a_changed_catalog_republishes_the_rigs_that_include_it() {
    let (dir, rig, cat) = setup();
    let mut c = LspClient::start(dir.path());
    initialize(&mut c, json!({}));
    open(&mut c, &rig, RIG);
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));
    open(&mut c, &cat, CATALOG);
    assert_eq!(strip_fp(c.diagnostics(&cat)), json!([]));
    // Opening the catalog replaces the rig's view of it: the rig is published again.
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));
    // The oscillator at a tenth of its frequency: the rig's channel samples at 9.6 kHz,
    // not above twice its 20 kHz band.
    let slow = CATALOG.replace("24.576 MHz", "2.4576 MHz");
    c.notify(
        "textDocument/didSave",
        json!({ "textDocument": { "uri": cat } }),
    );
    assert_eq!(strip_fp(c.diagnostics(&cat)), json!([]));
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));
    c.notify(
        "textDocument/didChange",
        json!({ "textDocument": { "uri": cat, "version": 2 },
                "contentChanges": [{ "text": slow }] }),
    );
    assert_eq!(strip_fp(c.diagnostics(&cat)), json!([]));
    let d = strip_fp(c.diagnostics(&rig));
    let rules: Vec<&str> = d
        .as_array()
        .unwrap()
        .iter()
        .map(|d| d["code"].as_str().unwrap())
        .collect();
    assert_eq!(rules, ["nyquist"], "{d}");
    // The related information points into the catalog (the oscillator's frequency).
    let related = d[0]["relatedInformation"].as_array().unwrap();
    assert!(
        related.iter().any(|r| r["location"]["uri"] == cat.as_str()),
        "{d}"
    );
    // Closing the catalog: the rig reads the file on disk again, and is clean.
    c.notify(
        "textDocument/didClose",
        json!({ "textDocument": { "uri": cat } }),
    );
    assert_eq!(strip_fp(c.diagnostics(&cat)), json!([]));
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));
    assert!(c.shutdown().success());
}

#[test]
fn hostile_messages_get_answers_and_the_server_survives() {
    let dir = tempfile::tempdir().unwrap();
    let mut c = LspClient::start(dir.path());
    initialize(&mut c, json!({}));
    let uri = file_uri(&dir.path().join("junk.rig.yaml"));
    // Texts that are not rigs at all: binary junk, deep nesting, an unclosed flow list.
    for text in [
        "\u{0}\u{1}\u{fffd}{{{{[[[[".to_string(),
        "[".repeat(100_000),
        "channels: [ { name: a, clock: ".to_string(),
    ] {
        open(&mut c, &uri, &text);
        let d = strip_fp(c.diagnostics(&uri));
        assert_eq!(d[0]["code"], "yaml-syntax", "{d}");
        c.notify(
            "textDocument/didClose",
            json!({ "textDocument": { "uri": uri } }),
        );
        assert_eq!(strip_fp(c.diagnostics(&uri)), json!([]));
    }
    // Bad parameters: an error response with the code for invalid parameters.
    let r = c.request("textDocument/hover", json!({ "position": "here" }));
    assert_eq!(r["error"]["code"], -32602, "{r}");
    // Positions far outside a document, and requests about documents never opened.
    open(&mut c, &uri, "format: 1\n");
    strip_fp(c.diagnostics(&uri));
    for method in [
        "textDocument/hover",
        "textDocument/definition",
        "textDocument/completion",
    ] {
        let r = c.request(
            method,
            json!({ "textDocument": { "uri": uri }, "position": pos(4_000_000, 4_000_000) }),
        );
        assert_eq!(r["result"], Value::Null, "{method}: {r}");
        let r = c.request(
            method,
            json!({ "textDocument": { "uri": "file:///nowhere.rig.yaml" }, "position": pos(0, 0) }),
        );
        assert_eq!(r["result"], Value::Null, "{method}: {r}");
    }
    // A change whose range lies beyond the text is clamped to its end.
    c.notify(
        "textDocument/didChange",
        json!({ "textDocument": { "uri": uri, "version": 2 },
                "contentChanges": [{ "range": range(90, 0, 99, 9), "text": "rig: x\n" }] }),
    );
    let d = strip_fp(c.diagnostics(&uri));
    assert!(
        d.as_array()
            .unwrap()
            .iter()
            .all(|d| d["code"] != "yaml-syntax"),
        "{d}"
    );
    assert!(c.shutdown().success());
}

#[test]
fn fingerprints_match_check() {
    // Each diagnostic's `data` carries the fingerprint `check --format json` gives the
    // same finding (rule and range), or nothing when check gives none.
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let rig = root.join("examples/gearbox-nvh.rig.yaml");
    let text = std::fs::read_to_string(&rig).unwrap();
    let uri = file_uri(&rig);
    let mut c = LspClient::start(root);
    initialize(&mut c, json!({}));
    open(&mut c, &uri, &text);
    let got = c.diagnostics(&uri);
    let (report, _) = common::check_json(root, &[rig.to_str().unwrap()]);
    let lines: Vec<&str> = text.split('\n').collect();
    // 1-based line and character column to a UTF-16 position (docs/output.md).
    let at = |line: u64, col: u64| {
        let l = lines[line as usize - 1];
        let units: usize = l.chars().take(col as usize - 1).map(char::len_utf16).sum();
        pos(line as u32 - 1, units as u32)
    };
    let want: Vec<(Value, Value, Value)> = report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f.get("suppressed").is_none() && f["file"] == rig.to_str().unwrap())
        .map(|f| {
            (
                f["rule"].clone(),
                json!({ "start": at(f["line"].as_u64().unwrap(), f["column"].as_u64().unwrap()),
                        "end": at(f["end_line"].as_u64().unwrap(), f["end_column"].as_u64().unwrap()) }),
                f.get("fingerprint").cloned().unwrap_or(Value::Null),
            )
        })
        .collect();
    let mut have: Vec<(Value, Value, Value)> = got
        .as_array()
        .unwrap()
        .iter()
        .map(|d| {
            (
                d["code"].clone(),
                d["range"].clone(),
                d.pointer("/data/fingerprint")
                    .cloned()
                    .unwrap_or(Value::Null),
            )
        })
        .collect();
    assert_eq!(have.len(), want.len(), "{got}\n{report}");
    for w in &want {
        let i = have
            .iter()
            .position(|h| h == w)
            .unwrap_or_else(|| panic!("no diagnostic {w:?} in {got}"));
        have.remove(i);
    }
    assert!(c.shutdown().success());
}

#[test]
fn a_frame_that_is_not_json_gets_a_parse_error_and_the_session_goes_on() {
    // JSON-RPC 2.0 (section 5.1): a body that is not JSON is answered with error -32700
    // "Parse error" and `id: null`; a JSON value that is no request or notification
    // with -32600 "Invalid Request". The frame's length is known from its header, so
    // the next frame is read as usual.
    let (dir, rig, _) = setup();
    let mut c = LspClient::start(dir.path());
    initialize(&mut c, json!({}));
    for body in [
        &b"{\"jsonrpc\": \"2.0\", \"id\": 7, \"method\": "[..],
        &b"not json at all"[..],
        &b"\xff\xfe{}"[..],
    ] {
        c.send_raw(body);
        let r = c.wait(|v| v.get("error").is_some());
        assert_eq!(r["jsonrpc"], "2.0", "{r}");
        assert_eq!(r["id"], Value::Null, "{r}");
        assert_eq!(r["error"]["code"], -32700, "{r}");
    }
    c.send_raw(b"[1, 2]");
    let r = c.wait(|v| v.get("error").is_some());
    assert_eq!(
        (r["id"].clone(), r["error"]["code"].clone()),
        (Value::Null, json!(-32600)),
        "{r}"
    );
    c.send_raw(br#"{"jsonrpc": "2.0", "id": 9, "params": {}}"#);
    let r = c.wait(|v| v.get("error").is_some());
    assert_eq!(
        (r["id"].clone(), r["error"]["code"].clone()),
        (json!(9), json!(-32600)),
        "{r}"
    );
    // The session goes on: a document opened afterwards is analysed and answered.
    open(&mut c, &rig, RIG);
    assert_eq!(strip_fp(c.diagnostics(&rig)), json!([]));
    let h = c.request(
        "textDocument/hover",
        json!({ "textDocument": { "uri": rig }, "position": pos(11, 12) }),
    );
    assert!(
        h["result"]["contents"]["value"]
            .as_str()
            .is_some_and(|s| s.contains("mic-left")),
        "{h}"
    );
    assert!(c.shutdown().success());
}

#[test]
fn fixes_are_verified_when_a_code_action_asks_and_a_failing_one_is_withdrawn() {
    // The analysis of a change verifies no fix: the diagnostics first carry each rule's
    // proposal. Spelt right, clock `base` runs at 3 kHz, below twice the 2 kHz band (a
    // `nyquist` error the unit typo hides), so its unit fix fails verification; the
    // 25.6 kHz clock's passes. Asking for code actions verifies the range asked for:
    // the failing proposal is withdrawn from the help (the diagnostics are sent again,
    // now equal to `check`'s) and offered as no quick fix.
    let dir = tempfile::tempdir().unwrap();
    let text = "format: 1\nrig: slow\nclocks:\n  - { name: base, frequency: 3 KHz }\n  - { name: fast, frequency: 25.6 KHz }\nchannels:\n  - { name: c1, clock: base, band: 2 kHz }\n  - { name: c2, clock: fast, band: 2 kHz, filters: [{ response: butterworth, order: 4, cutoff: 4 kHz }] }\n";
    std::fs::write(dir.path().join("slow.rig.yaml"), text).unwrap();
    let uri = file_uri(&dir.path().join("slow.rig.yaml"));
    let mut c = LspClient::start(dir.path());
    initialize(&mut c, json!({}));
    open(&mut c, &uri, text);
    let first = c.diagnostics(&uri);
    let messages: Vec<&str> = first
        .as_array()
        .unwrap()
        .iter()
        .map(|d| d["message"].as_str().unwrap())
        .collect();
    assert_eq!(
        messages,
        [
            "unknown unit `KHz` in `3 KHz`; units are case-sensitive\nhelp: write `3 kHz`",
            "unknown unit `KHz` in `25.6 KHz`; units are case-sensitive\nhelp: write `25.6 kHz`",
        ]
    );
    // A code action on line 5 (0-based 4): only that fix is verified, and it passes.
    let r = c.request(
        "textDocument/codeAction",
        json!({ "textDocument": { "uri": uri }, "range": range(4, 36, 4, 36),
                "context": { "diagnostics": [] } }),
    );
    let titles: Vec<&str> = r["result"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a["title"].as_str().unwrap())
        .collect();
    assert_eq!(titles, ["write the unit `KHz` as `kHz`"]);
    assert!(
        c.quiet_for(300),
        "nothing changed: no diagnostics are sent again"
    );
    // On line 4 (0-based 3): the fix fails, no quick fix, and the help falls back.
    let r = c.request(
        "textDocument/codeAction",
        json!({ "textDocument": { "uri": uri }, "range": range(3, 32, 3, 32),
                "context": { "diagnostics": [] } }),
    );
    assert_eq!(r["result"], json!([]), "{r}");
    let again = c.diagnostics(&uri);
    let (check, _) = common::check_json(dir.path(), &["slow.rig.yaml"]);
    let from_check: Vec<String> = check["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| {
            format!(
                "{}\nhelp: {}",
                f["message"].as_str().unwrap(),
                f["help"].as_str().unwrap()
            )
        })
        .collect();
    let now: Vec<&str> = again
        .as_array()
        .unwrap()
        .iter()
        .map(|d| d["message"].as_str().unwrap())
        .collect();
    assert_eq!(now, from_check);
    assert_eq!(
        now[0],
        "unknown unit `KHz` in `3 KHz`; units are case-sensitive\nhelp: units are case-sensitive: use one of Hz kHz MHz GHz"
    );
    assert!(c.shutdown().success());
}
