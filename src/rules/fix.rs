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

/// "also changes 3 other channels of this rig", and a warning when the clock comes from
/// a shared catalog (other rigs may sample on it too).
fn others(n: usize, shared: bool) -> String {
    let mut s = match n {
        0 => "no other channel of this rig shares it".to_string(),
        1 => "also changes 1 other channel of this rig".to_string(),
        n => format!("also changes {n} other channels of this rig"),
    };
    if shared {
        s.push_str("; the clock is in a shared catalog, so other rigs may change too");
    }
    s
}

/// What an ADC-stage fix must reach with a filter when no rate works: the frequency
/// that fails and the attenuation the whole chain needs there.
#[derive(Clone, Copy, Debug)]
pub struct FilterTarget {
    /// The frequency to attenuate.
    pub frequency: f64,
    /// The attenuation the chain needs there (required rejection, plus a resonance's gain).
    pub needed_db: f64,
}

/// How many candidate dividers to try at most (the search starts at the largest
/// divider that can reach the lowest acceptable rate, so few are needed).
const DIVIDER_TRIES: u64 = 4096;

/// Help for a problem at the ADC (stage 0). `filter` says what a filter change must
/// reach when no clock setting fixes the problem (None: rate rules only).
pub fn adc_help(
    chain: &Chain,
    band: f64,
    margin: f64,
    required: f64,
    filter: Option<FilterTarget>,
) -> Option<String> {
    let rig = chain.rig;
    let ch = chain.channel;
    let clock = ch.clock?;
    // Decimation after the ADC divides the final rate further.
    let total_factor: f64 = chain
        .changes
        .iter()
        .map(|rc| f64::from(rc.factor))
        .product();
    let limit = rig.thresholds.oversampling_limit * band * total_factor;
    let usable = |rate: &Exact, with_alias: bool| {
        let fs = to_f64(rate);
        fs <= limit
            && module_allows(rig, ch.module, rate)
            && if with_alias {
                rate_is_good(chain, 0, fs, band, margin, required)
            } else {
                fs > 2.0 * band && fs >= margin * band
            }
    };
    let lowest = (margin * band).max(2.0 * band);
    let suggest = |with_alias: bool| -> Vec<String> {
        let mut parts = Vec::new();
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
            let Some(base) =
                num_traits::CheckedMul::checked_mul(&src_rate, &Exact::from_integer(m as i128))
            else {
                return parts;
            };
            // The largest divider that can still reach the lowest acceptable rate.
            let start = ((to_f64(&base) / lowest).floor() as u64).min(d.saturating_sub(1));
            let best = (1..=start).rev().take(DIVIDER_TRIES as usize).find(|&nd| {
                num_traits::CheckedDiv::checked_div(&base, &Exact::from_integer(nd as i128))
                    .is_some_and(|r| usable(&r, with_alias))
            });
            if let Some(nd) = best {
                let rate = base / Exact::from_integer(nd as i128); // checked just above
                let sharing = rig.fanout[clock].saturating_sub(1);
                parts.push(format!(
                    "divide `{}` by {nd} instead of {d} in clock `{}` to sample at {} ({})",
                    source.value,
                    c.def.name.value,
                    format_hz(to_f64(&rate)),
                    others(sharing, c.def.name.span.file != rig.file)
                ));
            }
        }
        // 2. Another clock that already runs at a suitable rate (the lowest such).
        let sibling = rig
            .clocks
            .iter()
            .enumerate()
            .filter(|(i, k)| *i != clock && k.rate.is_some_and(|r| usable(&r, with_alias)))
            .min_by(|a, b| a.1.rate.cmp(&b.1.rate));
        if let Some((_, k)) = sibling {
            parts.push(format!(
                "sample on clock `{}`, which already runs at {}",
                k.def.name.value,
                format_hz(to_f64(&k.rate.expect("filtered")))
            ));
        }
        parts
    };
    let mut parts = suggest(true);
    if parts.is_empty() {
        if let Some(t) = filter {
            // 3. No setting of the clock tree works: a filter change that would.
            let others_db =
                chain.attenuation_db(t.frequency, 0) - own_filter_db(chain, t.frequency);
            return filter_help(chain, t.frequency, band, t.needed_db - others_db);
        }
        // For the rate rules alone: a rate that passes them, the filter aside.
        parts = suggest(false);
        if parts.is_empty() {
            return None;
        }
        let mut s = parts.join(", or ");
        s.push_str("; the anti-alias filter must then also meet the required rejection");
        return Some(s);
    }
    Some(parts.join(", or "))
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
                if let Some(cut) =
                    design::max_cutoff_for(a.kind, order, f, required_db).map(round_cutoff)
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
                if let Some(cut) =
                    design::max_cutoff_for(kind, order, f, required_db).map(round_cutoff)
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

/// A suggested cutoff rounded down to three significant digits (a lower cutoff only
/// attenuates more; the droop is checked after rounding).
fn round_cutoff(hz: f64) -> f64 {
    if !(hz.is_finite() && hz > 0.0) {
        return hz;
    }
    let p = 10f64.powi(hz.log10().floor() as i32 - 2);
    (hz / p).floor() * p
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
    // The largest factor that can still reach the lowest acceptable rate.
    let lowest = (margin * band).max(2.0 * band);
    let start = ((fin / lowest).floor() as u64).min(u64::from(ch.factor) - 1) as u32;
    // Later stages divide further; the final rate must stay within the oversampling limit.
    let later: f64 = chain.changes[stage + 1..]
        .iter()
        .map(|rc| f64::from(rc.factor))
        .product();
    let limit = chain.rig.thresholds.oversampling_limit * band;
    let best = (1..=start).rev().take(DIVIDER_TRIES as usize).find(|&nf| {
        let fs = fin / nf as f64;
        fs / later <= limit && rate_is_good(chain, stage, fs, band, margin, required)
    });
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
