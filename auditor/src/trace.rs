//! The trace as the CLI reads it: the root crate's reader, [`twinstep::trace::read_from`], the one reader of the
//! project, checks everything the contract (`docs/trace.md`) asks — bounded lines, the version, names the header
//! declares, the optional `profile` records of the heat map — and this module only puts its errors in the CLI's
//! words and adds the phrases reports use.
//!
//! Nothing here panics on any input: `auditor/tests/reader_props.rs` feeds it mutated traces.

use std::io::BufRead;

pub use twinstep::trace::{
    EventName, EventRecord, FieldStep, Header, ProfileRecord as Profile, ReadError, ResultRecord, SiteRecord,
    StepRecord, Summary, Tolerance, Trace, MAX_LINE_BYTES,
};
pub use twinstep::verdict::{Growth, Status, Verdict};

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

/// Reads a trace from any buffered reader, one bounded line at a time.
pub fn read(input: impl BufRead) -> Result<Trace, TraceError> {
    twinstep::trace::read_from(input).map_err(|e| match e {
        // The root reader does not know the file's name; the caller adds it.
        ReadError::Io { source, .. } => TraceError(format!("cannot read: {source}")),
        other => TraceError(other.to_string()),
    })
}

/// Parses a whole trace held in memory.
pub fn parse(bytes: &[u8]) -> Result<Trace, TraceError> {
    read(bytes)
}

/// Words for a reader of the report (the one table, [`twinstep::trace::EVENT_NAMES`]).
#[must_use]
pub fn describe(kind: EventName) -> &'static str {
    kind.wording()
}

/// A number a lens may not have had: NaN (written `null` in the trace) becomes `None` (the library's function).
pub use twinstep::report::analysis::known;
