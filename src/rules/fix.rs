//! Fix suggestions for the rate rules: the lowest rate that satisfies `nyquist`,
//! `sampling-margin` and `alias-rejection` for a channel, and the nearest setting of the
//! clock tree (or decimation factor) that reaches it within the module's limits.

use crate::model::quantity::{Exact, format_hz, to_f64};
use crate::model::{ClockDef, ordinal};
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::signal::design;
use crate::signal::fold::fold;

/// Does a rate satisfy all three rate rules at this rate change?
pub fn rate_is_good(
    chain: &Chain,
    stage: usize,
    fs: f64,
    band: f64,
    margin: f64,
    required: f64,
) -> bool {
    if fs <= 2.0 * band || fs < margin * band {
        return false;
    }
    let a = chain.attenuation_db_at(fs - band, stage, Some(fs));
    if a < required {
        return false;
    }
    if stage == 0
        && let Some(res) = chain
            .channel
            .sensor
            .and_then(|s| chain.rig.sensors[s].resonance.as_ref())
    {
        let fr = res.frequency.value;
        if fold(fr, fs) <= band
            && chain.attenuation_db_at(fr, 0, Some(fs)) - res.gain.value < required
        {
            return false;
        }
    }
    true
}

fn module_allows(rig: &Rig, module: Option<usize>, rate: &Exact) -> bool {
    let Some(m) = module.map(|i| &rig.modules[i]) else {
        return true;
    };
    if m.max_rate.as_ref().is_some_and(|max| rate > &max.value) {
        return false;
    }
    if let Some(rates) = &m.rates
        && !rates.value.is_empty()
        && !rates.value.iter().any(|r| r.value == *rate)
    {
        return false;
    }
    true
}

fn others(n: usize) -> String {
    match n {
        0 => "no other channel shares it".to_string(),
        1 => "also changes 1 other channel".to_string(),
        n => format!("also changes {n} other channels"),
    }
}

/// Help for a problem at the ADC (stage 0) of channel `ci`.
pub fn adc_help(
    chain: &Chain,
    ci: usize,
    band: f64,
    margin: f64,
    required: f64,
    with_filter: bool,
) -> Option<String> {
    let rig = chain.rig;
    let ch = chain.channel;
    let clock = ch.clock?;
    let mut parts = Vec::new();
    // The ADC rate of candidates must pass the rules and the module's limits.
    let good = |rate: &Exact| {
        module_allows(rig, ch.module, rate)
            && rate_is_good(chain, 0, to_f64(rate), band, margin, required)
    };

    // 1. A divider on the channel's own clock.
    let c = &rig.clocks[clock];
    if let ClockDef::Derived {
        source,
        divide,
        multiply,
    } = &c.def.def
        && let Some(src_rate) = c.parent.and_then(|p| rig.clocks[p].rate)
    {
        let m = multiply.as_ref().map_or(1, |m| m.value);
        let d = divide.as_ref().map_or(1, |d| d.value);
        let base = src_rate * Exact::from_integer(m as i128);
        // Largest divider below the current one that passes.
        let best = (1..d)
            .rev()
            .find(|&nd| good(&(base / Exact::from_integer(nd as i128))));
        if let Some(nd) = best {
            let rate = base / Exact::from_integer(nd as i128);
            let sharing = rig.channels_under_count(clock).saturating_sub(1);
            parts.push(format!(
                "divide `{}` by {nd} instead of {d} in clock `{}` to sample at {} ({})",
                source.value,
                c.def.name.value,
                format_hz(to_f64(&rate)),
                others(sharing)
            ));
        }
    }
    // 2. Another clock that already runs at a suitable rate (the lowest such).
    let sibling = rig
        .clocks
        .iter()
        .enumerate()
        .filter(|(i, k)| *i != clock && k.rate.is_some_and(|r| good(&r)))
        .min_by(|a, b| a.1.rate.cmp(&b.1.rate));
    if let Some((_, k)) = sibling {
        parts.push(format!(
            "sample on clock `{}`, which already runs at {}",
            k.def.name.value,
            format_hz(to_f64(&k.rate.expect("filtered")))
        ));
    }
    if parts.is_empty() && with_filter {
        // 3. No setting of the clock tree works: a filter change that would.
        let fs = to_f64(&chain.adc_rate());
        return filter_help(
            chain,
            fs - band,
            band,
            required - (chain.attenuation_db(fs - band, 0) - own_filter_db(chain, fs - band)),
        );
    }
    if parts.is_empty() {
        return None;
    }
    let mut s = parts.remove(0);
    for p in parts {
        s.push_str(", or ");
        s.push_str(&p);
    }
    let _ = ci;
    Some(s)
}

fn own_filter_db(chain: &Chain, f: f64) -> f64 {
    chain
        .channel
        .filters
        .iter()
        .filter_map(|flt| crate::resolve::chain::analog(&flt.response))
        .map(|a| a.attenuation_db(f))
        .sum()
}

/// Say which anti-alias filter would reach `required_db` at `f` without drooping the band.
fn filter_help(chain: &Chain, f: f64, band: f64, required_db: f64) -> Option<String> {
    let current = chain
        .channel
        .filters
        .iter()
        .find_map(|flt| crate::resolve::chain::analog(&flt.response));
    let tol = chain.rig.thresholds.passband_tolerance;
    let droop_ok = |kind, order, cutoff| {
        crate::signal::analog::Analog {
            kind,
            order,
            cutoff_hz: cutoff,
        }
        .attenuation_db(band)
            <= tol
    };
    match current {
        Some(a) => {
            if let Some(order) = design::min_order_for(a.kind, a.cutoff_hz, f, required_db)
                && droop_ok(a.kind, order, a.cutoff_hz)
            {
                return Some(format!(
                    "no clock setting within the module's limits fixes this; a {}-order filter at the same {} cutoff would reach {required_db:.0} dB at {}",
                    ordinal(order),
                    format_hz(a.cutoff_hz),
                    format_hz(f)
                ));
            }
            for order in a.order..=12 {
                if let Some(cut) = design::max_cutoff_for(a.kind, order, f, required_db)
                    && droop_ok(a.kind, order, cut)
                {
                    return Some(format!(
                        "no clock setting within the module's limits fixes this; a {}-order filter with its cutoff at {} would reach {required_db:.0} dB at {}",
                        ordinal(order),
                        format_hz(cut),
                        format_hz(f)
                    ));
                }
            }
            Some("no clock setting within the module's limits fixes this, and no filter of order 12 or less meets the rejection without drooping the band; sample faster".to_string())
        }
        None => {
            let kind = crate::signal::analog::AnalogKind::Butterworth;
            for order in 2..=12 {
                if let Some(cut) = design::max_cutoff_for(kind, order, f, required_db)
                    && droop_ok(kind, order, cut)
                {
                    return Some(format!(
                        "the channel has no anti-alias filter; a {}-order Butterworth with its cutoff at {} would reach {required_db:.0} dB at {}",
                        ordinal(order),
                        format_hz(cut),
                        format_hz(f)
                    ));
                }
            }
            Some("the channel has no anti-alias filter, and no Butterworth of order 12 or less meets the rejection without drooping the band; sample faster".to_string())
        }
    }
}

/// Help for a problem at decimation stage `stage` (≥ 1).
pub fn stage_help(
    chain: &Chain,
    stage: usize,
    band: f64,
    margin: f64,
    required: f64,
    with_filter: bool,
) -> Option<String> {
    let ch = &chain.changes[stage];
    let fin = to_f64(&ch.fs_in?);
    let best = (1..ch.factor)
        .rev()
        .find(|&nf| rate_is_good(chain, stage, fin / nf as f64, band, margin, required));
    let mut parts = Vec::new();
    match best {
        Some(1) => parts.push(format!(
            "drop decimation stage {stage}: no factor of 2 or more keeps the band clean"
        )),
        Some(nf) => parts.push(format!(
            "decimate by {nf} instead of {} at stage {stage} to leave {}",
            ch.factor,
            format_hz(fin / nf as f64)
        )),
        None => {}
    }
    if with_filter {
        let fs = ch.fs_hz();
        if fs > 2.0 * band {
            let pb = (band / fs * 100.0).ceil() / 100.0;
            let sb = ((fs - band) / fs * 100.0).floor() / 100.0;
            if sb > pb {
                parts.push(format!(
                    "give the stage `filter: {{ response: digital, passband-edge: {pb}, stopband-edge: {sb}, attenuation: {:.0} dB }}`",
                    required.ceil()
                ));
            }
        }
    }
    if parts.is_empty() {
        None
    } else {
        Some(parts.join(", or "))
    }
}
