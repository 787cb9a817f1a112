pub fn step(u: &mut [f64]) {
    u[0] *= 0.5;
}
