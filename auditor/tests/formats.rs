//! Snapshots of every report format on the fixed traces of `fixtures/traces/`, and the facts a reader must find
//! in each: the verdict, the drifting field and its first crossing, the caution, and the plots in the HTML.
//!
//! The fixture numbers are invented renderer input (see `make_fixtures.py`); the checks here are about what the
//! report shows, not about rounding.

mod common;
use common::{fixture, scratch, stderr, stdout, twinstep};
use twinstep_cli::report::{render, Format};

fn trace(name: &str) -> twinstep_cli::trace::Trace {
    twinstep_cli::input::read_trace(&fixture(name)).expect("fixture reads")
}

#[test]
fn text_snapshot() {
    insta::assert_snapshot!("kiln_complete_text", render(&trace("kiln_complete.jsonl"), Format::Text, false));
    insta::assert_snapshot!("kiln_killed_text", render(&trace("kiln_killed.jsonl"), Format::Text, false));
}

#[test]
fn markdown_snapshot() {
    insta::assert_snapshot!("kiln_complete_md", render(&trace("kiln_complete.jsonl"), Format::Md, false));
    insta::assert_snapshot!("kiln_enough_md", render(&trace("kiln_enough.jsonl"), Format::Md, false));
}

#[test]
fn json_snapshot() {
    let text = render(&trace("kiln_enough.jsonl"), Format::Json, false);
    let value: serde_json::Value = serde_json::from_str(&text).expect("valid JSON");
    assert_eq!(
        value["rows"].as_array().map(Vec::len),
        Some(8 * 2),
        "8 recorded steps (0, 1, 2, 5, 10, 20, 50, 100) × 2 fields"
    );
    insta::assert_snapshot!("kiln_enough_json", text);
}

#[test]
fn csv_snapshot() {
    let text = render(&trace("kiln_complete.jsonl"), Format::Csv, false);
    // Comment lines first (what the rows are, the verdict, the caution), then the header and the rows.
    assert!(text.lines().take_while(|l| l.starts_with('#')).any(|l| l.contains("licensed review")), "{text}");
    let mut data = text.lines().filter(|l| !l.starts_with('#'));
    let columns = data.next().unwrap().split(',').count();
    assert!(data.all(|line| line.split(',').count() == columns), "every row has every column");
    insta::assert_snapshot!("kiln_complete_csv", text);
}

#[test]
fn html_snapshot_and_content() {
    let html = render(&trace("kiln_complete.jsonl"), Format::Html, false);
    // One plot of ratios, one error plot per field, one heat map of T (the fixture has profiles of T only).
    assert_eq!(html.matches("<svg").count(), 4, "four inline plots");
    assert!(html.contains("Verdict: f64 is enough until step 10434"));
    assert!(html.contains("<code>T</code> drifts most"));
    assert!(html.contains("crosses the tolerance at step 10435"));
    assert!(html.contains("rounding error only, not discretization or modelling error"));
    assert!(html.contains("licensed review"));
    // Self-contained: nothing fetched from anywhere.
    for external in ["http://", "https://", "<script", "<link", "src=\"", "url("] {
        assert!(!html.contains(external) || external == "http://" && only_svg_namespace(&html), "no {external}");
    }
    insta::assert_snapshot!("kiln_complete_html", html);
}

/// The SVG namespace URI is an identifier, not a fetch; it is the only `http://` the page may hold.
fn only_svg_namespace(html: &str) -> bool {
    html.replace("http://www.w3.org/2000/svg", "").replace("http://www.w3.org/1999/xlink", "").find("http://").is_none()
}

#[test]
fn killed_html_has_notice_and_plots() {
    let html = render(&trace("kiln_killed.jsonl"), Format::Html, false);
    assert!(html.contains("class=\"notice\">Incomplete run"));
    assert!(html.contains("Verdict: none yet"));
    assert!(html.matches("<svg").count() >= 3);
}

#[test]
fn text_colour_only_when_asked() {
    let plain = render(&trace("kiln_complete.jsonl"), Format::Text, false);
    let coloured = render(&trace("kiln_complete.jsonl"), Format::Text, true);
    assert!(!plain.contains('\x1b'));
    assert!(coloured.contains("\x1b[33m"), "the enough-until verdict in yellow");
    // Piped output (the test captures stdout) has no colour even without NO_COLOR.
    let output = std::process::Command::new(env!("CARGO_BIN_EXE_twinstep"))
        .args(["report", fixture("kiln_complete.jsonl").to_str().unwrap()])
        .env_remove("NO_COLOR")
        .output()
        .unwrap();
    assert!(!stdout(&output).contains('\x1b'));
}

#[test]
fn output_file_matches_stdout() {
    let out = scratch("report.md");
    let trace_path = fixture("kiln_complete.jsonl");
    let written = twinstep(&["report", trace_path.to_str().unwrap(), "--format", "md", "-o", out.to_str().unwrap()]);
    assert_eq!(written.status.code(), Some(0), "{}", stderr(&written));
    let printed = twinstep(&["report", trace_path.to_str().unwrap(), "--format", "md"]);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), stdout(&printed));
}

/// Eight cells divided by 3 per step: the errors shrink with the values, through the subnormal range to 0.
struct Thirds;

#[twinstep::scenario]
impl twinstep::audit::Scenario for Thirds {
    fn fields(&self) -> Vec<twinstep::audit::FieldSpec> {
        vec![twinstep::audit::FieldSpec::new("u", &[8])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![(1..=8).map(f64::from).collect()]
    }

    fn step<T>(&self, levels: &mut twinstep::audit::Levels<T>) {
        for i in 0..8 {
            levels.next[0][i] = levels.current[0][i] / T::from_f64(3.0);
        }
    }
}

#[test]
fn html_axes_stay_bounded_when_errors_underflow() {
    // 700 steps take 1/3^700 ≈ 1e-334 below the smallest subnormal (2^-1074 ≈ 4.9e-324, IEEE 754-2019 §3.4):
    // the recorded errors fall through the subnormal range to 0, as those of a field decaying to 0 do. The log axes
    // keep at most 24 decades and the page is drawn.
    let path = scratch("underflow.jsonl");
    let tolerance = twinstep::audit::Tolerance::absolute(1e-9);
    twinstep::audit::Audit::new(&Thirds, tolerance, 700)
        .trace(&path)
        .every_step()
        .lens::<twinstep::lens::Shadow>()
        .run()
        .expect("the audit runs");
    let trace = twinstep_cli::input::read_trace(&path).expect("the trace reads");
    let html = render(&trace, Format::Html, false);
    assert_eq!(html.matches("<svg").count(), 3, "ratios, errors of u, heat map of u");
}
