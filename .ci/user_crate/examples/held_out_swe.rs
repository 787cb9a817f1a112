//! Held-out check: the Rusanov shallow-water step of `src/held_out_swe.rs` (rayon inside), a dam break of 100
//! cells over 300 steps. The shadow lens's error at the last step must match the true rounding error of the f64
//! run, computed outside the project by `oracles/swe_oracle.py` (mpmath 1.3.0 at 300 bits, from the same doubles),
//! and the undecided `f64::max` inside the rayon `reduce` must be reported at the kernel's own line.

use scratch_solver::held_out_swe::rusanov_step_twin;
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::trace::EventName;

struct Dam {
    n: usize,
}

#[twinstep::scenario]
impl Scenario for Dam {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("h", &[self.n]), FieldSpec::new("hu", &[self.n])]
    }
    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![(0..self.n).map(|i| if i < self.n / 2 { 2.0 } else { 1.0 }).collect(), vec![0.0; self.n]]
    }
    fn step<T>(&self, l: &mut Levels<T>) {
        let (h, hu) = (&l.current[0], &l.current[1]);
        let (hn, hun) = l.next.split_at_mut(1);
        rusanov_step_twin(h, hu, &mut hn[0], &mut hun[0], T::from_f64(0.001), T::from_f64(0.01));
    }
}

/// max |f64 − exact| at step 300 per field, printed by `python3 oracles/swe_oracle.py 300` (mpmath, 300 bits).
const ORACLE: [(&str, f64); 2] = [("h", 3.686830531749183e-16), ("hu", 1.4255518802870005e-15)];

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let trace = Audit::new(&Dam { n: 100 }, Tolerance::mixed(1e-12, 1e-9), 300)
        .kernel("rusanov_step")
        .lens::<Bound>()
        .lens::<Shadow>()
        .run()?;
    println!("{}", twinstep::report::render_text(&trace));
    let last =
        trace.steps.iter().find(|s| s.lens == "shadow" && s.step == 300).ok_or("no shadow record at step 300")?;
    for (field, exact) in ORACLE {
        let estimate = last.fields.iter().find(|f| f.name == field).ok_or("field missing")?.max_err;
        // The shadow is a double-double computation: it should carry the true error to many digits; 1e-6 is loose
        // (a tolerance of our choosing, common practice, no source: the oracle is mpmath at 300 bits).
        if ((estimate - exact) / exact).abs() > 1e-6 {
            return Err(format!("field {field}: shadow estimate {estimate:e}, mpmath oracle {exact:e}").into());
        }
    }
    let summary = trace.summary.as_ref().ok_or("the audit did not complete")?;
    let at_max = summary.event_totals.iter().any(|t| {
        t.kind == EventName::UndecidedComparison
            && t.site.as_ref().is_some_and(|s| s.file.ends_with("src/held_out_swe.rs") && s.line == 12)
    });
    if !at_max {
        return Err("the undecided f64::max in the rayon reduce is not reported at src/held_out_swe.rs:12".into());
    }
    Ok(())
}
