//! Per-step rows, as one JSON document or as CSV. One row per recorded step, lens and field; the columns are the
//! [`Row`] members, in [`COLUMNS`] order, documented in `docs/cli.md`. The CSV is produced from the same rows
//! through their JSON form, so the two formats cannot disagree.

use crate::analysis::Analysis;
use crate::trace::{known, Trace};
use serde::Serialize;

/// The columns, in order.
pub const COLUMNS: [&str; 13] = [
    "step",
    "lens",
    "field",
    "max_err",
    "mean_err",
    "max_rel_err",
    "mean_rel_err",
    "bound",
    "correct_bits",
    "tol_ratio",
    "within_tolerance",
    "worst_cell",
    "representation_err",
];

/// One step of one field under one lens.
#[derive(Serialize)]
pub struct Row<'a> {
    pub step: u64,
    pub lens: &'a str,
    pub field: &'a str,
    pub max_err: Option<f64>,
    pub mean_err: Option<f64>,
    pub max_rel_err: Option<f64>,
    pub mean_rel_err: Option<f64>,
    pub bound: Option<f64>,
    pub correct_bits: Option<f64>,
    pub tol_ratio: Option<f64>,
    /// `tol_ratio ≤ 1`; `null` without a ratio.
    pub within_tolerance: Option<bool>,
    /// The worst cell's multi-index, axes separated by `;` (`12;40`).
    pub worst_cell: String,
    pub representation_err: Option<f64>,
}

/// The rows of a trace, in trace order.
#[must_use]
pub fn rows(trace: &Trace) -> Vec<Row<'_>> {
    trace
        .steps
        .iter()
        .flat_map(|step| {
            step.fields.iter().map(move |f| Row {
                step: step.step,
                lens: &step.lens,
                field: &f.name,
                max_err: known(f.max_err),
                mean_err: known(f.mean_err),
                max_rel_err: known(f.max_rel_err),
                mean_rel_err: known(f.mean_rel_err),
                bound: f.bound,
                correct_bits: known(f.correct_bits),
                tol_ratio: known(f.tol_ratio),
                within_tolerance: known(f.tol_ratio).map(|r| r <= 1.0),
                worst_cell: f.worst_cell.iter().map(usize::to_string).collect::<Vec<_>>().join(";"),
                representation_err: f.representation_err,
            })
        })
        .collect()
}

#[derive(Serialize)]
struct Outcome<'a> {
    field: &'a str,
    lens: &'a str,
    first_crossing: Option<u64>,
    final_max_err: Option<f64>,
    final_bound: Option<f64>,
    peak_tol_ratio: Option<f64>,
}

#[derive(Serialize)]
struct Document<'a> {
    report: &'static str,
    kernel: &'a str,
    scenario: &'a str,
    float: &'a str,
    complete: bool,
    notice: Option<String>,
    tolerance: &'a crate::trace::Tolerance,
    verdict: Option<&'a crate::trace::Verdict>,
    verdict_line: String,
    outcomes: Vec<Outcome<'a>>,
    events: &'a [crate::trace::EventRecord],
    rows: Vec<Row<'a>>,
    caution: &'static str,
}

/// The JSON document: the run, the outcome per field and lens, the events, and the per-step rows.
#[must_use]
pub fn json(analysis: &Analysis<'_>) -> String {
    let trace = analysis.trace;
    let document = Document {
        report: "twinstep-report",
        kernel: &trace.header.kernel,
        scenario: &trace.header.scenario,
        float: crate::analysis::FLOAT,
        complete: trace.is_complete(),
        notice: analysis.incomplete_notice(),
        tolerance: &trace.header.tolerance,
        verdict: analysis.verdict(),
        verdict_line: analysis.verdict_line(),
        outcomes: analysis
            .outcomes
            .iter()
            .map(|o| Outcome {
                field: &o.field,
                lens: &o.lens,
                first_crossing: o.first_crossing,
                final_max_err: o.final_max_err,
                final_bound: o.final_bound,
                peak_tol_ratio: o.peak_tol_ratio,
            })
            .collect(),
        events: &trace.events,
        rows: rows(trace),
        caution: crate::analysis::CAUTION,
    };
    // Serializing plain structs of strings, numbers and options cannot fail; the fallback keeps this panic-free.
    let mut text = serde_json::to_string_pretty(&document).unwrap_or_else(|e| format!("{{\"error\":\"{e}\"}}"));
    text.push('\n');
    text
}

/// A CSV field (RFC 4180, section 2): quoted when it holds a comma, a quote or a line break, quotes doubled.
fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_owned()
    }
}

/// A JSON value as a CSV field: numbers in shortest round-trip exponent form, `null` as an empty field.
fn csv_value(value: Option<&serde_json::Value>) -> String {
    match value {
        None | Some(serde_json::Value::Null) => String::new(),
        Some(serde_json::Value::Number(n)) if n.is_f64() => n.as_f64().map_or_else(String::new, |x| format!("{x:e}")),
        Some(serde_json::Value::String(s)) => csv_field(s),
        Some(other) => csv_field(&other.to_string()),
    }
}

/// The CSV: a header line with [`COLUMNS`], then one line per row.
#[must_use]
pub fn csv(trace: &Trace) -> String {
    let mut out = COLUMNS.join(",");
    out.push('\n');
    for row in rows(trace) {
        let value = serde_json::to_value(&row).unwrap_or(serde_json::Value::Null);
        let fields: Vec<String> = COLUMNS.iter().map(|c| csv_value(value.get(c))).collect();
        out.push_str(&fields.join(","));
        out.push('\n');
    }
    out
}
