//! `disturbance-alias`: a known tone above half a rate that folds into the band.

use super::rates::rate_labels;
use super::{Rule, Stage};
use crate::finding::{Finding, Label, Severity, format_db, round_to};
use crate::model::quantity::{format_hz, sig6, to_f64};
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::signal::fold::fold;

/// `disturbance-alias`.
pub static DISTURBANCE_ALIAS: Rule = Rule {
    name: "disturbance-alias",
    severity: Severity::Error,
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

fn check(rig: &Rig, out: &mut Vec<Finding>) {
    for (di, d) in rig.disturbances.iter().enumerate() {
        let Some(freq) = &d.frequency else { continue };
        let fd = to_f64(&freq.value);
        let level = d.level.as_ref().map_or(0.0, |l| l.value);
        for &ci in &rig.disturbance_targets[di] {
            let ch = &rig.channels[ci];
            if !ch.ok {
                continue;
            }
            let (Some(band), Some(chain)) = (ch.band.as_ref(), Chain::new(rig, ch)) else {
                continue;
            };
            let band = to_f64(&band.hz);
            let mut at = fd;
            for rc in &chain.changes {
                let fs = rc.fs_hz();
                if fs <= 2.0 * band {
                    break;
                }
                let folded = fold(at, fs);
                if at > fs / 2.0 && folded <= band {
                    let a = chain.attenuation_db(fd, rc.stage);
                    let required = ch.rejection.0 + level;
                    if a < required {
                        let name = &ch.def.name.value;
                        let where_ = if rc.stage == 0 {
                            format!("the ADC ({})", format_hz(fs))
                        } else {
                            format!("decimation stage {} ({})", rc.stage, format_hz(fs))
                        };
                        let mut f = DISTURBANCE_ALIAS
                            .finding(
                                rc.span,
                                format!("{} folds to {} here", format_hz(fd), format_hz(folded)),
                                format!(
                                    "the {} tone `{}` folds to {} inside the {} band of `{name}` at {where_}, attenuated {}, {} needed",
                                    format_hz(fd),
                                    d.name.value,
                                    format_hz(folded),
                                    format_hz(band),
                                    format_db(a),
                                    format_db(required)
                                ),
                            )
                            .with_channel(name)
                            .with_label(freq.span, format!("tone at {}", format_hz(fd)));
                        if let Some(l) = &d.level {
                            f.secondary.push(Label::new(
                                l.span,
                                format!("{} dB above broadband content", sig6(level)),
                            ));
                        }
                        f.secondary.extend(rate_labels(rig, ch, rc));
                        f = f
                            .with_help(format!(
                                "attenuate the tone by another {} before this rate change (a steeper anti-alias filter), or choose a rate at which {} does not fold into the band",
                                format_db(required - a).replace(".00", ""),
                                format_hz(fd)
                            ))
                            .with_f64("disturbance_hz", fd)
                            .with_f64("alias_hz", folded)
                            .with_f64("attenuation_db", round_to(a, 3))
                            .with_f64("required_db", round_to(required, 3))
                            .with_value("stage", rc.stage);
                        out.push(f);
                    }
                    break; // in the band now: later stages do not move it
                }
                at = folded;
            }
        }
    }
}
