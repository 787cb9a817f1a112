//! A slug of dye carried around a ring pipe: periodic linear advection with a MUSCL reconstruction limited by
//! minmod, Courant number 0.5, 120 cells. The limiter's comparisons on nearly equal neighbours are exactly where
//! rounding can flip a branch: the audit reports those undecided comparisons with their source sites.
//!
//! Run: `cargo run --release --example advection_minmod`.

use std::process::ExitCode;

use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};

#[twinstep::audit]
mod ring {
    /// The minmod limiter: the smaller slope when both agree in sign, else 0.
    pub fn minmod(a: f64, b: f64) -> f64 {
        if a * b <= 0.0 {
            0.0
        } else if a.abs() < b.abs() {
            a
        } else {
            b
        }
    }

    /// One upwind step (velocity > 0) with limited linear reconstruction, Courant number `c`, periodic cells.
    pub fn advect(u: &[f64], out: &mut [f64], c: f64) {
        let n = u.len();
        for i in 0..n {
            let (im2, im1, ip1) = ((i + n - 2) % n, (i + n - 1) % n, (i + 1) % n);
            let slope_here = minmod(u[i] - u[im1], u[ip1] - u[i]);
            let slope_left = minmod(u[im1] - u[im2], u[i] - u[im1]);
            let face_right = u[i] + 0.5 * (1.0 - c) * slope_here;
            let face_left = u[im1] + 0.5 * (1.0 - c) * slope_left;
            out[i] = u[i] - c * (face_right - face_left);
        }
    }
}

/// The pipe: a background concentration of 0.2 with a slug of 0.9 over a third of the ring.
struct Pipe {
    dye: Vec<f64>,
    courant: f64,
}

#[twinstep::scenario]
impl Scenario for Pipe {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("dye", &[self.dye.len()])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        levels.current[0].set_f64(&self.dye)
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        ring_twin::advect::<T>(&levels.current[0], &mut levels.next[0], T::from_f64(self.courant));
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        ring::advect(&levels.current[0], &mut levels.next[0], self.courant);
    }
}

fn main() -> ExitCode {
    let cells = 120;
    let dye = (0..cells).map(|i| if (40..80).contains(&i) { 0.9 } else { 0.2 }).collect();
    let pipe = Pipe { dye, courant: 0.5 };
    Audit::new(&pipe, Tolerance::mixed(1e-12, 1e-10), 2_400)
        .kernel("ring::advect")
        .describe("dye slug on a ring, 120 cells, Courant 0.5, minmod MUSCL")
        .lens::<Bound>()
        .lens::<Shadow>()
        .report()
}
