//! The rod's update: one explicit step of the heat equation with diffusion number `r`, both ends held, and a
//! source `q` added to the interior cells, for `sweeps` sweeps of the same update.

/// One step: `out_i = u_i + r (u_{i-1} − 2u_i + u_{i+1}) + q` inside, the ends copied.
#[twinstep::audit]
pub fn heat_step(u: &[f64], out: &mut [f64], r: f64, q: f64) {
    let n = u.len();
    out[0] = u[0];
    out[n - 1] = u[n - 1];
    for i in 1..n - 1 {
        out[i] = u[i] + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]) + q;
    }
}
