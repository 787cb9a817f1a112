// SIMD intrinsics and vector types compute on hardware lanes of raw floats.

#[twinstep::audit]
pub fn add_four(a: &[f64; 4], b: &[f64; 4], out: &mut [f64; 4]) {
    use std::arch::x86_64::{__m256d, _mm256_loadu_pd, _mm256_storeu_pd};
    unsafe {
        let x: __m256d = _mm256_loadu_pd(a.as_ptr());
        let y = _mm256_loadu_pd(b.as_ptr());
        _mm256_storeu_pd(out.as_mut_ptr(), std::arch::x86_64::_mm256_add_pd(x, y));
    }
}

fn main() {
    let mut out = [0.0; 4];
    add_four(&[1.0; 4], &[2.0; 4], &mut out);
}
