//! Held out: a vibrating string, leapfrog in time, written as a solver struct with its `impl` in a file module, the
//! way public solvers write it, and not for the attribute: only `#[twinstep::audit]` was added, on the struct and on
//! the block (issue 10's check of real-style code). Invented scenario.

#[twinstep::audit]
#[derive(Clone, Debug)]
pub struct StringSim {
    pub u: Vec<f64>,
    pub u_old: Vec<f64>,
    pub c: f64,
    pub dt: f64,
    pub dx: f64,
    pub t: f64,
}

#[twinstep::audit]
impl StringSim {
    pub fn new(u: Vec<f64>, c: f64, dt: f64, dx: f64) -> Self {
        let u_old = u.clone();
        StringSim { u, u_old, c, dt, dx, t: 0.0 }
    }

    fn courant_sq(&self) -> f64 {
        let nu = self.c * self.dt / self.dx;
        nu * nu
    }

    pub fn step(&mut self) {
        let n = self.u.len();
        let r = self.courant_sq();
        let mut new = vec![0.0; n];
        for i in 1..n - 1 {
            new[i] = 2.0 * self.u[i] - self.u_old[i] + r * (self.u[i + 1] - 2.0 * self.u[i] + self.u[i - 1]);
        }
        self.u_old = std::mem::replace(&mut self.u, new);
        self.t += self.dt;
    }

    pub fn energy(&self) -> f64 {
        self.u.iter().map(|v| v * v).sum::<f64>() * self.dx
    }
}
