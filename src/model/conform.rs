//! A quick decision whether a document surely conforms to `schemas/rig.schema.json`,
//! read straight off the node tree, so that the JSON Schema validator (and the copy of
//! the tree into a `serde_json::Value` it needs) runs only for documents that may not.
//!
//! The answer is one-sided: `true` means the document conforms (every keyword of the
//! schema is checked here, in the same terms); `false` means "not shown": the document
//! breaks the schema *or* holds something this check does not decide (a key that is not a
//! string, a key written twice, a number that is not an exact integer where the schema
//! wants one, a number on a bound). Then the validator decides and explains. The rig
//! format these keywords describe is docs/format.md; tests/schema_fast_path.rs compares
//! this answer with the validator's on generated documents, near misses and every file
//! in the tests and examples.

use crate::source::yaml::{Node, NodeKind};

/// `true` only if `root` conforms to the rig schema (see the module comment).
pub fn surely_conforms(root: &Node) -> bool {
    let Some(
        [
            format,
            rig,
            catalog,
            description,
            include,
            defaults,
            clocks,
            sensors,
            modules,
            channels,
            groups,
            disturbances,
            logger,
        ],
    ) = fields(
        root,
        [
            "format",
            "rig",
            "catalog",
            "description",
            "include",
            "defaults",
            "clocks",
            "sensors",
            "modules",
            "channels",
            "groups",
            "disturbances",
            "logger",
        ],
    )
    else {
        return false;
    };
    // `format` is `const: 1`; only the integer 1 is taken here.
    let format_ok = matches!(
        format,
        Some(Node {
            kind: NodeKind::Int(1),
            ..
        })
    );
    // A catalog has no `rig`, `defaults`, `groups`, `disturbances` or `logger`; any
    // other file needs `rig`.
    let role_ok = match catalog {
        Some(c) => {
            name(c)
                && rig.is_none()
                && defaults.is_none()
                && groups.is_none()
                && disturbances.is_none()
                && logger.is_none()
        }
        None => rig.is_some_and(name),
    };
    format_ok
        && role_ok
        && opt(description, string)
        && opt(include, |n| {
            unique_strings(n) && all(n, |i| i.as_str().is_some_and(|s| !s.is_empty()))
        })
        && opt(defaults, defaults_ok)
        && opt(clocks, |n| all(n, clock))
        && opt(sensors, |n| all(n, sensor))
        && opt(modules, |n| all(n, module))
        && opt(channels, |n| all(n, channel))
        && opt(groups, |n| all(n, group))
        && opt(disturbances, |n| all(n, disturbance))
        && opt(logger, logger_ok)
}

/// The values of `keys` in a mapping, or `None` if `node` is not a mapping, holds a key
/// that is not a string, a key outside `keys` that does not start with `x-` (the format's
/// extension keys, which take any value), or one of `keys` twice.
fn fields<'a, const N: usize>(node: &'a Node, keys: [&str; N]) -> Option<[Option<&'a Node>; N]> {
    let NodeKind::Map(entries) = &node.kind else {
        return None;
    };
    let mut out = [None; N];
    for (k, v) in entries {
        let NodeKind::Str(k) = &k.kind else {
            return None;
        };
        if k.starts_with("x-") {
            continue;
        }
        let i = keys.iter().position(|known| known == k)?;
        if out[i].replace(v).is_some() {
            return None;
        }
    }
    Some(out)
}

fn opt(value: Option<&Node>, check: impl Fn(&Node) -> bool) -> bool {
    value.is_none_or(check)
}

/// A sequence whose every item passes `check`.
fn all(node: &Node, check: impl Fn(&Node) -> bool) -> bool {
    node.as_seq().is_some_and(|items| items.iter().all(check))
}

fn string(node: &Node) -> bool {
    matches!(node.kind, NodeKind::Str(_))
}

/// `$defs/name`: a string matching `^[a-z0-9][a-z0-9._-]*$`.
fn name(node: &Node) -> bool {
    let Some(s) = node.as_str() else {
        return false;
    };
    let mut bytes = s.bytes();
    bytes
        .next()
        .is_some_and(|b| b.is_ascii_lowercase() || b.is_ascii_digit())
        && bytes.all(|b| b.is_ascii_lowercase() || b.is_ascii_digit() || b"._-".contains(&b))
}

/// A sequence of strings, none written twice (`uniqueItems` over strings).
fn unique_strings(node: &Node) -> bool {
    let Some(items) = node.as_seq() else {
        return false;
    };
    let mut seen: Vec<&str> = Vec::with_capacity(items.len());
    for item in items {
        let Some(s) = item.as_str() else {
            return false;
        };
        if seen.contains(&s) {
            return false;
        }
        seen.push(s);
    }
    true
}

/// `$defs/name-list` with `minItems`.
fn name_list(node: &Node, min_items: usize) -> bool {
    unique_strings(node) && all(node, name) && node.as_seq().is_some_and(|s| s.len() >= min_items)
}

/// `type: [string, number]` (frequency, level, phase, data size and rate, duration,
/// delay: the quantity itself is read by the model builder, not the schema).
fn quantity(node: &Node) -> bool {
    match node.kind {
        NodeKind::Str(_) => true,
        NodeKind::Int(i) => i64::try_from(i).is_ok(),
        NodeKind::Float(f) => f.is_finite(),
        _ => false,
    }
}

/// `type: integer` with `minimum` and `maximum`. Only integers written as integers are
/// taken (`4.0` is left to the validator).
fn integer(node: &Node, min: i128, max: i128) -> bool {
    matches!(node.kind, NodeKind::Int(i) if (min..=max).contains(&i))
}

/// `type: number` with a lower bound (`exclusive` or not) and an optional inclusive
/// upper bound. A float equal to a bound is left to the validator.
fn number(node: &Node, min: f64, exclusive: bool, max: Option<f64>) -> bool {
    match node.kind {
        NodeKind::Int(i) => {
            // Exactly representable as a double (|i| ≤ 2^53), as the validator compares.
            if i.unsigned_abs() > 1 << 53 {
                return false;
            }
            let x = i as f64;
            (if exclusive { x > min } else { x >= min }) && max.is_none_or(|m| x <= m)
        }
        NodeKind::Float(x) => x.is_finite() && x > min && max.is_none_or(|m| x < m),
        _ => false,
    }
}

const U32_MAX: i128 = 4_294_967_295;

fn defaults_ok(node: &Node) -> bool {
    let Some([margin, alias, passband, oversampling, phase]) = fields(
        node,
        [
            "margin",
            "alias-rejection",
            "passband-tolerance",
            "oversampling-limit",
            "phase-tolerance",
        ],
    ) else {
        return false;
    };
    opt(margin, |n| number(n, 1.0, true, None))
        && opt(alias, quantity)
        && opt(passband, quantity)
        && opt(oversampling, |n| number(n, 1.0, true, None))
        && opt(phase, quantity)
}

fn clock(node: &Node) -> bool {
    let Some([nm, frequency, source, divide, multiply]) =
        fields(node, ["name", "frequency", "source", "divide", "multiply"])
    else {
        return false;
    };
    // A root clock has a `frequency` and nothing of a derived clock; any other has a
    // `source`.
    let shape_ok = match frequency {
        Some(f) => quantity(f) && source.is_none() && divide.is_none() && multiply.is_none(),
        None => source.is_some_and(name),
    };
    nm.is_some_and(name)
        && shape_ok
        && opt(divide, |n| integer(n, 1, U32_MAX))
        && opt(multiply, |n| integer(n, 1, U32_MAX))
}

fn sensor(node: &Node) -> bool {
    let Some([nm, kind, bandwidth, resonance, response]) =
        fields(node, ["name", "kind", "bandwidth", "resonance", "response"])
    else {
        return false;
    };
    nm.is_some_and(name)
        && opt(kind, string)
        && opt(bandwidth, quantity)
        && opt(
            resonance,
            |n| matches!(fields(n, ["frequency", "gain"]), Some([Some(f), Some(g)]) if quantity(f) && quantity(g)),
        )
        && opt(response, |n| all(n, |f| filter(f, ANALOG)))
}

fn module(node: &Node) -> bool {
    let Some(
        [
            nm,
            adc_bits,
            max_rate,
            rates,
            sample_bits,
            filters,
            alias,
            throughput,
            modulator,
        ],
    ) = fields(
        node,
        [
            "name",
            "adc-bits",
            "max-rate",
            "rates",
            "sample-bits",
            "filters",
            "alias-rejection",
            "throughput",
            "modulator",
        ],
    )
    else {
        return false;
    };
    nm.is_some_and(name)
        && opt(adc_bits, |n| integer(n, 1, 32))
        && opt(max_rate, quantity)
        && opt(rates, |n| {
            all(n, quantity) && n.as_seq().is_some_and(|s| !s.is_empty())
        })
        && opt(sample_bits, |n| integer(n, 1, 64))
        && opt(filters, chain)
        && opt(alias, quantity)
        && opt(throughput, quantity)
        && opt(modulator, modulator_ok)
}

fn modulator_ok(node: &Node) -> bool {
    let Some([rate, ratio, filt]) = fields(node, ["rate", "oversampling-ratio", "filter"]) else {
        return false;
    };
    // Exactly one of `rate` and `oversampling-ratio`.
    let how_fast = match (rate, ratio) {
        (Some(r), None) => quantity(r),
        (None, Some(o)) => integer(o, 1, U32_MAX),
        _ => false,
    };
    how_fast && opt(filt, |f| filter(f, &["digital"]))
}

fn channel(node: &Node) -> bool {
    let Some(
        [
            nm,
            sensor,
            module,
            clock,
            band,
            filters,
            decimate,
            alias,
            sample_bits,
        ],
    ) = fields(
        node,
        [
            "name",
            "sensor",
            "module",
            "clock",
            "band",
            "filters",
            "decimate",
            "alias-rejection",
            "sample-bits",
        ],
    )
    else {
        return false;
    };
    nm.is_some_and(name)
        && clock.is_some_and(name)
        && opt(sensor, name)
        && opt(module, name)
        && opt(band, quantity)
        && opt(filters, chain)
        && opt(decimate, |n| all(n, stage))
        && opt(alias, quantity)
        && opt(sample_bits, |n| integer(n, 1, 64))
}

fn stage(node: &Node) -> bool {
    let Some([factor, filt]) = fields(node, ["factor", "filter"]) else {
        return false;
    };
    factor.is_some_and(|n| integer(n, 2, U32_MAX)) && opt(filt, |f| filter(f, ANY))
}

fn group(node: &Node) -> bool {
    let Some([nm, channels, phase]) = fields(node, ["name", "channels", "phase-tolerance"]) else {
        return false;
    };
    nm.is_some_and(name) && channels.is_some_and(|n| name_list(n, 2)) && opt(phase, quantity)
}

fn disturbance(node: &Node) -> bool {
    let Some([nm, frequency, level, channels]) =
        fields(node, ["name", "frequency", "level", "channels"])
    else {
        return false;
    };
    nm.is_some_and(name)
        && frequency.is_some_and(quantity)
        && opt(level, quantity)
        && opt(channels, |n| name_list(n, 1))
}

fn logger_ok(node: &Node) -> bool {
    let Some([throughput, storage, duration]) = fields(node, ["throughput", "storage", "duration"])
    else {
        return false;
    };
    opt(throughput, quantity) && opt(storage, quantity) && opt(duration, quantity)
}

/// `$defs/chain`: filters at the ADC (`$defs/chain-filter`).
fn chain(node: &Node) -> bool {
    all(node, |f| filter(f, AT_ADC))
}

/// The responses `$defs/filter` (a decimation stage's) allows; a filter at the ADC
/// (`$defs/chain-filter`) takes the first five, a sensor's roll-off
/// (`$defs/sensor-response-filter`) the first four.
const ANY: &[&str] = &super::RESPONSES;
const AT_ADC: &[&str] = ANY.split_at(5).0;
const ANALOG: &[&str] = ANY.split_at(4).0;

/// `$defs/filter-body` with its `response` limited to `responses`: each response takes
/// exactly its own keys (plus `x-` keys).
fn filter(node: &Node, responses: &[&str]) -> bool {
    let Some(
        [
            response,
            order,
            cutoff,
            ripple,
            points,
            passband,
            stopband,
            attenuation,
            delay,
            delay_samples,
        ],
    ) = fields(
        node,
        [
            "response",
            "order",
            "cutoff",
            "ripple",
            "points",
            "passband-edge",
            "stopband-edge",
            "attenuation",
            "delay",
            "delay-samples",
        ],
    )
    else {
        return false;
    };
    let Some(response) = response.and_then(Node::as_str) else {
        return false;
    };
    if !responses.contains(&response) {
        return false;
    }
    let order_ok = |max| order.is_some_and(|n| integer(n, 1, max));
    let edge = |n: Option<&Node>| n.is_some_and(|n| number(n, 0.0, true, Some(1.0)));
    // The keys a response does not take.
    let none = |others: &[Option<&Node>]| others.iter().all(Option::is_none);
    match response {
        "butterworth" | "bessel" => {
            order_ok(12)
                && cutoff.is_some_and(quantity)
                && none(&[
                    ripple,
                    points,
                    passband,
                    stopband,
                    attenuation,
                    delay,
                    delay_samples,
                ])
        }
        "chebyshev" => {
            order_ok(12)
                && cutoff.is_some_and(quantity)
                && ripple.is_some_and(quantity)
                && none(&[
                    points,
                    passband,
                    stopband,
                    attenuation,
                    delay,
                    delay_samples,
                ])
        }
        "table" => {
            points.is_some_and(table_points)
                && none(&[
                    order,
                    cutoff,
                    ripple,
                    passband,
                    stopband,
                    attenuation,
                    delay,
                    delay_samples,
                ])
        }
        "digital" => {
            edge(passband)
                && edge(stopband)
                && attenuation.is_some_and(quantity)
                && !(delay.is_some() && delay_samples.is_some())
                && opt(delay, quantity)
                && opt(delay_samples, |n| number(n, 0.0, false, None))
                && none(&[order, cutoff, ripple, points])
        }
        "sinc" => {
            order_ok(6)
                && none(&[
                    cutoff,
                    ripple,
                    points,
                    passband,
                    stopband,
                    attenuation,
                    delay,
                    delay_samples,
                ])
        }
        _ => false,
    }
}

/// A `table` filter's `points`: two or more `[frequency, attenuation]` pairs.
fn table_points(node: &Node) -> bool {
    node.as_seq().is_some_and(|s| s.len() >= 2)
        && all(
            node,
            |p| matches!(p.as_seq(), Some([f, a]) if quantity(f) && quantity(a)),
        )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::source::LineIndex;

    fn conforms(text: &str) -> bool {
        let root = crate::source::yaml::parse(0, text, &LineIndex::new(text)).unwrap();
        surely_conforms(&root)
    }

    #[test]
    fn a_small_rig_conforms_and_each_near_miss_does_not() {
        let good = "format: 1\nrig: r\nclocks:\n  - { name: osc, frequency: 1 MHz }\nchannels:\n  - { name: a, clock: osc, band: 2 kHz, filters: [{ response: butterworth, order: 4, cutoff: 5 kHz }] }\n";
        assert!(conforms(good));
        for (from, to) in [
            ("format: 1", "format: 2"),
            ("rig: r", "rig: R"),
            ("band:", "bnad:"),
            ("butterworth", "Butterworth"),
            ("order: 4", "order: 13"),
            ("order: 4", "order: 4.0"),
            ("cutoff: 5 kHz", "ripple: 1 dB"),
            ("clock: osc, ", ""),
            ("frequency: 1 MHz", "frequency: [1 MHz]"),
        ] {
            let bad = good.replacen(from, to, 1);
            assert_ne!(bad, good);
            assert!(!conforms(&bad), "{from} -> {to}");
        }
    }
}
