//! Small annotated kernels the audit and trace tests share.

use twinstep::audit::{FieldSpec, Levels, Scenario};

/// Takes a tenth off and folds at zero: `0.1` is not a double, so after ten steps from 1 the primal is a rounding
/// residue while the exact value is 0, and the comparison cannot be decided by the reference.
#[twinstep::audit]
pub fn fold_step(u: f64) -> f64 {
    let v = u - 0.1;
    if v > 0.0 {
        v
    } else {
        -v
    }
}

/// One cell running [`fold_step`], from 1.
pub struct Fold;

#[twinstep::scenario]
impl Scenario for Fold {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[1])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        levels.next[0][0] = fold_step_twin::<T>(levels.current[0][0]);
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        levels.next[0][0] = fold_step(levels.current[0][0]);
    }
}
