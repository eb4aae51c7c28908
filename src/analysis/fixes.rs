//! Fix candidates for a channel's failing rate verdicts, confirmed by the analysis.
//!
//! When a channel fails `nyquist`, `sampling-margin`, `alias-rejection` or
//! `disturbance-alias`, [`search`] tries, in this order: another divider, else another
//! multiplier, on the channel's own clock (when at most eight other channels of the rig
//! sample on it, each re-analysed; for a clock of an included catalog the edit is to
//! the catalog, and `crate::fix` verifies it in every rig that includes the catalog and
//! says which it reaches), sampling on another clock that already runs at a good rate
//! (an edit of the channel's `clock:`; never "divide by 1", which would make a clock's
//! name lie about its rate), another decimation factor, a `digital` stage filter's
//! attenuation, a digital filter in place of a stage's sinc, and the order or cutoff of
//! the channel's own analog filter. Every candidate is put to
//! [`analyse_rates`](super::analyse_rates) — the same verdict code the rules read — and kept only if the
//! channel then passes those four rules and nothing that passed before fails (module
//! limits, droop, oversampling). The search is cheap: the rate of a clock or stage
//! setting is found by binary search (the verdicts improve with the rate), every probe
//! is one analysis, and results are cached per chain shape, band and requirements so
//! identical channels of a rig share one search.

use super::{ChannelAnalysis, Context, Limits, RateAnalysis, analyse_verdicts, module_allows};
use crate::finding::Edit;
use crate::model::quantity::{Exact, to_f64};
use crate::model::{ClockDef, Response, ordinal};
use crate::resolve::{FilterOrigin, RChannel, Rig};
use crate::source::Span;
use crate::words::{format_db, format_hz};
use num_traits::{CheckedDiv, CheckedMul};
use std::collections::HashMap;
use std::fmt::Write as _;
use std::sync::Mutex;

/// A change that makes a channel's failing rate verdicts pass, with its edits.
#[derive(Clone, Debug, PartialEq)]
pub struct Candidate {
    /// What the edits do, e.g. "divide `osc` by 256 instead of 512 in clock `slow` to
    /// sample at 96 kHz".
    pub description: String,
    /// The help line: the description and what else the edit changes.
    pub help: String,
    /// Byte-exact edits.
    pub edits: Vec<Edit>,
}

/// What a candidate changes, independent of where the channel is written (so that
/// identical channels share it).
#[derive(Clone, Debug, PartialEq)]
enum Plan {
    /// Divide the channel's own clock's source by this instead.
    Divider(u64),
    /// Multiply the channel's own clock's source by this instead.
    Multiplier(u64),
    /// Sample on this clock (index into the rig's clocks).
    Sibling(usize),
    /// Decimate by this at stage k (1-based).
    Factor(usize, u32),
    /// Give stage k's digital filter this attenuation, dB.
    StageAttenuation(usize, u32),
    /// Replace stage k's filter by a digital one: passband edge, stopband edge (as
    /// hundredths of the stage's output rate) and attenuation, dB.
    StageFilter(usize, u32, u32, u32),
    /// Give the channel's analog filter i this order.
    Order(usize, u32),
    /// Give the channel's analog filter i this cutoff, Hz.
    Cutoff(usize, f64),
}

/// Search results shared by identical channels.
#[derive(Default)]
pub struct Cache {
    map: Mutex<HashMap<String, Option<Plan>>>,
}

/// The analysis' question: with `ch` (maybe changed) sampled at `fs0`, does the channel
/// pass the rate rules a fix aims at, and keep passing everything that passed before?
fn passes(
    rig: &Rig,
    index: usize,
    ch: &RChannel,
    fs0: Exact,
    limits: &Limits,
    before: &RateAnalysis,
) -> bool {
    let Ok(after) = analyse_verdicts(rig, index, ch, fs0, limits, before.enabled) else {
        return false;
    };
    after.rates_pass() && no_new_failures(before, &after)
}

/// Nothing that passed in `before` fails in `after`.
fn no_new_failures(before: &RateAnalysis, after: &RateAnalysis) -> bool {
    let kept = |b: bool, a: bool| b || !a;
    kept(
        before.nyquist_failure().is_some(),
        after.nyquist_failure().is_some(),
    ) && kept(
        before.margin_failure().is_some(),
        after.margin_failure().is_some(),
    ) && kept(
        before.alias_failure().is_some(),
        after.alias_failure().is_some(),
    ) && kept(
        before.droop_failure().is_some(),
        after.droop_failure().is_some(),
    ) && kept(
        before.oversampling_failure().is_some(),
        after.oversampling_failure().is_some(),
    ) && after.disturbance_failures().all(|(d, _)| {
        before
            .disturbance_failures()
            .any(|(e, _)| e.index == d.index)
    })
}

/// A multiplier is tried up to this many times the written one.
const MULTIPLIER_REACH: u64 = 8;

/// At most this many multipliers are tried (each is one analysis): a huge written
/// multiplier must not turn the search into millions of probes.
const MULTIPLIER_PROBES: u64 = 64;

/// At most this many other channels on a clock are re-analysed to confirm a divider
/// change that reaches them too (beyond it, sampling on another clock is proposed).
const SHARED_CLOCK_LIMIT: usize = 8;

/// The other channels on `clock` keep every verdict that passes when the clock's rate
/// is scaled by `scale`.
fn others_keep_passing(
    rig: &Rig,
    index: usize,
    clock: usize,
    scale: &Exact,
    limits: &Limits,
    enabled: super::Enabled,
) -> bool {
    rig.channels_under(clock)
        .into_iter()
        .filter(|&o| o != index)
        .all(|o| {
            let ch = &rig.channels[o];
            let Some(fs0) = rig.adc_rate(ch) else {
                return true;
            };
            let Some(new) = fs0.checked_mul(scale) else {
                return false;
            };
            if !ch.ok {
                return module_allows(rig, ch.module, &new) || !module_allows(rig, ch.module, &fs0);
            }
            let (Ok(b), Ok(a)) = (
                analyse_verdicts(rig, o, ch, fs0, limits, enabled),
                analyse_verdicts(rig, o, ch, new, limits, enabled),
            ) else {
                return true;
            };
            no_new_failures(&b, &a)
                && (module_allows(rig, ch.module, &new) || !module_allows(rig, ch.module, &fs0))
        })
}

/// The key of a channel's search: everything the verdicts depend on, nothing about
/// where it is written.
fn shape_key(rig: &Rig, index: usize, ch: &RChannel) -> String {
    let mut k = String::new();
    let _ = write!(
        k,
        "{:?}|{:?}|{:?}|{:?}|{:?}|{}|{:?}",
        rig.file,
        ch.clock,
        ch.sensor,
        ch.module,
        ch.band.as_ref().map(|b| b.hz),
        ch.rejection.0,
        ch.filters_origin
    );
    for f in &ch.filters {
        let _ = write!(k, "|f{:?}", f.response);
    }
    for st in &ch.def.decimate {
        let _ = write!(
            k,
            "|d{}:{:?}",
            st.factor.value,
            st.filter.as_ref().map(|f| &f.response)
        );
    }
    for di in 0..rig.disturbance_targets.len() {
        if rig.reaches(di, index) {
            let _ = write!(k, "|t{di}");
        }
    }
    k
}

/// Search a confirmed fix for channel `channel` whose analysis is `analysis`.
pub fn search(
    rig: &Rig,
    channel: usize,
    analysis: &ChannelAnalysis,
    limits: &Limits,
    ctx: &Context,
) -> Option<Candidate> {
    let before = analysis.rates.as_ref().ok()?;
    if before.rates_pass() {
        return None;
    }
    let ch = &rig.channels[channel];
    let key = shape_key(rig, channel, ch);
    let cached = ctx
        .cache
        .map
        .lock()
        .expect("no thread panicked")
        .get(&key)
        .cloned();
    let plan = match cached {
        Some(p) => p,
        None => {
            let p = find_plan(rig, channel, ch, before, limits);
            ctx.cache
                .map
                .lock()
                .expect("no thread panicked")
                .insert(key, p.clone());
            p
        }
    };
    materialise(rig, ch, &plan?)
}

/// Largest `n` in `lo..=hi` for which `ok(n)` holds, assuming `ok` holds for every `n`
/// up to some point (the rate falls as `n` grows). The result is confirmed; when the
/// assumption fails (a resonance that folds in only at some rates), a short scan below
/// the bisection point finds the next `n` that passes.
fn largest_passing(lo: u64, hi: u64, ok: impl Fn(u64) -> bool) -> Option<u64> {
    if lo > hi {
        return None;
    }
    let (mut a, mut b) = (lo, hi);
    // Invariant: every n < a is assumed to pass; every n > b fails.
    while a < b {
        let mid = a + (b - a).div_ceil(2);
        if ok(mid) { a = mid } else { b = mid - 1 }
    }
    (lo..=a).rev().take(32).find(|&n| ok(n))
}

fn find_plan(
    rig: &Rig,
    index: usize,
    ch: &RChannel,
    before: &RateAnalysis,
    limits: &Limits,
) -> Option<Plan> {
    let clock = ch.clock?;
    let fs0 = rig.clocks[clock].rate?;
    let module_ok = |r: &Exact| module_allows(rig, ch.module, r);

    // 1. Another divider, else another multiplier, on the channel's own clock, when few
    //    other channels of the rig sample on it (they are checked too). A clock of an
    //    included catalog qualifies: the edit is then to the catalog, and verification
    //    (`crate::fix`) confirms it in every rig that includes the catalog.
    let c = &rig.clocks[clock];
    if let ClockDef::Derived {
        divide, multiply, ..
    } = &c.def.def
        && rig.fanout[clock] <= SHARED_CLOCK_LIMIT + 1
        && let Some(src) = c.parent.and_then(|p| rig.clocks[p].rate)
    {
        let (d, m) = (
            divide.as_ref().map_or(1, |d| d.value),
            multiply.as_ref().map_or(1, |m| m.value),
        );
        let shared = rig.fanout[clock] > 1;
        // The clock at source × nm ÷ nd passes for this channel and keeps every other
        // channel on it passing.
        let ok = |nm: u64, nd: u64| {
            let (nm, nd) = (i128::from(nm), i128::from(nd));
            src.checked_mul(&Exact::from_integer(nm))
                .and_then(|r| r.checked_div(&Exact::from_integer(nd)))
                .is_some_and(|r| {
                    module_ok(&r)
                        && passes(rig, index, ch, r, limits, before)
                        && (!shared
                            || others_keep_passing(
                                rig,
                                index,
                                clock,
                                &Exact::new(i128::from(d) * nm, i128::from(m) * nd),
                                limits,
                                before.enabled,
                            ))
                })
        };
        // Dividers below 2 would sample on the source itself: that is a sibling (a
        // divide-by-1 would leave the clock's name lying about its rate).
        if divide.is_some()
            && d > 2
            && let Some(nd) = largest_passing(2, d - 1, |nd| ok(m, nd))
        {
            let base = src.checked_mul(&Exact::from_integer(i128::from(m)))?;
            return Some(Plan::Divider(rounder(&base, nd, &|nd| ok(m, nd))));
        }
        // A written multiplier: the smallest larger one that passes (the rate rises
        // with it; a module's limits or `oversampling` bound it from above).
        if multiply.is_some()
            && let Some(nm) = (1..=MULTIPLIER_PROBES)
                .map(|i| m.saturating_add(i))
                .take_while(|&nm| nm <= m.saturating_mul(MULTIPLIER_REACH).max(m + 16))
                .find(|&nm| ok(nm, d))
        {
            return Some(Plan::Multiplier(nm));
        }
    }

    // 2. A clock that already runs at a good rate: the lowest such.
    let mut others: Vec<(usize, Exact)> = rig
        .clocks
        .iter()
        .enumerate()
        .filter(|(i, k)| *i != clock && !k.in_cycle && plain_name(&k.def.name.value))
        .filter_map(|(i, k)| Some((i, k.rate?)))
        .filter(|(_, r)| *r != fs0)
        .collect();
    others.sort_by_key(|o| o.1);
    if let Some((i, _)) = others
        .iter()
        .find(|(_, r)| module_ok(r) && passes(rig, index, ch, *r, limits, before))
    {
        return Some(Plan::Sibling(*i));
    }

    // 3. Another decimation factor, failing stages first.
    let failing: Vec<usize> = failing_stages(before);
    for &k in failing.iter().filter(|&&k| k >= 1) {
        let f = ch.def.decimate[k - 1].factor.value;
        let ok = |nf: u64| {
            let mut t = ch.clone();
            t.def.decimate[k - 1].factor.value = nf as u32;
            passes(rig, index, &t, fs0, limits, before)
        };
        if f > 2
            && let Some(nf) = largest_passing(2, u64::from(f) - 1, ok)
        {
            let mut input = fs0;
            for st in &ch.def.decimate[..k - 1] {
                input = input
                    .checked_div(&Exact::from_integer(i128::from(st.factor.value)))
                    .unwrap_or(input);
            }
            return Some(Plan::Factor(k, rounder(&input, nf, &ok) as u32));
        }
    }

    // 4. A digital stage filter's attenuation.
    for &k in failing.iter().filter(|&&k| k >= 1) {
        let Some(flt) = &ch.def.decimate[k - 1].filter else {
            continue;
        };
        let Response::Digital { attenuation, .. } = flt.response else {
            continue;
        };
        if flt.values.attenuation.is_none() {
            continue;
        }
        let with = |db: u32| {
            let mut t = ch.clone();
            if let Some(f) = t.def.decimate[k - 1].filter.as_mut()
                && let Response::Digital { attenuation, .. } = &mut f.response
            {
                *attenuation = f64::from(db);
            }
            passes(rig, index, &t, fs0, limits, before)
        };
        // More attenuation only helps: the smallest that passes, by bisection.
        let (mut lo, mut hi) = (attenuation.floor() as u32 + 1, 300u32);
        if lo <= hi && with(hi) {
            while lo < hi {
                let mid = lo + (hi - lo) / 2;
                if with(mid) { hi = mid } else { lo = mid + 1 }
            }
            return Some(Plan::StageAttenuation(k, lo));
        }
    }

    // 4b. A stage whose filter is not digital (a sinc): a digital filter in its place,
    //     edges at the band and at the lowest frequency that folds in.
    for &k in failing.iter().filter(|&&k| k >= 1) {
        let Some(flt) = &ch.def.decimate[k - 1].filter else {
            continue;
        };
        if matches!(flt.response, Response::Digital { .. }) {
            continue;
        }
        let Some(st) = before.stages.get(k) else {
            continue;
        };
        let (fs, band) = (st.rate_hz(), before.band_hz);
        let pb = (band / fs * 100.0).ceil() as u32;
        let sb = ((fs - band) / fs * 100.0).floor() as u32;
        if pb == 0 || sb <= pb {
            continue;
        }
        let with = |db: u32| {
            let mut t = ch.clone();
            if let Some(f) = t.def.decimate[k - 1].filter.as_mut() {
                f.response = Response::Digital {
                    passband_edge: f64::from(pb) / 100.0,
                    stopband_edge: f64::from(sb) / 100.0,
                    attenuation: f64::from(db),
                    delay: None,
                };
            }
            passes(rig, index, &t, fs0, limits, before)
        };
        let (mut lo, mut hi) = (before.required_db.floor().max(1.0) as u32, 300u32);
        if with(hi) {
            while lo < hi {
                let mid = lo + (hi - lo) / 2;
                if with(mid) { hi = mid } else { lo = mid + 1 }
            }
            return Some(Plan::StageFilter(k, pb, sb, lo));
        }
    }

    // 5. The channel's own analog filter: a higher order, else a lower cutoff.
    if ch.filters_origin == FilterOrigin::Channel
        && let Some((i, flt)) = ch
            .filters
            .iter()
            .enumerate()
            .find(|(_, f)| f.response.is_analog())
    {
        let set = |t: &mut RChannel, order: Option<u32>, cutoff: Option<f64>| {
            if let Response::Butterworth {
                order: o,
                cutoff: c,
            }
            | Response::Bessel {
                order: o,
                cutoff: c,
            }
            | Response::Chebyshev {
                order: o,
                cutoff: c,
                ..
            } = &mut t.filters[i].response
            {
                if let Some(n) = order {
                    *o = n;
                }
                if let Some(x) = cutoff {
                    *c = x;
                }
            }
        };
        let (order, cutoff) = match flt.response {
            Response::Butterworth { order, cutoff }
            | Response::Bessel { order, cutoff }
            | Response::Chebyshev { order, cutoff, .. } => (order, cutoff),
            _ => return None,
        };
        if flt.values.order.is_some() {
            for n in order + 1..=12 {
                let mut t = ch.clone();
                set(&mut t, Some(n), None);
                if passes(rig, index, &t, fs0, limits, before) {
                    return Some(Plan::Order(i, n));
                }
            }
        }
        if flt.values.cutoff.is_some() {
            // The highest cutoff (three significant digits) below the current one that
            // passes: bisection in f64 picks it, the analysis confirms it.
            let band = before.band_hz;
            let ok = |x: f64| {
                let mut t = ch.clone();
                set(&mut t, None, Some(x));
                passes(rig, index, &t, fs0, limits, before)
            };
            // A lower cutoff attenuates the fold more but droops the band more: step
            // down from the current cutoff to the first that passes (if any does before
            // the droop fails), then bisect between it and the last that failed.
            let mut hi = cutoff;
            let mut found = None;
            let mut x = cutoff;
            for _ in 0..40 {
                x *= 0.95;
                if x < band * 0.5 {
                    break;
                }
                if ok(x) {
                    found = Some(x);
                    break;
                }
                hi = x;
            }
            if let Some(mut lo) = found {
                for _ in 0..30 {
                    let mid = 0.5 * (lo + hi);
                    if ok(mid) { lo = mid } else { hi = mid }
                }
                let x = round_down_3(lo);
                if x > 0.0 && x < cutoff && ok(x) {
                    return Some(Plan::Cutoff(i, x));
                }
            }
        }
    }
    None
}

/// How many significant digits the decimal form of `r` has, when it ends within nine
/// (`51.2 kHz` has 3); `None` for a rate like 83.3085… kHz that has no short form.
fn significant_digits(r: &Exact) -> Option<u32> {
    if *r.numer() <= 0 {
        return None;
    }
    // Scale to an integer by powers of ten (a terminating decimal needs at most a few).
    let mut x = *r;
    for _ in 0..12 {
        if x.is_integer() {
            break;
        }
        x = x.checked_mul(&Exact::from_integer(10))?;
    }
    if !x.is_integer() {
        return None;
    }
    let mut n = x.to_integer();
    while n % 10 == 0 {
        n /= 10;
    }
    let digits = n.to_string().len() as u32;
    (digits <= 9).then_some(digits)
}

/// A rate for a fix's text: exact when its decimal form is short (`51.2 kHz`,
/// `50.053 kHz`), else "about" and four significant digits (`about 83.31 kHz` for
/// 24.576 MHz / 295), so that no figure looks more exact than a person needs.
fn rate_words(r: &Exact) -> String {
    let x = to_f64(r);
    if significant_digits(r).is_some_and(|d| d <= 6) || x.is_nan() || x <= 0.0 {
        return format_hz(x);
    }
    let unit = 10f64.powi(x.log10().floor() as i32 - 3);
    format!("about {}", format_hz((x / unit).round() * unit))
}

/// A divisor that gives a round rate, when one is close: among the divisors from about
/// 10 % below `best` (the largest that passes) up to `best`, the one whose rate `base /
/// n` has the fewest significant digits (at most four, and fewer than `best`'s rate),
/// the closest to `best` among equals, that still passes `ok`; else `best`. A person
/// sets 51.2 kHz (divider 480) rather than 50.053 kHz (divider 491).
fn rounder(base: &Exact, best: u64, ok: &dyn Fn(u64) -> bool) -> u64 {
    let Some(at_best) = base.checked_div(&Exact::from_integer(i128::from(best))) else {
        return best;
    };
    let now = significant_digits(&at_best).unwrap_or(u32::MAX);
    let lo = best.saturating_sub((best / 10).max(2)).max(2);
    if lo >= best || now <= 1 {
        return best;
    }
    let (fmin, fmax) = (to_f64(&at_best), to_f64(base) / lo as f64);
    if !(fmin > 0.0 && fmax.is_finite()) {
        return best;
    }
    for k in 1..now.min(5) {
        let mut found: Vec<u64> = Vec::new();
        let (e0, e1) = (fmin.log10().floor() as i32, fmax.log10().floor() as i32);
        for e in e0..=e1 {
            // Round numbers m · 10^p with k significant digits between the two rates.
            let p = e - k as i32 + 1;
            let step = 10f64.powi(p);
            let (m0, m1) = ((fmin / step).ceil() as i64, (fmax / step).floor() as i64);
            for m in m0.max(1)..=m1.min(m0.max(1) + 2000) {
                let scale = Exact::from_integer(10).pow(p);
                let Some(r) = Exact::from_integer(i128::from(m)).checked_mul(&scale) else {
                    continue;
                };
                let Some(n) = base.checked_div(&r) else {
                    continue;
                };
                if n.is_integer()
                    && let Ok(n) = u64::try_from(n.to_integer())
                    && (lo..=best).contains(&n)
                    && significant_digits(&r) == Some(k)
                {
                    found.push(n);
                }
            }
        }
        found.sort_unstable_by(|a, b| b.cmp(a));
        found.dedup();
        if let Some(n) = found.into_iter().find(|&n| ok(n)) {
            return n;
        }
    }
    best
}

/// The rate changes whose verdicts fail, in order.
fn failing_stages(a: &RateAnalysis) -> Vec<usize> {
    let mut v: Vec<usize> = Vec::new();
    let mut add = |k: usize| {
        if !v.contains(&k) {
            v.push(k);
        }
    };
    if let Some(s) = a.nyquist_failure() {
        add(s.stage);
    }
    if let Some(s) = a.margin_failure() {
        add(s.stage);
    }
    if let Some(w) = a.alias_failure() {
        add(w.stage);
    }
    for (_, s) in a.disturbance_failures() {
        add(s.stage);
    }
    v.sort_unstable();
    v
}

/// A value rounded down to three significant digits.
fn round_down_3(hz: f64) -> f64 {
    if !(hz.is_finite() && hz > 0.0) {
        return hz;
    }
    let p = 10f64.powi(hz.log10().floor() as i32 - 2);
    // Guard against 1299.9999 → 1290: round the quotient to 9 digits first.
    let q = ((hz / p) * 1e9).round() / 1e9;
    q.floor() * p
}

/// A name that can stand as a plain YAML scalar.
fn plain_name(s: &str) -> bool {
    !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.'))
        && !s.starts_with(['-', '.'])
}

fn edit(span: Span, replacement: impl Into<String>) -> Edit {
    Edit {
        span,
        replacement: replacement.into(),
    }
}

fn materialise(rig: &Rig, ch: &RChannel, plan: &Plan) -> Option<Candidate> {
    let (description, help, edits) = match *plan {
        Plan::Divider(n) | Plan::Multiplier(n) => {
            let clock = ch.clock?;
            let c = &rig.clocks[clock];
            let ClockDef::Derived {
                source,
                divide,
                multiply,
            } = &c.def.def
            else {
                return None;
            };
            let src = c.parent.and_then(|p| rig.clocks[p].rate)?;
            let (d, m) = (
                divide.as_ref().map_or(1, |d| d.value),
                multiply.as_ref().map_or(1, |m| m.value),
            );
            let (verb, old, (nm, nd)) = match plan {
                Plan::Divider(_) => ("divide", divide.as_ref()?, (m, n)),
                _ => ("multiply", multiply.as_ref()?, (n, d)),
            };
            let rate = src.checked_mul(&Exact::from_integer(i128::from(nm)))?
                / Exact::from_integer(i128::from(nd));
            let desc = format!(
                "{verb} `{}` by {n} instead of {} in clock `{}` to sample at {}",
                source.value,
                old.value,
                c.def.name.value,
                rate_words(&rate)
            );
            // A clock of an included catalog: verification appends which rigs and
            // channels the edit reaches (it checks every rig that includes it).
            let help = if c.def.name.span.file != rig.file {
                desc.clone()
            } else {
                match rig.fanout[clock].saturating_sub(1) {
                    0 => format!("{desc} (no other channel samples on it)"),
                    1 => format!(
                        "{desc} (1 other channel of this rig samples on it too; nothing it passes fails)"
                    ),
                    k => format!(
                        "{desc} ({k} other channels of this rig sample on it too; nothing they pass fails)"
                    ),
                }
            };
            (desc, help, vec![edit(old.span, n.to_string())])
        }
        Plan::Sibling(i) => {
            let k = &rig.clocks[i];
            let span = ch.def.clock.as_ref()?.span;
            let desc = format!(
                "sample on `{}` directly (it runs at {})",
                k.def.name.value,
                format_hz(to_f64(&k.rate?))
            );
            (
                desc.clone(),
                desc,
                vec![edit(span, k.def.name.value.clone())],
            )
        }
        Plan::Factor(k, nf) => {
            let st = &ch.def.decimate[k - 1];
            let mut rate = rig.adc_rate(ch)?;
            for s in &ch.def.decimate[..k - 1] {
                rate = rate.checked_div(&Exact::from_integer(i128::from(s.factor.value)))?;
            }
            let rate = rate.checked_div(&Exact::from_integer(i128::from(nf)))?;
            let desc = format!(
                "decimate by {nf} instead of {} at stage {k} to leave {}",
                st.factor.value,
                rate_words(&rate)
            );
            (
                desc.clone(),
                desc,
                vec![edit(st.factor.span, nf.to_string())],
            )
        }
        Plan::StageAttenuation(k, db) => {
            let flt = ch.def.decimate[k - 1].filter.as_ref()?;
            let desc = format!(
                "give the digital filter of decimation stage {k} a stopband attenuation of {}",
                format_db(f64::from(db)).replace(".00", "")
            );
            (
                desc.clone(),
                desc,
                vec![edit(flt.values.attenuation?, format!("{db} dB"))],
            )
        }
        Plan::StageFilter(k, pb, sb, db) => {
            let flt = ch.def.decimate[k - 1].filter.as_ref()?;
            let text = format!(
                "{{ response: digital, passband-edge: {}, stopband-edge: {}, attenuation: {db} dB }}",
                f64::from(pb) / 100.0,
                f64::from(sb) / 100.0
            );
            let desc = format!("give decimation stage {k} `filter: {text}`");
            (desc.clone(), desc, vec![edit(flt.span, text)])
        }
        Plan::Order(i, n) => {
            let flt = &ch.filters[i];
            let desc = format!(
                "make the anti-alias filter ({}) {} order",
                flt.response.describe(),
                ordinal(n)
            );
            (
                desc.clone(),
                desc,
                vec![edit(flt.values.order?, n.to_string())],
            )
        }
        Plan::Cutoff(i, hz) => {
            let flt = &ch.filters[i];
            let desc = format!(
                "lower the cutoff of the anti-alias filter ({}) to {}",
                flt.response.describe(),
                format_hz(hz)
            );
            (
                desc.clone(),
                desc,
                vec![edit(flt.values.cutoff?, format_hz(hz))],
            )
        }
    };
    Some(Candidate {
        description,
        help,
        edits,
    })
}
