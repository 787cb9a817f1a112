//! The dependency effect of enclosure arithmetic on the naive heat stencil `u + r(u[i−1] − 2u + u[i+1])`: the
//! three occurrences of the neighbourhood are treated as independent, so a uniform radius ρ becomes
//! ρ + r(ρ + 2ρ + ρ) = (1 + 4r)ρ per step (closed form of the radius recurrence, common practice, no source),
//! while the true error of the scheme (stable for r ≤ 1/2) barely grows. The test pins both halves of the
//! statement that `docs/lenses.md` makes: the bound grows like (1 + 4r)^n, the shadow's estimate does not.

use twinstep::lens::{Bound, Lens, Shadow};
use twinstep::Real;

fn step<T: Real>(u: &[T], r: T) -> Vec<T> {
    let n = u.len();
    let mut out = u.to_vec();
    for i in 1..n - 1 {
        out[i] = u[i] + r * (u[i - 1] - T::from_f64(2.0) * u[i] + u[i + 1]);
    }
    out
}

fn run<T: Real>(steps: usize, initial: impl Fn(f64) -> T) -> Vec<T> {
    let cells = 64;
    let mut u: Vec<T> = (0..cells).map(|i| initial((i as f64 / cells as f64 * std::f64::consts::PI).sin())).collect();
    let r = T::from_f64(0.25);
    for _ in 0..steps {
        u = step(&u, r);
    }
    u
}

#[test]
fn bound_grows_like_one_plus_four_r_per_step() {
    const STEPS: usize = 20;
    let rho = 1e-12; // a uniform initial radius, far above the rounding per step (≈ 1e-16)
    let out = run(STEPS, |x| Bound::new(x, rho));
    let middle = out[32].radius();
    let predicted = rho * (1.0f64 + 4.0 * 0.25).powi(STEPS as i32); // (1 + 4r)^n ρ = 2^20 ρ for r = 1/4
                                                                    // Away from the fixed ends (which hold radius ρ), the middle cell follows the closed form within 1 %.
    assert!((middle / predicted - 1.0).abs() < 0.01, "radius {middle:e}, predicted {predicted:e}");
}

#[test]
fn shadow_estimate_stays_at_rounding_level() {
    const STEPS: usize = 200;
    let shadow = run(STEPS, Shadow::from_f64);
    let bound = run(STEPS, Bound::from_f64);
    let worst_shadow = shadow.iter().map(|s| s.error_estimate()).fold(0.0, f64::max);
    let worst_bound = bound.iter().map(|b| b.radius()).fold(0.0, f64::max);
    // The float error after 200 steps stays within a few hundred roundings of O(1) values, i.e. ≲ 1e-13
    // (standard forward error analysis of a stable averaging scheme, common practice, no source) ...
    assert!(worst_shadow < 1e-13, "shadow estimate {worst_shadow:e}");
    // ... while the guaranteed radius has grown by orders of magnitude beyond it: the dependency effect.
    assert!(worst_bound > 1e3 * worst_shadow, "bound {worst_bound:e} vs shadow {worst_shadow:e}");
    eprintln!("after {STEPS} steps: bound radius {worst_bound:e}, shadow estimate {worst_shadow:e}");
}
