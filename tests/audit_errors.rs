//! Bad input to an audit is a clear `twinstep::audit::Error`, never a panic, and a run that stops early leaves a
//! trace without summary, which reads as incomplete.

mod audit_support;

use audit_support::kernels::Fold;
use audit_support::scratch;
use twinstep::audit::{Audit, Error, FieldSpec, Levels, Plan, Recorder, Scenario, Tolerance};
use twinstep::lens::Shadow;
use twinstep::Real;

/// A scenario whose fields or initial data are wrong in a chosen way, or whose step panics at a chosen step.
struct Faulty {
    fields: Vec<FieldSpec>,
    initial: Vec<f64>,
    panic_at: Option<u64>,
}

#[twinstep::scenario]
impl Scenario for Faulty {
    fn fields(&self) -> Vec<FieldSpec> {
        self.fields.clone()
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![self.initial.clone()]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        if Some(levels.step) == self.panic_at {
            panic!("deliberate failure in the user's step");
        }
        let (current, next) = (&levels.current[0], &mut levels.next[0]);
        next.copy_from_slice(current);
    }
}

fn faulty(shape: &[usize], initial: Vec<f64>) -> Faulty {
    Faulty { fields: vec![FieldSpec::new("u", shape)], initial, panic_at: None }
}

fn tol() -> Tolerance {
    Tolerance::absolute(1e-9)
}

#[test]
fn bad_tolerances_are_rejected() {
    // The constructors give plain values; the audit checks them when it starts, before any file exists.
    let path = scratch("audit_errors_tol").join("t.jsonl");
    let run = |tolerance: Tolerance| Audit::new(&Fold, tolerance, 5).trace(&path).lens::<Shadow>().run();
    for bad in [0.0, -1e-9, f64::NAN, f64::INFINITY] {
        assert!(matches!(run(Tolerance::absolute(bad)), Err(Error::BadTolerance { parameter: "atol", .. })));
        assert!(matches!(run(Tolerance::mixed(1e-12, bad)), Err(Error::BadTolerance { parameter: "rtol", .. })));
        assert!(matches!(run(Tolerance::ulps(bad)), Err(Error::BadTolerance { parameter: "ulps", .. })));
        assert!(!path.exists());
    }
    // So is a tolerance built by struct literal.
    let result = Audit::new(&Fold, Tolerance::Relative { rtol: f64::NAN }, 5).trace(&path).lens::<Shadow>().run();
    assert!(matches!(result, Err(Error::BadTolerance { .. })));
    assert!(!path.exists());
}

#[test]
fn shapes_lengths_steps_and_lenses_are_checked() {
    let dir = scratch("audit_errors_shapes");
    let run = |s: &Faulty, steps: u64, name: &str| {
        Audit::new(s, tol(), steps).trace(dir.join(name)).lens::<Shadow>().run().map(|_| ())
    };
    let wrong_length = faulty(&[4, 3], vec![0.0; 11]);
    assert!(matches!(run(&wrong_length, 3, "len.jsonl"), Err(Error::LengthMismatch { expected: 12, got: 11, .. })));
    // Initial values for one field of two: the default `init` says so (the step only reads field 0).
    let one_of_two =
        Faulty { fields: vec![FieldSpec::new("u", &[1]), FieldSpec::new("w", &[1])], ..faulty(&[1], vec![1.0]) };
    assert!(matches!(run(&one_of_two, 3, "count.jsonl"), Err(Error::InitialValues { fields: 2, given: 1 })));
    assert!(matches!(run(&faulty(&[4, 0], vec![]), 3, "zero.jsonl"), Err(Error::BadShape { .. })));
    assert!(matches!(run(&faulty(&[], vec![]), 3, "rank0.jsonl"), Err(Error::BadShape { .. })));
    assert!(matches!(run(&faulty(&[usize::MAX, 4], vec![]), 3, "huge.jsonl"), Err(Error::BadShape { .. })));
    let twice =
        Faulty { fields: vec![FieldSpec::new("u", &[2]), FieldSpec::new("u", &[2])], ..faulty(&[2], vec![0.0; 2]) };
    assert!(matches!(run(&twice, 3, "dup.jsonl"), Err(Error::DuplicateField { .. })));
    let none = Faulty { fields: vec![], ..faulty(&[2], vec![0.0; 2]) };
    assert!(matches!(run(&none, 3, "none.jsonl"), Err(Error::NoFields)));
    let good = faulty(&[2], vec![1.0, 2.0]);
    assert!(matches!(run(&good, 0, "steps.jsonl"), Err(Error::ZeroSteps)));
    assert!(matches!(Audit::new(&good, tol(), 3).trace(dir.join("l.jsonl")).run(), Err(Error::NoLenses)));
    let doubled = Audit::new(&good, tol(), 3).trace(dir.join("d.jsonl")).lens::<Shadow>().lens::<Shadow>().run();
    assert!(matches!(doubled, Err(Error::DuplicateLens { .. })));
    let short = Audit::new(&good, tol(), 10).horizon(5).trace(dir.join("h.jsonl")).lens::<Shadow>().run();
    assert!(matches!(short, Err(Error::HorizonTooShort { steps: 10, horizon: 5 })));
    // The length error arises in the run: its trace exists but has no summary, so it reads as incomplete.
    let partial = twinstep::trace::read(dir.join("len.jsonl")).unwrap();
    assert!(!partial.is_complete());
}

#[test]
fn an_unwritable_trace_path_is_an_error() {
    let dir = scratch("audit_errors_path");
    // A path below a regular file cannot be created (POSIX: ENOTDIR).
    let file = dir.join("a-file");
    std::fs::write(&file, "not a directory").unwrap();
    let result = Audit::new(&Fold, tol(), 5).trace(file.join("trace.jsonl")).lens::<Shadow>().run();
    let error = result.unwrap_err();
    assert!(matches!(error, Error::TraceCreate { .. }));
    assert!(error.to_string().contains("cannot create trace"));
    assert!(std::error::Error::source(&error).is_some());
    // A directory is not a file either.
    assert!(matches!(Audit::new(&Fold, tol(), 5).trace(&dir).lens::<Shadow>().run(), Err(Error::TraceCreate { .. })));
}

#[test]
fn a_panicking_step_stops_the_audit_and_leaves_an_incomplete_trace() {
    let path = scratch("audit_errors_panic").join("p.jsonl");
    let scenario = Faulty { panic_at: Some(300), ..faulty(&[3], vec![1.0, 2.0, 3.0]) };
    let error = Audit::new(&scenario, tol(), 1000).trace(&path).every_step().lens::<Shadow>().run().unwrap_err();
    match &error {
        Error::ScenarioPanicked { lens, step, message } => {
            assert_eq!((lens.as_str(), *step), ("shadow", 300));
            assert!(message.contains("deliberate failure"));
        }
        other => panic!("unexpected {other:?}"),
    }
    let partial = twinstep::trace::read(&path).unwrap();
    assert!(!partial.is_complete() && partial.summary.is_none());
    // The steps before the failure's chunk are on disk, in order; nothing past the failure.
    assert!(partial.steps.iter().all(|s| s.step <= 300));
    assert!(partial.steps.windows(2).all(|w| w[0].step < w[1].step));
    let text = twinstep::report::render_text(&partial);
    assert!(text.contains("INCOMPLETE"), "{text}");
}

#[test]
fn recorder_checks_its_input() {
    let dir = scratch("audit_errors_recorder");
    let plan = Plan::new("k", vec![FieldSpec::new("u", &[2])], tol(), 3, dir.join("r.jsonl"));
    let mut recorder = Recorder::create::<Shadow>(&plan).unwrap();
    let cells = [Shadow::from_f64(1.0), Shadow::from_f64(2.0)];
    recorder.record_step(1, &[&cells]).unwrap();
    assert!(matches!(recorder.record_step(1, &[&cells]), Err(Error::StepOrder { previous: 1, got: 1 })));
    assert!(matches!(recorder.record_step(2, &[&cells[..1]]), Err(Error::LengthMismatch { .. })));
    assert!(matches!(recorder.record_step(2, &[&cells, &cells]), Err(Error::FieldCountMismatch { .. })));
    let bounds = [twinstep::lens::Bound::from_f64(1.0); 2];
    assert!(matches!(recorder.record_step(2, &[&bounds]), Err(Error::UnknownLens { .. })));
    drop(recorder);
    // Dropped without finish: no summary.
    assert!(!twinstep::trace::read(dir.join("r.jsonl")).unwrap().is_complete());
}

#[test]
fn a_colouring_for_other_levels_is_a_certificate_error() {
    // Fold has one field on two levels (two blocks): a colouring with one block offset does not fit them.
    let path = scratch("audit_errors").join("colouring.jsonl");
    let colouring = twinstep::certificate::Colouring { modulus: 8, offsets: vec![0] };
    let options = twinstep::certificate::CertificateOptions { colouring: Some(colouring), ..Default::default() };
    let error = Audit::new(&Fold, Tolerance::absolute(1e-3), 5).trace(&path).certified_with(options).run().unwrap_err();
    assert!(
        matches!(&error, Error::Certificate { lens, reason: twinstep::certificate::SetupError::ColouringMismatch }
            if lens == "certified"),
        "{error:?}"
    );
    assert!(error.to_string().contains("the certificate of lens certified cannot start"), "{error}");
    assert!(!twinstep::trace::read(&path).expect("the header was written").is_complete());
}
