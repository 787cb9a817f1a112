// Several rejected constructs in one kernel are all reported in the same build, and the original kernel is still
// emitted: the calls in `main` compile without an error of their own.

#[twinstep::audit]
pub fn messy_step(u: &[f64], out: &mut [f64], r: f64) {
    let n = u.len();
    for i in 1..n - 1 {
        let laplacian = u[i - 1] - 2.0 * u[i] + u[i + 1];
        let sign_bit = laplacian.to_bits() >> 63;
        let raw = unsafe { std::mem::transmute::<f64, u64>(r) };
        let first = &u[0] as *const f64;
        out[i] = match laplacian {
            0.0 => u[i],
            _ => u[i] + r * laplacian + (sign_bit + raw) as f64 * unsafe { *first },
        };
    }
    println!("last bits {}", f64::to_bits(out[n - 2]));
}

fn main() {
    let u = [0.0, 1.0, 0.0];
    let mut out = [0.0; 3];
    messy_step(&u, &mut out, 0.25);
    messy_step(&out.clone(), &mut out, 0.25);
}
