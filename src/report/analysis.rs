//! What a report says, worked out once from a trace: every format (text, Markdown, HTML, JSON, CSV) renders this
//! and nothing else, so they cannot disagree.
//!
//! The analysis holds typed facts — per field and lens the error history and outcome ([`Outcome`]), which lenses
//! judge (one rule, [`crate::verdict::judging`]), the worst field, the first crossing, bound against estimate,
//! digit findings, events, the verdict — and an ordered list of [`Section`]s. A section carries its typed facts as
//! JSON (`data`) and its wording as generic [`Block`]s (paragraphs, key–value facts, tables), so a renderer needs
//! to know nothing about a section to show it. **Adding a section** (a certified lens's guarantee, a precision
//! sweep, a per-line attribution table): add a [`SectionKind`], compute its facts in a function of this module,
//! and push a [`Section`] at its place in [`Analysis::of`]; every format shows it without change, and a renderer
//! that wants a special view of it (the HTML plots) matches on its kind.
//!
//! Where a closing summary gives a number (first crossing, final error), it wins: the audit saw every step, the
//! trace may hold only log-spaced ones. Without a summary (an incomplete run) the numbers come from the recorded
//! steps and the report says so.

use serde::Serialize;

use super::format;
use super::words;
use crate::trace::{EventName, EventRecord, EventTotal, FieldStep, Growth, Status, Trace};
use crate::verdict::{judging_by, Basis, Standing};

/// Rows of the per-step table per lens (all rows go to CSV and JSON).
const TABLE_ROWS: usize = 14;
/// At most this many events are listed one by one in an incomplete run (the rest are counted). Common practice,
/// no source.
const MAX_LISTED_EVENTS: usize = 40;
/// Digits are judged over the field ("normwise"): a cell's error counts against `max(|u_cell|, |u|_max)`, the
/// largest value of the field, so a cell near zero — whose relative error is large whatever the arithmetic —
/// cannot on its own make the report say "no correct digit". A result has no correct bit when the error is at
/// least the value (relative error ≥ 1 = 2⁰); it keeps one when the error is at most half of it.
const NO_DIGIT: f64 = 1.0;
const ONE_BIT: f64 = 0.5;

/// One recorded point of an error history. A ratio written as `null` (infinite) reads back as NaN and is held here
/// as +∞, so a field that blew up ranks as the worst, whatever the sign bit of its NaN.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Point {
    pub step: u64,
    pub max_err: f64,
    pub bound: Option<f64>,
    pub tol_ratio: f64,
    pub max_abs: f64,
}

/// The history and outcome of one field under one lens.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Outcome {
    pub field: String,
    pub lens: String,
    /// The lens gives guaranteed bounds (the header's `guaranteed_lenses`); its `max_err` is then that bound too.
    pub guaranteed: bool,
    /// The lens judges the verdict, the worst field and the gate ([`crate::verdict::judging`]).
    pub judges: bool,
    #[serde(skip)]
    pub points: Vec<Point>,
    pub first_crossing: Option<u64>,
    pub final_step: Option<u64>,
    pub final_max_err: Option<f64>,
    pub final_bound: Option<f64>,
    /// The largest `err / allowed` over the recorded steps.
    pub peak_tol_ratio: Option<f64>,
    pub growth: Option<Growth>,
    pub extrapolated_err: Option<f64>,
}

/// A guaranteed bound next to the estimate of the same field at the last recorded step.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct BoundComparison {
    pub field: String,
    pub step: u64,
    pub lens: String,
    pub bound: f64,
    pub estimate_lens: String,
    pub estimate: f64,
}

/// What the guaranteed lenses say about the digits of a field, or an estimate they prove wrong.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "finding", rename_all = "snake_case")]
pub enum DigitFinding {
    /// The guaranteed bound is at least the field's largest value: no digit is guaranteed; `estimates_agree` when
    /// every estimate of the field also keeps less than one bit (over the field).
    NoDigit {
        field: String,
        step: u64,
        lens: String,
        bound: f64,
        max_abs: f64,
        estimates: usize,
        estimates_agree: bool,
    },
    /// An estimate puts its value further from the primal than the guaranteed bound allows: it is wrong there.
    EstimateWrong { field: String, step: u64, lens: String, estimate: f64, bound_lens: String, bound: f64 },
}

/// A note the verdict carries about the run as a whole.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "note", rename_all = "snake_case")]
pub enum Note {
    BoundLost {
        lens: String,
        field: String,
        step: u64,
        bound: Option<f64>,
        estimate: Option<f64>,
    },
    UndecidedPaths {
        sites: usize,
        first_step: u64,
        first_site: Option<String>,
    },
    PrimalMismatch {
        lens: String,
        field: String,
        step: u64,
    },
    /// A certified lens's guarantee: held, with its intervals, or where it stops (`super::certificate`).
    Certificate(super::certificate::CertificateNote),
}

/// The verdict as a report shows it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct VerdictView {
    pub status: Status,
    pub until_step: Option<u64>,
    pub least_precision_bits: Option<u32>,
    pub label: String,
    pub line: String,
    /// The audit's own explanation, without the caution (which closes every report).
    pub explanation: String,
}

/// How a cell or line should stand out, where the format can show it.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Tone {
    Plain,
    Good,
    Warn,
    Bad,
}

/// A table cell.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Cell {
    pub text: String,
    pub tone: Tone,
}

impl Cell {
    fn plain(text: impl Into<String>) -> Cell {
        Cell { text: text.into(), tone: Tone::Plain }
    }
}

/// How a column lines up in formats that align columns (numbers to the right).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Align {
    Left,
    Right,
}

/// A piece of wording, in a form every format can show.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "block", rename_all = "snake_case")]
pub enum Block {
    /// Key–value lines.
    Facts {
        facts: Vec<(String, String)>,
    },
    /// Something the reader must notice first.
    Notice {
        text: String,
    },
    /// The verdict: a short label (`ENOUGH UNTIL STEP 41`), its sentence, tone and explanation.
    Verdict {
        label: String,
        line: String,
        tone: Tone,
        explanation: String,
    },
    Paragraph {
        text: String,
    },
    Table {
        head: Vec<String>,
        align: Vec<Align>,
        rows: Vec<Vec<Cell>>,
    },
    /// Where formats that draw plots put them; the others skip it.
    Figures,
}

/// The kinds of section, in the order [`Analysis::of`] lays them out.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SectionKind {
    Run,
    Notice,
    Verdict,
    Drift,
    Outcomes,
    /// The precision sweep's runs and least precision ([`super::sweep`]), when the trace holds one.
    Sweep,
    /// A certified lens's guarantee (`super::certificate`).
    Certificate,
    Steps,
    Bounds,
    Digits,
    /// Where the error comes from, per source line (`super::attribution`).
    Attribution,
    Figures,
    Events,
    Caution,
}

/// One section of a report: its kind, its title (none for the untitled ones), its typed facts as JSON, and its
/// wording.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Section {
    pub kind: SectionKind,
    pub title: Option<String>,
    pub data: serde_json::Value,
    pub blocks: Vec<Block>,
}

impl Section {
    pub(crate) fn new(kind: SectionKind, title: Option<String>, data: impl Serialize, blocks: Vec<Block>) -> Section {
        // Serializing plain structs of strings, numbers and options cannot fail; `Null` keeps this panic-free.
        let data = serde_json::to_value(data).unwrap_or(serde_json::Value::Null);
        Section { kind, title, data, blocks }
    }
}

/// One step of one field under one lens: the rows of CSV and of JSON's `rows`.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Row {
    pub step: u64,
    pub lens: String,
    pub field: String,
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

/// The columns of [`Row`], in order.
pub const ROW_COLUMNS: [&str; 13] = [
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

/// Everything a renderer needs.
#[derive(Clone, Debug)]
pub struct Analysis<'a> {
    pub trace: &'a Trace,
    /// Field-major, then lens in header order.
    pub outcomes: Vec<Outcome>,
    /// Whether estimates or bounds judge.
    pub basis: Basis,
    pub comparisons: Vec<BoundComparison>,
    pub digits: Vec<DigitFinding>,
    pub notes: Vec<Note>,
    pub verdict: Option<VerdictView>,
    pub notice: Option<String>,
    pub headline: String,
    pub sections: Vec<Section>,
}

/// A number a lens may not have had: NaN (written `null` in the trace) becomes `None`.
#[must_use]
pub fn known(value: f64) -> Option<f64> {
    (!value.is_nan()).then_some(value)
}

/// NaN (an infinite magnitude written as `null`) as +∞, whatever its sign bit.
fn severity(x: f64) -> f64 {
    if x.is_nan() {
        f64::INFINITY
    } else {
        x
    }
}

impl<'a> Analysis<'a> {
    /// Works the report out of a trace.
    #[must_use]
    pub fn of(trace: &'a Trace) -> Analysis<'a> {
        let mut outcomes = Vec::new();
        for field in &trace.header.fields {
            for lens in &trace.header.lenses {
                outcomes.push(outcome(trace, &field.name, lens));
            }
        }
        let (basis, judging_names) = {
            let (basis, judges) = judging_by(&trace.header.lenses, |l| super::certificate::standing(trace, l));
            (basis, judges.into_iter().cloned().collect::<Vec<String>>())
        };
        for o in &mut outcomes {
            o.judges = judging_names.contains(&o.lens);
        }
        let comparisons = comparisons(&outcomes);
        let digits = digit_findings(trace, &outcomes);
        let mut notes = notes(&trace.events, trace.summary.as_ref().map_or(&[][..], |s| &s.event_totals));
        notes.extend(super::certificate::notes(trace));
        let verdict = trace.summary.as_ref().map(|s| {
            let v = &s.verdict;
            let mut view = VerdictView {
                status: v.status,
                until_step: v.until_step,
                least_precision_bits: v.least_precision_bits,
                label: words::status_label(v.status, v.until_step),
                line: words::verdict_line(Some((v.status, v.until_step, v.least_precision_bits)), &trace.header.float),
                explanation: v.text.replace(words::CAUTION, "").trim_end().to_owned(),
            };
            // A sweep in the trace answers what the audit's own verdict could not: the least precision.
            if let Some(sentence) = super::sweep::verdict_sentence(trace) {
                view.least_precision_bits = trace.sweep.as_ref().and_then(|s| s.least_bits);
                view.line = format!(
                    "{} {sentence}",
                    words::verdict_line(Some((v.status, v.until_step, None)), &trace.header.float)
                );
                view.explanation = view.explanation.replace(words::NO_SWEEP, &sentence);
            }
            super::certificate::mark_verdict(&mut view, basis);
            view
        });
        let notice = (!trace.is_complete()).then(|| {
            words::incomplete_notice(
                trace.last_step(),
                trace.header.steps_audited.unwrap_or(trace.header.steps_planned),
                trace.summary.is_some(),
                trace.truncated_tail,
            )
        });
        let mut analysis = Analysis {
            trace,
            outcomes,
            basis,
            comparisons,
            digits,
            notes,
            verdict,
            notice,
            headline: String::new(),
            sections: Vec::new(),
        };
        analysis.headline = words::headline(analysis.worst(), &analysis.early_bounds(), analysis.basis);
        analysis.sections = analysis.lay_out();
        analysis
    }

    /// The verdict in one sentence, naming the program's float from the header; for a trace without a verdict,
    /// why there is none.
    #[must_use]
    pub fn verdict_line(&self) -> String {
        self.verdict.as_ref().map_or_else(|| words::verdict_line(None, &self.trace.header.float), |v| v.line.clone())
    }

    /// The outcomes that judge.
    pub fn judging(&self) -> impl Iterator<Item = &Outcome> {
        self.outcomes.iter().filter(|o| o.judges)
    }

    /// The judging outcome that drifts furthest towards (or past) the tolerance: the largest peak `err / allowed`
    /// (an infinite one ranks first).
    #[must_use]
    pub fn worst(&self) -> Option<&Outcome> {
        self.judging()
            .filter(|o| o.peak_tol_ratio.is_some())
            .max_by(|a, b| a.peak_tol_ratio.unwrap_or(0.0).total_cmp(&b.peak_tol_ratio.unwrap_or(0.0)))
    }

    /// Guaranteed bounds that cross the tolerance before every estimate of their field (or while none does):
    /// `(lens, field, step)`. Empty when the bounds judge.
    fn early_bounds(&self) -> Vec<(String, String, u64)> {
        if self.basis == Basis::Bound {
            return Vec::new();
        }
        self.outcomes
            .iter()
            .filter(|o| o.guaranteed)
            .filter_map(|o| o.first_crossing.map(|step| (o, step)))
            .filter(|(o, step)| {
                let estimate = |e: &&Outcome| e.judges && e.field == o.field;
                self.outcomes.iter().filter(estimate).all(|e| e.first_crossing.is_none_or(|c| c > *step))
            })
            .map(|(o, step)| (o.lens.clone(), o.field.clone(), step))
            .collect()
    }

    /// The per-step rows, in trace order.
    #[must_use]
    pub fn rows(&self) -> Vec<Row> {
        self.trace
            .steps
            .iter()
            .flat_map(|step| step.fields.iter().map(move |f| row(step.step, &step.lens, f)))
            .collect()
    }

    fn lay_out(&self) -> Vec<Section> {
        let mut sections = vec![self.run_section()];
        if let Some(notice) = &self.notice {
            sections.push(Section::new(
                SectionKind::Notice,
                None,
                notice,
                vec![Block::Notice { text: notice.clone() }],
            ));
        }
        sections.push(self.verdict_section());
        sections.push(self.drift_section());
        sections.push(self.outcome_section());
        sections.extend(super::sweep::section(self.trace));
        sections.extend(super::certificate::sections(self.trace));
        sections.extend(self.step_sections());
        if let Some(bounds) = self.bounds_section() {
            sections.push(bounds);
        }
        if !self.digits.is_empty() {
            let blocks = self.digits.iter().map(|d| Block::Paragraph { text: digit_text(d) }).collect();
            sections.push(Section::new(
                SectionKind::Digits,
                Some("Digits and consistency".into()),
                &self.digits,
                blocks,
            ));
        }
        sections.extend(super::attribution::section(self));
        sections.push(Section::new(SectionKind::Figures, None, (), vec![Block::Figures]));
        sections.push(self.events_section());
        sections.push(Section::new(
            SectionKind::Caution,
            None,
            words::CAUTION,
            vec![Block::Paragraph { text: words::CAUTION.to_owned() }],
        ));
        sections
    }

    fn run_section(&self) -> Section {
        let trace = self.trace;
        let h = &trace.header;
        let title = if h.scenario.is_empty() {
            format!("twinstep audit of {}", non_empty(&h.kernel, "an unnamed kernel"))
        } else {
            format!("twinstep audit of {} — {}", non_empty(&h.kernel, "an unnamed kernel"), h.scenario)
        };
        let fields: Vec<String> = h
            .fields
            .iter()
            .map(|f| {
                let shape: Vec<String> = f.shape.iter().map(usize::to_string).collect();
                format!("{} [{}]", f.name, shape.join(" × "))
            })
            .collect();
        let audited = h.steps_audited.unwrap_or(h.steps_planned);
        let steps = match trace.summary.as_ref().map(|s| s.steps_done) {
            Some(done) => format!("{done} of {audited} audited, {} planned", h.steps_planned),
            None => format!(
                "{} recorded of {audited} to audit, {} planned",
                trace.last_step().map_or("none".to_owned(), |s| format!("up to step {s}")),
                h.steps_planned
            ),
        };
        let mut facts = vec![
            ("fields".to_owned(), fields.join(", ")),
            ("lenses".to_owned(), h.lenses.join(", ")),
            ("tolerance".to_owned(), h.tolerance.describe()),
            ("steps".to_owned(), steps),
            (
                "machine".to_owned(),
                format!(
                    "{} {} ({} cpus), twinstep {} {} build",
                    h.machine.os, h.machine.arch, h.machine.cpus, h.build.twinstep, h.build.profile
                ),
            ),
        ];
        if let Some(wall) = trace.summary.as_ref().and_then(|s| known(s.wall_s)) {
            facts.push(("wall time".to_owned(), format!("{wall:.2} s")));
        }
        Section::new(SectionKind::Run, Some(title), &facts, vec![Block::Facts { facts: facts.clone() }])
    }

    fn verdict_section(&self) -> Section {
        let (label, line, tone, explanation) = match &self.verdict {
            Some(v) => {
                let tone = match v.status {
                    Status::Enough => Tone::Good,
                    Status::EnoughUntil => Tone::Warn,
                    Status::NotEnough => Tone::Bad,
                };
                (v.label.clone(), v.line.clone(), tone, v.explanation.clone())
            }
            None => ("none".to_owned(), self.verdict_line(), Tone::Warn, String::new()),
        };
        Section::new(
            SectionKind::Verdict,
            None,
            (&self.verdict, &self.notes),
            vec![Block::Verdict { label, line, tone, explanation }],
        )
    }

    fn drift_section(&self) -> Section {
        let mut blocks = vec![Block::Paragraph { text: self.headline.clone() }];
        let last = self
            .worst()
            .and_then(|w| finals(self.trace).into_iter().find(|(lens, _, f)| *lens == w.lens && f.name == w.field));
        if let Some((lens, step, f)) = last {
            let representation = f.representation_err.map_or_else(String::new, |r| {
                format!(
                    "; representing the program's literals and constants contributes up to {} in a cell, the rest is \
arithmetic",
                    format::error(r)
                )
            });
            let what = if f.max_err.is_finite() {
                format!(
                    "the largest error is {} in cell {:?}, {} of what the tolerance allows",
                    format::error(f.max_err),
                    f.worst_cell,
                    format::ratio(severity(f.tol_ratio))
                )
            } else {
                format!("its error estimate is lost (not a finite number) in cell {:?}", f.worst_cell)
            };
            blocks.push(Block::Paragraph {
                text: format!(
                    "Worst field: {} (lens {lens}): at step {step} {what}, {} correct bits{representation}.",
                    f.name,
                    format::bits(f.correct_bits)
                ),
            });
        }
        let crossings: Vec<&EventRecord> =
            self.trace.events.iter().filter(|e| e.kind == EventName::ToleranceCrossed).collect();
        let judges = |lens: &str| self.outcomes.iter().any(|o| o.lens == lens && o.judges);
        let first = crossings.iter().filter(|e| judges(&e.lens)).min_by_key(|e| e.step);
        blocks.push(Block::Paragraph {
            text: match first {
                Some(e) => format!(
                    "First crossing: step {}, field {}, lens {}: {}.",
                    e.step,
                    e.field.as_deref().unwrap_or("?"),
                    e.lens,
                    e.detail
                ),
                None => "First crossing: none, no judging lens went beyond the tolerance.".to_owned(),
            },
        });
        let bound = |lens: &str| !judges(lens) && self.trace.is_guaranteed(lens);
        if let Some(bound) = crossings.iter().filter(|e| bound(&e.lens)).min_by_key(|e| e.step) {
            blocks.push(Block::Paragraph {
                text: format!(
                    "A guaranteed bound crosses the tolerance first at step {} (lens {}, field {}).",
                    bound.step,
                    bound.lens,
                    bound.field.as_deref().unwrap_or("?")
                ),
            });
        }
        let data = serde_json::json!({
            "basis": self.basis,
            "worst": self.worst().map(|o| (&o.field, &o.lens)),
            "first_crossing": first.map(|e| (e.step, &e.field, &e.lens)),
        });
        Section::new(SectionKind::Drift, None, data, blocks)
    }

    fn outcome_section(&self) -> Section {
        let head = [
            "field",
            "lens",
            "final error",
            "guaranteed bound",
            "peak err/allowed",
            "first crossing",
            "growth",
            "at the horizon",
        ];
        let complete = self.trace.is_complete();
        let rows = self.outcomes.iter().map(|o| outcome_row(o, complete)).collect();
        let align = vec![
            Align::Left,
            Align::Left,
            Align::Right,
            Align::Right,
            Align::Right,
            Align::Left,
            Align::Left,
            Align::Right,
        ];
        Section::new(
            SectionKind::Outcomes,
            Some("Fields".into()),
            &self.outcomes,
            vec![Block::Table { head: strings(&head), align, rows }],
        )
    }

    fn step_sections(&self) -> Vec<Section> {
        let head = ["step", "field", "max err", "mean err", "max rel", "bound", "bits", "worst cell", "err/allowed"];
        let mut align = vec![Align::Right; head.len()];
        (align[1], align[7]) = (Align::Left, Align::Left);
        let mut sections = Vec::new();
        for lens in &self.trace.header.lenses {
            let steps: Vec<_> = self.trace.steps.iter().filter(|s| &s.lens == lens).collect();
            if steps.is_empty() {
                continue;
            }
            let shown = spread(&steps, TABLE_ROWS);
            let rows = shown
                .iter()
                .flat_map(|record| {
                    record.fields.iter().map(|f| {
                        vec![
                            Cell::plain(record.step.to_string()),
                            Cell::plain(f.name.clone()),
                            Cell::plain(format::error(f.max_err)),
                            Cell::plain(format::error(f.mean_err)),
                            Cell::plain(format::error(f.max_rel_err)),
                            Cell::plain(format::bound(self.bound_cell(lens, f))),
                            Cell::plain(format::bits(f.correct_bits)),
                            Cell::plain(format!("{:?}", f.worst_cell)),
                            Cell { text: format::ratio(f.tol_ratio), tone: ratio_tone(Some(severity(f.tol_ratio))) },
                        ]
                    })
                })
                .collect();
            let title = format!("Error by step, lens {lens} ({} of {} recorded steps shown)", shown.len(), steps.len());
            let data =
                serde_json::json!({ "lens": lens, "shown_steps": shown.iter().map(|s| s.step).collect::<Vec<_>>() });
            sections.push(Section::new(
                SectionKind::Steps,
                Some(title),
                data,
                vec![Block::Table { head: strings(&head), align: align.clone(), rows }],
            ));
        }
        sections
    }

    /// A guaranteed lens's bound as a table shows it: `null` there means it overflowed (`docs/trace.md`).
    fn bound_cell(&self, lens: &str, f: &FieldStep) -> Option<f64> {
        if self.trace.is_guaranteed(lens) {
            Some(f.bound.unwrap_or(f64::INFINITY))
        } else {
            f.bound
        }
    }

    fn bounds_section(&self) -> Option<Section> {
        let lost: Vec<&EventRecord> = self.trace.events.iter().filter(|e| e.kind == EventName::BoundLost).collect();
        if self.comparisons.is_empty() && lost.is_empty() {
            return None;
        }
        let mut blocks: Vec<Block> =
            self.comparisons.iter().map(|c| Block::Paragraph { text: comparison_text(c) }).collect();
        for e in &lost {
            blocks.push(Block::Paragraph {
                text: format!(
                    "BOUND LOST at step {} for field {} (lens {}): bound {} while the estimate is {}. {}",
                    e.step,
                    e.field.as_deref().unwrap_or("?"),
                    e.lens,
                    format::bound(e.bound),
                    format::error_opt(e.estimate),
                    e.detail
                ),
            });
        }
        let data = serde_json::json!({ "comparisons": self.comparisons, "bound_lost": lost });
        Some(Section::new(
            SectionKind::Bounds,
            Some("Guaranteed bound against estimate (last recorded step)".into()),
            data,
            blocks,
        ))
    }

    fn events_section(&self) -> Section {
        let site =
            |s: &Option<crate::trace::SiteRecord>| s.as_ref().map_or(format::ABSENT.to_owned(), ToString::to_string);
        let field = |f: &Option<String>| f.clone().unwrap_or_else(|| format::ABSENT.to_owned());
        let tone = |kind: EventName| match kind {
            EventName::Nan | EventName::Infinity | EventName::ToleranceCrossed | EventName::PrimalMismatch => Tone::Bad,
            _ => Tone::Warn,
        };
        let title = Some("Events".to_owned());
        // The totals count every event of the run; a trace without them (an incomplete run, or one written before
        // totals existed) lists the event records it has.
        if let Some(totals) = self.trace.summary.as_ref().map(|s| &s.event_totals).filter(|t| !t.is_empty()) {
            let head = ["event", "kind", "lens", "field", "site", "count", "steps", "first step", "last step"];
            let mut align = vec![Align::Left; 5];
            align.extend([Align::Right; 4]);
            let rows = totals
                .iter()
                .map(|t| {
                    vec![
                        Cell { text: t.kind.wording().to_owned(), tone: tone(t.kind) },
                        Cell::plain(t.kind.name()),
                        Cell::plain(t.lens.clone()),
                        Cell::plain(field(&t.field)),
                        Cell::plain(site(&t.site)),
                        Cell::plain(t.count.to_string()),
                        Cell::plain(t.steps.to_string()),
                        Cell::plain(t.first_step.to_string()),
                        Cell::plain(t.last_step.to_string()),
                    ]
                })
                .collect();
            return Section::new(
                SectionKind::Events,
                title,
                totals,
                vec![Block::Table { head: strings(&head), align, rows }],
            );
        }
        let events = &self.trace.events;
        if events.is_empty() {
            return Section::new(SectionKind::Events, title, events, vec![no_events()]);
        }
        let head = ["step", "event", "kind", "lens", "field", "site", "count", "detail"];
        let align = vec![
            Align::Right,
            Align::Left,
            Align::Left,
            Align::Left,
            Align::Left,
            Align::Left,
            Align::Right,
            Align::Left,
        ];
        let rows = events
            .iter()
            .take(MAX_LISTED_EVENTS)
            .map(|e| {
                vec![
                    Cell::plain(e.step.to_string()),
                    Cell { text: e.kind.wording().to_owned(), tone: tone(e.kind) },
                    Cell::plain(e.kind.name()),
                    Cell::plain(e.lens.clone()),
                    Cell::plain(field(&e.field)),
                    Cell::plain(site(&e.site)),
                    Cell::plain(e.count.to_string()),
                    Cell::plain(e.detail.clone()),
                ]
            })
            .collect();
        let mut blocks = vec![Block::Table { head: strings(&head), align, rows }];
        if events.len() > MAX_LISTED_EVENTS {
            blocks.push(Block::Paragraph {
                text: format!(
                    "… and {} more events (all of them are in the trace and in `--format json`).",
                    events.len() - MAX_LISTED_EVENTS
                ),
            });
        }
        Section::new(SectionKind::Events, title, events, blocks)
    }
}

fn no_events() -> Block {
    Block::Paragraph {
        text: "None: no NaN, infinity, undecided comparison or index conversion, divisor that may be zero, or primal \
mismatch."
            .to_owned(),
    }
}

fn strings(items: &[&str]) -> Vec<String> {
    items.iter().map(|s| (*s).to_owned()).collect()
}

fn non_empty<'a>(text: &'a str, fallback: &'a str) -> &'a str {
    if text.is_empty() {
        fallback
    } else {
        text
    }
}

/// Picks at most `rows` items spread evenly over `items`, always keeping the first and the last.
fn spread<'b, T>(items: &[&'b T], rows: usize) -> Vec<&'b T> {
    if items.len() <= rows {
        return items.to_vec();
    }
    let last = items.len() - 1;
    let mut picked: Vec<usize> = (0..rows).map(|k| k * last / (rows - 1)).collect();
    picked.dedup();
    picked.into_iter().map(|i| items[i]).collect()
}

fn row(step: u64, lens: &str, f: &FieldStep) -> Row {
    Row {
        step,
        lens: lens.to_owned(),
        field: f.name.clone(),
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
    }
}

fn outcome(trace: &Trace, field: &str, lens: &str) -> Outcome {
    let mut points: Vec<Point> = trace
        .steps
        .iter()
        .filter(|s| s.lens == lens)
        .flat_map(|s| {
            s.fields.iter().filter(|f| f.name == field).map(|f| Point {
                step: s.step,
                max_err: severity(f.max_err),
                bound: f.bound,
                tol_ratio: severity(f.tol_ratio),
                max_abs: f.max_abs,
            })
        })
        .collect();
    points.sort_by_key(|p| p.step);
    let peak_tol_ratio = points.iter().map(|p| p.tol_ratio).reduce(f64::max);
    let crossing_in_steps = points.iter().find(|p| p.tol_ratio > 1.0).map(|p| p.step);
    let last = points.last().copied();
    let result = trace.summary.as_ref().and_then(|s| s.results.iter().find(|r| r.lens == lens && r.field == field));
    Outcome {
        field: field.to_owned(),
        lens: lens.to_owned(),
        guaranteed: trace.is_guaranteed(lens),
        judges: false,
        first_crossing: result.and_then(|r| r.first_crossing).or(crossing_in_steps),
        final_step: last.map(|p| p.step),
        final_max_err: result.map(|r| severity(r.final_max_err)).or(last.map(|p| p.max_err)),
        final_bound: result.map_or(last.and_then(|p| p.bound), |r| r.final_bound.or(last.and_then(|p| p.bound))),
        peak_tol_ratio,
        growth: result.and_then(|r| r.growth),
        extrapolated_err: result.and_then(|r| r.extrapolated_err),
        points,
    }
}

fn ratio_tone(ratio: Option<f64>) -> Tone {
    match ratio {
        Some(r) if r > 1.0 => Tone::Bad,
        Some(r) if r > 0.1 => Tone::Warn,
        Some(_) => Tone::Good,
        None => Tone::Plain,
    }
}

fn outcome_row(o: &Outcome, complete: bool) -> Vec<Cell> {
    let crossed = o.first_crossing.is_some();
    vec![
        Cell::plain(o.field.clone()),
        // A guaranteed lens's error is its bound, which may run away while the error does not: say which it is.
        Cell::plain(if o.guaranteed { format!("{} (guaranteed)", o.lens) } else { o.lens.clone() }),
        Cell::plain(format::error_opt(o.final_max_err)),
        Cell::plain(if o.guaranteed {
            format::bound(Some(o.final_bound.unwrap_or(f64::INFINITY)))
        } else {
            format::bound(o.final_bound)
        }),
        Cell { text: format::ratio_opt(o.peak_tol_ratio), tone: ratio_tone(o.peak_tol_ratio) },
        Cell {
            text: match (o.first_crossing, complete) {
                (Some(step), _) => format!("step {step}"),
                (None, true) => "never".to_owned(),
                (None, false) => "none so far".to_owned(),
            },
            tone: if crossed { Tone::Bad } else { Tone::Good },
        },
        Cell::plain(o.growth.as_ref().map_or(format::ABSENT.to_owned(), Growth::describe)),
        Cell::plain(format::error_opt(o.extrapolated_err)),
    ]
}

/// Each guaranteed lens's final bound against the estimate of the same field (an estimating lens's, else its own).
fn comparisons(outcomes: &[Outcome]) -> Vec<BoundComparison> {
    outcomes
        .iter()
        .filter(|o| o.guaranteed && o.final_step.is_some())
        .map(|o| {
            let estimate = outcomes.iter().find(|e| !e.guaranteed && e.field == o.field && e.final_max_err.is_some());
            let (estimate_lens, estimate) = match estimate {
                Some(e) => (e.lens.clone(), e.final_max_err.unwrap_or(f64::NAN)),
                None => (o.lens.clone(), o.final_max_err.unwrap_or(f64::NAN)),
            };
            BoundComparison {
                field: o.field.clone(),
                step: o.final_step.unwrap_or(0),
                lens: o.lens.clone(),
                // A guaranteed lens's bound written as `null` overflowed (`docs/trace.md`).
                bound: o.final_bound.unwrap_or(f64::INFINITY),
                estimate_lens,
                estimate,
            }
        })
        .collect()
}

fn comparison_text(c: &BoundComparison) -> String {
    let source = if c.estimate_lens == c.lens {
        format!("lens {}'s own estimate", c.lens)
    } else {
        format!("estimate of lens {}", c.estimate_lens)
    };
    let how = if !c.bound.is_finite() {
        "the bound overflowed".to_owned()
    } else if !c.estimate.is_finite() {
        "the estimate is lost".to_owned()
    } else if c.estimate > 0.0 {
        format!("the bound is {} larger", format::times(c.bound / c.estimate))
    } else {
        "the estimate is 0".to_owned()
    };
    format!(
        "field {} at step {}: bound {} (lens {}) against {} ({source}), {how}.",
        c.field,
        c.step,
        format::bound(Some(c.bound)),
        c.lens,
        format::error(c.estimate)
    )
}

/// The error of a field's last record relative to the field's largest value (see [`NO_DIGIT`]); for traces
/// without `max_abs`, the recorded worst relative error.
fn normwise(err: f64, f: &FieldStep) -> f64 {
    if f.max_abs > 0.0 && f.max_abs.is_finite() {
        severity(err) / f.max_abs
    } else {
        // No field scale recorded (older traces): the worst cell's relative error, 2^-bits.
        (-f.correct_bits).exp2()
    }
}

/// The last record of each lens and field.
fn finals(trace: &Trace) -> Vec<(&str, u64, &FieldStep)> {
    let mut last: Vec<(&str, u64, &FieldStep)> = Vec::new();
    for record in &trace.steps {
        for f in &record.fields {
            match last.iter_mut().find(|(l, _, g)| *l == record.lens && g.name == f.name) {
                Some(slot) => *slot = (&record.lens, record.step, f),
                None => last.push((&record.lens, record.step, f)),
            }
        }
    }
    last
}

/// What the guaranteed lenses say about the digits of the result, and whether an estimate contradicts them.
///
/// A guaranteed lens encloses the exact result in `[primal − bound, primal + bound]`. Two conclusions follow from
/// the numbers alone. When the bound is at least the field's largest value, no digit of the field is guaranteed;
/// when the estimates agree (they too put the error at the field's scale), the f64 result has no correct digit.
/// When an estimating lens puts its own value further from the primal than the guaranteed bound allows, that
/// value lies outside the enclosure in some cell: the estimate is wrong there, and the report says so.
fn digit_findings(trace: &Trace, outcomes: &[Outcome]) -> Vec<DigitFinding> {
    let finals = finals(trace);
    let guaranteed = |lens: &str| outcomes.iter().any(|o| o.lens == lens && o.guaranteed);
    let mut findings = Vec::new();
    // Beside a certificate that holds, a per-operation bound that allows no digit says nothing about the result.
    let certified = trace.header.lenses.iter().any(|l| super::certificate::standing(trace, l) == Standing::Guarantee);
    for (lens, step, f) in finals.iter().filter(|(lens, _, _)| guaranteed(lens) && !certified) {
        // A guaranteed lens's bound written as `null` overflowed: it guarantees nothing.
        let bound = f.bound.unwrap_or(f64::INFINITY);
        if normwise(bound, f) < NO_DIGIT {
            continue;
        }
        let estimates: Vec<_> = finals.iter().filter(|(l, _, g)| !guaranteed(l) && g.name == f.name).collect();
        let estimates_agree = estimates.iter().all(|(_, _, g)| normwise(g.max_err, g) > ONE_BIT);
        findings.push(DigitFinding::NoDigit {
            field: f.name.clone(),
            step: *step,
            lens: (*lens).to_owned(),
            bound,
            max_abs: f.max_abs,
            estimates: estimates.len(),
            estimates_agree,
        });
    }
    // Contradictions, at every step both kinds of lens recorded; the first one per estimating lens and field.
    let mut seen: Vec<(&str, &str)> = Vec::new();
    for estimate in trace.steps.iter().filter(|s| !guaranteed(&s.lens)) {
        for e in &estimate.fields {
            if seen.contains(&(estimate.lens.as_str(), e.name.as_str())) {
                continue;
            }
            let guarantee = trace
                .steps
                .iter()
                .filter(|s| s.step == estimate.step && guaranteed(&s.lens))
                .flat_map(|s| s.fields.iter().map(move |g| (s, g)))
                .find(|(_, g)| g.name == e.name && g.bound.is_some_and(|b| e.max_err > b));
            if let Some((s, g)) = guarantee {
                seen.push((estimate.lens.as_str(), e.name.as_str()));
                findings.push(DigitFinding::EstimateWrong {
                    field: e.name.clone(),
                    step: estimate.step,
                    lens: estimate.lens.clone(),
                    estimate: e.max_err,
                    bound_lens: s.lens.clone(),
                    bound: g.bound.unwrap_or(f64::INFINITY),
                });
            }
        }
    }
    findings
}

fn digit_text(d: &DigitFinding) -> String {
    match d {
        DigitFinding::NoDigit { field, step, lens, bound, estimates, estimates_agree: true, .. } => format!(
            "field {field} at step {step}: the f64 result has no correct digit: the guaranteed bound {} (lens {lens}) \
is at least the largest value of the field{}.",
            format::bound(Some(*bound)),
            if *estimates == 0 { String::new() } else { ", and the estimates agree".to_owned() }
        ),
        DigitFinding::NoDigit { field, step, lens, bound, .. } if !bound.is_finite() => format!(
            "field {field} at step {step}: no digit of the f64 result is guaranteed (lens {lens}'s bound \
overflowed); the estimates give more, without a guarantee."
        ),
        DigitFinding::NoDigit { field, step, lens, bound, .. } => format!(
            "field {field} at step {step}: no digit of the f64 result is guaranteed (lens {lens}'s bound {} is at \
least the largest value of the field); the estimates give more, without a guarantee.",
            format::bound(Some(*bound))
        ),
        DigitFinding::EstimateWrong { field, step, lens, estimate, bound_lens, bound } => format!(
            "field {field} at step {step}: the estimate of lens {lens} is WRONG: it puts its value {} from the f64 \
result, outside the guaranteed bound {} of lens {bound_lens}; trust the bound there.",
            format::error(*estimate),
            format::bound(Some(*bound))
        ),
    }
}

/// The verdict's notes about the run: the first bound lost, the sites of undecided comparisons and index
/// conversions, a primal that differs from the original. From the events written and the totals of all events.
#[must_use]
pub fn notes(events: &[EventRecord], totals: &[EventTotal]) -> Vec<Note> {
    let mut notes = Vec::new();
    if let Some(m) = totals.iter().find(|t| t.kind == EventName::PrimalMismatch) {
        notes.push(Note::PrimalMismatch {
            lens: m.lens.clone(),
            field: m.field.clone().unwrap_or_else(|| "?".to_owned()),
            step: m.first_step,
        });
    }
    if let Some(lost) = events.iter().find(|e| e.kind == EventName::BoundLost) {
        notes.push(Note::BoundLost {
            lens: lost.lens.clone(),
            field: lost.field.clone().unwrap_or_else(|| "?".to_owned()),
            step: lost.step,
            bound: lost.bound,
            estimate: lost.estimate,
        });
    }
    let undecided: Vec<&EventTotal> = totals
        .iter()
        .filter(|t| matches!(t.kind, EventName::UndecidedComparison | EventName::UndecidedIndex))
        .collect();
    if let Some(first) = undecided.iter().min_by_key(|t| t.first_step) {
        let sites: std::collections::BTreeSet<_> = undecided.iter().filter_map(|t| t.site.as_ref()).collect();
        notes.push(Note::UndecidedPaths {
            sites: sites.len(),
            first_step: first.first_step,
            first_site: first.site.as_ref().map(ToString::to_string),
        });
    }
    notes
}
