//! Snapshot tests of the report glitches of issue 12, each on a trace that triggers it, written by real audits
//! (the recorder's own code, no hand-written numbers):
//! - a bound-to-estimate ratio far beyond 10³ (written `1.0e190 times`, not as a 190-digit number);
//! - a bound that overflowed (`overflowed` in the tables and sentences, never `NaN`, never "NaN times larger");
//! - a heat map of that bound, whose colour scale is clipped to the meaningful range, with the clip stated;
//! - a field that overflows under the judging lens (the verdict says the estimate is lost, never "inf against NaN
//!   allowed");
//! - one cell near zero with no correct digit while the rest of the field is fine (no "no correct digit … and the
//!   estimates agree" beside an ENOUGH verdict: digits are judged over the field).
//!
//! The facts of the machine and the wall time are set to fixed values before rendering, so the snapshots do not
//! depend on where the test runs; every number the reports show comes from the audits.

mod common;
use common::scratch;
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::trace::Trace;
use twinstep_cli::report::{render, Format};

/// An explicit heat scheme on 16 cells with `r = 1/2`, ends held: the Bound lens's radius grows by about
/// `1 + 4r = 3` per step (the dependency effect of enclosure arithmetic: the stencil reads `u[i]` twice;
/// docs/lenses.md, "The dependency effect: bound versus shadow"), so it passes 10¹⁷⁰ within 400 steps and overflows before 800
/// (3⁸⁰⁰·10⁻¹⁶ > 1.8·10³⁰⁸, the largest double, IEEE 754-2019 Table 3.5), while the shadow stays at rounding level.
struct Runaway;

#[twinstep::scenario]
impl Scenario for Runaway {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[16])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![(0..16).map(|i| 1.0 + 0.1 * f64::from(i)).collect()]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let (u, out) = (&levels.current[0], &mut levels.next[0]);
        let r = T::from_f64(0.5);
        out[0] = u[0];
        out[15] = u[15];
        for i in 1..15 {
            out[i] = u[i] + r * (u[i - 1] - T::from_f64(2.0) * u[i] + u[i + 1]);
        }
    }
}

/// One cell multiplied by 10³⁰ a step: past the largest double (≈ 1.8·10³⁰⁸, IEEE 754-2019 Table 3.5) at step 11,
/// where the primal and the shadow are both infinite and the error estimate is no longer a number.
struct Blowup;

#[twinstep::scenario]
impl Scenario for Blowup {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("v", &[1])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        levels.next[0][0] = levels.current[0][0] * T::from_f64(1e30) + T::from_f64(0.1);
    }
}

/// Cell 0 holds 1; cell 1 is recomputed each step as `fl(0.1) + fl(0.2) − fl(0.3)`: exact 2⁻⁵⁵ (the three doubles
/// as exact rationals; checked below with dashu), computed `2⁻⁵⁴` (0.30000000000000004 − 0.29999999999999999),
/// so that one cell has a relative error of 1 — no correct bit — while its error, 2⁻⁵⁵ ≈ 2.8e-17, is far inside
/// any tolerance and tiny against the field's largest value.
struct NearZero;

#[twinstep::scenario]
impl Scenario for NearZero {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("w", &[2])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0, 0.0]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let one = levels.current[0][0];
        levels.next[0][0] = one;
        levels.next[0][1] = one * T::from_f64(0.1) + T::from_f64(0.2) - T::from_f64(0.3);
    }
}

/// Runs an audit with Bound and Shadow and returns its trace as read back, with the machine facts fixed.
fn audit<S: Scenario>(scenario: &S, name: &str, tolerance: Tolerance, steps: u64) -> Trace {
    let path = scratch(&format!("glitch_{name}.jsonl"));
    Audit::new(scenario, tolerance, steps)
        .kernel(name)
        .trace(&path)
        .lens::<Bound>()
        .lens::<Shadow>()
        .run()
        .expect("the audit runs");
    let mut trace = twinstep_cli::input::read_trace(&path).expect("the trace reads");
    common::fix_machine(&mut trace);
    trace
}

fn absolute(atol: f64) -> Tolerance {
    Tolerance::absolute(atol)
}

/// Whether `text` has `word` as a whole word (letters on neither side): "inf", not "finite".
fn has_word(text: &str, word: &str) -> bool {
    text.split(|c: char| !c.is_ascii_alphabetic()).any(|w| w == word)
}

/// No format may print a NaN or an infinity as such, or a number of more than 20 digits in a row.
fn reads_right(text: &str) {
    for bad in ["NaN", "inf"] {
        assert!(!has_word(text, bad), "{bad:?} in\n{text}");
    }
    let longest = text.split(|c: char| !c.is_ascii_digit()).map(str::len).max().unwrap_or(0);
    assert!(longest <= 20, "a number of {longest} digits in\n{text}");
}

#[test]
fn a_huge_bound_to_estimate_ratio_is_written_in_exponent_form() {
    let trace = audit(&Runaway, "runaway_400", absolute(1e-9), 400);
    let text = render(&trace, Format::Text, false);
    reads_right(&text);
    // The ratio of the last bound to the last estimate, as the trace holds them (both finite here).
    let last = |lens: &str| trace.steps.iter().rfind(|s| s.lens == lens).expect("a record").fields[0].clone();
    let (bound, estimate) = (last("bound").bound.expect("a bound"), last("shadow").max_err);
    assert!(bound.is_finite() && bound / estimate > 1e100, "the scenario makes a huge ratio: {bound:e} / {estimate:e}");
    assert!(text.contains(&format!("the bound is {:.1e} times larger", bound / estimate)), "{text}");
    insta::assert_snapshot!("runaway_400_text", text);
}

#[test]
fn an_overflowed_bound_reads_overflowed_in_every_format() {
    let trace = audit(&Runaway, "runaway_800", absolute(1e-9), 800);
    let bound = trace.steps.iter().rfind(|s| s.lens == "bound").expect("a record").fields[0].bound;
    assert_eq!(bound, None, "the bound overflowed (written as null)");
    for format in [Format::Text, Format::Md, Format::Html] {
        let page = render(&trace, format, false);
        reads_right(&page);
        assert!(page.contains("the bound overflowed"), "{format:?}:\n{page}");
        assert!(page.contains("overflowed"), "{format:?}");
    }
    let csv = render(&trace, Format::Csv, false);
    assert!(csv.starts_with("# twinstep per-step rounding error rows"), "{csv}");
    assert!(csv.contains("licensed review"), "the caution rides along as a comment line");
    insta::assert_snapshot!("runaway_800_text", render(&trace, Format::Text, false));
    insta::assert_snapshot!("runaway_800_md", render(&trace, Format::Md, false));
}

#[test]
fn the_heat_map_colour_scale_is_clipped_and_says_so() {
    let trace = audit(&Runaway, "runaway_800_map", absolute(1e-9), 800);
    let html = render(&trace, Format::Html, false);
    let captions: Vec<&str> =
        html.split("<figcaption>").skip(1).filter_map(|c| c.split("</figcaption>").next()).collect();
    let bound_map = captions.iter().find(|c| c.contains("bound lens")).expect("a heat map of the bound lens");
    assert!(bound_map.contains("Clipped: the colour scale stops at"), "{bound_map}");
    // The shadow's map needs no clip: its errors stay near rounding level, within 24 decades of each other.
    let shadow_map = captions.iter().find(|c| c.contains("shadow lens")).expect("a heat map of the shadow lens");
    assert!(!shadow_map.contains("Clipped"), "{shadow_map}");
    // The colour bar's top label is the clip (log10 of three decades above the largest estimate or atol), far below
    // the bound's 10³⁰⁰.
    insta::assert_snapshot!("runaway_800_captions", captions.join("\n"));
}

#[test]
fn a_field_that_overflows_has_its_estimate_called_lost() {
    let trace = audit(&Blowup, "blowup", absolute(1e-9), 20);
    let verdict = &trace.summary.as_ref().expect("complete").verdict.text;
    assert!(!has_word(verdict, "inf") && !has_word(verdict, "NaN"), "{verdict}");
    assert!(verdict.contains("its estimate is lost"), "{verdict}");
    let text = render(&trace, Format::Text, false);
    reads_right(&text);
    insta::assert_snapshot!("blowup_text", text);
}

#[test]
fn one_near_zero_cell_does_not_make_the_report_say_no_digit_is_correct() {
    // The exact value of the cell: fl(0.1) + fl(0.2) − fl(0.3) in exact rationals (dashu-ratio), 2⁻⁵⁵.
    let rational = |x: f64| dashu_ratio::RBig::try_from(x).expect("finite");
    let exact = rational(0.1) + rational(0.2) - rational(0.3);
    assert_eq!(exact, dashu_ratio::RBig::try_from(2f64.powi(-55)).unwrap());
    assert_eq!(0.1 + 0.2 - 0.3, 2f64.powi(-54), "the computed value, twice the exact one");

    let trace = audit(&NearZero, "near_zero", absolute(1e-9), 3);
    let cell = trace.steps.iter().rfind(|s| s.lens == "shadow").expect("a record").fields[0].clone();
    assert_eq!(cell.correct_bits, 0.0, "the cell near zero has no correct bit (relative error 1)");
    let summary = trace.summary.as_ref().expect("complete");
    assert_eq!(summary.verdict.status, twinstep::trace::Status::Enough);
    for format in [Format::Text, Format::Md, Format::Html] {
        let page = render(&trace, format, false);
        assert!(!page.contains("no correct digit"), "{format:?}:\n{page}");
    }
    insta::assert_snapshot!("near_zero_text", render(&trace, Format::Text, false));
}
