// `transmute` reinterprets a float's bits, which a lens does not have.

#[twinstep::audit]
pub fn flip_sign(u: &mut [f64]) {
    for value in u.iter_mut() {
        let bits: [u8; 8] = unsafe { std::mem::transmute::<f64, [u8; 8]>(*value) };
        *value = -*value + bits[0] as f64;
    }
}

fn main() {
    flip_sign(&mut [1.0, 2.0]);
}
