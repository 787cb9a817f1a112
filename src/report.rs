//! The terminal report: a trace rendered as plain text for a person at a terminal.
//!
//! Sections, in reading order: what was audited; the per-step table (thinned to a screenful per lens); the worst
//! field; the first tolerance crossing; guaranteed bound against estimate (and where the bound was lost, both
//! numbers); what the guaranteed lenses say about correct digits, and any estimate they prove wrong; events with
//! their source sites; the verdict; the rounding-only caution. An incomplete trace (no
//! summary) is rendered as far as it goes and says so at the top.

use std::fmt::Write;

use crate::trace::{EventName, FieldStep, StepRecord, Trace};
use crate::verdict::{Status, CAUTION};

/// Rows of the per-step table per lens.
const TABLE_ROWS: usize = 14;

/// Renders a trace as text.
#[must_use]
pub fn render_text(trace: &Trace) -> String {
    let mut out = String::new();
    heading(&mut out, trace);
    table(&mut out, trace);
    worst_and_crossing(&mut out, trace);
    bounds(&mut out, trace);
    consistency(&mut out, trace);
    events(&mut out, trace);
    verdict(&mut out, trace);
    let _ = writeln!(out, "\nNote. {CAUTION}");
    out
}

fn heading(out: &mut String, trace: &Trace) {
    let h = &trace.header;
    let _ = writeln!(out, "twinstep audit of {}{}", h.kernel, paren(&h.scenario));
    let fields: Vec<String> = h.fields.iter().map(|f| format!("{} {:?}", f.name, f.shape)).collect();
    let _ = writeln!(out, "  fields     {}", fields.join(", "));
    let _ = writeln!(out, "  lenses     {}", h.lenses.join(", "));
    let _ = writeln!(out, "  tolerance  {}", h.tolerance.describe());
    let audited = h.steps_audited.unwrap_or(h.steps_planned);
    let _ = writeln!(out, "  steps      {audited} audited, {} planned", h.steps_planned);
    let _ = writeln!(
        out,
        "  machine    {} {} ({} cpus), twinstep {} {} build",
        h.machine.os, h.machine.arch, h.machine.cpus, h.build.twinstep, h.build.profile
    );
    match &trace.summary {
        Some(s) => {
            let _ = writeln!(out, "  run        complete: {} steps in {:.3} s", s.steps_done, s.wall_s);
        }
        None => {
            let last = trace.steps.last().map_or(0, |s| s.step);
            let _ = writeln!(
                out,
                "  run        INCOMPLETE: the trace ends without its summary (the run was stopped or failed); \
shown up to step {last}{}",
                if trace.truncated_tail { ", last line cut short" } else { "" }
            );
        }
    }
}

fn paren(text: &str) -> String {
    if text.is_empty() {
        String::new()
    } else {
        format!(" — {text}")
    }
}

/// Picks at most `rows` items spread evenly over `items`, always keeping the first and the last.
fn spread<T>(items: &[T], rows: usize) -> Vec<&T> {
    if items.len() <= rows {
        return items.iter().collect();
    }
    let last = items.len() - 1;
    let mut picked: Vec<usize> = (0..rows).map(|k| k * last / (rows - 1)).collect();
    picked.dedup();
    picked.into_iter().map(|i| &items[i]).collect()
}

fn number(x: Option<f64>) -> String {
    match x {
        None => "-".to_string(),
        Some(v) if v.is_nan() => "NaN".to_string(),
        Some(v) => format!("{v:.2e}"),
    }
}

/// A tolerance ratio: fixed-point near 1, where the reader compares it with 1; scientific when far above.
fn ratio(x: f64) -> String {
    if x.is_nan() {
        "NaN".to_string()
    } else if x < 1e3 {
        format!("{x:.3}")
    } else {
        format!("{x:.2e}")
    }
}

fn table(out: &mut String, trace: &Trace) {
    for lens in &trace.header.lenses {
        let steps: Vec<&StepRecord> = trace.steps.iter().filter(|s| &s.lens == lens).collect();
        if steps.is_empty() {
            continue;
        }
        let _ = writeln!(
            out,
            "\nError by step, lens {lens} ({} of {} recorded steps shown)",
            steps.len().min(TABLE_ROWS),
            steps.len()
        );
        let _ = writeln!(
            out,
            "  {:>9}  {:<8} {:>10} {:>10} {:>10} {:>10} {:>6}  {:<12} {:>9}",
            "step", "field", "max err", "mean err", "max rel", "bound", "bits", "worst cell", "tol ratio"
        );
        for record in spread(&steps, TABLE_ROWS) {
            for f in &record.fields {
                let _ = writeln!(
                    out,
                    "  {:>9}  {:<8} {:>10} {:>10} {:>10} {:>10} {:>6.1}  {:<12} {:>9}",
                    record.step,
                    f.name,
                    number(Some(f.max_err)),
                    number(Some(f.mean_err)),
                    number(Some(f.max_rel_err)),
                    number(f.bound),
                    f.correct_bits,
                    format!("{:?}", f.worst_cell),
                    ratio(f.tol_ratio)
                );
            }
        }
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

fn worst_and_crossing(out: &mut String, trace: &Trace) {
    let finals = finals(trace);
    // Estimates judge (guaranteed bounds have their own section below); a trace of bounds alone uses the bounds.
    // Which lenses are guaranteed: the header says (older traces: any record with a bound, see `is_guaranteed`).
    let estimating_lenses: Vec<&str> =
        finals.iter().filter(|(lens, _, _)| !trace.is_guaranteed(lens)).map(|(lens, _, _)| *lens).collect();
    let judges = |lens: &str| estimating_lenses.is_empty() || estimating_lenses.contains(&lens);
    // An infinite ratio is written as null and reads back as NaN (`docs/trace.md`), so NaN ranks as +∞, whatever
    // its sign bit: `total_cmp` alone would put a negative NaN below every number and a positive one above ∞.
    let severity = |ratio: f64| if ratio.is_nan() { f64::INFINITY } else { ratio };
    let worst = finals
        .iter()
        .filter(|(lens, _, _)| judges(lens))
        .max_by(|a, b| severity(a.2.tol_ratio).total_cmp(&severity(b.2.tol_ratio)));
    if let Some((lens, step, f)) = worst {
        let _ = writeln!(
            out,
            "\nWorst field: {} (lens {lens}): largest error {} at step {step}, cell {:?}, {} of the tolerance, \
{:.1} correct bits{}.",
            f.name,
            number(Some(f.max_err)),
            f.worst_cell,
            ratio(f.tol_ratio),
            f.correct_bits,
            f.representation_err.map_or_else(String::new, |r| format!(
                "; representing the program's literals and constants contributes up to {} in a cell, the rest is arithmetic",
                number(Some(r))
            ))
        );
    }
    let crossings: Vec<_> = trace.events.iter().filter(|e| e.kind == EventName::ToleranceCrossed).collect();
    match crossings.iter().filter(|e| judges(&e.lens)).min_by_key(|e| e.step) {
        Some(first) => {
            let _ = writeln!(
                out,
                "First crossing: step {}, field {}, lens {}: {}.",
                first.step,
                first.field.as_deref().unwrap_or("?"),
                first.lens,
                first.detail
            );
        }
        None => {
            let _ = writeln!(out, "First crossing: none, no error estimate went beyond the tolerance.");
        }
    }
    if let Some(bound) = crossings.iter().filter(|e| !judges(&e.lens)).min_by_key(|e| e.step) {
        let _ = writeln!(
            out,
            "A guaranteed bound crosses the tolerance first at step {} (lens {}, field {}).",
            bound.step,
            bound.lens,
            bound.field.as_deref().unwrap_or("?")
        );
    }
}

fn bounds(out: &mut String, trace: &Trace) {
    let finals = finals(trace);
    let guaranteed: Vec<_> = finals.iter().filter(|(_, _, f)| f.bound.is_some()).collect();
    if guaranteed.is_empty() {
        return;
    }
    let _ = writeln!(out, "\nGuaranteed bound against estimate (last recorded step):");
    for (lens, step, f) in guaranteed {
        // The estimate to compare with: a lens without a bound for the same field, if the audit ran one.
        let estimate = finals.iter().find(|(_, _, g)| g.bound.is_none() && g.name == f.name);
        let (estimate_value, source) = match estimate {
            Some((other, _, g)) => (g.max_err, format!("estimate of lens {other}")),
            None => (f.max_err, format!("lens {lens}'s own estimate")),
        };
        let bound = f.bound.unwrap_or(f64::NAN);
        let _ = writeln!(
            out,
            "  field {} at step {step}: bound {} (lens {lens}) against {} ({source}), the bound is {:.1} times larger.",
            f.name,
            number(Some(bound)),
            number(Some(estimate_value)),
            bound / estimate_value
        );
    }
    for lost in trace.events.iter().filter(|e| e.kind == EventName::BoundLost) {
        let _ = writeln!(
            out,
            "  BOUND LOST at step {} for field {} (lens {}): bound {} while the estimate is {}. {}",
            lost.step,
            lost.field.as_deref().unwrap_or("?"),
            lost.lens,
            number(lost.bound),
            number(lost.estimate),
            lost.detail
        );
    }
}

/// What the guaranteed lenses say about the digits of the result, and whether an estimate contradicts them.
///
/// A guaranteed lens encloses the exact result in `[primal − bound, primal + bound]`. Two conclusions follow
/// from the numbers alone. When the bound is at least the value itself (0 correct bits) and the estimates agree,
/// the f64 result has no correct digit. When an estimating lens (the shadow) puts its own value further from the
/// primal than the guaranteed bound allows, that value lies outside the enclosure in some cell: the estimate is
/// wrong there (too few bits to absorb a cancellation), and the report says so instead of quoting it.
fn consistency(out: &mut String, trace: &Trace) {
    let lines = digit_findings(trace);
    if !lines.is_empty() {
        let _ = writeln!(out, "\nDigits and consistency:");
        for line in lines {
            let _ = writeln!(out, "  {line}");
        }
    }
}

/// The findings of the "digits and consistency" section, one sentence each (empty when there is nothing to say),
/// for the terminal report and the CLI's other formats alike; see [`consistency`] for the reasoning.
#[must_use]
pub fn digit_findings(trace: &Trace) -> Vec<String> {
    let finals = finals(trace);
    let mut lines = Vec::new();
    for (lens, step, f) in finals.iter().filter(|(lens, _, _)| trace.is_guaranteed(lens)) {
        if f.bound.is_none() || f.correct_bits >= 1.0 {
            continue;
        }
        let estimates: Vec<_> = finals.iter().filter(|(l, _, g)| !trace.is_guaranteed(l) && g.name == f.name).collect();
        if estimates.iter().all(|(_, _, g)| g.correct_bits < 1.0) {
            lines.push(format!(
                "field {} at step {step}: the f64 result has no correct digit: the guaranteed bound {} (lens {lens}) is \
at least the value itself{}.",
                f.name,
                number(f.bound),
                if estimates.is_empty() { String::new() } else { ", and the estimates agree".to_string() }
            ));
        } else {
            lines.push(format!(
                "field {} at step {step}: no digit of the f64 result is guaranteed (lens {lens}'s bound {} is at least \
the value itself); the estimates give more, without a guarantee.",
                f.name,
                number(f.bound)
            ));
        }
    }
    // Contradictions, at every step both kinds of lens recorded; the first one per estimating lens and field.
    let mut seen: Vec<(&str, &str)> = Vec::new();
    for estimate in trace.steps.iter().filter(|s| !trace.is_guaranteed(&s.lens)) {
        for e in &estimate.fields {
            if seen.contains(&(estimate.lens.as_str(), e.name.as_str())) {
                continue;
            }
            let guarantee = trace
                .steps
                .iter()
                .filter(|s| s.step == estimate.step && trace.is_guaranteed(&s.lens))
                .flat_map(|s| s.fields.iter().map(move |g| (s, g)))
                .find(|(_, g)| g.name == e.name && g.bound.is_some_and(|b| e.max_err > b));
            if let Some((s, g)) = guarantee {
                seen.push((estimate.lens.as_str(), e.name.as_str()));
                lines.push(format!(
                    "field {} at step {}: the estimate of lens {} is WRONG: it puts its value {} from the f64 result, \
outside the guaranteed bound {} of lens {}; trust the bound there.",
                    e.name,
                    estimate.step,
                    estimate.lens,
                    number(Some(e.max_err)),
                    number(g.bound),
                    s.lens
                ));
            }
        }
    }
    lines
}

fn events(out: &mut String, trace: &Trace) {
    let shown = |kind: EventName| !matches!(kind, EventName::ToleranceCrossed | EventName::BoundLost);
    let _ = writeln!(out, "\nEvents:");
    let mut any = false;
    match &trace.summary {
        Some(summary) => {
            for t in summary.event_totals.iter().filter(|t| shown(t.kind)) {
                any = true;
                let _ = writeln!(
                    out,
                    "  {:<26} lens {:<9} {}{}: {} time(s) over {} step(s), first at step {}, last at step {}",
                    t.kind.name(),
                    t.lens,
                    t.site.as_ref().map_or_else(|| "(no source site)".to_string(), ToString::to_string),
                    t.field.as_ref().map_or_else(String::new, |f| format!(", field {f}")),
                    t.count,
                    t.steps,
                    t.first_step,
                    t.last_step
                );
            }
        }
        None => {
            for e in trace.events.iter().filter(|e| shown(e.kind)) {
                any = true;
                let _ = writeln!(
                    out,
                    "  step {:>8}  {:<26} lens {:<9} {}{}: {}",
                    e.step,
                    e.kind.name(),
                    e.lens,
                    e.site.as_ref().map_or_else(|| "(no source site)".to_string(), ToString::to_string),
                    e.field.as_ref().map_or_else(String::new, |f| format!(", field {f}")),
                    e.detail
                );
            }
        }
    }
    if !any {
        let _ = writeln!(out, "  none (no NaN, infinity, branch or index instability, primal mismatch).");
    }
}

fn verdict(out: &mut String, trace: &Trace) {
    let Some(summary) = &trace.summary else {
        let _ = writeln!(out, "\nVerdict: none, the run did not finish.");
        return;
    };
    let v = &summary.verdict;
    let status = match (v.status, v.until_step) {
        (Status::Enough, _) => "ENOUGH".to_string(),
        (Status::EnoughUntil, Some(n)) => format!("ENOUGH UNTIL STEP {n}"),
        (Status::EnoughUntil, None) => "ENOUGH UNTIL (step unknown)".to_string(),
        (Status::NotEnough, _) => "NOT ENOUGH".to_string(),
    };
    let _ = writeln!(out, "\nVerdict: {status}");
    for r in &summary.results {
        let growth =
            r.growth.map_or_else(|| "no growth law fitted".to_string(), |g| format!("growth {}", g.describe()));
        let _ = writeln!(
            out,
            "  lens {:<9} field {:<8} first crossing {:<8} final error {} bound {} {growth}, at the horizon {}",
            r.lens,
            r.field,
            r.first_crossing.map_or_else(|| "none".to_string(), |s| s.to_string()),
            number(Some(r.final_max_err)),
            number(r.final_bound),
            number(r.extrapolated_err)
        );
    }
    // The caution closes the whole report, so it is not repeated here.
    let _ = writeln!(out, "  {}", v.text.replace(CAUTION, "").trim_end());
}
