//! `twinstep gate`: does every field stay within tolerance for the whole run?
//!
//! With the tolerance recorded in the trace, each step's `tol_ratio` (the largest `err / allowed` over the cells,
//! worked out by the audit cell by cell) and the summary's `first_crossing` decide. With a tolerance given on the
//! command line, the trace holds only per-step maxima, so the gate decides from them and is conservative where they
//! cannot decide. The library's tolerance measures `|u|` of the primal (`Tolerance::ratio(err, primal)`), while the
//! trace's `max_rel_err` divides each cell's error by the *reference's* value. Every lens has
//! `|primal − reference| ≤ err` (the shadow's error is that distance; Bound's reference is its primal; Interval's is
//! the midpoint of an enclosure holding the primal), so `|primal| ≥ |reference| − err`, and a cell with
//! `err/|reference| ≤ r/(1 + r)` has `err ≤ r·(|reference| − err) ≤ r·|primal|`. So:
//! - absolute `err ≤ atol`: crossed exactly when `max_err > atol`;
//! - relative `err ≤ rtol·|u|`: within when `max_rel_err ≤ rtol/(1 + rtol)` (a hair below `rtol`, shrunk by
//!   2⁻⁵⁰ more against the roundings of the trace's numbers); otherwise it cannot be shown within and counts as
//!   crossed;
//! - mixed `err ≤ atol + rtol·|u|`: within when `max_err ≤ atol` or `max_rel_err ≤ rtol/(1 + rtol)` (each cell
//!   then passes by one of the two terms); otherwise it counts as crossed;
//! - ulps `err ≤ k·ulp(u)`: for a normal `u` of precision p, `|u|·2^-p < ulp(u) ≤ |u|·2^(1-p)` (IEEE 754-2019,
//!   3.3: ulp(u) = 2^(e-p+1) with 2^e ≤ |u| < 2^(e+1)), so within when `max_rel_err ≤ r/(1 + r)` with
//!   `r = k·2^-p`, and otherwise it cannot be shown within and counts as crossed.
//!
//! A NaN or infinity event, a step without a number, or an incomplete run fails the gate too: none of them shows
//! the whole run within tolerance.
//!
//! Which lenses judge: by default those the verdict trusts — the estimates when the audit has a lens without a
//! guarantee, since a guaranteed bound can cross the tolerance by the dependency effect of enclosure arithmetic
//! while the rounding error itself does not; `--lens` names the lenses to judge instead (`--lens bound` for a
//! gate on the guarantee).

use crate::trace::{known, EventName, FieldStep, Tolerance, Trace};

/// What the gate concluded: pass or not, and the lines that say why (first crossing first).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct GateOutcome {
    pub passed: bool,
    pub lines: Vec<String>,
}

/// The largest relative error against the reference that proves `err ≤ r·|primal|` (see the module comment):
/// `r/(1 + r)`, shrunk by the factor `1 − 2⁻⁵⁰` so that the roundings of this quotient and of the trace's
/// `max_rel_err` (a few units of 2⁻⁵³ each) cannot tip a cell over.
fn relative_limit(r: f64) -> f64 {
    r / (1.0 + r) * (1.0 - 2f64.powi(-50))
}

/// Why one step of one field fails, or `None` when it passes.
fn step_failure(stats: &FieldStep, tolerance: Option<Tolerance>, precision: i32) -> Option<String> {
    let missing = |what: &str| Some(format!("no {what} recorded (NaN or missing)"));
    match tolerance {
        None => match known(stats.tol_ratio) {
            Some(r) if r > 1.0 => Some(format!("err/allowed = {r:.3} > 1")),
            Some(r) if r.is_finite() => None,
            _ => missing("err/allowed"),
        },
        Some(Tolerance::Absolute { atol }) => match known(stats.max_err) {
            Some(e) if e <= atol => None,
            Some(e) => Some(format!("max error {e:.3e} > atol {atol:.3e}")),
            None => missing("max error"),
        },
        Some(Tolerance::Relative { rtol }) => match known(stats.max_rel_err) {
            Some(e) if e <= relative_limit(rtol) => None,
            Some(e) => Some(format!(
                "max relative error {e:.3e} > rtol/(1 + rtol) = {:.3e}: not shown within rtol·|u|",
                relative_limit(rtol)
            )),
            None => missing("max relative error"),
        },
        Some(Tolerance::Mixed { atol, rtol }) => match (known(stats.max_err), known(stats.max_rel_err)) {
            (Some(e), _) if e <= atol => None,
            (_, Some(r)) if r <= relative_limit(rtol) => None,
            (Some(e), Some(r)) => Some(format!(
                "max error {e:.3e} > atol {atol:.3e} and max relative error {r:.3e} > rtol {rtol:.3e}: not shown \
                 within atol + rtol·|u|"
            )),
            _ => missing("max error or max relative error"),
        },
        Some(Tolerance::Ulps { ulps }) => {
            // Within k ulps whenever the relative error is at most k·2^-p (see the module comment).
            let limit = relative_limit(ulps * 2f64.powi(-precision));
            match known(stats.max_rel_err) {
                Some(r) if r <= limit => None,
                Some(r) => Some(format!(
                    "max relative error {r:.3e} > r/(1 + r) = {limit:.3e} with r = {ulps}·2^-{precision}: not shown \
                     within {ulps} ulps"
                )),
                None => missing("max relative error"),
            }
        }
    }
}

/// Runs the gate on a trace, with the trace's own tolerance or the one given, over the lenses given (when empty:
/// the lenses without a guarantee if the trace has any, else all, as the verdict judges).
#[must_use]
pub fn gate(trace: &Trace, tolerance: Option<Tolerance>, lenses: &[String]) -> GateOutcome {
    // Precision of the primal, binary64: p = 53 (IEEE 754-2019, table 3.2).
    let precision = 53;
    // By default the lenses judge as the verdict does: the estimates when the audit has a lens without a
    // guarantee (a guaranteed bound may cross by the dependency effect while the error does not), else the bounds.
    let analysis = crate::analysis::Analysis::of(trace);
    let default: Vec<String> = analysis.judging().map(|o| o.lens.clone()).collect();
    let chosen = if lenses.is_empty() { &default[..] } else { lenses };
    let judged = |lens: &str| chosen.is_empty() || chosen.iter().any(|l| l == lens);
    let mut crossings: Vec<(u64, String)> = Vec::new();
    for field in &trace.header.fields {
        for lens in trace.header.lenses.iter().filter(|l| judged(l)) {
            let mut first: Option<(u64, String)> = trace
                .steps
                .iter()
                .filter(|s| &s.lens == lens)
                .flat_map(|s| s.fields.iter().filter(|f| f.name == field.name).map(move |f| (s.step, f)))
                .filter_map(|(step, stats)| step_failure(stats, tolerance, precision).map(|why| (step, why)))
                .min_by_key(|(step, _)| *step);
            // The audit saw every step; the trace may not hold the step it crossed at.
            let summary_crossing = trace
                .summary
                .as_ref()
                .and_then(|s| s.results.iter().find(|r| &r.lens == lens && r.field == field.name))
                .and_then(|r| r.first_crossing);
            if let (None, Some(step)) = (tolerance, summary_crossing) {
                if first.as_ref().is_none_or(|(s, _)| step < *s) {
                    first = Some((step, "the audit's summary records the first crossing here".to_owned()));
                }
            }
            if let Some((step, why)) = first {
                crossings.push((
                    step,
                    format!("field {} ({} lens) crosses the tolerance at step {step}: {why}", field.name, lens),
                ));
            }
        }
    }
    for event in trace.events.iter().filter(|e| matches!(e.kind, EventName::Nan | EventName::Infinity)) {
        if judged(&event.lens) {
            let site = event.site.as_ref().map_or_else(String::new, |s| format!(" at {s}"));
            let what = crate::trace::describe(event.kind);
            crossings.push((event.step, format!("{what} at step {} ({} lens){site}", event.step, event.lens)));
        }
    }
    crossings.sort_by_key(|(step, _)| *step);
    let mut lines: Vec<String> = crossings.into_iter().map(|(_, line)| line).collect();
    if !trace.is_complete() {
        let reached = trace.last_step().map_or_else(|| "no step".to_owned(), |s| format!("step {s}"));
        lines.push(format!("incomplete run (the trace reaches {reached} and has no closing summary): the whole run is not shown within tolerance"));
    }
    if lines.is_empty() {
        let tolerance = tolerance.unwrap_or(trace.header.tolerance).describe();
        let steps = trace.summary.as_ref().map_or(0, |s| s.steps_done);
        let mut judged_by: Vec<&str> = trace.header.lenses.iter().map(String::as_str).filter(|l| judged(l)).collect();
        judged_by.dedup();
        lines.push(format!(
            "pass: every field stays within tolerance ({tolerance}) for all {steps} steps (lenses judged: {})",
            judged_by.join(", ")
        ));
        lines.push(format!("note: {}", crate::analysis::CAUTION));
        GateOutcome { passed: true, lines }
    } else {
        lines.push(format!("note: {}", crate::analysis::CAUTION));
        GateOutcome { passed: false, lines }
    }
}
