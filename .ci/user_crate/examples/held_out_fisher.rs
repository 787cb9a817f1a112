//! Held out: Fisher–KPP reaction–diffusion with the whole run in `main`, written the way a one-file solver is and
//! not for the attribute: only `#[twinstep::audit]` and the `record!` line were added. Invented scenario.
//!
//! `cargo test --example held_out_fisher` audits it: the shadow lens's error at step 2000 must match the true
//! rounding error of the f64 run, computed outside the project by `oracles/fisher_oracle.py` (mpmath 1.3.0 at
//! 300 bits, with the decimals as written, as the lens takes them).

#[twinstep::audit]
pub fn main() {
    let n = 100;
    let dx = 1.0 / (n as f64 - 1.0);
    let (d, rho, dt) = (1e-3, 2.0, 0.01);
    let mut u: Vec<f64> = (0..n).map(|i| if (i as f64) * dx < 0.1 { 1.0 } else { 0.0 }).collect();
    let mut un = u.clone();
    for step in 1..=2000 {
        for i in 1..n - 1 {
            let lap = (u[i - 1] - 2.0 * u[i] + u[i + 1]) / (dx * dx);
            un[i] = u[i] + dt * (d * lap + rho * u[i] * (1.0 - u[i]));
        }
        un[0] = un[1];
        un[n - 1] = un[n - 2];
        std::mem::swap(&mut u, &mut un);
        twinstep::record!(step, u);
    }
    println!("front at cell {}", u.iter().filter(|&&v| v > 0.5).count());
}

#[cfg(test)]
mod audit {
    use twinstep::audit::{LoopAudit, Tolerance};
    use twinstep::lens::{Bound, Shadow};

    /// max |f64 − exact| at step 2000, printed by `python3 oracles/fisher_oracle.py` (mpmath, 300 bits).
    const ORACLE_AT_2000: f64 = 6.651836178524849e-16;

    #[test]
    fn the_loop_in_main_audits_and_its_estimate_matches_the_oracle() {
        let trace = LoopAudit::new("fisher", Tolerance::absolute(1e-12), 2000)
            .original(super::main)
            .lens::<Bound>(super::main_twin::<Bound>)
            .lens::<Shadow>(super::main_twin::<Shadow>)
            .run()
            .expect("the audit runs");
        println!("{}", twinstep::report::render_text(&trace));
        let last = trace.steps.iter().find(|s| s.lens == "shadow" && s.step == 2000).expect("step 2000 recorded");
        let estimate = last.fields[0].max_err;
        // Against mpmath at 300 bits (oracles/fisher_oracle.py); 1e-6 relative is a loose tolerance of our choosing
        // for a double-double estimate (common practice, no source).
        assert!(((estimate - ORACLE_AT_2000) / ORACLE_AT_2000).abs() < 1e-6, "{estimate:e} against {ORACLE_AT_2000:e}");
    }
}
