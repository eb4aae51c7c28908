//! The human form of `inspect`: plain text, one fact a line, the numbers with units.

use super::{ClockInfo, DelayInfo, DisturbanceOutcome, Inspection, StageInfo, image_name};
use crate::resolve::chain::FilterName;
use crate::words::{
    db_text, exact_suffix, format_bytes, format_db, format_hz, format_seconds, rate_text, sig6,
};
use std::fmt::Write;

const KEY: usize = 20;

fn line(out: &mut String, indent: usize, key: &str, value: &str) {
    let _ = writeln!(
        out,
        "{:indent$}{key:<width$}{value}",
        "",
        width = KEY.saturating_sub(indent).max(key.len() + 1)
    );
}

fn more(out: &mut String, indent: usize, value: &str) {
    let _ = writeln!(out, "{:w$}{value}", "", w = KEY.max(indent));
}

fn verdict(pass: bool) -> &'static str {
    if pass { "pass" } else { "FAIL" }
}

/// The clock path as one line: `osc 24.576 MHz → ÷512 → frame 48 kHz`.
pub fn clock_path(c: &ClockInfo) -> String {
    let mut s = String::new();
    for (i, step) in c.path.iter().enumerate() {
        if i > 0 {
            let mut ops = Vec::new();
            if let Some(m) = step.multiply.filter(|&m| m != 1) {
                ops.push(format!("×{m}"));
            }
            if let Some(d) = step.divide.filter(|&d| d != 1 || ops.is_empty()) {
                ops.push(format!("÷{d}"));
            }
            let _ = write!(s, " → {} → ", ops.join(" "));
        }
        let rate = step
            .rate
            .as_ref()
            .map_or_else(|| "(rate unknown)".to_string(), rate_text);
        let _ = write!(s, "{} {rate}", step.name);
    }
    s
}

/// Render an inspection as text; `plot` names the SVG written, if any.
pub fn render(ins: &Inspection, plot: Option<&str>) -> String {
    let mut out = String::new();
    let rig = ins
        .rig
        .as_deref()
        .map_or_else(String::new, |r| format!(" of rig `{r}`"));
    let _ = writeln!(out, "channel `{}`{rig} ({})\n", ins.channel, ins.defined_at);

    match &ins.clock {
        None => line(&mut out, 0, "clock", "none given"),
        Some(c) if !c.found => line(
            &mut out,
            0,
            "clock",
            &format!("`{}`, which is not defined", c.name),
        ),
        Some(c) => {
            line(&mut out, 0, "clock", &clock_path(c));
            if !c.complete {
                more(
                    &mut out,
                    0,
                    "(the path does not reach a root oscillator: its rate is unknown)",
                );
            }
        }
    }
    match &ins.sensor {
        None => line(&mut out, 0, "sensor", "none"),
        Some(s) if !s.found => line(
            &mut out,
            0,
            "sensor",
            &format!("`{}`, which is not defined", s.name),
        ),
        Some(s) => {
            let mut v = s.name.clone();
            if let Some(k) = &s.kind {
                let _ = write!(v, " ({k})");
            }
            let mut facts = Vec::new();
            if let Some(b) = s.bandwidth_hz {
                facts.push(format!("bandwidth {}", format_hz(b)));
            }
            if let Some((f, g)) = s.resonance {
                facts.push(format!("resonance {} +{} dB", format_hz(f), sig6(g)));
            }
            if !facts.is_empty() {
                let _ = write!(v, ": {}", facts.join(", "));
            }
            line(&mut out, 0, "sensor", &v);
        }
    }
    match &ins.module {
        None => line(&mut out, 0, "module", "none"),
        Some(m) if !m.found => line(
            &mut out,
            0,
            "module",
            &format!("`{}`, which is not defined", m.name),
        ),
        Some(m) => {
            let mut facts = Vec::new();
            if let Some(b) = m.adc_bits {
                facts.push(format!("{b}-bit ADC"));
            }
            if let Some(r) = m.max_rate_hz {
                facts.push(format!("max rate {}", format_hz(r)));
            }
            if !m.rates_hz.is_empty() {
                let rates: Vec<String> = m.rates_hz.iter().map(|&r| format_hz(r)).collect();
                facts.push(format!("rates {}", rates.join(", ")));
            }
            if let Some(md) = &m.modulator {
                facts.push(format!("delta-sigma modulator at {md}"));
            }
            let v = if facts.is_empty() {
                m.name.clone()
            } else {
                format!("{}: {}", m.name, facts.join(", "))
            };
            line(&mut out, 0, "module", &v);
        }
    }
    match &ins.band {
        None => line(
            &mut out,
            0,
            "band",
            "unknown: no `band` and no sensor `bandwidth`",
        ),
        Some(b) => line(
            &mut out,
            0,
            "band",
            &format!("{}, from {}", format_hz(b.value), b.from),
        ),
    }
    if ins.filters.is_empty() {
        let why = if ins.filters_empty_override {
            "none: the channel's `filters` is [], which overrides its module's"
        } else {
            "none"
        };
        line(&mut out, 0, "filters", why);
    } else {
        for (i, f) in ins.filters.iter().enumerate() {
            let v = format!("{}: {}", f.place, f.description);
            if i == 0 {
                line(&mut out, 0, "filters", &v);
            } else {
                more(&mut out, 0, &v);
            }
        }
        if let Some(from) = &ins.filters_from {
            more(&mut out, 0, &format!("(ADC chain from {from})"));
        }
    }
    line(
        &mut out,
        0,
        "rejection",
        &format!(
            "{} required, from {}",
            db_text(ins.rejection.value),
            ins.rejection.from
        ),
    );
    for (i, t) in ins.thresholds.iter().enumerate() {
        let v = format!("{} {}{} ({})", t.key, sig6(t.value), t.unit, t.from);
        if i == 0 {
            line(&mut out, 0, "thresholds", &v);
        } else {
            more(&mut out, 0, &v);
        }
    }

    match &ins.analysis {
        None => {
            let _ = writeln!(
                out,
                "\n{}",
                ins.no_analysis.as_deref().unwrap_or("no rate analysis")
            );
        }
        Some(a) => {
            let b = a.band_hz;
            line(
                &mut out,
                0,
                "data",
                &format!(
                    "{} bits per sample, {} at the final rate",
                    ins.sample_bits,
                    format_bytes(a.data_rate_bytes_per_s, true)
                ),
            );
            for s in &a.stages {
                out.push('\n');
                stage(&mut out, s, b);
                stage_delays(&mut out, &a.delays, s);
            }
            if !a.disturbances.is_empty() {
                out.push_str("\ndisturbances\n");
                for d in &a.disturbances {
                    let _ = writeln!(
                        out,
                        "  {} {} (+{} dB): needs {} (rejection + level)",
                        d.name,
                        format_hz(d.frequency_hz),
                        sig6(d.level_db),
                        db_text(d.required_db)
                    );
                    for st in &d.steps {
                        let at = if st.stage == 0 {
                            format!("at the ADC ({})", format_hz(st.rate_hz))
                        } else {
                            format!("at stage {} ({})", st.stage, format_hz(st.rate_hz))
                        };
                        let what = if !st.folds {
                            format!(
                                "{} is below fs/2 ({}) and stays there",
                                format_hz(st.from_hz),
                                format_hz(st.rate_hz / 2.0)
                            )
                        } else if st.in_band {
                            format!(
                                "{} folds to {}, inside the band; attenuation {}",
                                format_hz(st.from_hz),
                                format_hz(st.lands_at_hz),
                                format_db(st.attenuation_db)
                            )
                        } else {
                            format!(
                                "{} folds to {}, outside the band",
                                format_hz(st.from_hz),
                                format_hz(st.lands_at_hz)
                            )
                        };
                        let _ = writeln!(out, "    {at}: {what}");
                    }
                    let end = match &d.outcome {
                        DisturbanceOutcome::InBand => {
                            "inside the band itself: measured, not aliased".to_string()
                        }
                        DisturbanceOutcome::StaysOut => "never lands in the band: pass".to_string(),
                        DisturbanceOutcome::NotChecked { stage: 0 } => {
                            "not followed: the ADC rate is not above twice the band".to_string()
                        }
                        DisturbanceOutcome::NotChecked { stage } => format!(
                            "not followed: stage {stage} leaves a rate not above twice the band"
                        ),
                        DisturbanceOutcome::FoldsIn { stage, pass } => {
                            let a = d
                                .steps
                                .iter()
                                .find(|s| s.stage == *stage)
                                .map_or(0.0, |s| s.attenuation_db);
                            if *pass {
                                format!("{} ≥ {}: pass", format_db(a), format_db(d.required_db))
                            } else {
                                format!(
                                    "{} < {}: FAIL, {} short",
                                    format_db(a),
                                    format_db(d.required_db),
                                    format_db(d.required_db - a)
                                )
                            }
                        }
                    };
                    let _ = writeln!(out, "    verdict: {end}");
                }
            }
            out.push_str("\nband edge\n");
            if let Some(p) = &a.passband {
                line(
                    &mut out,
                    2,
                    "passband",
                    &format!(
                        "{} at {} (tolerance {} dB): {}",
                        format_db(p.attenuation_db),
                        format_hz(b),
                        sig6(p.tolerance_db),
                        verdict(p.pass)
                    ),
                );
                for (what, db) in p.contributions.iter().filter(|(_, db)| *db != 0.0) {
                    more(&mut out, 2, &format!("  {what}: {}", format_db(*db)));
                }
            }
            line(
                &mut out,
                2,
                "phase",
                &format!("{:.2} deg at {}", zero(a.phase_at_band_deg), format_hz(b)),
            );
            latency(&mut out, &a.delays, b);
            let limit = match &a.oversampling {
                Some(o) => format!(
                    " (oversampling limit {}: {})",
                    sig6(o.limit),
                    if o.pass { "pass" } else { "above it" }
                ),
                None => String::new(),
            };
            line(
                &mut out,
                2,
                "final rate",
                &format!(
                    "{}, ratio {}{limit}",
                    format_hz(a.final_rate_hz),
                    sig6(round4(a.final_ratio)),
                ),
            );
        }
    }

    let _ = writeln!(out, "\nfindings ({})", ins.findings.len());
    if ins.findings.is_empty() {
        out.push_str("  none\n");
    }
    for f in &ins.findings {
        let _ = writeln!(
            out,
            "  {:<8}{}  {}:{}:{}",
            f.severity.as_str(),
            f.rule,
            f.file,
            f.line,
            f.column
        );
        let _ = writeln!(out, "          {}", f.message);
        if let Some(h) = &f.help {
            let _ = writeln!(out, "          help: {h}");
        }
        if let Some(r) = &f.suppressed {
            let _ = writeln!(out, "          suppressed: {r}");
        }
    }
    if let Some(p) = plot {
        let _ = writeln!(out, "\nplot written to {p}");
    }
    out
}

/// One `delay` line per digital filter of rate change `s` (the converter's filters at
/// the ADC, the stage's own filter after it).
fn stage_delays(out: &mut String, d: &DelayInfo, s: &StageInfo) {
    for sd in d.digital.iter().filter(|sd| sd.stage == s.stage) {
        let v = match (sd.delay_s, sd.samples) {
            (Some(t), Some((n, rate))) => format!(
                "{} ({} samples at {}), {}",
                format_seconds(t),
                sig6(n),
                format_hz(rate),
                sd.what
            ),
            (Some(t), None) => format!("{}, {}", format_seconds(t), sd.what),
            (None, _) => format!(
                "unknown (no `delay` or `delay-samples`: counted as 0), {}",
                sd.what
            ),
        };
        line(out, 2, "delay", &v);
    }
}

/// The analog group delay at DC and at the band edge, and the latency.
fn latency(out: &mut String, d: &DelayInfo, b: f64) {
    line(
        out,
        2,
        "group delay",
        &format!(
            "{} at DC, {} at {} (analog filters and sensor response)",
            format_seconds(d.analog_dc_s),
            format_seconds(d.analog_band_edge_s),
            format_hz(b)
        ),
    );
    let unknown = if d.complete {
        ""
    } else {
        ", a digital delay unknown"
    };
    line(
        out,
        2,
        "latency",
        &format!(
            "{} (digital {} + analog at DC {}{unknown})",
            format_seconds(d.latency_s),
            format_seconds(d.digital_s),
            format_seconds(d.analog_dc_s)
        ),
    );
}

/// Shows -0.00 as 0.00.
fn zero(x: f64) -> f64 {
    if x.abs() < 0.005 { 0.0 } else { x }
}

fn round4(x: f64) -> f64 {
    crate::words::round_to(x, 4)
}

fn stage(out: &mut String, s: &StageInfo, b: f64) {
    let fs = s.rate_hz();
    let exact = exact_suffix(&s.rate).map_or_else(String::new, |e| format!(" ({e})"));
    if s.stage == 0 {
        let _ = writeln!(out, "ADC at {}{exact}", format_hz(fs));
    } else {
        let filter = s.filter.as_ref().map_or_else(
            || "no filter: plain down-sampling".to_string(),
            |f| format!("with a {}", f.describe()),
        );
        let _ = writeln!(
            out,
            "decimation stage {}: ÷{} from {} to {}{exact}, {filter}",
            s.stage,
            s.factor,
            format_hz(s.input_rate_hz.unwrap_or(fs)),
            format_hz(fs)
        );
    }
    if !s.checked {
        line(
            out,
            2,
            "not checked",
            "an earlier rate change is not above twice the band",
        );
        return;
    }
    let nyq = if s.nyquist_ok {
        "above 2 (nyquist pass)".to_string()
    } else {
        "not above 2 (nyquist FAIL)".to_string()
    };
    let mar = match s.margin {
        _ if !s.nyquist_ok => String::new(),
        None => String::new(),
        Some((margin, true)) => format!(", at least the {}× margin (pass)", sig6(margin)),
        Some((margin, false)) => format!(", below the {}× margin (FAIL)", sig6(margin)),
    };
    line(
        out,
        2,
        "ratio fs/B",
        &format!("{}: {nyq}{mar}", sig6(round4(s.ratio))),
    );
    match &s.alias {
        None => {
            let v = if fs > b {
                format!(
                    "fs − B = {} lies inside the band: the band folds onto itself",
                    format_hz(fs - b)
                )
            } else {
                "fs is not above the band: the band folds onto itself".to_string()
            };
            line(out, 2, "folds from", &v);
        }
        Some(al) => {
            line(
                out,
                2,
                "folds from",
                &image_name(al.fold_from_hz, fs, b, "fs"),
            );
            if al.contributions.is_empty() {
                line(
                    out,
                    2,
                    "attenuation",
                    &format!(
                        "{} (no filter before this rate change)",
                        format_db(al.attenuation_db)
                    ),
                );
            } else {
                line(out, 2, "attenuation", &format_db(al.attenuation_db));
                for (what, db) in &al.contributions {
                    more(out, 2, &format!("  {what}: {}", format_db(*db)));
                }
            }
            line(out, 2, "required", &db_text(al.required_db));
            let v = if al.pass {
                "pass".to_string()
            } else {
                format!(
                    "FAIL, {} short",
                    format_db(al.required_db - al.attenuation_db)
                )
            };
            line(out, 2, "alias rejection", &v);
        }
    }
    if let Some((fmod, m)) = &s.modulator {
        line(
            out,
            2,
            "modulator",
            &format!(
                "{}: the converter's filter repeats around its multiples, so only the analog chain protects the band from their images",
                format_hz(*fmod)
            ),
        );
        line(
            out,
            2,
            "folds from",
            &image_name(m.fold_from_hz, *fmod, b, "f_mod"),
        );
        let analog: Vec<&(FilterName, f64)> = m
            .contributions
            .iter()
            .filter(|(_, db)| *db != 0.0)
            .collect();
        if analog.is_empty() {
            line(
                out,
                2,
                "attenuation",
                &format!(
                    "{} (no analog filter before the converter)",
                    format_db(m.attenuation_db)
                ),
            );
        } else {
            line(
                out,
                2,
                "attenuation",
                &format!("{} (analog chain alone)", format_db(m.attenuation_db)),
            );
            for (what, db) in analog {
                more(out, 2, &format!("  {what}: {}", format_db(*db)));
            }
        }
        let v = if m.pass {
            "pass".to_string()
        } else {
            format!(
                "FAIL, {} short",
                format_db(m.required_db - m.attenuation_db)
            )
        };
        line(out, 2, "modulator images", &v);
    }
    if let Some(r) = &s.resonance {
        let mut head = format!("{} (+{} dB)", format_hz(r.frequency_hz), sig6(r.gain_db));
        if s.stage > 0 && (r.arrives_at_hz - r.frequency_hz).abs() > 1e-9 && r.arrives_at_hz > b {
            let _ = write!(
                head,
                ", at {} before this stage,",
                format_hz(r.arrives_at_hz)
            );
        }
        let v = if r.frequency_hz <= b {
            format!("{head} lies inside the band")
        } else if r.arrives_at_hz <= b {
            format!("{head} is already in the band (folded at an earlier rate change)")
        } else if r.folds_into_band {
            let verdict = match r.pass {
                Some(true) => "pass".to_string(),
                Some(false) => format!("FAIL, {} needed", db_text(r.required_db)),
                None => "not checked (the rate is not above twice the band)".to_string(),
            };
            format!(
                "{head} folds to {}, inside the band; net {} ({} − {} dB): {verdict}",
                format_hz(r.lands_at_hz),
                format_db(r.net_db),
                format_db(r.attenuation_db),
                sig6(r.gain_db)
            )
        } else if (r.lands_at_hz - r.arrives_at_hz).abs() < 1e-9 {
            format!(
                "{head} stays at {}, outside the band",
                format_hz(r.lands_at_hz)
            )
        } else {
            format!(
                "{head} folds to {}, outside the band",
                format_hz(r.lands_at_hz)
            )
        };
        line(out, 2, "resonance", &v);
    }
}
