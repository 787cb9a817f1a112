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
/// column, the rest unchanged.
struct Rows;
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
        row_sums_twin::<T>(&levels.current[0], &mut sums, 64);
        levels.next[0].copy_from_slice(&levels.current[0]);
        for (i, s) in sums.into_iter().enumerate() {
            levels.next[0][i * 64] = s;
        }
    }
}

#[test]
fn an_accumulation_loop_is_named_a_long_sum() {
    let record = Attribution::new(&Rows, 1).run().expect("the attribution runs");
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
