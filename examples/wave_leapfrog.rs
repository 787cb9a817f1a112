//! A plucked guitar string: the 1-D wave equation with the three-level leapfrog scheme
//! `u^{n+1} = 2u^n − u^{n−1} + C²(u_{i−1} − 2u_i + u_{i+1})`, Courant number 0.9, 201 points, fixed ends, released
//! from rest. The first step uses the Taylor start `u¹ = u⁰ + ½C²δ²u⁰`.
//!
//! Run: `cargo run --release --example wave_leapfrog`.

use std::process::ExitCode;

use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Scheme, Tolerance};
use twinstep::lens::{Bound, Shadow};

#[twinstep::audit]
mod string {
    /// One leapfrog step with squared Courant number `c2`.
    pub fn leapfrog(before: &[f64], now: &[f64], after: &mut [f64], c2: f64) {
        let n = now.len();
        after[0] = 0.0;
        after[n - 1] = 0.0;
        for i in 1..n - 1 {
            after[i] = 2.0 * now[i] - before[i] + c2 * (now[i - 1] - 2.0 * now[i] + now[i + 1]);
        }
    }

    /// The start from rest: `u¹ = u⁰ + ½ c2 δ²u⁰`.
    pub fn start_from_rest(u0: &[f64], u1: &mut [f64], c2: f64) {
        let n = u0.len();
        u1[0] = 0.0;
        u1[n - 1] = 0.0;
        for i in 1..n - 1 {
            u1[i] = u0[i] + 0.5 * c2 * (u0[i - 1] - 2.0 * u0[i] + u0[i + 1]);
        }
    }

    /// The pluck: a triangle peaking 3 mm high at a fifth of the length.
    pub fn pluck(i: usize, n: usize) -> f64 {
        let x = i as f64 / (n - 1) as f64;
        if x < 0.2 {
            0.003 * x / 0.2
        } else {
            0.003 * (1.0 - x) / 0.8
        }
    }
}

struct GuitarString {
    points: usize,
    courant: f64,
}

#[twinstep::scenario]
impl Scenario for GuitarString {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("displacement", &[self.points])]
    }

    fn scheme(&self) -> Scheme {
        Scheme::ThreeLevel
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        let c2 = T::from_f64(self.courant * self.courant);
        levels.previous[0].fill(|ix| string_twin::pluck::<T>(ix[0], self.points));
        string_twin::start_from_rest::<T>(&levels.previous[0], &mut levels.current[0], c2);
        Ok(())
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let c2 = T::from_f64(self.courant * self.courant);
        string_twin::leapfrog::<T>(&levels.previous[0], &levels.current[0], &mut levels.next[0], c2);
    }

    fn init_original(&self, levels: &mut Levels<f64>) -> Result<(), Error> {
        let c2 = self.courant * self.courant;
        levels.previous[0].fill(|ix| string::pluck(ix[0], self.points));
        string::start_from_rest(&levels.previous[0], &mut levels.current[0], c2);
        Ok(())
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        let c2 = self.courant * self.courant;
        string::leapfrog(&levels.previous[0], &levels.current[0], &mut levels.next[0], c2);
    }
}

fn main() -> ExitCode {
    let string = GuitarString { points: 201, courant: 0.9 };
    Audit::new(&string, Tolerance::absolute(1e-12), 5_000)
        .kernel("string::leapfrog")
        .describe("plucked string, 201 points, Courant 0.9, leapfrog")
        .horizon(1_000_000)
        .lens::<Bound>()
        .lens::<Shadow>()
        .report()
}
