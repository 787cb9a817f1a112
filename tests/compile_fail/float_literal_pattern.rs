// Float literal and constant patterns match a lens value against a constant, which it is not.

#[twinstep::audit]
pub fn limiter(ratio: f64) -> f64 {
    match ratio {
        0.0 => 0.0,
        -1.0 => 1.0,
        0.5..=1.0 => ratio,
        f64::INFINITY => 2.0,
        _ => ratio.min(2.0),
    }
}

fn main() {
    let _ = limiter(0.7);
}
