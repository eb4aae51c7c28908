//! `group-clock`, `group-phase` and `group-incomplete`: channels analysed together.

use super::{Rule, Stage};
use crate::finding::{Finding, Severity, round_to};
use crate::model::quantity::{format_hz, sig6, to_f64};
use crate::model::{Filter, Group, Response};
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::source::Span;

/// `group-clock`.
pub static GROUP_CLOCK: Rule = Rule {
    name: "group-clock",
    severity: Severity::Error,
    summary: "members of a group do not share one root clock, or end at different rates",
    explanation: "\
Channels analysed together (transfer functions, coherence, phase) must be sampled
synchronously: on clocks derived from one root oscillator, and ending at the same final
rate. Two free-running oscillators drift apart, and different rates need resampling that
the analysis rarely accounts for.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: osc-a
    frequency: 51.2 kHz
  - name: osc-b
    frequency: 51.2 kHz
channels:
  - name: force
    clock: osc-a
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
  - name: accel
    clock: osc-b
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
groups:
  - name: frf
    channels: [force, accel]
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: osc-a
    frequency: 51.2 kHz
channels:
  - name: force
    clock: osc-a
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
  - name: accel
    clock: osc-a
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
groups:
  - name: frf
    channels: [force, accel]
",
    stage: Stage::Physics,
    check: Some(check_clock),
};

fn check_clock(rig: &Rig, out: &mut Vec<Finding>) {
    for (gi, g) in rig.groups.iter().enumerate() {
        let members: Vec<usize> = rig.group_members[gi]
            .iter()
            .copied()
            .filter(|&c| rig.channels[c].ok)
            .collect();
        let Some(&first) = members.first() else {
            continue;
        };
        let root_of = |c: usize| rig.channels[c].clock.and_then(|k| rig.clocks[k].root);
        let final_of = |c: usize| Chain::new(rig, &rig.channels[c]).map(|ch| ch.final_rate());
        let name_of = |c: usize| rig.channels[c].def.name.value.as_str();
        let ref_span = |c: usize| member_span(g, name_of(c));
        if let Some(&other) = members.iter().find(|&&c| root_of(c) != root_of(first)) {
            let root_name =
                |c: usize| root_of(c).map_or("?", |r| rig.clocks[r].def.name.value.as_str());
            out.push(
                GROUP_CLOCK
                    .finding(
                        ref_span(other),
                        format!("on root clock `{}`", root_name(other)),
                        format!(
                            "group `{}` mixes root clocks: `{}` runs from `{}`, `{}` from `{}`",
                            g.name.value,
                            name_of(first),
                            root_name(first),
                            name_of(other),
                            root_name(other)
                        ),
                    )
                    .with_label(
                        ref_span(first),
                        format!("on root clock `{}`", root_name(first)),
                    )
                    .with_help("derive every member's clock from one root oscillator"),
            );
            continue;
        }
        if let Some(&other) = members.iter().find(|&&c| final_of(c) != final_of(first)) {
            let rate = |c: usize| final_of(c).map_or("?".to_string(), |r| format_hz(to_f64(&r)));
            out.push(
                GROUP_CLOCK
                    .finding(
                        ref_span(other),
                        format!("ends at {}", rate(other)),
                        format!(
                            "group `{}` mixes final rates: `{}` ends at {}, `{}` at {}",
                            g.name.value,
                            name_of(first),
                            rate(first),
                            name_of(other),
                            rate(other)
                        ),
                    )
                    .with_label(ref_span(first), format!("ends at {}", rate(first)))
                    .with_help("give every member the same clock divider and decimation"),
            );
        }
    }
}

/// Where a group names a member (the group's name when it is not listed by name).
fn member_span(g: &Group, name: &str) -> Span {
    g.channels
        .iter()
        .find(|r| r.value == name)
        .map_or(g.name.span, |r| r.span)
}

/// `group-phase`.
pub static GROUP_PHASE: Rule = Rule {
    name: "group-phase",
    severity: Severity::Warning,
    summary: "two members of a group differ in chain phase by more than the tolerance",
    explanation: "\
Different anti-alias filters delay signals differently. Between two channels analysed
together, the difference of their chains' phases at the group's highest band shows up as
a false phase in a transfer function. It must stay within the group's `phase-tolerance`,
else the rig's `defaults.phase-tolerance`, else foldcheck.toml, else 2 deg. Phases of the
analog filters come from their poles (Butterworth, Chebyshev) or polynomial (Bessel);
digital and sinc filters are linear-phase and count alike for every channel.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: osc
    frequency: 51.2 kHz
channels:
  - name: force
    clock: osc
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
  - name: accel
    clock: osc
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 14 kHz }
groups:
  - name: frf
    channels: [force, accel]
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: osc
    frequency: 51.2 kHz
channels:
  - name: force
    clock: osc
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
  - name: accel
    clock: osc
    band: 10 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
groups:
  - name: frf
    channels: [force, accel]
",
    stage: Stage::Physics,
    check: Some(check_phase),
};

fn check_phase(rig: &Rig, out: &mut Vec<Finding>) {
    for (gi, g) in rig.groups.iter().enumerate() {
        let tol = g
            .phase_tolerance
            .as_ref()
            .map_or(rig.thresholds.phase_tolerance, |t| t.value);
        let members: Vec<(usize, Chain, f64)> = rig.group_members[gi]
            .iter()
            .filter(|&&c| rig.channels[c].ok)
            .filter_map(|&c| {
                let ch = &rig.channels[c];
                Some((c, Chain::new(rig, ch)?, to_f64(&ch.band.as_ref()?.hz)))
            })
            .collect();
        if members.len() < 2 {
            continue;
        }
        let f = members.iter().map(|m| m.2).fold(0.0, f64::max);
        let phases: Vec<(usize, f64)> = members
            .iter()
            .map(|(c, chain, _)| (*c, chain.phase_deg(f)))
            .collect();
        let (lo, hi) = phases.iter().fold((phases[0], phases[0]), |(lo, hi), &p| {
            (
                if p.1 < lo.1 { p } else { lo },
                if p.1 > hi.1 { p } else { hi },
            )
        });
        let diff = hi.1 - lo.1;
        if diff <= tol {
            continue;
        }
        let name_of = |c: usize| rig.channels[c].def.name.value.as_str();
        let ref_span = |c: usize| member_span(g, name_of(c));
        let mut finding = GROUP_PHASE
            .finding(ref_span(hi.0), format!("{} deg at {}", sig6(round_to(hi.1, 2)), format_hz(f)), format!(
                "in group `{}`, the chains of `{}` and `{}` differ by {} deg at {}, more than the {} deg tolerance",
                g.name.value,
                name_of(lo.0),
                name_of(hi.0),
                sig6(round_to(diff, 2)),
                format_hz(f),
                sig6(tol)
            ))
            .with_label(ref_span(lo.0), format!("{} deg at {}", sig6(round_to(lo.1, 2)), format_hz(f)));
        if let Some(t) = &g.phase_tolerance {
            finding = finding.with_label(t.span, format!("tolerance {} deg", sig6(tol)));
        }
        out.push(
            finding
                .with_help("give the members the same anti-alias filter (type, order and cutoff), or phase-correct them in the analysis and raise the tolerance")
                .with_f64("phase_difference_deg", round_to(diff, 4))
                .with_f64("tolerance_deg", tol)
                .with_f64("frequency_hz", f),
        );
    }
}

/// `group-incomplete`.
pub static GROUP_INCOMPLETE: Rule = Rule {
    name: "group-incomplete",
    severity: Severity::Note,
    summary: "the phase comparison of two group members leaves out a delay or a table response",
    explanation: "\
`group-phase` compares two members' phase over their common band, including the delay of
every digital filter (see docs/model.md). Two things leave that comparison incomplete:
- a `digital` filter with no `delay` or `delay-samples`, while the members' digital
  stages are not identical (same responses, factors and rates): its delay is unknown and
  counted as zero, so a real time offset between the members may go unseen;
- the members' chains differ in `table` responses: a table gives attenuation only, no
  phase (identical tables on both members cancel).
The note names the filter concerned; give the digital filter its delay from the
datasheet, or model a table's roll-off with an analog response.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: fast
    frequency: 25.6 kHz
  - name: slow
    source: fast
    divide: 8
channels:
  - name: deck-a
    clock: fast
    band: 400 Hz
    filters:
      - { response: butterworth, order: 8, cutoff: 500 Hz }
    decimate:
      - factor: 8
        filter: { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 90 dB }
  - name: deck-b
    clock: slow
    band: 400 Hz
    filters:
      - { response: butterworth, order: 8, cutoff: 500 Hz }
groups:
  - name: modal
    channels: [deck-a, deck-b]
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: fast
    frequency: 25.6 kHz
  - name: slow
    source: fast
    divide: 8
channels:
  - name: deck-a
    clock: fast
    band: 400 Hz
    filters:
      - { response: butterworth, order: 8, cutoff: 500 Hz }
    decimate:
      - factor: 8
        filter: { response: digital, passband-edge: 0.4, stopband-edge: 0.5, attenuation: 90 dB, delay: 0 s }
  - name: deck-b
    clock: slow
    band: 400 Hz
    filters:
      - { response: butterworth, order: 8, cutoff: 500 Hz }
groups:
  - name: modal
    channels: [deck-a, deck-b]
",
    stage: Stage::Physics,
    check: Some(check_incomplete),
};

/// What makes a chain's digital part: the converter (modulator rate and its digital
/// filters) and every decimation stage (input rate, factor, filter response).
#[derive(PartialEq)]
struct DigitalSignature<'r> {
    modulator_hz: Option<f64>,
    adc: Vec<&'r Response>,
    stages: Vec<(Option<crate::model::Exact>, u32, Option<&'r Response>)>,
}

/// The digital filters of a chain, in signal order, with where they sit.
fn digital_filters<'c>(chain: &Chain<'c>) -> Vec<(&'c Filter, String)> {
    let mut v: Vec<(&'c Filter, String)> = Vec::new();
    let ch = chain.channel;
    for f in &ch.filters {
        if matches!(f.response, Response::Digital { .. }) {
            v.push((f, "at the ADC".to_string()));
        }
    }
    if let Some(f) = chain.modulator().and_then(|m| m.filter.as_ref()) {
        v.push((f, "in the converter".to_string()));
    }
    for (k, st) in ch.def.decimate.iter().enumerate() {
        if let Some(f) = &st.filter
            && !f.response.is_analog()
            && !matches!(f.response, Response::Table { .. })
        {
            v.push((f, format!("in decimation stage {}", k + 1)));
        }
    }
    v
}

fn signature<'c>(chain: &Chain<'c>) -> DigitalSignature<'c> {
    DigitalSignature {
        modulator_hz: chain.modulator_rate_hz(),
        adc: digital_filters(chain)
            .iter()
            .filter(|(_, at)| !at.starts_with("in decimation"))
            .map(|(f, _)| &f.response)
            .collect(),
        stages: chain
            .changes
            .iter()
            .skip(1)
            .zip(&chain.channel.def.decimate)
            .map(|(rc, st)| (rc.fs_in, rc.factor, st.filter.as_ref().map(|f| &f.response)))
            .collect(),
    }
}

/// Every `table` response in a chain (sensor response, filters, stage filters).
fn tables<'c>(chain: &Chain<'c>) -> Vec<&'c Filter> {
    let ch = chain.channel;
    let sensor = ch
        .sensor
        .and_then(|s| chain.rig.sensors[s].response.as_ref())
        .map(|r| r.value.iter())
        .into_iter()
        .flatten();
    sensor
        .chain(ch.filters.iter())
        .chain(ch.def.decimate.iter().filter_map(|s| s.filter.as_ref()))
        .filter(|f| matches!(f.response, Response::Table { .. }))
        .collect()
}

fn check_incomplete(rig: &Rig, out: &mut Vec<Finding>) {
    for (gi, g) in rig.groups.iter().enumerate() {
        let mut members: Vec<(usize, Chain)> = rig.group_members[gi]
            .iter()
            .filter(|&&c| rig.channels[c].ok)
            .filter_map(|&c| Some((c, Chain::new(rig, &rig.channels[c])?)))
            .collect();
        members.sort_by(|a, b| {
            rig.channels[a.0]
                .def
                .name
                .value
                .cmp(&rig.channels[b.0].def.name.value)
        });
        members.dedup_by_key(|m| m.0);
        // Members on different roots or final rates are `group-clock`'s: comparing their
        // phase would add nothing to that finding.
        let root_of = |c: usize| rig.channels[c].clock.and_then(|k| rig.clocks[k].root);
        if let Some((first, rest)) = members.split_first()
            && rest.iter().any(|m| {
                root_of(m.0) != root_of(first.0) || m.1.final_rate() != first.1.final_rate()
            })
        {
            continue;
        }
        for i in 0..members.len() {
            for j in i + 1..members.len() {
                if let Some(f) = incomplete_pair(rig, g, &members[i], &members[j]) {
                    out.push(f);
                }
            }
        }
    }
}

/// The note for one pair (a < b by name), if their comparison leaves something out.
fn incomplete_pair(
    rig: &Rig,
    g: &Group,
    (ai, a): &(usize, Chain),
    (bi, b): &(usize, Chain),
) -> Option<Finding> {
    let name = |c: usize| rig.channels[c].def.name.value.as_str();
    let (an, bn) = (name(*ai), name(*bi));
    // (span, label, clause) of each thing left out.
    let mut gaps: Vec<(Span, String, String)> = Vec::new();
    if signature(a) != signature(b) {
        for (c, chain) in [(*ai, a), (*bi, b)] {
            for (f, at) in digital_filters(chain) {
                if let Response::Digital { delay: None, .. } = f.response {
                    gaps.push((
                        f.span,
                        "no `delay` or `delay-samples`".to_string(),
                        format!("the delay of `{}`'s digital filter {at}", name(c)),
                    ));
                }
            }
        }
    }
    let (ta, tb) = (tables(a), tables(b));
    let unmatched = |mine: &[&Filter], theirs: &[&Filter]| -> Vec<Span> {
        let mut pool: Vec<&Response> = theirs.iter().map(|f| &f.response).collect();
        mine.iter()
            .filter(|f| match pool.iter().position(|r| **r == f.response) {
                Some(i) => {
                    pool.remove(i);
                    false
                }
                None => true,
            })
            .map(|f| f.span)
            .collect()
    };
    for (c, spans) in [(*ai, unmatched(&ta, &tb)), (*bi, unmatched(&tb, &ta))] {
        for span in spans {
            gaps.push((
                span,
                "a table has no phase".to_string(),
                format!("the phase of `{}`'s table response", name(c)),
            ));
        }
    }
    let ((span, label, first), rest) = gaps.split_first().map(|(f, r)| (f.clone(), r))?;
    let more = match rest.len() {
        0 => String::new(),
        1 => format!(" and {}", rest[0].2),
        n => format!(" and {n} more"),
    };
    let help = if gaps.iter().all(|g| g.1.starts_with("no `delay`")) {
        "give the filter its `delay` (a duration) or `delay-samples` from the datasheet"
    } else if gaps.iter().all(|g| g.1.starts_with("a table")) {
        "model the table's roll-off with an analog response (`butterworth`, `bessel`, `chebyshev`) if its phase matters, or give both members the same table"
    } else {
        "give each digital filter its `delay` or `delay-samples`, and model tables with analog responses where their phase matters"
    };
    let mut f = GROUP_INCOMPLETE
        .finding(
            span,
            label,
            format!(
                "in group `{}`, the phase comparison of `{an}` and `{bn}` leaves out {first}{more}",
                g.name.value
            ),
        )
        .with_help(help)
        .with_subject(format!("group/{}/pair/{an}/{bn}/incomplete", g.name.value));
    for (s, l, _) in rest {
        f = f.with_label(*s, l.clone());
    }
    Some(f)
}
