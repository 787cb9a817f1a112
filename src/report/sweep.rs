//! The precision sweep in a report: the sentence the verdict carries ("least precision: 38 bits; f32 crosses at
//! step 210, bf16 at step 3") and the report's section — a table of every format's run, the least precision, and
//! where binary64 is not enough the bits each field needs by the fitted law with the double-double suggestion.
//!
//! Both are worked out from the `format_run` and `sweep` records a sweep appends to its main trace
//! ([`crate::sweep`], `docs/trace.md`), so every format (text, Markdown, HTML, JSON, CSV) shows the same; a trace
//! without them gets neither, and its verdict keeps saying that the least precision is not computed.

use serde::Serialize;

use super::analysis::{Align, Block, Cell, Section, SectionKind, Tone};
use super::format;
use crate::lens::narrow::narrow_reference;
use crate::sweep::{
    FormatRun, NeededBits, Remedy, RunRole, SweepSummary, BINARY64_BITS, DOUBLE_DOUBLE_BITS, NARROW_REFERENCE_BITS,
    REFERENCE_MARGIN,
};
use crate::trace::Trace;

/// The name a Rust programmer knows a format by, for the verdict's short sentence: `f64`, `f32`, `bf16`, `f16`
/// (the half-precision crates' names, common practice, no source); a p-bit format keeps its own name (`p38`).
#[must_use]
pub fn short_name(format: &str) -> &str {
    match format {
        "binary64" => "f64",
        "binary32" => "f32",
        "bfloat16" => "bf16",
        "binary16" => "f16",
        other => other,
    }
}

/// What a run of one format does against the tolerance, in a few words: `crosses at step 210` (the earliest
/// observed crossing over the fields), `meets the tolerance`, or `misses it by the horizon` (no crossing in the
/// audited steps, but its growth law crosses before the horizon).
fn run_outcome(run: &FormatRun) -> String {
    match run.fields.iter().filter_map(|f| f.first_crossing).min() {
        Some(step) => format!("crosses at step {step}"),
        None if run.meets => "meets the tolerance".to_owned(),
        None => "misses it by the horizon (extrapolated)".to_owned(),
    }
}

/// The asked runs other than binary64, in the order asked: what the verdict says each format would do.
fn asked_narrower(trace: &Trace) -> impl Iterator<Item = &FormatRun> {
    trace.format_runs.iter().filter(|r| r.role == RunRole::Asked && r.bits < BINARY64_BITS)
}

/// One field's need beyond binary64, as a clause: `field T needs about 61.3 bits by the fitted law; double-double
/// (about 106 bits) would do for it`.
fn need_clause(need: &NeededBits) -> String {
    match (need.bits, need.remedy) {
        (Some(bits), Remedy::DoubleDouble) => format!(
            "field `{}` needs about {bits:.1} bits by the fitted law of error against precision: double-double \
(about {DOUBLE_DOUBLE_BITS} bits) would do for it",
            need.field
        ),
        (Some(bits), _) => format!(
            "field `{}` needs about {bits:.1} bits by the fitted law of error against precision, more than \
double-double (about {DOUBLE_DOUBLE_BITS} bits) gives",
            need.field
        ),
        (None, _) => format!(
            "field `{}` misses it, and the runs give no law of error against precision to say how many bits it needs",
            need.field
        ),
    }
}

/// The verdict's sentence about the sweep, `None` without one: the least precision and what each narrower
/// format would do, or, where nothing up to binary64 meets the tolerance, the bits each field needs.
#[must_use]
pub fn verdict_sentence(trace: &Trace) -> Option<String> {
    let sweep = trace.sweep.as_ref()?;
    // `f32 crosses at step 210, bf16 at step 3`: a crossing after a crossing drops the verb.
    let mut others: Vec<String> = Vec::new();
    let mut after_crossing = false;
    for run in asked_narrower(trace) {
        let outcome = run_outcome(run);
        let crossing = outcome.starts_with("crosses ");
        let shown = if crossing && after_crossing { outcome.trim_start_matches("crosses ") } else { &outcome };
        others.push(format!("{} {shown}", short_name(&run.format)));
        after_crossing = crossing;
    }
    let others = if others.is_empty() { String::new() } else { format!("; {}", others.join(", ")) };
    Some(match sweep.least_bits {
        Some(bits) => format!("Least precision: {bits} bits{others}."),
        None => {
            let needs: Vec<String> = sweep.needed.iter().map(need_clause).collect();
            let needs = if needs.is_empty() { String::new() } else { format!(": {}", needs.join("; ")) };
            // The verdict is one plain sentence in every format: no code spans.
            format!("Least precision: none up to {BINARY64_BITS} bits (f64) meets the tolerance{others}{needs}.")
                .replace('`', "")
        }
    })
}

/// The typed facts of the section (its `data` in JSON): the sweep's outcome and every run.
#[derive(Serialize)]
struct Facts<'a> {
    summary: &'a SweepSummary,
    runs: &'a [FormatRun],
}

/// The report's section on the sweep, `None` when the trace holds none.
#[must_use]
pub fn section(trace: &Trace) -> Option<Section> {
    let sweep = trace.sweep.as_ref()?;
    let fields: Vec<&str> = trace.header.fields.iter().map(|f| f.name.as_str()).collect();
    let audited = if sweep.steps < sweep.horizon {
        format!(
            "{} steps audited per format, judged at the horizon of {} steps by each run's growth law",
            sweep.steps, sweep.horizon
        )
    } else {
        format!("{} steps per format", sweep.steps)
    };
    let mut blocks = vec![Block::Paragraph {
        text: format!(
            "The same scenario run as if the program computed in each format (its primal rounded to the format at \
every operation, a reference beside it: the double-double; binary64 for a format of at most \
{NARROW_REFERENCE_BITS} bits while binary64's own error stays below 2^{margin} of the format's; binary32 for bfloat16 and binary16 while binary32's own error \
stays below 2^{margin} of theirs), against the same tolerance: {audited}. A format meets the \
tolerance when no field crosses it up to the horizon.",
            margin = REFERENCE_MARGIN.log2()
        ),
    }];
    let mut head: Vec<String> =
        ["format", "bits", "exponents", "run", "reference", "meets"].iter().map(|s| (*s).to_owned()).collect();
    let mut align = vec![Align::Left, Align::Right, Align::Left, Align::Left, Align::Left, Align::Left];
    for field in &fields {
        head.push(format!("{field}: first crossing"));
        head.push(format!("{field}: error at horizon"));
        align.extend([Align::Right, Align::Right]);
    }
    let rows = trace
        .format_runs
        .iter()
        .map(|run| {
            let mut row = vec![
                Cell { text: run.format.clone(), tone: Tone::Plain },
                Cell { text: run.bits.to_string(), tone: Tone::Plain },
                Cell { text: format!("{}..{}", run.emin, run.emax), tone: Tone::Plain },
                Cell {
                    text: match run.role {
                        RunRole::Asked => "asked".to_owned(),
                        RunRole::Bisection => "bisection".to_owned(),
                    },
                    tone: Tone::Plain,
                },
                Cell { text: narrow_reference(&run.lens).unwrap_or("double-double").to_owned(), tone: Tone::Plain },
                Cell {
                    text: if run.meets { "yes" } else { "no" }.to_owned(),
                    tone: if run.meets { Tone::Good } else { Tone::Bad },
                },
            ];
            for name in &fields {
                let field = run.fields.iter().find(|f| f.name == *name);
                let crossing = field.and_then(|f| f.first_crossing);
                row.push(Cell {
                    text: crossing.map_or_else(|| "none".to_owned(), |s| format!("step {s}")),
                    tone: if crossing.is_some() { Tone::Bad } else { Tone::Plain },
                });
                // A NaN error (lost) is over too.
                let over = field.is_some_and(|f| {
                    matches!(f.horizon_err.partial_cmp(&f.allowed_err), Some(std::cmp::Ordering::Greater) | None)
                });
                row.push(Cell {
                    text: field.map_or_else(|| format::ABSENT.to_owned(), |f| format::error(f.horizon_err)),
                    tone: if over { Tone::Bad } else { Tone::Plain },
                });
            }
            row
        })
        .collect();
    blocks.push(Block::Table { head, align, rows });
    blocks.push(Block::Paragraph {
        text: match sweep.least_bits {
            Some(bits) => format!(
                "Least precision that meets the tolerance up to the horizon: {bits} bits (the bisection's p-bit \
formats keep the exponent range {}..{}, so between the standard formats they vary the precision alone).",
                sweep.bisection_emin, sweep.bisection_emax
            ),
            None => {
                format!("No precision up to {BINARY64_BITS} bits (binary64) meets the tolerance up to the horizon.")
            }
        },
    });
    for need in &sweep.needed {
        let law = need.law.map_or_else(String::new, |l| {
            format!(" (log2 err ≈ {:.2} {:+.3}·p, fitted to {} runs)", l.a, l.b, l.points)
        });
        let advice = match need.remedy {
            Remedy::DoubleDouble => format!(
                " Carry `{}` (or the sum that updates it) in double-double, e.g. a compensated update.",
                need.field
            ),
            Remedy::BeyondDoubleDouble | Remedy::Unknown => String::new(),
        };
        let mut clause = need_clause(need);
        clause[..1].make_ascii_uppercase();
        blocks.push(Block::Paragraph { text: format!("{clause}{law}.{advice}") });
    }
    Some(Section::new(
        SectionKind::Sweep,
        Some("Precision sweep".to_owned()),
        Facts { summary: sweep, runs: &trace.format_runs },
        blocks,
    ))
}
