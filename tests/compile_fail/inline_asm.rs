// Inline assembly computes on machine registers, outside Rust's arithmetic.

#[twinstep::audit]
pub fn fenced_step(u: &mut [f64], r: f64) {
    unsafe { std::arch::asm!("nop") };
    u[0] *= r;
}

fn main() {
    fenced_step(&mut [1.0], 0.5);
}
