//! Cost of the lenses against plain f64, measured in the same run (no timing thresholds in tests: the targets
//! live here). Two stencil kernels annotated with `#[twinstep::audit]`: explicit 1-D heat on 10^5 cells and
//! 2-D diffusion on 512×512. For each, the original f64 kernel, its twin with `T = f64`, and the twin with each
//! lens run the same number of steps; the report prints time per step and the ratio to the original.
//!
//! Targets (issue 3): twin f64 ≤ 1.05×, Bound ≤ 8×, Shadow ≤ 15×, Interval reported.
//! Run with `cargo bench --bench lenses`.

use std::hint::black_box;
use std::time::{Duration, Instant};
use twinstep::lens::{Bound, Interval, Shadow};
use twinstep::{BaseOps, MixedOps, Real, RefOps};

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

fn heat_run<T>(cells: usize, steps: usize) -> Duration
where
    T: Real + BaseOps<f64>,
    f64: MixedOps<T> + MixedOps<f64>,
    for<'a> &'a T: RefOps<T>,
{
    let mut u = profile::<T>(cells);
    let mut out = u.clone();
    let r = T::from_f64(0.25);
    time_steps(steps, 5, || {
        heat_1d_twin(black_box(&u), &mut out, r);
        std::mem::swap(&mut u, &mut out);
    })
}

fn diffusion_run<T>(n: usize, steps: usize) -> Duration
where
    T: Real + BaseOps<f64>,
    f64: MixedOps<T> + MixedOps<f64>,
    for<'a> &'a T: RefOps<T>,
{
    let mut u = profile::<T>(n * n);
    let mut out = u.clone();
    let r = T::from_f64(0.2);
    time_steps(steps, 5, || {
        diffusion_2d_twin(black_box(&u), &mut out, n, r);
        std::mem::swap(&mut u, &mut out);
    })
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
    let heat_steps = 200;
    let diffusion_steps = 20;

    let original = {
        let mut u = profile::<f64>(CELLS);
        let mut out = u.clone();
        time_steps(heat_steps, 5, || {
            heat_1d(black_box(&u), &mut out, 0.25);
            std::mem::swap(&mut u, &mut out);
        })
    };
    report(
        "1-D heat, 10^5 cells",
        original,
        &[
            ("twin f64", heat_run::<f64>(CELLS, heat_steps), Some(1.05)),
            ("Bound", heat_run::<Bound>(CELLS, heat_steps), Some(8.0)),
            ("Shadow", heat_run::<Shadow>(CELLS, heat_steps), Some(15.0)),
            ("Interval", heat_run::<Interval>(CELLS, heat_steps / 4), None),
        ],
    );

    let original = {
        let mut u = profile::<f64>(GRID * GRID);
        let mut out = u.clone();
        time_steps(diffusion_steps, 5, || {
            diffusion_2d(black_box(&u), &mut out, GRID, 0.2);
            std::mem::swap(&mut u, &mut out);
        })
    };
    report(
        "2-D diffusion, 512×512",
        original,
        &[
            ("twin f64", diffusion_run::<f64>(GRID, diffusion_steps), Some(1.05)),
            ("Bound", diffusion_run::<Bound>(GRID, diffusion_steps), Some(8.0)),
            ("Shadow", diffusion_run::<Shadow>(GRID, diffusion_steps), Some(15.0)),
            ("Interval", diffusion_run::<Interval>(GRID, diffusion_steps / 4), None),
        ],
    );
}
