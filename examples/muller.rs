//! A one-cell recurrence that f64 cannot follow: Muller's `u_{n+1} = 111 − 1130/u_n + 3000/(u_n u_{n−1})` from
//! `u_0 = 2`, `u_1 = −4`. Its exact values tend to 6, its binary64 values to 100 (Muller et al., Handbook of
//! Floating-Point Arithmetic — from memory). Audited as a three-level scheme with the bound and shadow lenses.
//!
//! Run: `cargo run --release --example muller`.

mod common;

use std::process::ExitCode;

use twinstep::audit::{Error, FieldSpec, Levels, Scenario, Scheme, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::{BaseOps, MixedOps, Real, RefOps};

/// The next term from the two before it.
#[twinstep::audit]
pub fn next_term(before: f64, now: f64) -> f64 {
    111.0 - 1130.0 / now + 3000.0 / (now * before)
}

/// The recurrence as a three-level scheme on one cell.
pub struct Recurrence;

impl Scenario for Recurrence {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[1])]
    }

    fn scheme(&self) -> Scheme {
        Scheme::ThreeLevel
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error>
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        levels.previous[0].set_f64(&[2.0])?;
        levels.current[0].set_f64(&[-4.0])
    }

    fn step<T>(&self, levels: &mut Levels<T>)
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        levels.next[0][0] = next_term_twin::<T>(levels.previous[0][0], levels.current[0][0]);
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        levels.next[0][0] = next_term(levels.previous[0][0], levels.current[0][0]);
    }
}

fn main() -> ExitCode {
    let example = common::Example {
        name: "muller",
        kernel: "next_term",
        about: "Muller's recurrence, u0 = 2, u1 = -4",
        steps: 30,
    };
    example.run(&Recurrence, Tolerance::relative(1e-6), |audit| audit.every_step().lens::<Bound>().lens::<Shadow>())
}
