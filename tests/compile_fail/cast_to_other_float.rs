// `as f32` in an `f64` kernel: the twin would drop the lens at the cast.

#[twinstep::audit]
pub fn store_single(u: &[f64], out: &mut [f32]) {
    for (o, v) in out.iter_mut().zip(u) {
        *o = *v as f32;
    }
}

fn main() {
    let mut out = [0.0f32; 2];
    store_single(&[1.0, 2.0], &mut out);
}
