//! The analysis as one JSON document, and its per-step rows as CSV. One row per recorded step, lens and field; the
//! columns are the [`Row`] members, in [`ROW_COLUMNS`] order, documented in `docs/cli.md`. The CSV is produced from
//! the same rows through their JSON form, so the two formats cannot disagree; it starts with comment lines (`#`)
//! that say what the numbers are and carry the caution, then, as further comment lines: for a certified lens, what
//! its certificate guarantees (the section's sentences and table rows); for a trace with an attribution, the top
//! source lines of each ranked field; for a precision sweep, every format's run.

use crate::analysis::{Analysis, Block, Row, Section, SectionKind, VerdictView, CAUTION, ROW_COLUMNS};
use serde::Serialize;
use twinstep::report::attribution::AttributionFacts;

/// The columns of the attribution comment lines of the CSV.
pub const ATTRIBUTION_COLUMNS: [&str; 13] = [
    "field",
    "rank",
    "file",
    "line",
    "share",
    "ablated",
    "cancelled_bits_mean",
    "cancelled_bits_max",
    "absorbed_bits_mean",
    "absorbed_bits_max",
    "runs",
    "remedy",
    "source",
];

/// The top source lines of each ranked field as CSV comment lines (`# attribution,…`), after one naming the
/// columns: comments, so that a reader of the per-step rows skips them.
fn attribution_comments(analysis: &Analysis<'_>, out: &mut String) {
    let Some(facts) = AttributionFacts::of(analysis) else { return };
    out.push_str(&format!(
        "# attribution after step {}, the top lines per field: {}\n",
        facts.step,
        ATTRIBUTION_COLUMNS.join(",")
    ));
    let number =
        |x: Option<f64>| csv_value(x.and_then(serde_json::Number::from_f64).map(serde_json::Value::Number).as_ref());
    for field in &facts.fields {
        for l in &field.lines {
            let remedy = l.remedy.map_or("", |r| r.name());
            let cells = [
                csv_field(&field.field),
                l.rank.to_string(),
                csv_field(&l.file),
                l.line.to_string(),
                number(Some(l.share)),
                number(l.ablated),
                number(l.cancelled_bits_mean),
                number(l.cancelled_bits_max),
                number(l.absorbed_bits_mean),
                number(l.absorbed_bits_max),
                l.runs.to_string(),
                remedy.to_owned(),
                csv_field(l.source.as_deref().unwrap_or("")),
            ];
            out.push_str(&format!("# attribution,{}\n", cells.join(",")));
        }
    }
}

#[derive(Serialize)]
struct Document<'a> {
    report: &'static str,
    kernel: &'a str,
    scenario: &'a str,
    float: &'a str,
    complete: bool,
    notice: Option<&'a str>,
    tolerance: &'a crate::trace::Tolerance,
    verdict: Option<&'a crate::trace::Verdict>,
    verdict_view: Option<&'a VerdictView>,
    verdict_line: String,
    outcomes: &'a [crate::analysis::Outcome],
    events: &'a [crate::trace::EventRecord],
    /// Every section of the report in order, with its typed facts (`data`) and its wording (`blocks`).
    sections: &'a [Section],
    rows: Vec<Row>,
    caution: &'static str,
}

/// The JSON document: the run, the verdict, the outcome per field and lens, the events, every section of the
/// report, and the per-step rows.
#[must_use]
pub fn json(analysis: &Analysis<'_>) -> String {
    let trace = analysis.trace;
    let document = Document {
        report: "twinstep-report",
        kernel: &trace.header.kernel,
        scenario: &trace.header.scenario,
        float: &trace.header.float,
        complete: trace.is_complete(),
        notice: analysis.notice.as_deref(),
        tolerance: &trace.header.tolerance,
        verdict: trace.summary.as_ref().map(|s| &s.verdict),
        verdict_view: analysis.verdict.as_ref(),
        verdict_line: analysis.verdict_line(),
        outcomes: &analysis.outcomes,
        events: &trace.events,
        sections: &analysis.sections,
        rows: analysis.rows(),
        caution: CAUTION,
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

/// The precision sweep as comment lines before the header, when the trace holds one: its sentences, then one
/// line per format's run (`name=value` pairs of the sweep section's table), so the rows below stay one table.
fn sweep_comments(analysis: &Analysis<'_>, out: &mut String) {
    let one_line = |text: &str| text.replace(['\n', '\r'], " ").replace('`', "");
    for section in analysis.sections.iter().filter(|s| s.kind == SectionKind::Sweep) {
        for block in &section.blocks {
            match block {
                Block::Paragraph { text } => out.push_str(&format!("# precision sweep: {}\n", one_line(text))),
                Block::Table { head, rows, .. } => {
                    for row in rows {
                        let pairs: Vec<String> =
                            head.iter().zip(row).map(|(h, c)| format!("{h}={}", one_line(&c.text))).collect();
                        out.push_str(&format!("# precision sweep run: {}\n", pairs.join(", ")));
                    }
                }
                _ => {}
            }
        }
    }
}

/// The CSV: comment lines starting with `#` (what the rows are, the verdict line, the caution), a header line with
/// [`ROW_COLUMNS`], then one line per row. Readers that do not skip comments can drop the lines before the header.
#[must_use]
pub fn csv(analysis: &Analysis<'_>) -> String {
    let verdict = analysis.verdict_line();
    let mut out = format!(
        "# twinstep per-step rounding error rows of {} (one row per recorded step, lens and field; docs/cli.md)\n\
         # verdict: {verdict}\n# {CAUTION}\n",
        analysis.trace.header.kernel.replace(['\n', '\r'], " ")
    );
    attribution_comments(analysis, &mut out);
    sweep_comments(analysis, &mut out);
    for section in analysis.sections.iter().filter(|s| s.kind == SectionKind::Certificate) {
        certificate_comments(section, &mut out);
    }
    out.push_str(&ROW_COLUMNS.join(","));
    out.push('\n');
    for row in analysis.rows() {
        let value = serde_json::to_value(&row).unwrap_or(serde_json::Value::Null);
        let fields: Vec<String> = ROW_COLUMNS.iter().map(|c| csv_value(value.get(c))).collect();
        out.push_str(&fields.join(","));
        out.push('\n');
    }
    out
}

/// A certified lens's section as comment lines: its title, facts, sentences, and table rows (`key: value` pairs).
fn certificate_comments(section: &Section, out: &mut String) {
    let line = |text: &str| format!("# {}\n", text.replace(['\n', '\r'], " "));
    if let Some(title) = &section.title {
        out.push_str(&line(title));
    }
    for block in &section.blocks {
        match block {
            Block::Facts { facts } => facts.iter().for_each(|(k, v)| out.push_str(&line(&format!("{k}: {v}")))),
            Block::Paragraph { text } => out.push_str(&line(text)),
            Block::Table { head, rows, .. } => {
                for row in rows {
                    let cells: Vec<String> = head.iter().zip(row).map(|(h, c)| format!("{h}: {}", c.text)).collect();
                    out.push_str(&line(&cells.join("; ")));
                }
            }
            Block::Notice { .. } | Block::Verdict { .. } | Block::Figures => {}
        }
    }
}
