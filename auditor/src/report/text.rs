//! The terminal report: the library's own ([`twinstep::report::render_text`]), with ANSI colour added when the
//! output is a terminal (the caller decides; `NO_COLOR` and redirection turn it off): the verdict line in green,
//! yellow or red by its status, an incomplete-run line in yellow.

use crate::analysis::Analysis;
use crate::trace::Status;

/// SGR parameters: 32 green, 33 yellow, 1;31 bold red (ECMA-48, section 8.3.117).
fn paint(line: &str, sgr: &str) -> String {
    format!("\x1b[{sgr}m{line}\x1b[0m")
}

/// Renders the analysis as the library's terminal report, coloured when `colour` is set.
#[must_use]
pub fn render(analysis: &Analysis<'_>, colour: bool) -> String {
    let trace = analysis.trace;
    let text = twinstep::report::render_analysis(analysis);
    if !colour {
        return text;
    }
    let verdict = match trace.summary.as_ref().map(|s| s.verdict.status) {
        Some(Status::Enough) => "32",
        Some(Status::EnoughUntil) | None => "33",
        Some(Status::NotEnough) => "1;31",
    };
    let mut out = String::with_capacity(text.len() + 64);
    for line in text.split_inclusive('\n') {
        let (body, end) = line.strip_suffix('\n').map_or((line, ""), |b| (b, "\n"));
        if body.starts_with("Verdict:") {
            out.push_str(&paint(body, verdict));
        } else if body.contains("INCOMPLETE") {
            out.push_str(&paint(body, "33"));
        } else {
            out.push_str(body);
        }
        out.push_str(end);
    }
    out
}
