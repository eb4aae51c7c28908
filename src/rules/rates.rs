//! `nyquist` and `sampling-margin`: the rate at every rate change against the band.

use super::{Rule, Stage};
use crate::analysis::RigAnalysis;
use crate::analysis::{ChannelAnalysis, RateAnalysis, StageInfo};
use crate::declared;
use crate::finding::{Finding, Fix, Label};
use crate::model::ClockDef;
use crate::model::quantity::to_f64;
use crate::resolve::{RChannel, Rig};
use crate::words::{format_hz, round_to, sig6};

/// `nyquist`.
pub static NYQUIST: Rule = Rule {
    name: declared::NYQUIST.name,
    severity: declared::NYQUIST.severity,
    summary: "a rate change samples at or below twice the channel's band",
    explanation: "\
The sampling theorem (C. E. Shannon, 1949) needs the sample rate to be above twice the
highest frequency of interest. At or below it, part of the band folds onto itself and
cannot be told apart afterwards. The rule checks the ADC rate (the channel's clock, worked
out exactly through the clock tree) and the rate after every decimation stage against
the channel's `band` (or its sensor's `bandwidth`).",
    failing: "\
format: 1
rig: demo
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: slow
    source: osc
    divide: 32768
channels:
  - name: mic-1
    clock: slow
    band: 400 Hz
    filters: []
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: osc
    frequency: 24.576 MHz
  - name: slow
    source: osc
    divide: 8192
channels:
  - name: mic-1
    clock: slow
    band: 400 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 600 Hz }
",
    stage: Stage::Physics,
    check: Some(check_nyquist),
};

/// `sampling-margin`.
pub static SAMPLING_MARGIN: Rule = Rule {
    name: declared::SAMPLING_MARGIN.name,
    severity: declared::SAMPLING_MARGIN.severity,
    summary: "a rate change is above twice the band but below the practical margin",
    explanation: "\
Above twice the band is the theoretical minimum; practice (common practice, no single
source) samples at about 2.5 to 3 times the band so that a real anti-alias filter has
room to roll off between the band edge and the first frequency that folds back. The
margin is `defaults.margin` of the rig, else `margin` in foldcheck.toml, else 2.5. The
audio CD's 44.1 kHz for a 20 kHz band (ratio 2.205) is the classic example of a rate
just above the minimum.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: cd
    frequency: 44.1 kHz
channels:
  - name: left
    clock: cd
    band: 20 kHz
    filters:
      - { response: digital, passband-edge: 0.454, stopband-edge: 0.546, attenuation: 100 dB }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: studio
    frequency: 96 kHz
channels:
  - name: left
    clock: studio
    band: 20 kHz
    filters:
      - { response: digital, passband-edge: 0.454, stopband-edge: 0.546, attenuation: 100 dB }
",
    stage: Stage::Physics,
    check: Some(check_margin),
};

/// Labels along a clock path: the root frequency and every divider and multiplier.
pub fn clock_labels(rig: &Rig, clock: usize) -> Vec<Label> {
    let mut labels = Vec::new();
    for i in rig.clock_path(clock) {
        let c = &rig.clocks[i];
        match &c.def.def {
            ClockDef::Root { frequency } => labels.push(Label::new(
                frequency.span,
                format!(
                    "`{}` runs at {}",
                    c.def.name.value,
                    format_hz(to_f64(&frequency.value))
                ),
            )),
            ClockDef::Derived {
                source,
                divide,
                multiply,
            } => {
                let from = c
                    .parent
                    .and_then(|p| rig.clocks[p].rate)
                    .map(|r| format_hz(to_f64(&r)));
                let from = from.unwrap_or_else(|| format!("`{}`", source.value));
                if let Some(m) = multiply.as_ref().filter(|m| m.value != 1) {
                    labels.push(Label::new(
                        m.span,
                        format!("multiplies {from} by {}", m.value),
                    ));
                }
                match divide {
                    Some(d) => labels.push(Label::new(
                        d.span,
                        format!(
                            "divides {from} by {} to {}",
                            d.value,
                            crate::words::rate_or_unknown(c.rate)
                        ),
                    )),
                    None if multiply.is_none() => labels.push(Label::new(
                        source.span,
                        format!("runs at the rate of `{}`", source.value),
                    )),
                    None => {}
                }
            }
            ClockDef::Invalid { .. } => {}
        }
    }
    labels
}

/// The labels for a rate change: for the ADC (stage 0), the clock path.
pub fn rate_labels(rig: &Rig, ch: &RChannel, stage: usize) -> Vec<Label> {
    if stage == 0 {
        ch.clock.map(|k| clock_labels(rig, k)).unwrap_or_default()
    } else {
        Vec::new()
    }
}

/// "samples at 750 Hz" / "decimation stage 2 leaves 750 Hz".
pub fn rate_phrase(rc: &StageInfo) -> String {
    if rc.stage == 0 {
        format!("samples at {}", format_hz(rc.rate_hz()))
    } else {
        format!(
            "decimation stage {} leaves {}",
            rc.stage,
            format_hz(rc.rate_hz())
        )
    }
}

/// "samples at 750 Hz" / "is left at 750 Hz after decimation stage 2", for messages.
pub fn rate_clause(rc: &StageInfo) -> String {
    if rc.stage == 0 {
        format!("samples at {}", format_hz(rc.rate_hz()))
    } else {
        format!(
            "is left at {} after decimation stage {}",
            format_hz(rc.rate_hz()),
            rc.stage
        )
    }
}

/// The channels whose rate rules were analysed: the channel, its analysis and its
/// rate analysis.
pub fn rate_channels<'a>(
    a: &'a RigAnalysis,
) -> impl Iterator<Item = (&'a RChannel, &'a ChannelAnalysis, &'a RateAnalysis)> {
    a.channels.iter().filter_map(move |c| {
        let r = c.rates.as_ref().ok()?;
        Some((&a.rig.channels[c.channel], c, r))
    })
}

/// Give a rate finding its help: the channel's fix (confirmed by the analysis) with
/// the help that names it, and `fallback` as the help to show if the fix is dropped by
/// verification; just `fallback` when there is no fix. `suffix` is added to both.
pub fn with_fix_or_help(
    f: Finding,
    c: &ChannelAnalysis,
    fallback: Option<String>,
    suffix: Option<&str>,
) -> Finding {
    let add = |h: String| match suffix {
        Some(s) => format!("{h}; {s}"),
        None => h,
    };
    match &c.fix {
        Some(fix) if !fix.edits.is_empty() => f.with_fix_and_help(
            Fix {
                description: fix.description.clone(),
                edits: fix.edits.clone(),
            },
            add(fix.help.clone()),
            fallback.map(add),
        ),
        _ => f.with_help_opt(fallback.map(add)),
    }
}

fn band_label(ch: &RChannel, band: f64) -> Label {
    let b = ch.band.as_ref().expect("rate channels have a band");
    if b.from_sensor {
        Label::new(
            b.span,
            format!("the sensor's bandwidth, {}, is the band", format_hz(band)),
        )
    } else {
        Label::new(b.span, format!("band {}", format_hz(band)))
    }
}

fn check_nyquist(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for (ch, c, r) in rate_channels(a) {
        let Some(st) = r.nyquist_failure() else {
            continue;
        };
        let band = r.band_hz;
        let mut f = NYQUIST
            .finding(
                st.span,
                rate_phrase(st),
                format!(
                    "`{}` {}, which is not above twice its {} band",
                    ch.def.name.value,
                    rate_clause(st),
                    format_hz(band)
                ),
            )
            .with_channel(&ch.def.name.value);
        f.secondary.push(band_label(ch, band));
        f.secondary.extend(rate_labels(rig, ch, st.stage));
        let fallback = format!("sample above {} (twice the band)", format_hz(2.0 * band));
        f = with_fix_or_help(f, c, Some(fallback), None)
            .with_f64("rate_hz", st.rate_hz())
            .with_f64("band_hz", band)
            .with_f64("ratio", round_to(st.ratio, 4))
            .with_value("stage", st.stage);
        out.push(f);
    }
}

fn check_margin(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for (ch, c, r) in rate_channels(a) {
        let Some(st) = r.margin_failure() else {
            continue;
        };
        let band = r.band_hz;
        let margin = st.margin.map_or(rig.thresholds.margin, |m| m.0);
        let mut f = SAMPLING_MARGIN
            .finding(
                st.span,
                format!(
                    "{}, {}× the band",
                    rate_phrase(st),
                    sig6(round_to(st.ratio, 3))
                ),
                format!(
                    "`{}` {}, only {}× its {} band (the margin is {}×)",
                    ch.def.name.value,
                    rate_clause(st),
                    sig6(round_to(st.ratio, 3)),
                    format_hz(band),
                    sig6(margin)
                ),
            )
            .with_channel(&ch.def.name.value);
        f.secondary.push(band_label(ch, band));
        if let Some(span) = rig.threshold_spans.get("margin") {
            f.secondary
                .push(Label::new(*span, format!("margin {}×", sig6(margin))));
        }
        f.secondary.extend(rate_labels(rig, ch, st.stage));
        let fallback = format!("sample at {} or more", format_hz(margin * band));
        f = with_fix_or_help(f, c, Some(fallback), None)
            .with_f64("rate_hz", st.rate_hz())
            .with_f64("band_hz", band)
            .with_f64("ratio", round_to(st.ratio, 4))
            .with_f64("margin", margin)
            .with_value("stage", st.stage);
        out.push(f);
    }
}
