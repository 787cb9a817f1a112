//! The end of a recording: the per-lens, per-field results, the growth fits, the evidence the verdict decides on,
//! the verdict itself with its notes, and the summary record that closes the trace. The verdict's words come from
//! [`crate::report::words`]; this module only gathers facts.

use super::Recorder;
use crate::report::{analysis, words};
use crate::trace::{ResultRecord, Summary};
use crate::verdict::{self, Evidence, Verdict};

/// The summary of a finished recording.
pub(super) fn summarize(recorder: &Recorder) -> Summary {
    let steps_done = recorder.last_step.unwrap_or(0);
    let horizon = recorder.plan.horizon.max(steps_done);
    let tolerance = recorder.plan.tolerance;
    let mut results = Vec::new();
    let mut evidence = Vec::new();
    for (lens, tracks) in recorder.tracks.iter().enumerate() {
        for (index, track) in tracks.iter().enumerate() {
            let Some((last_step, last)) = &track.last else { continue };
            let mut history = track.history.clone();
            if history.last().map(|h| h.0) != Some(*last_step) {
                history.push((*last_step, last.max_err));
            }
            let growth = verdict::fit_growth(&history);
            let info = &recorder.lenses[lens];
            let field = recorder.plan.fields[index].name.clone();
            results.push(ResultRecord {
                lens: info.name.to_string(),
                field: field.clone(),
                first_crossing: track.first_crossing,
                final_max_err: last.max_err,
                final_bound: last.bound,
                growth,
                extrapolated_err: growth.map(|g| g.at(horizon as f64)),
            });
            // The error the tolerance allowed at the worst cell: err / (err / allowed), when both are finite numbers;
            // otherwise (an error that overflowed, a ratio of 0) what the tolerance allows at the largest |u|.
            let quotient = last.max_err / last.tol_ratio;
            let allowed_at_end =
                if last.tol_ratio > 0.0 && quotient.is_finite() { quotient } else { tolerance.allowed(last.max_abs) };
            evidence.push(Evidence {
                lens: info.name.to_string(),
                field,
                guaranteed: info.guaranteed,
                first_crossing: track.first_crossing,
                final_max_err: last.max_err,
                allowed_at_end,
                growth,
            });
        }
    }
    let decision = verdict::decide(&evidence, steps_done, horizon);
    let event_totals: Vec<_> = recorder.totals.values().cloned().collect();
    let notes = analysis::notes(&recorder.trace.events, &event_totals);
    let verdict = Verdict {
        status: decision.status,
        until_step: decision.until_step,
        least_precision_bits: None,
        text: words::verdict_text(&decision, &tolerance, &notes),
    };
    Summary {
        steps_done,
        complete: true,
        wall_s: recorder.started.elapsed().as_secs_f64(),
        results,
        verdict,
        event_totals,
    }
}
