//! Reads a trace back, checking the contract of `docs/trace.md`: a `twinstep-trace` header of a known version
//! first, records in step order, nothing after the summary. Malformed input is a [`ReadError`] naming the line,
//! never a panic. A final line without its newline is a record cut short by a killed run: it is skipped and the
//! trace is marked `truncated_tail`.

use std::path::{Path, PathBuf};

use super::{Record, Trace, FORMAT, VERSION};

/// Why a trace could not be read.
#[derive(Debug)]
pub enum ReadError {
    /// The file could not be opened or read.
    Io { path: PathBuf, source: std::io::Error },
    /// The file is empty.
    Empty,
    /// A line is not a valid record.
    Malformed { line: usize, message: String },
    /// The first line is not a twinstep trace header.
    NotATrace { message: String },
    /// The header names a version this reader does not know.
    UnknownVersion { version: u32 },
    /// A second header, or a record after the summary, or steps going backwards.
    OutOfOrder { line: usize, message: String },
}

impl std::fmt::Display for ReadError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            ReadError::Io { path, source } => write!(f, "cannot read trace {}: {source}", path.display()),
            ReadError::Empty => write!(f, "the trace is empty"),
            ReadError::Malformed { line, message } => write!(f, "line {line}: not a valid trace record: {message}"),
            ReadError::NotATrace { message } => write!(f, "not a twinstep trace: {message}"),
            ReadError::UnknownVersion { version } => {
                write!(f, "trace format version {version} is not known to this twinstep (it reads {VERSION})")
            }
            ReadError::OutOfOrder { line, message } => write!(f, "line {line}: {message}"),
        }
    }
}

impl std::error::Error for ReadError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            ReadError::Io { source, .. } => Some(source),
            _ => None,
        }
    }
}

/// Reads the trace file at `path`.
pub fn read(path: impl AsRef<Path>) -> Result<Trace, ReadError> {
    let path = path.as_ref();
    let bytes = std::fs::read(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
    let text = String::from_utf8_lossy(&bytes);
    parse(&text)
}

/// Parses the text of a trace.
pub fn parse(text: &str) -> Result<Trace, ReadError> {
    let ends_with_newline = text.ends_with('\n');
    let lines: Vec<&str> = text.lines().collect();
    let mut records = Vec::with_capacity(lines.len());
    let mut truncated_tail = false;
    for (index, line) in lines.iter().enumerate() {
        if line.trim().is_empty() {
            continue;
        }
        match serde_json::from_str::<Record>(line) {
            Ok(record) => records.push((index + 1, record)),
            // Only the very last line can be cut short by a kill; anywhere else a bad line is corruption.
            Err(_) if index + 1 == lines.len() && !ends_with_newline && !records.is_empty() => truncated_tail = true,
            Err(e) if index == 0 => return Err(ReadError::NotATrace { message: e.to_string() }),
            Err(e) => return Err(ReadError::Malformed { line: index + 1, message: e.to_string() }),
        }
    }
    let mut records = records.into_iter();
    let header = match records.next() {
        None => return Err(ReadError::Empty),
        Some((_, Record::Header(header))) => header,
        Some((_, other)) => {
            return Err(ReadError::NotATrace { message: format!("first record is {}, not a header", kind(&other)) })
        }
    };
    if header.format != FORMAT {
        return Err(ReadError::NotATrace { message: format!("format is {:?}, not {FORMAT:?}", header.format) });
    }
    if header.version != VERSION {
        return Err(ReadError::UnknownVersion { version: header.version });
    }
    let mut trace = Trace { header, steps: Vec::new(), events: Vec::new(), summary: None, truncated_tail };
    let mut last_step = 0u64;
    for (line, record) in records {
        if trace.summary.is_some() {
            return Err(ReadError::OutOfOrder { line, message: "record after the summary".into() });
        }
        let step = match &record {
            Record::Step(s) => Some(s.step),
            Record::Event(e) => Some(e.step),
            _ => None,
        };
        if let Some(step) = step {
            if step < last_step {
                return Err(ReadError::OutOfOrder { line, message: format!("step {step} after step {last_step}") });
            }
            last_step = step;
        }
        match record {
            Record::Header(_) => return Err(ReadError::OutOfOrder { line, message: "a second header".into() }),
            Record::Step(s) => trace.steps.push(s),
            Record::Event(e) => trace.events.push(e),
            Record::Summary(s) => trace.summary = Some(s),
        }
    }
    Ok(trace)
}

fn kind(record: &Record) -> &'static str {
    match record {
        Record::Header(_) => "a header",
        Record::Step(_) => "a step",
        Record::Event(_) => "an event",
        Record::Summary(_) => "a summary",
    }
}
