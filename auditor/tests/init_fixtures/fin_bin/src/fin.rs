//! A cooling fin, `θ_t = α θ_xx − m² θ` for the excess temperature θ, explicit in time, and a string plucked beside
//! it (a crate's kernels are seldom about one thing).

/// The fin's material and geometry, and the steps it has taken.
#[derive(Debug)]
pub struct Fin {
    /// Diffusion number `α Δt / Δx²`.
    pub diffusion: f64,
    /// Loss to the air per step, `m² Δt`.
    pub loss: f64,
    pub taken: u64,
}

#[twinstep::audit(methods_only)]
impl Fin {
    pub fn new(diffusion: f64, loss: f64) -> Self {
        Fin { diffusion, loss, taken: 0 }
    }

    /// One explicit step: the root held, the tip insulated.
    pub fn step(&mut self, theta: &[f64], out: &mut [f64]) {
        let n = theta.len();
        out[0] = theta[0];
        for i in 1..n {
            let beyond = if i + 1 == n { theta[i - 1] } else { theta[i + 1] };
            out[i] = theta[i] * (1.0 - self.loss) + self.diffusion * (theta[i - 1] - 2.0 * theta[i] + beyond);
        }
        self.taken += 1;
    }
}

/// A plucked string, leapfrog in time.
#[twinstep::audit]
pub mod wave {
    pub type Real = f64;

    pub fn leapfrog(before: &[Real], now: &[Real], after: &mut [Real], c2: Real, ends: usize) {
        let n = now.len();
        for i in ends..n - ends {
            after[i] = 2.0 * now[i] - before[i] + c2 * (now[i - 1] - 2.0 * now[i] + now[i + 1]);
        }
    }
}
