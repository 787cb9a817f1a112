//! What a report says about a certified lens's guarantee: the section "Certified guarantee" (per certified lens:
//! the route, the growth, the guaranteed interval of each field's worst error at its tolerance crossing and at the
//! last audited step, where and why the guarantee stops), the verdict's notes about it, whether a lens judges on
//! its guarantee ([`standing`]), and the sentences the recorder writes into `certificate_end` records.
//!
//! The one rule kept throughout: nothing is claimed past the step where a certificate stopped. A lens whose
//! certificate stopped anywhere judges as an estimate (its error figures are the shadow's), and its intervals are
//! shown only at steps where the certificate still held.

use serde::Serialize;

use super::analysis::{Align, Block, Cell, Note, Section, SectionKind, Tone, VerdictView};
use super::format;
use crate::trace::{
    CertificateEndRecord, CertificateSummary, EndCause, EventName, FieldCertificateRecord, FieldStep, StepRecord,
    Trace, UndecidedSite,
};
use crate::verdict::{Basis, Standing};

/// Whether the trace holds a certificate for `lens` (its step records carry one).
#[must_use]
pub fn is_certified(trace: &Trace, lens: &str) -> bool {
    trace.steps.iter().any(|s| s.lens == lens && s.certificate.is_some())
}

/// The ends of `lens`'s certificate, in step order.
fn ends<'t>(trace: &'t Trace, lens: &'t str) -> impl Iterator<Item = &'t CertificateEndRecord> + 't {
    trace.certificate_ends.iter().filter(move |e| e.lens == lens)
}

/// What `lens`'s numbers are in this trace: a certified lens whose certificate held for every field at every
/// recorded step judges on its guarantee; one whose certificate stopped anywhere, as an estimate; any other lens
/// as its header says (the rule of `verdict::judging_by`, from the trace alone, so the recorder's verdict and every
/// report agree).
#[must_use]
pub fn standing(trace: &Trace, lens: &str) -> Standing {
    if is_certified(trace, lens) {
        if ends(trace, lens).next().is_none() {
            Standing::Guarantee
        } else {
            Standing::Estimate
        }
    } else if trace.is_guaranteed(lens) {
        Standing::Bound
    } else {
        Standing::Estimate
    }
}

/// The guarantee of one field at one step, as the notes and the section show it.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct GuaranteeAt {
    pub step: u64,
    /// The worst error lies in `[lower, upper]`; `upper` is `None` when a cell's bound is lost.
    pub lower: f64,
    pub upper: Option<f64>,
    pub max_radius: Option<f64>,
    pub worst_cell: Vec<usize>,
    /// The error the tolerance allows at the estimate's worst cell (`max_err / tol_ratio`), when known.
    pub allowed: Option<f64>,
}

/// A field's guarantee at its tolerance crossing (if any) and at the last audited step.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct FieldGuarantee {
    pub field: String,
    pub crossing: Option<GuaranteeAt>,
    pub last: Option<GuaranteeAt>,
}

/// What the verdict says about a certificate.
#[derive(Clone, Debug, PartialEq, Serialize)]
#[serde(tag = "certificate", rename_all = "snake_case")]
pub enum CertificateNote {
    /// The certificate held throughout: the verdict rests on it.
    Holds { lens: String, steps: u64, fields: Vec<FieldGuarantee> },
    /// The guarantee stops at `step`, for `field` or (without one) for the run.
    Stops { lens: String, step: u64, cause: EndCause, field: Option<String>, detail: String },
}

/// The error the tolerance allowed at the estimate's worst cell.
fn allowed(f: &FieldStep) -> Option<f64> {
    let allowed = f.max_err / f.tol_ratio;
    (f.tol_ratio > 0.0 && allowed.is_finite()).then_some(allowed)
}

/// `lens`'s step record at `step`, with its certificate.
fn record_at<'t>(trace: &'t Trace, lens: &str, step: u64) -> Option<&'t StepRecord> {
    trace.steps.iter().find(|s| s.lens == lens && s.step == step && s.certificate.is_some())
}

/// The guarantee of `field` in a step record, when the certificate held there.
fn guarantee_in(record: &StepRecord, field: &str) -> Option<GuaranteeAt> {
    let certificate = record.certificate.as_ref().filter(|c| c.holds)?;
    let f: &FieldCertificateRecord = certificate.fields.iter().find(|f| f.name == field)?;
    let measured = record.fields.iter().find(|m| m.name == field);
    Some(GuaranteeAt {
        step: record.step,
        lower: f.lower,
        upper: f.upper,
        max_radius: f.max_radius,
        worst_cell: f.worst_cell.clone(),
        allowed: measured.and_then(allowed),
    })
}

/// Each field's guarantee at its tolerance crossing and at the last step where the certificate held.
fn field_guarantees(trace: &Trace, lens: &str) -> Vec<FieldGuarantee> {
    let last_holding =
        trace.steps.iter().filter(|s| s.lens == lens).rfind(|s| s.certificate.as_ref().is_some_and(|c| c.holds));
    trace
        .header
        .fields
        .iter()
        .map(|spec| {
            let crossing = trace
                .events
                .iter()
                .find(|e| {
                    e.kind == EventName::ToleranceCrossed && e.lens == lens && e.field.as_ref() == Some(&spec.name)
                })
                .and_then(|e| record_at(trace, lens, e.step))
                .and_then(|r| guarantee_in(r, &spec.name));
            FieldGuarantee {
                field: spec.name.clone(),
                crossing,
                last: last_holding.and_then(|r| guarantee_in(r, &spec.name)),
            }
        })
        .collect()
}

/// The certified lenses of the trace, in header order.
fn certified_lenses(trace: &Trace) -> impl Iterator<Item = &String> {
    trace.header.lenses.iter().filter(|l| is_certified(trace, l))
}

/// The verdict's notes about every certified lens: that its certificate held, with the guaranteed intervals, or
/// where and why its guarantee stops. From the trace alone (the recorder calls it on the trace it wrote).
#[must_use]
pub fn notes(trace: &Trace) -> Vec<Note> {
    let mut notes = Vec::new();
    for lens in certified_lenses(trace) {
        let stops: Vec<&CertificateEndRecord> = ends(trace, lens).collect();
        if stops.is_empty() {
            let steps = trace.steps.iter().filter(|s| &s.lens == lens).map(|s| s.step).max().unwrap_or(0);
            notes.push(Note::Certificate(CertificateNote::Holds {
                lens: lens.clone(),
                steps,
                fields: field_guarantees(trace, lens),
            }));
        }
        for end in stops {
            notes.push(Note::Certificate(CertificateNote::Stops {
                lens: lens.clone(),
                step: end.step,
                cause: end.cause,
                field: end.field.clone(),
                detail: end.detail.clone(),
            }));
        }
    }
    notes
}

/// How a guaranteed interval stands against the tolerance.
fn against(g: &GuaranteeAt) -> String {
    let Some(allowed) = g.allowed else { return String::new() };
    let verdict = match g.upper {
        Some(upper) if upper <= allowed => "within it for certain",
        _ if g.lower > allowed => "beyond it for certain",
        Some(_) => "the interval straddles it",
        None => "no bound",
    };
    format!(" against {} allowed ({verdict})", format::error(allowed))
}

/// One field's guarantee in words: `field T: at its tolerance crossing (step 5) in [..] against .. allowed (beyond
/// it for certain), at step 60 in [..]`.
fn field_words(f: &FieldGuarantee) -> String {
    let mut parts = Vec::new();
    if let Some(c) = &f.crossing {
        parts.push(format!(
            "at its tolerance crossing (step {}) in {}{}",
            c.step,
            format::interval(c.lower, c.upper),
            against(c)
        ));
    }
    if let Some(l) = &f.last {
        parts.push(format!("at step {} in {}{}", l.step, format::interval(l.lower, l.upper), against(l)));
    }
    format!("field {}: {}", f.field, parts.join(", "))
}

/// A certificate note as a sentence of the verdict.
#[must_use]
pub fn note_text(note: &CertificateNote) -> String {
    match note {
        CertificateNote::Holds { lens, steps, fields } => {
            let fields: Vec<String> = fields.iter().map(field_words).collect();
            format!(
                "Guaranteed: the certificate of lens {lens} holds at every one of the {steps} audited steps, so each \
field's worst rounding error (against the exact-arithmetic run of the same scheme from the same inputs) is known \
within a guaranteed interval: {}.",
                fields.join("; ")
            )
        }
        CertificateNote::Stops { lens, step, field, detail, .. } => {
            let whom = field.as_ref().map_or_else(|| "every field".to_owned(), |f| format!("field {f}"));
            format!(
                "The guarantee of lens {lens} stops at step {step} for {whom}: {detail}. It covers the steps before \
only; from step {step} on the figures of lens {lens} are the shadow's estimate, not a guarantee."
            )
        }
    }
}

/// A per-operation bound lost beside a certificate that holds: said, but the verdict does not rest on it.
#[must_use]
pub fn bound_lost_beside_guarantee(lens: &str, field: &str, step: u64) -> String {
    format!(
        "The per-operation bound of lens {lens} for field {field} stopped being useful at step {step} (the dependency \
effect of enclosure arithmetic); the verdict rests on the certified lens's guarantee instead."
    )
}

/// The verdict's label and line, when it rests on a certificate.
pub fn mark_verdict(view: &mut VerdictView, basis: Basis) {
    if basis == Basis::Guarantee {
        view.label.push_str(" (GUARANTEED)");
        view.line.push_str(" Guaranteed by the certified lens's certificate, not estimated.");
    }
}

/// The trace detail of a certificate ended by decisions the ball could not make.
#[must_use]
pub fn undecided_detail(sites: &[UndecidedSite]) -> String {
    let sites: Vec<String> =
        sites.iter().map(|s| format!("the {} at {} ({} time(s))", decision(s.kind), s.site, s.count)).collect();
    format!(
        "the ball shadow ± D could not decide {}: exact arithmetic could take another path there, so the certificate \
ends for every field",
        sites.join(", ")
    )
}

/// What kind of decision an undecided event is about.
fn decision(kind: EventName) -> &'static str {
    match kind {
        EventName::UndecidedComparison => "comparison",
        EventName::UndecidedIndex => "integer conversion",
        other => other.wording(),
    }
}

/// The trace detail of a field whose guaranteed interval grew useless.
#[must_use]
pub fn useless_detail(max_radius: f64, estimate: f64, growth: f64) -> String {
    let remedy = if growth > 1.0 + 1e-3 {
        "; a radius that grows geometrically calls for the backward route (`CertificateOptions { route: \
Route::Backward, .. }`)"
    } else {
        ""
    };
    format!(
        "its largest radius D = {} exceeds half its error estimate {}, so the interval of the worst error spans more \
than a factor 3; the radius grows by a factor {} per step (the measured growth of |J̃|){remedy}",
        format::error(max_radius),
        format::error(estimate),
        format::ratio(growth)
    )
}

/// The trace detail of a field whose cells lost their bound.
#[must_use]
pub fn lost_detail(cells: usize) -> String {
    format!(
        "{cells} cell(s) lost their bound (a division by a ball holding 0, a root or logarithm of a ball leaving the \
domain, or an overflow)"
    )
}

/// The facts of the section for one certified lens.
#[derive(Clone, Debug, PartialEq, Serialize)]
struct LensCertificate<'t> {
    lens: &'t str,
    holds: bool,
    summary: Option<&'t CertificateSummary>,
    fields: Vec<FieldGuarantee>,
    ends: Vec<&'t CertificateEndRecord>,
}

/// The section "Certified guarantee", one per certified lens; none without one.
#[must_use]
pub fn sections(trace: &Trace) -> Vec<Section> {
    certified_lenses(trace).map(|lens| section(trace, lens)).collect()
}

fn section(trace: &Trace, lens: &str) -> Section {
    let summary = trace.summary.iter().flat_map(|s| &s.certificates).find(|c| c.lens == lens);
    let stops: Vec<&CertificateEndRecord> = ends(trace, lens).collect();
    let fields = field_guarantees(trace, lens);
    let last_step = trace.steps.iter().filter(|s| s.lens == lens).map(|s| s.step).max().unwrap_or(0);
    let mut blocks = Vec::new();
    blocks.push(Block::Paragraph {
        text: match stops.first() {
            None => format!(
                "The certificate holds at every recorded step up to step {last_step}: the exact-arithmetic run of the \
same scheme from the same inputs lies within the radius D of the shadow in every cell, so the worst error of each \
field lies in the interval below."
            ),
            Some(first) => format!(
                "The guarantee stops at step {}: nothing is claimed from there on, and the intervals below are those \
of the last step where it held. This audit's verdict rests on the estimate.",
                first.step
            ),
        },
    });
    let mut facts = Vec::new();
    if let Some(s) = summary {
        facts.push(("route".to_owned(), route_words(s)));
        facts.push(("growth of |J̃| per step".to_owned(), format::ratio(s.growth)));
        if let Some(b) = &s.backward {
            facts.push((
                "backward route cost".to_owned(),
                format!(
                    "{} sweeps, {:.2} s, {:.1e} multiply-adds, {:.1} MB of rows",
                    b.sweeps,
                    b.seconds,
                    b.multiply_adds as f64,
                    b.bytes as f64 / 1e6
                ),
            ));
        }
        if s.clashes > 0 {
            facts.push((
                "list clashes".to_owned(),
                format!("{} (charged to the remainder: rigorous, less tight)", s.clashes),
            ));
        }
    } else if let Some(c) = trace.steps.iter().filter(|s| s.lens == lens).rev().find_map(|s| s.certificate.as_ref()) {
        facts.push(("route".to_owned(), c.route.name().to_owned()));
    }
    if !facts.is_empty() {
        blocks.push(Block::Facts { facts });
    }
    let head = ["field", "at", "step", "worst error lies in", "largest D", "allowed", "tolerance"];
    let align = vec![Align::Left, Align::Left, Align::Right, Align::Left, Align::Right, Align::Right, Align::Left];
    let last_label = if stops.is_empty() { "last audited step" } else { "last step it holds" };
    let rows: Vec<Vec<Cell>> = fields
        .iter()
        .flat_map(|f| {
            let crossing = f.crossing.as_ref().map(|g| (f, "tolerance crossing", g));
            let last = f.last.as_ref().map(|g| (f, last_label, g));
            crossing.into_iter().chain(last)
        })
        .map(|(f, at, g)| {
            let (standing, tone) = match (g.allowed, g.upper) {
                (Some(a), Some(u)) if u <= a => ("within", Tone::Good),
                (Some(a), _) if g.lower > a => ("beyond", Tone::Bad),
                (Some(_), _) => ("straddles", Tone::Warn),
                (None, _) => (format::ABSENT, Tone::Plain),
            };
            vec![
                Cell { text: f.field.clone(), tone: Tone::Plain },
                Cell { text: at.to_owned(), tone: Tone::Plain },
                Cell { text: g.step.to_string(), tone: Tone::Plain },
                Cell { text: format::interval(g.lower, g.upper), tone: Tone::Plain },
                Cell { text: format::bound(Some(g.max_radius.unwrap_or(f64::INFINITY))), tone: Tone::Plain },
                Cell { text: format::error_opt(g.allowed), tone: Tone::Plain },
                Cell { text: standing.to_owned(), tone },
            ]
        })
        .collect();
    if !rows.is_empty() {
        blocks.push(Block::Table { head: head.iter().map(|h| (*h).to_owned()).collect(), align, rows });
    }
    for end in &stops {
        let whom = end.field.as_ref().map_or_else(|| "every field".to_owned(), |f| format!("field {f}"));
        blocks.push(Block::Paragraph {
            text: format!("From step {} the guarantee stops for {whom}: {}.", end.step, end.detail),
        });
    }
    let data = LensCertificate { lens, holds: stops.is_empty(), summary, fields, ends: stops };
    Section::new(SectionKind::Certificate, Some(format!("Certified guarantee, lens {lens}")), &data, blocks)
}

fn route_words(s: &CertificateSummary) -> String {
    let declined = if s.backward_declined {
        " (the backward route was wanted, but the levels have more ids than it sweeps)"
    } else {
        ""
    };
    format!("{}{declined}", s.route.name())
}
