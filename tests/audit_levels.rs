//! The driver's shapes and time levels beyond the two-level 1-D case: an in-place 2-D field (multi-index of the
//! worst cell), a multi-stage Runge–Kutta step with scratch levels, and the low-level recorder in a user's own
//! loop. Expected values come from exact rational arithmetic (dashu-ratio) and closed forms.

mod audit_support;

use std::any::Any;
use std::sync::Mutex;

use audit_support::kernels::{fold_step_twin, Fold};
use audit_support::{rational, rational_to_f64, scratch};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, Field, FieldSpec, Levels, Plan, Recorder, Scenario, Scheme, Tolerance};
use twinstep::lens::{Bound, Lens, Shadow, ShadowUnwatched};
use twinstep::trace::EventName;
use twinstep::Real;

/// Scales one cell of a grid by a tenth and every other cell by a half, in place.
#[twinstep::audit]
fn scale_grid(u: &mut [f64], special: usize) {
    for (k, v) in u.iter_mut().enumerate() {
        if k == special {
            *v *= 0.1;
        } else {
            *v *= 0.5;
        }
    }
}

struct Grid;

#[twinstep::scenario]
impl Scenario for Grid {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("g", &[3, 4])]
    }

    fn scheme(&self) -> Scheme {
        Scheme::InPlace
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0; 12]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        // Row-major: cell (2, 1) of a 3 × 4 grid is flat index 2·4 + 1 = 9.
        scale_grid_twin::<T>(&mut levels.current[0], 9);
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        scale_grid(&mut levels.current[0], 9);
    }
}

#[test]
fn in_place_2d_field_reports_the_worst_multi_index() {
    let trace = Audit::new(&Grid, Tolerance::absolute(1.0), 3)
        .trace(scratch("audit_levels_grid").join("g.jsonl"))
        .every_step()
        .split_representation()
        .lens::<Shadow>()
        .run()
        .unwrap();
    let first = trace.steps.iter().find(|s| s.step == 1).unwrap();
    assert_eq!(first.fields[0].worst_cell, vec![2, 1]);
    assert!(trace.events.iter().all(|e| e.kind != EventName::PrimalMismatch));
    // After one step the error is |fl(0.1) − 1/10|: the double nearest a tenth against the tenth as written
    // (IEEE 754-2019 round to nearest; the difference computed exactly with dashu-ratio).
    let tenth_error = rational_to_f64(&(rational(0.1) - RBig::from(1u8) / RBig::from(10u8)));
    let recorded = first.fields[0].max_err;
    assert!((recorded - tenth_error.abs()).abs() <= 1e-10 * tenth_error.abs(), "{recorded:e} vs {tenth_error:e}");
    // 1.0 × fl(0.1) is exact, so all of that first error is the representation of the literal: the run with the
    // literal as compiled sees none of it.
    let representation = first.fields[0].representation_err.expect("the split was asked for");
    assert!((representation - recorded).abs() <= 1e-10 * recorded, "{representation:e} vs {recorded:e}");
    assert_eq!(trace.steps.iter().find(|s| s.step == 0).unwrap().fields[0].representation_err, Some(0.0));
    // Halving is exact in binary (IEEE 754-2019 §4.3: a power-of-two scale of a normal double is exact), so the
    // other eleven cells stay error-free and the mean is a twelfth of the maximum.
    assert!((first.fields[0].mean_err - recorded / 12.0).abs() <= 1e-15 * recorded);
}

/// Heun's method (RK2) for u' = −u with step h: `k1 = −u`, `u* = u + h k1`, `k2 = −u*`, `u⁺ = u + h/2 (k1 + k2)`.
#[twinstep::audit]
fn heun_stage(u: &[f64], stage: &mut [f64], h: f64) {
    stage[0] = u[0] - h * u[0];
}

#[twinstep::audit]
fn heun_finish(u: &[f64], stage: &[f64], out: &mut [f64], h: f64) {
    out[0] = u[0] + 0.5 * h * (-u[0] - stage[0]);
}

/// The decay u' = −u with h = 0.3, one scratch stage; keeps each lens's cells for comparison.
struct Decay {
    seen: Mutex<Vec<(u64, f64, f64)>>,
}

#[twinstep::scenario]
impl Scenario for Decay {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[1])]
    }

    fn stages(&self) -> usize {
        1
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let h = T::from_f64(0.3);
        heun_stage_twin::<T>(&levels.current[0], &mut levels.stages[0][0], h);
        heun_finish_twin::<T>(&levels.current[0], &levels.stages[0][0], &mut levels.next[0], h);
        // The driver runs the lens's unwatched variant (and would replay a step with the watched one only where a
        // value turned non-finite, which never happens here).
        if let Some(shadow) = (&levels.next[0] as &dyn Any).downcast_ref::<Field<ShadowUnwatched>>() {
            let cell = shadow[0];
            self.seen.lock().unwrap().push((levels.step + 1, cell.primal(), cell.error_estimate()));
        }
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        heun_stage(&levels.current[0], &mut levels.stages[0][0], 0.3);
        heun_finish(&levels.current[0], &levels.stages[0][0], &mut levels.next[0], 0.3);
    }
}

#[test]
fn runge_kutta_stages_match_the_exact_amplification_factor() {
    let decay = Decay { seen: Mutex::new(Vec::new()) };
    let trace = Audit::new(&decay, Tolerance::relative(1e-12), 60)
        .trace(scratch("audit_levels_rk").join("rk.jsonl"))
        .lens::<Shadow>()
        .run()
        .unwrap();
    assert!(trace.is_complete());
    assert!(trace.events.iter().all(|e| e.kind != EventName::PrimalMismatch));
    // Heun's method on u' = −u multiplies by g = 1 − h + h²/2 per step (closed form of an explicit RK2 on a
    // linear ODE, common practice, no source); the step size is the double nearest 0.3, taken as exact.
    let h = rational(0.3);
    let g = RBig::from(1u8) - &h + &h * &h / RBig::from(2u8);
    let mut exact = RBig::from(1u8);
    let seen = decay.seen.lock().unwrap();
    assert_eq!(seen.len(), 60);
    let mut nonzero = 0;
    for &(step, primal, estimate) in seen.iter() {
        exact = &exact * &g;
        assert!(step > 0);
        let truth = rational_to_f64(&(rational(primal) - &exact)).abs();
        if truth > 0.0 {
            nonzero += 1;
            // The truth is dashu-ratio's exact rational run; agreement to 1e-10 relative is what a ~106-bit shadow
            // gives an error of relative size ≥ 2^-53 with room for cancellation (common practice, no source).
            assert!((estimate - truth).abs() <= 1e-10 * truth, "step {step}: {estimate:e} vs {truth:e}");
        }
    }
    // Most of the 60 steps carry rounding error (a count of this run, not a numeric claim: common practice, no
    // source — the test must not pass on a run where nothing rounds).
    assert!(nonzero > 40);
}

#[test]
fn recorder_in_a_users_own_loop() {
    let path = scratch("audit_levels_recorder").join("fold.jsonl");
    let plan = Plan::new("fold_step", Fold.fields(), Tolerance::absolute(1e-3), 30, path.clone());
    let mut recorder = Recorder::create::<Bound>(&plan).unwrap();
    let mut u = vec![Bound::from_f64(1.0)];
    recorder.record_step(0, &[&u]).unwrap();
    for step in 1..=30 {
        u[0] = fold_step_twin::<Bound>(u[0]);
        recorder.record_step(step, &[&u]).unwrap();
    }
    let trace = recorder.finish().unwrap();
    assert_eq!(trace, twinstep::trace::read(&path).unwrap());
    // 1 − 10 × (1/10) = 0 exactly (arithmetic), while ten subtractions of the double 0.1 leave a residue: the
    // fold's comparison first becomes undecidable at step 10.
    let first = trace.events.iter().find(|e| e.kind == EventName::UndecidedComparison).unwrap();
    assert_eq!(first.step, 10);
    assert!(first.site.as_ref().unwrap().file.ends_with("kernels.rs"));
    assert_eq!(trace.steps.last().unwrap().step, 30);
}
