//! The short harness: `#[twinstep::scenario]` on the scenario impl and no `where` clause; `init` and `step` compute
//! with plain `f64` values (products, quotients, literals, comparisons, compound assignment, an iterator sum) beside
//! the lens's values; `Audit::report` returns the documented exit codes.

mod audit_support;

use std::process::ExitCode;

use audit_support::kernels::Fold;
use audit_support::{rational, rational_to_f64, scratch};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::trace::EventName;

/// Newton cooling `u' = −k u` by explicit Euler: every step multiplies by `1 − k·dt`, which `step` computes in
/// plain f64 itself.
struct Cooling {
    k: f64,
    dt: f64,
    cells: usize,
}

impl Cooling {
    /// The f64 factor the loop multiplies by, as the original computes it.
    fn factor(&self) -> f64 {
        1.0 - self.k * self.dt
    }
}

#[twinstep::scenario]
impl Scenario for Cooling {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[self.cells])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        // Cell i starts at 1 + i/2, computed in f64 inside the generic method.
        let start: Vec<f64> = (0..self.cells).map(|i| 1.0 + 0.5 * i as f64).collect();
        levels.current[0].set_f64(&start)
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let mut factor = self.k * self.dt; // f64 * f64
        factor = 1.0 - factor; // literal − f64
        factor *= 1.0; // compound assignment
        let weight: f64 = [0.25, 0.75].iter().sum(); // 1 exactly (both are dyadic)
        assert!(0.0 < factor && factor < 1.0 && weight == 1.0 && self.dt / 2.0 > 0.0);
        for (now, next) in levels.current[0].iter().zip(levels.next[0].iter_mut()) {
            *next = *now * (factor * weight); // T * f64
        }
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        for (now, next) in levels.current[0].iter().zip(levels.next[0].iter_mut()) {
            *next = now * self.factor();
        }
    }
}

#[test]
fn plain_f64_arithmetic_in_a_harness_without_where_clause() {
    let cooling = Cooling { k: 0.7, dt: 0.1, cells: 4 };
    let steps = 30;
    let trace = Audit::new(&cooling, Tolerance::absolute(1.0), steps)
        .trace(scratch("audit_harness_cooling").join("c.jsonl"))
        .every_step()
        .lens::<Shadow>()
        .run()
        .unwrap();
    assert!(trace.is_complete());
    // The lens's primal is the plain loop's, bit for bit, at every step.
    assert!(trace.events.iter().all(|e| e.kind != EventName::PrimalMismatch));
    // Oracle: the exact value of each cell after n steps is u0·gⁿ with g the double 1 − k·dt taken as exact
    // (dashu-ratio); the f64 run rounds once per step. The shadow's largest error estimate is the largest true
    // error over the cells, to the ten digits the double-double reference gives and more.
    let g = rational(cooling.factor());
    let mut cells: Vec<(f64, RBig)> =
        (0..cooling.cells).map(|i| (1.0 + 0.5 * i as f64, rational(1.0 + 0.5 * i as f64))).collect();
    for step in 1..=steps {
        for (float, exact) in &mut cells {
            *float *= cooling.factor();
            *exact = &*exact * &g;
        }
        let truth = cells.iter().map(|(f, e)| rational_to_f64(&(rational(*f) - e)).abs()).fold(0.0, f64::max);
        let record = trace.steps.iter().find(|r| r.step == step).expect("every step is recorded");
        let estimate = record.fields[0].max_err;
        assert!((estimate - truth).abs() <= 1e-10 * truth, "step {step}: {estimate:e} vs {truth:e}");
        assert!(step < 3 || truth > 0.0, "rounding shows by step {step}");
    }
}

/// A step that panics: the audited program fails.
struct Crashing;

#[twinstep::scenario]
impl Scenario for Crashing {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[1])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        assert!(levels.step < 2, "the solver blew up");
    }
}

#[test]
fn report_returns_the_documented_exit_codes() {
    let dir = scratch("audit_harness_report");
    // docs/cli.md: 0 the audit ran (whatever its verdict), 2 a usage or input error, 3 the audited program failed.
    let ran = Audit::new(&Fold, Tolerance::absolute(1e-18), 12).trace(dir.join("ran.jsonl")).lens::<Bound>();
    assert_eq!(ran.report(), ExitCode::SUCCESS, "a crossing is the report's business, not an exit code");
    let bad_tolerance = Audit::new(&Fold, Tolerance::mixed(1e-12, -1.0), 5).trace(dir.join("bad.jsonl"));
    assert_eq!(bad_tolerance.lens::<Bound>().report(), ExitCode::from(2));
    assert!(!dir.join("bad.jsonl").exists());
    let no_lens = Audit::new(&Fold, Tolerance::absolute(1e-9), 5).trace(dir.join("none.jsonl"));
    assert_eq!(no_lens.report(), ExitCode::from(2));
    let crashed = Audit::new(&Crashing, Tolerance::absolute(1e-9), 5).trace(dir.join("crash.jsonl"));
    assert_eq!(crashed.lens::<Shadow>().report(), ExitCode::from(3));
    // The trace of the crashed run is there, without a summary: an incomplete run.
    assert!(!twinstep::trace::read(dir.join("crash.jsonl")).unwrap().is_complete());
}
