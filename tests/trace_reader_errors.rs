//! The reader turns every malformed trace into a clear error (never a panic) and reads a cut-short trace as an
//! incomplete run, as `docs/trace.md` requires.

mod audit_support;

use audit_support::kernels::Fold;
use audit_support::scratch;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::Shadow;
use twinstep::trace::{self, ReadError};

/// A complete trace, written in a directory of the calling test's own (tests run in parallel).
fn good_trace(test: &str) -> String {
    let path = scratch(test).join("fold.jsonl");
    Audit::new(&Fold, Tolerance::absolute(1e-3), 12).trace(&path).lens::<Shadow>().run().unwrap();
    std::fs::read_to_string(path).unwrap()
}

#[test]
fn malformed_traces_are_errors() {
    let good = good_trace("trace_reader_malformed");
    let lines: Vec<&str> = good.lines().collect();
    let join = |ls: &[&str]| ls.iter().map(|l| format!("{l}\n")).collect::<String>();
    let header = lines[0];

    assert!(matches!(trace::parse(""), Err(ReadError::Empty)));
    assert!(matches!(trace::parse("\n\n"), Err(ReadError::Empty)));
    assert!(matches!(trace::parse("{}\n"), Err(ReadError::NotATrace { .. })));
    assert!(matches!(trace::parse("not json at all\n"), Err(ReadError::NotATrace { .. })));
    let other_format = header.replace("twinstep-trace", "something-else");
    assert!(matches!(trace::parse(&join(&[&other_format])), Err(ReadError::NotATrace { .. })));
    // This twinstep writes version 3 and reads 1, 2 and 3 (docs/trace.md, "Versions"): 4 is unknown, 1 and 2 read.
    let version_four = header.replace("\"version\":3", "\"version\":4");
    assert_ne!(version_four, header);
    assert!(matches!(trace::parse(&join(&[&version_four])), Err(ReadError::UnknownVersion { version: 4 })));
    for older in ["\"version\":1", "\"version\":2"] {
        assert!(trace::parse(&join(&[&header.replace("\"version\":3", older)])).is_ok(), "{older}");
    }
    // A step record first.
    assert!(matches!(trace::parse(&join(&lines[1..])), Err(ReadError::NotATrace { .. })));
    // Garbage in the middle names its line.
    let mut broken = lines.clone();
    broken.insert(2, "{\"record\":\"step\",\"step\":");
    assert!(matches!(trace::parse(&join(&broken)), Err(ReadError::Malformed { line: 3, .. })));
    // An unknown record kind is an error (unknown members are not).
    let mut unknown = lines.clone();
    unknown.insert(1, "{\"record\":\"mystery\",\"step\":0}");
    assert!(matches!(trace::parse(&join(&unknown)), Err(ReadError::Malformed { line: 2, .. })));
    let extra_member = header.replacen('{', "{\"future_member\":[1,2,3],", 1);
    assert!(trace::parse(&join(&[&extra_member])).is_ok());
    // Nothing after the summary, no second header, no steps going backwards.
    let mut after = lines.clone();
    after.push(lines[1]);
    assert!(matches!(trace::parse(&join(&after)), Err(ReadError::OutOfOrder { .. })));
    let mut twice = lines.clone();
    twice.insert(1, header);
    assert!(matches!(trace::parse(&join(&twice)), Err(ReadError::OutOfOrder { line: 2, .. })));
    let mut backwards = lines[..lines.len() - 1].to_vec();
    backwards.push(lines[1]);
    assert!(matches!(trace::parse(&join(&backwards)), Err(ReadError::OutOfOrder { .. })));
    // A header of another version is a version error even when its members are not those of version 1.
    let future = r#"{"record":"header","format":"twinstep-trace","version":7,"something":"else"}"#;
    assert!(matches!(trace::parse(&join(&[future])), Err(ReadError::UnknownVersion { version: 7 })));
    // A line longer than the limit is refused before it is parsed, wherever it is.
    let long = format!("{{\"record\":\"step\",\"pad\":\"{}\"}}", "x".repeat(trace::MAX_LINE_BYTES));
    let mut too_long = lines.clone();
    too_long.insert(1, &long);
    assert!(matches!(trace::parse(&join(&too_long)), Err(ReadError::LineTooLong { line: 2 })));
    // Records must name lenses and fields the header declares, step, profile, event and summary alike.
    let step = lines.iter().position(|l| l.contains("\"record\":\"step\"")).unwrap();
    let profile = lines.iter().position(|l| l.contains("\"record\":\"profile\"")).unwrap();
    let summary = lines.len() - 1;
    for (at, from, to) in [
        (step, "\"lens\":\"shadow\"", "\"lens\":\"ghost\""),
        (step, "\"name\":\"u\"", "\"name\":\"v\""),
        (profile, "\"lens\":\"shadow\"", "\"lens\":\"ghost\""),
        (profile, "\"field\":\"u\"", "\"field\":\"v\""),
        (summary, "\"field\":\"u\"", "\"field\":\"v\""),
        (0, "\"guaranteed_lenses\":[]", "\"guaranteed_lenses\":[\"ghost\"]"),
    ] {
        let mut renamed: Vec<String> = lines.iter().map(ToString::to_string).collect();
        assert!(renamed[at].contains(from), "{from} in line {at}");
        renamed[at] = renamed[at].replace(from, to);
        let renamed: Vec<&str> = renamed.iter().map(String::as_str).collect();
        match trace::parse(&join(&renamed)) {
            Err(ReadError::UnknownName { message }) => assert!(message.contains("unknown"), "{message}"),
            other => panic!("{to} in line {at}: {other:?}"),
        }
    }
    // A field or lens declared twice.
    let twice_declared = header.replace("\"lenses\":[\"shadow\"]", "\"lenses\":[\"shadow\",\"shadow\"]");
    assert_ne!(twice_declared, header);
    assert!(matches!(trace::parse(&join(&[&twice_declared])), Err(ReadError::UnknownName { .. })));
    // A header without `guaranteed_lenses` (older traces) still reads.
    let old_header = header.replace("\"guaranteed_lenses\":[],", "");
    assert_ne!(old_header, header);
    assert!(trace::parse(&join(&[&old_header])).unwrap().header.guaranteed_lenses.is_none());
    // A missing file.
    let missing = scratch("trace_reader_missing").join("nothing-here.jsonl");
    assert!(matches!(trace::read(&missing), Err(ReadError::Io { .. })));
    // Every error has a message for a person.
    assert!(!ReadError::Empty.to_string().is_empty());
}

#[test]
fn a_prefix_reads_as_an_incomplete_run() {
    let good = good_trace("trace_reader_prefix");
    assert!(trace::parse(&good).unwrap().is_complete());
    // Cut at every byte short of the summary's newline (without it the summary is still whole JSON): the reader
    // either reads an incomplete run or reports an error, and never panics.
    let last_cut = good.len() - 1;
    let mut incomplete = 0;
    for cut in (0..last_cut).filter(|&c| good.is_char_boundary(c)) {
        match trace::parse(&good[..cut]) {
            Ok(t) => {
                assert!(!t.is_complete(), "cut at {cut} read as complete");
                incomplete += 1;
            }
            Err(e) => assert!(!e.to_string().is_empty()),
        }
    }
    // Every cut from the end of the header's JSON on is a readable prefix.
    let header_end = good.find('\n').unwrap() + 1;
    let readable = (header_end - 1..last_cut).filter(|&c| good.is_char_boundary(c)).count();
    assert_eq!(incomplete, readable);
    // A cut in the middle of a line: that line is skipped and flagged.
    let second_line_end = header_end + good[header_end..].find('\n').unwrap() + 1;
    let t = trace::parse(&good[..second_line_end + 10]).unwrap();
    assert!(t.truncated_tail && t.summary.is_none() && t.steps.len() == 1);
}
