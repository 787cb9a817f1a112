//! The demo's numbers against an oracle outside the project, and the `demo` command end to end.
//!
//! Oracle: the exact solution of the kiln-wall scheme from the demo's own f64 initial data, in exact rationals
//! (dashu-ratio). For `u_i ← u_i + r (u_{i−1} − 2u_i + u_{i+1}) + h` with both faces `u ← u + h`, the solution
//! splits into `n h` (a uniform shift has a zero second difference), the straight line `L_i` between the two
//! initial face values (also a zero second difference, and the faces keep their offsets), and a remainder with
//! zero faces that the scheme damps: in the 2-norm by at most `λ₁ = 1 − 4r sin²(π/(2(N−1)))` per step (the
//! eigenvalues `1 − 4r sin²(kπ/(2(N−1)))` of the explicit scheme with fixed ends, all in [0, 1) for r = 1/4;
//! von Neumann analysis, e.g. Strikwerda, "Finite Difference Schemes and PDEs", from memory). After 60 000 steps
//! that remainder is below 1e-25 K, so `exact_i = n h + L_i` to far better than the checks need.

mod common;
use common::{scratch, stderr, stdout, twinstep};
use dashu_ratio::RBig;
use twinstep_cli::demo::kiln::{wall_step, Wall};

const STEPS: u64 = 60_000;

/// The kernel's inner update, as `auditor/src/demo/kiln.rs` writes it.
const INNER: &str = "out[i] = u[i] + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]) + heat;";

/// An f64 as an exact rational (every finite double is a dyadic rational, IEEE 754-2019 §3.2).
fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("finite double")
}

/// The demo's primal: the untouched original kernel, run `steps` times from `start`.
fn primal(start: &[f64], wall: &Wall, steps: u64) -> Vec<f64> {
    let (mut u, mut next) = (start.to_vec(), start.to_vec());
    for _ in 0..steps {
        wall_step(&u, &mut next, wall.r, wall.heat);
        std::mem::swap(&mut u, &mut next);
    }
    u
}

/// max_i |primal_i − (n h + L_i)| in exact rationals, each rounded to f64 at the end; also the bound on the damped
/// remainder, `λ₁ⁿ · ‖u⁰ − L‖₂`.
fn oracle_error(start: &[f64], wall: &Wall, steps: u64) -> (f64, f64) {
    let last = start.len() - 1;
    let (left, right) = (rational(start[0]), rational(start[last]));
    let line = |i: usize| &left + (&right - &left) * RBig::from(i) / RBig::from(last);
    let shift = RBig::from(steps) * rational(wall.heat);
    let computed = primal(start, wall, steps);
    // Each exact difference is rounded to the nearest double once (relative 2^-53), then compared.
    let difference = |(i, &u): (usize, &f64)| (rational(u) - &shift - line(i)).to_f64().value().abs();
    let worst = computed.iter().enumerate().map(difference).fold(0.0, f64::max);
    // λ₁ ≤ 1 − 4r (x − x³/6)² with x = π/(2(N−1)) (sin x ≥ x − x³/6 for x ≥ 0), and λ₁ⁿ ≤ exp(−n (1 − λ₁)).
    // Evaluated in f64: its own rounding (relative 1e-15) does not matter for a bound compared with 1e-20.
    // 3.141592 < π on purpose: a smaller x gives a larger λ₁ bound, so the bound stays a bound.
    #[allow(clippy::approx_constant)]
    let x = 3.141_592 / (2.0 * last as f64);
    let decay = (-(steps as f64) * 4.0 * wall.r * (x - x.powi(3) / 6.0).powi(2)).exp();
    let offset: f64 =
        start.iter().enumerate().map(|(i, &u)| (rational(u) - line(i)).to_f64().value().powi(2)).sum::<f64>().sqrt();
    (worst, decay * offset * 1.01)
}

#[test]
fn shadow_estimates_match_the_exact_rational_solution() {
    let wall = Wall::default();
    let path = scratch("demo-oracle.jsonl");
    twinstep_cli::demo::run(&path, STEPS).expect("the demo audit runs");
    let trace = twinstep_cli::input::read_trace(&path).expect("the demo trace reads");
    let summary = trace.summary.as_ref().expect("complete run");
    let (temperature, rise) = wall.initial();
    for (field, start) in [("T", &temperature), ("rise", &rise)] {
        let result = summary.results.iter().find(|r| r.lens == "shadow" && r.field == field).expect("shadow result");
        let (oracle, remainder) = oracle_error(start, &wall, STEPS);
        // The remainder is the damped part of the exact solution's tail, A·λⁿ (von Neumann, above); 1e-20 is far
        // below the 1 nK budget, so neglecting it cannot change a verdict (common practice, no source).
        assert!(remainder < 1e-20, "{field}: the damped remainder is negligible ({remainder:e})");
        // The shadow's estimate is |primal − reference| rounded to f64: it agrees with the exact error to a
        // relative 1e-12 (a double-double reference carries about 106 bits; the slack is generous).
        let estimate = result.final_max_err;
        assert!(
            (estimate - oracle).abs() <= 1e-12 * oracle + remainder,
            "{field}: shadow estimate {estimate:e} against the exact error {oracle:e}"
        );
    }
    // The bound lens's radius grows by the dependency effect (about (1 + 4r) per step, r = 1/4) far faster than
    // the error: the report says the bound crossed before the estimate and that the estimate judges.
    // (Checked when the trace shows it, so that a lens that someday keeps its bound does not fail this test.)
    let report = twinstep_cli::report::render(&trace, twinstep_cli::report::Format::Md, false);
    let crossing =
        |lens: &str| summary.results.iter().find(|r| r.lens == lens && r.field == "T").and_then(|r| r.first_crossing);
    if let (Some(bound), shadow) = (crossing("bound"), crossing("shadow")) {
        if shadow.is_none_or(|s| s > bound) {
            let said = format!("Guaranteed bounds cross it before the estimates do (bound of `T` at step {bound}");
            assert!(report.contains(&said), "{report}");
        }
    }
    // The certified lens judges (its certificate holds, see below), so the worst field is named under it.
    assert!(report.contains("Field `T` drifts most: under the certified lens"), "{report}");
    // The point of the demo: T's error is far larger than rise's (same physics, large background value).
    let (t_err, _) = oracle_error(&temperature, &wall, STEPS);
    let (rise_err, _) = oracle_error(&rise, &wall, STEPS);
    assert!(t_err > 1e-9 && rise_err < 1e-12, "T {t_err:e}, rise {rise_err:e}");

    // The report names the lines where the firing increment meets the 1300 K background — the kernel's three
    // lines that add `heat`, the line to change first — with the remedy, and sets the remedy applied (the same
    // kernel on `rise`) beside them: both measured errors are the exact-rational oracle's (written with three
    // digits, as every report writes an error), and so is the drop.
    let text = twinstep_cli::report::render(&trace, twinstep_cli::report::Format::Text, false);
    let source = include_str!("../src/demo/kiln.rs");
    let kernel = ["out[0] = u[0] + heat;", "out[n - 1] = u[n - 1] + heat;", INNER];
    let named = |code: &str| {
        let line = source.lines().position(|l| l.trim() == code).expect("a line of the kernel") + 1;
        format!("auditor/src/demo/kiln.rs:{line} {code} — ")
    };
    let first = text.split("Line to change: ").nth(1).expect("a line to change");
    assert!(kernel.iter().any(|code| first.starts_with(&named(code))), "{first}");
    for code in kernel {
        assert!(text.contains(&format!("Also: {}", named(code))) || first.starts_with(&named(code)), "{code}: {text}");
    }
    assert!(text.contains("Remedy: carry the perturbation — the rise above the background of about 1.30e3"), "{text}");
    let error = twinstep::report::format::error;
    let measured = format!(
        "Remedy applied: field rise carries T as the rise above the background 1.30e3 (the remedy above, applied). \
Measured by lens certified at step {STEPS}: T {}, rise {}: the error drops {}.",
        error(t_err),
        error(rise_err),
        twinstep::report::format::times(t_err / rise_err)
    );
    assert!(text.contains(&measured), "{measured:?} in\n{text}");
}

#[test]
fn demo_command_prints_the_report_and_writes_html() {
    let html = scratch("demo.html");
    let trace = scratch("demo-cli.jsonl");
    let output =
        twinstep(&["demo", "--steps", "3000", "--html", html.to_str().unwrap(), "--trace", trace.to_str().unwrap()]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let report = stdout(&output);
    assert!(report.contains("twinstep audit of wall_step"), "{report}");
    assert!(report.contains("Verdict:"), "{report}");
    // The demo runs the precision sweep: its verdict names the least precision and what f32 would do.
    let verdict = report.lines().find(|l| l.contains("Least precision: ")).expect("the sweep's sentence");
    assert!(verdict.contains(" bits; f32 crosses at step "), "{verdict}");
    assert!(report.contains("\nPrecision sweep\n"), "{report}");
    let page = std::fs::read_to_string(&html).expect("the HTML report");
    assert!(page.matches("<svg").count() >= 3, "plots in the page");
    // The audit writes profiles for 1-D fields by default: a space × time map per field (T, rise) and lens (bound,
    // shadow, certified).
    assert_eq!(page.matches("), space × time").count(), 6, "heat maps in the page");
    let unwritable = scratch("");
    let output = twinstep(&[
        "demo",
        "--steps",
        "10",
        "--html",
        unwritable.to_str().unwrap(),
        "--trace",
        trace.to_str().unwrap(),
    ]);
    assert_eq!(output.status.code(), Some(2), "an unwritable --html is an input error");
    assert!(stderr(&output).contains("cannot write"));
}

/// The exact-arithmetic run of the kiln scheme from `start` (the same doubles, `r` and `h` as exact rationals),
/// calling `at` with every step's state; every value stays a dyadic rational, so this is the scheme's exact
/// solution, not an approximation.
fn exact_run(start: &[f64], wall: &Wall, steps: u64, mut at: impl FnMut(u64, &[RBig])) {
    let (r, h, two) = (rational(wall.r), rational(wall.heat), RBig::from(2));
    let mut u: Vec<RBig> = start.iter().map(|&x| rational(x)).collect();
    at(0, &u);
    let last = u.len() - 1;
    for n in 1..=steps {
        let mut next = u.clone();
        next[0] = &u[0] + &h;
        next[last] = &u[last] + &h;
        for i in 1..last {
            next[i] = &u[i] + &r * (&u[i - 1] - &two * &u[i] + &u[i + 1]) + &h;
        }
        u = next;
        at(n, &u);
    }
}

/// `[lower, upper]` contains the exact worst error `e` known to within `slack`, where `e` was rounded to a double
/// once (relative 2^-53, IEEE 754-2019 §4.3.1): the check allows that rounding, 2^-52 relative, and nothing else.
fn contains(lower: f64, upper: Option<f64>, e: f64, slack: f64) -> bool {
    let rounding = e * f64::EPSILON;
    upper.is_some_and(|upper| lower - slack <= e + rounding && e - rounding <= upper + slack)
}

#[test]
fn certified_intervals_contain_the_exact_error() {
    let wall = Wall::default();
    let path = scratch("demo-certified.jsonl");
    twinstep_cli::demo::run(&path, STEPS).expect("the demo audit runs");
    let trace = twinstep_cli::input::read_trace(&path).expect("the demo trace reads");
    let summary = trace.summary.as_ref().expect("complete run");
    // The demo's verdict rests on the guarantee: the certificate held at every step (no end record).
    assert!(trace.certificate_ends.is_empty(), "{:?}", trace.certificate_ends);
    assert!(
        summary.verdict.text.contains("Guaranteed: the certificate of lens certified holds"),
        "{}",
        summary.verdict.text
    );
    let report = twinstep_cli::report::render(&trace, twinstep_cli::report::Format::Text, false);
    assert!(report.contains("(GUARANTEED)"), "{report}");
    let interval = |step: u64, field: &str| {
        let record = trace.steps.iter().find(|s| s.lens == "certified" && s.step == step)?;
        let c = record.certificate.as_ref()?;
        c.fields.iter().find(|f| f.name == field).map(|f| (f.lower, f.upper))
    };
    let (temperature, rise) = wall.initial();
    // Every recorded step up to 400 (about 90 of them: the first steps, then log-spaced), against the exact run
    // in rationals.
    const EARLY: u64 = 400;
    let mut checked = 0;
    for (field, start) in [("T", &temperature), ("rise", &rise)] {
        let (mut u, mut next) = (start.clone(), start.clone());
        exact_run(start, &wall, EARLY, |n, exact| {
            if n > 0 {
                twinstep_cli::demo::kiln::wall_step(&u, &mut next, wall.r, wall.heat);
                std::mem::swap(&mut u, &mut next);
            }
            let Some((lower, upper)) = interval(n, field) else { return };
            let error = u.iter().zip(exact).map(|(&p, x)| (rational(p) - x).to_f64().value().abs()).fold(0.0, f64::max);
            assert!(contains(lower, upper, error, 0.0), "{field} step {n}: [{lower:e}, {upper:?}] against {error:e}");
            checked += 1;
        });
    }
    assert!(checked >= 20, "only {checked} recorded steps checked");
    // The last step, against the closed form of `oracle_error` (exact up to the damped remainder).
    for (field, start) in [("T", &temperature), ("rise", &rise)] {
        let (error, remainder) = oracle_error(start, &wall, STEPS);
        let (lower, upper) = interval(STEPS, field).expect("the last step is recorded");
        assert!(contains(lower, upper, error, remainder), "{field}: [{lower:e}, {upper:?}] against {error:e}");
        // Tight: the interval's width is below 10⁻⁶ of the error (the criterion on monotone schemes).
        let width = upper.unwrap_or(f64::INFINITY) - lower;
        assert!(width <= 1e-6 * error, "{field}: width {width:e} against the error {error:e}");
    }
}
