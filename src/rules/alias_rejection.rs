//! `alias-rejection`: attenuation where energy folds into the band, at every rate change.

use super::rates::{rate_channels, rate_labels, with_fix_or_help};
use super::{Rule, Stage};
use crate::analysis::{AliasFailure, RateAnalysis, RigAnalysis};
use crate::declared;
use crate::finding::{Finding, Label};
use crate::resolve::Origin;
use crate::signal::analog::{Analog, AnalogKind};
use crate::words::{format_db, format_hz, format_required_db, round_to};

/// `alias-rejection`.
pub static ALIAS_REJECTION: Rule = Rule {
    name: declared::ALIAS_REJECTION.name,
    severity: declared::ALIAS_REJECTION.severity,
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

fn check(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    for (ch, c, r) in rate_channels(a) {
        let Some(w) = r.alias_failure() else { continue };
        let st = &r.stages[w.stage];
        let band = r.band_hz;
        let required = w.required_db;
        let name = &ch.def.name.value;
        let at = if w.stage == 0 {
            format!("at the ADC ({})", format_hz(st.rate_hz()))
        } else {
            format!(
                "at decimation stage {} ({})",
                w.stage,
                format_hz(st.rate_hz())
            )
        };
        let message = match (w.resonance, w.modulator_hz) {
            (None, Some(fmod)) => format!(
                "energy at {} near the {} modulator rate folds into the {} band of `{name}` {at}; the converter's filter repeats there, and the analog chain gives only {}, {} needed",
                format_hz(w.fold_from_hz),
                format_hz(fmod),
                format_hz(band),
                format_db(w.attenuation_db),
                format_required_db(required)
            ),
            (None, None) => format!(
                "energy at {} folds into the {} band of `{name}` {at} with {} of attenuation, {} needed",
                format_hz(w.fold_from_hz),
                format_hz(band),
                format_db(w.attenuation_db),
                format_required_db(required)
            ),
            (Some((fr, gain)), _) => format!(
                "the {} resonance (+{} dB) of `{name}`'s sensor folds to {} {at} with a net {} of attenuation, {} needed",
                format_hz(fr),
                crate::words::sig6(gain),
                format_hz(w.folds_to_hz),
                format_db(w.attenuation_db),
                format_required_db(required)
            ),
        };
        let primary = format!(
            "{} folds to {}",
            format_hz(w.fold_from_hz),
            format_hz(w.folds_to_hz)
        );
        let mut f = ALIAS_REJECTION
            .finding(st.span, primary, message)
            .with_channel(name);
        // A modulator image is the analog filters' to stop: they are the value to change.
        let analog_first = w.modulator_hz.is_some() && w.resonance.is_none();
        match (&ch.filters_span, w.stage) {
            (Some((span, _)), 0) if !ch.filters.is_empty() => f.secondary.push(Label::new(
                *span,
                match w.resonance {
                    // The net figure is the chain's attenuation less the resonance gain:
                    // name both, so that neither is read as the other.
                    Some((_, gain)) => format!(
                        "the chain gives {} at {}; less the sensor's {} dB resonance, {}",
                        format_db(w.attenuation_db + gain),
                        format_hz(w.fold_from_hz),
                        crate::words::sig6(gain),
                        format_db(w.attenuation_db)
                    ),
                    None => format!(
                        "the chain gives {} at {}",
                        format_db(w.attenuation_db),
                        format_hz(w.fold_from_hz)
                    ),
                },
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
                let stage = &ch.def.decimate[k - 1];
                match &stage.filter {
                    Some(flt) => f
                        .secondary
                        .push(Label::new(flt.span, "this stage's filter")),
                    None => f
                        .secondary
                        .push(Label::new(stage.span, "no filter: plain down-sampling")),
                }
            }
        }
        if analog_first && ch.filters_span.is_some() && !f.secondary.is_empty() {
            let filters = f.secondary.remove(0);
            let rate = std::mem::replace(&mut f.primary, filters);
            f.secondary.insert(0, rate);
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
        f.secondary.extend(rate_labels(rig, ch, w.stage));
        let origin = match &ch.rejection.1 {
            Origin::Builtin => Some(
                "the 40 dB built-in requirement applies; set `alias-rejection` if the test needs another",
            ),
            _ => None,
        };
        let fallback = match w.modulator_hz {
            Some(_) => modulator_help(r, &w, rig.thresholds.passband_tolerance),
            // At a decimation stage the filter that can help is that stage's own (or any
            // before it); at the ADC, the anti-alias filter.
            None if w.stage > 0 => format!(
                "attenuate {} by another {} before this rate change (a decimation filter at stage {}, or a steeper one before it), or decimate less",
                format_hz(w.fold_from_hz),
                format_db(required - w.attenuation_db),
                w.stage
            ),
            None => format!(
                "attenuate {} by another {} before this rate change (a steeper or lower anti-alias filter), or sample faster",
                format_hz(w.fold_from_hz),
                format_db(required - w.attenuation_db)
            ),
        };
        if let Some(fmod) = w.modulator_hz {
            f = f
                .with_value("at", "modulator")
                .with_f64("modulator_hz", fmod);
        }
        f = with_fix_or_help(f, c, Some(fallback), origin)
            .with_f64("rate_hz", st.rate_hz())
            .with_f64("band_hz", band)
            .with_f64("fold_from_hz", w.fold_from_hz)
            .with_f64("attenuation_db", round_to(w.attenuation_db, 3))
            .with_f64("required_db", round_to(required, 3))
            .with_value("stage", w.stage);
        out.push(f);
    }
}

/// The help for a modulator image when no verified fix exists: a Butterworth front end
/// (order and cutoff) that reaches the requirement at the image and keeps the band edge
/// within the passband tolerance, else the bare shortfall.
fn modulator_help(r: &RateAnalysis, w: &AliasFailure, tolerance_db: f64) -> String {
    let need = w.required_db - w.attenuation_db;
    let droop_now = r.passband.as_ref().map_or(0.0, |p| p.attenuation_db);
    let design = crate::signal::design::butterworth_front_end(
        r.band_hz,
        tolerance_db - droop_now,
        w.fold_from_hz,
        need,
    );
    match design {
        Some((order, fc)) => {
            let f = Analog::new(AnalogKind::Butterworth, order, fc);
            format!(
                "add an analog anti-alias filter before the converter, e.g. `{{ response: butterworth, order: {order}, cutoff: {} }}`: it attenuates {} by {} and the {} band edge by {}; the converter's own filter does not help there",
                format_hz(fc),
                format_hz(w.fold_from_hz),
                format_db(f.attenuation_db(w.fold_from_hz)),
                format_hz(r.band_hz),
                format_db(f.attenuation_db(r.band_hz))
            )
        }
        None => format!(
            "attenuate {} by another {} in the analog chain before the converter (a steeper or lower analog filter); the converter's own filter does not help there",
            format_hz(w.fold_from_hz),
            format_db(need)
        ),
    }
}
