//! `twinstep run` end to end: a throwaway harness crate (no dependencies, written into cargo's temporary
//! directory) shows the plumbing — `TWINSTEP_TRACE` reaches the harness, the audit build gets
//! `-C target-cpu=native`, it lands in `target/twinstep` and nowhere else, failures map to exit code 3
//! with the partial trace still reported — and the root crate's `heat_rod` example shows the real thing.

mod common;
use common::{scratch, stderr, stdout, twinstep};
use std::path::{Path, PathBuf};

/// The harness: writes a one-step trace to `TWINSTEP_TRACE`, recording which target features it was built with;
/// `fail` stops after the header with exit status 7, `silent` writes nothing.
const HARNESS: &str = r##"
use std::io::Write;
fn main() {
    let mode = std::env::args().nth(1).unwrap_or_default();
    if mode == "silent" { return; }
    let path = std::env::var("TWINSTEP_TRACE").expect("TWINSTEP_TRACE is set by twinstep run");
    let mut out = std::fs::File::create(path).unwrap();
    let features: Vec<String> = [("avx2", cfg!(target_feature = "avx2")), ("fma", cfg!(target_feature = "fma"))]
        .iter().filter(|f| f.1).map(|f| format!("\"{}\"", f.0)).collect();
    writeln!(out, r#"{{"record":"header","format":"twinstep-trace","version":1,"kernel":"probe_step","scenario":"plumbing probe","lenses":["shadow"],"fields":[{{"name":"u","shape":[2]}}],"tolerance":{{"kind":"absolute","atol":1e-9}},"steps_planned":1,"record_policy":"every","machine":{{"os":"linux","arch":"x86_64","cpus":1}},"build":{{"twinstep":"0.1.0","profile":"release","target_features":[{}]}},"started_unix_s":0}}"#, features.join(",")).unwrap();
    if mode == "fail" { std::process::exit(7); }
    writeln!(out, r#"{{"record":"step","step":1,"lens":"shadow","fields":[{{"name":"u","max_err":1e-12,"mean_err":1e-12,"max_rel_err":1e-12,"mean_rel_err":1e-12,"bound":null,"correct_bits":39.8,"worst_cell":[0],"tol_ratio":0.001}}]}}"#).unwrap();
    writeln!(out, r#"{{"record":"summary","steps_done":1,"complete":true,"wall_s":0.0,"results":[],"verdict":{{"status":"enough","until_step":null,"least_precision_bits":null,"text":"probe"}}}}"#).unwrap();
}
"##;

/// Writes a harness crate of its own for one test (tests run in parallel; one shared crate could be read by cargo
/// while another test rewrites it) and returns its manifest path.
fn harness_crate(test: &str) -> PathBuf {
    let dir = scratch(&format!("probe-crate-{test}"));
    std::fs::create_dir_all(dir.join("src")).unwrap();
    // Its own `[workspace]`: the crate sits under the project's target directory, outside any workspace.
    let manifest =
        "[package]\nname = \"probe\"\nversion = \"0.0.0\"\nedition = \"2021\"\npublish = false\n\n[workspace]\n";
    std::fs::write(dir.join("Cargo.toml"), manifest).unwrap();
    std::fs::write(dir.join("src/main.rs"), HARNESS).unwrap();
    dir.join("Cargo.toml")
}

fn run(manifest: &Path, extra: &[&str]) -> std::process::Output {
    let mut args = vec!["run", "--bin", "probe", "--manifest-path", manifest.to_str().unwrap()];
    args.extend_from_slice(extra);
    twinstep(&args)
}

#[test]
fn harness_gets_the_trace_path_the_flags_and_its_own_target_dir() {
    let manifest = harness_crate("flags");
    let root = manifest.parent().unwrap();
    let output = run(&manifest, &["--format", "json"]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let report: serde_json::Value = serde_json::from_str(&stdout(&output)).expect("the JSON report");
    assert_eq!(report["scenario"], "plumbing probe");
    let trace = root.join("target/twinstep/traces/probe.jsonl");
    let text = std::fs::read_to_string(&trace).expect("the trace at the default path");
    assert!(text.contains(r#""target_features":["#), "the harness wrote its build: {text}");
    #[cfg(target_arch = "x86_64")]
    {
        // target-cpu=native enables the features this machine has (rustc's codegen options); the test's own build
        // has no flags, so a feature the harness reports came from the flag.
        let expected: Vec<&str> =
            [("avx2", std::is_x86_feature_detected!("avx2")), ("fma", std::is_x86_feature_detected!("fma"))]
                .iter()
                .filter(|f| f.1)
                .map(|f| f.0)
                .collect();
        let reported = format!(
            r#""target_features":[{}]"#,
            expected.iter().map(|f| format!("\"{f}\"")).collect::<Vec<_>>().join(",")
        );
        assert!(text.contains(&reported), "native flags reached the build ({reported}): {text}");
    }
    assert!(root.join("target/twinstep/release").is_dir(), "built in target/twinstep");
    assert!(!root.join("target/release").exists(), "the user's own target/release is untouched");
    assert!(!root.join("target/debug").exists(), "the user's own target/debug is untouched");
}

#[test]
fn failing_harness_reports_its_partial_trace_and_exits_3() {
    let manifest = harness_crate("fail");
    let trace = scratch("probe-fail.jsonl");
    let output = run(&manifest, &["--trace", trace.to_str().unwrap(), "--", "fail"]);
    assert_eq!(output.status.code(), Some(3), "{}", stderr(&output));
    assert!(stdout(&output).contains("INCOMPLETE"), "the partial trace is reported");
    assert!(stderr(&output).contains("probe: the build or the harness failed (status 7)"), "{}", stderr(&output));
}

#[test]
fn harness_without_trace_is_named() {
    let manifest = harness_crate("silent");
    let trace = scratch("probe-silent.jsonl");
    std::fs::write(&trace, "stale trace of an earlier run\n").unwrap();
    let output = run(&manifest, &["--trace", trace.to_str().unwrap(), "--", "silent"]);
    assert_eq!(output.status.code(), Some(3));
    let err = stderr(&output);
    assert!(err.contains("probe: wrote no trace to") && err.contains("TWINSTEP_TRACE"), "{err}");
}

#[test]
fn missing_manifest_is_an_input_error() {
    let output = twinstep(&["run", "--example", "x", "--manifest-path", "/nonexistent/Cargo.toml"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("/nonexistent/Cargo.toml: no cargo workspace"), "{}", stderr(&output));
}

#[test]
fn root_example_end_to_end() {
    // The root crate's heat_rod example, built in the dev profile (what is already compiled for the tests is
    // reused by cargo where the flags match) in a target directory of its own under cargo's temporary directory.
    let manifest = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../Cargo.toml");
    let target = scratch("root-example-target");
    let args = ["run", "--example", "heat_rod", "--manifest-path", manifest.to_str().unwrap(), "--profile", "dev"];
    let mut all = args.to_vec();
    all.extend_from_slice(&["--target-dir", target.to_str().unwrap(), "--format", "md"]);
    let output = twinstep(&all);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let report = stdout(&output);
    assert!(report.contains("## twinstep audit of rod_step"), "{report}");
    assert!(report.contains("> **Verdict:"), "{report}");
    assert!(target.join("traces/heat_rod.jsonl").is_file());
}
