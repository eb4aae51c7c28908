//! `group-clock` and `group-phase`: channels analysed together.

use super::{Rule, Stage};
use crate::finding::{Finding, Severity, round_to};
use crate::model::Group;
use crate::model::quantity::{format_hz, sig6, to_f64};
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
