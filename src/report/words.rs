//! Every sentence twinstep writes about an audit: the verdict, the event details of the trace, the headline, the
//! findings about bounds and digits. The recorder and the verdict module decide facts; the words are here, so one
//! place says each thing one way, and numbers go through [`super::format`].

use super::analysis::{Note, Outcome};
use super::format;
use crate::audit::Tolerance;
use crate::verdict::{Basis, Decision, Finding, Growth, Status};

/// The rounding-only caution every verdict and report carries.
pub const CAUTION: &str = "twinstep judges rounding error only, not discretization or modelling error. Results \
that feed safety-relevant engineering decisions go through the verification and validation practice and codes that \
apply locally, and licensed review.";

/// The verdict's sentence when the audit ran no precision sweep; a report of a trace that holds one replaces it with
/// the sweep's findings ([`super::sweep::verdict_sentence`]).
pub const NO_SWEEP: &str = "The least precision that would meet the tolerance is not computed: that needs a sweep \
over emulated formats, which this version does not run.";

fn basis(b: Basis) -> &'static str {
    match b {
        Basis::Estimate => "error estimate",
        Basis::Bound => "guaranteed bound",
        Basis::Guarantee => "certified error",
    }
}

/// `at the last audited step it is 1.20e-9 against 1.00e-9 allowed`, or what is left of it when a number is lost.
fn against_allowed(err: f64, allowed: f64) -> String {
    match (err.is_finite(), allowed.is_finite() && allowed > 0.0) {
        (true, true) => format!("{} against {} allowed", format::error(err), format::error(allowed)),
        (false, _) => {
            "its estimate is lost (not a finite number: the field overflowed or stopped being a number)".to_owned()
        }
        (true, false) => format!("{}, where the tolerance allows no error", format::error(err)),
    }
}

/// The verdict's explanation: the finding, the least-precision note, the notes of the run, the caution. A primal
/// mismatch is said first: every number after it describes the twin's computation, not the original program's.
/// `float` is the program's float as the trace's header names it (`f64`, `f32`).
#[must_use]
pub fn verdict_text(d: &Decision, tolerance: &Tolerance, notes: &[Note], float: &str) -> String {
    let tolerance = tolerance.describe();
    let horizon = d.horizon;
    let finding = match &d.finding {
        Finding::NoMeasurement => "No field had a usable measurement.".to_owned(),
        Finding::Crosses { lens, field, step, observed, growth, final_max_err, allowed_at_end } => {
            let how = if *observed {
                format!("observed at step {step}")
            } else {
                format!("extrapolated to step {step} by the fitted growth {}", growth_text(*growth))
            };
            let lead = match d.status {
                Status::NotEnough => format!("{float} is not enough"),
                _ => format!("{float} is enough until step {} of {horizon}", step.saturating_sub(1)),
            };
            let last = if final_max_err.is_finite() {
                format!("it is {}", against_allowed(*final_max_err, *allowed_at_end))
            } else {
                against_allowed(*final_max_err, *allowed_at_end)
            };
            format!(
                "{lead}: the {} of lens {lens} for field {field} crosses the tolerance ({tolerance}), {how}; at the \
last audited step {last}.",
                basis(d.basis)
            )
        }
        Finding::Within { lens, field, final_max_err, allowed_at_end, growth } => {
            let horizon_part = match growth {
                Some(g) if horizon > d.steps_done => format!(
                    "; its fitted growth {} extrapolates to {} at the planned step {horizon}",
                    g.describe(),
                    format::error(g.at(horizon as f64))
                ),
                Some(g) => format!("; fitted growth {}", g.describe()),
                None => String::new(),
            };
            format!(
                "{float} is enough for the planned {horizon} steps: the largest {} (lens {lens}, field {field}) is {} \
after {} steps, {} of the {} the tolerance ({tolerance}) allows there{horizon_part}.",
                basis(d.basis),
                format::error(*final_max_err),
                d.steps_done,
                format::ratio(final_max_err / allowed_at_end),
                format::error(*allowed_at_end)
            )
        }
    };
    let precision = NO_SWEEP;
    let mut warnings = String::new();
    let mut after = Vec::new();
    for note in notes {
        match note {
            Note::PrimalMismatch { .. } => warnings.push_str(&format!("{} ", note_text(note, float))),
            // Beside a certificate that holds, a lost per-operation bound does not make the verdict an estimate.
            Note::BoundLost { lens, field, step, .. } if d.basis == Basis::Guarantee => {
                after.push(super::certificate::bound_lost_beside_guarantee(lens, field, *step));
            }
            _ => after.push(note_text(note, float)),
        }
    }
    let after = if after.is_empty() { String::new() } else { format!(" {}", after.join(" ")) };
    format!("{warnings}{finding} {precision}{after} {CAUTION}")
}

/// One note of the verdict, as a sentence; `float` is the program's.
#[must_use]
pub fn note_text(note: &Note, float: &str) -> String {
    match note {
        // Never hide it: an `enough` resting on an estimate is not a guarantee.
        Note::BoundLost { lens, field, step, bound, estimate } => format!(
            "The guaranteed bound of lens {lens} for field {field} was lost at step {step} (bound {} against an \
estimate of {}), so this verdict rests on the estimate, not on a guarantee.",
            format::bound(*bound),
            format::error_opt(*estimate)
        ),
        Note::UndecidedPaths { sites, first_step, first_site } => format!(
            "Comparisons or index conversions undecided by rounding at {sites} source site(s), first at step \
{first_step} ({}): exact arithmetic could have taken another path there, while the figures follow the path the \
{float} program took.",
            first_site.as_deref().unwrap_or("no site")
        ),
        Note::PrimalMismatch { lens, field, step } => format!(
            "Warning: the primal of lens {lens} differs from the plain {float} original (field {field}, from step \
{step}), so these figures describe the twin's computation, not the original program's."
        ),
        Note::Certificate(certificate) => super::certificate::note_text(certificate),
    }
}

fn growth_text(growth: Option<Growth>) -> String {
    growth.map_or_else(|| "(none)".to_string(), |g| g.describe())
}

/// The status as a short label: `ENOUGH`, `ENOUGH UNTIL STEP 41`, `NOT ENOUGH`.
#[must_use]
pub fn status_label(status: Status, until_step: Option<u64>) -> String {
    match (status, until_step) {
        (Status::Enough, _) => "ENOUGH".to_owned(),
        (Status::EnoughUntil, Some(n)) => format!("ENOUGH UNTIL STEP {n}"),
        (Status::EnoughUntil, None) => "ENOUGH UNTIL (step unknown)".to_owned(),
        (Status::NotEnough, _) => "NOT ENOUGH".to_owned(),
    }
}

/// The verdict in one sentence, or why there is none; `float` is the program's.
#[must_use]
pub fn verdict_line(verdict: Option<(Status, Option<u64>, Option<u32>)>, float: &str) -> String {
    let Some((status, until, bits)) = verdict else {
        return format!("none yet: the run is incomplete, so whether {float} is enough is not known.");
    };
    let mut line = match (status, until) {
        (Status::Enough, _) => format!("{float} is enough for this run."),
        (Status::EnoughUntil, Some(step)) => format!("{float} is enough until step {step}, not beyond."),
        (Status::EnoughUntil, None) => format!("{float} is enough only for part of this run."),
        (Status::NotEnough, _) => format!("{float} is not enough for this run."),
    };
    if let Some(bits) = bits {
        line.push_str(&format!(" Least precision meeting the tolerance: {bits} bits."));
    }
    line
}

/// The trace detail of a `tolerance_crossed` event.
#[must_use]
pub fn crossing_detail(max_err: f64, cell: &[usize], tol_ratio: f64) -> String {
    format!(
        "the largest error estimate {} (cell {cell:?}) is {} what the tolerance allows",
        format::error(max_err),
        format::times(tol_ratio)
    )
}

/// The trace detail of a field's first NaN or infinity.
#[must_use]
pub fn non_finite_detail(field: &str, nan: bool) -> String {
    if nan {
        format!("field {field} holds NaN from this step on")
    } else {
        format!("field {field} holds an infinity from this step on")
    }
}

/// The trace detail of an event the lens recorded at a source site.
#[must_use]
pub fn occurrences_detail(count: u64) -> String {
    format!("{count} time(s) at this step")
}

/// The trace detail of a `primal_mismatch` event; `float` is the program's, the original's float.
#[must_use]
pub fn mismatch_detail(cell: &[usize], lens_primal: f64, original: f64, float: &str) -> String {
    format!(
        "cell {cell:?}: the lens's primal {lens_primal:e} differs from the plain {float} original {original:e}; the \
twin does not reproduce the original kernel, so its error figures describe another computation"
    )
}

/// Why a guaranteed bound is no longer useful.
#[derive(Clone, Copy, Debug)]
pub enum LostBecause {
    /// It is this many times the tolerance.
    PastTolerance(f64),
    /// It exceeds the largest |u| of the field.
    NoDigit { max_abs: f64 },
}

/// The trace detail of a `bound_lost` event.
#[must_use]
pub fn bound_lost_detail(bound: f64, lens: &str, why: LostBecause, estimate_lens: &str, estimate: f64) -> String {
    let why = match why {
        LostBecause::PastTolerance(r) => format!("it is {} the tolerance", format::times(r)),
        LostBecause::NoDigit { max_abs } => format!("it exceeds the largest |u| = {}", format::error(max_abs)),
    };
    format!(
        "bound lost: the guaranteed bound {} of lens {lens} is no longer useful ({why}), while the estimate of lens \
{estimate_lens} is {}, within tolerance; the gap between the two is the overestimation of enclosure arithmetic (the \
dependency effect), not rounding error the estimate sees",
        format::bound(Some(bound)),
        format::error(estimate)
    )
}

/// The sentence that answers "which field drifts, from which step, by how much", with the guaranteed bounds
/// that crossed before the estimates (`early_bounds`: lens, field, step).
#[must_use]
pub fn headline(worst: Option<&Outcome>, early_bounds: &[(String, String, u64)], basis: Basis) -> String {
    let Some(worst) = worst else {
        return "No step records an error ratio, so no field can be judged against the tolerance.".to_owned();
    };
    let ratio = match worst.peak_tol_ratio {
        Some(r) if r.is_finite() => format!("up to {} what the tolerance allows", format::times(r)),
        Some(_) => "beyond any finite multiple of what the tolerance allows".to_owned(),
        None => "no ratio to the tolerance recorded".to_owned(),
    };
    let lost = worst.final_max_err.is_some_and(|e| !e.is_finite());
    let err = format::error_opt(worst.final_max_err);
    let mut line = match (worst.first_crossing, lost) {
        (Some(step), false) => format!(
            "Field `{}` drifts most: under the {} lens its rounding error crosses the tolerance at step {step} and \
reaches {err} ({ratio}).",
            worst.field, worst.lens
        ),
        (Some(step), true) => format!(
            "Field `{}` drifts most: under the {} lens its rounding error crosses the tolerance at step {step}, and \
by the last recorded step its estimate is lost, not a finite number ({ratio}).",
            worst.field, worst.lens
        ),
        (None, _) => format!(
            "No field crosses the tolerance. The closest is `{}` under the {} lens: final rounding error {err}, \
{ratio}.",
            worst.field, worst.lens
        ),
    };
    if !early_bounds.is_empty() {
        let list: Vec<String> =
            early_bounds.iter().map(|(lens, field, step)| format!("{lens} of `{field}` at step {step}")).collect();
        line.push_str(&format!(
            " Guaranteed bounds cross it before the estimates do ({}): they grow by the dependency effect of enclosure \
arithmetic, so {}.",
            list.join(", "),
            if basis == Basis::Guarantee { "the certified lens's guarantee judges" } else { "the estimate judges" }
        ));
    }
    line
}

/// Why a report may be partial.
#[must_use]
pub fn incomplete_notice(reached: Option<u64>, to_audit: u64, has_summary: bool, truncated_tail: bool) -> String {
    let reached = reached.map_or_else(|| "no step".to_owned(), |s| format!("step {s}"));
    let why = if has_summary {
        "its summary says the run did not complete"
    } else {
        "it has no closing summary (the run was killed, failed, or is still going)"
    };
    let cut = if truncated_tail { " Its last line was cut off mid-write and is skipped." } else { "" };
    format!(
        "Incomplete run: the trace reaches {reached} of {to_audit} to audit; {why}. The numbers below cover the \
recorded steps only.{cut}"
    )
}
