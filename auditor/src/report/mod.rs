//! The report formats of `twinstep report`: the library's terminal text, Markdown for a pull request, the analysis and
//! per-step rows as JSON or CSV, and one self-contained HTML file with inline SVG plots. Every format renders the one
//! analysis of the library ([`crate::analysis::Analysis`]).

pub mod html;
pub mod markdown;
pub mod plots;
pub mod rows;
pub mod text;

use crate::trace::Trace;

/// The formats `--format` accepts.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// The terminal report (colour only on a terminal).
    Text,
    /// Markdown, for pasting into a pull request.
    Md,
    /// Per-step rows and the outcome as one JSON document.
    Json,
    /// Per-step rows, one line each, after comment lines with the caution.
    Csv,
    /// One self-contained HTML file with plots.
    Html,
}

/// Renders a trace in a format. `colour` only affects the text format.
#[must_use]
pub fn render(trace: &Trace, format: Format, colour: bool) -> String {
    // The analysis is computed once here and every format renders it.
    let analysis = crate::analysis::Analysis::of(trace);
    match format {
        Format::Text => text::render(&analysis, colour),
        Format::Md => markdown::render(&analysis),
        Format::Json => rows::json(&analysis),
        Format::Csv => rows::csv(&analysis),
        Format::Html => html::render(&analysis),
    }
}
