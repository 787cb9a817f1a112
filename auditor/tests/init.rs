//! `twinstep init` on two fixture crates (`init_fixtures/`): a library with a free-function kernel, and a crate
//! without a library whose kernels are a `&mut self` method and a function of an annotated module. The harnesses
//! and the edited manifests are snapshots; the library's harness, completed with initial data, is then built and
//! run through `twinstep run`.

mod common;
use common::{scratch, stderr, stdout, twinstep};
use std::path::{Path, PathBuf};

/// The twinstep checkout the fixture crates depend on.
fn checkout() -> PathBuf {
    std::fs::canonicalize(PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("..")).expect("the workspace root")
}

/// A fresh copy of a fixture crate for one test, with the workspace's Cargo.lock, so that the build resolves the
/// versions already compiled (and needs no registry).
fn copy_fixture(fixture: &str, test: &str) -> PathBuf {
    let from = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/init_fixtures").join(fixture);
    let to = scratch(&format!("init-{test}"));
    let _ = std::fs::remove_dir_all(&to);
    copy_dir(&from, &to);
    std::fs::copy(checkout().join("Cargo.lock"), to.join("Cargo.lock")).expect("the lock file");
    to
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for entry in std::fs::read_dir(from).unwrap() {
        let entry = entry.unwrap();
        let target = to.join(entry.file_name());
        if entry.file_type().unwrap().is_dir() {
            copy_dir(&entry.path(), &target);
        } else {
            std::fs::copy(entry.path(), target).unwrap();
        }
    }
}

fn init(krate: &Path, kernel: &str, extra: &[&str]) -> std::process::Output {
    let manifest = krate.join("Cargo.toml");
    let checkout = checkout();
    let mut args =
        vec!["init", "--manifest-path", manifest.to_str().unwrap(), "--twinstep-path", checkout.to_str().unwrap()];
    if !kernel.is_empty() {
        args.extend(["--kernel", kernel]);
    }
    args.extend_from_slice(extra);
    twinstep(&args)
}

/// The manifest with the checkout's path (which depends on the machine) replaced.
fn manifest(krate: &Path) -> String {
    let text = std::fs::read_to_string(krate.join("Cargo.toml")).unwrap();
    text.replace(checkout().to_str().unwrap(), "[twinstep checkout]")
}

/// The harness with every `todo!` filled in as a user would.
fn completed(harness: &str, values: &[(&str, &str)]) -> String {
    let mut text = harness.to_owned();
    for (todo, value) in values {
        assert!(text.contains(todo), "the harness asks for {todo}");
        text = text.replace(todo, value);
    }
    assert!(!text.contains("todo!("), "every todo! is filled in: {text}");
    text
}

#[test]
fn library_kernel_harness_is_written_then_built_and_run() {
    let krate = copy_fixture("rod_lib", "rod");
    let output = init(&krate, "src/solver.rs::heat_step", &[]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let printed = stdout(&output);
    assert!(printed.contains("added twinstep to [dependencies]"), "{printed}");
    let command =
        format!("twinstep run --example twinstep_heat_step --manifest-path {}", krate.join("Cargo.toml").display());
    assert!(printed.contains(&command), "the command that runs it is printed: {printed}");
    let harness_path = krate.join("examples/twinstep_heat_step.rs");
    let harness = std::fs::read_to_string(&harness_path).expect("the harness");
    insta::assert_snapshot!("init_rod_lib_harness", harness);
    // The user's comments and hand alignment are kept; the dependency is added under [dependencies].
    insta::assert_snapshot!("init_rod_lib_manifest", manifest(&krate));

    // Completed with initial data: sin(π x) on 41 points, r = 0.4, a small source.
    let harness = completed(
        &harness,
        &[
            (
                "todo!(\"the initial `u`: one f64 per cell, row-major\")",
                "(0..41).map(|i| (i as f64 * std::f64::consts::PI / 40.0).sin()).collect()",
            ),
            ("todo!(\"`r` in your run\")", "0.4"),
            ("todo!(\"`q` in your run\")", "1e-3"),
        ],
    );
    std::fs::write(&harness_path, harness).unwrap();
    run_completed_harness(&krate, "twinstep_heat_step", "heat_step");
}

/// Runs a completed harness with `twinstep run` and checks the report and the trace: one report, with a verdict,
/// and a trace with its summary and no `primal_mismatch` — the harness's `step_original` calls the original kernel,
/// whose values are the twin's with `T = f64`, bit for bit.
fn run_completed_harness(krate: &Path, example: &str, kernel: &str) {
    // The dev profile and the target directory of the run test's root example: dependencies are shared.
    let target = scratch("root-example-target");
    let trace = scratch(&format!("init-{example}.jsonl"));
    let manifest_path = krate.join("Cargo.toml");
    let args = [
        "run",
        "--example",
        example,
        "--manifest-path",
        manifest_path.to_str().unwrap(),
        "--profile",
        "dev",
        "--target-dir",
        target.to_str().unwrap(),
        "--trace",
        trace.to_str().unwrap(),
        "--format",
        "md",
    ];
    let output = twinstep(&args);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let report = stdout(&output);
    let title = format!("## twinstep audit of {kernel}");
    assert!(report.contains(&title), "{report}");
    assert!(report.contains("> **Verdict:"), "{report}");
    // Under `twinstep run` the harness leaves the report to the CLI: it appears once.
    assert_eq!(report.matches(&title).count(), 1, "{report}");
    let text = std::fs::read_to_string(&trace).unwrap();
    assert!(text.contains(r#""record":"summary""#) && !text.contains("primal_mismatch"), "{text}");
}

#[test]
fn method_and_module_kernels_of_a_crate_without_library() {
    let krate = copy_fixture("fin_bin", "fin");
    let output = init(&krate, "src/fin.rs::Fin::step", &[]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    insta::assert_snapshot!(
        "init_fin_step_harness",
        std::fs::read_to_string(krate.join("examples/twinstep_fin_step.rs")).unwrap()
    );
    let output = init(&krate, "src/fin.rs::wave::leapfrog", &[]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    assert!(stdout(&output).contains("already depends on twinstep"), "{}", stdout(&output));
    insta::assert_snapshot!(
        "init_wave_leapfrog_harness",
        std::fs::read_to_string(krate.join("examples/twinstep_wave_leapfrog.rs")).unwrap()
    );
    insta::assert_snapshot!("init_fin_bin_manifest", manifest(&krate));

    // The method kernel's harness, completed as a user would, builds and runs: the crate has no library, so the
    // harness includes the kernel's file as a module, and one solver behind a mutex steps every run.
    let harness_path = krate.join("examples/twinstep_fin_step.rs");
    let harness = completed(
        &std::fs::read_to_string(&harness_path).unwrap(),
        &[
            (
                "todo!(\"the initial `theta`: one f64 per cell, row-major\")",
                "(0..32).map(|i| 80.0 * (-(i as f64) / 8.0).exp()).collect()",
            ),
            ("todo!(\"your Fin as your program builds it\")", "fin::Fin::new(0.3, 1e-3)"),
        ],
    );
    std::fs::write(&harness_path, harness).unwrap();
    run_completed_harness(&krate, "twinstep_fin_step", "Fin::step");
}

#[test]
fn bad_requests_are_input_errors_that_change_nothing() {
    let krate = copy_fixture("rod_lib", "errors");
    let before = std::fs::read_to_string(krate.join("Cargo.toml")).unwrap();
    let cases = [
        ("src/solver.rs::cool_step", "no kernel `cool_step` under #[twinstep::audit]"),
        ("src/solver.rs", "expected FILE::ITEM, e.g. src/solver.rs::step"),
        ("src/missing.rs::heat_step", "missing.rs: cannot read"),
        ("src/lib.rs::heat_step", "no kernel `heat_step`"),
    ];
    for (kernel, message) in cases {
        let output = init(&krate, kernel, &[]);
        assert_eq!(output.status.code(), Some(2), "{kernel}: {}", stderr(&output));
        assert!(stderr(&output).contains(message), "{kernel}: {}", stderr(&output));
        assert_eq!(std::fs::read_to_string(krate.join("Cargo.toml")).unwrap(), before, "{kernel}: manifest untouched");
        assert!(!krate.join("examples").exists(), "{kernel}: no harness written");
    }
    // A harness that exists is not replaced without --force.
    assert_eq!(init(&krate, "src/solver.rs::heat_step", &[]).status.code(), Some(0));
    std::fs::write(krate.join("examples/twinstep_heat_step.rs"), "// the user's own work\n").unwrap();
    let again = init(&krate, "src/solver.rs::heat_step", &[]);
    assert_eq!(again.status.code(), Some(2));
    assert!(stderr(&again).contains("exists: --force replaces it"), "{}", stderr(&again));
    let kept = std::fs::read_to_string(krate.join("examples/twinstep_heat_step.rs")).unwrap();
    assert_eq!(kept, "// the user's own work\n");
    let forced = init(&krate, "src/solver.rs::heat_step", &["--force"]);
    assert_eq!(forced.status.code(), Some(0), "{}", stderr(&forced));
    // No manifest, a workspace manifest.
    let nowhere = twinstep(&["init", "--manifest-path", "/nonexistent/Cargo.toml"]);
    assert_eq!(nowhere.status.code(), Some(2));
    assert!(stderr(&nowhere).contains("/nonexistent/Cargo.toml: cannot read"), "{}", stderr(&nowhere));
    let workspace = scratch("init-workspace");
    std::fs::create_dir_all(&workspace).unwrap();
    std::fs::write(workspace.join("Cargo.toml"), "[workspace]\nmembers = [\"a\"]\n").unwrap();
    let virtual_manifest = init(&workspace, "", &[]);
    assert_eq!(virtual_manifest.status.code(), Some(2));
    assert!(stderr(&virtual_manifest).contains("has no [package] name"), "{}", stderr(&virtual_manifest));
}

#[test]
fn signatures_a_harness_cannot_take_are_named() {
    let krate = copy_fixture("rod_lib", "signatures");
    let solver = "#[twinstep::audit]\npub fn mixed(k: &[f64], a: &[f64], b: &[f64], out: &mut [f64]) {}\n\
                  #[twinstep::audit]\npub fn reads_only(u: &[f64]) {}\n\
                  #[twinstep::audit]\npub struct Bar { pub r: f64 }\n\
                  #[twinstep::audit]\nimpl Bar { pub fn step(&mut self, u: &[f64], out: &mut [f64]) {} }\n";
    std::fs::write(krate.join("src/other.rs"), solver).unwrap();
    let cases = [
        (
            "src/other.rs::mixed",
            "3 slices read and 1 written: twinstep init cannot tell the fields from the coefficients",
        ),
        ("src/other.rs::reads_only", "the kernel writes no field"),
        ("src/other.rs::Bar::step", "`impl Bar` is twinned with its struct (the twin is `BarTwin<T>`)"),
    ];
    for (kernel, message) in cases {
        let output = init(&krate, kernel, &[]);
        assert_eq!(output.status.code(), Some(2), "{kernel}");
        assert!(stderr(&output).contains(message), "{kernel}: {}", stderr(&output));
    }
    std::fs::write(krate.join("src/main.rs"), "#[twinstep::audit]\nfn step(u: &mut [f64]) {}\nfn main() {}\n").unwrap();
    let binary = init(&krate, "src/main.rs::step", &[]);
    assert_eq!(binary.status.code(), Some(2));
    assert!(stderr(&binary).contains("a binary's own file cannot be reached from an example"), "{}", stderr(&binary));
}
