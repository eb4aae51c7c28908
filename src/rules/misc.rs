//! Single-value checks: `module-rate`, `missing-band`, `passband-droop`, `sensor-band`,
//! `oversampling`, `unused-clock`.

use super::rates::{clock_labels, rate_channels};
use super::{Rule, Stage};
use crate::analysis::{ModuleLimit, RigAnalysis};
use crate::declared;
use crate::finding::{Finding, Label};
use crate::fingerprint::segment;
use crate::model::Response;
use crate::model::quantity::to_f64;
use crate::resolve::chain::{Contribution, FilterPlace};
use crate::signal::digital;
use crate::words::{format_db, format_hz, round_to, sig6};

/// `module-rate`.
pub static MODULE_RATE: Rule = Rule {
    name: declared::MODULE_RATE.name,
    severity: declared::MODULE_RATE.severity,
    summary: "a channel's ADC rate is above its module's max-rate or not one of its rates",
    explanation: "\
A module (acquisition card) supports a highest ADC rate (`max-rate`) and sometimes only a
fixed list of rates (`rates`). A channel whose clock works out to another rate cannot be
configured on the hardware as described.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 204.8 kHz
modules:
  - name: card-a
    max-rate: 102.4 kHz
channels:
  - name: accel-1
    clock: base
    module: card-a
    band: 40 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 48 kHz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 102.4 kHz
modules:
  - name: card-a
    max-rate: 102.4 kHz
channels:
  - name: accel-1
    clock: base
    module: card-a
    band: 20 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 23 kHz }
",
    stage: Stage::Physics,
    check: Some(check_module_rate),
};

fn check_module_rate(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for c in &a.channels {
        let Some(v) = c.module_rate.as_ref().filter(|v| !v.pass) else {
            continue;
        };
        let ch = &rig.channels[c.channel];
        let m = &rig.modules[v.module];
        let fs = to_f64(&v.rate);
        let span = ch.def.clock.as_ref().map_or(ch.def.name.span, |c| c.span);
        let name = &ch.def.name.value;
        match &v.limit {
            Some(ModuleLimit::MaxRate(max)) => {
                let limit = to_f64(max);
                let max_span = m.max_rate.as_ref().map_or(m.name.span, |m| m.span);
                let mut f = MODULE_RATE
                    .finding(
                        span,
                        format!("samples at {}", format_hz(fs)),
                        format!(
                            "`{name}` samples at {}, above the {} max-rate of module `{}`",
                            format_hz(fs),
                            format_hz(limit),
                            m.name.value
                        ),
                    )
                    .with_channel(name)
                    .with_label(max_span, format!("max-rate {}", format_hz(limit)));
                f.secondary
                    .extend(ch.clock.map(|k| clock_labels(rig, k)).unwrap_or_default());
                out.push(
                    f.with_help(format!(
                        "divide the clock down to {} or less, or use a faster module",
                        format_hz(limit)
                    ))
                    .with_f64("rate_hz", fs)
                    .with_f64("limit_hz", limit),
                );
            }
            Some(ModuleLimit::Rates { nearest }) => {
                let Some(rates) = m.rates.as_ref() else {
                    continue;
                };
                let list: Vec<String> = rates
                    .value
                    .iter()
                    .map(|r| format_hz(to_f64(&r.value)))
                    .collect();
                out.push(
                    MODULE_RATE
                        .finding(
                            span,
                            format!("samples at {}", format_hz(fs)),
                            format!(
                                "`{name}` samples at {}, which module `{}` does not support",
                                format_hz(fs),
                                m.name.value
                            ),
                        )
                        .with_channel(name)
                        .with_label(rates.span, format!("supported: {}", list.join(", ")))
                        .with_help(format!(
                            "use a clock at one of the module's rates: {}",
                            list.join(", ")
                        ))
                        .with_f64("rate_hz", fs)
                        .with_f64("limit_hz", to_f64(nearest)),
                );
            }
            None => {}
        }
    }
}

/// `missing-band`.
pub static MISSING_BAND: Rule = Rule {
    name: declared::MISSING_BAND.name,
    severity: declared::MISSING_BAND.severity,
    summary: "a channel has no band and no sensor bandwidth",
    explanation: "\
Every check of a channel starts from its band B, the highest frequency of interest. It is
the channel's `band`, or else its sensor's `bandwidth`. Without either, nothing can be
checked. A sensor `bandwidth` that is written but cannot be read (a misspelt unit) is
reported once, as `quantity`, not again here for every channel relying on it.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: temp-1
    clock: base
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 2 kHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    stage: Stage::Physics,
    check: Some(check_missing_band),
};

fn check_missing_band(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for ch in rig
        .channels
        .iter()
        .filter(|c| c.band.is_none() && !c.def.broken)
    {
        if ch.def.sensor.is_some() && ch.sensor.is_none() {
            continue; // the unknown sensor is reported; its bandwidth may be the band
        }
        if ch
            .sensor
            .is_some_and(|s| rig.sensors[s].bandwidth_unreadable)
        {
            continue; // the sensor's unreadable `bandwidth` is reported: one typo, one finding
        }
        let name = &ch.def.name.value;
        let help = match ch.sensor.map(|s| &rig.sensors[s]) {
            Some(s) => format!(
                "give the channel a `band`, or sensor `{}` a `bandwidth`",
                s.name.value
            ),
            None => "give the channel a `band` (the highest frequency of interest)".to_string(),
        };
        out.push(
            MISSING_BAND
                .finding(
                    ch.def.name.span,
                    "no band",
                    format!("`{name}` has no band and no sensor bandwidth"),
                )
                .with_channel(name)
                .with_help(help),
        );
    }
}

/// `passband-droop`.
pub static PASSBAND_DROOP: Rule = Rule {
    name: declared::PASSBAND_DROOP.name,
    severity: declared::PASSBAND_DROOP.severity,
    summary: "the chain attenuates the band edge by more than the passband tolerance",
    explanation: "\
An anti-alias filter whose cutoff sits too close to the band edge attenuates the very
signal the channel is meant to measure. The chain's attenuation at B (analog filters,
sensor response and every decimation filter) must stay within the passband tolerance:
the rig's `defaults.passband-tolerance`, else foldcheck.toml, else 0.5 dB.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 10 kHz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
",
    stage: Stage::Physics,
    check: Some(check_droop),
};

fn check_droop(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for (ch, _, r) in rate_channels(a) {
        let Some(p) = r.droop_failure() else { continue };
        let (band, att, tol) = (r.band_hz, p.attenuation_db, p.tolerance_db);
        let name = &ch.def.name.value;
        let b = ch.band.as_ref().expect("rate channels have a band");
        // The primary label sits on the filter that attenuates the band edge most, the
        // value to change (a sensor's response is not: its droop points at the band).
        let in_stage = p
            .largest
            .as_ref()
            .filter(|c| c.place != FilterPlace::Sensor);
        let (span, label) = match (&ch.filters_span, in_stage) {
            (_, Some(c)) => (
                c.span,
                if format_db(c.db) == format_db(att) {
                    format!("droops {} by {}", format_hz(band), format_db(c.db))
                } else {
                    format!(
                        "droops {} by {} of the {}",
                        format_hz(band),
                        format_db(c.db),
                        format_db(att)
                    )
                },
            ),
            (Some((span, _)), None) if !ch.filters.is_empty() => (
                *span,
                format!("attenuates {} by {}", format_hz(band), format_db(att)),
            ),
            _ => (b.span, format!("{} at the band edge", format_db(att))),
        };
        let mut f = PASSBAND_DROOP
            .finding(span, label, format!(
                "the chain of `{name}` attenuates its {} band edge by {}, more than the {} dB tolerance",
                format_hz(band),
                format_db(att),
                sig6(tol)
            ))
            .with_channel(name)
            .with_label(b.span, format!("band {}", format_hz(band)));
        if let Some(s) = rig.threshold_spans.get("passband-tolerance") {
            f.secondary
                .push(Label::new(*s, format!("tolerance {} dB", sig6(tol))));
        }
        out.push(
            f.with_help(droop_help(p.largest.as_ref(), band, att, tol))
                .with_f64("band_hz", band)
                .with_f64("attenuation_db", round_to(att, 3))
                .with_f64("tolerance_db", tol),
        );
    }
}

/// The help of a `passband-droop` finding, fitting the family of the filter that
/// attenuates the band edge most (`cause`); `att` is the whole chain's droop at the band
/// edge `band`, `tol` the tolerance (docs/model.md §2).
fn droop_help(cause: Option<&Contribution>, band: f64, att: f64, tol: f64) -> String {
    let Some(c) = cause else {
        return "move the anti-alias filter's cutoff further above the band edge, or narrow the band"
            .to_string();
    };
    // What the other filters leave for this one.
    let budget = tol - (att - c.db);
    let what = &c.what();
    let place = c.place.short();
    let in_decimation = matches!(c.place, FilterPlace::Stage(_));
    match &c.response {
        Response::Sinc { order } => {
            let (fin, m) = c.placement.stage.unwrap_or((f64::NAN, 1));
            // A sinc's droop is N times that of one order (−20·N·log10|…|, Hogenauer
            // 1981): the highest order within the budget.
            let per_order = c.db / f64::from(*order);
            let lower_order = (1..*order)
                .rev()
                .find(|&n| f64::from(n) * per_order <= budget + 1e-9);
            // With the order kept, the largest smaller factor within the budget. While the
            // band stays below the output rate (k < fin / band: the main lobe) the droop
            // grows with the factor, so it is found by bisection: a factor may be
            // 4 294 967 295, and a search through every smaller one was a hang.
            let fits = |k: u32| digital::sinc_attenuation_db(*order, k, fin, band) <= budget + 1e-9;
            let lobe = (fin / band).floor();
            let top = if lobe.is_finite() && lobe >= 0.0 {
                u64::from(m.saturating_sub(1)).min(lobe as u64)
            } else {
                u64::from(m.saturating_sub(1))
            };
            let lower_factor = if fin.is_finite() && band > 0.0 && top >= 2 && fits(2) {
                // fits(lo) holds; find the largest k ≤ top that fits.
                let (mut lo, mut hi) = (2u64, top);
                while lo < hi {
                    let mid = lo + (hi - lo).div_ceil(2);
                    if fits(mid as u32) {
                        lo = mid;
                    } else {
                        hi = mid - 1;
                    }
                }
                Some(lo as u32)
            } else {
                None
            };
            let mut ways = Vec::new();
            if let Some(n) = lower_order {
                ways.push(format!(
                    "`order: {n}` droops {} in all",
                    format_db(att - c.db + f64::from(n) * per_order)
                ));
            }
            if let Some(k) = lower_factor {
                ways.push(format!(
                    "`factor: {k}` (order {order}) droops {} in all",
                    format_db(att - c.db + digital::sinc_attenuation_db(*order, k, fin, band))
                ));
            }
            ways.push(
                "a compensating FIR stage after it (a passband rising by the sinc's droop) restores the band edge"
                    .to_string(),
            );
            format!(
                "a sinc has no cutoff to move: its droop at {} grows with its order and with its factor (the band is {} of its {} output rate); {}",
                format_hz(band),
                sig6(round_to(band / c.placement.output_rate, 4)),
                format_hz(c.placement.output_rate),
                ways.join("; ")
            )
        }
        Response::Digital { .. } if band / c.placement.output_rate >= 0.5 => {
            format!(
                "the band edge is {} of this filter's {} output rate, more than a decimating filter can pass (below 0.5): {}",
                sig6(round_to(band / c.placement.output_rate, 4)),
                format_hz(c.placement.output_rate),
                if in_decimation {
                    "decimate less in this stage"
                } else {
                    "sample faster"
                }
            )
        }
        Response::Digital { passband_edge, .. } => {
            let fout = c.placement.output_rate;
            format!(
                "this `digital` filter is flat only up to its `passband-edge` ({} × {} = {}): raise it to at least {} (the band edge ÷ the output rate), or {}",
                sig6(*passband_edge),
                format_hz(fout),
                format_hz(passband_edge * fout),
                sig6((band / fout * 1e4).ceil() / 1e4),
                if in_decimation {
                    "decimate less in this stage"
                } else {
                    "sample faster"
                }
            )
        }
        Response::Table { .. } => format!(
            "the `table` response ({what}) attenuates the band edge by {}: choose a part or setting flatter at {}, or narrow the band",
            format_db(c.db),
            format_hz(band)
        ),
        Response::Butterworth { order, cutoff } if budget > 0.0 => {
            // 10·log10(1 + (B/fc)^2n) ≤ budget  ⇔  fc ≥ B / (10^(budget/10) − 1)^(1/2n).
            let fc = band / (10f64.powf(budget / 10.0) - 1.0).powf(1.0 / (2.0 * f64::from(*order)));
            format!(
                "move the {place}'s cutoff ({}-order Butterworth, now {}) to {} or higher: that keeps the chain's droop at {} within {} dB",
                crate::model::ordinal(*order),
                format_hz(*cutoff),
                format_hz(round_up_sig3(fc)),
                format_hz(band),
                sig6(tol),
            )
        }
        other => format!(
            "move the {place}'s cutoff ({}) further above the band edge",
            other.describe()
        ),
    }
}

/// `x` rounded up to three significant digits.
fn round_up_sig3(x: f64) -> f64 {
    if x <= 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(x.log10().floor() as i32 - 2);
    (x / scale - 1e-9).ceil() * scale
}

/// `sensor-band`.
pub static SENSOR_BAND: Rule = Rule {
    name: declared::SENSOR_BAND.name,
    severity: declared::SENSOR_BAND.severity,
    summary: "the channel's band is above its sensor's bandwidth",
    explanation: "\
A sensor measures usefully only up to its `bandwidth`. A channel band above it records
frequencies the sensor cannot deliver faithfully; the band or the sensor is probably
wrong.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
sensors:
  - name: acc-slow
    bandwidth: 5 kHz
channels:
  - name: accel-1
    clock: base
    sensor: acc-slow
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
sensors:
  - name: acc-fast
    bandwidth: 12 kHz
channels:
  - name: accel-1
    clock: base
    sensor: acc-fast
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
",
    stage: Stage::Physics,
    check: Some(check_sensor_band),
};

fn check_sensor_band(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for c in &a.channels {
        let Some(v) = c.sensor_band.as_ref().filter(|v| !v.pass) else {
            continue;
        };
        let ch = &rig.channels[c.channel];
        let s = &rig.sensors[v.sensor];
        let (Some(band), Some(bw)) = (ch.band.as_ref(), s.bandwidth.as_ref()) else {
            continue;
        };
        let name = &ch.def.name.value;
        let (b, w) = (to_f64(&v.band), to_f64(&v.bandwidth));
        out.push(
            SENSOR_BAND
                .finding(
                    band.span,
                    format!("band {}", format_hz(b)),
                    format!(
                        "`{name}` has a {} band, above the {} bandwidth of sensor `{}`",
                        format_hz(b),
                        format_hz(w),
                        s.name.value
                    ),
                )
                .with_channel(name)
                .with_label(bw.span, format!("bandwidth {}", format_hz(w)))
                .with_help(format!(
                    "lower the band to {} or less, or fit a sensor that reaches {}",
                    format_hz(w),
                    format_hz(b)
                ))
                .with_f64("band_hz", b)
                .with_f64("sensor_bandwidth_hz", w),
        );
    }
}

/// `oversampling`.
pub static OVERSAMPLING: Rule = Rule {
    name: declared::OVERSAMPLING.name,
    severity: declared::OVERSAMPLING.severity,
    summary: "the final rate is far above what the band needs",
    explanation: "\
A final rate far above the band spends storage and throughput on frequencies nobody
analyses. The limit is the rig's `defaults.oversampling-limit`, else foldcheck.toml, else
20 times the band. Decimate or divide the clock down.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: temp-1
    clock: base
    band: 1 kHz
    filters:
      - { response: butterworth, order: 4, cutoff: 2 kHz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: temp-1
    clock: base
    band: 1 kHz
    filters:
      - { response: butterworth, order: 4, cutoff: 2 kHz }
    decimate:
      - factor: 8
        filter: { response: digital, passband-edge: 0.2, stopband-edge: 0.5, attenuation: 90 dB }
",
    stage: Stage::Physics,
    check: Some(check_oversampling),
};

fn check_oversampling(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for (ch, _, r) in rate_channels(a) {
        let Some(o) = r.oversampling_failure() else {
            continue;
        };
        let last = r.stages.last().expect("the ADC is always there");
        let (fs, band, ratio, limit) = (r.final_rate_hz, r.band_hz, r.final_ratio, o.limit);
        let name = &ch.def.name.value;
        let target = limit * band;
        // Decimating by at least `least` reaches the limit; by at most `most` keeps the margin.
        let least = (fs / target).ceil().max(2.0) as u64;
        let most = (fs / (rig.thresholds.margin * band)).floor().max(2.0) as u64;
        let mut f = OVERSAMPLING
            .finding(
                last.span,
                format!("{} final rate", format_hz(fs)),
                format!(
                    "`{name}` ends at {}, {}× its {} band (the limit is {}×)",
                    format_hz(fs),
                    sig6(round_to(ratio, 2)),
                    format_hz(band),
                    sig6(limit)
                ),
            )
            .with_channel(name)
            .with_label(
                ch.band.as_ref().expect("band").span,
                format!("band {}", format_hz(band)),
            );
        if let Some(s) = rig.threshold_spans.get("oversampling-limit") {
            f.secondary
                .push(Label::new(*s, format!("limit {}×", sig6(limit))));
        }
        out.push(
            f.with_help(format!(
                "decimate (with a filter) by {}, or divide the clock down: a final rate of {} or less is within the limit",
                if least == most {
                    format!("a factor of {least}")
                } else {
                    format!("a factor from {least} to {most}")
                },
                format_hz(target)
            ))
            .with_f64("rate_hz", fs)
            .with_f64("band_hz", band)
            .with_f64("ratio", round_to(ratio, 4)),
        );
    }
}

/// `unused-clock`.
pub static UNUSED_CLOCK: Rule = Rule {
    name: declared::UNUSED_CLOCK.name,
    severity: declared::UNUSED_CLOCK.severity,
    summary: "a clock drives no channel, directly or through derived clocks",
    explanation: "\
A clock that no channel samples on, directly or through clocks derived from it, is dead
configuration, or a channel names the wrong clock. Only clocks defined in the rig file
itself are checked: a shared catalog's clocks serve many rigs.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
  - name: spare
    frequency: 10 MHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    stage: Stage::Physics,
    check: Some(check_unused_clock),
};

fn check_unused_clock(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    // A channel whose clock reference is broken might have meant any clock: stay quiet.
    if rig
        .channels
        .iter()
        .any(|c| c.def.clock.is_some() && c.clock.is_none())
    {
        return;
    }
    for (i, c) in rig.clocks.iter().enumerate() {
        if c.def.name.span.file != rig.file
            || c.in_cycle
            || matches!(c.def.def, crate::model::ClockDef::Invalid { .. })
        {
            continue;
        }
        if rig.fanout[i] > 0 {
            continue;
        }
        out.push(
            UNUSED_CLOCK
                .finding(
                    c.def.name.span,
                    "drives no channel",
                    format!(
                        "clock `{}` drives no channel, directly or through derived clocks",
                        c.def.name.value
                    ),
                )
                .with_subject(format!("clock/{}", segment(&c.def.name.value)))
                .with_help("remove it, or point the channel that should use it at it"),
        );
    }
}
