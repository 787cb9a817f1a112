//! The precision sweep on the explicit heat scheme (`u_i ← u_i + r (u_{i−1} − 2u_i + u_{i+1})`, zero ends,
//! `u_i^0 = sin(π i/N)`; its exact discrete solution `λⁿ sin(π i/N)` is checked against the lenses in
//! `tests/format_references.rs`): the bisection ends on adjacent precisions, the least one meets the tolerance and
//! the one below does not; where binary64 is not enough the needed bits come from the law of error against p; bad
//! input is a clear error; and the records the sweep appends to its trace read back.

use twinstep::audit::{FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::narrow::{has_binary64_reference, narrow_reference};
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
    // bfloat16 and binary16 ran in binary32 words (binary32's error on this contractive scheme is about 2^-16
    // and 2^-13 of theirs, inside the margin of 2^-10), binary32 and the other formats of at most 24 bits with the
    // binary64 reference (binary64's error about 2^-29 of theirs), wider ones with the double-double.
    for run in &outcome.runs {
        let expected = match run.format.as_str() {
            "bfloat16" | "binary16" => Some("binary32"),
            _ if run.bits <= twinstep::sweep::NARROW_REFERENCE_BITS => Some("binary64"),
            _ => None,
        };
        assert_eq!(narrow_reference(&run.lens), expected, "{} ran with {}", run.format, run.lens);
        assert_eq!(has_binary64_reference(&run.lens), expected == Some("binary64"));
    }
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

/// Muller's recurrence (`examples/muller.rs`): binary64 itself leaves the exact sequence within the run, so a
/// binary64 reference would carry binary64's error into binary32's estimate.
#[allow(dead_code)]
#[path = "../examples/muller.rs"]
mod muller;

#[test]
fn a_binary64_reference_that_drifts_gives_way_to_the_double_double() {
    use dashu_ratio::RBig;
    const STEPS: u64 = 25;
    let path = scratch("muller");
    let formats = [SweepFormat::Binary64, SweepFormat::BINARY32];
    let outcome = Sweep::new(&muller::Recurrence, Tolerance::relative(1e-6), STEPS)
        .kernel("next_term")
        .trace(&path)
        .formats(&formats)
        .without_bisection()
        .run()
        .unwrap();
    let binary32 = outcome.run("binary32").unwrap();
    assert!(!has_binary64_reference(&binary32.lens), "binary32 ran again with the double-double: {}", binary32.lens);
    // The oracle: the exact terms in dashu-ratio rationals, against the same recurrence in hardware f32 (IEEE
    // 754-2019 binary32, the same operations in the same order as `next_term`; its constants and u_0 = 2,
    // u_1 = −4 are exact in binary32). Driver step s leaves u_{s+1}.
    let (mut exact, mut single) = (vec![RBig::from(2u8), -RBig::from(4u8)], vec![2.0f32, -4.0]);
    for k in 1..=STEPS as usize {
        let next =
            RBig::from(111u8) - RBig::from(1130u16) / &exact[k] + RBig::from(3000u16) / (&exact[k] * &exact[k - 1]);
        exact.push(next);
        single.push(111.0 - 1130.0 / single[k] + 3000.0 / (single[k] * single[k - 1]));
    }
    let crossing_term = (0..exact.len())
        .find(|&k| {
            let relative = (RBig::try_from(f64::from(single[k])).unwrap() - &exact[k]) / &exact[k];
            relative.to_f64().value().abs() > 1e-6
        })
        .expect("binary32 leaves the exact sequence");
    assert_eq!(binary32.fields[0].first_crossing.map(|s| s + 1), Some(crossing_term as u64));
    // binary64 leaves it later, inside the run (Handbook of Floating-Point Arithmetic, from memory: it tends to
    // 100), which is why its reference could not stand.
    let binary64 = outcome.run("binary64").unwrap();
    assert!(binary64.fields[0].first_crossing.is_some_and(|s| s + 1 > crossing_term as u64));
}

/// The same for the binary32 words of bfloat16: on Muller's recurrence binary32 leaves the exact sequence within
/// the run as bfloat16 does, so its error is not small against bfloat16's and the run gives way — to the binary64
/// reference, which drifts too (see above), and then to the double-double.
#[test]
fn a_binary32_reference_that_drifts_gives_way_too() {
    const STEPS: u64 = 25;
    let formats = [SweepFormat::Binary64, SweepFormat::BINARY32, SweepFormat::BFLOAT16];
    let outcome = Sweep::new(&muller::Recurrence, Tolerance::relative(1e-6), STEPS)
        .kernel("next_term")
        .trace(scratch("muller-bfloat16"))
        .formats(&formats)
        .without_bisection()
        .run()
        .unwrap();
    let bfloat16 = outcome.run("bfloat16").unwrap();
    assert_eq!(narrow_reference(&bfloat16.lens), None, "bfloat16 ran with {}", bfloat16.lens);
    let report = twinstep::report::render_text(&twinstep::trace::read(&outcome.trace).unwrap());
    // The report's row for bfloat16 names the reference it ran with (the paragraph above the table names every
    // reference, so the row is what tells).
    let row = report.lines().find(|l| l.trim_start().starts_with("bfloat16 ")).expect("a bfloat16 row");
    assert!(row.contains("double-double") && !row.contains("binary32 "), "{row}");
}

/// Where binary32's error is small against the format's, the binary32 words stand; their estimate is off the
/// double-double lens's by about binary32's own error, within the sweep's margin.
#[test]
fn binary32_words_estimate_as_the_double_double_does() {
    let rod = Rod { cells: 16, offset: 1.0 };
    let formats = [SweepFormat::Binary64, SweepFormat::BINARY32, SweepFormat::BINARY16];
    let run = |formats: &[SweepFormat], name: &str| {
        Sweep::new(&rod, Tolerance::absolute(1e-3), 200)
            .trace(scratch(name))
            .formats(formats)
            .without_bisection()
            .run()
            .unwrap()
    };
    let words = run(&formats, "words");
    let alone = run(&[SweepFormat::BINARY16], "alone"); // no binary32 run to measure with: the double-double
    let (h32, hdd) = (words.run("binary16").unwrap(), alone.run("binary16").unwrap());
    assert_eq!(narrow_reference(&h32.lens), Some("binary32"));
    assert_eq!(narrow_reference(&hdd.lens), None);
    for (a, b) in h32.fields[0].history.iter().zip(&hdd.fields[0].history) {
        assert_eq!(a.0, b.0);
        assert!(
            (a.1 - b.1).abs() <= twinstep::sweep::REFERENCE_MARGIN * b.1 + 1e-300,
            "step {}: {} vs {}",
            a.0,
            a.1,
            b.1
        );
    }
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

#[test]
fn an_audit_with_a_sweep_carries_both_in_one_trace() {
    use twinstep::audit::Audit;
    use twinstep::lens::{Bound, Shadow};
    use twinstep::sweep::SweepPlan;
    let rod = Rod { cells: 16, offset: 0.0 };
    let path = scratch("attached");
    let tolerance = Tolerance::absolute(1e-9);
    let trace = Audit::new(&rod, tolerance, 200)
        .kernel("heat_step")
        .trace(&path)
        .lens::<Bound>()
        .lens::<Shadow>()
        .sweep(SweepPlan::standard())
        .run()
        .unwrap();
    // The lens audit is the trace's own: its lenses, its summary; the sweep's records follow it in the same file.
    assert_eq!(trace.header.lenses, vec!["bound".to_owned(), "shadow".to_owned()]);
    assert!(trace.is_complete());
    let read = twinstep::trace::read(&path).unwrap();
    assert_eq!(read, trace, "the returned trace is the file's");
    let summary = read.sweep.as_ref().expect("a sweep record");
    // The same sweep as on its own: the one piece of code runs both (its own traces beside the audit's), so the
    // least precision and every run's figures agree with a sweep of the same scenario, tolerance and steps.
    let alone = Sweep::new(&rod, tolerance, 200).kernel("heat_step").trace(scratch("alone")).run().unwrap();
    assert_eq!(summary.least_bits, alone.summary.least_bits);
    let figures = |runs: &[twinstep::sweep::FormatRun]| -> Vec<_> {
        runs.iter()
            .map(|r| (r.format.clone(), r.meets, r.fields[0].first_crossing, r.fields[0].final_max_err))
            .collect()
    };
    assert_eq!(figures(&read.format_runs), figures(&alone.runs));
    for run in &read.format_runs {
        assert_ne!(run.trace, path, "every run of an attached sweep has a trace of its own");
        assert!(twinstep::trace::read(&run.trace).unwrap().is_complete(), "{}", run.format);
    }
    // The report names the least precision and what binary32 does instead of "not computed".
    let text = twinstep::report::render_text(&read);
    let least = summary.least_bits.unwrap();
    assert!(text.contains(&format!("Least precision: {least} bits; f32 crosses at step")), "{text}");
    assert!(!text.contains(twinstep::report::words::NO_SWEEP), "{text}");
    assert!(text.contains("Precision sweep"), "{text}");

    // Fewer audited steps per format: judged at the audit's horizon (here its 200 steps) by each run's growth law.
    let cheap = Audit::new(&rod, tolerance, 200)
        .trace(scratch("cheap"))
        .lens::<Shadow>()
        .sweep(SweepPlan::standard().audited_steps(50).without_bisection())
        .run()
        .unwrap();
    let sweep = cheap.sweep.unwrap();
    assert_eq!((sweep.steps, sweep.horizon), (50, 200));
    assert_eq!(cheap.format_runs.len(), 4, "no bisection");
}

#[test]
fn an_audit_with_a_bad_sweep_fails_before_any_file() {
    use twinstep::audit::{Audit, Error};
    use twinstep::lens::Shadow;
    use twinstep::sweep::SweepPlan;
    let rod = Rod { cells: 8, offset: 0.0 };
    let tolerance = Tolerance::absolute(1e-6);
    let path = scratch("bad-attached");
    let _ = std::fs::remove_file(&path);
    let fails = |plan: SweepPlan, scenario: &Rod| -> String {
        let result = Audit::new(scenario, tolerance, 10).trace(&path).lens::<Shadow>().sweep(plan).run();
        let Err(error @ Error::Sweep(_)) = result else { panic!("{result:?}") };
        assert_eq!(error.exit_code(), 2, "a mistake in the harness");
        assert!(!path.exists(), "checked before the audit's trace is created");
        error.to_string()
    };
    assert!(fails(SweepPlan::standard().formats(&[]), &rod).contains("no formats"));
    assert!(fails(SweepPlan::standard().audited_steps(0), &rod).contains("zero steps"));
    // binary16's exponent range (largest 65504, IEEE 754-2019 Table 3.5) cannot hold 10^5.
    let hot = Rod { cells: 8, offset: 1e5 };
    let narrow = SweepPlan::standard().exponent_range(-14, 15).unwrap();
    assert!(fails(narrow, &hot).contains("wider exponent range"));
    assert!(matches!(
        SweepPlan::standard().exponent_range(-1100, 15),
        Err(SweepError::Format(FormatError::ExponentRange { emin: -1100, emax: 15 }))
    ));
}
