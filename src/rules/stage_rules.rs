//! Rules whose findings come from an earlier stage of the pipeline. Their entries here
//! describe them; the stage named in each emits them.

use super::{Rule, Stage};
use crate::declared;

/// `yaml-syntax`.
pub static YAML_SYNTAX: Rule = Rule {
    name: declared::YAML_SYNTAX.name,
    severity: declared::YAML_SYNTAX.severity,
    summary: "the file is not valid YAML (including duplicate keys)",
    explanation: "\
The file must be one valid YAML document in UTF-8. Duplicate keys in a mapping, tabs used
for indentation, unclosed brackets and quotes, bytes that are not UTF-8, and documents
too large or too deeply nested to read safely (alias bombs) are reported at the place the
reader stopped. Nothing else is checked in a file that does not parse.",
    failing: "\
format: 1
rig: demo
rig: demo-2
",
    passing: "\
format: 1
rig: demo
",
    stage: Stage::Syntax,
    check: None,
};

/// `schema`.
pub static SCHEMA: Rule = Rule {
    name: declared::SCHEMA.name,
    severity: declared::SCHEMA.severity,
    summary: "the document breaks the rig schema (wrong type, unknown or missing key)",
    explanation: "\
Every document is checked against the rig format's JSON Schema (`foldcheck schema` prints
it). Unknown keys are reported at the key, with the closest known key; missing keys at the
mapping that lacks them; wrong types and out-of-range numbers at the value.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: base
    bnad: 200 Hz
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    stage: Stage::Shape,
    check: None,
};

/// `quantity`.
pub static QUANTITY: Rule = Rule {
    name: declared::QUANTITY.name,
    severity: declared::QUANTITY.severity,
    summary: "a quantity does not parse, has the wrong kind of unit, or is out of range",
    explanation: "\
A quantity is a number with an optional space and a unit. Units are case-sensitive SI
spellings (`Hz kHz MHz GHz`, `dB`, `deg`, `B kB MB GB TB KiB MiB GiB TiB`, a data size
with `/s`, `s min h d`); a bare number is Hz, dB or deg where those are expected, and
sizes, rates and durations need a unit. A near miss such as `KHz` is reported with the
right spelling. Frequencies, sizes, rates and durations must be above zero.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 KHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    stage: Stage::Shape,
    check: None,
};

/// `duplicate-name`.
pub static DUPLICATE_NAME: Rule = Rule {
    name: declared::DUPLICATE_NAME.name,
    severity: declared::DUPLICATE_NAME.severity,
    summary: "a name is defined twice (both places labelled)",
    explanation: "\
Names are unique within their section (clocks, sensors, modules, channels, groups,
disturbances) across a rig and the catalogs it includes. The second definition is
reported, with the first labelled; the second is left out of every other check.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
  - name: temp-2
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    stage: Stage::Resolution,
    check: None,
};

/// `unknown-reference`.
pub static UNKNOWN_REFERENCE: Rule = Rule {
    name: declared::UNKNOWN_REFERENCE.name,
    severity: declared::UNKNOWN_REFERENCE.severity,
    summary: "a reference names nothing; help suggests the closest existing name",
    explanation: "\
A channel's `clock`, `sensor` and `module`, a clock's `source`, and the members of groups
and disturbances must name something defined in the rig or its includes. The help names
the closest existing name. Checks that depend on the missing thing are skipped for that
channel, so one typo gives one finding.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: bsae
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    passing: "\
format: 1
rig: demo
clocks:
  - name: base
    frequency: 3 kHz
channels:
  - name: temp-1
    clock: base
    band: 200 Hz
    filters:
      - { response: butterworth, order: 4, cutoff: 500 Hz }
",
    stage: Stage::Resolution,
    check: None,
};

/// `include`.
pub static INCLUDE: Rule = Rule {
    name: declared::INCLUDE.name,
    severity: declared::INCLUDE.severity,
    summary: "an include is missing, unreadable, cyclic, outside the campaign root, or holds channels",
    explanation: "\
A rig's `include` list names catalog files (shared clocks, sensors and modules) by paths
relative to the including file. Each must exist, be readable, stay inside the campaign
root (the directory of the nearest foldcheck.toml, else the directory linted) after `..`
and symbolic links are resolved, not include itself through a loop, and hold no
channels, groups, disturbances, logger or defaults: those belong to a rig.",
    failing: "\
format: 1
rig: demo
include:
  - no-such-catalog.yaml
",
    passing: "\
format: 1
rig: demo
",
    stage: Stage::Resolution,
    check: None,
};

/// `clock-cycle`.
pub static CLOCK_CYCLE: Rule = Rule {
    name: declared::CLOCK_CYCLE.name,
    severity: declared::CLOCK_CYCLE.severity,
    summary: "clocks depend on each other in a loop (the loop is listed in order)",
    explanation: "\
Every derived clock takes its rate from its `source`. Following sources must end at a
root clock with a `frequency`; a loop has no rate at all. The finding lists the loop in
order and labels every member's `source`.",
    failing: "\
format: 1
rig: demo
clocks:
  - name: a
    source: b
  - name: b
    source: a
",
    passing: "\
format: 1
rig: demo
",
    stage: Stage::Resolution,
    check: None,
};

/// `suppression`.
pub static SUPPRESSION: Rule = Rule {
    name: declared::SUPPRESSION.name,
    severity: declared::SUPPRESSION.severity,
    summary: "a suppression comment has no reason, names an unknown rule, or suppresses nothing",
    explanation: "\
`# foldcheck: allow <rule>[, <rule>…] -- <reason>` on a line of its own covers the YAML
node that starts on the next line and everything inside it; at the end of a line it
covers the node that starts on that line. The reason is required. A suppression without
one, one that names an unknown rule, or one that suppresses nothing is itself a finding.",
    failing: "\
format: 1
rig: demo
# foldcheck: allow nyquist -- nothing here samples
",
    passing: "\
format: 1
rig: demo
",
    stage: Stage::Suppression,
    check: None,
};
