// `x.to_bits()` reads the float's storage.

#[twinstep::audit]
pub fn is_negative_zero(x: f64) -> bool {
    x.to_bits() == 0x8000_0000_0000_0000
}

fn main() {
    let _ = is_negative_zero(-0.0);
}
