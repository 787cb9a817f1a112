// Two wrong arguments and a right one between them: both wrong ones are reported in the same build.

#[twinstep::audit(tolerance = 1e-12, alias = Real, float = f16)]
pub fn halve(x: f64) -> f64 {
    x * 0.5
}

fn main() {
    let _ = halve(1.0);
}
