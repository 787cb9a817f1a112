//! The passive cable equation `τ v_t = λ² v_xx − v`, explicit in time, and a string plucked beside it.

/// Cable parameters and a step counter.
#[derive(Clone, Debug)]
pub struct Cable {
    pub lambda: f64,
    pub tau: f64,
    pub dx: f64,
    pub dt: f64,
    pub steps: u64,
}

#[twinstep::audit]
impl Cable {
    pub fn new(lambda: f64, tau: f64, dx: f64, dt: f64) -> Self {
        Cable { lambda, tau, dx, dt, steps: 0 }
    }

    /// One explicit step, sealed ends.
    pub fn step(&mut self, v: &[f64], out: &mut [f64]) {
        let n = v.len();
        let r = self.lambda * self.lambda * self.dt / (self.tau * self.dx * self.dx);
        for i in 0..n {
            let left = if i == 0 { v[1] } else { v[i - 1] };
            let right = if i + 1 == n { v[n - 2] } else { v[i + 1] };
            out[i] = v[i] + r * (left - 2.0 * v[i] + right) - self.dt / self.tau * v[i];
        }
        self.steps += 1;
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
