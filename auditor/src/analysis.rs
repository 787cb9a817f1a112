//! What a report says, worked out once from a trace, so that every format says the same thing: per field and
//! lens the error history, the first tolerance crossing, the final error and bound; which field drifts most; the
//! verdict, or why there is none.
//!
//! Where a closing summary gives a number (first crossing, final error), it wins: the audit saw every step, the
//! trace may hold only log-spaced ones. Without a summary (an incomplete run) the numbers come from the recorded
//! steps and the report says so.

use crate::trace::{known, Growth, Trace, Verdict};

/// The rounding-only caution every report carries (the verdict module's wording).
pub use twinstep::verdict::CAUTION;

/// The float type of the kernels twinstep audits against: every lens's primal is binary64.
pub const FLOAT: &str = "f64";

/// One recorded point of an error history.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Point {
    pub step: u64,
    pub max_err: Option<f64>,
    pub bound: Option<f64>,
    pub tol_ratio: Option<f64>,
}

/// The history and outcome of one field under one lens.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldLens {
    pub field: String,
    pub lens: String,
    /// The lens gives guaranteed bounds (the header's `guaranteed_lenses`); its `max_err` is then that bound too.
    pub guaranteed: bool,
    pub points: Vec<Point>,
    pub first_crossing: Option<u64>,
    pub final_max_err: Option<f64>,
    pub final_bound: Option<f64>,
    /// The largest `err / allowed` over the recorded steps.
    pub peak_tol_ratio: Option<f64>,
    pub growth: Option<Growth>,
    pub extrapolated_err: Option<f64>,
}

/// Everything the renderers need.
#[derive(Clone, Debug)]
pub struct Analysis<'a> {
    pub trace: &'a Trace,
    /// Field-major, then lens in header order.
    pub outcomes: Vec<FieldLens>,
}

/// The outcomes that judge among `outcomes`: estimates when there are any (a guaranteed bound may grow by the
/// dependency effect of enclosure arithmetic while the error does not), else the bounds. The verdict module
/// judges the same way.
pub fn judging(outcomes: &[FieldLens]) -> impl Iterator<Item = &FieldLens> {
    let has_estimates = outcomes.iter().any(|o| !o.guaranteed);
    outcomes.iter().filter(move |o| !has_estimates || !o.guaranteed)
}

/// The larger of two optional numbers; NaN never wins.
fn max_opt(a: Option<f64>, b: Option<f64>) -> Option<f64> {
    match (a, b) {
        (Some(x), Some(y)) => Some(if y > x { y } else { x }),
        (x, None) => x,
        (None, y) => y,
    }
}

impl<'a> Analysis<'a> {
    /// Works the report out of a trace.
    #[must_use]
    pub fn of(trace: &'a Trace) -> Analysis<'a> {
        let mut outcomes = Vec::new();
        for field in &trace.header.fields {
            for lens in &trace.header.lenses {
                outcomes.push(Self::outcome(trace, &field.name, lens));
            }
        }
        Analysis { trace, outcomes }
    }

    fn outcome(trace: &Trace, field: &str, lens: &str) -> FieldLens {
        let mut points: Vec<Point> = trace
            .steps
            .iter()
            .filter(|s| s.lens == lens)
            .flat_map(|s| {
                s.fields.iter().filter(|f| f.name == field).map(|f| Point {
                    step: s.step,
                    max_err: known(f.max_err),
                    bound: f.bound,
                    tol_ratio: known(f.tol_ratio),
                })
            })
            .collect();
        points.sort_by_key(|p| p.step);
        // The header says which lenses are guaranteed (older traces: a lens with any bound, see `is_guaranteed`).
        let guaranteed = trace.is_guaranteed(lens);
        let peak_tol_ratio = points.iter().fold(None, |acc, p| max_opt(acc, p.tol_ratio));
        let crossing_in_steps = points.iter().find(|p| p.tol_ratio.is_some_and(|r| r > 1.0)).map(|p| p.step);
        let last = points.last().copied();
        let result = trace.summary.as_ref().and_then(|s| s.results.iter().find(|r| r.lens == lens && r.field == field));
        match result {
            Some(r) => FieldLens {
                field: field.to_owned(),
                lens: lens.to_owned(),
                guaranteed,
                first_crossing: r.first_crossing.or(crossing_in_steps),
                final_max_err: known(r.final_max_err).or(last.and_then(|p| p.max_err)),
                final_bound: r.final_bound.or(last.and_then(|p| p.bound)),
                peak_tol_ratio,
                growth: r.growth,
                extrapolated_err: r.extrapolated_err,
                points,
            },
            None => FieldLens {
                field: field.to_owned(),
                lens: lens.to_owned(),
                guaranteed,
                first_crossing: crossing_in_steps,
                final_max_err: last.and_then(|p| p.max_err),
                final_bound: last.and_then(|p| p.bound),
                peak_tol_ratio,
                growth: None,
                extrapolated_err: None,
                points,
            },
        }
    }

    /// The verdict of a finished run.
    #[must_use]
    pub fn verdict(&self) -> Option<&'a Verdict> {
        self.trace.summary.as_ref().map(|s| &s.verdict)
    }

    /// The outcome that drifts furthest towards (or past) the tolerance: the largest peak `err / allowed`. The
    /// estimates judge when the audit has a lens without a guarantee (a guaranteed bound may grow by the
    /// dependency effect of enclosure arithmetic while the error does not), as the verdict does.
    #[must_use]
    pub fn worst(&self) -> Option<&FieldLens> {
        self.judging()
            .filter(|o| o.peak_tol_ratio.is_some_and(f64::is_finite))
            .max_by(|a, b| a.peak_tol_ratio.partial_cmp(&b.peak_tol_ratio).unwrap_or(std::cmp::Ordering::Equal))
    }

    /// The outcomes that judge: those of lenses without a guarantee when the audit has any, else all.
    pub fn judging(&self) -> impl Iterator<Item = &FieldLens> {
        judging(&self.outcomes)
    }

    /// The sentence that answers "which field drifts, from which step, by how much".
    #[must_use]
    pub fn headline(&self) -> String {
        let Some(worst) = self.worst() else {
            return "No step records an error ratio, so no field can be judged against the tolerance.".to_owned();
        };
        let ratio = crate::document::ratio(worst.peak_tol_ratio);
        let err = worst.final_max_err.map_or_else(|| "unknown".to_owned(), |e| format!("{e:.2e}"));
        let mut line = match worst.first_crossing {
            Some(step) => format!(
                "Field `{}` drifts most: under the {} lens its rounding error crosses the tolerance at step {step} \
                 and reaches {err} (up to {ratio} times what the tolerance allows).",
                worst.field, worst.lens
            ),
            None => format!(
                "No field crosses the tolerance. The closest is `{}` under the {} lens: final rounding error {err}, \
                 at most {ratio} times what the tolerance allows.",
                worst.field, worst.lens
            ),
        };
        // Bounds that crossed while an estimate judges: say so, or the outcome table would seem to contradict.
        if !worst.guaranteed {
            let lost: Vec<String> = self
                .outcomes
                .iter()
                .filter(|o| o.guaranteed)
                .filter_map(|o| o.first_crossing.map(|step| (o, step)))
                // Only where the field's estimates cross later or never: there the bound, not the error, crossed.
                .filter(|(o, step)| {
                    let estimate = |e: &&FieldLens| !e.guaranteed && e.field == o.field;
                    self.outcomes.iter().filter(estimate).all(|e| e.first_crossing.is_none_or(|c| c > *step))
                })
                .map(|(o, step)| format!("{} of `{}` at step {step}", o.lens, o.field))
                .collect();
            if !lost.is_empty() {
                line.push_str(&format!(
                    " Guaranteed bounds cross it before the estimates do ({}): they grow by the dependency effect of enclosure \
                     arithmetic, so the estimate judges.",
                    lost.join(", ")
                ));
            }
        }
        line
    }

    /// The verdict in one sentence.
    #[must_use]
    pub fn verdict_line(&self) -> String {
        use crate::trace::Status::{Enough, EnoughUntil, NotEnough};
        let float = FLOAT;
        let Some(verdict) = self.verdict() else {
            return format!("none yet: the run is incomplete, so whether {float} is enough is not known.");
        };
        let mut line = match (verdict.status, verdict.until_step) {
            (Enough, _) => format!("{float} is enough for this run."),
            (EnoughUntil, Some(step)) => format!("{float} is enough until step {step}, not beyond."),
            (EnoughUntil, None) => format!("{float} is enough only for part of this run."),
            (NotEnough, _) => format!("{float} is not enough for this run."),
        };
        if let Some(bits) = verdict.least_precision_bits {
            line.push_str(&format!(" Least precision meeting the tolerance: {bits} bits."));
        }
        line
    }

    /// Why the report may be partial, if it is.
    #[must_use]
    pub fn incomplete_notice(&self) -> Option<String> {
        if self.trace.is_complete() {
            return None;
        }
        let trace = self.trace;
        let reached = trace.last_step().map_or_else(|| "no step".to_owned(), |s| format!("step {s}"));
        let planned = trace.header.steps_audited.unwrap_or(trace.header.steps_planned);
        let planned = format!(" of {planned} to audit");
        let why = if trace.summary.is_some() {
            "its summary says the run did not complete"
        } else {
            "it has no closing summary (the run was killed, failed, or is still going)"
        };
        let cut = if trace.truncated_tail { " Its last line was cut off mid-write and is skipped." } else { "" };
        Some(format!(
            "Incomplete run: the trace reaches {reached}{planned}; {why}. The numbers below cover the recorded steps \
             only.{cut}"
        ))
    }
}
