//! `modulator-unknown`: a converter's own digital filter without its modulator.

use super::{Rule, Stage};
use crate::analysis::RigAnalysis;
use crate::declared;
use crate::finding::Finding;
use crate::model::Response;
use crate::source::Span;
use std::collections::HashMap;

/// `modulator-unknown`.
pub static MODULATOR_UNKNOWN: Rule = Rule {
    name: declared::MODULATOR_UNKNOWN.name,
    severity: declared::MODULATOR_UNKNOWN.severity,
    summary: "a digital filter sits at the ADC of a module that does not describe its modulator",
    explanation: "\
A `digital` filter in the `filters` of a channel on a module (not in a `decimate` stage) is
the converter's own decimation filter: most acquisition ADCs are delta-sigma converters whose
modulator runs at a multiple of the output rate. Their digital filter repeats at every
multiple of the modulator rate, so only the analog chain (sensor response and analog
filters) guards against energy near those multiples. Without the modulator rate,
foldcheck holds the filter's stopband value at every frequency above its stopband edge
and cannot check those images. Describe the converter with the module's `modulator`
(its `rate` or `oversampling-ratio`, and the digital filter as its `filter`); see
docs/model.md.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: osc
    frequency: 51.2 kHz
modules:
  - name: card-a
    filters:
      - { response: butterworth, order: 2, cutoff: 100 kHz }
      - { response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }
channels:
  - name: accel-1
    clock: osc
    module: card-a
    band: 20 kHz
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: osc
    frequency: 51.2 kHz
modules:
  - name: card-a
    filters:
      - { response: butterworth, order: 2, cutoff: 100 kHz }
    modulator:
      oversampling-ratio: 64
      filter: { response: digital, passband-edge: 0.45, stopband-edge: 0.55, attenuation: 100 dB }
channels:
  - name: accel-1
    clock: osc
    module: card-a
    band: 20 kHz
",
    stage: Stage::Physics,
    check: Some(check_modulator_unknown),
};

fn check_modulator_unknown(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    // One finding per digital filter, however many channels share it (a module's
    // `filters`): the first channel names it, the count says how many more.
    let mut seen: Vec<(Span, usize, usize)> = Vec::new();
    // Where each filter sits in `seen`: a rig of thousands of channels on their own
    // filters would otherwise compare every channel with every filter seen so far.
    let mut at: HashMap<Span, usize> = HashMap::new();
    for (ci, ch) in rig.channels.iter().enumerate().filter(|(_, c)| c.ok) {
        // A channel on no module has no converter to describe (docs/model.md: its
        // digital filter holds its stopband value).
        let Some(module) = ch.module.map(|m| &rig.modules[m]) else {
            continue;
        };
        if module.modulator.is_some() {
            continue;
        }
        let Some(filter) = ch
            .filters
            .iter()
            .find(|f| matches!(f.response, Response::Digital { .. }))
        else {
            continue;
        };
        match at.get(&filter.span) {
            Some(&i) => seen[i].2 += 1,
            None => {
                at.insert(filter.span, seen.len());
                seen.push((filter.span, ci, 0));
            }
        }
    }
    // A run that analyses only some channels (`inspect`) raises no finding named by a
    // channel it left out; the count of users still covers the whole rig.
    seen.retain(|&(_, ci, _)| a.in_scope(ci));
    for (span, ci, more) in seen {
        let ch = &rig.channels[ci];
        let name = &ch.def.name.value;
        let users = match more {
            0 => format!("`{name}`"),
            1 => format!("`{name}` and 1 more channel"),
            n => format!("`{name}` and {n} more channels"),
        };
        let m = &rig.modules[ch.module.expect("only channels on a module are listed")];
        let help = format!(
            "describe the converter: give module `{}` a `modulator` with its `rate` or `oversampling-ratio`, and move this filter into it as `filter`",
            m.name.value
        );
        let f = MODULATOR_UNKNOWN
            .finding(
                span,
                "a converter filter without its modulator",
                format!(
                    "the digital filter at the ADC of {users} belongs to a converter whose modulator rate is not given, so images near multiples of that rate were not checked"
                ),
            )
            .with_channel(name)
            .with_label(m.name.span, "no `modulator` here")
            .with_help(help)
            .with_subject(format!("module/{}/modulator", m.name.value));
        out.push(f);
    }
}
