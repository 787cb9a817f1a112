//! The end of a recording: the per-lens, per-field results, the growth fits, the evidence the verdict decides on,
//! the verdict itself with its notes, and the summary record that closes the trace. The verdict's words come from
//! [`crate::report::words`]; this module only gathers facts.

use super::Recorder;
use crate::report::{analysis, certificate, words};
use crate::trace::{BackwardCostRecord, CertificateSummary, ResultRecord, Summary};
use crate::verdict::{self, Evidence, Standing, Verdict};

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
            // The one rule of the reports, from the trace as written (a certified lens whose certificate stopped
            // judges as an estimate).
            let standing = certificate::standing(&recorder.trace, info.name);
            evidence.push(Evidence {
                lens: info.name.to_string(),
                field,
                guaranteed: standing == Standing::Bound,
                certified: standing == Standing::Guarantee,
                first_crossing: track.first_crossing,
                final_max_err: last.max_err,
                allowed_at_end,
                growth,
            });
        }
    }
    let decision = verdict::decide(&evidence, steps_done, horizon);
    let event_totals: Vec<_> = recorder.totals.values().cloned().collect();
    let mut notes = analysis::notes(&recorder.trace.events, &event_totals);
    notes.extend(certificate::notes(&recorder.trace));
    let verdict = Verdict {
        status: decision.status,
        until_step: decision.until_step,
        least_precision_bits: None,
        text: words::verdict_text(&decision, &tolerance, &notes, &recorder.trace.header.float),
    };
    Summary {
        steps_done,
        complete: true,
        wall_s: recorder.started.elapsed().as_secs_f64(),
        results,
        verdict,
        event_totals,
        certificates: certificates(recorder),
    }
}

/// Each certified lens's totals.
fn certificates(recorder: &Recorder) -> Vec<CertificateSummary> {
    recorder
        .lenses
        .iter()
        .zip(&recorder.certificates)
        .filter_map(|(info, c)| Some((info, c.as_ref()?)))
        .map(|(info, c)| CertificateSummary {
            lens: info.name.to_string(),
            route: c.route.into(),
            growth: c.mean_growth,
            ended_at: c.ended_at,
            backward_declined: c.totals.as_ref().is_some_and(|t| t.backward_declined),
            backward: c.totals.as_ref().filter(|t| t.backward.sweeps > 0 || t.backward.bytes > 0).map(|t| {
                BackwardCostRecord {
                    sweeps: t.backward.sweeps,
                    seconds: t.backward.time.as_secs_f64(),
                    multiply_adds: t.backward.multiply_adds,
                    bytes: t.backward.bytes as u64,
                }
            }),
            clashes: c.totals.as_ref().map_or(0, |t| t.clashes),
        })
        .collect()
}
