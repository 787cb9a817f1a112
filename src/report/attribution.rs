//! The report's section on where the error comes from: per field whose error matters, the source lines that make
//! it — the line's text read from the kernel's file, its share of the field's error, the bits its sums and
//! differences cancel and absorb, the remedy where the pattern is known — and, where the audit was told that one
//! field carries another with a remedy applied, both fields' measured errors side by side.
//!
//! Computed from the trace's `attribution` record (`docs/attribution.md` defines its numbers) and the audit's
//! outcomes; the words are here too, so that the section is one piece: [`section`] gives the typed facts
//! ([`AttributionFacts`], also the section's JSON `data`, which the HTML source excerpt and the CSV comment lines
//! read back through [`AttributionFacts::of`]) and the blocks every format renders.
//!
//! Why the source is read at report time: the record holds numbers and sites only (a report in another language
//! could word it its own way), and the kernel's file is where the user reads the line anyway. The trace names a
//! file as the compiler did — relative to the workspace the kernel was built in, or absolute — so a relative
//! path is looked for from the working directory and each of its parents; a line that is not found is said to
//! be so, never guessed. Only `.rs` files are opened: a trace is data, and must not make a report print other
//! files.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use super::analysis::{Align, Analysis, Block, Cell, Section, SectionKind, Tone};
use super::format;
use crate::attribution::SIGNIFICANT_SHARE;
use crate::trace::{AttributionRecord, Finding, LineFacts, Pattern, PatternHit, Remedy};

/// Lines shown per field (all of them are in the trace).
const TOP_LINES: usize = 5;
/// Findings worded per field.
const TOP_FINDINGS: usize = 3;
/// A field is ranked when its judging lens's error reaches this fraction of what the tolerance allows (the worst
/// field always is). Common practice, no source: a tenth of the budget is where a report starts to warn.
const MATTERS: f64 = 0.1;
/// The ablated share is marked when it differs from the propagated one by more than this: the noise of one
/// rounding that ablation carries (`docs/attribution.md`, Which share the report uses).
const ABLATION_NOISE: f64 = 0.05;
/// Above this residual the propagated shares do not explain the error (`docs/attribution.md`).
const RESIDUAL_LIMIT: f64 = 1e-3;
/// Lines of context above and below the marked lines of a source excerpt.
const CONTEXT: u32 = 2;
/// The longest source text a table cell shows, in characters.
const SOURCE_WIDTH: usize = 90;
/// The largest kernel file read for its lines (bytes).
const MAX_SOURCE_BYTES: u64 = 4 << 20;
/// What a table cell says for a line whose file was not found.
pub const SOURCE_NOT_FOUND: &str = "(source not found)";

/// The section's typed facts.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AttributionFacts {
    /// The step the attribution measured.
    pub step: u64,
    /// The steps the audit ran (or was to run).
    pub steps_audited: u64,
    pub fields: Vec<FieldRanking>,
    /// Fields not ranked: their error stays below a tenth of what the tolerance allows.
    pub not_ranked: Vec<String>,
    pub applied: Vec<AppliedOutcome>,
    /// The ranked lines in their source, for formats that show an excerpt.
    pub excerpts: Vec<Excerpt>,
}

/// The lines that make one field's error.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FieldRanking {
    pub field: String,
    /// `primal − shadow` at the worst cell at the attributed step.
    pub error: Option<f64>,
    pub worst_cell: Vec<usize>,
    pub residual: Option<f64>,
    pub representation_share: Option<f64>,
    pub other_share: Option<f64>,
    pub lines: Vec<RankedLine>,
    pub findings: Vec<Finding>,
}

/// One row of a field's table.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RankedLine {
    pub rank: usize,
    pub file: String,
    pub line: u32,
    /// The line's text, trimmed; `None` when its file was not found.
    pub source: Option<String>,
    /// The share the report uses ([`LineFacts::share_of`]).
    pub share: f64,
    pub ablated: Option<f64>,
    pub cancelled_bits_mean: Option<f64>,
    pub cancelled_bits_max: Option<f64>,
    pub absorbed_bits_mean: Option<f64>,
    pub absorbed_bits_max: Option<f64>,
    /// The operations of the line that read the field.
    pub runs: u64,
    pub remedy: Option<Remedy>,
}

/// A remedy applied in the same run: the field as the program has it and the field that carries it remedied, with
/// their errors as the judging lens measured them at the audit's last step.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AppliedOutcome {
    pub field: String,
    pub remedied: String,
    pub remedy: Remedy,
    pub background: Option<f64>,
    pub lens: Option<String>,
    pub step: Option<u64>,
    pub error: Option<f64>,
    pub remedied_error: Option<f64>,
}

/// A stretch of a kernel's file with the ranked lines in it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Excerpt {
    pub file: String,
    /// The number of the first line of `lines`.
    pub first_line: u32,
    pub lines: Vec<String>,
    pub marks: Vec<Mark>,
}

/// A ranked line in an excerpt.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Mark {
    pub line: u32,
    pub field: String,
    pub rank: usize,
    pub share: f64,
}

impl AttributionFacts {
    /// The facts of an analysis's attribution section, when it has one.
    #[must_use]
    pub fn of(analysis: &Analysis<'_>) -> Option<AttributionFacts> {
        let section = analysis.sections.iter().find(|s| s.kind == SectionKind::Attribution)?;
        serde_json::from_value(section.data.clone()).ok()
    }
}

/// The attribution section of a report, when the trace has an `attribution` record (the last one, if several).
#[must_use]
pub fn section(analysis: &Analysis<'_>) -> Option<Section> {
    let record = analysis.trace.attribution.last()?;
    let mut sources = Sources::default();
    let facts = facts(analysis, record, &mut sources);
    let blocks = blocks(&facts);
    // Serializing plain structs of strings, numbers and options cannot fail; `Null` keeps this panic-free.
    let data = serde_json::to_value(&facts).unwrap_or(serde_json::Value::Null);
    Some(Section { kind: SectionKind::Attribution, title: Some("Where the error comes from".to_owned()), data, blocks })
}

fn facts(analysis: &Analysis<'_>, record: &AttributionRecord, sources: &mut Sources) -> AttributionFacts {
    let header = &analysis.trace.header;
    let worst = analysis.worst().map(|o| o.field.as_str());
    let matters = |field: &str| {
        let peak = analysis.judging().filter(|o| o.field == field).filter_map(|o| o.peak_tol_ratio).reduce(f64::max);
        Some(field) == worst || peak.is_some_and(|p| p >= MATTERS)
    };
    let (mut fields, mut not_ranked) = (Vec::new(), Vec::new());
    for attributed in &record.fields {
        if !matters(&attributed.name) {
            not_ranked.push(attributed.name.clone());
            continue;
        }
        let field = attributed.name.as_str();
        let findings: Vec<Finding> = record.findings.iter().filter(|f| f.field == field).cloned().collect();
        let lines = record
            .ranked_lines(field)
            .into_iter()
            .take(TOP_LINES)
            .enumerate()
            .map(|(i, (line, share))| ranked_line(i + 1, line, share, field, &findings, sources))
            .collect();
        fields.push(FieldRanking {
            field: field.to_owned(),
            error: super::analysis::known(attributed.error),
            worst_cell: attributed.worst_cell.clone(),
            residual: attributed.residual,
            representation_share: attributed.representation_share,
            other_share: attributed.other_share,
            lines,
            findings,
        });
    }
    let applied = record.applied.iter().map(|a| applied_outcome(analysis, a)).collect();
    let excerpts = excerpts(&fields, sources);
    AttributionFacts {
        step: record.step,
        steps_audited: header.steps_audited.unwrap_or(header.steps_planned),
        fields,
        not_ranked,
        applied,
        excerpts,
    }
}

fn ranked_line(
    rank: usize,
    line: &LineFacts,
    share: f64,
    field: &str,
    findings: &[Finding],
    sources: &mut Sources,
) -> RankedLine {
    let of_field = line.shares.iter().find(|s| s.field == field);
    let ops = of_field.map(|s| s.ops.clone()).unwrap_or_default();
    RankedLine {
        rank,
        file: line.file.clone(),
        line: line.line,
        source: sources.line(&line.file, line.line).map(|text| text.trim().to_owned()),
        share,
        ablated: of_field.and_then(|s| s.ablated),
        cancelled_bits_mean: ops.cancelled_bits_mean,
        cancelled_bits_max: ops.cancelled_bits_max,
        absorbed_bits_mean: ops.absorbed_bits_mean,
        absorbed_bits_max: ops.absorbed_bits_max,
        runs: ops.count,
        remedy: findings.iter().find(|f| f.file == line.file && f.line == line.line).map(|f| f.remedy),
    }
}

/// The measured errors of a field and of the field that carries it remedied, by the first judging lens that has
/// both.
fn applied_outcome(analysis: &Analysis<'_>, applied: &crate::trace::AppliedRemedy) -> AppliedOutcome {
    let pair = analysis.judging().filter(|o| o.field == applied.field).find_map(|o| {
        let remedied = analysis.judging().find(|r| r.lens == o.lens && r.field == applied.remedied)?;
        Some((o, remedied))
    });
    AppliedOutcome {
        field: applied.field.clone(),
        remedied: applied.remedied.clone(),
        remedy: applied.remedy,
        background: applied.background,
        lens: pair.map(|(o, _)| o.lens.clone()),
        step: pair.and_then(|(o, _)| o.final_step),
        error: pair.and_then(|(o, _)| o.final_max_err),
        remedied_error: pair.and_then(|(_, r)| r.final_max_err),
    }
}

/// Per file, the ranked lines found in it with a few lines around them; lines far apart make separate excerpts.
fn excerpts(fields: &[FieldRanking], sources: &mut Sources) -> Vec<Excerpt> {
    let mut marks: BTreeMap<&str, Vec<Mark>> = BTreeMap::new();
    for f in fields {
        for l in f.lines.iter().filter(|l| l.source.is_some()) {
            marks.entry(l.file.as_str()).or_default().push(Mark {
                line: l.line,
                field: f.field.clone(),
                rank: l.rank,
                share: l.share,
            });
        }
    }
    let mut excerpts = Vec::new();
    for (file, mut marks) in marks {
        marks.sort_by_key(|m| m.line);
        let Some(text) = sources.file(file) else { continue };
        let count = text.lines().count() as u32;
        let mut groups: Vec<Vec<Mark>> = Vec::new();
        for mark in marks {
            match groups.last_mut() {
                // Two marked lines whose contexts meet share an excerpt.
                Some(group) if group.last().is_some_and(|m| mark.line <= m.line + 2 * CONTEXT + 1) => group.push(mark),
                _ => groups.push(vec![mark]),
            }
        }
        for group in groups {
            let (Some(low), Some(high)) = (group.first().map(|m| m.line), group.last().map(|m| m.line)) else {
                continue;
            };
            let first_line = low.saturating_sub(CONTEXT).max(1);
            let last_line = (high + CONTEXT).min(count);
            let lines = text
                .lines()
                .skip(first_line as usize - 1)
                .take((last_line + 1).saturating_sub(first_line) as usize)
                .map(str::to_owned)
                .collect();
            excerpts.push(Excerpt { file: file.to_owned(), first_line, lines, marks: group });
        }
    }
    excerpts
}

/// The kernel files a report reads, each once.
#[derive(Default)]
struct Sources {
    files: BTreeMap<String, Option<String>>,
}

impl Sources {
    fn file(&mut self, name: &str) -> Option<&str> {
        self.files.entry(name.to_owned()).or_insert_with(|| read_source(name)).as_deref()
    }

    fn line(&mut self, name: &str, line: u32) -> Option<String> {
        let index = usize::try_from(line).ok()?.checked_sub(1)?;
        self.file(name)?.lines().nth(index).map(str::to_owned)
    }
}

/// The text of a kernel's `.rs` file named as the compiler named it: an absolute path as it is, a relative one
/// from the working directory or the nearest of its parents that has it.
fn read_source(name: &str) -> Option<String> {
    let path = Path::new(name);
    if path.extension().and_then(|e| e.to_str()) != Some("rs") {
        return None;
    }
    let candidates: Vec<PathBuf> = if path.is_absolute() {
        vec![path.to_path_buf()]
    } else {
        let here = std::env::current_dir().ok()?;
        here.ancestors().map(|dir| dir.join(path)).collect()
    };
    let found =
        candidates.into_iter().find(|p| p.metadata().is_ok_and(|m| m.is_file() && m.len() <= MAX_SOURCE_BYTES))?;
    std::fs::read_to_string(found).ok()
}

/// A share in percent with one decimal (`97.1 %`).
fn percent(share: f64) -> String {
    if share.is_finite() {
        format!("{:.1} %", 100.0 * share + 0.0)
    } else {
        format::ABSENT.to_owned()
    }
}

/// `mean / max` bits, or `—` for a line with no sum.
fn bits_pair(mean: Option<f64>, max: Option<f64>) -> String {
    match (mean, max) {
        (Some(mean), Some(max)) => format!("{} / {}", format::bits(mean), format::bits(max)),
        _ => format::ABSENT.to_owned(),
    }
}

/// The remedy in a table cell.
fn remedy_short(remedy: Remedy) -> &'static str {
    match remedy {
        Remedy::CarryPerturbation => "carry the perturbation",
        Remedy::CompensatedSum => "compensated sum",
    }
}

/// The remedy in a sentence.
fn remedy_sentence(remedy: Remedy, background: Option<f64>) -> String {
    match remedy {
        Remedy::CarryPerturbation => {
            let against = background.map_or_else(String::new, |b| format!(" of about {}", format::error(b)));
            format!(
                "carry the perturbation — the rise above the background{against} — instead of the absolute value, so \
that the large common part never enters the arithmetic"
            )
        }
        Remedy::CompensatedSum => "accumulate with compensated (Kahan–Babuška–Neumaier) summation, which carries \
the low part each addition rounds off"
            .to_owned(),
    }
}

fn pattern_words(pattern: Pattern) -> &'static str {
    match pattern {
        Pattern::Absorption => "absorption (a small increment on a large background)",
        Pattern::Cancellation => "cancellation (nearly equal values subtracted)",
        Pattern::LongSum => "a long sum (one value accumulating term after term)",
    }
}

fn hit_words(hit: &PatternHit) -> String {
    let what = match hit.pattern {
        Pattern::Cancellation => "cancelled",
        Pattern::Absorption | Pattern::LongSum => "of the smaller operand lost",
    };
    let background = hit.background.map_or_else(String::new, |b| format!(" against about {}", format::error(b)));
    format!(
        "{} at column {} ({}: {} bits {what} on average{background})",
        pattern_words(hit.pattern),
        hit.column,
        hit.op,
        format::bits(hit.bits)
    )
}

/// `file:line`, with the line's text when it was found.
fn line_name(file: &str, line: u32, source: Option<&str>) -> String {
    match source {
        Some(text) => format!("`{file}:{line}` `{text}`"),
        None => format!("`{file}:{line}` {SOURCE_NOT_FOUND}"),
    }
}

fn clipped(text: &str) -> String {
    if text.chars().count() <= SOURCE_WIDTH {
        text.to_owned()
    } else {
        format!("{}…", text.chars().take(SOURCE_WIDTH - 1).collect::<String>())
    }
}

fn blocks(facts: &AttributionFacts) -> Vec<Block> {
    let mut blocks = vec![Block::Paragraph {
        text: format!(
            "Measured after step {} of the {} audited, at each field's worst cell: each line's share is its \
propagated first-order part of the error (the shares add up to the whole, up to the residual), checked by rerunning \
the largest lines with their rounding removed (ablation; docs/attribution.md).",
            facts.step, facts.steps_audited
        ),
    }];
    for field in &facts.fields {
        blocks.extend(field_blocks(field));
    }
    if !facts.not_ranked.is_empty() {
        let names: Vec<String> = facts.not_ranked.iter().map(|n| format!("`{n}`")).collect();
        blocks.push(Block::Paragraph {
            text: format!(
                "Not ranked: {} (error below a tenth of what the tolerance allows; every line is in the trace's \
attribution record).",
                names.join(", ")
            ),
        });
    }
    for applied in &facts.applied {
        blocks.push(Block::Paragraph { text: applied_text(applied) });
    }
    let missing: std::collections::BTreeSet<&str> =
        facts.fields.iter().flat_map(|f| &f.lines).filter(|l| l.source.is_none()).map(|l| l.file.as_str()).collect();
    for file in missing {
        blocks.push(Block::Paragraph {
            text: format!(
                "The source file `{file}` was not found from here (looked for from the working directory and its \
parents): its lines are shown by number only."
            ),
        });
    }
    blocks
}

fn field_blocks(field: &FieldRanking) -> Vec<Block> {
    let at = if field.worst_cell.is_empty() { String::new() } else { format!(" in cell {:?}", field.worst_cell) };
    let error = field.error.map_or_else(|| format::LOST.to_owned(), format::error);
    let mut blocks = vec![Block::Paragraph { text: format!("Field `{}`: error {error}{at}.", field.field) }];
    if field.lines.is_empty() {
        // A share divides the error at the worst cell: there is none to divide when it is zero or not finite.
        blocks.push(Block::Paragraph {
            text: format!(
                "No line has a share of the error of `{}`: at the attributed step it is zero or not a finite number.",
                field.field
            ),
        });
        return blocks;
    }
    let head =
        ["#", "line", "source", "share", "cancelled bits (mean / max)", "absorbed bits (mean / max)", "runs", "remedy"];
    let align = vec![
        Align::Right,
        Align::Left,
        Align::Left,
        Align::Right,
        Align::Right,
        Align::Right,
        Align::Right,
        Align::Left,
    ];
    let rows = field
        .lines
        .iter()
        .map(|l| {
            let share = match l.ablated {
                Some(a) if (a - l.share).abs() > ABLATION_NOISE => {
                    format!("{} (ablated {})", percent(l.share), percent(a))
                }
                _ => percent(l.share),
            };
            let tone = if l.share.abs() >= SIGNIFICANT_SHARE && l.remedy.is_some() { Tone::Bad } else { Tone::Plain };
            vec![
                Cell { text: l.rank.to_string(), tone: Tone::Plain },
                Cell { text: format!("{}:{}", l.file, l.line), tone },
                Cell {
                    text: l.source.as_deref().map_or_else(|| SOURCE_NOT_FOUND.to_owned(), clipped),
                    tone: Tone::Plain,
                },
                Cell { text: share, tone },
                Cell { text: bits_pair(l.cancelled_bits_mean, l.cancelled_bits_max), tone: Tone::Plain },
                Cell { text: bits_pair(l.absorbed_bits_mean, l.absorbed_bits_max), tone: Tone::Plain },
                Cell { text: l.runs.to_string(), tone: Tone::Plain },
                Cell { text: l.remedy.map_or(format::ABSENT, remedy_short).to_owned(), tone: Tone::Plain },
            ]
        })
        .collect();
    blocks.push(Block::Table { head: head.iter().map(|h| (*h).to_owned()).collect(), align, rows });
    if field.lines.iter().any(|l| l.ablated.is_some_and(|a| (a - l.share).abs() > ABLATION_NOISE)) {
        blocks.push(Block::Paragraph {
            text: format!(
                "An ablated share is shown where it differs from the propagated one by more than {} points: removing a line's rounding moves the operands of the later operations by a fraction of an ulp, so their roundings change too, and the rerun measures that as well (docs/attribution.md); the propagated share is the first-order one.",
                100.0 * ABLATION_NOISE
            ),
        });
    }
    let source_of = |f: &Finding| {
        field.lines.iter().find(|l| l.file == f.file && l.line == f.line).and_then(|l| l.source.as_deref())
    };
    let mut said: Option<Remedy> = None;
    for (i, finding) in field.findings.iter().take(TOP_FINDINGS).enumerate() {
        let lead = if i == 0 { "Line to change" } else { "Also" };
        let hits: Vec<String> = finding.patterns.iter().map(hit_words).collect();
        let background = finding.patterns.iter().find_map(|h| h.background);
        // One remedy for several lines is said once, in full, at the first.
        let remedy = if said == Some(finding.remedy) {
            "the same".to_owned()
        } else {
            remedy_sentence(finding.remedy, background)
        };
        said = Some(finding.remedy);
        blocks.push(Block::Paragraph {
            text: format!(
                "{lead}: {} — {} of the error of `{}`: {}. Remedy: {remedy}.",
                line_name(&finding.file, finding.line, source_of(finding)),
                percent(finding.share),
                field.field,
                hits.join("; "),
            ),
        });
    }
    if field.findings.is_empty() {
        blocks.push(Block::Paragraph {
            text: format!(
                "No known pattern on the lines with {} or more of the error of `{}`: no remedy to suggest; the table \
says where the error is made.",
                percent(SIGNIFICANT_SHARE),
                field.field
            ),
        });
    }
    let mut parts = Vec::new();
    if let Some(r) = field.representation_share.filter(|r| r.abs() >= 0.01) {
        parts.push(format!("the constants and inputs as written carry {}", percent(r)));
    }
    if let Some(o) = field.other_share.filter(|o| *o != 0.0) {
        parts.push(format!("operation sites beyond the carried ones carry {} together", percent(o)));
    }
    if !parts.is_empty() {
        blocks.push(Block::Paragraph { text: format!("Besides the lines, {}.", parts.join("; ")) });
    }
    if let Some(r) = field.residual.filter(|r| r.abs() > RESIDUAL_LIMIT || !r.is_finite()) {
        blocks.push(Block::Paragraph {
            text: format!(
                "The shares leave {} of the error of `{}` unexplained (a residual above 10⁻³): operations the \
attribution did not see, such as ones on other threads; do not trust this table for that field.",
                percent(r),
                field.field
            ),
        });
    }
    blocks
}

fn applied_text(a: &AppliedOutcome) -> String {
    let how = match a.remedy {
        Remedy::CarryPerturbation => {
            let background = a.background.map_or_else(String::new, |b| format!(" {}", format::error(b)));
            format!("as the rise above the background{background} (the remedy above, applied)")
        }
        Remedy::CompensatedSum => "with compensated summation (the remedy, applied)".to_owned(),
    };
    let lead = format!("Remedy applied: field `{}` carries `{}` {how}.", a.remedied, a.field);
    let (Some(lens), Some(error), Some(remedied)) = (&a.lens, a.error, a.remedied_error) else {
        return format!("{lead} No judging lens measured both fields.");
    };
    let step = a.step.map_or_else(String::new, |s| format!(" at step {s}"));
    let drop = if !(error.is_finite() && remedied.is_finite()) {
        "one of the errors is lost, so no drop can be measured".to_owned()
    } else if remedied == 0.0 {
        "the error drops to zero".to_owned()
    } else if remedied < error {
        format!("the error drops {}", format::times(error / remedied))
    } else {
        "the error does not drop".to_owned()
    };
    format!(
        "{lead} Measured by lens {lens}{step}: `{}` {}, `{}` {}: {drop}.",
        a.field,
        format::error(error),
        a.remedied,
        format::error(remedied)
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_missing_or_foreign_source_file_is_not_read() {
        let mut sources = Sources::default();
        assert_eq!(sources.line("no/such/kernel.rs", 3), None);
        // Not a Rust file: never opened, whatever it holds (this crate's manifest exists).
        assert_eq!(sources.line("Cargo.toml", 1), None);
        // This very file, found from the working directory or a parent; line numbers start at 1.
        let here = file!();
        assert_eq!(sources.line(here, 1).as_deref(), include_str!("attribution.rs").lines().next());
        assert_eq!(sources.line(here, 0), None);
    }

    #[test]
    fn shares_and_bits_read_as_a_person_writes_them() {
        assert_eq!(percent(0.97149), "97.1 %");
        assert_eq!(percent(-0.0), "0.0 %");
        assert_eq!(percent(f64::NAN), format::ABSENT);
        assert_eq!(bits_pair(Some(9.891), Some(10.07)), "9.9 / 10.1");
        assert_eq!(bits_pair(None, None), format::ABSENT);
        assert_eq!(clipped(&"x".repeat(200)).chars().count(), SOURCE_WIDTH);
    }
}
