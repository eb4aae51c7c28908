//! One analysis per channel, computed once after resolution and read by everything
//! after it.
//!
//! For each channel of a resolved [`Rig`], [`analyse_channel`] works out every rate
//! change with its exact rate, the lowest frequency that folds into the band at each,
//! the attenuation (per filter) and phase there, the sensor resonance and each
//! disturbance followed through every stage, the droop at the band edge, the final
//! ratio and data rate — and the **verdict** of every rate rule (`module-rate`,
//! `nyquist`, `sampling-margin`, `alias-rejection`, `disturbance-alias`,
//! `passband-droop`, `sensor-band`, `oversampling`) with the numbers behind it.
//! Threshold comparisons against rates are exact (margins and limits are read as the
//! decimals the user wrote and compared as rationals with the exact rates).
//!
//! How to read it:
//! - **rules** (`crate::rules`) turn failing verdicts into findings (labels, message,
//!   help) and do no arithmetic of their own: [`RateAnalysis::nyquist_failure`],
//!   [`RateAnalysis::margin_failure`], [`RateAnalysis::alias_failure`],
//!   [`RateAnalysis::disturbance_failures`], [`RateAnalysis::droop_failure`],
//!   [`RateAnalysis::oversampling_failure`], [`ChannelAnalysis::module_rate`],
//!   [`ChannelAnalysis::sensor_band`];
//! - **`inspect`** shows one [`ChannelAnalysis`] (call [`analyse_channel`] for the
//!   channel shown and [`analyse_group`] for its group's members, not the whole rig)
//!   and lists [`ChannelAnalysis::verdicts`], which equal the findings `check` reports
//!   for the channel (a test walks every case rig to keep it so);
//! - **`diff`** compares the numbers of two analyses of a channel (final rate, ratio,
//!   the worst alias check);
//! - **the fix search** ([`fixes`]) asks [`analyse_rates`] "would this setting pass?"
//!   for a changed clock rate, decimation factor or filter, with the same verdict code;
//! - an **editor server** or an **HTML report** should hold a [`RigAnalysis`] per
//!   rig, show [`ChannelAnalysis::verdicts`] beside each channel, and offer the
//!   channel's [`ChannelAnalysis::fix`] as a quick fix.
//!
//! Rules whose level is `off` are not computed: pass the enabled set in [`Context`].
//! Per-stage results ([`StageInfo`]) are plain structs meant to grow (more checked
//! frequencies, delays, modulator checks) without changing how rules read them.

pub mod fixes;

use crate::model::quantity::{Exact, exact_decimal, to_f64};
use crate::resolve::chain::{Chain, FilterName};
use crate::resolve::{RChannel, Rig};
use crate::signal::fold::fold;
use crate::source::Span;
use num_traits::{CheckedDiv, CheckedMul};
use std::cmp::Ordering;

/// A rule whose verdict the analysis computes.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum RateRule {
    /// `module-rate`.
    ModuleRate,
    /// `nyquist`.
    Nyquist,
    /// `sampling-margin`.
    SamplingMargin,
    /// `alias-rejection`.
    AliasRejection,
    /// `disturbance-alias`.
    DisturbanceAlias,
    /// `passband-droop`.
    PassbandDroop,
    /// `sensor-band`.
    SensorBand,
    /// `oversampling`.
    Oversampling,
}

impl RateRule {
    /// Every rate rule.
    pub const ALL: [RateRule; 8] = [
        RateRule::ModuleRate,
        RateRule::Nyquist,
        RateRule::SamplingMargin,
        RateRule::AliasRejection,
        RateRule::DisturbanceAlias,
        RateRule::PassbandDroop,
        RateRule::SensorBand,
        RateRule::Oversampling,
    ];

    /// The rule's name (as its declaration in `crate::rules` spells it).
    pub fn name(self) -> &'static str {
        match self {
            RateRule::ModuleRate => "module-rate",
            RateRule::Nyquist => "nyquist",
            RateRule::SamplingMargin => "sampling-margin",
            RateRule::AliasRejection => "alias-rejection",
            RateRule::DisturbanceAlias => "disturbance-alias",
            RateRule::PassbandDroop => "passband-droop",
            RateRule::SensorBand => "sensor-band",
            RateRule::Oversampling => "oversampling",
        }
    }

    fn bit(self) -> u8 {
        1 << (self as u8)
    }
}

/// The set of rate rules to compute (a rule whose level is `off` is left out).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Enabled(u8);

impl Enabled {
    /// Every rate rule.
    pub const ALL: Enabled = Enabled(0xff);

    /// The rules for which `on(name)` is true.
    pub fn from_fn(mut on: impl FnMut(&'static str) -> bool) -> Enabled {
        Enabled(
            RateRule::ALL
                .iter()
                .filter(|r| on(r.name()))
                .fold(0, |m, r| m | r.bit()),
        )
    }

    /// Whether rule `r` is computed.
    pub fn has(self, r: RateRule) -> bool {
        self.0 & r.bit() != 0
    }

    /// Whether any rule that reads a channel's rates is computed (all but
    /// `module-rate` and `sensor-band`, which read the resolved rig only).
    pub fn any_rates(self) -> bool {
        self.0 & !(RateRule::ModuleRate.bit() | RateRule::SensorBand.bit()) != 0
    }
}

/// What an analysis needs besides the rig: the enabled rules and, for the fix search,
/// a cache shared by identical channels (of one rig or of a whole campaign).
pub struct Context {
    /// The rules to compute.
    pub enabled: Enabled,
    /// Whether to search fixes for failing channels.
    pub fixes: bool,
    cache: fixes::Cache,
}

impl Context {
    /// A context computing `enabled`, with the fix search on.
    pub fn new(enabled: Enabled) -> Context {
        Context {
            enabled,
            fixes: true,
            cache: fixes::Cache::default(),
        }
    }

    /// Turn the fix search on or off.
    pub fn with_fixes(mut self, on: bool) -> Context {
        self.fixes = on;
        self
    }
}

impl Default for Context {
    fn default() -> Self {
        Context::new(Enabled::ALL)
    }
}

/// A rig's thresholds as the analysis compares them: exact where they meet a rate.
#[derive(Clone, Debug)]
pub struct Limits {
    /// `margin`, as written.
    pub margin: f64,
    /// `margin`, exact (None if it cannot be held exactly: compared in f64 then).
    pub margin_exact: Option<Exact>,
    /// `oversampling-limit`, as written.
    pub oversampling_limit: f64,
    /// `oversampling-limit`, exact.
    pub oversampling_exact: Option<Exact>,
    /// `passband-tolerance`, dB.
    pub passband_tolerance: f64,
}

impl Limits {
    /// The limits of a rig.
    pub fn of(rig: &Rig) -> Limits {
        let t = &rig.thresholds;
        Limits {
            margin: t.margin,
            margin_exact: exact_decimal(t.margin),
            oversampling_limit: t.oversampling_limit,
            oversampling_exact: exact_decimal(t.oversampling_limit),
            passband_tolerance: t.passband_tolerance,
        }
    }
}

/// `a` compared with `k · b`, exactly when the product fits, else in f64.
pub fn cmp_scaled(a: &Exact, k: Option<&Exact>, k_f64: f64, b: &Exact) -> Ordering {
    if let Some(kb) = k.and_then(|k| k.checked_mul(b)) {
        return a.cmp(&kb);
    }
    to_f64(a).total_cmp(&(k_f64 * to_f64(b)))
}

/// Every channel of a rig, analysed.
pub struct RigAnalysis<'r> {
    /// The rig.
    pub rig: &'r Rig,
    /// One analysis per channel, in the rig's channel order.
    pub channels: Vec<ChannelAnalysis>,
    /// The rules that were computed.
    pub enabled: Enabled,
}

impl RigAnalysis<'_> {
    /// Whether channel `ci` was analysed in this run: false only for a channel that
    /// [`analyse_only`] left out on purpose.
    pub fn in_scope(&self, ci: usize) -> bool {
        self.channels
            .get(ci)
            .is_none_or(|c| !matches!(c.rates, Err(NotAnalysed::OutOfScope)))
    }
}

/// Channels analysed in one piece of work: a rig's channels are analysed in parallel
/// (a large rig file uses every core), in pieces large enough that a small rig is not
/// slowed by the hand-over.
const CHANNELS_PER_TASK: usize = 64;

/// Analyse every channel of a rig, in parallel; the result is in the rig's channel
/// order whatever the threads do.
pub fn analyse_rig<'r>(rig: &'r Rig, ctx: &Context) -> RigAnalysis<'r> {
    use rayon::prelude::*;
    let limits = Limits::of(rig);
    RigAnalysis {
        rig,
        channels: (0..rig.channels.len())
            .into_par_iter()
            .with_min_len(CHANNELS_PER_TASK)
            .map(|i| analyse_with(rig, i, &limits, ctx))
            .collect(),
        enabled: ctx.enabled,
    }
}

/// Analyse only the channels `scope` (indices into [`Rig::channels`]); every other
/// channel is left out ([`NotAnalysed::OutOfScope`]) and raises no channel finding.
/// `inspect` uses it with [`Rig::scope_of`] so that its cost does not grow with the
/// rig's channel count.
pub fn analyse_only<'r>(rig: &'r Rig, scope: &[usize], ctx: &Context) -> RigAnalysis<'r> {
    let limits = Limits::of(rig);
    RigAnalysis {
        rig,
        channels: (0..rig.channels.len())
            .map(|i| {
                if scope.contains(&i) {
                    analyse_with(rig, i, &limits, ctx)
                } else {
                    ChannelAnalysis {
                        channel: i,
                        module_rate: None,
                        sensor_band: None,
                        rates: Err(NotAnalysed::OutOfScope),
                        fix: None,
                    }
                }
            })
            .collect(),
        enabled: ctx.enabled,
    }
}

/// Analyse one channel of a rig (for `inspect`, an editor hovering one channel, …).
pub fn analyse_channel(rig: &Rig, channel: usize, ctx: &Context) -> ChannelAnalysis {
    analyse_with(rig, channel, &Limits::of(rig), ctx)
}

/// Analyse the members of group `group` (index into [`Rig::groups`]).
pub fn analyse_group(rig: &Rig, group: usize, ctx: &Context) -> Vec<ChannelAnalysis> {
    let limits = Limits::of(rig);
    rig.group_members
        .get(group)
        .map(|m| {
            m.iter()
                .map(|&i| analyse_with(rig, i, &limits, ctx))
                .collect()
        })
        .unwrap_or_default()
}

fn analyse_with(rig: &Rig, channel: usize, limits: &Limits, ctx: &Context) -> ChannelAnalysis {
    let ch = &rig.channels[channel];
    let module_rate = ctx
        .enabled
        .has(RateRule::ModuleRate)
        .then(|| module_rate(rig, ch))
        .flatten();
    let sensor_band = ctx
        .enabled
        .has(RateRule::SensorBand)
        .then(|| sensor_band(rig, ch))
        .flatten();
    // Rules that are off are not computed: with every rule that reads the rates off,
    // the chain is not even built.
    let rates = if !ch.ok {
        Err(NotAnalysed::Unresolved)
    } else if !ctx.enabled.any_rates() {
        Err(NotAnalysed::RulesOff)
    } else {
        match rig.adc_rate(ch) {
            Some(fs0) => analyse_rates(rig, channel, ch, fs0, limits, ctx.enabled),
            None => Err(NotAnalysed::Unresolved),
        }
    };
    let mut out = ChannelAnalysis {
        channel,
        module_rate,
        sensor_band,
        rates,
        fix: None,
    };
    if ctx.fixes {
        out.fix = fixes::search(rig, channel, &out, limits, ctx);
    }
    out
}

/// Why a channel's rates were not analysed.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum NotAnalysed {
    /// A reference names nothing, a clock has no rate, or a value is broken.
    Unresolved,
    /// No band and no sensor bandwidth.
    NoBand,
    /// Left out on purpose: the run analyses only some channels ([`analyse_only`]).
    OutOfScope,
    /// Every rule that reads a channel's rates is `off` in the settings.
    RulesOff,
}

impl NotAnalysed {
    /// A sentence for people.
    pub fn reason(&self) -> &'static str {
        match self {
            NotAnalysed::Unresolved => {
                "the channel did not resolve (a reference names nothing, a clock has no rate, or a value is broken), so its rates are not analysed"
            }
            NotAnalysed::NoBand => {
                "the channel has no `band` and its sensor no `bandwidth`, so nothing can be checked"
            }
            NotAnalysed::OutOfScope => "the channel was not analysed in this run",
            NotAnalysed::RulesOff => {
                "every rule that reads the channel's rates is off in the settings, so they are not analysed"
            }
        }
    }
}

/// The analysis of one channel.
#[derive(Clone, Debug)]
pub struct ChannelAnalysis {
    /// Index into [`Rig::channels`].
    pub channel: usize,
    /// `module-rate`: the ADC rate against the module's limits (None: no module, rate
    /// unknown, or the rule is off).
    pub module_rate: Option<ModuleRateVerdict>,
    /// `sensor-band`: the channel's own band against its sensor's bandwidth.
    pub sensor_band: Option<SensorBandVerdict>,
    /// The rate rules, when the channel resolved and has a band.
    pub rates: Result<RateAnalysis, NotAnalysed>,
    /// A fix candidate for the channel's failing rate verdicts (`nyquist`,
    /// `sampling-margin`, `alias-rejection`, `disturbance-alias`), confirmed by this
    /// analysis: with its edits the channel passes those rules and nothing that passed
    /// before fails.
    pub fix: Option<fixes::Candidate>,
}

/// One rule's verdict for a channel, as `inspect` lists it: a failing verdict is
/// exactly a finding of `check` (same rule, same stage).
#[derive(Clone, Debug, PartialEq)]
pub struct Verdict {
    /// The rule.
    pub rule: &'static str,
    /// Passes.
    pub pass: bool,
    /// The rate change a failing verdict points at (rules that report a stage).
    pub stage: Option<usize>,
    /// What the verdict is about when a channel has several (a disturbance's name).
    pub about: Option<String>,
}

impl ChannelAnalysis {
    /// Every computed verdict, in rule order.
    pub fn verdicts(&self) -> Vec<Verdict> {
        let mut v = Vec::new();
        let plain = |rule: RateRule, pass: bool| Verdict {
            rule: rule.name(),
            pass,
            stage: None,
            about: None,
        };
        if let Some(m) = &self.module_rate {
            v.push(plain(RateRule::ModuleRate, m.pass));
        }
        if let Ok(a) = &self.rates {
            if a.enabled.has(RateRule::Nyquist) {
                let f = a.nyquist_failure();
                v.push(Verdict {
                    stage: f.map(|s| s.stage),
                    ..plain(RateRule::Nyquist, f.is_none())
                });
            }
            if a.enabled.has(RateRule::SamplingMargin) {
                let f = a.margin_failure();
                v.push(Verdict {
                    stage: f.map(|s| s.stage),
                    ..plain(RateRule::SamplingMargin, f.is_none())
                });
            }
            if a.enabled.has(RateRule::AliasRejection) {
                let f = a.alias_failure();
                v.push(Verdict {
                    stage: f.as_ref().map(|w| w.stage),
                    ..plain(RateRule::AliasRejection, f.is_none())
                });
            }
            for d in &a.disturbances {
                let (pass, stage) = match d.outcome {
                    DisturbanceOutcome::FoldsIn { stage, pass } => (pass, (!pass).then_some(stage)),
                    _ => (true, None),
                };
                v.push(Verdict {
                    rule: RateRule::DisturbanceAlias.name(),
                    pass,
                    stage,
                    about: Some(d.name.clone()),
                });
            }
            if let Some(p) = &a.passband {
                v.push(plain(RateRule::PassbandDroop, p.pass));
            }
        }
        if let Some(s) = &self.sensor_band {
            v.push(plain(RateRule::SensorBand, s.pass));
        }
        if let Ok(a) = &self.rates
            && let Some(o) = &a.oversampling
        {
            v.push(plain(RateRule::Oversampling, o.pass));
        }
        v
    }
}

/// The module's limit a channel's ADC rate is held against.
#[derive(Clone, Debug)]
pub enum ModuleLimit {
    /// `max-rate`.
    MaxRate(Exact),
    /// `rates`: the nearest supported rate.
    Rates {
        /// The supported rate nearest to the channel's.
        nearest: Exact,
    },
}

/// `module-rate` for one channel.
#[derive(Clone, Debug)]
pub struct ModuleRateVerdict {
    /// The module's index.
    pub module: usize,
    /// The ADC rate, exact.
    pub rate: Exact,
    /// The limit that fails (or `max-rate` when it passes and the module has one).
    pub limit: Option<ModuleLimit>,
    /// Passes.
    pub pass: bool,
}

fn module_rate(rig: &Rig, ch: &RChannel) -> Option<ModuleRateVerdict> {
    if !ch.ok {
        return None;
    }
    let (mi, rate) = (ch.module?, rig.adc_rate(ch)?);
    let m = &rig.modules[mi];
    if let Some(max) = m.max_rate.as_ref().filter(|max| rate > max.value) {
        return Some(ModuleRateVerdict {
            module: mi,
            rate,
            limit: Some(ModuleLimit::MaxRate(max.value)),
            pass: false,
        });
    }
    if let Some(rates) = m.rates.as_ref().filter(|r| !r.value.is_empty())
        && rates.value.iter().all(|r| r.value != rate)
    {
        let fs = to_f64(&rate);
        let nearest = rates
            .value
            .iter()
            .min_by(|a, b| {
                (to_f64(&a.value) - fs)
                    .abs()
                    .total_cmp(&(to_f64(&b.value) - fs).abs())
            })
            .map(|r| r.value)
            .unwrap_or_default();
        return Some(ModuleRateVerdict {
            module: mi,
            rate,
            limit: Some(ModuleLimit::Rates { nearest }),
            pass: false,
        });
    }
    Some(ModuleRateVerdict {
        module: mi,
        rate,
        limit: m.max_rate.as_ref().map(|m| ModuleLimit::MaxRate(m.value)),
        pass: true,
    })
}

/// Whether a module accepts `rate` as an ADC rate (the `module-rate` condition).
pub fn module_allows(rig: &Rig, module: Option<usize>, rate: &Exact) -> bool {
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

/// `sensor-band` for one channel.
#[derive(Clone, Debug)]
pub struct SensorBandVerdict {
    /// The sensor's index.
    pub sensor: usize,
    /// The channel's band, exact.
    pub band: Exact,
    /// The sensor's bandwidth, exact.
    pub bandwidth: Exact,
    /// band ≤ bandwidth.
    pub pass: bool,
}

fn sensor_band(rig: &Rig, ch: &RChannel) -> Option<SensorBandVerdict> {
    let band = ch.band.as_ref().filter(|b| !b.from_sensor)?;
    let si = ch.sensor?;
    let bw = rig.sensors[si].bandwidth.as_ref()?;
    Some(SensorBandVerdict {
        sensor: si,
        band: band.hz,
        bandwidth: bw.value,
        pass: band.hz <= bw.value,
    })
}

/// The rate analysis of a resolved channel with a band.
#[derive(Clone, Debug)]
pub struct RateAnalysis {
    /// The rules computed.
    pub enabled: Enabled,
    /// The band B, exact.
    pub band: Exact,
    /// The band B in Hz.
    pub band_hz: f64,
    /// Required rejection, dB.
    pub required_db: f64,
    /// Each rate change, the ADC first.
    pub stages: Vec<StageInfo>,
    /// Each disturbance that reaches the channel (empty when `disturbance-alias` is off).
    pub disturbances: Vec<DisturbanceInfo>,
    /// Attenuation of the whole chain at the band edge (None when `passband-droop` is
    /// off).
    pub passband: Option<PassbandInfo>,
    /// Phase of the whole chain at the band edge, degrees.
    pub phase_at_band_deg: f64,
    /// The chain's delays: every digital filter's, the analog group delay at DC and at
    /// the band edge, and the latency (docs/model.md §2).
    pub delays: DelayInfo,
    /// The final rate after the last stage, exact.
    pub final_rate: Exact,
    /// The final rate, Hz.
    pub final_rate_hz: f64,
    /// Final rate ÷ band, exact when it fits.
    pub final_ratio_exact: Option<Exact>,
    /// Final rate ÷ band.
    pub final_ratio: f64,
    /// `oversampling` (None when off).
    pub oversampling: Option<OversamplingVerdict>,
    /// Final rate × sample bits ÷ 8.
    pub data_rate_bytes_per_s: f64,
}

/// One rate change.
#[derive(Clone, Debug)]
pub struct StageInfo {
    /// 0 for the ADC, k for the k-th decimation stage.
    pub stage: usize,
    /// The YAML that sets this rate: the channel's `clock` or the stage's `factor`.
    pub span: Span,
    /// Decimation factor (1 for the ADC).
    pub factor: u32,
    /// Input rate in Hz (None for the ADC).
    pub input_rate_hz: Option<f64>,
    /// Output rate, exact.
    pub rate: Exact,
    /// The stage's own filter (None for the ADC, or plain down-sampling); its
    /// `describe()` names it.
    pub filter: Option<crate::model::Response>,
    /// Output rate ÷ band, exact when it fits.
    pub ratio_exact: Option<Exact>,
    /// Output rate ÷ band.
    pub ratio: f64,
    /// fs > 2·B, exactly.
    pub nyquist_ok: bool,
    /// The practical margin, and whether the ratio reaches it (exactly); None when
    /// `sampling-margin` is off.
    pub margin: Option<(f64, bool)>,
    /// False when an earlier rate change already fails `nyquist` (nothing after it is
    /// checked).
    pub checked: bool,
    /// The alias check at fs − B (None when fs ≤ 2·B, not checked, or the rule is off).
    pub alias: Option<AliasCheck>,
    /// Where the sensor resonance goes at this rate change (None without one, or when
    /// `alias-rejection` is off).
    pub resonance: Option<ResonanceCheck>,
    /// At the ADC of a delta-sigma converter: the modulator rate and the check of its
    /// worst image against the analog chain alone (docs/model.md §4).
    pub modulator: Option<(f64, AliasCheck)>,
}

impl StageInfo {
    /// Output rate in Hz.
    pub fn rate_hz(&self) -> f64 {
        to_f64(&self.rate)
    }

    /// "ADC" or "decimation stage k".
    pub fn title(&self) -> String {
        if self.stage == 0 {
            "ADC".to_string()
        } else {
            format!("decimation stage {}", self.stage)
        }
    }
}

impl StageInfo {
    /// This rate change's alias checks as [`AliasFailure`]s with their verdicts: the
    /// image edge (fs − B), the modulator image and the resonance (a resonance that
    /// does not fold into the band has no verdict: `None`).
    fn fold_checks(&self) -> [Option<(AliasFailure, Option<bool>)>; 3] {
        let at = |a: &AliasCheck, modulator_hz: Option<f64>| AliasFailure {
            stage: self.stage,
            fold_from_hz: a.fold_from_hz,
            folds_to_hz: crate::signal::fold::fold(a.fold_from_hz, self.rate_hz()),
            attenuation_db: a.attenuation_db,
            required_db: a.required_db,
            resonance: None,
            modulator_hz,
        };
        [
            self.alias.as_ref().map(|a| (at(a, None), Some(a.pass))),
            self.modulator
                .as_ref()
                .map(|(fmod, a)| (at(a, Some(*fmod)), Some(a.pass))),
            self.resonance.as_ref().map(|r| {
                let c = AliasFailure {
                    stage: self.stage,
                    fold_from_hz: r.frequency_hz,
                    folds_to_hz: r.lands_at_hz,
                    attenuation_db: r.net_db,
                    required_db: r.required_db,
                    resonance: Some((r.frequency_hz, r.gain_db)),
                    modulator_hz: None,
                };
                (c, r.pass)
            }),
        ]
    }
}

/// The least attenuated of `checks` (ties: the first).
fn lowest(checks: impl Iterator<Item = AliasFailure>) -> Option<AliasFailure> {
    checks.fold(None, |worst: Option<AliasFailure>, c| match worst {
        Some(w) if c.attenuation_db < w.attenuation_db => Some(c),
        None => Some(c),
        kept => kept,
    })
}

/// The check at the lowest folding frequency of one rate change.
#[derive(Clone, Debug)]
pub struct AliasCheck {
    /// The least attenuated frequency of the image bands (fs − B for a chain that keeps
    /// rising), Hz.
    pub fold_from_hz: f64,
    /// Attenuation of the chain up to this rate change there, dB (may be infinite).
    pub attenuation_db: f64,
    /// Each filter's share, named by its place in the chain.
    pub contributions: Vec<(FilterName, f64)>,
    /// Required rejection, dB.
    pub required_db: f64,
    /// attenuation ≥ required.
    pub pass: bool,
}

/// Where the sensor resonance lands at one rate change.
#[derive(Clone, Debug)]
pub struct ResonanceCheck {
    /// The resonance frequency, Hz.
    pub frequency_hz: f64,
    /// Its gain, dB.
    pub gain_db: f64,
    /// Where it sits before this rate change (after the earlier ones), Hz.
    pub arrives_at_hz: f64,
    /// Where it lands after this rate change, Hz.
    pub lands_at_hz: f64,
    /// It folds into the band at this rate change (it lies above the band before it
    /// and lands inside it: a resonance inside the band is measured, not aliased).
    pub folds_into_band: bool,
    /// Chain attenuation at the resonance up to this rate change, dB.
    pub attenuation_db: f64,
    /// Attenuation less the gain, dB.
    pub net_db: f64,
    /// Required rejection, dB.
    pub required_db: f64,
    /// Net ≥ required, when it folds into the band here and the stage is checked.
    pub pass: Option<bool>,
}

/// A disturbance tone that reaches the channel.
#[derive(Clone, Debug)]
pub struct DisturbanceInfo {
    /// Index into [`Rig::disturbances`].
    pub index: usize,
    /// Its name.
    pub name: String,
    /// Its frequency, Hz.
    pub frequency_hz: f64,
    /// How far it stands above broadband content, dB.
    pub level_db: f64,
    /// Required rejection plus level, dB.
    pub required_db: f64,
    /// Where it goes at each rate change, until it lands in the band.
    pub steps: Vec<DisturbanceStep>,
    /// What happens to it overall.
    pub outcome: DisturbanceOutcome,
}

/// One rate change seen by a disturbance.
#[derive(Clone, Debug)]
pub struct DisturbanceStep {
    /// 0 for the ADC, k for the k-th decimation stage.
    pub stage: usize,
    /// The output rate, Hz.
    pub rate_hz: f64,
    /// Where the tone sits before this rate change, Hz.
    pub from_hz: f64,
    /// Where it lands after it, Hz.
    pub lands_at_hz: f64,
    /// It lies above half the rate, so it folds.
    pub folds: bool,
    /// It lands inside [0, B].
    pub in_band: bool,
    /// Chain attenuation at the tone up to this rate change, dB.
    pub attenuation_db: f64,
}

/// What happens to a disturbance.
#[derive(Clone, Debug, PartialEq)]
pub enum DisturbanceOutcome {
    /// The tone lies inside the band itself: it is measured, not aliased.
    InBand,
    /// It folds into the band at this stage, with this verdict (attenuation ≥ required).
    FoldsIn {
        /// The rate change.
        stage: usize,
        /// attenuation ≥ required.
        pass: bool,
    },
    /// It never lands in the band.
    StaysOut,
    /// The rate at this stage is not above twice the band (`nyquist`), so the tone is
    /// not followed further.
    NotChecked {
        /// The rate change that fails `nyquist`.
        stage: usize,
    },
}

/// The chain's attenuation at the band edge.
#[derive(Clone, Debug)]
pub struct PassbandInfo {
    /// dB.
    pub attenuation_db: f64,
    /// Each filter's share, named by its place in the chain.
    pub contributions: Vec<(FilterName, f64)>,
    /// The filter that attenuates the band edge most ("channel filter: 4th-order …"),
    /// where it is written, its response and rates: the cause a droop finding points
    /// at.
    pub largest: Option<crate::resolve::chain::Contribution>,
    /// The passband tolerance, dB.
    pub tolerance_db: f64,
    /// attenuation ≤ tolerance.
    pub pass: bool,
}

/// The delays of a channel's chain (docs/model.md §2, "Delays of the digital filters").
#[derive(Clone, Debug)]
pub struct DelayInfo {
    /// Every digital filter's delay in signal order: the converter's filters (stage 0),
    /// then each decimation stage's.
    pub digital: Vec<crate::resolve::chain::StageDelay>,
    /// The sum of the known digital delays, seconds.
    pub digital_s: f64,
    /// Whether every digital filter gives its delay (else `digital_s` counts the unknown
    /// ones as zero).
    pub complete: bool,
    /// Group delay of the analog part of the chain at DC, seconds.
    pub analog_dc_s: f64,
    /// Group delay of the analog part of the chain at the band edge, seconds.
    pub analog_band_edge_s: f64,
    /// The latency: the digital delays plus the analog group delay at DC, seconds.
    pub latency_s: f64,
}

impl DelayInfo {
    /// The delays of a chain with no filter (what a verdict-only probe carries).
    fn none() -> DelayInfo {
        DelayInfo {
            digital: Vec::new(),
            digital_s: 0.0,
            complete: true,
            analog_dc_s: 0.0,
            analog_band_edge_s: 0.0,
            latency_s: 0.0,
        }
    }

    /// The delays of `chain` for a band of `band_hz`.
    pub fn of(chain: &Chain, band_hz: f64) -> DelayInfo {
        let digital = chain.digital_delays();
        let digital_s = digital.iter().filter_map(|d| d.delay_s).sum();
        let analog_dc_s = chain.analog_group_delay_s(0.0);
        DelayInfo {
            complete: digital.iter().all(|d| d.delay_s.is_some()),
            digital,
            digital_s,
            analog_dc_s,
            analog_band_edge_s: chain.analog_group_delay_s(band_hz),
            latency_s: digital_s + analog_dc_s,
        }
    }
}

/// `oversampling`: the final ratio against the limit.
#[derive(Clone, Debug)]
pub struct OversamplingVerdict {
    /// The limit (× band).
    pub limit: f64,
    /// final rate ≤ limit · B, exactly.
    pub pass: bool,
}

/// The worst failing alias check of a channel (what `alias-rejection` reports).
#[derive(Clone, Debug)]
pub struct AliasFailure {
    /// The rate change.
    pub stage: usize,
    /// The frequency that folds in (fs − B, or the resonance).
    pub fold_from_hz: f64,
    /// Where it lands.
    pub folds_to_hz: f64,
    /// Attenuation there (net of the resonance gain for a resonance).
    pub attenuation_db: f64,
    /// Required rejection.
    pub required_db: f64,
    /// The resonance (frequency, gain) when that is the worst case.
    pub resonance: Option<(f64, f64)>,
    /// The modulator rate when a modulator image is the worst case.
    pub modulator_hz: Option<f64>,
}

impl RateAnalysis {
    /// The first rate change at or below twice the band (what `nyquist` reports).
    pub fn nyquist_failure(&self) -> Option<&StageInfo> {
        self.stages.iter().find(|s| !s.nyquist_ok)
    }

    /// The first checked rate change below the margin (what `sampling-margin` reports).
    pub fn margin_failure(&self) -> Option<&StageInfo> {
        self.stages
            .iter()
            .take_while(|s| s.nyquist_ok)
            .find(|s| s.margin.is_some_and(|(_, ok)| !ok))
    }

    /// The worst failing alias check over every checked rate change (ties: the first).
    pub fn alias_failure(&self) -> Option<AliasFailure> {
        lowest(self.stages.iter().flat_map(|s| {
            let [edge, modulator, resonance] = s.fold_checks();
            [edge, modulator, resonance]
                .into_iter()
                .flatten()
                .filter(|(_, pass)| *pass == Some(false))
                .map(|(c, _)| c)
        }))
    }

    /// The lowest alias check over every checked rate change, passing or not: the
    /// attenuation at fs − B, or the net attenuation of a resonance that folds into the
    /// band (ties: the first). What `diff` compares.
    pub fn worst_fold(&self) -> Option<AliasFailure> {
        lowest(self.stages.iter().flat_map(|s| {
            let [edge, modulator, resonance] = s.fold_checks();
            [edge, resonance, modulator]
                .into_iter()
                .flatten()
                .filter(|(_, pass)| pass.is_some())
                .map(|(c, _)| c)
        }))
    }

    /// The disturbances that fold into the band without enough attenuation, with the
    /// rate change and the attenuation there.
    pub fn disturbance_failures(
        &self,
    ) -> impl Iterator<Item = (&DisturbanceInfo, &DisturbanceStep)> {
        self.disturbances.iter().filter_map(|d| match d.outcome {
            DisturbanceOutcome::FoldsIn { stage, pass: false } => {
                d.steps.iter().find(|s| s.stage == stage).map(|s| (d, s))
            }
            _ => None,
        })
    }

    /// The droop at the band edge when it exceeds the tolerance (whatever `nyquist`
    /// says: the filter cuts the band at any rate).
    pub fn droop_failure(&self) -> Option<&PassbandInfo> {
        self.passband.as_ref().filter(|p| !p.pass)
    }

    /// The final ratio when it exceeds the oversampling limit.
    pub fn oversampling_failure(&self) -> Option<&OversamplingVerdict> {
        self.oversampling.as_ref().filter(|o| !o.pass)
    }

    /// Whether every verdict of the rules a rate or filter fix aims at passes
    /// (`nyquist`, `sampling-margin`, `alias-rejection`, `disturbance-alias`).
    pub fn rates_pass(&self) -> bool {
        self.nyquist_failure().is_none()
            && self.margin_failure().is_none()
            && self.alias_failure().is_none()
            && self.disturbance_failures().next().is_none()
    }
}

/// Analyse the rates of channel `index` of `rig`, given as `ch`, sampled at `fs0` (its
/// clock's rate, or a rate the fix search tries). `ch` may be a changed copy of
/// `rig.channels[index]` (another decimation factor, another filter): the verdicts are
/// computed the same way.
pub fn analyse_rates(
    rig: &Rig,
    index: usize,
    ch: &RChannel,
    fs0: Exact,
    limits: &Limits,
    enabled: Enabled,
) -> Result<RateAnalysis, NotAnalysed> {
    rates_with(rig, index, ch, fs0, limits, enabled, true)
}

/// [`analyse_rates`] for the fix search, which asks only whether each verdict passes:
/// the verdicts are the same, but what only explains them is left out (the
/// contributions of each filter and their names, the filters' descriptions, the largest
/// contributor to the droop, the phase at the band edge, which is NaN, and the delays,
/// those of an empty chain), so a probe builds no text.
pub(crate) fn analyse_verdicts(
    rig: &Rig,
    index: usize,
    ch: &RChannel,
    fs0: Exact,
    limits: &Limits,
    enabled: Enabled,
) -> Result<RateAnalysis, NotAnalysed> {
    rates_with(rig, index, ch, fs0, limits, enabled, false)
}

fn rates_with(
    rig: &Rig,
    index: usize,
    ch: &RChannel,
    fs0: Exact,
    limits: &Limits,
    enabled: Enabled,
    detail: bool,
) -> Result<RateAnalysis, NotAnalysed> {
    let Some(band_def) = ch.band.as_ref() else {
        return Err(NotAnalysed::NoBand);
    };
    let Some(chain) = Chain::with_adc_rate(rig, ch, fs0) else {
        return Err(NotAnalysed::Unresolved);
    };
    let band = band_def.hz;
    let band_hz = to_f64(&band);
    if band <= Exact::from_integer(0) {
        return Err(NotAnalysed::NoBand);
    }
    let required = ch.rejection.0;
    let two = Exact::from_integer(2);
    let resonance = ch
        .sensor
        .and_then(|s| rig.sensors[s].resonance.as_ref())
        .map(|r| (r.frequency.value, r.gain.value));
    // Each filter's share, named when shown (no text is built here).
    let named = |list: &[crate::resolve::chain::Contribution]| -> Vec<(FilterName, f64)> {
        list.iter().map(|c| (c.name(), c.db)).collect()
    };
    let contributions = |f: f64, k: usize| -> Vec<(FilterName, f64)> {
        if !detail {
            return Vec::new();
        }
        named(&chain.contributions(f, k))
    };

    let mut stages = Vec::with_capacity(chain.changes.len());
    let mut nyquist_failed = false;
    for rc in &chain.changes {
        let fs = rc.fs_hz();
        let k = rc.stage;
        let checked = !nyquist_failed;
        let nyquist_ok = cmp_scaled(&rc.fs, Some(&two), 2.0, &band) == Ordering::Greater;
        let margin = enabled.has(RateRule::SamplingMargin).then(|| {
            let ok = cmp_scaled(&rc.fs, limits.margin_exact.as_ref(), limits.margin, &band)
                != Ordering::Less;
            (limits.margin, ok)
        });
        let alias_on = enabled.has(RateRule::AliasRejection);
        let alias = (alias_on && checked && nyquist_ok).then(|| {
            // The worst point of every image band, not only fs − B (docs/model.md §3).
            let (f, a) = chain.worst_image(k, band_hz);
            AliasCheck {
                fold_from_hz: f,
                attenuation_db: a,
                contributions: contributions(f, k),
                required_db: required,
                pass: a >= required,
            }
        });
        let res = resonance.filter(|_| alias_on).map(|(fr, gain)| {
            let before = if k == 0 {
                fr
            } else {
                chain.folded_through(fr, k - 1)
            };
            let after = fold(before, fs);
            let folds_into_band = fr > band_hz && before > band_hz && after <= band_hz;
            let a = chain.attenuation_db(fr, k);
            let net = a - gain;
            ResonanceCheck {
                frequency_hz: fr,
                gain_db: gain,
                arrives_at_hz: before,
                lands_at_hz: after,
                folds_into_band,
                attenuation_db: a,
                net_db: net,
                required_db: required,
                pass: (checked && nyquist_ok && folds_into_band).then_some(net >= required),
            }
        });
        stages.push(StageInfo {
            stage: k,
            span: rc.span,
            factor: rc.factor,
            input_rate_hz: rc.fs_in.as_ref().map(to_f64),
            rate: rc.fs,
            filter: rc.filter.filter(|_| detail).map(|f| f.response.clone()),
            ratio_exact: rc.fs.checked_div(&band),
            ratio: fs / band_hz,
            nyquist_ok,
            margin,
            checked,
            alias,
            resonance: res,
            modulator: (alias_on && checked && nyquist_ok && k == 0)
                .then(|| {
                    let fmod = chain.modulator_rate_hz()?;
                    let (f, a) = chain.worst_modulator_image(band_hz)?;
                    Some((
                        fmod,
                        AliasCheck {
                            fold_from_hz: f,
                            attenuation_db: a,
                            contributions: contributions(f, 0),
                            required_db: required,
                            pass: a >= required,
                        },
                    ))
                })
                .flatten(),
        });
        if !nyquist_ok {
            nyquist_failed = true;
        }
    }

    let mut disturbances = Vec::new();
    if enabled.has(RateRule::DisturbanceAlias) {
        for (di, d) in rig.disturbances.iter().enumerate() {
            let Some(freq) = &d.frequency else { continue };
            if !rig.reaches(di, index) {
                continue;
            }
            let fd = to_f64(&freq.value);
            let level = d.level.as_ref().map_or(0.0, |l| l.value);
            let req = required + level;
            let mut steps = Vec::new();
            let mut outcome = if fd <= band_hz {
                DisturbanceOutcome::InBand
            } else {
                DisturbanceOutcome::StaysOut
            };
            let mut at = fd;
            if outcome != DisturbanceOutcome::InBand {
                for (rc, st) in chain.changes.iter().zip(&stages) {
                    let fs = rc.fs_hz();
                    if !st.nyquist_ok {
                        outcome = DisturbanceOutcome::NotChecked { stage: rc.stage };
                        break;
                    }
                    let folded = fold(at, fs);
                    let folds = at > fs / 2.0;
                    let in_band = folds && folded <= band_hz;
                    let a = chain.attenuation_db(fd, rc.stage);
                    steps.push(DisturbanceStep {
                        stage: rc.stage,
                        rate_hz: fs,
                        from_hz: at,
                        lands_at_hz: folded,
                        folds,
                        in_band,
                        attenuation_db: a,
                    });
                    if in_band {
                        outcome = DisturbanceOutcome::FoldsIn {
                            stage: rc.stage,
                            pass: a >= req,
                        };
                        break;
                    }
                    at = folded;
                }
            }
            disturbances.push(DisturbanceInfo {
                index: di,
                name: d.name.value.clone(),
                frequency_hz: fd,
                level_db: level,
                required_db: req,
                steps,
                outcome,
            });
        }
    }

    let last = chain.changes.len() - 1;
    let passband = enabled.has(RateRule::PassbandDroop).then(|| {
        let droop = chain.attenuation_db(band_hz, last);
        let tolerance = limits.passband_tolerance;
        let all = if detail {
            chain.contributions(band_hz, last)
        } else {
            Vec::new()
        };
        PassbandInfo {
            attenuation_db: droop,
            contributions: named(&all),
            largest: all.into_iter().max_by(|x, y| x.db.total_cmp(&y.db)),
            tolerance_db: tolerance,
            pass: droop <= tolerance + 1e-9,
        }
    });
    let final_rate = chain.final_rate();
    let final_rate_hz = to_f64(&final_rate);
    let oversampling = enabled
        .has(RateRule::Oversampling)
        .then(|| OversamplingVerdict {
            limit: limits.oversampling_limit,
            pass: cmp_scaled(
                &final_rate,
                limits.oversampling_exact.as_ref(),
                limits.oversampling_limit,
                &band,
            ) != Ordering::Greater,
        });
    Ok(RateAnalysis {
        enabled,
        band,
        band_hz,
        required_db: required,
        stages,
        disturbances,
        passband,
        phase_at_band_deg: if detail {
            chain.phase_deg(band_hz)
        } else {
            f64::NAN
        },
        delays: if detail {
            DelayInfo::of(&chain, band_hz)
        } else {
            DelayInfo::none()
        },
        final_rate,
        final_rate_hz,
        final_ratio_exact: final_rate.checked_div(&band),
        final_ratio: final_rate_hz / band_hz,
        oversampling,
        data_rate_bytes_per_s: final_rate_hz * f64::from(ch.sample_bits) / 8.0,
    })
}
