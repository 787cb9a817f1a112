//! The certified lens through the audit driver, the trace and every report format: a run whose certificate holds
//! (the kiln wall, whose verdict then rests on the guarantee) and a run whose certificate ends at an undecided
//! comparison (the minmod limiter on a plateau of computed data), each as text and Markdown snapshots; the trace's
//! certificate records read back as written, and older traces without them still read.
//!
//! The machine facts and the wall time are fixed before rendering (`common::fix_machine`); every number the
//! reports show comes from the audits. That the guaranteed intervals contain the true error is checked against
//! exact rationals on the demo in `demo.rs`.

mod common;
use common::{fix_machine, fixture, scratch};
use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::certificate::{CertificateOptions, Route};
use twinstep::lens::Shadow;
use twinstep::trace::{EndCause, EventName, Trace};
use twinstep_cli::demo::kiln::Wall;
use twinstep_cli::report::{render, Format};
use twinstep_fixtures::advection_minmod::minmod_step_twin;
use twinstep_fixtures::plateau::plateau_twin;
use twinstep_fixtures::wave_leapfrog::wave_leapfrog_step_twin;

/// MUSCL advection with the minmod limiter (`fixtures/src/advection_minmod.rs`) over the plateau: the primal's
/// one-sided differences are exactly 0 there, but the computed initial data carry a radius, so the ball of `a·b`
/// holds both signs and the limiter's `a * b <= 0.0` cannot be decided at the first step.
struct Plateau;

#[twinstep::scenario]
impl Scenario for Plateau {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("q", &[24])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        levels.current[0].fill(|ix| plateau_twin::<T>(ix[0]));
        Ok(())
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        minmod_step_twin(&levels.current[0], &mut levels.next[0], T::from_f64(0.4));
    }
}

/// A string of 32 points fixed at both ends, leapfrog at Courant number 0.9 (`fixtures/src/wave_leapfrog.rs`), from
/// `sin(π i/31)` given as doubles on both starting levels.
struct String32;

#[twinstep::scenario]
impl Scenario for String32 {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("y", &[32])]
    }

    fn scheme(&self) -> twinstep::audit::Scheme {
        twinstep::audit::Scheme::ThreeLevel
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        let y: Vec<f64> =
            (0..32).map(|i| if i % 31 == 0 { 0.0 } else { (std::f64::consts::PI * i as f64 / 31.0).sin() }).collect();
        levels.current[0].set_f64(&y)?;
        levels.previous[0].set_f64(&y)
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        wave_leapfrog_step_twin(&levels.previous[0], &levels.current[0], &mut levels.next[0], T::from_f64(0.9));
    }
}

/// Audits with the shadow and the certified lens; the trace as written, and as read back with fixed machine facts.
fn audit<S: Scenario>(scenario: &S, name: &str, tolerance: Tolerance, steps: u64) -> (Trace, Trace) {
    audit_with(scenario, name, tolerance, steps, CertificateOptions::default())
}

/// [`audit`] with these certificate options.
fn audit_with<S: Scenario>(
    scenario: &S,
    name: &str,
    tolerance: Tolerance,
    steps: u64,
    options: CertificateOptions,
) -> (Trace, Trace) {
    let path = scratch(&format!("certified_{name}.jsonl"));
    let written = Audit::new(scenario, tolerance, steps)
        .kernel(name)
        .trace(&path)
        .lens::<Shadow>()
        .certified_with(options)
        .run()
        .expect("the audit runs");
    let read = twinstep_cli::input::read_trace(&path).expect("the trace reads");
    assert_eq!(read, written, "the certificate's records read back as written");
    let mut fixed = read;
    fix_machine(&mut fixed);
    (written, fixed)
}

#[test]
fn a_certificate_that_holds_makes_a_guaranteed_verdict_in_every_format() {
    // The kiln wall with a budget of 5e-11 K: T's rounding error (about 2.5e-14 K per step, linear; demo.rs checks
    // it against exact rationals) crosses it within 3000 steps.
    let (_, trace) = audit(&Wall::default(), "kiln_certified", Tolerance::absolute(5e-11), 3000);
    let summary = trace.summary.as_ref().expect("complete");
    assert!(trace.certificate_ends.is_empty(), "{:?}", trace.certificate_ends);
    assert!(summary.verdict.text.contains("Guaranteed: the certificate of lens certified holds"), "{summary:?}");
    let certificate = summary.certificates.iter().find(|c| c.lens == "certified").expect("the certificate's totals");
    assert_eq!((certificate.ended_at, certificate.route), (None, twinstep::trace::CertificateRoute::Forward));
    // Σ_j |c_ij| = |1 − 2r| + 2r = 1 for r = 1/4, and 1 on the faces (closed form): no growth per step.
    assert!((certificate.growth - 1.0).abs() < 1e-9, "growth {}", certificate.growth);
    // The certified lens never raises `bound_lost` while its certificate holds.
    assert!(!trace.events.iter().any(|e| e.lens == "certified" && e.kind == EventName::BoundLost));
    // Every recorded step of the lens carries the certificate, and its `bound` is the interval's upper end.
    for record in trace.steps.iter().filter(|s| s.lens == "certified") {
        let c = record.certificate.as_ref().expect("a certificate at every recorded step");
        assert!(c.holds);
        for (f, g) in record.fields.iter().zip(&c.fields) {
            assert_eq!(f.bound, g.upper, "step {}", record.step);
            assert!(g.lower <= f.max_err && Some(f.max_err) <= g.upper, "the estimate lies in the interval");
        }
    }
    let text = render(&trace, Format::Text, false);
    assert!(text.contains("Verdict: ENOUGH UNTIL STEP") && text.contains("(GUARANTEED)"), "{text}");
    assert!(text.contains("Certified guarantee, lens certified"), "{text}");
    let md = render(&trace, Format::Md, false);
    let html = render(&trace, Format::Html, false);
    assert!(html.contains("Certified guarantee, lens certified"), "the HTML shows the section");
    let json: serde_json::Value = serde_json::from_str(&render(&trace, Format::Json, false)).expect("JSON");
    let section = json["sections"].as_array().expect("sections").iter().find(|s| s["kind"] == "certificate");
    assert_eq!(section.expect("the certificate section")["data"]["holds"], true);
    let csv = render(&trace, Format::Csv, false);
    assert!(csv.contains("# Certified guarantee, lens certified\n"), "{csv}");
    assert!(csv.contains("# field: T; at: tolerance crossing;"), "{csv}");
    insta::assert_snapshot!("kiln_certified_text", text);
    insta::assert_snapshot!("kiln_certified_md", md);
}

#[test]
fn a_certificate_that_ends_at_an_undecided_comparison_claims_nothing_after() {
    let (_, trace) = audit(&Plateau, "plateau_minmod", Tolerance::absolute(1e-12), 10);
    let end = trace.certificate_ends.iter().find(|e| e.cause == EndCause::Undecided).expect("an undecided end");
    assert_eq!(end.step, 1, "the limiter's comparison is undecided at the first step");
    let source = include_str!("../../fixtures/src/advection_minmod.rs");
    let line = source.lines().position(|l| l.contains("if a * b <= 0.0")).expect("the limiter's test") as u32 + 1;
    assert!(
        end.sites.iter().any(|s| s.kind == EventName::UndecidedComparison
            && s.site.file.ends_with("advection_minmod.rs")
            && s.site.line == line),
        "{end:?}, expected advection_minmod.rs:{line}"
    );
    // From step 1 on, the certified lens's records hold no bound and say the certificate does not hold.
    for record in trace.steps.iter().filter(|s| s.lens == "certified" && s.step >= 1) {
        assert!(!record.certificate.as_ref().expect("a certificate").holds, "step {}", record.step);
        assert!(record.fields.iter().all(|f| f.bound.is_none()), "no bound claimed at step {}", record.step);
    }
    let summary = trace.summary.as_ref().expect("complete");
    assert!(!summary.verdict.text.contains("Guaranteed:"), "{}", summary.verdict.text);
    assert!(
        summary.verdict.text.contains("The guarantee of lens certified stops at step 1"),
        "{}",
        summary.verdict.text
    );
    let text = render(&trace, Format::Text, false);
    assert!(!text.contains("(GUARANTEED)"), "{text}");
    assert!(text.contains(&format!("advection_minmod.rs:{line}")), "{text}");
    insta::assert_snapshot!("plateau_minmod_text", text);
    insta::assert_snapshot!("plateau_minmod_md", render(&trace, Format::Md, false));
}

#[test]
fn traces_without_certificates_read_and_a_bad_certificate_record_is_refused() {
    // An older trace of the fixtures (version 1) has none of the version-3 records: it reads, with no certificate.
    let old = twinstep_cli::input::read_trace(&fixture("kiln_complete.jsonl")).expect("an older trace reads");
    assert!(old.header.version < 3, "an older version");
    assert!(old.certificate_ends.is_empty() && old.steps.iter().all(|s| s.certificate.is_none()));
    assert!(old.summary.as_ref().is_some_and(|s| s.certificates.is_empty()));
    // A certificate end naming a lens the header does not declare is refused, naming the record.
    let (_, trace) = audit(&Plateau, "plateau_reader", Tolerance::absolute(1e-12), 3);
    let path = scratch("certified_plateau_reader.jsonl");
    let text = std::fs::read_to_string(&path).expect("the trace");
    assert!(text.contains("\"record\":\"certificate_end\""), "{text}");
    assert_eq!(trace.header.version, 3);
    let bad = text.replace(
        "\"record\":\"certificate_end\",\"step\":1,\"lens\":\"certified\"",
        "\"record\":\"certificate_end\",\"step\":1,\"lens\":\"oracle\"",
    );
    assert_ne!(bad, text);
    let error = twinstep::trace::parse(&bad).expect_err("an unknown lens");
    assert!(error.to_string().contains("certificate end at step 1: unknown lens \"oracle\""), "{error}");
}

#[test]
fn a_radius_that_outgrows_the_error_is_reported_with_its_growth_and_the_backward_route_keeps_it() {
    // Forced onto the forward route, the leapfrog's radius grows like ρ(|J|) per step. Closed form for the interior
    // rows: |2 − 2c²| + 2c² = 2 on the current level and 1 on the previous one, so the absolute companion matrix has
    // ρ = 1 + √2 ≈ 2.414 (ρ = 2 + 1/ρ); the fixed ends make the 32-point string's a little smaller.
    let forward = CertificateOptions { route: Route::Forward, ..CertificateOptions::default() };
    let (_, trace) = audit_with(&String32, "string_forward", Tolerance::absolute(1e-9), 300, forward);
    let end = trace.certificate_ends.iter().find(|e| e.cause == EndCause::Useless).expect("the interval grows useless");
    assert_eq!(end.field.as_deref(), Some("y"));
    assert!(end.step > 1 && end.growth > 2.0 && end.growth < 1.0 + 2f64.sqrt() + 1e-9, "{end:?}");
    assert!(end.max_radius > end.estimate.map(|e| e / 2.0), "{end:?}");
    let text = render(&trace, Format::Text, false);
    assert!(text.contains(&format!("From step {} the guarantee stops for field y", end.step)), "{text}");
    assert!(text.contains("calls for the backward route"), "{text}");
    assert!(!text.contains("(GUARANTEED)"), "{text}");
    // On the backward route the bound follows the signed Jacobians: the certificate holds all 300 steps and the
    // verdict rests on it.
    let backward = CertificateOptions { route: Route::Backward, ..CertificateOptions::default() };
    let (_, trace) = audit_with(&String32, "string_backward", Tolerance::absolute(1e-9), 300, backward);
    assert!(trace.certificate_ends.is_empty(), "{:?}", trace.certificate_ends);
    let summary = trace.summary.as_ref().expect("complete");
    let certificate = &summary.certificates[0];
    assert_eq!(certificate.route, twinstep::trace::CertificateRoute::Backward);
    assert!(certificate.backward.is_some_and(|b| b.sweeps > 0 && b.bytes > 0), "{certificate:?}");
    assert!(render(&trace, Format::Text, false).contains("(GUARANTEED)"));
}
