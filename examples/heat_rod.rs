//! A copper rod warmed in the middle by a torch, cooling through its clamped ends: the explicit heat scheme on
//! 101 points, diffusion number 0.45, audited for 2 000 steps of a planned 200 000 with the bound, interval and
//! shadow lenses, each run a second time with the literals as compiled to split off the representation error.
//!
//! Run: `cargo run --release --example heat_rod`.

use std::process::ExitCode;

use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Interval, Shadow};

/// One step of the explicit scheme with diffusion number `r`, ends held at their values.
#[twinstep::audit]
pub fn rod_step(u: &[f64], out: &mut [f64], r: f64) {
    let n = u.len();
    out[0] = u[0];
    out[n - 1] = u[n - 1];
    for i in 1..n - 1 {
        out[i] = u[i] + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]);
    }
}

/// The torch's mark: a Gaussian bump of width 0.08 centred at 0.45, clamped ends at 0.
#[twinstep::audit]
fn torch_profile(i: usize, n: usize) -> f64 {
    let x = i as f64 / (n - 1) as f64;
    let d = (x - 0.45) / 0.08;
    (-d * d).exp() * x * (1.0 - x) * 4.0
}

/// The rod as the audit sees it.
struct Rod {
    points: usize,
    r: f64,
}

#[twinstep::scenario]
impl Scenario for Rod {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("temperature", &[self.points])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        levels.current[0].fill(|ix| torch_profile_twin::<T>(ix[0], self.points));
        Ok(())
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        rod_step_twin::<T>(&levels.current[0], &mut levels.next[0], T::from_f64(self.r));
    }

    fn init_original(&self, levels: &mut Levels<f64>) -> Result<(), Error> {
        levels.current[0].fill(|ix| torch_profile(ix[0], self.points));
        Ok(())
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        rod_step(&levels.current[0], &mut levels.next[0], self.r);
    }
}

fn main() -> ExitCode {
    let rod = Rod { points: 101, r: 0.45 };
    Audit::new(&rod, Tolerance::mixed(1e-13, 1e-9), 2_000)
        .kernel("rod_step")
        .describe("torch-warmed rod, 101 points, r = 0.45")
        .horizon(200_000)
        .split_representation()
        .lens::<Bound>()
        .lens::<Interval>()
        .lens::<Shadow>()
        .report()
}
