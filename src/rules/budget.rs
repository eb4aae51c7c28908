//! `throughput` and `storage`: data-rate and storage budgets.
//!
//! A channel's data rate is its final rate × sample-bits ÷ 8 bytes per second.

use super::{Rule, Stage};
use crate::analysis::RigAnalysis;
use crate::declared;
use crate::finding::Finding;
use crate::fingerprint::segment;
use crate::model::quantity::to_f64;
use crate::resolve::Rig;
use crate::resolve::chain::Chain;
use crate::words::format_bytes;

/// `throughput`.
pub static THROUGHPUT: Rule = Rule {
    name: declared::THROUGHPUT.name,
    severity: declared::THROUGHPUT.severity,
    summary: "the summed data rate exceeds a module's or the logger's throughput",
    explanation: "\
Each channel produces final rate × sample-bits ÷ 8 bytes per second (sample-bits: the
channel's, else its module's, else the module's adc-bits rounded up to a whole byte,
else 32). The channels of a module must fit its `throughput`, and all channels of the
rig must fit the logger's `throughput`.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    sample-bits: 32
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
logger:
  throughput: 100 kB/s
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    sample-bits: 32
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
logger:
  throughput: 1 MB/s
",
    stage: Stage::Physics,
    check: Some(check_throughput),
};

/// The data rate in bytes per second of each channel that can be worked out.
pub fn channel_rates(rig: &Rig) -> Vec<(usize, f64)> {
    rig.channels
        .iter()
        .enumerate()
        .filter(|(_, c)| c.ok)
        .filter_map(|(i, c)| {
            let chain = Chain::new(rig, c)?;
            Some((
                i,
                to_f64(&chain.final_rate()) * f64::from(c.sample_bits) / 8.0,
            ))
        })
        .collect()
}

fn check_throughput(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    let rates = channel_rates(rig);
    for (mi, m) in rig.modules.iter().enumerate() {
        let Some(limit) = &m.throughput else { continue };
        let on: Vec<&(usize, f64)> = rates
            .iter()
            .filter(|(c, _)| rig.channels[*c].module == Some(mi))
            .collect();
        let total: f64 = on.iter().map(|(_, r)| r).sum();
        if total <= limit.value {
            continue;
        }
        // Label at the module's limit when it is in this rig's file, else the first channel.
        let first = &rig.channels[on[0].0];
        let span = if limit.span.file == rig.file {
            limit.span
        } else {
            first
                .def
                .module
                .as_ref()
                .map_or(first.def.name.span, |m| m.span)
        };
        let mut f = THROUGHPUT
            .finding(span, format!("limit {}", format_bytes(limit.value, true)), format!(
                "the {} channels of module `{}` produce {}, above its {} throughput",
                on.len(),
                m.name.value,
                format_bytes(total, true),
                format_bytes(limit.value, true)
            ))
            .with_subject(format!("module/{}", segment(&m.name.value)))
            .with_help("lower the final rates (decimate), store fewer bits per sample, or spread the channels over more modules")
            .with_f64("data_rate_bytes_per_s", total)
            .with_f64("limit_bytes_per_s", limit.value);
        if span != limit.span {
            f = f.with_label(
                limit.span,
                format!("limit {}", format_bytes(limit.value, true)),
            );
        }
        out.push(f);
    }
    if let Some(limit) = rig.logger.as_ref().and_then(|l| l.throughput.as_ref()) {
        let total: f64 = rates.iter().map(|(_, r)| r).sum();
        if total > limit.value {
            out.push(
                THROUGHPUT
                    .finding(limit.span, format!("limit {}", format_bytes(limit.value, true)), format!(
                        "the {} channels of the rig produce {}, above the logger's {} throughput",
                        rates.len(),
                        format_bytes(total, true),
                        format_bytes(limit.value, true)
                    ))
                    .with_subject("logger")
                    .with_help("lower the final rates (decimate), store fewer bits per sample, or record on a faster logger")
                    .with_f64("data_rate_bytes_per_s", total)
                    .with_f64("limit_bytes_per_s", limit.value),
            );
        }
    }
}

/// `storage`.
pub static STORAGE: Rule = Rule {
    name: declared::STORAGE.name,
    severity: declared::STORAGE.severity,
    summary: "the recording does not fit the logger's storage",
    explanation: "\
The logger records every channel for `duration`: the rig's summed data rate × duration
must fit the logger's `storage`.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    sample-bits: 32
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
logger:
  storage: 1 GB
  duration: 24 h
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 51.2 kHz
channels:
  - name: strain-1
    clock: base
    band: 10 kHz
    sample-bits: 32
    filters:
      - { response: butterworth, order: 8, cutoff: 13 kHz }
logger:
  storage: 100 GB
  duration: 24 h
",
    stage: Stage::Physics,
    check: Some(check_storage),
};

fn check_storage(a: &RigAnalysis, out: &mut Vec<Finding>) {
    let rig = a.rig;
    let Some(logger) = &rig.logger else { return };
    let (Some(storage), Some(duration)) = (&logger.storage, &logger.duration) else {
        return;
    };
    let rate: f64 = channel_rates(rig).iter().map(|(_, r)| r).sum();
    let bytes = rate * duration.value;
    if bytes <= storage.value {
        return;
    }
    out.push(
        STORAGE
            .finding(
                storage.span,
                format!("{} of storage", format_bytes(storage.value, false)),
                format!(
                    "recording {} for {} needs {}, more than the logger's {}",
                    format_bytes(rate, true),
                    crate::words::format_duration(duration.value),
                    format_bytes(crate::words::round_sig(bytes, 4), false),
                    format_bytes(storage.value, false)
                ),
            )
            .with_label(duration.span, "recording duration")
            .with_subject("logger")
            .with_help(format!(
                "record for at most {}, add storage, or lower the data rate",
                crate::words::format_duration(storage.value / rate)
            ))
            .with_f64("bytes", bytes)
            .with_f64("limit_bytes", storage.value),
    );
}
