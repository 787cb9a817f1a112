//! Held-out check: the struct + impl string of `src/held_out_string.rs`, audited through a short harness that
//! rebuilds the twin struct from the audited fields every step. Checks that the twin with `T = f64` is the
//! original bit for bit over the whole run (the original struct is the reference) and that the audit completes.

use scratch_solver::held_out_string::{StringSim, StringSimTwin};
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};

struct Pluck {
    n: usize,
}

impl Pluck {
    fn plucked(&self) -> Vec<f64> {
        (0..self.n).map(|i| (std::f64::consts::PI * i as f64 / (self.n - 1) as f64).sin()).collect()
    }
}

#[twinstep::scenario]
impl Scenario for Pluck {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[self.n]), FieldSpec::new("u_old", &[self.n])]
    }
    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![self.plucked(), self.plucked()]
    }
    fn step<T>(&self, l: &mut Levels<T>) {
        let dx = 1.0 / (self.n - 1) as f64;
        let mut s =
            StringSimTwin::<T>::new(l.current[0].to_vec(), T::from_f64(1.0), T::from_f64(0.9 * dx), T::from_f64(dx));
        s.u_old = l.current[1].to_vec();
        s.step();
        l.next[0].copy_from_slice(&s.u);
        l.next[1].copy_from_slice(&s.u_old);
    }
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let pluck = Pluck { n: 32 };
    let dx = 1.0 / 31.0;
    let (mut original, mut twin) = (
        StringSim::new(pluck.plucked(), 1.0, 0.9 * dx, dx),
        StringSimTwin::<f64>::new(pluck.plucked(), 1.0, 0.9 * dx, dx),
    );
    for step in 1..=2000 {
        original.step();
        twin.step();
        let same = original.u.iter().zip(&twin.u).all(|(a, b)| a.to_bits() == b.to_bits());
        if !same || original.energy().to_bits() != twin.energy().to_bits() {
            return Err(format!("StringSimTwin<f64> differs from StringSim at step {step}").into());
        }
    }
    let trace = Audit::new(&pluck, Tolerance::absolute(1e-12), 2000)
        .kernel("StringSim::step")
        .lens::<Bound>()
        .lens::<Shadow>()
        .run()?;
    println!("{}", twinstep::report::render_text(&trace));
    trace.summary.as_ref().ok_or("the audit did not complete")?;
    Ok(())
}
