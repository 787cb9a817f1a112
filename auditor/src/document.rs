//! The report as a list of blocks (headings, paragraphs, tables, the verdict), built once from an [`Analysis`] and
//! then written out by the Markdown and HTML renderers. Keeping the wording here means the two cannot drift
//! apart. (The terminal text is the library's own report, `twinstep::report::render_text`.)

use crate::analysis::{Analysis, FieldLens, CAUTION};
use crate::trace::{EventName, EventRecord, Status};

/// How a cell or line should stand out, where the format can show it.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Tone {
    Plain,
    Good,
    Warn,
    Bad,
}

/// A table cell.
#[derive(Clone, Debug, PartialEq)]
pub struct Cell {
    pub text: String,
    pub tone: Tone,
}

impl Cell {
    fn plain(text: impl Into<String>) -> Cell {
        Cell { text: text.into(), tone: Tone::Plain }
    }
}

/// One block of a report.
#[derive(Clone, Debug, PartialEq)]
pub enum Block {
    Title(String),
    /// Key–value lines about the run.
    Facts(Vec<(String, String)>),
    /// Something the reader must notice first (an incomplete run).
    Notice(String),
    /// The verdict line, its tone, and the audit's own explanation.
    Verdict {
        line: String,
        tone: Tone,
        explanation: String,
    },
    Heading(String),
    Paragraph(String),
    Table {
        head: Vec<String>,
        rows: Vec<Vec<Cell>>,
    },
    /// Where the plots go, in formats that draw them (HTML); the others skip it.
    Figures,
    /// The rounding-only caution.
    Caution(String),
}

/// At most this many events are listed one by one; the rest are counted. Common practice, no source.
const MAX_LISTED_EVENTS: usize = 40;

/// Numbers in reports: three significant digits in exponent form, `—` where a lens gave none.
#[must_use]
pub fn sci(value: Option<f64>) -> String {
    match value {
        Some(v) if v.is_finite() => format!("{v:.2e}"),
        Some(v) => format!("{v}"),
        None => "—".to_owned(),
    }
}

/// A ratio `err / allowed`: three decimals where that reads well, exponent form for the tiny ones.
#[must_use]
pub fn ratio(value: Option<f64>) -> String {
    match value {
        Some(r) if (1e-3..1e4).contains(&r) => format!("{r:.3}"),
        other => sci(other),
    }
}

/// Builds the blocks of a report.
#[must_use]
pub fn build(analysis: &Analysis<'_>) -> Vec<Block> {
    let header = &analysis.trace.header;
    let mut blocks = vec![Block::Title(format!("twinstep audit: {}", non_empty(&header.kernel, "unnamed kernel")))];
    if let Some(notice) = analysis.incomplete_notice() {
        blocks.push(Block::Notice(notice));
    }
    blocks.push(verdict_block(analysis));
    blocks.push(Block::Paragraph(analysis.headline()));
    blocks.push(Block::Facts(facts(analysis)));
    blocks.push(Block::Heading("Fields".to_owned()));
    blocks.push(outcome_table(analysis));
    // What the guaranteed lenses say about correct digits, and any estimate they prove wrong (the terminal
    // report's section of the same name, from the same function).
    let findings = twinstep::report::digit_findings(analysis.trace);
    if !findings.is_empty() {
        blocks.push(Block::Heading("Digits and consistency".to_owned()));
        blocks.extend(findings.into_iter().map(Block::Paragraph));
    }
    blocks.push(Block::Figures);
    blocks.push(Block::Heading("Events".to_owned()));
    blocks.extend(event_blocks(&analysis.trace.events));
    blocks.push(Block::Caution(CAUTION.to_owned()));
    blocks
}

fn non_empty<'a>(text: &'a str, fallback: &'a str) -> &'a str {
    if text.is_empty() {
        fallback
    } else {
        text
    }
}

fn verdict_block(analysis: &Analysis<'_>) -> Block {
    let tone = match analysis.verdict().map(|v| v.status) {
        Some(Status::Enough) => Tone::Good,
        Some(Status::EnoughUntil) | None => Tone::Warn,
        Some(Status::NotEnough) => Tone::Bad,
    };
    // The verdict's text ends with the caution, which closes every report anyway.
    let explanation = analysis.verdict().map(|v| v.text.replace(CAUTION, "").trim_end().to_owned()).unwrap_or_default();
    Block::Verdict { line: analysis.verdict_line(), tone, explanation }
}

fn facts(analysis: &Analysis<'_>) -> Vec<(String, String)> {
    let trace = analysis.trace;
    let header = &trace.header;
    let audited = header.steps_audited.unwrap_or(header.steps_planned);
    let horizon = if audited < header.steps_planned {
        format!(" (horizon {} planned)", header.steps_planned)
    } else {
        String::new()
    };
    let steps = match trace.summary.as_ref().map(|s| s.steps_done) {
        Some(done) => format!("{done} of {audited} audited{horizon}"),
        None => format!(
            "{} recorded of {audited} to audit{horizon}",
            trace.last_step().map_or("none".to_owned(), |s| format!("up to step {s}"))
        ),
    };
    let fields: Vec<String> = header
        .fields
        .iter()
        .map(|f| {
            let shape: Vec<String> = f.shape.iter().map(usize::to_string).collect();
            format!("{} [{}]", f.name, shape.join(" × "))
        })
        .collect();
    let mut facts = vec![
        ("scenario".to_owned(), non_empty(&header.scenario, "—").to_owned()),
        ("fields".to_owned(), fields.join(", ")),
        ("lenses".to_owned(), header.lenses.join(", ")),
        ("tolerance".to_owned(), header.tolerance.describe()),
        ("steps".to_owned(), steps),
    ];
    if let Some(wall) = trace.summary.as_ref().and_then(|s| crate::trace::known(s.wall_s)) {
        facts.push(("wall time".to_owned(), format!("{wall:.2} s")));
    }
    facts
}

fn outcome_table(analysis: &Analysis<'_>) -> Block {
    let head = ["field", "lens", "final error", "guaranteed bound", "peak err/allowed", "first crossing", "growth"];
    let complete = analysis.trace.is_complete();
    let rows = analysis.outcomes.iter().map(|o| outcome_row(o, complete)).collect();
    Block::Table { head: head.iter().map(|h| (*h).to_owned()).collect(), rows }
}

fn outcome_row(outcome: &FieldLens, complete: bool) -> Vec<Cell> {
    let crossed = outcome.first_crossing.is_some();
    let ratio_tone = match outcome.peak_tol_ratio {
        Some(r) if r > 1.0 => Tone::Bad,
        Some(r) if r > 0.1 => Tone::Warn,
        Some(_) => Tone::Good,
        None => Tone::Plain,
    };
    vec![
        Cell::plain(outcome.field.clone()),
        // A guaranteed lens's error is its bound, which may run away while the error does not: say which it is.
        Cell::plain(if outcome.guaranteed { format!("{} (guaranteed)", outcome.lens) } else { outcome.lens.clone() }),
        Cell::plain(sci(outcome.final_max_err)),
        Cell::plain(sci(outcome.final_bound)),
        Cell { text: ratio(outcome.peak_tol_ratio), tone: ratio_tone },
        Cell {
            text: match (outcome.first_crossing, complete) {
                (Some(step), _) => format!("step {step}"),
                (None, true) => "never".to_owned(),
                (None, false) => "none so far".to_owned(),
            },
            tone: if crossed { Tone::Bad } else { Tone::Good },
        },
        Cell::plain(outcome.growth.as_ref().map_or("—".to_owned(), crate::trace::Growth::describe)),
    ]
}

fn event_blocks(events: &[EventRecord]) -> Vec<Block> {
    if events.is_empty() {
        return vec![Block::Paragraph("No events: no NaN, infinity, undecided branch or index.".to_owned())];
    }
    let head = ["step", "lens", "event", "field", "site", "count", "detail"];
    let rows = events
        .iter()
        .take(MAX_LISTED_EVENTS)
        .map(|e| {
            let tone = match e.kind {
                EventName::Nan | EventName::Infinity | EventName::ToleranceCrossed | EventName::PrimalMismatch => {
                    Tone::Bad
                }
                _ => Tone::Warn,
            };
            vec![
                Cell::plain(e.step.to_string()),
                Cell::plain(e.lens.clone()),
                Cell { text: crate::trace::describe(e.kind).to_owned(), tone },
                Cell::plain(e.field.clone().unwrap_or_else(|| "—".to_owned())),
                Cell::plain(e.site.as_ref().map_or("—".to_owned(), ToString::to_string)),
                Cell::plain(e.count.to_string()),
                Cell::plain(e.detail.clone()),
            ]
        })
        .collect();
    let mut blocks = vec![Block::Table { head: head.iter().map(|h| (*h).to_owned()).collect(), rows }];
    if events.len() > MAX_LISTED_EVENTS {
        blocks.push(Block::Paragraph(format!(
            "… and {} more events (all of them are in the trace and in `--format json`).",
            events.len() - MAX_LISTED_EVENTS
        )));
    }
    blocks
}
