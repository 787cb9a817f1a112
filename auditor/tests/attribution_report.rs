//! The report's attribution section, on a real audit that attributes its error (`Audit::attribute`): a rod
//! kernel with a planted cancellation line, `(u + offset) − offset`, which rounds `u` to the spacing of the doubles
//! near the offset every step. Every format names that line first, with its source text; the text and Markdown
//! reports are pinned by snapshots; a trace whose kernel file cannot be found says so instead of the text.
//!
//! The numbers the section shows are the attribution record's, which `tests/attribution_planted.rs` checks on the
//! same construction against an exact-rational oracle (dashu-ratio): the planted line's ablated share to two
//! digits. Here the share is checked against that oracle's closed-form fact, that the planted line is the only
//! one whose rounding is of the offset's spacing, by ablation inside the audit.

mod common;
use common::scratch;
use twinstep::attribution::AttributeOptions;
use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::Shadow;
use twinstep::trace::{Build, Machine, Record, Remedy, Trace};
use twinstep_cli::report::{render, Format};

/// Explicit diffusion with the kept value computed through an offset: the planted line rounds `u ≈ 1…1.5` to
/// the spacing of the doubles near 1024 (2⁻⁴², IEEE 754-2019 §3.3: binary64 near 2¹⁰ has ulp 2^(10−52)) and
/// cancels the offset exactly (Sterbenz), so it carries nearly all the error.
#[twinstep::audit]
pub fn planted_step(u: &[f64], out: &mut [f64], r: f64, offset: f64) {
    let n = u.len();
    out[0] = u[0];
    out[n - 1] = u[n - 1];
    for i in 1..n - 1 {
        let kept = (u[i] + offset) - offset;
        out[i] = kept + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]);
    }
}

/// The planted line as written above, found in this file.
const PLANTED: &str = "let kept = (u[i] + offset) - offset;";

fn planted_line() -> u32 {
    let source = include_str!("attribution_report.rs");
    source.lines().position(|l| l.trim() == PLANTED).expect("the planted line") as u32 + 1
}

struct Rod;

#[twinstep::scenario]
impl Scenario for Rod {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[16])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![(0..16).map(|i| 1.0 + 0.5 * (std::f64::consts::PI * f64::from(i) / 15.0).sin()).collect()]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let (r, offset) = (T::from_f64(0.25), T::from_f64(1024.0));
        planted_step_twin::<T>(&levels.current[0], &mut levels.next[0], r, offset);
    }
}

const STEPS: u64 = 200;

/// An audit of the rod that attributes its error, read back, with the machine facts and wall time fixed so that
/// the snapshots do not depend on where the test runs.
fn audit(name: &str) -> Trace {
    let path = scratch(&format!("attribution_report_{name}.jsonl"));
    Audit::new(&Rod, Tolerance::absolute(1e-12), STEPS)
        .kernel("planted_step")
        .trace(&path)
        .lens::<Shadow>()
        .attribute_with(AttributeOptions::new().ablate_lines(2))
        .run()
        .expect("the audit runs");
    let mut trace = twinstep_cli::input::read_trace(&path).expect("the trace reads");
    trace.header.machine = Machine { os: "linux".into(), arch: "x86_64".into(), cpus: 2 };
    trace.header.build = Build { twinstep: "0.1.0".into(), profile: "test".into(), target_features: Vec::new() };
    trace.header.started_unix_s = 0;
    if let Some(summary) = trace.summary.as_mut() {
        summary.wall_s = 0.0;
    }
    trace
}

#[test]
fn the_audit_writes_its_attribution_into_its_own_trace() {
    let path = scratch("attribution_report_order.jsonl");
    Audit::new(&Rod, Tolerance::absolute(1e-12), STEPS)
        .trace(&path)
        .lens::<Shadow>()
        .attribute_with(AttributeOptions::new().steps(50).ablate_lines(1))
        .run()
        .expect("the audit runs");
    let text = std::fs::read_to_string(&path).expect("the trace");
    let records: Vec<Record> = text.lines().map(|l| serde_json::from_str(l).expect("a record")).collect();
    let at = records.iter().position(|r| matches!(r, Record::Attribution(a) if a.step == 50)).expect("the record");
    // In step order: every record before it is of a step up to 50, every step record after it of a later step.
    let step = |r: &Record| match r {
        Record::Step(s) => Some(s.step),
        Record::Event(e) => Some(e.step),
        Record::Profile(p) => Some(p.step),
        _ => None,
    };
    assert!(records[..at].iter().filter_map(step).all(|s| s <= 50));
    assert!(records[at + 1..].iter().filter_map(step).all(|s| s > 50));
    assert!(records[..at].iter().filter_map(step).any(|s| s == 50), "the step's own records come first");
    assert!(matches!(records.last(), Some(Record::Summary(_))), "and the summary closes the trace");
    // The reader takes it back in place.
    let trace = twinstep_cli::input::read_trace(&path).expect("the trace reads");
    assert_eq!(trace.attribution.len(), 1);
}

#[test]
fn every_format_names_the_planted_line_first() {
    let trace = audit("formats");
    let record = &trace.attribution[0];
    let (top, share) = record.ranked_lines("u")[0];
    assert_eq!((top.file.as_str(), top.line), (file!(), planted_line()));
    // The planted line's roundings are of 2⁻⁴², the others' of at most 2⁻⁵² near u ≈ 1.5 (ulp of binary64 in
    // [1, 2), IEEE 754-2019 §3.3): it carries all but a few thousandths of the error, by either method.
    assert!(share > 0.99, "{share}");
    let ablated = top.shares[0].ablated.expect("the planted line was ablated");
    assert!((ablated - share).abs() < 0.05, "ablated {ablated} against propagated {share}");
    assert_eq!(record.findings[0].remedy, Remedy::CarryPerturbation);

    for format in [Format::Text, Format::Md, Format::Html, Format::Json, Format::Csv] {
        let page = render(&trace, format, false);
        // CSV separates the file and the line by a comma, as columns; the others write `file:line`.
        let separator = if format == Format::Csv { "," } else { ":" };
        let site = format!("{}{separator}{}", file!(), planted_line());
        let at = page.find(&site).unwrap_or_else(|| panic!("{format:?} names the line:\n{page}"));
        // The first line any format names is the planted one, and its source text is beside it.
        let other = page.match_indices(&format!("{}{separator}", file!())).map(|(i, _)| i).min();
        assert_eq!(other, Some(at), "{format:?}: another line is named first");
        assert!(page[at..].contains(PLANTED), "{format:?} shows the source text:\n{page}");
        assert!(page.contains("licensed review"), "{format:?} keeps the caution");
    }
    let html = render(&trace, Format::Html, false);
    let marked = html.split("<mark").nth(1).expect("a marked line in the source excerpt");
    assert!(marked.contains(PLANTED) && marked.contains("#1 of u"), "{marked}");
}

#[test]
fn text_and_markdown_reports_of_the_planted_rod() {
    let trace = audit("snapshots");
    insta::assert_snapshot!("planted_text", render(&trace, Format::Text, false));
    insta::assert_snapshot!("planted_md", render(&trace, Format::Md, false));
}

#[test]
fn a_kernel_file_that_is_not_found_is_said_to_be_so() {
    let mut trace = audit("missing");
    let moved = "gone/planted.rs";
    let attribution = &mut trace.attribution[0];
    for line in &mut attribution.lines {
        line.file = moved.into();
    }
    for finding in &mut attribution.findings {
        finding.file = moved.into();
    }
    let text = render(&trace, Format::Text, false);
    assert!(text.contains(&format!("{moved}:{}", planted_line())), "{text}");
    assert!(text.contains("(source not found)") && !text.contains(PLANTED), "{text}");
    assert!(text.contains("The source file gone/planted.rs was not found from here"), "{text}");
}

#[test]
fn an_attribution_asked_for_wrongly_is_a_clear_error_and_writes_no_file() {
    let path = scratch("attribution_report_bad.jsonl");
    let _ = std::fs::remove_file(&path);
    let audit = |options: AttributeOptions| {
        Audit::new(&Rod, Tolerance::absolute(1e-12), STEPS).trace(&path).lens::<Shadow>().attribute_with(options).run()
    };
    let error = audit(AttributeOptions::new().steps(STEPS + 1)).expect_err("more steps than the audit");
    assert!(matches!(error, Error::BadAttribution { .. }), "{error}");
    assert!(error.to_string().contains("between 1 and the 200 audited steps, not 201"), "{error}");
    let error = audit(AttributeOptions::new().remedy_applied("u", "v", Remedy::CarryPerturbation, None))
        .expect_err("an unknown field");
    assert!(error.to_string().contains("a remedy names field \"v\", but the fields are u"), "{error}");
    assert_eq!(error.exit_code(), 2, "a mistake in the harness");
    assert!(!path.exists(), "no file for a harness mistake");
}

/// A step that adds nothing but exact zeros: every operation is exact (x + 0 = x, IEEE 754-2019 §6.3), so no line
/// makes any error and there is no share to divide.
struct Still;

#[twinstep::scenario]
impl Scenario for Still {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("w", &[4])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0, 2.0, 3.0, 4.0]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        for i in 0..4 {
            levels.next[0][i] = levels.current[0][i] + T::from_f64(0.0);
        }
    }
}

#[test]
fn a_field_without_error_has_no_share_and_says_so() {
    let path = scratch("attribution_report_still.jsonl");
    let trace = Audit::new(&Still, Tolerance::absolute(1e-12), 10)
        .trace(&path)
        .lens::<Shadow>()
        .attribute()
        .run()
        .expect("the audit runs");
    assert_eq!(trace.attribution[0].fields[0].error, 0.0);
    let text = render(&trace, Format::Text, false);
    assert!(text.contains("No line has a share of the error of w: at the attributed step it is zero"), "{text}");
}
