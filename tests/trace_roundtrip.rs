//! The trace written by an audit reads back to exactly what the audit returned, line for line, and follows the
//! shape `docs/trace.md` fixes: header first, summary last.

mod audit_support;

use audit_support::kernels::Fold;
use audit_support::scratch;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::trace::{self, EventName, Record, FORMAT, VERSION};

#[test]
fn written_trace_reads_back_identical() {
    let path = scratch("trace_roundtrip").join("fold.jsonl");
    let written = Audit::new(&Fold, Tolerance::absolute(1e-3), 40)
        .kernel("fold_step")
        .describe("one cell, a tenth off per step")
        .trace(&path)
        .every_step()
        .lens::<Bound>()
        .lens::<Shadow>()
        .run()
        .unwrap();
    let read = trace::read(&path).unwrap();
    assert_eq!(read.header, written.header);
    for (r, w) in read.steps.iter().zip(&written.steps) {
        assert_eq!(r, w);
    }
    for (r, w) in read.events.iter().zip(&written.events) {
        assert_eq!(r, w);
    }
    assert_eq!(read.summary, written.summary);
    assert_eq!(read, written);
    assert!(read.is_complete() && !read.truncated_tail);
    // Every step 0..=40 of both lenses under the `every` policy.
    assert_eq!(read.steps.len(), 2 * 41);
    // 1 − 0.1·10 is 0 in exact arithmetic, the double 0.1 is not a tenth (IEEE 754-2019 binary64 has no exact
    // tenth): the fold's comparison at step 10 is undecidable for the bound lens.
    assert!(read.events.iter().any(|e| e.kind == EventName::UndecidedComparison && e.site.is_some()));

    let text = std::fs::read_to_string(&path).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    // The one-cell field is 1-D, so it has profiles too (`docs/trace.md`, "profile").
    assert!(!read.profiles.is_empty());
    assert_eq!(lines.len(), 1 + read.steps.len() + read.events.len() + read.profiles.len() + 1);
    assert!(text.ends_with('\n'));
    match serde_json::from_str::<Record>(lines[0]).unwrap() {
        Record::Header(h) => assert_eq!((h.format.as_str(), h.version), (FORMAT, VERSION)),
        other => panic!("first line is {other:?}"),
    }
    // Versions 2 and 3 write the event kinds' own names (docs/trace.md, "Versions"), never version 1's.
    assert_eq!(VERSION, 3);
    assert!(text.contains("\"kind\":\"undecided_comparison\""), "{text}");
    assert!(!text.contains("branch_instability"));

    // The same trace as version 1 wrote it (version 1 in the header, the old event name) still reads, with the
    // same events.
    let old = text.replacen("\"version\":3", "\"version\":1", 1).replace("undecided_comparison", "branch_instability");
    assert_ne!(old, text);
    let read_old = trace::parse(&old).expect("a version-1 trace reads");
    assert_eq!(read_old.events, read.events);
    assert_eq!(read_old.header.version, 1);

    // The audit of an f64 scenario names its float in the header; a header written before the field was added
    // (no `float` member) reads as an f64 program's, and its report says f64.
    assert_eq!(read.header.float, "f64");
    assert!(lines[0].contains("\"float\":\"f64\""), "{}", lines[0]);
    let unnamed = text.replacen(",\"float\":\"f64\"", "", 1);
    assert_ne!(unnamed, text);
    let read_unnamed = trace::parse(&unnamed).expect("a header without float reads");
    assert_eq!(read_unnamed.header.float, "f64");
    assert_eq!(read_unnamed, read);
    assert!(twinstep::report::render_text(&read_unnamed).contains("f64 is "));
    assert!(matches!(serde_json::from_str::<Record>(lines[lines.len() - 1]).unwrap(), Record::Summary(_)));
    // Every line is one JSON object with a "record" member.
    for line in &lines {
        let value: serde_json::Value = serde_json::from_str(line).unwrap();
        assert!(value.get("record").and_then(|r| r.as_str()).is_some(), "{line}");
    }
}
