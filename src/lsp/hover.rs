//! Hover texts (Markdown): what the analysis says about the thing under the cursor.
//! Channels, bands, filters and decimation stages read the channel's one analysis
//! (`crate::analysis::analyse_channel`: rates, ratios, attenuation, verdicts) and its
//! chain's latency; nothing here decides a verdict, this module only lays them out.

use super::snapshot::{Snapshot, SymbolKind, Target};
use crate::analysis::{self, ChannelAnalysis, Context, Enabled, StageInfo};
use crate::model::quantity::to_f64;
use crate::model::{ClockDef, Filter};
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::source::Span;
use crate::words::{db_text, format_hz, format_seconds, rate_text, sig6};

/// The Markdown for a target, if there is anything to say.
pub fn hover(snap: &Snapshot, target: Target) -> Option<String> {
    match target {
        Target::Name(i) => {
            let o = snap.occurrences.get(i)?;
            let (ri, rig) = rig_defining(snap, o.def)?;
            match o.kind {
                SymbolKind::Channel => {
                    let ci = rig.channel(&o.name)?;
                    Some(channel(snap, ri, ci, None))
                }
                SymbolKind::Clock => clock(rig, &o.name),
                SymbolKind::Sensor => sensor(rig, &o.name),
                SymbolKind::Module => module(rig, &o.name),
                SymbolKind::Group => group(snap, ri, &o.name),
            }
        }
        Target::Band(ri, ci) | Target::Channel(ri, ci) => Some(channel(snap, ri, ci, None)),
        Target::Stage(ri, ci, k) => Some(channel(snap, ri, ci, Some(k))),
        Target::Filter(ri, ci, j) => {
            let rig = snap.rig(ri)?;
            let f = rig.channels[ci].def.filters.as_ref()?.value.get(j)?;
            Some(filter(snap, ri, Some(ci), f))
        }
        Target::SharedFilter(ri, ci, span) => {
            let rig = snap.rig(ri)?;
            let f = shared_filter(rig, span)?;
            Some(filter(snap, ri, ci, f))
        }
    }
}

/// The rig of the snapshot in which the symbol defined at `def` lives.
fn rig_defining(snap: &Snapshot, def: Span) -> Option<(usize, &Rig)> {
    snap.outcome
        .rigs
        .iter()
        .enumerate()
        .filter_map(|(i, r)| r.rig.as_ref().map(|rig| (i, rig)))
        .find(|(_, rig)| {
            rig.clocks.iter().any(|c| c.def.name.span == def)
                || rig.sensors.iter().any(|s| s.name.span == def)
                || rig.modules.iter().any(|m| m.name.span == def)
                || rig.channels.iter().any(|c| c.def.name.span == def)
                || rig.groups.iter().any(|g| g.name.span == def)
        })
}

fn shared_filter(rig: &Rig, span: Span) -> Option<&Filter> {
    let module = rig
        .modules
        .iter()
        .filter_map(|m| m.filters.as_ref())
        .flat_map(|f| f.value.iter());
    let sensor = rig
        .sensors
        .iter()
        .filter_map(|s| s.response.as_ref())
        .flat_map(|f| f.value.iter());
    module.chain(sensor).find(|f| f.span == span)
}

/// The channel's analysis with every rate rule computed (a hover shows the numbers even
/// for a rule the settings turn off) and without the fix search.
fn analysis_of(rig: &Rig, ci: usize) -> ChannelAnalysis {
    analysis::analyse_channel(rig, ci, &Context::new(Enabled::ALL).with_fixes(false))
}

/// The clock path from the root to `k`: "`osc` 24.576 MHz → ÷ 256 `frame` 96 kHz".
fn clock_path_text(rig: &Rig, k: usize) -> String {
    rig.clock_path(k)
        .iter()
        .map(|&i| {
            let rc = &rig.clocks[i];
            let how = match &rc.def.def {
                ClockDef::Derived {
                    divide, multiply, ..
                } => {
                    let m = multiply.as_ref().map_or(1, |m| m.value);
                    let d = divide.as_ref().map_or(1, |d| d.value);
                    if m == 1 {
                        format!("÷ {d} ")
                    } else {
                        format!("× {m} ÷ {d} ")
                    }
                }
                _ => String::new(),
            };
            let rate = rc
                .rate
                .as_ref()
                .map_or_else(|| "rate unknown".to_string(), rate_text);
            format!("{how}`{}` {rate}", rc.def.name.value)
        })
        .collect::<Vec<_>>()
        .join(" → ")
}

fn stage_row(s: &StageInfo) -> String {
    let (fold, att, req) = match &s.alias {
        Some(a) => (
            format_hz(a.fold_from_hz),
            db_text(a.attenuation_db),
            format!(
                "{} {}",
                db_text(a.required_db),
                if a.pass { "✓" } else { "✗" }
            ),
        ),
        None if !s.nyquist_ok => ("—".into(), "—".into(), "fs ≤ 2·B ✗".into()),
        None => ("—".into(), "—".into(), "not checked".into()),
    };
    format!(
        "| {} | {} | {} | {fold} | {att} | {req} |",
        s.title(),
        rate_text(&s.rate),
        sig6(s.ratio)
    )
}

/// A channel: its clock path, band, every rate change (`stage`: only that decimation
/// stage, 1-based), the worst fold, the failing verdicts and the latency.
fn channel(snap: &Snapshot, ri: usize, ci: usize, stage: Option<usize>) -> String {
    let Some(rig) = snap.rig(ri) else {
        return String::new();
    };
    let ch = &rig.channels[ci];
    let name = &ch.def.name.value;
    let mut out = match stage {
        Some(k) => format!("**decimation stage {k}** of channel `{name}`\n\n"),
        None => format!("**channel `{name}`**\n\n"),
    };
    match (ch.clock, &ch.def.clock) {
        (Some(k), _) => out.push_str(&format!("clock: {}\n\n", clock_path_text(rig, k))),
        (None, Some(c)) => out.push_str(&format!("clock: `{}` is not defined\n\n", c.value)),
        (None, None) => {}
    }
    if let Some(b) = &ch.band {
        let from = if b.from_sensor {
            "the sensor's `bandwidth`"
        } else {
            "the channel's `band`"
        };
        out.push_str(&format!("band: {} ({from})\n\n", format_hz(to_f64(&b.hz))));
    }
    let ca = analysis_of(rig, ci);
    let a = match &ca.rates {
        Ok(a) => a,
        Err(why) => {
            out.push_str(why.reason());
            out.push('\n');
            return out;
        }
    };
    if let Some(k) = stage
        && let Some(s) = a.stages.iter().find(|s| s.stage == k)
    {
        let input = s.input_rate_hz.map(format_hz).unwrap_or_default();
        out.push_str(&format!(
            "{input} ÷ {} → {}{}\n\n",
            s.factor,
            rate_text(&s.rate),
            s.filter
                .as_ref()
                .map(|f| format!(", filter: {}", f.describe()))
                .unwrap_or_else(|| ", no filter (plain down-sampling)".to_string())
        ));
    }
    out.push_str("| rate change | rate | ratio | folds from | attenuation | required |\n");
    out.push_str("|---|---|---|---|---|---|\n");
    for s in &a.stages {
        if stage.is_none_or(|k| k == s.stage) {
            out.push_str(&stage_row(s));
            out.push('\n');
        }
    }
    if stage.is_some() {
        return out;
    }
    if let Some(w) = a.worst_fold() {
        let what = match w.resonance {
            Some((f, g)) => format!("the {} resonance (+{})", format_hz(f), db_text(g)),
            None => format_hz(w.fold_from_hz),
        };
        let title = a
            .stages
            .iter()
            .find(|s| s.stage == w.stage)
            .map_or_else(String::new, StageInfo::title);
        out.push_str(&format!(
            "\nworst alias attenuation: {} at {title} (from {what}), {} required\n",
            db_text(w.attenuation_db),
            db_text(w.required_db)
        ));
    }
    let droop = a.passband.as_ref().map_or_else(String::new, |p| {
        format!(
            "; droop at the band edge {} (tolerance {})",
            db_text(p.attenuation_db),
            db_text(p.tolerance_db)
        )
    });
    out.push_str(&format!(
        "\nfinal rate {}, ratio {}{droop}\n",
        format_hz(a.final_rate_hz),
        sig6(a.final_ratio),
    ));
    if let Some(chain) = Chain::new(rig, ch) {
        out.push_str(&format!(
            "\nlatency {} (digital delays and the analog group delay at DC)\n",
            format_seconds(chain.latency_s())
        ));
    }
    let failing: Vec<String> = ca
        .verdicts()
        .into_iter()
        .filter(|v| !v.pass)
        .map(|v| match &v.about {
            Some(about) => format!("`{}` ({about})", v.rule),
            None => format!("`{}`", v.rule),
        })
        .collect();
    if !failing.is_empty() {
        out.push_str(&format!("\nfails: {}\n", failing.join(", ")));
    }
    out
}

fn clock(rig: &Rig, name: &str) -> Option<String> {
    let k = rig.clocks.iter().position(|c| c.def.name.value == name)?;
    let c = &rig.clocks[k];
    let rate = c
        .rate
        .as_ref()
        .map_or_else(|| "rate unknown".to_string(), rate_text);
    let mut out = format!("**clock `{name}`**: {rate}\n\n");
    if rig.clock_path(k).len() > 1 {
        out.push_str(&format!("path: {}\n\n", clock_path_text(rig, k)));
    }
    let n = rig.fanout.get(k).copied().unwrap_or(0);
    out.push_str(&format!(
        "drives {n} channel{}, directly or through derived clocks\n",
        if n == 1 { "" } else { "s" }
    ));
    Some(out)
}

fn sensor(rig: &Rig, name: &str) -> Option<String> {
    let s = rig.sensors.iter().find(|s| s.name.value == name)?;
    let mut out = format!("**sensor `{name}`**");
    if let Some(k) = &s.kind {
        out.push_str(&format!(" ({})", k.value));
    }
    out.push_str("\n\n");
    if let Some(b) = &s.bandwidth {
        out.push_str(&format!("bandwidth: {}\n\n", format_hz(to_f64(&b.value))));
    }
    if let Some(r) = &s.resonance {
        out.push_str(&format!(
            "resonance: {} at {}\n\n",
            db_text(r.gain.value),
            format_hz(r.frequency.value)
        ));
    }
    if let Some(resp) = &s.response {
        let d: Vec<String> = resp.value.iter().map(|f| f.response.describe()).collect();
        out.push_str(&format!("response: {}\n", d.join(", ")));
    }
    Some(out)
}

fn module(rig: &Rig, name: &str) -> Option<String> {
    let mi = rig.modules.iter().position(|m| m.name.value == name)?;
    let m = &rig.modules[mi];
    let mut out = format!("**module `{name}`**\n\n");
    if let Some(b) = &m.adc_bits {
        out.push_str(&format!("ADC: {} bits\n\n", b.value));
    }
    if let Some(r) = &m.max_rate {
        out.push_str(&format!("max rate: {}\n\n", rate_text(&r.value)));
    }
    if let Some(r) = &m.rates {
        let list: Vec<String> = r.value.iter().map(|x| rate_text(&x.value)).collect();
        out.push_str(&format!("rates: {}\n\n", list.join(", ")));
    }
    if let Some(f) = &m.filters {
        let d: Vec<String> = f.value.iter().map(|f| f.response.describe()).collect();
        out.push_str(&format!("filters: {}\n\n", d.join(", ")));
    }
    let n = rig.channels.iter().filter(|c| c.module == Some(mi)).count();
    out.push_str(&format!(
        "used by {n} channel{} of this rig\n",
        if n == 1 { "" } else { "s" }
    ));
    Some(out)
}

fn group(snap: &Snapshot, ri: usize, name: &str) -> Option<String> {
    let rig = snap.rig(ri)?;
    let gi = rig.groups.iter().position(|g| g.name.value == name)?;
    let members: Vec<String> = rig.groups[gi]
        .channels
        .iter()
        .map(|c| format!("`{}`", c.value))
        .collect();
    Some(format!(
        "**group `{name}`**: {}\n\nphase tolerance: {} deg\n",
        members.join(", "),
        sig6(
            rig.groups[gi]
                .phase_tolerance
                .as_ref()
                .map_or(rig.thresholds.phase_tolerance, |p| p.value)
        )
    ))
}

/// A filter: what it is, and for a channel using it, its share of the attenuation at each
/// rate change's folding frequency and at the band edge.
fn filter(snap: &Snapshot, ri: usize, ci: Option<usize>, f: &Filter) -> String {
    let d = f.response.describe();
    let mut out = format!("**{d}**\n\n");
    let (Some(rig), Some(ci)) = (snap.rig(ri), ci) else {
        return out;
    };
    let ca = analysis_of(rig, ci);
    let Ok(a) = &ca.rates else {
        return out;
    };
    out.push_str(&format!(
        "in channel `{}`:\n\n",
        rig.channels[ci].def.name.value
    ));
    for s in &a.stages {
        let Some(al) = &s.alias else { continue };
        if let Some((_, db)) = al
            .contributions
            .iter()
            .find(|(w, _)| w.to_string().ends_with(&d))
        {
            out.push_str(&format!(
                "- at {} ({}): {} of the chain's {} ({} required)\n",
                format_hz(al.fold_from_hz),
                s.title(),
                db_text(*db),
                db_text(al.attenuation_db),
                db_text(al.required_db)
            ));
        }
    }
    if let Some((_, db)) = a
        .passband
        .iter()
        .flat_map(|p| p.contributions.iter())
        .find(|(w, _)| w.to_string().ends_with(&d))
    {
        out.push_str(&format!(
            "- at the band edge {}: {} of droop\n",
            format_hz(a.band_hz),
            db_text(*db)
        ));
    }
    out
}
