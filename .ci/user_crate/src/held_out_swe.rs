//! Held out: one step of 1-D shallow water with the Rusanov flux, a file-level constant, closures, a rayon
//! `reduce(|| 0.0, f64::max)` and a `par_iter_mut` over cells, written the way public solvers write it and not for
//! the attribute: only `#[twinstep::audit]` was added. Invented scenario.
use rayon::prelude::*;

const G: f64 = 9.81;

#[twinstep::audit]
pub fn rusanov_step(h: &[f64], hu: &[f64], h_new: &mut [f64], hu_new: &mut [f64], dt: f64, dx: f64) {
    let n = h.len();
    let speed = |i: usize| (hu[i] / h[i]).abs() + (G * h[i]).sqrt();
    let smax = (0..n).into_par_iter().map(speed).reduce(|| 0.0, f64::max);
    let flux = |i: usize, j: usize| {
        let (ul, ur) = (hu[i] / h[i], hu[j] / h[j]);
        let f_h = 0.5 * (hu[i] + hu[j]) - 0.5 * smax * (h[j] - h[i]);
        let f_hu = 0.5 * (hu[i] * ul + 0.5 * G * h[i] * h[i] + hu[j] * ur + 0.5 * G * h[j] * h[j])
            - 0.5 * smax * (hu[j] - hu[i]);
        (f_h, f_hu)
    };
    h_new.par_iter_mut().zip(hu_new.par_iter_mut()).enumerate().for_each(|(i, (hn, hun))| {
        if i == 0 || i == n - 1 {
            *hn = h[i];
            *hun = hu[i];
        } else {
            let (fl_h, fl_hu) = flux(i - 1, i);
            let (fr_h, fr_hu) = flux(i, i + 1);
            *hn = h[i] - dt / dx * (fr_h - fl_h);
            *hun = hu[i] - dt / dx * (fr_hu - fl_hu);
        }
    });
}
