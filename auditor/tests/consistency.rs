//! The "digits and consistency" findings of the terminal report reach the pull-request and page formats too.
//!
//! The fixed kiln trace is consistent; a constructed contradiction (the shadow's recorded distance from the primal
//! at step 0 set beyond the bound lens's guaranteed bound of the same step and field) must be called out in every
//! format. That the shadow is then wrong follows from the enclosure alone (no numeric source needed).

use twinstep_cli::input::parse_trace;
use twinstep_cli::report::{render, Format};

fn kiln() -> twinstep::trace::Trace {
    parse_trace(include_bytes!("../../fixtures/traces/kiln_complete.jsonl")).expect("the fixed trace reads")
}

#[test]
fn a_contradicted_estimate_is_named_in_markdown_and_html() {
    let consistent = kiln();
    for format in [Format::Md, Format::Html] {
        assert!(!render(&consistent, format, false).contains("is WRONG"), "{format:?}: nothing to call out");
    }
    let mut trace = kiln();
    let bound = trace.steps[0].fields[0].bound.expect("the bound lens records a bound at step 0");
    let shadow = trace.steps.iter_mut().find(|s| s.step == 0 && s.lens == "shadow").expect("shadow at step 0");
    shadow.fields[0].max_err = 10.0 * bound;
    for format in [Format::Md, Format::Html] {
        let page = render(&trace, format, false);
        assert!(page.contains("Digits and consistency"), "{format:?}");
        assert!(page.contains("the estimate of lens shadow is WRONG"), "{format:?}");
    }
}
