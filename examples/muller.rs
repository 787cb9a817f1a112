//! A one-cell recurrence that f64 cannot follow: Muller's `u_{n+1} = 111 − 1130/u_n + 3000/(u_n u_{n−1})` from
//! `u_0 = 2`, `u_1 = −4`. Its exact values tend to 6, its binary64 values to 100 (Muller et al., Handbook of
//! Floating-Point Arithmetic — from memory). Audited as a three-level scheme with the bound and shadow lenses.
//!
//! Run: `cargo run --release --example muller`.

use std::process::ExitCode;

use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Scheme, Tolerance};
use twinstep::lens::{Bound, Shadow};

/// The next term from the two before it.
#[twinstep::audit]
pub fn next_term(before: f64, now: f64) -> f64 {
    111.0 - 1130.0 / now + 3000.0 / (now * before)
}

/// The recurrence as a three-level scheme on one cell.
pub struct Recurrence;

#[twinstep::scenario]
impl Scenario for Recurrence {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[1])]
    }

    fn scheme(&self) -> Scheme {
        Scheme::ThreeLevel
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        levels.previous[0].set_f64(&[2.0])?;
        levels.current[0].set_f64(&[-4.0])
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        levels.next[0][0] = next_term_twin::<T>(levels.previous[0][0], levels.current[0][0]);
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        levels.next[0][0] = next_term(levels.previous[0][0], levels.current[0][0]);
    }
}

fn main() -> ExitCode {
    Audit::new(&Recurrence, Tolerance::relative(1e-6), 30)
        .kernel("next_term")
        .describe("Muller's recurrence, u0 = 2, u1 = -4")
        .every_step()
        .lens::<Bound>()
        .lens::<Shadow>()
        .report()
}
