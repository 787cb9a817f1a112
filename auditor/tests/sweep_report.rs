//! The precision sweep in every report format, on traces of real audits of the kiln wall with `Audit::sweep`
//! (the recorder's and the sweep's own code, no hand-written numbers): the verdict names the least precision and
//! what f32 would do, or, where binary64 is not enough, the bits the fitted law gives and the double-double
//! suggestion; the text and Markdown sweep sections are snapshot-tested; HTML draws one curve per format and the
//! error against p; JSON carries the section's facts; CSV its comment lines.
//!
//! The snapshots hold the sweep's section only: it has no machine facts or wall time, so it does not depend on where
//! the test runs.

mod common;
use common::scratch;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::Shadow;
use twinstep::sweep::SweepPlan;
use twinstep::trace::Trace;
use twinstep_cli::demo::kiln::Wall;
use twinstep_cli::report::{render, Format};

/// The kiln wall audited for `steps` steps with the shadow lens and the standard sweep, against `atol` kelvin.
fn audit(name: &str, steps: u64, atol: f64) -> Trace {
    let wall = Wall::default();
    Audit::new(&wall, Tolerance::absolute(atol), steps)
        .kernel("wall_step")
        .describe(&wall.describe())
        .trace(scratch(name))
        .lens::<Shadow>()
        .sweep(SweepPlan::standard())
        .run()
        .expect("the audit and its sweep run")
}

/// The part of `text` from the line `from` up to (not including) the first line after it that starts with
/// `until`.
fn section(text: &str, from: &str, until: &str) -> String {
    let start = text.find(from).unwrap_or_else(|| panic!("no {from:?} in {text}"));
    let rest = &text[start..];
    let end = rest[from.len()..].find(until).map_or(rest.len(), |e| e + from.len());
    rest[..end].to_owned()
}

#[test]
fn a_sweep_that_meets_names_the_least_precision_and_what_f32_does() {
    // 400 steps against 1 nK: binary64's error in T stays near 1e-11 (the demo's T grows about linearly from
    // 5e-14), so binary64 meets and the bisection runs below it.
    let trace = audit("sweep-report-meets", 400, 1e-9);
    let sweep = trace.sweep.as_ref().expect("the sweep's record");
    let least = sweep.least_bits.expect("binary64 meets 1 nK over 400 steps");
    let f32_run = trace.format_runs.iter().find(|r| r.format == "binary32").expect("a binary32 run");
    let t = f32_run.fields.iter().find(|f| f.name == "T").expect("field T");
    // Binary32 cannot even hold the initial T to 1 nK: near 1300 its spacing is 2^(10−23) ≈ 1.2e-4, and rounding
    // to nearest errs by at most half of it, 2^-14 ≈ 6.1e-5 (IEEE 754-2019 §4.3.1 and Table 3.5, p = 24).
    assert_eq!(t.first_crossing, Some(0));
    let at_start = t.history.iter().find(|(s, _)| *s == 0).expect("step 0 recorded").1;
    assert!(at_start > 1e-9 && at_start <= 2f64.powi(-14), "binary32 error at step 0: {at_start:e}");

    let text = render(&trace, Format::Text, false);
    let verdict = text.lines().find(|l| l.contains("Least precision")).expect("the verdict's sentence");
    assert!(
        verdict.ends_with(&format!(
            "Least precision: {least} bits; f32 crosses at step 0, bf16 at step 0, f16 at step 0."
        )),
        "{verdict}"
    );
    insta::assert_snapshot!("sweep_meets_text", section(&text, "Precision sweep\n", "\n\n"));
    let md = render(&trace, Format::Md, false);
    insta::assert_snapshot!("sweep_meets_md", section(&md, "### Precision sweep", "### "));

    let html = render(&trace, Format::Html, false);
    let part = section(&html, "<h2>Precision sweep</h2>", "<h2>");
    // Per field (T, rise): the error against the step of every format, and the error at the horizon against p.
    assert_eq!(part.matches("<svg").count(), 4, "{part}");
    for format in ["binary64 (53 bits)", "binary32 (24 bits)", "bfloat16 (8 bits)", "binary16 (11 bits)"] {
        assert!(part.contains(format), "a curve labelled {format}");
    }
    assert!(part.contains("against the precision p"), "{part}");

    let json: serde_json::Value = serde_json::from_str(&render(&trace, Format::Json, false)).expect("JSON");
    let sections = json["sections"].as_array().expect("sections");
    let data = &sections.iter().find(|s| s["kind"] == "sweep").expect("the sweep section")["data"];
    assert_eq!(data["summary"]["least_bits"], least);
    assert_eq!(data["runs"].as_array().map(Vec::len), Some(trace.format_runs.len()));
    assert_eq!(json["verdict_view"]["least_precision_bits"], least);

    let csv = render(&trace, Format::Csv, false);
    assert!(csv.lines().any(|l| l.starts_with("# precision sweep run: format=binary32, bits=24,")), "{csv}");
    assert!(csv.contains(&format!("# verdict: f64 is enough for this run. Least precision: {least} bits;")), "{csv}");
    // The comment lines come before the header, so the rows stay one table.
    let header = csv.lines().position(|l| l.starts_with("step,")).expect("the header");
    assert!(csv.lines().skip(header + 1).all(|l| !l.starts_with('#')));
}

#[test]
fn where_binary64_is_not_enough_the_report_gives_the_bits_and_double_double() {
    // 400 steps against 1e-13 K: near 1300 K binary64's spacing is 2^(10−52) ≈ 2.3e-13 (IEEE 754-2019 Table 3.5),
    // so one rounding of T's update errs by up to 1.1e-13 and a few steps' worth passes 1e-13, while rise (below
    // 5 K, spacing at most 2^(2−52) ≈ 8.9e-16) stays within it.
    let trace = audit("sweep-report-needs", 400, 1e-13);
    let sweep = trace.sweep.as_ref().expect("the sweep's record");
    assert_eq!(sweep.least_bits, None);
    assert_eq!(sweep.needed.iter().map(|n| n.field.as_str()).collect::<Vec<_>>(), ["T"]);
    let text = render(&trace, Format::Text, false);
    let verdict = text.lines().find(|l| l.contains("Least precision")).expect("the verdict's sentence");
    assert!(
        verdict.contains("Least precision: none up to 53 bits (f64) meets the tolerance; f32 crosses"),
        "{verdict}"
    );
    assert!(verdict.contains("field T needs about") && verdict.contains("double-double"), "{verdict}");
    insta::assert_snapshot!("sweep_needs_text", section(&text, "Precision sweep\n", "\n\n"));
    let md = render(&trace, Format::Md, false);
    insta::assert_snapshot!("sweep_needs_md", section(&md, "### Precision sweep", "### "));
    // The explanation no longer says the least precision is not computed; every report keeps the caution.
    assert!(!text.contains(twinstep::report::words::NO_SWEEP));
    assert!(text.contains("rounding error only"));
}
