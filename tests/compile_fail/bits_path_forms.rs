// The path forms of the bit conversions: `f64::from_bits`, `f64::to_bits`, `<f64>::from_bits`.

#[twinstep::audit]
pub fn next_up(x: f64) -> f64 {
    let bits = f64::to_bits(x);
    let up = f64::from_bits(bits + 1);
    up.max(<f64>::from_bits(bits))
}

fn main() {
    let _ = next_up(1.0);
}
