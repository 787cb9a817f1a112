//! Cost of the demo's audits against the plain f64 kernel, measured in the same run (a report, not a timed test):
//! the kiln wall's original kernel alone (both fields, as the demo steps them), the certified run without the audit
//! driver (`certificate::certify`: the lens's kernel with the seeding and condensation), a whole audit with the certified
//! lens alone (its kernel with the seeding and condensation around every step, the f64 original beside it, the
//! per-step measurements and the trace), and the demo as `twinstep demo` runs it (bound, shadow and certified on
//! three threads). Per step, from the difference of runs of 2n and n steps (best of 3 each), so the fixed cost of
//! starting an audit does not count. Run with `cargo bench -p twinstep-cli --bench demo_cost`.

use std::hint::black_box;
use std::time::{Duration, Instant};
use twinstep::audit::{Audit, Tolerance};
use twinstep::certificate::{certify, CertificateOptions};
use twinstep::lens::{Bound, Certified, Shadow};
use twinstep_cli::demo::kiln::{wall_step, Wall, BUDGET_K};

/// Best of 3 of `run(steps)`.
fn best(run: &dyn Fn(u64) -> Duration, steps: u64) -> Duration {
    (0..3).map(|_| run(steps)).min().unwrap_or_default()
}

/// Time per step: the difference of 2n and n steps over n.
fn per_step(run: &dyn Fn(u64) -> Duration, steps: u64) -> Duration {
    best(run, 2 * steps).saturating_sub(best(run, steps)) / steps as u32
}

fn main() {
    let wall = Wall::default();
    let trace = std::env::temp_dir().join(format!("twinstep-demo-bench-{}.jsonl", std::process::id()));
    let original = |steps: u64| {
        let (t, r) = wall.initial();
        let mut fields = [(t.clone(), t), (r.clone(), r)];
        let start = Instant::now();
        for _ in 0..steps {
            for (u, next) in &mut fields {
                wall_step(black_box(u), next, wall.r, wall.heat);
                std::mem::swap(u, next);
            }
        }
        black_box(&fields);
        start.elapsed()
    };
    let run = |steps: u64| {
        let start = Instant::now();
        black_box(certify::<_, 8>(&wall, steps, CertificateOptions::default(), |_, _| {}).expect("the run"));
        start.elapsed()
    };
    let certified = |steps: u64| {
        let start = Instant::now();
        let audit = Audit::new(&wall, Tolerance::absolute(BUDGET_K), steps).trace(&trace);
        black_box(audit.lens::<Certified>().run().expect("the audit runs"));
        start.elapsed()
    };
    let demo = |steps: u64| {
        let start = Instant::now();
        let audit = Audit::new(&wall, Tolerance::absolute(BUDGET_K), steps).trace(&trace);
        black_box(audit.lens::<Bound>().lens::<Shadow>().certified().run().expect("the audit runs"));
        start.elapsed()
    };
    let f64_step = per_step(&original, 200_000);
    let run_step = per_step(&run, 20_000);
    let certified_step = per_step(&certified, 20_000);
    let demo_step = per_step(&demo, 20_000);
    let _ = std::fs::remove_file(&trace);
    let ratio = |d: Duration| d.as_secs_f64() / f64_step.as_secs_f64();
    println!("kiln wall, {} cells, 2 fields, per step:", wall.cells);
    println!("  original f64 kernel         {:>10.3} µs", f64_step.as_secs_f64() * 1e6);
    println!("  certified run, no driver     {:>10.3} µs  {:>7.0}×", run_step.as_secs_f64() * 1e6, ratio(run_step));
    println!(
        "  audit, certified lens alone {:>10.3} µs  {:>7.0}×",
        certified_step.as_secs_f64() * 1e6,
        ratio(certified_step)
    );
    println!(
        "  the demo (bound, shadow, certified) {:>7.3} µs  {:>7.0}×",
        demo_step.as_secs_f64() * 1e6,
        ratio(demo_step)
    );
}
