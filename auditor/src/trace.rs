//! Reading a trace (`docs/trace.md`, version 1) into memory, with an error that names the line and what is wrong.
//!
//! The reader is strict where the contract is (the first line is a version-1 `header`; `record` kinds are known;
//! steps and events name lenses and fields the header declares) and lenient where it asks for it (unknown members
//! are ignored; a file without a closing `summary` is an *incomplete run*, and a last line cut off mid-write by a
//! killed run is dropped, noted, and the prefix is kept). Numbers a lens could not give (an error estimate after
//! a NaN) may be `null`. Lines longer than [`MAX_LINE_BYTES`] are refused before they are parsed, so a corrupted
//! file cannot make the reader allocate without limit. Nothing here panics on any input: the property test in
//! `auditor/tests/reader_props.rs` feeds it mutated traces.

use serde::{Deserialize, Serialize};
use std::fmt;
use std::io::BufRead;

/// The trace format version this reader knows.
pub const FORMAT_VERSION: u64 = 1;
/// The value of the header's `format` member.
pub const FORMAT_NAME: &str = "twinstep-trace";
/// The longest line accepted (8 MiB): generous for a step record of a wide 2-D field with per-cell profiles,
/// far below what would exhaust memory. Common practice, no source.
pub const MAX_LINE_BYTES: usize = 8 << 20;

/// The first record: what was audited and how.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct Header {
    pub format: String,
    pub version: u64,
    #[serde(default)]
    pub kernel: String,
    #[serde(default)]
    pub scenario: String,
    pub lenses: Vec<String>,
    pub fields: Vec<FieldSpec>,
    pub tolerance: Tolerance,
    #[serde(default)]
    pub steps_planned: Option<u64>,
    /// The kernel's float type (`f64`, `f32`), when the writer records it; reports assume `f64` otherwise.
    #[serde(default)]
    pub float: Option<String>,
    #[serde(default)]
    pub record_policy: Option<String>,
    #[serde(default)]
    pub machine: Option<serde_json::Value>,
    #[serde(default)]
    pub build: Option<serde_json::Value>,
    #[serde(default)]
    pub started_unix_s: Option<u64>,
}

/// A field of the solver state and its shape (cells per axis).
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct FieldSpec {
    pub name: String,
    #[serde(default)]
    pub shape: Vec<u64>,
}

/// The user's tolerance: when a cell's error `err` is acceptable.
#[derive(Clone, Copy, Debug, Deserialize, Serialize, PartialEq)]
#[serde(tag = "kind", rename_all = "lowercase")]
pub enum Tolerance {
    /// `err ≤ atol`.
    Absolute { atol: f64 },
    /// `err ≤ rtol·|u|`.
    Relative { rtol: f64 },
    /// `err ≤ atol + rtol·|u|`.
    Mixed { atol: f64, rtol: f64 },
    /// `err ≤ ulps · ulp(u)`.
    Ulps { ulps: f64 },
}

impl fmt::Display for Tolerance {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Tolerance::Absolute { atol } => write!(f, "absolute, err ≤ {atol:e}"),
            Tolerance::Relative { rtol } => write!(f, "relative, err ≤ {rtol:e}·|u|"),
            Tolerance::Mixed { atol, rtol } => write!(f, "mixed, err ≤ {atol:e} + {rtol:e}·|u|"),
            Tolerance::Ulps { ulps } => write!(f, "ulps, err ≤ {ulps} ulp(u)"),
        }
    }
}

/// One recorded step of one lens.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct Step {
    pub step: u64,
    pub lens: String,
    pub fields: Vec<FieldStats>,
}

/// The statistics of one field at one step, as one lens sees them. `None` where the lens had no number (NaN).
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct FieldStats {
    pub name: String,
    #[serde(default)]
    pub max_err: Option<f64>,
    #[serde(default)]
    pub mean_err: Option<f64>,
    #[serde(default)]
    pub max_rel_err: Option<f64>,
    #[serde(default)]
    pub mean_rel_err: Option<f64>,
    #[serde(default)]
    pub bound: Option<f64>,
    #[serde(default)]
    pub correct_bits: Option<f64>,
    #[serde(default)]
    pub worst_cell: Vec<u64>,
    #[serde(default)]
    pub tol_ratio: Option<f64>,
    #[serde(default)]
    pub representation_err: Option<f64>,
}

/// A source location in the user's kernel.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq, Eq)]
pub struct Site {
    pub file: String,
    pub line: u64,
    pub column: u64,
}

impl fmt::Display for Site {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}:{}", self.file, self.line, self.column)
    }
}

/// The kinds of event the contract names.
#[derive(Clone, Copy, Debug, Deserialize, Serialize, PartialEq, Eq, PartialOrd, Ord, Hash)]
#[serde(rename_all = "snake_case")]
pub enum EventKind {
    Nan,
    Infinity,
    BranchInstability,
    IndexInstability,
    DivisionByZeroEnclosure,
    ToleranceCrossed,
    BoundLost,
}

impl EventKind {
    /// The name used in traces.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            EventKind::Nan => "nan",
            EventKind::Infinity => "infinity",
            EventKind::BranchInstability => "branch_instability",
            EventKind::IndexInstability => "index_instability",
            EventKind::DivisionByZeroEnclosure => "division_by_zero_enclosure",
            EventKind::ToleranceCrossed => "tolerance_crossed",
            EventKind::BoundLost => "bound_lost",
        }
    }

    /// Words for a reader of the report.
    #[must_use]
    pub fn describe(self) -> &'static str {
        match self {
            EventKind::Nan => "NaN produced",
            EventKind::Infinity => "infinity produced",
            EventKind::BranchInstability => "comparison undecided by rounding",
            EventKind::IndexInstability => "index cast undecided by rounding",
            EventKind::DivisionByZeroEnclosure => "division by a value that may be zero",
            EventKind::ToleranceCrossed => "tolerance crossed",
            EventKind::BoundLost => "guaranteed bound lost",
        }
    }
}

/// Something that happened at a step.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct Event {
    pub step: u64,
    #[serde(default)]
    pub lens: Option<String>,
    pub kind: EventKind,
    #[serde(default)]
    pub field: Option<String>,
    #[serde(default)]
    pub site: Option<Site>,
    #[serde(default = "one")]
    pub count: u64,
    #[serde(default)]
    pub detail: Option<String>,
}

fn one() -> u64 {
    1
}

/// Optional per-cell errors of a 1-D field at one step (proposed extension, see `docs/cli.md`): the HTML report
/// draws them as a space × time heat map.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct Profile {
    pub step: u64,
    pub lens: String,
    pub field: String,
    pub err: Vec<Option<f64>>,
}

/// The closing record of a run that ended normally.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct Summary {
    pub steps_done: u64,
    #[serde(default = "yes")]
    pub complete: bool,
    #[serde(default)]
    pub wall_s: Option<f64>,
    #[serde(default)]
    pub results: Vec<LensFieldResult>,
    pub verdict: Verdict,
}

fn yes() -> bool {
    true
}

/// The outcome for one field under one lens.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct LensFieldResult {
    pub lens: String,
    pub field: String,
    #[serde(default)]
    pub first_crossing: Option<u64>,
    #[serde(default)]
    pub final_max_err: Option<f64>,
    #[serde(default)]
    pub final_bound: Option<f64>,
    #[serde(default)]
    pub growth: Option<Growth>,
    #[serde(default)]
    pub extrapolated_err: Option<f64>,
}

/// The growth law fitted to an error history.
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct Growth {
    pub law: String,
    #[serde(default)]
    pub c: Option<f64>,
    #[serde(default)]
    pub alpha: Option<f64>,
    #[serde(default)]
    pub rate: Option<f64>,
}

impl fmt::Display for Growth {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match (self.law.as_str(), self.c, self.alpha, self.rate) {
            ("power", Some(c), Some(alpha), _) => write!(f, "{c:.2e}·n^{alpha:.2}"),
            ("exponential", Some(c), _, Some(rate)) => write!(f, "{c:.2e}·e^({rate:.3e}·n)"),
            (law, ..) => write!(f, "{law}"),
        }
    }
}

/// The answer to "is the float type enough".
#[derive(Clone, Debug, Deserialize, Serialize, PartialEq)]
pub struct Verdict {
    pub status: VerdictStatus,
    #[serde(default)]
    pub until_step: Option<u64>,
    #[serde(default)]
    pub least_precision_bits: Option<u64>,
    #[serde(default)]
    pub text: String,
}

/// The three verdicts the contract names.
#[derive(Clone, Copy, Debug, Deserialize, Serialize, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum VerdictStatus {
    Enough,
    EnoughUntil,
    NotEnough,
}

/// A whole trace in memory.
#[derive(Clone, Debug, PartialEq)]
pub struct Trace {
    pub header: Header,
    pub steps: Vec<Step>,
    pub events: Vec<Event>,
    pub profiles: Vec<Profile>,
    pub summary: Option<Summary>,
    /// The last line was cut off mid-write (a killed run) and was dropped.
    pub cut_last_line: bool,
}

impl Trace {
    /// Whether the run ended normally (a closing `summary` that says so).
    #[must_use]
    pub fn is_complete(&self) -> bool {
        self.summary.as_ref().is_some_and(|s| s.complete)
    }

    /// The last step any lens recorded.
    #[must_use]
    pub fn last_step(&self) -> Option<u64> {
        self.steps.iter().map(|s| s.step).max()
    }
}

/// What is wrong with a trace, and on which line (1-based) when it is about one line.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct TraceError {
    pub line: Option<usize>,
    pub message: String,
}

impl TraceError {
    fn at(line: usize, message: impl Into<String>) -> TraceError {
        TraceError { line: Some(line), message: message.into() }
    }

    fn whole(message: impl Into<String>) -> TraceError {
        TraceError { line: None, message: message.into() }
    }

    /// The one-line message with the file name in front: `FILE:LINE: what`.
    #[must_use]
    pub fn with_file(&self, file: &str) -> String {
        match self.line {
            Some(line) => format!("{file}:{line}: {}", self.message),
            None => format!("{file}: {}", self.message),
        }
    }
}

impl fmt::Display for TraceError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(line) => write!(f, "line {line}: {}", self.message),
            None => f.write_str(&self.message),
        }
    }
}

/// The `record` kinds of the contract, with the optional `profile` extension.
#[derive(Deserialize)]
#[serde(tag = "record", rename_all = "snake_case")]
enum Record {
    Header(serde::de::IgnoredAny),
    Step(Step),
    Event(Event),
    Profile(Profile),
    Summary(Summary),
}

/// Parses a whole trace held in memory.
pub fn parse(bytes: &[u8]) -> Result<Trace, TraceError> {
    read(bytes)
}

/// Reads a trace from any buffered reader, one bounded line at a time.
pub fn read(mut input: impl BufRead) -> Result<Trace, TraceError> {
    let mut lines = Vec::new();
    let mut number = 0;
    loop {
        number += 1;
        let mut line = Vec::new();
        let mut limited = std::io::Read::take(input.by_ref(), MAX_LINE_BYTES as u64 + 1);
        let n =
            limited.read_until(b'\n', &mut line).map_err(|e| TraceError::at(number, format!("cannot read: {e}")))?;
        if n == 0 {
            break;
        }
        let terminated = line.last() == Some(&b'\n');
        if terminated {
            line.pop();
        }
        if line.len() > MAX_LINE_BYTES {
            return Err(TraceError::at(
                number,
                format!("line longer than {} MiB: not a twinstep trace, or corrupted", MAX_LINE_BYTES >> 20),
            ));
        }
        lines.push((number, line, terminated));
    }
    assemble(lines)
}

/// Turns the raw lines into a [`Trace`], checking the contract's order and cross-references.
fn assemble(lines: Vec<(usize, Vec<u8>, bool)>) -> Result<Trace, TraceError> {
    let last = lines.len();
    let mut lines = lines.into_iter();
    let Some((_, first, _)) = lines.next() else {
        return Err(TraceError::whole("empty trace: no header line (the audit wrote nothing)"));
    };
    let header = parse_header(&first)?;
    let mut trace = Trace {
        header,
        steps: Vec::new(),
        events: Vec::new(),
        profiles: Vec::new(),
        summary: None,
        cut_last_line: false,
    };
    for (number, line, terminated) in lines {
        if line.iter().all(u8::is_ascii_whitespace) {
            continue;
        }
        let record = match serde_json::from_slice::<Record>(&line) {
            Ok(record) => record,
            // A killed run may leave its last line half written: keep the prefix, report the run as incomplete.
            Err(_) if number == last && !terminated => {
                trace.cut_last_line = true;
                break;
            }
            Err(e) => return Err(TraceError::at(number, describe_json_error(&line, &e))),
        };
        if trace.summary.is_some() {
            return Err(TraceError::at(number, "record after the closing summary"));
        }
        accept(&mut trace, record).map_err(|message| TraceError::at(number, message))?;
    }
    Ok(trace)
}

/// The header line: its `format` and `version` are checked before the rest, so a trace of another version gets a
/// version message rather than a complaint about members that version may name differently.
fn parse_header(line: &[u8]) -> Result<Header, TraceError> {
    let value: serde_json::Value =
        serde_json::from_slice(line).map_err(|e| TraceError::at(1, format!("header is not valid JSON: {e}")))?;
    let record = value.get("record").and_then(|r| r.as_str());
    if record != Some("header") {
        return Err(TraceError::at(1, "first line is not a twinstep trace header"));
    }
    if value.get("format").and_then(|f| f.as_str()) != Some(FORMAT_NAME) {
        return Err(TraceError::at(1, format!("header's format is not \"{FORMAT_NAME}\"")));
    }
    match value.get("version").and_then(serde_json::Value::as_u64) {
        Some(FORMAT_VERSION) => {}
        Some(v) => {
            return Err(TraceError::at(
                1,
                format!("trace format version {v} is not supported (this twinstep reads version {FORMAT_VERSION})"),
            ))
        }
        None => return Err(TraceError::at(1, "header has no numeric version")),
    }
    let header: Header = serde_json::from_value(value).map_err(|e| TraceError::at(1, format!("bad header: {e}")))?;
    if let Some(dup) = first_duplicate(header.fields.iter().map(|f| f.name.as_str())) {
        return Err(TraceError::at(1, format!("header declares field \"{dup}\" twice")));
    }
    if let Some(dup) = first_duplicate(header.lenses.iter().map(String::as_str)) {
        return Err(TraceError::at(1, format!("header declares lens \"{dup}\" twice")));
    }
    Ok(header)
}

fn first_duplicate<'a>(names: impl Iterator<Item = &'a str>) -> Option<&'a str> {
    let mut seen = std::collections::BTreeSet::new();
    names.into_iter().find(|name| !seen.insert(*name))
}

/// serde's message for a record, with the one case users meet most often (an unknown `record` kind) named plainly.
fn describe_json_error(line: &[u8], error: &serde_json::Error) -> String {
    let kind = serde_json::from_slice::<serde_json::Value>(line)
        .ok()
        .and_then(|v| v.get("record").and_then(|r| r.as_str()).map(str::to_owned));
    match kind {
        Some(kind) if !["header", "step", "event", "profile", "summary"].contains(&kind.as_str()) => {
            format!("unknown record kind \"{kind}\"")
        }
        Some(kind) if kind == "header" => "a second header".to_owned(),
        Some(kind) => format!("bad {kind} record: {error}"),
        None if error.is_syntax() || error.is_eof() => format!("not valid JSON: {error}"),
        None => format!("not a trace record: {error}"),
    }
}

/// Files one record into the trace after checking it names what the header declares.
fn accept(trace: &mut Trace, record: Record) -> Result<(), String> {
    let header = &trace.header;
    let known_lens = |lens: &str| -> Result<(), String> {
        if header.lenses.iter().any(|l| l == lens) {
            Ok(())
        } else {
            Err(format!("lens \"{lens}\" is not declared in the header"))
        }
    };
    let known_field = |field: &str| -> Result<(), String> {
        if header.fields.iter().any(|f| f.name == field) {
            Ok(())
        } else {
            Err(format!("unknown field \"{field}\": the header does not declare it"))
        }
    };
    match record {
        Record::Header(_) => return Err("a second header".to_owned()),
        Record::Step(step) => {
            known_lens(&step.lens)?;
            for stats in &step.fields {
                known_field(&stats.name)?;
            }
            trace.steps.push(step);
        }
        Record::Event(event) => {
            if let Some(lens) = &event.lens {
                known_lens(lens)?;
            }
            if let Some(field) = &event.field {
                known_field(field)?;
            }
            trace.events.push(event);
        }
        Record::Profile(profile) => {
            known_lens(&profile.lens)?;
            known_field(&profile.field)?;
            trace.profiles.push(profile);
        }
        Record::Summary(summary) => {
            for result in &summary.results {
                known_lens(&result.lens)?;
                known_field(&result.field)?;
            }
            trace.summary = Some(summary);
        }
    }
    Ok(())
}
