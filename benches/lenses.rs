//! Cost of the lenses against plain f64, measured in the same run (no timing thresholds in tests: the targets
//! live here). Stencil kernels annotated with `#[twinstep::audit]`: explicit 1-D heat on 10^5 cells, the same
//! with its diffusion number written as the literal `0.1` (the literal-as-written path once per cell), and 2-D
//! diffusion on 512×512. For each, the original f64 kernel, its twin with `T = f64`, and the twin with each lens
//! run the same number of steps; the report prints time per step and the ratio to the original.
//!
//! Targets (issue 3): twin f64 ≤ 1.05×, Bound ≤ 8×, Shadow ≤ 15×, Interval reported; the unwatched variants
//! (no per-operation NaN/∞ test) are measured beside them.
//! Run with `cargo bench --bench lenses`.

use std::hint::black_box;
use std::time::{Duration, Instant};
use twinstep::lens::{Bound, BoundUnwatched, Interval, Shadow, ShadowUnwatched};
use twinstep::Real;

/// One explicit step of the 1-D heat equation `u_t = u_xx`, fixed ends.
#[twinstep::audit]
pub fn heat_1d(u: &[f64], out: &mut [f64], r: f64) {
    let n = u.len();
    out[0] = u[0];
    out[n - 1] = u[n - 1];
    for i in 1..n - 1 {
        out[i] = u[i] + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]);
    }
}

/// The 1-D heat step with its diffusion number written as a decimal literal in the kernel (r = 0.1, which binary64
/// does not hold exactly): measures the lenses' literal-as-written path, taken once per cell.
#[twinstep::audit]
pub fn heat_1d_literal(u: &[f64], out: &mut [f64]) {
    let n = u.len();
    out[0] = u[0];
    out[n - 1] = u[n - 1];
    for i in 1..n - 1 {
        out[i] = u[i] + 0.1 * (u[i - 1] - 2.0 * u[i] + u[i + 1]);
    }
}

/// One explicit step of 2-D diffusion on an `n × n` grid stored row-major, fixed boundary.
#[twinstep::audit]
pub fn diffusion_2d(u: &[f64], out: &mut [f64], n: usize, r: f64) {
    for i in 1..n - 1 {
        for j in 1..n - 1 {
            let c = i * n + j;
            out[c] = u[c] + r * (u[c - n] + u[c + n] + u[c - 1] + u[c + 1] - 4.0 * u[c]);
        }
    }
}

/// Best of `repeats` timings of `steps` steps of `step`, which swaps its buffers itself.
fn time_steps(steps: usize, repeats: usize, mut step: impl FnMut()) -> Duration {
    (0..repeats)
        .map(|_| {
            let start = Instant::now();
            for _ in 0..steps {
                step();
            }
            start.elapsed() / steps as u32
        })
        .min()
        .unwrap_or_default()
}

/// A smooth initial profile with a bump, the same for every scalar type.
fn profile<T: Real>(len: usize) -> Vec<T> {
    (0..len).map(|i| T::from_f64((i as f64 / len as f64 * 3.0).sin() + 0.5)).collect()
}

/// Time per step of `kernel(u, out)` on a field of `len` values, buffers swapped after each step.
fn time_kernel<T: Real>(len: usize, steps: usize, mut kernel: impl FnMut(&[T], &mut [T])) -> Duration {
    let mut u = profile::<T>(len);
    let mut out = u.clone();
    time_steps(steps, 5, || {
        kernel(black_box(&u), &mut out);
        std::mem::swap(&mut u, &mut out);
    })
}

/// The rows of one kernel: its twin with `T = f64` and with each lens (Interval on a quarter of the steps).
/// `$twin` is a closure body over `u`, `out` and the scalar type's diffusion number `r`.
macro_rules! lens_rows {
    ($len:expr, $steps:expr, $r:expr, |$u:ident, $out:ident, $rr:ident| $twin:expr) => {{
        macro_rules! row {
            ($t:ty, $s:expr) => {
                time_kernel::<$t>($len, $s, |$u, $out| {
                    let $rr = <$t as Real>::from_f64($r);
                    $twin
                })
            };
        }
        [
            ("twin f64", row!(f64, $steps), Some(1.05)),
            ("Bound", row!(Bound, $steps), Some(8.0)),
            ("Bound unw.", row!(BoundUnwatched, $steps), Some(8.0)),
            ("Shadow", row!(Shadow, $steps), Some(15.0)),
            ("Shadow unw.", row!(ShadowUnwatched, $steps), Some(15.0)),
            ("Interval", row!(Interval, $steps / 4), None),
        ]
    }};
}

fn report(name: &str, original: Duration, rows: &[(&str, Duration, Option<f64>)]) {
    println!("{name}: original f64 {:>10.1} µs/step", original.as_secs_f64() * 1e6);
    for (label, time, target) in rows {
        let ratio = time.as_secs_f64() / original.as_secs_f64();
        let verdict = match target {
            Some(t) if ratio <= *t => format!("target ≤ {t}× met"),
            Some(t) => format!("target ≤ {t}× MISSED"),
            None => "reported".to_string(),
        };
        println!("  {label:<12} {:>10.1} µs/step  {ratio:>6.2}×  ({verdict})", time.as_secs_f64() * 1e6);
    }
}

fn main() {
    const CELLS: usize = 100_000;
    const GRID: usize = 512;
    let (heat_steps, diffusion_steps) = (200, 20);

    let original = time_kernel::<f64>(CELLS, heat_steps, |u, out| heat_1d(u, out, 0.25));
    let rows = lens_rows!(CELLS, heat_steps, 0.25, |u, out, r| heat_1d_twin(u, out, r));
    report("1-D heat, 10^5 cells", original, &rows);

    let original = time_kernel::<f64>(CELLS, heat_steps, heat_1d_literal);
    let rows = lens_rows!(CELLS, heat_steps, 0.1, |u, out, _r| heat_1d_literal_twin(u, out));
    report("1-D heat, literal r = 0.1", original, &rows);

    let original = time_kernel::<f64>(GRID * GRID, diffusion_steps, |u, out| diffusion_2d(u, out, GRID, 0.2));
    let rows = lens_rows!(GRID * GRID, diffusion_steps, 0.2, |u, out, r| diffusion_2d_twin(u, out, GRID, r));
    report("2-D diffusion, 512×512", original, &rows);
}
