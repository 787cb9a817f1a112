//! The trace as the CLI reads it. The records of the contract (`docs/trace.md`) are read by the root crate's
//! reader, [`twinstep::trace::parse`], the one reader of the project; around it the CLI adds what a command line
//! meets and a library call does not:
//! - lines longer than [`MAX_LINE_BYTES`] are refused before anything is parsed, so a corrupted file cannot make
//!   the reader allocate without limit;
//! - steps, events and results must name lenses and fields the header declares;
//! - the optional `profile` record (per-cell errors of a 1-D field at one step, proposed as a contract extension
//!   in `docs/cli.md`) is taken out before the root reader sees the text and kept for the HTML heat map.
//!
//! Nothing here panics on any input: `auditor/tests/reader_props.rs` feeds it mutated traces.

use serde::Deserialize;
use std::io::BufRead;

pub use twinstep::trace::{
    EventName, EventRecord, FieldStep, Header, ReadError, ResultRecord, SiteRecord, StepRecord, Summary, Tolerance,
};
pub use twinstep::verdict::{Growth, Status, Verdict};

/// The longest line accepted (8 MiB): generous for a step record of a wide 2-D field or a long profile, far
/// below what would exhaust memory. Common practice, no source.
pub const MAX_LINE_BYTES: usize = 8 << 20;

/// Per-cell errors of a 1-D field at one step, under one lens (`null` where the lens had no number).
#[derive(Clone, Debug, Deserialize, PartialEq)]
pub struct Profile {
    pub step: u64,
    pub lens: String,
    pub field: String,
    pub err: Vec<Option<f64>>,
}

/// A trace read by the CLI: the root crate's [`twinstep::trace::Trace`] and the profiles beside it.
#[derive(Clone, Debug, PartialEq)]
pub struct Trace {
    pub records: twinstep::trace::Trace,
    pub profiles: Vec<Profile>,
}

impl std::ops::Deref for Trace {
    type Target = twinstep::trace::Trace;
    fn deref(&self) -> &twinstep::trace::Trace {
        &self.records
    }
}

impl Trace {
    /// The last step any lens recorded.
    #[must_use]
    pub fn last_step(&self) -> Option<u64> {
        self.steps.iter().map(|s| s.step).max()
    }
}

/// What is wrong with a trace: the message, after the file name.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TraceError(pub String);

impl TraceError {
    /// The one-line message with the file name in front.
    #[must_use]
    pub fn with_file(&self, file: &str) -> String {
        format!("{file}: {}", self.0)
    }
}

/// Just the `record` member of a line (to find the `profile` records) and, on a header, its version.
#[derive(Deserialize)]
struct Kind<'a> {
    #[serde(borrow)]
    record: std::borrow::Cow<'a, str>,
    #[serde(default)]
    version: Option<u64>,
}

/// Reads a trace from any buffered reader, one bounded line at a time.
pub fn read(mut input: impl BufRead) -> Result<Trace, TraceError> {
    let mut text = String::new();
    let mut profiles = Vec::new();
    let mut number = 0usize;
    loop {
        number += 1;
        let mut line = Vec::new();
        let n = std::io::Read::take(input.by_ref(), MAX_LINE_BYTES as u64 + 1)
            .read_until(b'\n', &mut line)
            .map_err(|e| TraceError(format!("line {number}: cannot read: {e}")))?;
        if n == 0 {
            break;
        }
        let terminated = line.last() == Some(&b'\n');
        let body = if terminated { &line[..line.len() - 1] } else { &line[..] };
        if body.len() > MAX_LINE_BYTES {
            return Err(TraceError(format!(
                "line {number}: longer than {} MiB: not a twinstep trace, or corrupted",
                MAX_LINE_BYTES >> 20
            )));
        }
        let kind = serde_json::from_slice::<Kind>(body).ok();
        // A header of another version may name its members differently: say "version", not "missing field".
        if let Some(Kind { record, version: Some(version) }) = &kind {
            if number == 1 && record == "header" && *version != u64::from(twinstep::trace::VERSION) {
                let known = twinstep::trace::VERSION;
                return Err(TraceError(format!(
                    "trace format version {version} is not known to this twinstep (it reads {known})"
                )));
            }
        }
        let is_profile = kind.is_some_and(|k| k.record == "profile");
        if is_profile {
            let profile = serde_json::from_slice::<Profile>(body)
                .map_err(|e| TraceError(format!("line {number}: bad profile record: {e}")))?;
            profiles.push(profile);
            // A blank line keeps the root reader's line numbers those of the file.
            text.push('\n');
        } else {
            text.push_str(&String::from_utf8_lossy(&line));
        }
    }
    let records = twinstep::trace::parse(&text).map_err(|e| TraceError(e.to_string()))?;
    let trace = Trace { records, profiles };
    check_names(&trace).map_err(TraceError)?;
    Ok(trace)
}

/// Parses a whole trace held in memory.
pub fn parse(bytes: &[u8]) -> Result<Trace, TraceError> {
    read(bytes)
}

/// Every lens and field a record names must be declared by the header; a field or lens declared twice is an
/// error too (reports could not tell them apart).
fn check_names(trace: &Trace) -> Result<(), String> {
    let header = &trace.header;
    let lens = |name: &str, what: &str| -> Result<(), String> {
        if header.lenses.iter().any(|l| l == name) {
            Ok(())
        } else {
            Err(format!("{what}: unknown lens \"{name}\": the header declares {}", header.lenses.join(", ")))
        }
    };
    let declared: Vec<&str> = header.fields.iter().map(|f| f.name.as_str()).collect();
    let field = |name: &str, what: &str| -> Result<(), String> {
        if declared.contains(&name) {
            Ok(())
        } else {
            Err(format!("{what}: unknown field \"{name}\": the header declares {}", declared.join(", ")))
        }
    };
    for (i, name) in declared.iter().enumerate() {
        if declared[..i].contains(name) {
            return Err(format!("the header declares field \"{name}\" twice"));
        }
    }
    for (i, name) in header.lenses.iter().enumerate() {
        if header.lenses[..i].contains(name) {
            return Err(format!("the header declares lens \"{name}\" twice"));
        }
    }
    for step in &trace.steps {
        let what = format!("step {} of lens {}", step.step, step.lens);
        lens(&step.lens, &what)?;
        for stats in &step.fields {
            field(&stats.name, &what)?;
        }
    }
    for event in &trace.events {
        let what = format!("event at step {}", event.step);
        lens(&event.lens, &what)?;
        if let Some(name) = &event.field {
            field(name, &what)?;
        }
    }
    for profile in &trace.profiles {
        let what = format!("profile at step {}", profile.step);
        lens(&profile.lens, &what)?;
        field(&profile.field, &what)?;
    }
    for result in trace.summary.iter().flat_map(|s| &s.results) {
        lens(&result.lens, "summary")?;
        field(&result.field, "summary")?;
    }
    Ok(())
}

/// Words for a reader of the report.
#[must_use]
pub fn describe(kind: EventName) -> &'static str {
    match kind {
        EventName::Nan => "NaN produced",
        EventName::Infinity => "infinity produced",
        EventName::BranchInstability => "comparison undecided by rounding",
        EventName::IndexInstability => "index cast undecided by rounding",
        EventName::DivisionByZeroEnclosure => "division by a value that may be zero",
        EventName::ToleranceCrossed => "tolerance crossed",
        EventName::BoundLost => "guaranteed bound lost",
        EventName::PrimalMismatch => "twin's primal differs from the original",
    }
}

/// A number a lens may not have had: NaN (written `null` in the trace) becomes `None`.
#[must_use]
pub fn known(value: f64) -> Option<f64> {
    (!value.is_nan()).then_some(value)
}
