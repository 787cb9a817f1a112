//! The explicit heat scheme against its exact discrete solution, through the audit driver.
//!
//! `u_i^{n+1} = u_i + r (u_{i-1} − 2u_i + u_{i+1})` on `x_i = i/N`, zero ends, `u_i^0 = sin(π x_i)` has the exact
//! solution `λⁿ sin(π x_i)` with `λ = 1 − 4r sin²(π/(2N))` (von Neumann analysis of the explicit scheme; e.g.
//! Strikwerda, Finite Difference Schemes and Partial Differential Equations — from memory). The oracle evaluates
//! it with dashu-float at 320 bits; a second oracle runs the scheme itself in exact rationals (dashu-ratio).

mod audit_support;

use std::any::Any;
use std::sync::Mutex;

use audit_support::{big, rational, rational_to_f64, scratch, Big, BITS};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, Error, Field, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Interval, Lens, Shadow};
use twinstep::trace::EventName;
use twinstep::Real;

/// The example's rod kernel (`examples/heat_rod.rs`): the explicit scheme, ends held — so the check covers it.
#[allow(dead_code)]
#[path = "../examples/heat_rod.rs"]
mod example;

use example::{rod_step as heat_step, rod_step_twin as heat_step_twin};

/// The initial data `sin(π i/n)`; its twin evaluates the real sine of the real π i/n in the lens.
#[twinstep::audit]
fn initial(i: usize, n: usize) -> f64 {
    (std::f64::consts::PI * i as f64 / n as f64).sin()
}

/// What a test sees of a cell after a step.
#[derive(Clone, Copy, Debug)]
struct Cell {
    primal: f64,
    /// The enclosure of the exact value (Bound, Interval).
    enclosure: Option<(f64, f64)>,
    estimate: f64,
}

/// The rod: N + 1 points, initial data from the annotated function or given as doubles.
struct Rod {
    n: usize,
    r: f64,
    start: Option<Vec<f64>>,
    seen: Mutex<Vec<(&'static str, u64, Vec<Cell>)>>,
}

impl Rod {
    fn new(n: usize, r: f64, start: Option<Vec<f64>>) -> Rod {
        Rod { n, r, start, seen: Mutex::new(Vec::new()) }
    }

    /// Keeps what each lens computed at each step (the f64 runs are not kept).
    fn observe<T: Real>(&self, step: u64, field: &Field<T>) {
        let any = field as &dyn Any;
        let cells = |f: &dyn Fn(usize) -> Cell| (0..field.len()).map(f).collect::<Vec<_>>();
        let seen = if let Some(b) = values_of::<Bound>(any) {
            let e = |i: usize| Some((b[i].enclosure().inf(), b[i].enclosure().sup()));
            ("bound", cells(&|i| Cell { primal: b[i].primal(), enclosure: e(i), estimate: b[i].error_estimate() }))
        } else if let Some(v) = values_of::<Interval>(any) {
            let e = |i: usize| Some((v[i].enclosure().inf(), v[i].enclosure().sup()));
            ("interval", cells(&|i| Cell { primal: v[i].primal(), enclosure: e(i), estimate: v[i].error_estimate() }))
        } else if let Some(s) = values_of::<Shadow>(any) {
            ("shadow", cells(&|i| Cell { primal: s[i].primal(), enclosure: None, estimate: s[i].error_estimate() }))
        } else {
            return;
        };
        self.seen.lock().unwrap().push((seen.0, step, seen.1));
    }
}

/// A field's values as the watched variant of lens `L`, whichever variant the driver ran it with (the unwatched
/// one for steps, the watched one for the initial data; docs/audit.md).
fn values_of<L: Lens<Watched = L> + 'static>(field: &dyn Any) -> Option<Vec<L>> {
    if let Some(watched) = field.downcast_ref::<Field<L>>() {
        return Some(watched.to_vec());
    }
    let unwatched = field.downcast_ref::<Field<L::Unwatched>>()?;
    Some(unwatched.iter().map(|&cell| cell.watched()).collect())
}

#[twinstep::scenario]
impl Scenario for Rod {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[self.n + 1])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        match &self.start {
            Some(values) => levels.current[0].set_f64(values)?,
            None => levels.current[0].fill(|ix| initial_twin::<T>(ix[0], self.n)),
        }
        self.observe(0, &levels.current[0]);
        Ok(())
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        heat_step_twin::<T>(&levels.current[0], &mut levels.next[0], T::from_f64(self.r));
        self.observe(levels.step + 1, &levels.next[0]);
    }

    fn init_original(&self, levels: &mut Levels<f64>) -> Result<(), Error> {
        match &self.start {
            Some(values) => levels.current[0].set_f64(values)?,
            None => levels.current[0].fill(|ix| initial(ix[0], self.n)),
        }
        Ok(())
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        heat_step(&levels.current[0], &mut levels.next[0], self.r);
    }
}

/// Whether the exact value lies in `[inf, sup]` (an infinite end encloses everything on its side).
fn encloses(inf: f64, sup: f64, exact: &Big) -> bool {
    (inf == f64::NEG_INFINITY || big(inf) <= *exact) && (sup == f64::INFINITY || *exact <= big(sup))
}

const N: usize = 64;

#[test]
fn exact_discrete_solution_lies_inside_bound_and_interval_enclosures() {
    for r in [0.25, 0.5] {
        let rod = Rod::new(N, r, None);
        let dir = scratch("heat_enclosures");
        let tolerance = Tolerance::mixed(1e-12, 1e-9);
        let trace = Audit::new(&rod, tolerance, 500)
            .kernel("heat_step")
            .trace(dir.join(format!("heat-r{r}.jsonl")))
            .lens::<Bound>()
            .lens::<Interval>()
            .lens::<Shadow>()
            .run()
            .unwrap();
        assert!(trace.is_complete());
        assert!(trace.events.iter().all(|e| e.kind != EventName::PrimalMismatch), "twin primal differs from f64");

        // λ = 1 − 4r sin²(π/(2N)) (von Neumann, from memory; see the module comment), at 320 bits.
        let s = (big(1.0) / big((2 * N) as f64)).sin_pi();
        let lambda = big(1.0) - big(4.0 * r) * &s * &s;
        // sin(π i/N) for every i; sin(0) = sin(π) = 0 exactly (closed form).
        let sines: Vec<Big> = (0..=N)
            .map(|i| if i == 0 || i == N { big(0.0) } else { (big(i as f64) / big(N as f64)).sin_pi() })
            .collect();
        let seen = rod.seen.lock().unwrap();
        let mut checked = 0;
        let mut power = big(1.0);
        for step in 0..=500u64 {
            for (lens, _, cells) in seen.iter().filter(|(l, s, _)| *s == step && *l != "shadow") {
                for (i, cell) in cells.iter().enumerate() {
                    let exact = &power * &sines[i];
                    let (inf, sup) = cell.enclosure.unwrap();
                    assert!(
                        encloses(inf, sup, &exact),
                        "r = {r}, lens {lens}, step {step}, cell {i}: [{inf:e}, {sup:e}] misses {exact}"
                    );
                    checked += 1;
                }
            }
            // λ^(n+1) = λⁿ·λ; 500 roundings at 320 bits stay below 2^-310 relative, far inside any enclosure.
            power = (&power * &lambda).with_precision(BITS).value();
        }
        // Two lenses, 501 states (initial data and 500 steps), N + 1 cells.
        assert_eq!(checked, 2 * 501 * (N + 1), "r = {r}");
    }
}

/// The exact rational run of the scheme from the given start, every state.
fn exact_run(start: &[f64], r: f64, steps: usize) -> Vec<Vec<RBig>> {
    let r = rational(r);
    let two = RBig::from(2u8);
    let mut states = vec![start.iter().map(|&x| rational(x)).collect::<Vec<_>>()];
    for _ in 0..steps {
        let u = states.last().unwrap();
        let mut next = u.clone();
        for i in 1..u.len() - 1 {
            // u_i + r (u_{i−1} − 2u_i + u_{i+1}), in exact rational arithmetic
            next[i] = &u[i] + &r * (&u[i - 1] - &two * &u[i] + &u[i + 1]);
        }
        states.push(next);
    }
    states
}

#[test]
fn shadow_estimate_equals_the_true_arithmetic_error() {
    for r in [0.25, 0.5] {
        // The f64 initial state the primal starts from, taken as exact by the audit and by the oracle alike.
        let start: Vec<f64> = (0..=N).map(|i| initial(i, N)).collect();
        let rod = Rod::new(N, r, Some(start.clone()));
        let dir = scratch("heat_shadow");
        let tolerance = Tolerance::absolute(1e-12);
        let trace = Audit::new(&rod, tolerance, 100)
            .kernel("heat_step")
            .trace(dir.join(format!("heat-r{r}.jsonl")))
            .lens::<Shadow>()
            .run()
            .unwrap();
        assert!(trace.is_complete());
        let exact = exact_run(&start, r, 100);
        let seen = rod.seen.lock().unwrap();
        assert_eq!(seen.len(), 101);
        let mut nonzero = 0;
        for (_, step, cells) in seen.iter() {
            for (i, cell) in cells.iter().enumerate() {
                // true error = |primal − exact|, the exact value from dashu-ratio's exact rational run
                let truth = rational_to_f64(&(rational(cell.primal) - &exact[*step as usize][i])).abs();
                if truth == 0.0 {
                    // No rounding has reached this cell: the shadow, ~106 bits, may differ from the exact value
                    // only by its own rounding, about 2^-106 relative (Joldes, Muller, Popescu 2017, from memory).
                    assert!(cell.estimate <= 2f64.powi(-100) * cell.primal.abs(), "step {step}, cell {i}");
                } else {
                    nonzero += 1;
                    let digits = (cell.estimate - truth).abs() / truth;
                    // Against the exact rational run (dashu-ratio); 1e-10 relative is the ~106-bit shadow's accuracy
                    // on an error of relative size ≥ 2^-53, with room for cancellation (common practice, no source).
                    assert!(digits <= 1e-10, "r = {r}, step {step}, cell {i}: {} vs {truth:e}", cell.estimate);
                }
            }
        }
        // The run must exercise the estimate (a count, no numeric claim: common practice, no source).
        assert!(nonzero > 1000, "r = {r}: only {nonzero} cells carried rounding error");
        // The trace's largest error per step is the largest of those same estimates.
        for record in &trace.steps {
            let cells = &seen.iter().find(|(_, s, _)| *s == record.step).unwrap().2;
            let largest = cells.iter().map(|c| c.estimate).fold(0.0, f64::max);
            assert_eq!(record.fields[0].max_err, largest, "step {}", record.step);
        }
    }
}

#[test]
fn bound_lost_is_reported_with_both_numbers() {
    // r = 0.5: enclosure arithmetic grows the radius by about 1 + 4r = 3 per step (the dependency effect,
    // docs/lenses.md, "The dependency effect: bound versus shadow"), while the true error stays near the rounding
    // level.
    let rod = Rod::new(N, 0.5, None);
    let dir = scratch("heat_bound_lost");
    let trace = Audit::new(&rod, Tolerance::mixed(1e-12, 1e-9), 200)
        .kernel("heat_step")
        .trace(dir.join("heat.jsonl"))
        .lens::<Bound>()
        .lens::<Shadow>()
        .run()
        .unwrap();
    let lost = trace.events.iter().find(|e| e.kind == EventName::BoundLost).expect("a bound_lost event");
    let (bound, estimate) = (lost.bound.unwrap(), lost.estimate.unwrap());
    // The true error at that step, against λⁿ sin(π x_i) at 320 bits (von Neumann, from memory).
    let s = (big(1.0) / big((2 * N) as f64)).sin_pi();
    let lambda = big(1.0) - big(2.0) * &s * &s;
    let mut power = big(1.0);
    for _ in 0..lost.step {
        power = (&power * &lambda).with_precision(BITS).value();
    }
    let seen = rod.seen.lock().unwrap();
    let cells = &seen.iter().find(|(l, st, _)| *l == "shadow" && *st == lost.step).unwrap().2;
    let truth = cells
        .iter()
        .enumerate()
        .map(|(i, c)| {
            let sine = if i == 0 || i == N { big(0.0) } else { (big(i as f64) / big(N as f64)).sin_pi() };
            (big(c.primal) - &power * sine).to_f64().value().abs()
        })
        .fold(0.0, f64::max);
    assert!(bound >= truth, "bound {bound:e} below the true error {truth:e}");
    // The truth is the closed form λⁿ sin(π x_i) at 320 bits (dashu-float, above); 1e-6 relative allows for the
    // closed form's own rounding at that precision and for the maximum over cells (common practice, no source).
    assert!((estimate - truth).abs() <= 1e-6 * truth, "estimate {estimate:e} vs true error {truth:e}");
    // Lost means far above: three decades is the report's own threshold for a runaway axis (docs/cli.md; common
    // practice, no source).
    assert!(bound > 1e3 * estimate, "the bound should be far above the estimate when lost");
    let text = twinstep::report::render_text(&trace);
    assert!(text.contains("BOUND LOST"), "{text}");
    let verdict = &trace.summary.as_ref().unwrap().verdict.text;
    assert!(verdict.contains("rests on the estimate, not on a guarantee"), "{verdict}");
}
