//! Files in and out: reading a trace from a path (a directory, a missing or unreadable file each get their own
//! message) and writing a report to a path or stdout.

use crate::failure::Failure;
use crate::trace::{self, Trace};
use std::io::Write;
use std::path::Path;

/// Reads and parses the trace at `path`.
pub fn read_trace(path: &Path) -> Result<Trace, Failure> {
    let name = path.display().to_string();
    if path.is_dir() {
        return Err(Failure::input(format!("{name}: is a directory, not a trace file")));
    }
    let file = std::fs::File::open(path).map_err(|e| Failure::input(format!("{name}: cannot open: {}", plain(&e))))?;
    trace::read(std::io::BufReader::new(file)).map_err(|e| Failure::input(e.with_file(&name)))
}

/// Writes `text` to `path`, or to stdout when there is no path.
pub fn write_output(path: Option<&Path>, text: &str) -> Result<(), Failure> {
    match path {
        Some(path) => std::fs::write(path, text)
            .map_err(|e| Failure::input(format!("{}: cannot write: {}", path.display(), plain(&e)))),
        None => {
            let mut stdout = std::io::stdout().lock();
            // A closed pipe (`twinstep report … | head`) is not an error worth a message.
            match stdout.write_all(text.as_bytes()).and_then(|()| stdout.flush()) {
                Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => {
                    Err(Failure::input(format!("stdout: cannot write: {}", plain(&e))))
                }
                _ => Ok(()),
            }
        }
    }
}

/// An I/O error without the `(os error N)` suffix, which says nothing to a user.
#[must_use]
pub fn plain(error: &std::io::Error) -> String {
    let text = error.to_string();
    match text.find(" (os error") {
        Some(i) => text[..i].to_owned(),
        None => text,
    }
}

/// Parses a trace held in memory (what [`read_trace`] does after opening the file); the error is the reader's,
/// without the file name.
pub fn parse_trace(bytes: &[u8]) -> Result<Trace, trace::TraceError> {
    trace::parse(bytes)
}

/// Removes a file left by an earlier run, if there is one.
pub fn remove_stale(path: &Path) -> Result<(), Failure> {
    match std::fs::remove_file(path) {
        Err(e) if e.kind() != std::io::ErrorKind::NotFound => {
            Err(Failure::input(format!("{}: cannot replace: {}", path.display(), plain(&e))))
        }
        _ => Ok(()),
    }
}
