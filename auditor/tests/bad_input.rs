//! Bad input never panics: each kind of broken trace or unusable path gives one line on stderr that names the file
//! and what is wrong, and exit code 2 (`docs/cli.md`). A trace cut off by a killed run still renders, with an
//! "incomplete run" notice.

mod common;
use common::{fixture, scratch, stderr, stdout, twinstep};

/// Runs `report` on a path and checks the one-line error: exit 2, the file named, the wording expected.
fn assert_input_error(args: &[&str], file: &str, wording: &str) {
    let output = twinstep(args);
    let err = stderr(&output);
    assert_eq!(output.status.code(), Some(2), "exit code for {args:?}: {err}");
    assert_eq!(err.lines().count(), 1, "one line for {args:?}: {err}");
    assert!(err.contains(file), "names {file}: {err}");
    assert!(err.contains(wording), "says {wording:?}: {err}");
    assert!(!err.contains("panicked"), "no panic: {err}");
    assert!(stdout(&output).is_empty(), "nothing on stdout for {args:?}");
}

#[test]
fn empty_trace() {
    let path = fixture("bad_empty.jsonl");
    assert_input_error(&["report", path.to_str().unwrap()], "bad_empty.jsonl", "the trace is empty");
}

#[test]
fn wrong_version() {
    let path = fixture("bad_wrong_version.jsonl");
    assert_input_error(&["report", path.to_str().unwrap()], "bad_wrong_version.jsonl", "version 7 is not known");
}

#[test]
fn newer_version_with_other_members() {
    // A future header may drop or rename members: the message is still about the version.
    // This twinstep reads versions 1, 2 and 3 (docs/trace.md, "Versions"), so 4 is the first unknown one.
    let path = scratch("v4.jsonl");
    std::fs::write(&path, "{\"record\":\"header\",\"format\":\"twinstep-trace\",\"version\":4,\"runs\":[]}\n").unwrap();
    assert_input_error(&["report", path.to_str().unwrap()], "v4.jsonl", "version 4 is not known");
}

#[test]
fn unknown_field() {
    let path = fixture("bad_unknown_field.jsonl");
    assert_input_error(
        &["report", path.to_str().unwrap()],
        "bad_unknown_field.jsonl: step 0 of lens bound",
        "unknown field \"pressure\"",
    );
}

#[test]
fn unknown_record_kind() {
    let path = fixture("bad_unknown_record.jsonl");
    assert_input_error(
        &["report", path.to_str().unwrap()],
        "bad_unknown_record.jsonl: line 2",
        "unknown variant `checkpoint`",
    );
}

#[test]
fn corrupted_line() {
    let path = fixture("bad_corrupted.jsonl");
    assert_input_error(&["gate", path.to_str().unwrap()], "bad_corrupted.jsonl: line 4", "not a valid trace record");
}

#[test]
fn not_json_at_all() {
    let path = scratch("garbage.jsonl");
    std::fs::write(&path, b"\x00\xff\xfe this is not a trace\n").unwrap();
    assert_input_error(&["report", path.to_str().unwrap()], "garbage.jsonl", "not a twinstep trace");
}

#[test]
fn enormous_line() {
    // A header followed by one 9 MiB line: over the reader's 8 MiB limit, refused without being parsed.
    let header = std::fs::read_to_string(fixture("kiln_complete.jsonl")).unwrap().lines().next().unwrap().to_owned();
    let mut text = header + "\n";
    text.push_str(&"x".repeat(9 << 20));
    text.push('\n');
    let path = scratch("enormous.jsonl");
    std::fs::write(&path, text).unwrap();
    assert_input_error(&["report", path.to_str().unwrap()], "enormous.jsonl: line 2", "longer than 8 MiB");
}

#[test]
fn directory_instead_of_file() {
    let dir = fixture("");
    assert_input_error(&["report", dir.to_str().unwrap()], "traces", "is a directory");
}

#[test]
fn missing_file() {
    assert_input_error(&["gate", "/nonexistent/run.jsonl"], "/nonexistent/run.jsonl", "cannot open");
}

#[test]
fn unwritable_output() {
    // The output path is an existing directory: writing a file there fails whoever runs the test (root too).
    let trace = fixture("kiln_complete.jsonl");
    let out = scratch("");
    let out = out.to_str().unwrap();
    assert_input_error(&["report", trace.to_str().unwrap(), "-f", "html", "-o", out], out, "cannot write");
}

#[test]
fn killed_run_still_renders_with_notice() {
    let path = fixture("kiln_killed.jsonl");
    // The terminal text is the library's report, which says INCOMPLETE; the others share the CLI's wording.
    for (format, notice) in
        [("text", "INCOMPLETE"), ("md", "Incomplete run"), ("html", "Incomplete run"), ("json", "Incomplete run")]
    {
        let output = twinstep(&["report", path.to_str().unwrap(), "-f", format]);
        assert_eq!(output.status.code(), Some(0), "{format}: {}", stderr(&output));
        assert!(stdout(&output).contains(notice), "{format} shows the notice");
    }
}

#[test]
fn bad_option_value_is_a_usage_error() {
    let path = fixture("kiln_complete.jsonl");
    let output = twinstep(&["report", path.to_str().unwrap(), "-f", "pdf"]);
    assert_eq!(output.status.code(), Some(2));
    let output = twinstep(&["gate", path.to_str().unwrap(), "--atol=-1"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("--atol must be a finite number >= 0"));
}
