// A pointer cast reinterprets memory: `&x as *const u64` reads a float's bits, `&x as *const f64` hands the twin a
// raw address of a value that may be a lens. Both are rejected; `main` still calls the original.

#[twinstep::audit]
pub fn scaled_bits(u: &[f64], out: &mut [f64], r: f64) {
    let bits = unsafe { *(&r as *const f64 as *const u64) };
    let address = &u[0] as *const f64;
    out[0] = r * (bits as f64) + unsafe { *address };
}

fn main() {
    let mut out = [0.0];
    scaled_bits(&[1.0], &mut out, 0.5);
}
