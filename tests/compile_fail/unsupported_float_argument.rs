// `float = f16`: the engine twins `f64` and `f32` kernels only.

#[twinstep::audit(float = f16)]
pub fn halve(x: f64) -> f64 {
    x * 0.5
}

fn main() {
    let _ = halve(1.0);
}
