//! The JSON form of `inspect` (`--format json`), version 1.
//!
//! Frequencies are floating-point Hz, levels dB, phases degrees. JSON has no infinity:
//! an attenuation that is infinitely deep (an exact null of a sinc response) is carried
//! as 300, the ceiling below which attenuations are printed as numbers
//! ([`crate::words::ATTENUATION_CEILING_DB`]; the text form prints `> 300 dB`).
//! Keys are always present; a value that does not apply is `null`.
//!
//! ```text
//! {
//!   "version": 1,
//!   "file": "rigs/bay-3.rig.yaml",          // as given on the command line
//!   "rig": "bay-3",                          // or null
//!   "channel": "root-strain-a",
//!   "defined_at": "rigs/bay-3.rig.yaml:41:11",
//!   "resolved": true,                        // every reference resolved, no value broken
//!   "clock": {                               // null when the channel names no clock
//!     "name": "frame", "found": true, "complete": true,
//!     "rate_hz": 48000.0,                    // the channel's clock (null if unknown)
//!     "path": [                              // root first
//!       { "clock": "osc", "divide": null, "multiply": null,
//!         "rate_hz": 24576000.0, "rate_exact_hz": "24576000" },
//!       { "clock": "frame", "divide": 512, "multiply": 1,
//!         "rate_hz": 48000.0, "rate_exact_hz": "48000" }   // "N/D" when not whole
//!     ]
//!   },
//!   "sensor": { "name", "found", "kind", "bandwidth_hz",
//!               "resonance": { "frequency_hz", "gain_db" } | null } | null,
//!   "module": { "name", "found", "adc_bits", "max_rate_hz", "rates_hz": [..],
//!               "modulator": "64 × the ADC rate = 3.2768 MHz" | null } | null,
//!   "band": { "hz": 20000.0, "from": "the channel's `band` (…)" } | null,
//!   "filters": [ { "place": "channel filter", "stage": 0,
//!                  "response": "butterworth", "description": "4th-order Butterworth at 20 kHz" } ],
//!   "filters_from": "the channel's `filters` (…)" | null,
//!   "rejection": { "required_db": 40.0, "from": "the built-in default" },
//!   "thresholds": { "margin": { "value": 2.5, "from": "…" },
//!                   "passband_tolerance_db": {…}, "oversampling_limit": {…},
//!                   "phase_tolerance_deg": {…} },
//!   "sample_bits": 32,
//!   "analysis": null | {                     // null when the channel did not resolve
//!     "band_hz": 20000.0,
//!     "rate_changes": [ {
//!       "stage": 0, "factor": 1, "input_rate_hz": null,
//!       "rate_hz": 48000.0, "rate_exact_hz": "48000",
//!       "filter": null,                      // the stage's own filter, described
//!       "ratio": 2.4, "nyquist": true,
//!       "margin": { "value": 2.5, "pass": false },
//!       "checked": true,                     // false after a rate change that fails nyquist
//!       "alias": null | { "fold_from_hz": 28000.0,   // the worst point of every image band
//!                         "attenuation_db": 11.97,
//!                         "contributions": [ { "what": "…", "attenuation_db": 11.97 } ],
//!                         "required_db": 40.0, "pass": false },
//!       "delays": [ { "filter": "5th-order sinc",   // each digital filter at this rate
//!                     "delay_s": 0.00068359375,    // change (the converter's at the ADC):
//!                     "samples": 17.5,             // null when it gives no delay; samples
//!                     "samples_rate_hz": 25600.0 } ],  // of a sinc's input rate, of a
//!                                                      // `digital` filter's output rate
//!       "modulator": null | {             // the ADC of a delta-sigma converter: its
//!         "rate_hz": 3276800.0,           // modulator images, against the analog
//!         "fold_from_hz": 3256800.0,      // chain alone (docs/model.md §4)
//!         "attenuation_db", "contributions", "required_db", "pass" },
//!       "resonance": null | { "frequency_hz", "gain_db", "arrives_at_hz", "lands_at_hz",
//!                             "folds_into_band", "attenuation_db", "net_attenuation_db",
//!                             "required_db", "pass": true | false | null }
//!     } ],
//!     "disturbances": [ { "name", "frequency_hz", "level_db", "required_db",
//!                         "outcome": "in-band" | "folds-in" | "stays-out" | "not-checked",
//!                         "stage": 1 | null,     // where it folds in (or fails nyquist)
//!                         "pass": true | false | null,
//!                         "steps": [ { "stage", "rate_hz", "from_hz", "lands_at_hz",
//!                                      "folds", "in_band", "attenuation_db" } ] } ],
//!     "passband": { "band_hz", "attenuation_db", "contributions": [..],
//!                   "tolerance_db", "pass" },
//!     "phase_at_band_deg": -180.0,
//!     "latency": { "analog_group_delay_dc_s": 2.6e-5,     // analog filters and sensor
//!                  "analog_group_delay_band_edge_s": 3.1e-5, // response, at DC and at B
//!                  "digital_delay_s": 0.00068359375,      // known digital delays, summed
//!                  "digital_delays_known": true,          // false: one gives no delay
//!                  "latency_s": 0.00070959375 },          // digital + analog at DC
//!     "final_rate_hz": 48000.0, "final_ratio": 2.4,
//!     "oversampling": { "limit": 20.0, "pass": true },
//!     "data_rate_bytes_per_s": 192000.0
//!   },
//!   "unanalysed_because": null | "…",
//!   "findings": [ { "rule", "severity", "file", "line", "column", "message",
//!                   "help", "suppressed" } ],   // as in `check --format json`
//!   "plot": "out.svg" | null
//! }
//! ```

use super::{DelayInfo, DisturbanceOutcome, Inspection};
use crate::model::quantity::to_f64;
use crate::resolve::chain::FilterName;
use crate::words::{exact_string, finite};
use serde_json::{Value, json};

fn num(x: f64) -> Value {
    Value::from(finite(x))
}

fn contributions(list: &[(FilterName, f64)]) -> Value {
    Value::Array(
        list.iter()
            .map(|(what, db)| json!({ "what": what.to_string(), "attenuation_db": num(*db) }))
            .collect(),
    )
}

/// The digital filters' delays at rate change `stage`.
fn stage_delays(d: &DelayInfo, stage: usize) -> Value {
    Value::Array(
        d.digital
            .iter()
            .filter(|sd| sd.stage == stage)
            .map(|sd| {
                json!({
                    "filter": sd.what.to_string(),
                    "delay_s": sd.delay_s.map(num),
                    "samples": sd.samples.map(|(n, _)| num(n)),
                    "samples_rate_hz": sd.samples.map(|(_, r)| num(r)),
                })
            })
            .collect(),
    )
}

/// The inspection as a JSON document (version 1); `plot` names the SVG written, if any.
pub fn render(ins: &Inspection, plot: Option<&str>) -> String {
    let clock = ins.clock.as_ref().map(|c| {
        let path: Vec<Value> = c
            .path
            .iter()
            .map(|s| {
                json!({
                    "clock": s.name,
                    "divide": s.divide,
                    "multiply": s.multiply,
                    "rate_hz": s.rate.as_ref().map(|r| num(to_f64(r))),
                    "rate_exact_hz": s.rate.as_ref().map(exact_string),
                })
            })
            .collect();
        json!({
            "name": c.name,
            "found": c.found,
            "complete": c.complete,
            "rate_hz": c.path.last().and_then(|s| s.rate.as_ref()).map(|r| num(to_f64(r))),
            "path": path,
        })
    });
    let sensor = ins.sensor.as_ref().map(|s| {
        json!({
            "name": s.name,
            "found": s.found,
            "kind": s.kind,
            "bandwidth_hz": s.bandwidth_hz.map(num),
            "resonance": s.resonance.map(|(f, g)| json!({ "frequency_hz": num(f), "gain_db": num(g) })),
        })
    });
    let module = ins.module.as_ref().map(|m| {
        json!({
            "name": m.name,
            "found": m.found,
            "adc_bits": m.adc_bits,
            "max_rate_hz": m.max_rate_hz.map(num),
            "rates_hz": m.rates_hz.iter().map(|&r| num(r)).collect::<Vec<_>>(),
            "modulator": m.modulator,
        })
    });
    let filters: Vec<Value> = ins
        .filters
        .iter()
        .map(|f| {
            json!({
                "place": f.place,
                "stage": f.stage,
                "response": f.response,
                "description": f.description,
            })
        })
        .collect();
    let mut thresholds = serde_json::Map::new();
    for t in &ins.thresholds {
        thresholds.insert(
            t.json_key.to_string(),
            json!({ "value": num(t.value), "from": t.from }),
        );
    }
    let analysis = ins.analysis.as_ref().map(|a| {
        let stages: Vec<Value> = a
            .stages
            .iter()
            .map(|s| {
                json!({
                    "stage": s.stage,
                    "factor": s.factor,
                    "input_rate_hz": s.input_rate_hz.map(num),
                    "rate_hz": num(s.rate_hz()),
                    "rate_exact_hz": exact_string(&s.rate),
                    "filter": s.filter.as_ref().map(|f| f.describe()),
                    "ratio": num(s.ratio),
                    "nyquist": s.nyquist_ok,
                    "margin": s.margin.map(|(m, pass)| json!({ "value": num(m), "pass": pass })),
                    "checked": s.checked,
                    "alias": s.alias.as_ref().map(|al| json!({
                        "fold_from_hz": num(al.fold_from_hz),
                        "attenuation_db": num(al.attenuation_db),
                        "contributions": contributions(&al.contributions),
                        "required_db": num(al.required_db),
                        "pass": al.pass,
                    })),
                    "delays": stage_delays(&a.delays, s.stage),
                    "modulator": s.modulator.as_ref().map(|(fmod, m)| json!({
                        "rate_hz": num(*fmod),
                        "fold_from_hz": num(m.fold_from_hz),
                        "attenuation_db": num(m.attenuation_db),
                        "contributions": contributions(&m.contributions),
                        "required_db": num(m.required_db),
                        "pass": m.pass,
                    })),
                    "resonance": s.resonance.as_ref().map(|r| json!({
                        "frequency_hz": num(r.frequency_hz),
                        "gain_db": num(r.gain_db),
                        "arrives_at_hz": num(r.arrives_at_hz),
                        "lands_at_hz": num(r.lands_at_hz),
                        "folds_into_band": r.folds_into_band,
                        "attenuation_db": num(r.attenuation_db),
                        "net_attenuation_db": num(r.net_db),
                        "required_db": num(r.required_db),
                        "pass": r.pass,
                    })),
                })
            })
            .collect();
        let disturbances: Vec<Value> = a
            .disturbances
            .iter()
            .map(|d| {
                let (outcome, stage, pass) = match &d.outcome {
                    DisturbanceOutcome::InBand => ("in-band", None, None),
                    DisturbanceOutcome::StaysOut => ("stays-out", None, None),
                    DisturbanceOutcome::NotChecked { stage } => ("not-checked", Some(*stage), None),
                    DisturbanceOutcome::FoldsIn { stage, pass } => {
                        ("folds-in", Some(*stage), Some(*pass))
                    }
                };
                let steps: Vec<Value> = d
                    .steps
                    .iter()
                    .map(|s| {
                        json!({
                            "stage": s.stage,
                            "rate_hz": num(s.rate_hz),
                            "from_hz": num(s.from_hz),
                            "lands_at_hz": num(s.lands_at_hz),
                            "folds": s.folds,
                            "in_band": s.in_band,
                            "attenuation_db": num(s.attenuation_db),
                        })
                    })
                    .collect();
                json!({
                    "name": d.name,
                    "frequency_hz": num(d.frequency_hz),
                    "level_db": num(d.level_db),
                    "required_db": num(d.required_db),
                    "outcome": outcome,
                    "stage": stage,
                    "pass": pass,
                    "steps": steps,
                })
            })
            .collect();
        json!({
            "band_hz": num(a.band_hz),
            "rate_changes": stages,
            "disturbances": disturbances,
            "passband": a.passband.as_ref().map(|p| json!({
                "band_hz": num(a.band_hz),
                "attenuation_db": num(p.attenuation_db),
                "contributions": contributions(&p.contributions),
                "tolerance_db": num(p.tolerance_db),
                "pass": p.pass,
            })),
            "phase_at_band_deg": num(a.phase_at_band_deg),
            "latency": json!({
                "analog_group_delay_dc_s": num(a.delays.analog_dc_s),
                "analog_group_delay_band_edge_s": num(a.delays.analog_band_edge_s),
                "digital_delay_s": num(a.delays.digital_s),
                "digital_delays_known": a.delays.complete,
                "latency_s": num(a.delays.latency_s),
            }),
            "final_rate_hz": num(a.final_rate_hz),
            "final_ratio": num(a.final_ratio),
            "oversampling": a.oversampling.as_ref().map(|o| json!({ "limit": num(o.limit), "pass": o.pass })),
            "data_rate_bytes_per_s": num(a.data_rate_bytes_per_s),
        })
    });
    let verdicts: Vec<Value> = ins
        .verdicts
        .iter()
        .map(|v| {
            json!({
                "rule": v.rule,
                "pass": v.pass,
                "stage": v.stage,
                "about": v.about,
            })
        })
        .collect();
    let findings: Vec<Value> = ins
        .findings
        .iter()
        .map(|f| {
            json!({
                "rule": f.rule,
                "severity": f.severity.as_str(),
                "file": f.file,
                "line": f.line,
                "column": f.column,
                "message": f.message,
                "help": f.help,
                "suppressed": f.suppressed,
            })
        })
        .collect();
    let doc = json!({
        "version": 1,
        "file": ins.file,
        "rig": ins.rig,
        "channel": ins.channel,
        "defined_at": ins.defined_at,
        "resolved": ins.resolved,
        "clock": clock,
        "sensor": sensor,
        "module": module,
        "band": ins.band.as_ref().map(|b| json!({ "hz": num(b.value), "from": b.from })),
        "filters": filters,
        "filters_from": ins.filters_from,
        "rejection": { "required_db": num(ins.rejection.value), "from": ins.rejection.from },
        "thresholds": thresholds,
        "sample_bits": ins.sample_bits,
        "analysis": analysis,
        "unanalysed_because": ins.no_analysis,
        "verdicts": verdicts,
        "fix": ins.fix.as_ref().map(|f| json!({
            "description": f.description,
            "help": f.help,
            "edits": f.edits.iter().map(|e| json!({
                "file": e.file,
                "start": e.start,
                "end": e.end,
                "replacement": e.replacement,
            })).collect::<Vec<_>>(),
        })),
        "findings": findings,
        "plot": plot,
    });
    let mut s = serde_json::to_string_pretty(&doc).expect("a JSON value always serialises");
    s.push('\n');
    s
}
