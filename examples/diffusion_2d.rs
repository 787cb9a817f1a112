//! Greenhouse air at 300 K with a 1 nK warm draught: 2-D diffusion with the five-point explicit scheme on a
//! 48 × 48 grid, r = 0.2. Every value is near 300 while the signal is a 10⁻⁹ perturbation, so each rounding of a
//! value near 300 (a few 10⁻¹⁴) is a sizeable part of the signal's own change: the swamping the audit measures.
//!
//! Run: `cargo run --release --example diffusion_2d`.

use std::process::ExitCode;

use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};

/// One step on an `ny × nx` row-major grid, edges held at their values.
#[twinstep::audit]
fn greenhouse_step(u: &[f64], out: &mut [f64], nx: usize, ny: usize, r: f64) {
    for j in 0..ny {
        for i in 0..nx {
            let k = j * nx + i;
            if i == 0 || j == 0 || i == nx - 1 || j == ny - 1 {
                out[k] = u[k];
            } else {
                out[k] = u[k] + r * (u[k - 1] + u[k + 1] + u[k - nx] + u[k + nx] - 4.0 * u[k]);
            }
        }
    }
}

/// 300 K everywhere, plus a 1 nK draught: a Gaussian of width 0.1 at (0.3, 0.6).
#[twinstep::audit]
fn draught(j: usize, i: usize, n: usize) -> f64 {
    let x = i as f64 / (n - 1) as f64;
    let y = j as f64 / (n - 1) as f64;
    let d2 = ((x - 0.3) * (x - 0.3) + (y - 0.6) * (y - 0.6)) / 0.01;
    300.0 + 1e-9 * (-d2).exp()
}

struct Greenhouse {
    n: usize,
    r: f64,
}

#[twinstep::scenario]
impl Scenario for Greenhouse {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("air_temperature", &[self.n, self.n])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        levels.current[0].fill(|ix| draught_twin::<T>(ix[0], ix[1], self.n));
        Ok(())
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        greenhouse_step_twin::<T>(&levels.current[0], &mut levels.next[0], self.n, self.n, T::from_f64(self.r));
    }

    fn init_original(&self, levels: &mut Levels<f64>) -> Result<(), Error> {
        levels.current[0].fill(|ix| draught(ix[0], ix[1], self.n));
        Ok(())
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        greenhouse_step(&levels.current[0], &mut levels.next[0], self.n, self.n, self.r);
    }
}

fn main() -> ExitCode {
    let greenhouse = Greenhouse { n: 48, r: 0.2 };
    // 1e-12 K absolute: a thousandth of the draught's amplitude.
    Audit::new(&greenhouse, Tolerance::absolute(1e-12), 1_500)
        .kernel("greenhouse_step")
        .describe("greenhouse air, 48 x 48, r = 0.2, 300 K + 1 nK draught")
        .horizon(20_000)
        .lens::<Bound>()
        .lens::<Shadow>()
        .report()
}
