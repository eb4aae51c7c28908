//! The HTML channel sheet: one self-contained page (its style and its small script are
//! inline; no font, image or script is fetched), templated with `maud`, which escapes
//! every value it inserts — a channel named `<script>` shows as text. The only markup
//! inserted unescaped is the spectrum SVG drawn by `inspect`'s plot, whose text the
//! SVG backend escapes itself.
//!
//! Layout: a header (campaign root, version, date, the caution), a summary (rigs,
//! channels, findings by severity and by rule, settings and thresholds), then one
//! section per rig: the channel table (sortable and filterable by the inline script; a
//! plain table without it), each channel's findings and spectrum in a `<details>` row,
//! its groups with their phase and delay comparison, and the logger's budget with its
//! arithmetic. Status is always written as a word and a symbol; colour only repeats it.
//! A print stylesheet starts each rig on a new page.

use super::{Budget, GroupSheet, RigSheet, Row, Sheet, Status};
use crate::finding::Severity;
use crate::inspect::FindingInfo;
use crate::inspect::text::clock_path;
use crate::words::{db_text, format_bytes, format_hz, format_seconds, rate_text, sig6};
use maud::{DOCTYPE, Markup, PreEscaped, html};

const STYLE: &str = include_str!("sheet.css");
const SCRIPT: &str = include_str!("sheet.js");

/// The caution printed under the title (the README's warning, in short).
pub const CAUTION: &str = "This report checks the rig's description (its YAML files), not the rig itself: \
a channel that passes here can still alias if the hardware differs from what is written. \
Measure before trusting a result.";

/// Render the sheet as one HTML document.
pub fn render(sheet: &Sheet) -> String {
    let channels: usize = sheet.rigs.iter().map(|r| r.rows.len()).sum();
    let page = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                meta name="viewport" content="width=device-width, initial-scale=1";
                title { "foldcheck report" }
                style { (PreEscaped(STYLE)) }
            }
            body {
                header {
                    h1 { "Channel sheet" }
                    p.meta {
                        "Campaign root: "
                        @for (i, r) in sheet.roots.iter().enumerate() {
                            @if i > 0 { ", " }
                            code { (r) }
                        }
                        " · foldcheck " (sheet.version) " · " (sheet.date)
                    }
                    p.caution role="note" { strong { "\u{26a0} Caution: " } (CAUTION) }
                }
                main {
                    (summary(sheet, channels))
                    @for (i, rig) in sheet.rigs.iter().enumerate() {
                        (rig_section(rig, i))
                    }
                }
                script { (PreEscaped(SCRIPT)) }
            }
        }
    };
    page.into_string()
}

fn status_cell(s: Status) -> Markup {
    html! {
        span class={ "status " (s.as_str()) } { (s.symbol()) " " (s.as_str()) }
    }
}

fn severity_status(s: Severity) -> Status {
    match s {
        Severity::Error => Status::Error,
        Severity::Warning => Status::Warning,
        Severity::Note => Status::Note,
    }
}

fn summary(sheet: &Sheet, channels: usize) -> Markup {
    let [e, w, n] = sheet.by_severity;
    html! {
        section.summary aria-labelledby="summary-h" {
            h2 #summary-h { "Summary" }
            table.facts {
                caption { "The campaign" }
                tbody {
                    tr { th scope="row" { "Rig files" } td.num { (sheet.files) } }
                    tr { th scope="row" { "Channels" } td.num { (channels) } }
                    tr { th scope="row" { (Status::Error.symbol()) " Errors" } td.num { (e) } }
                    tr { th scope="row" { (Status::Warning.symbol()) " Warnings" } td.num { (w) } }
                    tr { th scope="row" { (Status::Note.symbol()) " Notes" } td.num { (n) } }
                    tr { th scope="row" { "Suppressed findings" } td.num { (sheet.suppressed) } }
                    tr {
                        th scope="row" { "Settings in force" }
                        td {
                            @if sheet.settings.is_empty() {
                                "no foldcheck.toml: built-in defaults and each rig's own " code { "defaults" }
                            } @else {
                                @for (i, s) in sheet.settings.iter().enumerate() {
                                    @if i > 0 { ", " }
                                    code { (s) }
                                }
                            }
                        }
                    }
                }
            }
            @if !sheet.by_rule.is_empty() {
                div.by-rule {
                    h3 #by-rule-h { "Active findings by rule" }
                    ul aria-labelledby="by-rule-h" {
                        @for (rule, k) in &sheet.by_rule {
                            li { code { (rule) } ": " (k) }
                        }
                    }
                }
            }
            nav aria-label="Rigs" {
                ul {
                    @for (i, rig) in sheet.rigs.iter().enumerate() {
                        li {
                            a href={ "#rig-" (i) } { (rig_title(rig)) }
                            " — " (rig.rows.len()) " channels, "
                            (rig.rows.iter().filter(|r| r.status == Status::Pass).count()) " passing"
                        }
                    }
                }
            }
        }
    }
}

fn rig_title(rig: &RigSheet) -> String {
    match &rig.name {
        Some(n) => format!("{n} ({})", rig.file),
        None => rig.file.clone(),
    }
}

fn opt<T>(x: Option<T>, f: impl Fn(T) -> String) -> String {
    x.map_or_else(|| "—".to_string(), f)
}

fn rig_section(rig: &RigSheet, i: usize) -> Markup {
    html! {
        section.rig id={ "rig-" (i) } aria-labelledby={ "rig-h-" (i) } {
            h2 id={ "rig-h-" (i) } { "Rig " (rig_title(rig)) }
            @if !rig.read {
                p.unread { (Status::Error.symbol()) " this file could not be read or resolved; its findings:" }
            } @else {
                (thresholds(rig))
                (channel_table(rig, i))
                @for g in &rig.groups { (group(g)) }
                @if let Some(b) = &rig.budget { (budget(b)) }
            }
            @if !rig.other_findings.is_empty() {
                h3 { "Findings of the file outside its channels" }
                (findings_list(&rig.other_findings))
            }
        }
    }
}

fn thresholds(rig: &RigSheet) -> Markup {
    html! {
        details.thresholds {
            summary { "Thresholds in force" }
            table {
                caption { "Thresholds that apply to this rig's channels" }
                thead { tr { th scope="col" { "Key" } th scope="col" { "Value" } th scope="col" { "From" } } }
                tbody {
                    @for t in &rig.thresholds {
                        tr {
                            th scope="row" { code { (t.key) } }
                            td.num { (sig6(t.value)) (t.unit) }
                            td { (t.from) }
                        }
                    }
                }
            }
        }
    }
}

const HEADERS: [(&str, &str); 14] = [
    ("Status", "text"),
    ("Channel", "text"),
    ("Sensor", "text"),
    ("Module", "text"),
    ("Clock path", "text"),
    ("ADC rate", "num"),
    ("Final rate", "num"),
    ("Band", "num"),
    ("Ratio", "num"),
    ("Worst alias", "num"),
    ("Required", "num"),
    ("Droop", "num"),
    ("Latency", "num"),
    ("Findings", "num"),
];

fn channel_table(rig: &RigSheet, i: usize) -> Markup {
    html! {
        div.controls hidden data-for={ "tbl-" (i) } {
            label { "Filter " input type="search" placeholder="name, sensor, rule…"; }
            " "
            label {
                "Status "
                select {
                    option value="" { "any" }
                    option value="error" { (Status::Error.symbol()) " error" }
                    option value="warning" { (Status::Warning.symbol()) " warning" }
                    option value="note" { (Status::Note.symbol()) " note" }
                    option value="pass" { (Status::Pass.symbol()) " pass" }
                    option value="unchecked" { (Status::Unchecked.symbol()) " unchecked" }
                }
            }
            " "
            output aria-live="polite" {}
        }
        div.scroll {
        table.channels id={ "tbl-" (i) } {
            caption {
                "Channels of " (rig_title(rig)) ": " (rig.rows.len()) " rows. "
                "Open a channel's details for its findings and spectrum."
            }
            thead {
                tr {
                    @for (h, kind) in HEADERS {
                        th scope="col" data-kind=(kind) { (h) }
                    }
                }
            }
            @for r in &rig.rows { (row(r)) }
        }
        }
    }
}

/// One channel: its row of numbers and a details row (findings, spectrum). Both sit in
/// one `<tbody>` so that sorting moves them together.
fn row(r: &Row) -> Markup {
    let ins = &r.ins;
    let a = ins.analysis.as_ref();
    let num = |x: Option<f64>| x.map_or(String::new(), |x| format!("{}", crate::words::finite(x)));
    let search = format!(
        "{} {} {} {}",
        ins.channel,
        ins.sensor.as_ref().map_or("", |s| s.name.as_str()),
        ins.module.as_ref().map_or("", |m| m.name.as_str()),
        r.failing.join(" ")
    );
    let active = ins
        .findings
        .iter()
        .filter(|f| f.suppressed.is_none())
        .count();
    let suppressed = ins.findings.len() - active;
    html! {
        tbody.ch data-status=(r.status.as_str()) data-search=(search.to_lowercase()) {
            tr.main {
                td data-v=(r.status as u8) { (status_cell(r.status)) }
                th scope="row" data-v=(ins.channel) { (ins.channel) }
                td { (opt(ins.sensor.as_ref(), |s| s.name.clone())) }
                td { (opt(ins.module.as_ref(), |m| m.name.clone())) }
                td.path {
                    @match &ins.clock {
                        Some(c) if !c.path.is_empty() => (clock_path(c)),
                        Some(c) => { (c.name) " (not found)" },
                        None => "—",
                    }
                }
                td.num data-v=(num(r.adc_rate_hz())) {
                    (opt(a.and_then(|a| a.stages.first()), |s| rate_text(&s.rate)))
                }
                td.num.final data-v=(num(a.map(|a| a.final_rate_hz))) {
                    (opt(a, |a| rate_text(&a.final_rate)))
                }
                td.num data-v=(num(ins.band.as_ref().map(|b| b.value))) {
                    (opt(ins.band.as_ref(), |b| format_hz(b.value)))
                }
                td.num data-v=(num(a.map(|a| a.final_ratio))) {
                    (opt(a, |a| sig6(a.final_ratio)))
                }
                td.num data-v=(num(r.worst.as_ref().map(|w| w.attenuation_db))) {
                    @if let Some(w) = &r.worst {
                        (db_text(w.attenuation_db))
                        @if w.attenuation_db < w.required_db { " " span.bad { (Status::Error.symbol()) " below" } }
                        br; small { "at " (r.worst_at().unwrap_or_default())
                            @if let Some(m) = w.modulator_hz { " (" (format_hz(m)) ")" }
                            ", from " (format_hz(w.fold_from_hz))
                            @if w.resonance.is_some() { " (resonance)" } }
                    } @else { "—" }
                }
                td.num data-v=(num(r.worst.as_ref().map(|w| w.required_db))) {
                    (opt(r.worst.as_ref(), |w| db_text(w.required_db)))
                }
                td.num data-v=(num(a.and_then(|a| a.passband.as_ref()).map(|p| p.attenuation_db))) {
                    @if let Some(p) = a.and_then(|a| a.passband.as_ref()) {
                        (db_text(p.attenuation_db)) br; small { "tolerance " (db_text(p.tolerance_db)) }
                    } @else { "—" }
                }
                td.num data-v=(num(r.latency_s)) {
                    (opt(r.latency_s, format_seconds))
                    @if r.latency_s.is_some() && !r.latency_complete {
                        br; small { "a digital delay unknown" }
                    }
                }
                td.num data-v=(active) {
                    (active)
                    @if suppressed > 0 { br; small { "+" (suppressed) " suppressed" } }
                }
            }
            tr.more {
                td colspan=(HEADERS.len()) {
                    details {
                        summary {
                            "Details of " code { (ins.channel) }
                            @if r.svg.is_some() { " (findings and spectrum)" } @else { " (findings)" }
                        }
                        @if let Some(why) = &ins.no_analysis { p { "Not analysed: " (why) } }
                        @if !r.failing.is_empty() {
                            p { "Failing verdicts: " (r.failing.join("; ")) }
                        }
                        @if ins.findings.is_empty() {
                            p { (Status::Pass.symbol()) " no findings" }
                        } @else {
                            (findings_list(&ins.findings))
                        }
                        @if let Some(svg) = &r.svg {
                            figure.plot {
                                (PreEscaped(svg))
                                figcaption { "Spectrum of " (ins.channel) ": chain attenuation against frequency, with the band, the folding frequencies and the required rejection (as drawn by " code { "inspect --plot" } ")." }
                            }
                        }
                    }
                }
            }
        }
    }
}

fn findings_list(list: &[FindingInfo]) -> Markup {
    html! {
        ul.findings {
            @for f in list {
                @let st = severity_status(f.severity);
                li class=(if f.suppressed.is_some() { "suppressed" } else { st.as_str() }) {
                    @if f.suppressed.is_some() {
                        span.status.suppressed { "\u{2298} suppressed " (f.severity.as_str()) }
                    } @else {
                        (status_cell(st))
                    }
                    " " code { (f.rule) } " "
                    small { (f.file) ":" (f.line) ":" (f.column) }
                    br;
                    (f.message)
                    @if let Some(h) = &f.help { br; span.help { "help: " (h) } }
                    @if let Some(reason) = &f.suppressed { br; span.reason { "suppressed because: " (reason) } }
                }
            }
        }
    }
}

fn group(g: &GroupSheet) -> Markup {
    html! {
        section.group {
            h3 { "Group " code { (g.name) } }
            p {
                "Members: " (g.members.join(", ")) ". Common band "
                (opt(g.common_band_hz, format_hz)) ", phase tolerance " (sig6(g.tolerance_deg)) " deg."
            }
            @if g.pairs.is_empty() {
                p { "No pair of analysed members to compare." }
            } @else {
                table {
                    caption { "Phase and delay of each pair in group " (g.name) " over the common band" }
                    thead { tr {
                        th scope="col" { "Pair" }
                        th scope="col" { "Largest phase difference" }
                        th scope="col" { "At" }
                        th scope="col" { "Latency difference" }
                        th scope="col" { "Digital delay difference" }
                        th scope="col" { "Group findings" }
                    } }
                    tbody {
                        @for (a, b, c, st) in &g.pairs {
                            tr {
                                th scope="row" { (a) " − " (b) }
                                td.num { (sig6(c.phase_difference_deg)) " deg" }
                                td.num { (format_hz(c.frequency_hz)) }
                                td.num { (format_seconds(c.delay_difference_s)) }
                                td.num { (format_seconds(c.digital_difference_s)) }
                                td { (status_cell(*st)) }
                            }
                        }
                    }
                }
            }
            @if !g.findings.is_empty() { (findings_list(&g.findings)) }
        }
    }
}

fn budget(b: &Budget) -> Markup {
    let sum: Vec<String> = b
        .terms
        .iter()
        .map(|(_, _, _, bytes)| sig6(*bytes))
        .collect();
    html! {
        section.budget {
            h3 { "Logger budget" }
            details {
                summary { "Each channel's data rate: final rate × sample bits ÷ 8 (" (b.terms.len()) " channels)" }
                table {
                    caption { "Data rate per channel" }
                    thead { tr { th scope="col" { "Channel" } th scope="col" { "Arithmetic" } th scope="col" { "Data rate" } } }
                    tbody {
                        @for (name, fr, bits, bytes) in &b.terms {
                            tr {
                                th scope="row" { (name) }
                                td { (sig6(*fr)) " Hz × " (bits) " bit ÷ 8" }
                                td.num { (format_bytes(*bytes, true)) }
                            }
                        }
                    }
                }
            }
            p.arith {
                "Total: "
                @if sum.len() <= 12 { (sum.join(" + ")) " B/s = " }
                strong { (format_bytes(b.total_bytes_per_s, true)) }
                @if let Some(t) = b.throughput {
                    " against the logger's throughput of " (format_bytes(t, true))
                    " (" (sig6(100.0 * b.total_bytes_per_s / t)) " % used)"
                }
            }
            @if let (Some(s), Some(d)) = (b.storage, b.duration_s) {
                @let need = b.total_bytes_per_s * d;
                p.arith {
                    "Storage: " (format_bytes(b.total_bytes_per_s, true)) " × " (format_seconds(d))
                    " = " strong { (format_bytes(need, false)) } " against " (format_bytes(s, false))
                }
            }
            @if b.findings.is_empty() {
                p { (status_cell(Status::Pass)) " no " code { "throughput" } " or " code { "storage" } " finding about the logger" }
            } @else {
                (findings_list(&b.findings))
            }
        }
    }
}
