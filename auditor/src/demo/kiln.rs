//! The kiln wall: explicit conduction through a refractory wall during a slow firing ramp, on a 1-D grid.
//!
//! `u_i^{n+1} = u_i + r (u_{i-1} − 2 u_i + u_{i+1}) + h` for the inner cells, `u^{n+1} = u + h` on both faces
//! (they follow the ramp), with diffusion number `r` and firing increment `h` kelvin per step. The initial data
//! is `U + A sin(π x_i)`, `x_i = i/(N−1)`, as f64 values. For exact sine data the scheme's solution would be
//! `U + n h + A λ^n sin(π x_i)` with `λ = 1 − 4 r sin²(π/(2(N−1)))` (von Neumann analysis of the explicit scheme,
//! e.g. Strikwerda, "Finite Difference Schemes and PDEs", from memory); the f64 data is a rounded sine, so
//! `auditor/tests/demo.rs` uses as its oracle the exact solution from the f64 data itself, in exact rationals: the
//! shift `n h`, the straight line between the two initial face values, and a remainder with zero faces that the
//! scheme damps by at least `λ` per step.

use twinstep::audit::{Error, FieldSpec, Levels, Scenario};

/// The rounding budget of the demo: 1 nK per cell, in kelvin.
pub const BUDGET_K: f64 = 1e-9;

/// One explicit conduction step with firing increment `heat` (kelvin per step); both faces follow the ramp.
#[twinstep::audit]
pub fn wall_step(u: &[f64], out: &mut [f64], r: f64, heat: f64) {
    let n = u.len();
    out[0] = u[0] + heat;
    out[n - 1] = u[n - 1] + heat;
    for i in 1..n - 1 {
        out[i] = u[i] + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]) + heat;
    }
}

/// The wall and its firing.
#[derive(Clone, Debug, PartialEq)]
pub struct Wall {
    /// Grid cells across the wall.
    pub cells: usize,
    /// Diffusion number `α Δt / Δx²` (the explicit scheme is stable for `r ≤ 1/2`).
    pub r: f64,
    /// Firing increment per step, kelvin.
    pub heat: f64,
    /// Soak temperature `U`, kelvin.
    pub soak: f64,
    /// Amplitude `A` of the initial hot band, kelvin.
    pub band: f64,
}

impl Default for Wall {
    fn default() -> Wall {
        Wall { cells: 48, r: 0.25, heat: 1.0e-5, soak: 1300.0, band: 5.0 }
    }
}

impl Wall {
    /// One line for the report.
    #[must_use]
    pub fn describe(&self) -> String {
        format!(
            "kiln wall, {} cells, r = {}, firing {} K per step; T in kelvin around {} K, rise = T − {} K",
            self.cells, self.r, self.heat, self.soak, self.soak
        )
    }

    /// The initial `T` and `rise`, as f64.
    #[must_use]
    pub fn initial(&self) -> (Vec<f64>, Vec<f64>) {
        let rise: Vec<f64> = (0..self.cells).map(|i| self.band_at(i)).collect();
        let temperature = rise.iter().map(|b| self.soak + b).collect();
        (temperature, rise)
    }

    /// The initial hot band `A sin(π x_i)`, `x_i = i/(N−1)`.
    #[must_use]
    pub fn band_at(&self, i: usize) -> f64 {
        self.band * (std::f64::consts::PI * i as f64 / (self.cells - 1) as f64).sin()
    }
}

#[twinstep::scenario]
impl Scenario for Wall {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("T", &[self.cells]), FieldSpec::new("rise", &[self.cells])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        // The initial data are the f64 values given, taken as exact.
        let (temperature, rise) = self.initial();
        levels.current[0].set_f64(&temperature)?;
        levels.current[1].set_f64(&rise)
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let (r, heat) = (T::from_f64(self.r), T::from_f64(self.heat));
        for (current, next) in levels.current.iter().zip(levels.next.iter_mut()) {
            wall_step_twin(current, next, r, heat);
        }
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        for (current, next) in levels.current.iter().zip(levels.next.iter_mut()) {
            wall_step(current, next, self.r, self.heat);
        }
    }
}
