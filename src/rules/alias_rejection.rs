//! `alias-rejection`: attenuation where energy folds into the band, at every rate change.

use super::rates::{help_for, rate_channels, rate_labels};
use super::{Rule, Stage};
use crate::finding::{Finding, Label, Severity, format_db, round_to};
use crate::model::quantity::format_hz;
use crate::resolve::chain::RateChange;
use crate::resolve::{Origin, Rig};
use crate::signal::fold::fold;

/// `alias-rejection`.
pub static ALIAS_REJECTION: Rule = Rule {
    name: "alias-rejection",
    severity: Severity::Error,
    summary: "energy that folds into the band is not attenuated enough",
    explanation: "\
At a rate change to fs, energy at fs − B (the lowest frequency that folds into [0, B])
lands inside the band. The chain before that rate change (analog filters, the sensor's own
response, and every digital filter up to it) must attenuate it by the required rejection:
the channel's `alias-rejection`, else its module's, else the rig's defaults, else
foldcheck.toml, else the ideal dynamic range of the module's ADC (6.02·N + 1.76 dB), else
40 dB. A sensor resonance above the band that folds into it must meet the same
requirement after its gain is subtracted. A decimation stage without a filter is plain
down-sampling and is checked like any other rate change.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 48 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    filters:
      - { response: butterworth, order: 2, cutoff: 20 kHz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 48 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    filters:
      - { response: butterworth, order: 6, cutoff: 14 kHz }
",
    stage: Stage::Physics,
    check: Some(check),
};

struct Shortfall<'c> {
    rc: &'c RateChange,
    fold_from: f64,
    folds_to: f64,
    attenuation: f64,
    resonance: Option<(f64, f64)>,
}

fn check(rig: &Rig, out: &mut Vec<Finding>) {
    for (_, chain, band) in rate_channels(rig) {
        let ch = chain.channel;
        let required = ch.rejection.0;
        let mut worst: Option<Shortfall> = None;
        for rc in &chain.changes {
            let fs = rc.fs_hz();
            if fs <= 2.0 * band {
                break; // nyquist reports this and everything after it
            }
            let k = rc.stage;
            let f = fs - band;
            let a = chain.attenuation_db(f, k);
            let mut candidates = vec![Shortfall {
                rc,
                fold_from: f,
                folds_to: band,
                attenuation: a,
                resonance: None,
            }];
            if let Some(res) = ch.sensor.and_then(|s| rig.sensors[s].resonance.as_ref()) {
                let fr = res.frequency.value;
                let before = if k == 0 {
                    fr
                } else {
                    chain.folded_through(fr, k - 1)
                };
                let after = fold(before, fs);
                if fr > band && before > band && after <= band {
                    candidates.push(Shortfall {
                        rc,
                        fold_from: fr,
                        folds_to: after,
                        attenuation: chain.attenuation_db(fr, k) - res.gain.value,
                        resonance: Some((fr, res.gain.value)),
                    });
                }
            }
            for c in candidates {
                if c.attenuation < required
                    && worst.as_ref().is_none_or(|w| c.attenuation < w.attenuation)
                {
                    worst = Some(c);
                }
            }
        }
        let Some(w) = worst else { continue };
        let name = &ch.def.name.value;
        let at = if w.rc.stage == 0 {
            format!("at the ADC ({})", format_hz(w.rc.fs_hz()))
        } else {
            format!(
                "at decimation stage {} ({})",
                w.rc.stage,
                format_hz(w.rc.fs_hz())
            )
        };
        let message = match w.resonance {
            None => format!(
                "energy at {} folds into the {} band of `{name}` {at} with {} of attenuation, {} needed",
                format_hz(w.fold_from),
                format_hz(band),
                format_db(w.attenuation),
                format_db(required)
            ),
            Some((fr, gain)) => format!(
                "the {} resonance (+{} dB) of `{name}`'s sensor folds to {} {at} with a net {} of attenuation, {} needed",
                format_hz(fr),
                crate::model::quantity::sig6(gain),
                format_hz(w.folds_to),
                format_db(w.attenuation),
                format_db(required)
            ),
        };
        let primary = format!(
            "{} folds to {}",
            format_hz(w.fold_from),
            format_hz(w.folds_to)
        );
        let mut f = ALIAS_REJECTION
            .finding(w.rc.span, primary, message)
            .with_channel(name);
        match (&ch.filters_span, w.rc.stage) {
            (Some((span, _)), 0) if !ch.filters.is_empty() => f.secondary.push(Label::new(
                *span,
                format!(
                    "this chain gives {} at {}",
                    format_db(w.attenuation),
                    format_hz(w.fold_from)
                ),
            )),
            (Some((span, _)), 0) => f.secondary.push(Label::new(
                *span,
                "no filters: nothing attenuates before the ADC",
            )),
            (_, 0) => f.secondary.push(Label::new(
                ch.def.name.span,
                "no anti-alias filter on this channel",
            )),
            (_, k) => {
                let st = &ch.def.decimate[k - 1];
                match &st.filter {
                    Some(flt) => f
                        .secondary
                        .push(Label::new(flt.span, "this stage's filter")),
                    None => f
                        .secondary
                        .push(Label::new(st.span, "no filter: plain down-sampling")),
                }
            }
        }
        if let Some((fr, _)) = w.resonance
            && let Some(res) = ch.sensor.and_then(|s| rig.sensors[s].resonance.as_ref())
        {
            f.secondary.push(Label::new(
                res.frequency.span,
                format!("resonance at {}", format_hz(fr)),
            ));
        }
        if let Some(span) = ch.rejection.1.span() {
            f.secondary.push(Label::new(
                span,
                format!("requires {}", format_db(required)),
            ));
        }
        f.secondary.extend(rate_labels(rig, ch, w.rc));
        let origin = match &ch.rejection.1 {
            Origin::Builtin => Some(
                "the 40 dB built-in requirement applies; set `alias-rejection` if the test needs another",
            ),
            _ => None,
        };
        let target = super::fix::FilterTarget {
            frequency: w.fold_from,
            needed_db: required + w.resonance.map_or(0.0, |(_, gain)| gain),
        };
        let help = help_for(&chain, w.rc, band, Some(target));
        f = f
            .with_help_opt(match (help, origin) {
                (Some(h), Some(o)) => Some(format!("{h}; {o}")),
                (h, _) => h,
            })
            .with_f64("rate_hz", w.rc.fs_hz())
            .with_f64("band_hz", band)
            .with_f64("fold_from_hz", w.fold_from)
            .with_f64("attenuation_db", round_to(w.attenuation, 3))
            .with_f64("required_db", round_to(required, 3))
            .with_value("stage", w.rc.stage);
        out.push(f);
    }
}
