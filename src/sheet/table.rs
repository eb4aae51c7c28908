//! The channel table of `foldcheck report --format csv` and `--format json`: one row per
//! channel of every rig that could be read, the columns of [`COLUMNS`] (documented in
//! docs/output.md). Numbers are written in their shortest exact form (they parse back
//! to the same values `inspect --format json` shows); an attenuation infinitely deep is
//! carried as 300, as in every JSON output; a value that does not apply is empty (CSV)
//! or `null` (JSON). CSV quoting is RFC 4180 (the `csv` crate).

use super::{Row, Sheet};
use crate::inspect::text::clock_path;
use crate::words::finite;
use serde_json::{Map, Value};

/// The columns, in order: name and what it holds (units in the name).
pub const COLUMNS: [(&str, &str); 24] = [
    ("rig_file", "the rig file, as displayed"),
    ("rig", "the rig's name"),
    ("channel", "the channel's name"),
    ("sensor", "the sensor it names"),
    ("module", "the module it names"),
    ("clock", "the clock it names"),
    (
        "clock_path",
        "root first, with each multiplier and divider: `osc 24.576 MHz → ÷512 → frame 48 kHz`",
    ),
    ("adc_rate_hz", "the ADC rate"),
    ("final_rate_hz", "the rate after the last decimation stage"),
    (
        "final_rate_exact_hz",
        "the final rate exactly, `N` or `N/D` Hz",
    ),
    ("band_hz", "the band"),
    ("final_ratio", "final rate ÷ band"),
    (
        "worst_alias_db",
        "the lowest alias attenuation over every rate change (at fs − band, or a resonance's net attenuation)",
    ),
    ("required_db", "the required rejection there"),
    ("worst_alias_at", "where that check is: `ADC` or `stage k`"),
    ("worst_alias_from_hz", "the frequency that folds in there"),
    ("droop_db", "the chain's attenuation at the band edge"),
    ("droop_tolerance_db", "the passband tolerance"),
    (
        "latency_s",
        "the chain's latency: analog group delay plus digital delay",
    ),
    ("data_rate_bytes_per_s", "final rate × sample bits ÷ 8"),
    (
        "status",
        "`pass`, or the worst severity of the channel's active findings: `note`, `warning`, `error`; `unchecked` when it has none but its rates were not analysed",
    ),
    (
        "failing_rules",
        "the rules whose verdict fails, `; `-separated, with the stage or disturbance",
    ),
    ("findings", "the number of the channel's active findings"),
    (
        "suppressed",
        "the number of its findings suppressed (each with its reason in the HTML report)",
    ),
];

/// One cell.
enum Cell {
    Text(String),
    Num(f64),
    Count(usize),
    Null,
}

fn opt_text(s: Option<&str>) -> Cell {
    s.map_or(Cell::Null, |s| Cell::Text(s.to_string()))
}

fn opt_num(x: Option<f64>) -> Cell {
    x.map_or(Cell::Null, |x| Cell::Num(finite(x)))
}

fn cells(rig_file: &str, rig: Option<&str>, r: &Row) -> Vec<Cell> {
    let ins = &r.ins;
    let a = ins.analysis.as_ref();
    vec![
        Cell::Text(rig_file.to_string()),
        opt_text(rig),
        Cell::Text(ins.channel.clone()),
        opt_text(ins.sensor.as_ref().map(|s| s.name.as_str())),
        opt_text(ins.module.as_ref().map(|m| m.name.as_str())),
        opt_text(ins.clock.as_ref().map(|c| c.name.as_str())),
        match &ins.clock {
            Some(c) if !c.path.is_empty() => Cell::Text(clock_path(c)),
            _ => Cell::Null,
        },
        opt_num(r.adc_rate_hz()),
        opt_num(a.map(|a| a.final_rate_hz)),
        opt_text(
            a.map(|a| crate::words::exact_string(&a.final_rate))
                .as_deref(),
        ),
        opt_num(ins.band.as_ref().map(|b| b.value)),
        opt_num(a.map(|a| a.final_ratio)),
        opt_num(r.worst.as_ref().map(|w| w.attenuation_db)),
        opt_num(r.worst.as_ref().map(|w| w.required_db)),
        opt_text(r.worst_at().as_deref()),
        opt_num(r.worst.as_ref().map(|w| w.fold_from_hz)),
        opt_num(
            a.and_then(|a| a.passband.as_ref())
                .map(|p| p.attenuation_db),
        ),
        opt_num(a.and_then(|a| a.passband.as_ref()).map(|p| p.tolerance_db)),
        opt_num(r.latency_s),
        opt_num(a.map(|a| a.data_rate_bytes_per_s)),
        Cell::Text(r.status.as_str().to_string()),
        Cell::Text(r.failing.join("; ")),
        Cell::Count(
            ins.findings
                .iter()
                .filter(|f| f.suppressed.is_none())
                .count(),
        ),
        Cell::Count(
            ins.findings
                .iter()
                .filter(|f| f.suppressed.is_some())
                .count(),
        ),
    ]
}

fn rows(sheet: &Sheet) -> impl Iterator<Item = Vec<Cell>> + '_ {
    sheet.rigs.iter().flat_map(|rs| {
        rs.rows
            .iter()
            .map(move |r| cells(&rs.file, rs.name.as_deref(), r))
    })
}

/// The table as CSV: a header line of [`COLUMNS`], then one record per channel.
pub fn csv(sheet: &Sheet) -> Result<String, String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let fail = |e: csv::Error| format!("cannot write the CSV table: {e}");
    w.write_record(COLUMNS.iter().map(|(n, _)| *n))
        .map_err(fail)?;
    for row in rows(sheet) {
        w.write_record(row.iter().map(|c| match c {
            Cell::Text(s) => s.clone(),
            Cell::Num(x) => format!("{x}"),
            Cell::Count(n) => n.to_string(),
            Cell::Null => String::new(),
        }))
        .map_err(fail)?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| format!("cannot write the CSV table: {e}"))?;
    String::from_utf8(bytes).map_err(|e| format!("cannot write the CSV table: {e}"))
}

/// The table as JSON: `{"version": 1, "columns": [...], "channels": [{...}, ...]}`,
/// one object per channel with the keys of [`COLUMNS`].
pub fn json(sheet: &Sheet) -> String {
    let channels: Vec<Value> = rows(sheet)
        .map(|row| {
            let mut m = Map::new();
            for ((name, _), c) in COLUMNS.iter().zip(row) {
                m.insert(
                    name.to_string(),
                    match c {
                        Cell::Text(s) => Value::from(s),
                        Cell::Num(x) => Value::from(x),
                        Cell::Count(n) => Value::from(n),
                        Cell::Null => Value::Null,
                    },
                );
            }
            Value::Object(m)
        })
        .collect();
    let doc = serde_json::json!({
        "version": 1,
        "columns": COLUMNS.iter().map(|(n, _)| *n).collect::<Vec<_>>(),
        "channels": channels,
    });
    let mut s = serde_json::to_string_pretty(&doc).expect("a JSON value always serialises");
    s.push('\n');
    s
}
