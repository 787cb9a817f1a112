//! The precision sweep on the explicit heat scheme (`u_i ← u_i + r (u_{i−1} − 2u_i + u_{i+1})`, zero ends,
//! `u_i^0 = sin(π i/N)`; its exact discrete solution `λⁿ sin(π i/N)` is checked against the lenses in
//! `tests/format_references.rs`): the bisection ends on adjacent precisions, the least one meets the tolerance and
//! the one below does not; where binary64 is not enough the needed bits come from the law of error against p; bad
//! input is a clear error; and the records the sweep appends to its trace read back.

use twinstep::audit::{FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::FormatError;
use twinstep::sweep::{Remedy, RunRole, Sweep, SweepError, SweepFormat};

#[twinstep::audit]
fn heat_step(u: &[f64], out: &mut [f64], r: f64) {
    let n = u.len();
    out[0] = u[0];
    out[n - 1] = u[n - 1];
    for i in 1..n - 1 {
        out[i] = u[i] + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]);
    }
}

/// A rod of `cells + 1` points at temperature `offset + sin(π x)`.
struct Rod {
    cells: usize,
    offset: f64,
}

#[twinstep::scenario]
impl Scenario for Rod {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[self.cells + 1])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        let n = self.cells as f64;
        vec![(0..=self.cells).map(|i| self.offset + (std::f64::consts::PI * i as f64 / n).sin()).collect()]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        heat_step_twin::<T>(&levels.current[0], &mut levels.next[0], T::from_f64(0.25));
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        heat_step(&levels.current[0], &mut levels.next[0], 0.25);
    }
}

fn scratch(name: &str) -> std::path::PathBuf {
    let dir = std::env::temp_dir().join(format!("twinstep-sweep-test-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("a scratch directory");
    dir.join(format!("{name}.jsonl"))
}

#[test]
fn bisection_finds_the_least_precision_that_meets_the_tolerance() {
    let rod = Rod { cells: 16, offset: 0.0 };
    let path = scratch("least");
    let outcome = Sweep::new(&rod, Tolerance::absolute(1e-9), 200).kernel("heat_step").trace(&path).run().unwrap();
    let least = outcome.summary.least_bits.expect("binary64 meets 1e-9 on values of order 1");
    // Errors of order 2^-p·(a few) on values ≤ 1 (unit roundoff, Higham §2.2, from memory): binary32 (2^-24 ≈
    // 6e-8) cannot meet 1e-9, binary64 can, so the least precision lies strictly between them.
    assert!(least > 24 && least < 53, "least {least}");
    let run_at = |bits: u32| outcome.runs.iter().find(|r| r.bits == bits).expect("a run at those bits");
    assert!(run_at(least).meets);
    assert!(!run_at(least - 1).meets, "the bisection stops on adjacent precisions");
    assert!(outcome.runs.iter().any(|r| r.role == RunRole::Bisection));
    // The standard formats all ran, and the ones that fail name their first crossing.
    for name in ["binary64", "binary32", "bfloat16", "binary16"] {
        assert!(outcome.run(name).is_some(), "{name}");
    }
    let bf16 = &outcome.run("bfloat16").unwrap().fields[0];
    assert!(bf16.first_crossing.is_some() && bf16.horizon_err > bf16.allowed_err);
    assert!(outcome.summary.needed.is_empty());

    // The main trace reads back with every run and the outcome after its summary.
    let trace = twinstep::trace::read(&outcome.trace).unwrap();
    assert_eq!(trace.format_runs, outcome.runs);
    assert_eq!(trace.sweep.as_ref(), Some(&outcome.summary));
    assert!(trace.is_complete());
    // Each run's own trace is a complete audit of its one lens; an emulated primal is not reported as a mismatch
    // with the f64 original (it differs by design).
    for run in &outcome.runs {
        let own = twinstep::trace::read(&run.trace).unwrap();
        assert_eq!(own.header.lenses, vec![run.lens.clone()]);
        assert!(!own.events.iter().any(|e| e.kind == twinstep::trace::EventName::PrimalMismatch), "{}", run.format);
    }
    eprintln!(
        "least precision {least} bits; runs {:?}",
        outcome.runs.iter().map(|r| (r.bits, r.meets)).collect::<Vec<_>>()
    );

    // The reader: sweep records belong after the summary, the outcome last.
    let text = std::fs::read_to_string(&outcome.trace).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    let summary = lines.iter().position(|l| l.contains(r#""record":"summary""#)).unwrap();
    let mut early = lines.clone();
    let run_line = early.remove(summary + 1);
    early.insert(summary, run_line);
    let error = twinstep::trace::parse(&(early.join("\n") + "\n")).unwrap_err();
    assert!(error.to_string().contains("sweep record"), "{error}");
    let late = format!("{text}{}\n", lines[summary + 1]);
    assert!(twinstep::trace::parse(&late).is_err(), "a run after the outcome");
    // A sweep killed while appending leaves its runs so far and no outcome: still a readable trace.
    let cut = lines[..lines.len() - 1].join("\n") + "\n";
    let partial = twinstep::trace::parse(&cut).unwrap();
    assert!(partial.sweep.is_none() && partial.format_runs.len() == outcome.runs.len());
}

#[test]
fn where_binary64_is_not_enough_the_needed_bits_are_extrapolated() {
    // 1e-18 absolute on values near 2: binary64's own rounding (2^-52 ≈ 2.2e-16 relative) is far too coarse.
    let rod = Rod { cells: 16, offset: 1.0 };
    let outcome = Sweep::new(&rod, Tolerance::absolute(1e-18), 100).trace(scratch("needed")).run().unwrap();
    assert_eq!(outcome.summary.least_bits, None);
    let needed = &outcome.summary.needed;
    assert_eq!(needed.len(), 1);
    let law = needed[0].law.expect("four formats give a law");
    // The error falls by about a factor 2 per bit (it is proportional to the unit roundoff 2^-p; Higham §2.2,
    // from memory): the fitted slope of log2 err against p is near −1.
    assert!(law.b < -0.7 && law.b > -1.3, "slope {}", law.b);
    let bits = needed[0].bits.expect("a law that falls reaches the tolerance");
    // binary64 misses by about log2(1e-16/1e-18) ≈ 7 bits: the need is a few bits above 53, within double-double.
    assert!(bits > 53.0 && bits < 75.0, "bits {bits}");
    assert_eq!(needed[0].remedy, Remedy::DoubleDouble);
}

#[test]
fn bad_input_is_a_clear_error() {
    let rod = Rod { cells: 8, offset: 0.0 };
    let tolerance = Tolerance::absolute(1e-6);
    let none = Sweep::new(&rod, tolerance, 10).formats(&[]).trace(scratch("none")).run();
    assert!(matches!(none, Err(SweepError::NoFormats)));
    assert!(none.unwrap_err().to_string().contains("no formats"));
    assert_eq!(SweepFormat::bits(1), Err(FormatError::Precision { bits: 1 }));
    assert_eq!(SweepFormat::bits(54), Err(FormatError::Precision { bits: 54 }));
    assert_eq!(SweepFormat::bits(53), Ok(SweepFormat::Binary64));
    let range = Sweep::new(&rod, tolerance, 10).exponent_range(-1100, 15);
    assert!(matches!(range, Err(SweepError::Format(FormatError::ExponentRange { emin: -1100, emax: 15 }))));
    // binary16's exponent range (largest 65504, IEEE 754-2019 Table 3.5) cannot hold 10^5.
    let hot = Rod { cells: 8, offset: 1e5 };
    let small = Sweep::new(&hot, tolerance, 10).exponent_range(-14, 15).unwrap().trace(scratch("small")).run();
    let Err(e @ SweepError::DataOutOfRange { .. }) = small else { panic!("{small:?}") };
    assert!(e.to_string().contains("field \"u\"") && e.to_string().contains("wider exponent range"), "{e}");
}
