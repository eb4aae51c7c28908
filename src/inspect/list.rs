//! `inspect` on a catalog, and `inspect FILE` without a channel.
//!
//! A catalog holds no channels: `inspect CATALOG CHANNEL` looks for the channel in the
//! rigs under the catalog's campaign root that include it (the same rigs `check CATALOG`
//! lints). One rig has it: that rig is inspected. Several: they are listed, and the
//! user names the rig. `inspect FILE` lists every channel of the rig (or of the rigs
//! that include the catalog) with its final rate, band, ratio and verdict; the verdict is
//! read from the findings of the same run as `check` (so the two cannot disagree).

use crate::campaign::Outcome;
use crate::finding::{Finding, Severity};
use crate::model::quantity::to_f64;
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::source::FileId;
use crate::words::{format_hz, sig6};
use serde_json::{Value, json};
use std::path::{Path, PathBuf};

fn canonical(p: &Path) -> PathBuf {
    std::fs::canonicalize(p).unwrap_or_else(|_| crate::campaign::absolute(p))
}

/// Whether the run linted the named file itself (a rig) rather than the rigs that
/// include it (a catalog).
fn named_itself(out: &Outcome, file: &Path) -> bool {
    let named = canonical(file);
    out.rigs
        .iter()
        .any(|r| canonical(&out.sources.get(r.file).path) == named)
}

fn rig_label(out: &Outcome, file: FileId, rig: Option<&Rig>) -> String {
    let display = &out.sources.get(file).display;
    match rig.and_then(|r| r.name.as_ref()) {
        Some(n) => format!("`{}` ({display})", n.value),
        None => display.clone(),
    }
}

/// The index in `out.rigs` of the rig to inspect for `channel`: the named rig itself,
/// or the one rig that includes the named catalog and has that channel. `Err` says
/// why none can be chosen (several rigs have it: they are listed).
pub fn pick_rig(out: &Outcome, file: &Path, channel: &str) -> Result<usize, String> {
    if out.rigs.is_empty() {
        return Err(format!("{}: there is no rig to inspect", file.display()));
    }
    if named_itself(out, file) || out.rigs.len() == 1 && out.rigs[0].rig.is_none() {
        let named = canonical(file);
        return Ok(out
            .rigs
            .iter()
            .position(|r| canonical(&out.sources.get(r.file).path) == named)
            .unwrap_or(0));
    }
    let having: Vec<usize> = out
        .rigs
        .iter()
        .enumerate()
        .filter(|(_, r)| r.rig.as_ref().is_some_and(|g| g.channel(channel).is_some()))
        .map(|(i, _)| i)
        .collect();
    let labels = |idx: &[usize]| -> String {
        idx.iter()
            .map(|&i| rig_label(out, out.rigs[i].file, out.rigs[i].rig.as_ref()))
            .collect::<Vec<_>>()
            .join(", ")
    };
    match having.as_slice() {
        [one] => Ok(*one),
        [] => {
            let all: Vec<usize> = (0..out.rigs.len()).collect();
            let names = out
                .rigs
                .iter()
                .filter_map(|r| r.rig.as_ref())
                .flat_map(|g| g.channels.iter().map(|c| c.def.name.value.as_str()));
            let hint = crate::words::closest(channel, names)
                .map(|b| format!("; did you mean `{b}`?"))
                .unwrap_or_default();
            Err(format!(
                "{} is a catalog; none of the rigs that include it has a channel `{channel}` (rigs: {}){hint}",
                file.display(),
                labels(&all)
            ))
        }
        many => {
            let first = &out.sources.get(out.rigs[many[0]].file).display;
            Err(format!(
                "{} is a catalog, and {} rigs that include it have a channel `{channel}`: {}; name the rig, e.g. `foldcheck inspect {first} {channel}`",
                file.display(),
                many.len(),
                labels(many)
            ))
        }
    }
}

/// One channel's line of the list.
struct Row {
    channel: String,
    rate_hz: Option<f64>,
    band_hz: Option<f64>,
    verdict: Option<Severity>,
    rules: Vec<&'static str>,
}

fn rows(out: &Outcome, rig_file: FileId, includes: &[FileId], rig: &Rig) -> Vec<Row> {
    let ours = |f: &Finding| {
        let file = f.primary.span.file;
        f.suppressed.is_none() && (file == rig_file || includes.contains(&file))
    };
    rig.channels
        .iter()
        .map(|ch| {
            let name = ch.def.name.value.clone();
            let rate = ch
                .ok
                .then(|| Chain::new(rig, ch))
                .flatten()
                .map(|c| to_f64(&c.final_rate()));
            let band = ch.band.as_ref().map(|b| to_f64(&b.hz));
            let mine: Vec<&Finding> = out
                .findings
                .iter()
                .filter(|f| ours(f) && f.channel.as_deref() == Some(name.as_str()))
                .collect();
            let mut rules: Vec<&'static str> = mine.iter().map(|f| f.rule).collect();
            rules.sort_unstable();
            rules.dedup();
            Row {
                channel: name,
                rate_hz: rate,
                band_hz: band,
                verdict: mine.iter().map(|f| f.severity).max(),
                rules,
            }
        })
        .collect()
}

fn verdict_text(r: &Row) -> String {
    match r.verdict {
        None => "ok".to_string(),
        Some(s) => format!("{}: {}", s.as_str(), r.rules.join(", ")),
    }
}

/// The channels of the linted rigs with their final rate, band, ratio and verdict: text
/// or JSON.
pub fn channels(out: &Outcome, file: &Path, as_json: bool) -> Result<String, String> {
    let mut text = String::new();
    let mut rigs_json = Vec::new();
    let mut shown = 0;
    if !named_itself(out, file) && out.rigs.iter().any(|r| r.rig.is_some()) {
        text.push_str(&format!(
            "{} is a catalog; the rigs that include it:\n\n",
            file.display()
        ));
    }
    for r in &out.rigs {
        let Some(rig) = &r.rig else { continue };
        shown += 1;
        let rows = rows(out, r.file, &r.includes, rig);
        text.push_str(&format!(
            "rig {}: {} channel{}\n",
            rig_label(out, r.file, Some(rig)),
            rows.len(),
            if rows.len() == 1 { "" } else { "s" }
        ));
        let cells: Vec<[String; 5]> = rows
            .iter()
            .map(|row| {
                let ratio = match (row.rate_hz, row.band_hz) {
                    (Some(f), Some(b)) if b > 0.0 => sig6(f / b),
                    _ => "—".to_string(),
                };
                [
                    row.channel.clone(),
                    row.rate_hz.map_or("—".to_string(), format_hz),
                    row.band_hz.map_or("—".to_string(), format_hz),
                    ratio,
                    verdict_text(row),
                ]
            })
            .collect();
        let head = ["channel", "final rate", "band", "ratio", "verdict"];
        let mut width = head.map(|h| h.chars().count());
        for c in &cells {
            for (w, s) in width.iter_mut().zip(c) {
                *w = (*w).max(s.chars().count());
            }
        }
        let line = |c: &[String; 5]| {
            let mut s = String::from(" ");
            for (i, (cell, w)) in c.iter().zip(width).enumerate() {
                let pad = w - cell.chars().count();
                if i == 4 {
                    s.push_str(&format!(" {cell}"));
                } else if i == 0 {
                    s.push_str(&format!(" {cell}{}", " ".repeat(pad)));
                } else {
                    s.push_str(&format!(" {}{cell}", " ".repeat(pad)));
                }
            }
            s.trim_end().to_string() + "\n"
        };
        text.push_str(&line(&head.map(str::to_string)));
        for c in &cells {
            text.push_str(&line(c));
        }
        text.push('\n');
        rigs_json.push(json!({
            "rig": rig.name.as_ref().map(|n| n.value.clone()),
            "file": out.sources.get(r.file).display,
            "channels": rows.iter().map(|row| json!({
                "channel": row.channel,
                "rate_hz": row.rate_hz,
                "band_hz": row.band_hz,
                "ratio": match (row.rate_hz, row.band_hz) {
                    (Some(f), Some(b)) if b > 0.0 => Value::from(f / b),
                    _ => Value::Null,
                },
                "verdict": row.verdict.map_or("ok", Severity::as_str),
                "rules": row.rules,
            })).collect::<Vec<_>>(),
        }));
    }
    if shown == 0 {
        return Err(format!(
            "{}: no rig to list (it does not parse, or it is a catalog that no rig under its campaign root includes); run `foldcheck check {}`",
            file.display(),
            file.display()
        ));
    }
    text.push_str("details of one channel: foldcheck inspect FILE CHANNEL\n");
    Ok(if as_json {
        let mut s = serde_json::to_string_pretty(&json!({ "rigs": rigs_json }))
            .expect("JSON values serialise");
        s.push('\n');
        s
    } else {
        text
    })
}
