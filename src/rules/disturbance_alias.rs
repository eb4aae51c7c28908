//! `disturbance-alias`: a known tone above half a rate that folds into the band.

use super::rates::{rate_channels, rate_labels, with_fix_or_help};
use super::{Rule, Stage};
use crate::analysis::RigAnalysis;
use crate::declared;
use crate::finding::{Finding, Label};
use crate::fingerprint::segment;
use crate::words::{format_db, format_hz, round_to, sig6};

/// `disturbance-alias`.
pub static DISTURBANCE_ALIAS: Rule = Rule {
    name: declared::DISTURBANCE_ALIAS.name,
    severity: declared::DISTURBANCE_ALIAS.severity,
    summary: "a known disturbance tone folds into the band without enough attenuation",
    explanation: "\
A disturbance is a tone known to be on the rig (a drive's PWM frequency, a rotating
machine's blade pass). When it lies above half the rate at some rate change it folds to
|f − round(f/fs)·fs|; if that lands in [0, B], the chain must attenuate the tone by the
required rejection plus the tone's `level` (how far it stands above broadband content).",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 5 kHz
channels:
  - name: accel-1
    clock: base
    band: 1.5 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 1.75 kHz }
    alias-rejection: 40 dB
disturbances:
  - name: drive-pwm
    frequency: 6 kHz
    level: 60 dB
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 5 kHz
channels:
  - name: accel-1
    clock: base
    band: 1.5 kHz
    filters:
      - { response: butterworth, order: 8, cutoff: 1.75 kHz }
    alias-rejection: 40 dB
disturbances:
  - name: drive-pwm
    frequency: 6 kHz
    level: 20 dB
",
    stage: Stage::Physics,
    check: Some(check),
};

fn check(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    // In the rig's disturbance order, then channel order (as the rig lists them).
    let mut fails = Vec::new();
    for (ch, c, r) in rate_channels(a) {
        for (d, step) in r.disturbance_failures() {
            fails.push((d.index, c.channel, ch, c, r, d, step));
        }
    }
    fails.sort_by_key(|x| (x.0, x.1));
    for (di, _, ch, c, r, d, step) in fails {
        let def = &rig.disturbances[di];
        let Some(freq) = &def.frequency else { continue };
        let (fd, folded, band, at) = (
            d.frequency_hz,
            step.lands_at_hz,
            r.band_hz,
            step.attenuation_db,
        );
        let required = d.required_db;
        let st = &r.stages[step.stage];
        let name = &ch.def.name.value;
        let where_ = if step.stage == 0 {
            format!("the ADC ({})", format_hz(step.rate_hz))
        } else {
            format!(
                "decimation stage {} ({})",
                step.stage,
                format_hz(step.rate_hz)
            )
        };
        let mut f = DISTURBANCE_ALIAS
            .finding(
                st.span,
                format!("{} folds to {} here", format_hz(fd), format_hz(folded)),
                format!(
                    "the {} tone `{}` folds to {} inside the {} band of `{name}` at {where_}, attenuated {}, {} needed",
                    format_hz(fd),
                    d.name,
                    format_hz(folded),
                    format_hz(band),
                    format_db(at),
                    format_db(required)
                ),
            )
            .with_channel(name)
            .with_subject(format!(
                "disturbance/{}/channel/{}",
                segment(&d.name),
                segment(name)
            ))
            .with_label(freq.span, format!("tone at {}", format_hz(fd)));
        if let Some(l) = &def.level {
            f.secondary.push(Label::new(
                l.span,
                format!("{} dB above broadband content", sig6(d.level_db)),
            ));
        }
        f.secondary.extend(rate_labels(rig, ch, step.stage));
        let filter = if step.stage > 0 {
            format!(
                "a decimation filter at stage {}, or a steeper one before it",
                step.stage
            )
        } else {
            "a steeper anti-alias filter".to_string()
        };
        let fallback = format!(
            "attenuate the tone by another {} before this rate change ({filter}), or choose a rate at which {} does not fold into the band",
            format_db(required - at).replace(".00", ""),
            format_hz(fd)
        );
        f = with_fix_or_help(f, c, Some(fallback), None)
            .with_f64("disturbance_hz", fd)
            .with_f64("alias_hz", folded)
            .with_f64("attenuation_db", round_to(at, 3))
            .with_f64("required_db", round_to(required, 3))
            .with_value("stage", step.stage);
        out.push(f);
    }
}
