//! The `attribution` trace record: written into a real audit's trace before its summary, read back equal; the
//! reader's checks (field names, order) apply to it. And the long-sum pattern on a kernel that accumulates.

mod attribution_support;

use attribution_support::Planted;
use twinstep::attribution::Attribution;
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::Shadow;
use twinstep::trace::{parse, AttributionRecord, Pattern, ReadError, Record, Remedy};

const STEPS: u64 = 50;

/// A real trace of the planted rod from an audit that attributes its error (`Audit::attribute`), and the record of
/// the same attribution run alone: the audit runs the same `Attribution`, so the two must be equal.
fn trace_with_attribution() -> (String, AttributionRecord) {
    let rod = Planted::new(1024.0);
    // One file per call: the tests run in parallel.
    static CALLS: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);
    let call = CALLS.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    let path = std::env::temp_dir().join(format!("twinstep-attribution-{}-{call}.jsonl", std::process::id()));
    Audit::new(&rod, Tolerance::absolute(1e-9), STEPS)
        .trace(&path)
        .lens::<Shadow>()
        .attribute()
        .run()
        .expect("the audit runs");
    let text = std::fs::read_to_string(&path).expect("the trace");
    let _ = std::fs::remove_file(&path);
    let record = Attribution::new(&rod, STEPS).run().expect("the attribution runs");
    (text, record)
}

#[test]
fn the_audit_writes_the_record_of_the_same_attribution_before_its_summary() {
    let (text, record) = trace_with_attribution();
    let lines: Vec<&str> = text.lines().collect();
    let written: Record = serde_json::from_str(lines[lines.len() - 2]).expect("a record");
    assert_eq!(written, Record::Attribution(record), "the last step's attribution comes just before the summary");
}

#[test]
fn the_record_reads_back_as_written() {
    let (text, record) = trace_with_attribution();
    let trace = parse(&text).expect("the trace reads");
    assert_eq!(trace.attribution, vec![record]);
    assert!(trace.is_complete());
}

#[test]
fn a_record_naming_an_undeclared_field_is_refused() {
    let (text, _) = trace_with_attribution();
    let renamed = text.replace(r#""name":"u","worst_cell""#, r#""name":"v","worst_cell""#);
    assert_ne!(renamed, text, "the field's entry is where the test expects it");
    assert!(matches!(parse(&renamed), Err(ReadError::UnknownName { .. })), "{:?}", parse(&renamed).err());
}

#[test]
fn a_record_after_the_summary_or_before_its_step_is_out_of_order() {
    let (text, _) = trace_with_attribution();
    let lines: Vec<&str> = text.lines().collect();
    let attribution = lines[lines.len() - 2];
    let after_summary = [&lines[..lines.len() - 2], &[lines[lines.len() - 1], attribution]].concat().join("\n") + "\n";
    assert!(matches!(parse(&after_summary), Err(ReadError::OutOfOrder { .. })));
    let early = attribution.replace(&format!(r#""step":{STEPS}"#), r#""step":0"#);
    let early = [&lines[..lines.len() - 2], &[early.as_str(), lines[lines.len() - 1]]].concat().join("\n") + "\n";
    assert!(matches!(parse(&early), Err(ReadError::OutOfOrder { .. })), "{:?}", parse(&early).err());
}

#[test]
fn a_malformed_record_is_a_clear_error() {
    let (text, _) = trace_with_attribution();
    let broken = text.replacen(r#""slots":30"#, r#""slots":"thirty""#, 1);
    assert_ne!(broken, text);
    assert!(matches!(parse(&broken), Err(ReadError::Malformed { .. })));
}

/// Row sums of a matrix `a` (row-major, `n × n`) into `out`, one term after another: the accumulation is the
/// line to blame when the row is long and its terms are small against the sum.
#[twinstep::audit]
pub fn row_sums(a: &[f64], out: &mut [f64], n: usize) {
    for i in 0..n {
        let mut s = 0.0;
        for j in 0..n {
            s += a[i * n + j]; // LINE accumulate
        }
        out[i] = s;
    }
}

/// A field of 64 × 64 cells of one tenth (inexact in binary) whose row sums become the next state's first
/// column, the rest unchanged; the rows are summed one term after another, or with compensation
/// ([`row_sums_compensated`], the remedy the report suggests).
struct Rows {
    compensated: bool,
}
#[twinstep::scenario]
impl Scenario for Rows {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("a", &[64 * 64])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![0.1; 64 * 64]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let mut sums = vec![T::zero(); 64];
        if self.compensated {
            row_sums_compensated_twin::<T>(&levels.current[0], &mut sums, 64);
        } else {
            row_sums_twin::<T>(&levels.current[0], &mut sums, 64);
        }
        levels.next[0].copy_from_slice(&levels.current[0]);
        for (i, s) in sums.into_iter().enumerate() {
            levels.next[0][i * 64] = s;
        }
    }
}

#[test]
fn an_accumulation_loop_is_named_a_long_sum() {
    let record = Attribution::new(&Rows { compensated: false }, 1).run().expect("the attribution runs");
    let source = include_str!("attribution_trace.rs");
    let line = source.lines().position(|l| l.ends_with("// LINE accumulate")).expect("marker") as u32 + 1;
    let finding = &record.findings[0];
    assert_eq!((finding.line, finding.remedy), (line, Remedy::CompensatedSum));
    assert!(finding.patterns.iter().any(|h| h.pattern == Pattern::LongSum), "{finding:?}");
    // 64 terms a row, the first eight of each chain below the run length: 56 of 64 sums continue a long chain
    // (counted from the kernel and the pattern's run length of 8, src/attribution/pattern.rs: our own rule, no
    // outside source).
    let site = record.sites.iter().find(|s| s.site.as_ref().is_some_and(|x| x.line == line)).expect("the site");
    assert_eq!((site.ops.count, site.ops.chained), (64 * 64, 64 * 56));
}

/// The same row sums with the remedy the report suggests for them, compensated summation: Neumaier's variant of
/// Kahan's (Neumaier 1974, "Rundungsfehleranalyse einiger Verfahren zur Summation endlicher Summen"; Higham,
/// Accuracy and Stability of Numerical Algorithms, 2nd ed., §4.3 — both from memory), which carries the low part
/// that each sum drops.
#[twinstep::audit]
pub fn row_sums_compensated(a: &[f64], out: &mut [f64], n: usize) {
    for i in 0..n {
        let (mut s, mut c) = (0.0, 0.0);
        for j in 0..n {
            let x = a[i * n + j];
            let t = s + x;
            c += if s.abs() >= x.abs() { (s - t) + x } else { (x - t) + s };
            s = t;
        }
        out[i] = s + c;
    }
}

#[test]
fn the_compensated_sum_the_report_suggests_removes_the_long_sums_error() {
    // The exact sum of a row is 64 times the double nearest 0.1, itself a double (a power-of-two multiple;
    // IEEE 754-2019 §3.3), computed here in exact rationals (dashu-ratio).
    let tenth = dashu_ratio::RBig::try_from(0.1f64).expect("finite");
    let exact = &tenth * dashu_ratio::RBig::from(64);
    assert_eq!(dashu_ratio::RBig::try_from(0.1f64 * 64.0).expect("finite"), exact);
    let (mut plain, mut compensated) = (vec![0.0; 64], vec![0.0; 64]);
    row_sums(&[0.1; 64 * 64], &mut plain, 64);
    row_sums_compensated(&[0.1; 64 * 64], &mut compensated, 64);
    let plain_error = (dashu_ratio::RBig::try_from(plain[0]).expect("finite") - &exact).to_f64().value();
    assert!(plain_error.abs() > 1e-15, "the plain sum errs: {plain_error:e}");
    assert_eq!(compensated[0], 0.1 * 64.0, "the compensated sum is the exact one");
    // What the attribution measures agrees: the plain run's error is the exact one, the remedied run's is zero.
    let error = |record: &AttributionRecord| record.fields[0].error;
    let plain_run = Attribution::new(&Rows { compensated: false }, 1).run().expect("the attribution runs");
    let remedied = Attribution::new(&Rows { compensated: true }, 1).run().expect("the attribution runs");
    assert!((error(&plain_run) - plain_error).abs() <= 1e-12 * plain_error.abs(), "{plain_run:?}");
    assert_eq!(error(&remedied), 0.0, "{remedied:?}");
}

#[test]
fn a_remedy_applied_reads_back_and_must_name_declared_fields() {
    let (text, _) = trace_with_attribution();
    let applied = |remedied: &str| {
        let member = format!(
            r#","applied":[{{"field":"u","remedied":"{remedied}","remedy":"carry_perturbation","background":1024.0}}]}}"#
        );
        let lines: Vec<String> = text
            .lines()
            .map(|l| {
                if l.starts_with(r#"{"record":"attribution""#) {
                    format!("{}{member}", &l[..l.len() - 1])
                } else {
                    l.to_owned()
                }
            })
            .collect();
        lines.join("\n") + "\n"
    };
    let trace = parse(&applied("u")).expect("a remedy naming a declared field reads");
    let read = &trace.attribution[0].applied[0];
    assert_eq!((read.field.as_str(), read.remedied.as_str(), read.remedy), ("u", "u", Remedy::CarryPerturbation));
    assert_eq!(read.background, Some(1024.0));
    assert!(matches!(parse(&applied("v")), Err(ReadError::UnknownName { .. })), "an undeclared field is refused");
}
