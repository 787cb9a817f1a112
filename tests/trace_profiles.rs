//! The `profile` records of `docs/trace.md`: per-cell errors of 1-D fields, decimated to at most 256 values by
//! the largest over groups of neighbouring cells, at log-spaced steps; none for 2-D fields or when turned off.

mod audit_support;

use audit_support::{rational, rational_to_f64, scratch};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::trace::{self, ProfileRecord};

/// Cells of the 1-D field: more than 256, so that the profile groups ⌈1000 / 256⌉ = 4 cells per value.
const CELLS: usize = 1000;

/// A third of the value: 3 is a double, a third of most integers is not, so the rounding error of each cell is
/// known exactly from rational arithmetic.
#[twinstep::audit]
fn third(u: f64) -> f64 {
    u / 3.0
}

/// A rod of `CELLS` cells holding 0, 1, 2, … and a 4 × 4 grid holding the same, each divided by 3 per step.
struct Thirds;

#[twinstep::scenario]
impl Scenario for Thirds {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("rod", &[CELLS]), FieldSpec::new("plate", &[4, 4])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        let ramp: Vec<f64> = (0..CELLS).map(|i| i as f64).collect();
        let plate = ramp[..16].to_vec();
        vec![ramp, plate]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        for field in 0..2 {
            for i in 0..levels.current[field].len() {
                levels.next[field][i] = third_twin::<T>(levels.current[field][i]);
            }
        }
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        for field in 0..2 {
            for i in 0..levels.current[field].len() {
                levels.next[field][i] = third(levels.current[field][i]);
            }
        }
    }
}

fn profile<'t>(profiles: &'t [ProfileRecord], step: u64, lens: &str) -> &'t ProfileRecord {
    profiles.iter().find(|p| p.step == step && p.lens == lens && p.field == "rod").expect("a profile")
}

#[test]
fn profiles_hold_the_largest_error_of_each_cell_group() {
    let path = scratch("trace_profiles").join("thirds.jsonl");
    let written =
        Audit::new(&Thirds, Tolerance::absolute(1e-3), 1).trace(&path).lens::<Bound>().lens::<Shadow>().run().unwrap();
    let read = trace::read(&path).unwrap();
    assert_eq!(read, written);
    // Only the 1-D field, at steps 0 and 1, for both lenses.
    assert!(read.profiles.iter().all(|p| p.field == "rod"));
    assert_eq!(read.profiles.len(), 2 * 2);
    // Step 0: integers below 2^53 are doubles (IEEE 754-2019 §3.3), so every error is 0.
    assert!(profile(&read.profiles, 0, "shadow").err.iter().all(|e| *e == Some(0.0)));
    // Step 1: the exact error of cell i is |fl(i/3) − i/3|, from dashu-ratio's exact rationals; a value of the
    // profile is the largest over its group of 4 cells.
    let exact: Vec<f64> = (0..CELLS)
        .map(|i| {
            let primal = (i as f64) / 3.0;
            let error = rational(primal) - RBig::from(i as u64) / RBig::from(3u8);
            rational_to_f64(&error).abs()
        })
        .collect();
    let expected: Vec<f64> = exact.chunks(4).map(|group| group.iter().copied().fold(0.0, f64::max)).collect();
    let shadow = profile(&read.profiles, 1, "shadow");
    let bound = profile(&read.profiles, 1, "bound");
    // 1000 cells in at most 256 values: ⌈1000/256⌉ = 4 cells a value, 1000/4 = 250 values (docs/trace.md,
    // "profile": the contract's arithmetic, no numeric source needed).
    assert_eq!((shadow.cells_per_value, shadow.err.len()), (4, 250));
    for (k, want) in expected.iter().enumerate() {
        let got = shadow.err[k].expect("finite");
        // The double-double shadow carries about 2^-100 relative to the value (common practice, no source: a
        // double-double holds twice a double's 53 bits), so its error estimate matches the exact one to far better
        // than a millionth.
        assert!((got - want).abs() <= 1e-6 * want, "group {k}: shadow {got:e}, exact {want:e}");
        // A guaranteed bound is never below the exact error.
        assert!(bound.err[k].expect("finite") >= *want, "group {k}: bound below the exact error");
    }
    // The bound lens is the guaranteed one, and the header says so.
    assert_eq!(read.header.guaranteed_lenses, Some(vec!["bound".to_string()]));
}

#[test]
fn profiles_are_bounded_and_can_be_turned_off() {
    let dir = scratch("trace_profiles_bounded");
    let steps = 20_000;
    let read = Audit::new(&Thirds, Tolerance::absolute(1e-3), steps)
        .trace(dir.join("long.jsonl"))
        .every_step()
        .lens::<Shadow>()
        .run()
        .unwrap();
    // Every step recorded, but profiles only at the log-spaced steps (about 20 per decade) and the last.
    assert_eq!(read.steps.len() as u64, steps + 1);
    assert!(read.profiles.len() <= 201 && read.profiles.len() >= 60, "{} profiles", read.profiles.len());
    assert_eq!(read.profiles.last().map(|p| p.step), Some(steps));
    let off = Audit::new(&Thirds, Tolerance::absolute(1e-3), 3)
        .trace(dir.join("off.jsonl"))
        .without_profiles()
        .lens::<Shadow>()
        .run()
        .unwrap();
    assert!(off.profiles.is_empty());
    let text = std::fs::read_to_string(dir.join("off.jsonl")).unwrap();
    assert!(!text.contains("\"record\":\"profile\""));
}
