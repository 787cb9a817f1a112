//! End to end: the built `twinstep expand FILE [--item NAME]` command, as a user runs it.
//!
//! The command prints the twins of a file's annotated items (exit 0), or names every problem as `FILE:LINE:COL:`
//! on stderr with exit code 2 and nothing on stdout. The positions are checked against the ones rustc itself
//! reports for the same constructs: the compile-fail cases of the root crate (`tests/compile_fail/*.rs`) carry
//! rustc's diagnostics in their `.stderr` files, and the CLI must point at the same line and column.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The workspace root, where the fixtures and the compile-fail cases live.
fn workspace() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

fn twinstep(args: &[&str]) -> Output {
    let output = Command::new(env!("CARGO_BIN_EXE_twinstep")).args(args).output();
    output.unwrap_or_else(|e| panic!("cannot run the twinstep binary: {e}"))
}

fn stdout(output: &Output) -> String {
    String::from_utf8_lossy(&output.stdout).into_owned()
}

fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).into_owned()
}

/// A source file in the test's scratch directory (cargo gives every integration test one).
fn scratch_file(name: &str, text: &str) -> PathBuf {
    let path = Path::new(env!("CARGO_TARGET_TMPDIR")).join(name);
    std::fs::write(&path, text).unwrap_or_else(|e| panic!("cannot write {}: {e}", path.display()));
    path
}

/// The `line:column` of the first `-->` location rustc printed in a compile-fail case's expected diagnostics.
fn rustc_position(stderr_file: &Path) -> String {
    let text = std::fs::read_to_string(stderr_file).unwrap_or_else(|e| panic!("{}: {e}", stderr_file.display()));
    let location = text.lines().find_map(|l| l.trim_start().strip_prefix("--> ")).expect("a `-->` line");
    // `tests/compile_fail/to_bits_method.rs:5:7` → `5:7`
    let mut parts = location.rsplitn(3, ':');
    let column = parts.next().expect("a column");
    let line = parts.next().expect("a line");
    format!("{line}:{column}")
}

#[test]
fn a_fixture_expands_to_its_twin() {
    let file = workspace().join("fixtures/src/heat_slice.rs");
    let output = twinstep(&["expand", file.to_str().expect("a UTF-8 path")]);
    assert!(output.status.success(), "exit {:?}, stderr:\n{}", output.status.code(), stderr(&output));
    let twin = stdout(&output);
    // The twin of `heat_step` is `heat_step_twin`, generic over `T: ::twinstep::Real` (docs of `items.rs`).
    assert!(twin.contains("pub fn heat_step_twin<T>("), "no twin of `heat_step` in:\n{twin}");
    assert!(twin.contains("T: ::twinstep::Real"), "the twin is not bound by `Real`:\n{twin}");
    assert!(!twin.contains("fn heat_step("), "the original is not part of the expansion:\n{twin}");
    assert!(stderr(&output).is_empty(), "unexpected stderr:\n{}", stderr(&output));
}

#[test]
fn item_selects_one_of_several_annotated_items() {
    let file = scratch_file(
        "two_kernels.rs",
        "#[twinstep::audit]\npub fn smooth(u: &mut [f64]) { u[0] *= 0.5; }\n\n\
         #[twinstep::audit]\npub fn sharpen(u: &mut [f64]) { u[0] *= 2.0; }\n",
    );
    let path = file.to_str().expect("a UTF-8 path");

    let both = stdout(&twinstep(&["expand", path]));
    assert!(both.contains("fn smooth_twin") && both.contains("fn sharpen_twin"), "without --item, both twins:\n{both}");

    let output = twinstep(&["expand", path, "--item", "sharpen"]);
    assert!(output.status.success(), "exit {:?}, stderr:\n{}", output.status.code(), stderr(&output));
    let one = stdout(&output);
    assert!(one.contains("fn sharpen_twin") && !one.contains("smooth"), "--item sharpen, only its twin:\n{one}");

    let output = twinstep(&["expand", path, "--item", "blur"]);
    assert_eq!(output.status.code(), Some(2), "an unknown item is an input error");
    assert!(stderr(&output).contains("`blur`"), "the message names the item:\n{}", stderr(&output));
    assert!(stdout(&output).is_empty(), "nothing on stdout on error");
}

#[test]
fn a_rejected_construct_is_reported_where_rustc_reports_it() {
    let case = workspace().join("tests/compile_fail/to_bits_method.rs");
    let output = twinstep(&["expand", case.to_str().expect("a UTF-8 path")]);
    assert_eq!(output.status.code(), Some(2), "stderr:\n{}", stderr(&output));
    assert!(stdout(&output).is_empty(), "nothing on stdout on error");
    let message = stderr(&output);
    let expected = format!("{}:{}:", case.display(), rustc_position(&case.with_extension("stderr")));
    assert!(message.contains(&expected), "expected `{expected}` in:\n{message}");
    assert!(message.contains("`to_bits`") && message.contains("hint:"), "the construct and a hint:\n{message}");
}

#[test]
fn every_rejection_of_a_file_is_reported_at_once() {
    let case = workspace().join("tests/compile_fail/several_rejections_in_one_item.rs");
    let output = twinstep(&["expand", case.to_str().expect("a UTF-8 path")]);
    assert_eq!(output.status.code(), Some(2), "stderr:\n{}", stderr(&output));
    let message = stderr(&output);
    // rustc reports one `-->` location per rejection in the case's expected diagnostics; the CLI, one per error.
    let expected = std::fs::read_to_string(case.with_extension("stderr")).expect("the case's diagnostics");
    let rustc_count = expected.lines().filter(|l| l.trim_start().starts_with("--> ")).count();
    let cli_count = message.lines().filter(|l| l.contains(&format!("{}:", case.display()))).count();
    assert!(rustc_count >= 2, "the case holds several rejections");
    assert_eq!(cli_count, rustc_count, "one located error per rejection:\n{message}");
}

#[test]
fn a_missing_file_is_a_clear_input_error() {
    let missing = Path::new(env!("CARGO_TARGET_TMPDIR")).join("no_such_kernel.rs");
    let output = twinstep(&["expand", missing.to_str().expect("a UTF-8 path")]);
    assert_eq!(output.status.code(), Some(2));
    let message = stderr(&output);
    assert!(message.contains(&missing.display().to_string()), "the message names the file:\n{message}");
    assert!(message.contains("cannot read"), "the message says what went wrong:\n{message}");
    assert!(!message.contains("panicked"), "no panic:\n{message}");
    assert!(stdout(&output).is_empty());
}

#[test]
fn a_syntax_error_is_located() {
    let file =
        scratch_file("broken_kernel.rs", "#[twinstep::audit]\npub fn broken(u: &mut [f64]) {\n    u[0] *= ;\n}\n");
    let output = twinstep(&["expand", file.to_str().expect("a UTF-8 path")]);
    assert_eq!(output.status.code(), Some(2), "stderr:\n{}", stderr(&output));
    // The stray `;` is the first token that cannot continue the expression: line 3, column 13 (1-based).
    let expected = format!("{}:3:13:", file.display());
    assert!(stderr(&output).contains(&expected), "expected `{expected}` in:\n{}", stderr(&output));
}
