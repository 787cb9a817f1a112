// A rejected kernel still gets a twin, with a body that cannot run, so the code calling the twin resolves and
// the only error is the rejection itself.

#[twinstep::audit]
pub fn damp(u: &mut [f64]) {
    let bits = u[0].to_bits();
    u[0] = f64::from_bits(bits - 1);
}

fn main() {
    let mut u = [1.0];
    damp(&mut u);
    damp_twin::<f64>(&mut u);
}
