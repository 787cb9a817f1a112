//! Reads a trace back, checking the contract of `docs/trace.md`: a `twinstep-trace` header of a known version
//! first, records in step order, nothing after the summary, lines of bounded length, and every lens and field a
//! record names declared by the header. This is the project's one reader: the CLI calls it as it is. Malformed input is a [`ReadError`] naming the line,
//! never a panic. A final line without its newline is a record cut short by a killed run: it is skipped and the
//! trace is marked `truncated_tail`.

use std::io::{BufRead, Read};
use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::{Record, Trace, FORMAT, READABLE_VERSIONS};

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
    UnknownVersion { version: u64 },
    /// A line longer than [`MAX_LINE_BYTES`].
    LineTooLong { line: usize },
    /// A record names a lens or field the header does not declare, or the header declares one twice.
    UnknownName { message: String },
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
                write!(
                    f,
                    "trace format version {version} is not known to this twinstep (it reads versions {})",
                    READABLE_VERSIONS.map(|v| v.to_string()).join(", ")
                )
            }
            ReadError::OutOfOrder { line, message } => write!(f, "line {line}: {message}"),
            ReadError::LineTooLong { line } => {
                write!(f, "line {line}: longer than {} MiB: not a twinstep trace, or corrupted", MAX_LINE_BYTES >> 20)
            }
            ReadError::UnknownName { message } => write!(f, "{message}"),
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

/// The longest line accepted (8 MiB): generous for a step record of a wide 2-D field, far below what would
/// exhaust memory, so a corrupted file cannot make the reader allocate without limit. Common practice, no source.
pub const MAX_LINE_BYTES: usize = 8 << 20;

/// Reads the trace file at `path`.
pub fn read(path: impl AsRef<Path>) -> Result<Trace, ReadError> {
    let path = path.as_ref();
    let file = std::fs::File::open(path).map_err(|source| ReadError::Io { path: path.to_path_buf(), source })?;
    read_from(std::io::BufReader::new(file)).map_err(|e| match e {
        ReadError::Io { source, .. } => ReadError::Io { path: path.to_path_buf(), source },
        other => other,
    })
}

/// Parses the text of a trace.
pub fn parse(text: &str) -> Result<Trace, ReadError> {
    read_from(text.as_bytes())
}

/// Just the `record` member of a line and, on a header, its version: enough to tell a header of another version
/// (whose members may differ) from a broken one.
#[derive(Deserialize)]
struct Kind<'a> {
    #[serde(borrow)]
    record: std::borrow::Cow<'a, str>,
    #[serde(default)]
    version: Option<u64>,
}

/// Reads a trace from any buffered reader, one line of at most [`MAX_LINE_BYTES`] at a time.
pub fn read_from(mut input: impl BufRead) -> Result<Trace, ReadError> {
    let mut records = Vec::new();
    let mut truncated_tail = false;
    let mut number = 0usize;
    loop {
        number += 1;
        let mut line = Vec::new();
        let n = (&mut input)
            .take(MAX_LINE_BYTES as u64 + 1)
            .read_until(b'\n', &mut line)
            .map_err(|source| ReadError::Io { path: PathBuf::new(), source })?;
        if n == 0 {
            break;
        }
        let terminated = line.last() == Some(&b'\n');
        let body = if terminated { &line[..line.len() - 1] } else { &line[..] };
        if body.len() > MAX_LINE_BYTES {
            return Err(ReadError::LineTooLong { line: number });
        }
        let body = String::from_utf8_lossy(body);
        if body.trim().is_empty() {
            continue;
        }
        if number == 1 {
            if let Ok(Kind { record, version: Some(version) }) = serde_json::from_str::<Kind>(&body) {
                if record == "header" && !READABLE_VERSIONS.iter().any(|&v| u64::from(v) == version) {
                    return Err(ReadError::UnknownVersion { version });
                }
            }
        }
        match serde_json::from_str::<Record>(&body) {
            Ok(record) => records.push((number, record)),
            // Only the last line can be cut short by a kill (it has no newline); anywhere else a bad line is
            // corruption.
            Err(_) if !terminated && !records.is_empty() => truncated_tail = true,
            Err(e) if records.is_empty() => return Err(ReadError::NotATrace { message: e.to_string() }),
            Err(e) => return Err(ReadError::Malformed { line: number, message: e.to_string() }),
        }
    }
    let trace = assemble(records, truncated_tail)?;
    check_names(&trace)?;
    Ok(trace)
}

/// Checks the order of the records and sorts them into a [`Trace`].
fn assemble(records: Vec<(usize, Record)>, truncated_tail: bool) -> Result<Trace, ReadError> {
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
    if !READABLE_VERSIONS.contains(&header.version) {
        return Err(ReadError::UnknownVersion { version: u64::from(header.version) });
    }
    let mut trace = Trace { truncated_tail, ..Trace::started(header) };
    let mut last_step = 0u64;
    for (line, record) in records {
        // After the summary only a precision sweep's records may follow: its runs, then its outcome, last.
        let sweep_record = matches!(record, Record::FormatRun(_) | Record::Sweep(_));
        if trace.sweep.is_some() || (trace.summary.is_some() != sweep_record) {
            let message = if sweep_record {
                "a sweep record outside the sweep's place after the summary"
            } else {
                "record after the summary"
            };
            return Err(ReadError::OutOfOrder { line, message: message.into() });
        }
        let step = match &record {
            Record::Step(s) => Some(s.step),
            Record::Event(e) => Some(e.step),
            Record::Profile(p) => Some(p.step),
            Record::Attribution(a) => Some(a.step),
            Record::CertificateEnd(c) => Some(c.step),
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
            Record::Profile(p) => trace.profiles.push(p),
            Record::Attribution(a) => trace.attribution.push(a),
            Record::CertificateEnd(c) => trace.certificate_ends.push(c),
            Record::Summary(s) => trace.summary = Some(s),
            Record::FormatRun(r) => trace.format_runs.push(r),
            Record::Sweep(s) => trace.sweep = Some(s),
        }
    }
    Ok(trace)
}

/// Every lens and field a record names must be declared by the header, and declared once (reports could not
/// tell two of the same name apart).
fn check_names(trace: &Trace) -> Result<(), ReadError> {
    let header = &trace.header;
    let declared: Vec<&str> = header.fields.iter().map(|f| f.name.as_str()).collect();
    let lenses: Vec<&str> = header.lenses.iter().map(String::as_str).collect();
    for (what, names) in [("field", &declared), ("lens", &lenses)] {
        if let Some((_, name)) = names.iter().enumerate().find(|(i, name)| names[..*i].contains(name)) {
            return Err(ReadError::UnknownName { message: format!("the header declares {what} \"{name}\" twice") });
        }
    }
    let check = |kind: &str, name: &str, known: &[&str], record: &dyn Fn() -> String| {
        if known.contains(&name) {
            Ok(())
        } else {
            let message = format!("{}: unknown {kind} \"{name}\": the header declares {}", record(), known.join(", "));
            Err(ReadError::UnknownName { message })
        }
    };
    for step in &trace.steps {
        let what = || format!("step {} of lens {}", step.step, step.lens);
        check("lens", &step.lens, &lenses, &what)?;
        for stats in &step.fields {
            check("field", &stats.name, &declared, &what)?;
        }
    }
    for event in &trace.events {
        let what = || format!("event at step {}", event.step);
        check("lens", &event.lens, &lenses, &what)?;
        if let Some(name) = &event.field {
            check("field", name, &declared, &what)?;
        }
    }
    for profile in &trace.profiles {
        let what = || format!("profile at step {}", profile.step);
        check("lens", &profile.lens, &lenses, &what)?;
        check("field", &profile.field, &declared, &what)?;
    }
    for attribution in &trace.attribution {
        let what = || format!("attribution at step {}", attribution.step);
        for name in attribution.field_names() {
            check("field", name, &declared, &what)?;
        }
    }
    for end in &trace.certificate_ends {
        let what = || format!("certificate end at step {}", end.step);
        check("lens", &end.lens, &lenses, &what)?;
        if let Some(name) = &end.field {
            check("field", name, &declared, &what)?;
        }
    }
    for certificate in trace.summary.iter().flat_map(|s| &s.certificates) {
        check("lens", &certificate.lens, &lenses, &|| "summary certificates".to_string())?;
    }
    for result in trace.summary.iter().flat_map(|s| &s.results) {
        let what = || "summary".to_string();
        check("lens", &result.lens, &lenses, &what)?;
        check("field", &result.field, &declared, &what)?;
    }
    for lens in header.guaranteed_lenses.iter().flatten() {
        check("lens", lens, &lenses, &|| "header guaranteed_lenses".to_string())?;
    }
    Ok(())
}

fn kind(record: &Record) -> &'static str {
    match record {
        Record::Header(_) => "a header",
        Record::Step(_) => "a step",
        Record::Event(_) => "an event",
        Record::Profile(_) => "a profile",
        Record::Attribution(_) => "an attribution",
        Record::CertificateEnd(_) => "a certificate end",
        Record::Summary(_) => "a summary",
        Record::FormatRun(_) => "a format run",
        Record::Sweep(_) => "a sweep outcome",
    }
}
