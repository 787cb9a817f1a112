//! `twinstep sweep`: the kiln wall's sweep runs and prints every format's run and the least precision; a trace
//! without a sweep is an input error (exit 2, one line naming the file), as `docs/cli.md` says.

mod common;
use common::{fixture, scratch, stderr, stdout, twinstep};

#[test]
fn demo_sweep_prints_every_format_and_the_least_precision() {
    let trace = scratch("sweep-demo.jsonl");
    let output = twinstep(&["sweep", "--demo", "--steps", "400", "--trace-out", trace.to_str().unwrap()]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let text = stdout(&output);
    for format in ["binary64", "binary32", "bfloat16", "binary16"] {
        assert!(text.lines().any(|l| l.starts_with(format)), "a line for {format}: {text}");
    }
    assert!(text.contains("least precision: "), "{text}");
    assert!(text.contains("rounding error only"), "the caution: {text}");
    // The same summary from the trace the demo wrote.
    let again = twinstep(&["sweep", trace.to_str().unwrap()]);
    assert_eq!(stdout(&again), text);
}

#[test]
fn a_trace_without_a_sweep_is_an_input_error() {
    let path = fixture("kiln_complete.jsonl");
    let output = twinstep(&["sweep", path.to_str().unwrap()]);
    let err = stderr(&output);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(err.contains("kiln_complete.jsonl") && err.contains("no precision sweep"), "{err}");
    assert!(twinstep(&["sweep"]).status.code() == Some(2), "no trace and no --demo is a usage error");
}
