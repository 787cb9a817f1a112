//! `twinstep gate` exit codes: 0 within tolerance, 1 a field crosses it (the first crossing printed), 2 bad input.
//! Thresholds of the ulps tolerance follow the definition of ulp in IEEE 754-2019, clause 3.3 (binary64 p = 53,
//! table 3.2): for a normal u, |u|·2^-53 < ulp(u) ≤ |u|·2^-52.

mod common;
use common::{fixture, scratch, stderr, stdout, twinstep};

fn gate(args: &[&str]) -> (Option<i32>, String, String) {
    let mut all = vec!["gate"];
    all.extend_from_slice(args);
    let output = twinstep(&all);
    (output.status.code(), stdout(&output), stderr(&output))
}

#[test]
fn trace_tolerance_fails_at_first_crossing() {
    let path = fixture("kiln_complete.jsonl");
    let (code, _, err) = gate(&[path.to_str().unwrap()]);
    assert_eq!(code, Some(1), "{err}");
    // The summary's first crossing (10435) comes before the first recorded step over the line (12000).
    let first = err.lines().next().unwrap();
    // By default the estimate (shadow) judges, as the verdict does.
    assert!(first.contains("field T (shadow lens) crosses the tolerance at step 10435"), "{err}");
    assert!(!err.contains("bound lens"), "{err}");
    assert!(!err.contains("field q"), "q stays within: {err}");
    // A failing gate still carries the caution: rounding only, local codes and licensed review decide.
    assert!(err.contains("rounding error only") && err.contains("licensed review"), "{err}");
}

#[test]
fn passing_trace_exits_zero() {
    let path = fixture("kiln_enough.jsonl");
    let (code, out, err) = gate(&[path.to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
    assert!(out.contains("pass"), "{out}");
    // A pass is not an approval: the caution comes with it.
    assert!(out.contains("rounding error only") && out.contains("licensed review"), "{out}");
}

#[test]
fn absolute_tolerance_from_the_command_line() {
    let path = fixture("kiln_enough.jsonl");
    // The fixture's T reaches max_err 2.3e-14·100 = 2.3e-12 at step 100 (make_fixtures.py): a looser atol
    // passes, a tighter one fails.
    assert_eq!(gate(&[path.to_str().unwrap(), "--atol", "1e-11"]).0, Some(0));
    let (code, _, err) = gate(&[path.to_str().unwrap(), "--atol", "1e-12"]);
    assert_eq!(code, Some(1));
    assert!(err.contains("max error") && err.contains("> atol"), "{err}");
}

#[test]
fn lens_selection_and_unknown_lens() {
    let path = fixture("kiln_enough.jsonl");
    assert_eq!(gate(&[path.to_str().unwrap(), "--lens", "shadow"]).0, Some(0));
    let (code, _, err) = gate(&[path.to_str().unwrap(), "--lens", "ball"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("has no lens \"ball\""), "{err}");
}

/// A one-step trace whose field has the given max relative error.
fn trace_with_relative_error(name: &str, rel: f64) -> std::path::PathBuf {
    let header = r#"{"record":"header","format":"twinstep-trace","version":1,"kernel":"k","scenario":"s","lenses":["shadow"],"fields":[{"name":"u","shape":[4]}],"tolerance":{"kind":"absolute","atol":1.0},"steps_planned":1,"record_policy":"every","machine":{"os":"linux","arch":"x86_64","cpus":2},"build":{"twinstep":"0.1.0","profile":"release","target_features":[]},"started_unix_s":0}"#;
    let step = format!(
        r#"{{"record":"step","step":1,"lens":"shadow","fields":[{{"name":"u","max_err":{rel:e},"mean_err":0,"max_rel_err":{rel:e},"mean_rel_err":0,"bound":null,"correct_bits":50,"worst_cell":[0],"tol_ratio":0}}]}}"#
    );
    let summary = r#"{"record":"summary","steps_done":1,"complete":true,"wall_s":0.0,"results":[],"verdict":{"status":"enough","text":""}}"#;
    let path = scratch(name);
    std::fs::write(&path, format!("{header}\n{step}\n{summary}\n")).unwrap();
    path
}

#[test]
fn ulps_thresholds() {
    // Relative error 2^-54 (against the reference) is within 1 ulp for every normal u: ulp(u) > |u|·2^-53
    // (IEEE 754-2019 3.3) and |u| ≥ |reference| − err, so err ≤ 2^-54·|reference| < 2^-53·|u| (the gate's
    // derivation, auditor/src/gate.rs).
    let within = trace_with_relative_error("ulps_within.jsonl", 2f64.powi(-54));
    assert_eq!(gate(&[within.to_str().unwrap(), "--ulps", "1"]).0, Some(0));
    // Relative error 2^-51 exceeds 1 ulp for every normal u (ulp(u) ≤ |u|·2^-52, same clause).
    let beyond = trace_with_relative_error("ulps_beyond.jsonl", 2f64.powi(-51));
    let (code, _, err) = gate(&[beyond.to_str().unwrap(), "--ulps", "1"]);
    assert_eq!(code, Some(1));
    assert!(err.contains("not shown within 1 ulps"), "{err}");
    // …and is within 5 ulps: 2^-51 = 4·2^-53 ≤ r/(1 + r)·(1 − 2^-50) for r = 5·2^-53. At exactly 4 ulps the
    // margin r/(1 + r) that |u| ≥ |reference| − err calls for is not there, and the gate says so.
    assert_eq!(gate(&[beyond.to_str().unwrap(), "--ulps", "5"]).0, Some(0));
    assert_eq!(gate(&[beyond.to_str().unwrap(), "--ulps", "4"]).0, Some(1));
}

#[test]
fn relative_tolerance_leaves_room_for_the_primal_reference_gap() {
    // The trace's relative error divides by the reference, the tolerance multiplies |primal|; with
    // |primal| ≥ |reference| − err a relative error of rtol/2 proves err ≤ rtol·|primal| (rtol/2 ≤ rtol/(1 + rtol)
    // for rtol ≤ 1), one of exactly rtol does not, and counts as crossed (auditor/src/gate.rs).
    let half = trace_with_relative_error("rtol_half.jsonl", 0.5e-9);
    assert_eq!(gate(&[half.to_str().unwrap(), "--rtol", "1e-9"]).0, Some(0));
    let at = trace_with_relative_error("rtol_at.jsonl", 1e-9);
    let (code, _, err) = gate(&[at.to_str().unwrap(), "--rtol", "1e-9"]);
    assert_eq!(code, Some(1), "{err}");
    assert!(err.contains("not shown within rtol"), "{err}");
}

#[test]
fn incomplete_run_fails_the_gate() {
    let path = fixture("kiln_killed.jsonl");
    let (code, _, err) = gate(&[path.to_str().unwrap(), "--atol", "1"]);
    assert_eq!(code, Some(1));
    assert!(err.contains("incomplete run"), "{err}");
}

#[test]
fn ulps_conflicts_with_atol() {
    let path = fixture("kiln_enough.jsonl");
    let (code, _, err) = gate(&[path.to_str().unwrap(), "--ulps", "2", "--atol", "1e-3"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("cannot be used with"), "{err}");
}

#[test]
fn a_bound_lost_to_the_dependency_effect_fails_only_a_gate_on_the_bound() {
    // The bound lens's radius crosses (err/allowed 3.5) while the shadow estimate stays far inside (0.001).
    let header = r#"{"record":"header","format":"twinstep-trace","version":1,"kernel":"k","scenario":"s","lenses":["bound","shadow"],"fields":[{"name":"u","shape":[4]}],"tolerance":{"kind":"absolute","atol":1e-9},"steps_planned":5,"record_policy":"every","machine":{"os":"linux","arch":"x86_64","cpus":2},"build":{"twinstep":"0.1.0","profile":"release","target_features":[]},"started_unix_s":0}"#;
    let step = |lens: &str, err: f64, bound: &str| {
        format!(
            r#"{{"record":"step","step":5,"lens":"{lens}","fields":[{{"name":"u","max_err":{err:e},"mean_err":0,"max_rel_err":0,"mean_rel_err":0,"bound":{bound},"correct_bits":40,"worst_cell":[1],"tol_ratio":{:e}}}]}}"#,
            err / 1e-9
        )
    };
    let summary = r#"{"record":"summary","steps_done":5,"complete":true,"wall_s":0.0,"results":[],"verdict":{"status":"enough","text":""}}"#;
    let path = scratch("gate_bound_lost.jsonl");
    let text = format!("{header}\n{}\n{}\n{summary}\n", step("bound", 3.5e-9, "3.5e-9"), step("shadow", 1e-12, "null"));
    std::fs::write(&path, text).unwrap();
    let (code, out, err) = gate(&[path.to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
    assert!(out.contains("lenses judged: shadow"), "{out}");
    let (code, _, err) = gate(&[path.to_str().unwrap(), "--lens", "bound"]);
    assert_eq!(code, Some(1));
    assert!(err.contains("field u (bound lens) crosses the tolerance at step 5: err/allowed = 3.500 > 1"), "{err}");
}
