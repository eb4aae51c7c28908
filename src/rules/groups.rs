//! `group-clock`, `group-phase` and `group-incomplete`: channels analysed together.

use super::{Rule, Stage};
use crate::analysis::RigAnalysis;
use crate::declared;
use crate::finding::Finding;
use crate::fingerprint::segment;
use crate::model::quantity::to_f64;
use crate::model::{Filter, Group, Response};
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::source::Span;
use crate::words::{format_hz, format_seconds, round_to, sig6};

/// `group-clock`.
pub static GROUP_CLOCK: Rule = Rule {
    name: declared::GROUP_CLOCK.name,
    severity: declared::GROUP_CLOCK.severity,
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

fn check_clock(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
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
                    .with_subject(format!("group/{}", segment(&g.name.value)))
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
                    .with_subject(format!("group/{}", segment(&g.name.value)))
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
    name: declared::GROUP_PHASE.name,
    severity: declared::GROUP_PHASE.severity,
    summary: "two members of a group differ in chain phase by more than the tolerance",
    explanation: "\
Different anti-alias filters and different digital stages delay signals differently.
Between two channels analysed together (cross-spectra, transfer functions, modal work)
that difference shows up as a false phase. For each pair of members, foldcheck compares
their chains' phase over the whole common band (0 to the lowest band in the group): the
unwrapped phase of the analog filters (from their poles) less 360 deg × f × the sum of
the digital delays (a sinc stage of order N and factor M delays N·(M − 1)/2 input
samples; a `digital` filter by its `delay` or `delay-samples`). The phase is not
wrapped: a whole-cycle lag is a real time offset for a broadband signal. The largest
difference must stay within the group's `phase-tolerance`, else the rig's
`defaults.phase-tolerance`, else foldcheck.toml, else 2 deg. See docs/model.md.",
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

fn check_phase(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for (gi, g) in rig.groups.iter().enumerate() {
        let tol = g
            .phase_tolerance
            .as_ref()
            .map_or(rig.thresholds.phase_tolerance, |t| t.value);
        let Some(members) = comparable_members(rig, gi) else {
            continue;
        };
        // The common band: the lowest band in the group.
        let common = members.iter().map(|m| m.2).fold(f64::INFINITY, f64::min);
        for i in 0..members.len() {
            for j in i + 1..members.len() {
                let (a, b) = (&members[i], &members[j]);
                let cmp = compare_pair(&a.1, &b.1, common);
                if cmp.phase_difference_deg.abs() <= tol {
                    continue;
                }
                out.push(phase_finding(rig, g, (a.0, b.0), &cmp, common, tol));
            }
        }
    }
}

/// The analysed members of group `gi` in name order, with their chains and bands; `None`
/// when fewer than two, or when they mix root clocks or final rates (`group-clock`'s
/// finding: comparing their phase would add nothing to it).
fn comparable_members(rig: &Rig, gi: usize) -> Option<Vec<(usize, Chain<'_>, f64)>> {
    let mut members: Vec<(usize, Chain, f64)> = rig.group_members[gi]
        .iter()
        .filter(|&&c| rig.channels[c].ok)
        .filter_map(|&c| {
            let ch = &rig.channels[c];
            Some((c, Chain::new(rig, ch)?, to_f64(&ch.band.as_ref()?.hz)))
        })
        .collect();
    members.sort_by(|a, b| {
        rig.channels[a.0]
            .def
            .name
            .value
            .cmp(&rig.channels[b.0].def.name.value)
    });
    members.dedup_by_key(|m| m.0);
    let root_of = |c: usize| rig.channels[c].clock.and_then(|k| rig.clocks[k].root);
    let (first, rest) = members.split_first()?;
    if rest.is_empty()
        || rest
            .iter()
            .any(|m| root_of(m.0) != root_of(first.0) || m.1.final_rate() != first.1.final_rate())
    {
        return None;
    }
    Some(members)
}

/// How two members' chains compare over a common band.
#[derive(Clone, Debug, PartialEq)]
pub struct PairComparison {
    /// φ_a − φ_b at `frequency_hz`, degrees: the largest in magnitude over (0, B_c].
    pub phase_difference_deg: f64,
    /// Where it occurs.
    pub frequency_hz: f64,
    /// Latency a − latency b, seconds.
    pub delay_difference_s: f64,
    /// Digital delay a − digital delay b, seconds.
    pub digital_difference_s: f64,
    /// Each member's phase at `frequency_hz` (analog less digital delay), degrees.
    pub phases_deg: (f64, f64),
}

/// Compare two chains over `(0, common]` (docs/model.md, "Groups").
pub fn compare_pair(a: &Chain, b: &Chain, common: f64) -> PairComparison {
    let (pa, pb) = (a.total_phase_fn(), b.total_phase_fn());
    let (frequency_hz, phase_difference_deg) =
        crate::resolve::chain::max_total_phase_difference(&pa, &pb, common);
    PairComparison {
        phase_difference_deg,
        frequency_hz,
        delay_difference_s: a.latency_s() - b.latency_s(),
        digital_difference_s: a.digital_delay_s() - b.digital_delay_s(),
        phases_deg: (pa.deg(frequency_hz), pb.deg(frequency_hz)),
    }
}

fn phase_finding(
    rig: &Rig,
    g: &Group,
    (a, b): (usize, usize),
    cmp: &PairComparison,
    common: f64,
    tol: f64,
) -> Finding {
    let name_of = |c: usize| rig.channels[c].def.name.value.as_str();
    let ref_span = |c: usize| member_span(g, name_of(c));
    let (an, bn) = (name_of(a), name_of(b));
    let at = format_hz(cmp.frequency_hz);
    let diff = crate::words::round_to(cmp.phase_difference_deg, 2) + 0.0;
    // The member that lags more carries the primary label; each label shows its phase.
    let label = |deg: f64| format!("{} deg at {at}", sig6(round_to(deg, 2) + 0.0));
    let ((lagging, lag_deg), (leading, lead_deg)) = if cmp.phase_difference_deg < 0.0 {
        ((a, cmp.phases_deg.0), (b, cmp.phases_deg.1))
    } else {
        ((b, cmp.phases_deg.1), (a, cmp.phases_deg.0))
    };
    // The member a positive difference (a − b) makes the later one comes first.
    let later_first = |d: f64| if d > 0.0 { (an, bn) } else { (bn, an) };
    let latency = if cmp.delay_difference_s.abs() >= 1e-9 {
        let (late, early) = later_first(cmp.delay_difference_s);
        format!(
            "; `{late}` lags `{early}` by {} at DC",
            format_seconds(crate::words::round_sig(cmp.delay_difference_s.abs(), 4))
        )
    } else {
        String::new()
    };
    let digital_deg = 360.0 * cmp.frequency_hz * cmp.digital_difference_s;
    let help = if digital_deg.abs() > tol {
        let (slow, fast) = later_first(cmp.digital_difference_s);
        format!(
            "the digital stages of `{slow}` delay it {} more than `{fast}`: give both the same decimation chain, or shift `{fast}` by that delay in the analysis and raise the tolerance",
            format_seconds(crate::words::round_sig(cmp.digital_difference_s.abs(), 4))
        )
    } else {
        "give the members the same anti-alias filter (type, order and cutoff), or phase-correct them in the analysis and raise the tolerance".to_string()
    };
    let mut finding = GROUP_PHASE
        .finding(
            ref_span(lagging),
            label(lag_deg),
            format!(
                "in group `{}`, `{an}` and `{bn}` differ in phase by {} deg at {at} (within their common {} band), more than the {} deg tolerance{latency}",
                g.name.value,
                // The size of the difference; which member lags is said by the labels
                // (and the sign is kept in `values`).
                sig6(diff.abs()),
                format_hz(common),
                sig6(tol)
            ),
        )
        .with_label(ref_span(leading), label(lead_deg));
    if let Some(t) = &g.phase_tolerance {
        finding = finding.with_label(t.span, format!("tolerance {} deg", sig6(tol)));
    }
    finding
        .with_help(help)
        .with_subject(format!(
            "group/{}/pair/{}/{}",
            segment(&g.name.value),
            segment(an),
            segment(bn)
        ))
        .with_f64(
            "phase_difference_deg",
            round_to(cmp.phase_difference_deg, 4) + 0.0,
        )
        .with_f64("frequency_hz", cmp.frequency_hz)
        .with_f64("tolerance_deg", tol)
        .with_f64("delay_difference_s", cmp.delay_difference_s + 0.0)
}

/// `group-incomplete`.
pub static GROUP_INCOMPLETE: Rule = Rule {
    name: declared::GROUP_INCOMPLETE.name,
    severity: declared::GROUP_INCOMPLETE.severity,
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

/// The digital filters of a chain, in signal order, with where they sit (the
/// decimation stage, 1-based, or `None` at the ADC and in the converter) and that place
/// in words.
fn digital_filters<'c>(chain: &Chain<'c>) -> Vec<(&'c Filter, Option<usize>, String)> {
    let mut v: Vec<(&'c Filter, Option<usize>, String)> = Vec::new();
    let ch = chain.channel;
    for f in &ch.filters {
        if matches!(f.response, Response::Digital { .. }) {
            v.push((f, None, "at the ADC".to_string()));
        }
    }
    if let Some(f) = chain.modulator().and_then(|m| m.filter.as_ref()) {
        v.push((f, None, "in the converter".to_string()));
    }
    for (k, st) in ch.def.decimate.iter().enumerate() {
        if let Some(f) = &st.filter
            && !f.response.is_analog()
            && !matches!(f.response, Response::Table { .. })
        {
            v.push((f, Some(k + 1), format!("in decimation stage {}", k + 1)));
        }
    }
    v
}

fn signature<'c>(chain: &Chain<'c>) -> DigitalSignature<'c> {
    DigitalSignature {
        modulator_hz: chain.modulator_rate_hz(),
        adc: digital_filters(chain)
            .iter()
            .filter(|(_, stage, _)| stage.is_none())
            .map(|(f, _, _)| &f.response)
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

fn check_incomplete(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for (gi, g) in rig.groups.iter().enumerate() {
        let Some(members) = comparable_members(rig, gi) else {
            continue;
        };
        for i in 0..members.len() {
            for j in i + 1..members.len() {
                let (a, b) = (&members[i], &members[j]);
                if let Some(f) = incomplete_pair(rig, g, (a.0, &a.1), (b.0, &b.1)) {
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
    (ai, a): (usize, &Chain),
    (bi, b): (usize, &Chain),
) -> Option<Finding> {
    let name = |c: usize| rig.channels[c].def.name.value.as_str();
    let (an, bn) = (name(ai), name(bi));
    // (span, label, clause) of each thing left out.
    let mut gaps: Vec<(Span, String, String)> = Vec::new();
    if signature(a) != signature(b) {
        for (c, chain) in [(ai, a), (bi, b)] {
            for (f, _, at) in digital_filters(chain) {
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
    for (c, spans) in [(ai, unmatched(&ta, &tb)), (bi, unmatched(&tb, &ta))] {
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
        .with_subject(format!(
            "group/{}/pair/{}/{}/incomplete",
            segment(&g.name.value),
            segment(an),
            segment(bn)
        ));
    for (s, l, _) in rest {
        f = f.with_label(*s, l.clone());
    }
    Some(f)
}
