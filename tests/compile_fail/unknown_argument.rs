// An argument the attribute does not know.

#[twinstep::audit(tolerance = 1e-12)]
pub fn halve(x: f64) -> f64 {
    x * 0.5
}

fn main() {
    let _ = halve(1.0);
}
