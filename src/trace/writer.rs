//! Streams trace records to a file, one JSON object per line, flushed after every record.
//!
//! Why flush every record: a run killed at any moment must leave a prefix the reader accepts. Records are
//! few (the recorder thins steps out), so the flushes cost little.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use super::Record;
use crate::audit::Error;

/// An open trace file.
#[derive(Debug)]
pub struct TraceWriter {
    path: PathBuf,
    out: BufWriter<File>,
}

impl TraceWriter {
    /// Creates (or truncates) the trace file, creating missing parent directories.
    pub fn create(path: &Path) -> Result<TraceWriter, Error> {
        let fail = |source| Error::TraceCreate { path: path.to_path_buf(), source };
        if let Some(parent) = path.parent().filter(|p| !p.as_os_str().is_empty()) {
            std::fs::create_dir_all(parent).map_err(fail)?;
        }
        let file = File::create(path).map_err(fail)?;
        Ok(TraceWriter { path: path.to_path_buf(), out: BufWriter::new(file) })
    }

    /// The file's path.
    #[must_use]
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Writes one record as one line and flushes it to the file.
    pub fn write(&mut self, record: &Record) -> Result<(), Error> {
        let fail = |source| Error::TraceWrite { path: self.path.clone(), source };
        // serde_json writes NaN and infinities as null; the reader maps them back to NaN.
        serde_json::to_writer(&mut self.out, record).map_err(|e| fail(std::io::Error::other(e)))?;
        self.out.write_all(b"\n").map_err(fail)?;
        self.out.flush().map_err(fail)
    }
}
