//! Bad input to an attribution is a clear error, a panicking scenario is reported with its step, and a field that
//! turns NaN leaves the other numbers standing (no panic).

use twinstep::attribution::Attribution;
use twinstep::audit::{Error, FieldSpec, Levels, Scenario};

/// `out[i] = u[i] / (u[i] - 1.0)`: from `u = 1`, ∞ after one step and NaN (∞/∞) after two.
#[twinstep::audit]
pub fn blow_up(u: &[f64], out: &mut [f64]) {
    for i in 0..u.len() {
        out[i] = u[i] / (u[i] - 1.0);
    }
}

struct Case {
    fields: Vec<FieldSpec>,
    panic_at: Option<u64>,
}

#[twinstep::scenario]
impl Scenario for Case {
    fn fields(&self) -> Vec<FieldSpec> {
        self.fields.clone()
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        self.fields.iter().map(|f| vec![1.0; f.cells().unwrap_or(0)]).collect()
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        assert!(self.panic_at != Some(levels.step), "the scenario gave up");
        blow_up_twin::<T>(&levels.current[0], &mut levels.next[0]);
    }
}

fn case(cells: usize) -> Case {
    Case { fields: vec![FieldSpec::new("u", &[cells])], panic_at: None }
}

#[test]
fn bad_input_is_a_clear_error() {
    assert!(matches!(Attribution::new(&case(4), 0).run(), Err(Error::ZeroSteps)));
    let none = Case { fields: Vec::new(), panic_at: None };
    assert!(matches!(Attribution::new(&none, 3).run(), Err(Error::NoFields)));
    let empty = Case { fields: vec![FieldSpec::new("u", &[0])], panic_at: None };
    assert!(matches!(Attribution::new(&empty, 3).run(), Err(Error::BadShape { .. })));
}

#[test]
fn a_panicking_scenario_is_reported_with_its_step() {
    let panics = Case { panic_at: Some(2), ..case(4) };
    match Attribution::new(&panics, 5).run() {
        Err(Error::ScenarioPanicked { lens, step, message }) => {
            assert_eq!((lens.as_str(), step), ("attributed", 2));
            assert!(message.contains("gave up"), "{message}");
        }
        other => panic!("expected a reported panic, got {other:?}"),
    }
}

#[test]
fn a_field_that_turns_non_finite_leaves_the_record_standing() {
    // 1/(1 − 1) = ∞ at step 1, ∞/∞ = NaN at step 2 (IEEE 754-2019 §7.2): no finite error anywhere.
    let record = Attribution::new(&case(4), 3).run().expect("no panic, no error");
    let field = &record.fields[0];
    assert!(field.error.is_nan() && field.worst_cell.is_empty() && field.residual.is_none(), "{field:?}");
    assert!(record.lines.iter().all(|l| l.shares[0].share.is_none()));
    assert!(record.findings.is_empty());
}
