//! The progress bar of `twinstep run` and `twinstep demo`: steps done, rate, time left, drawn on stderr (only when
//! stderr is a terminal; the caller decides) from the trace the audit is writing.
//!
//! Why from the trace: the audit flushes a record after every recorded step, so the file is the one signal every
//! harness gives, whatever it prints. Only each new complete line's `record`, `step` and the header's planned
//! steps are looked at; the report reads the finished file with the real reader.

use std::io::{Read, Seek, SeekFrom, Write};
use std::path::Path;
use std::process::{Child, ExitStatus};
use std::time::{Duration, Instant};

/// How often the trace is polled. Common practice, no source: fast enough to look live, rare enough to cost nothing.
const POLL: Duration = Duration::from_millis(200);
/// Width of the bar in characters.
const BAR: usize = 28;

/// What the growing trace has told so far.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Progress {
    pub planned: Option<u64>,
    pub done: u64,
    /// The part of a line not yet ended by `\n`.
    pending: Vec<u8>,
}

impl Progress {
    /// Takes in newly appended bytes of the trace.
    pub fn feed(&mut self, bytes: &[u8]) {
        self.pending.extend_from_slice(bytes);
        while let Some(end) = self.pending.iter().position(|b| *b == b'\n') {
            let line: Vec<u8> = self.pending.drain(..=end).collect();
            let Ok(value) = serde_json::from_slice::<serde_json::Value>(&line) else { continue };
            match value.get("record").and_then(|r| r.as_str()) {
                Some("header") => {
                    // The steps this audit runs: `steps_audited` when the writer gives it, else the planned horizon.
                    let audited = value.get("steps_audited").and_then(serde_json::Value::as_u64);
                    self.planned = audited.or_else(|| value.get("steps_planned").and_then(serde_json::Value::as_u64));
                }
                Some("step") => {
                    self.done = self.done.max(value.get("step").and_then(serde_json::Value::as_u64).unwrap_or(0));
                }
                Some("summary") => {
                    let done = value.get("steps_done").and_then(serde_json::Value::as_u64);
                    self.done = self.done.max(done.unwrap_or(self.done));
                }
                _ => {}
            }
        }
    }

    /// The bar line: `[#####-----] 1200/5000 steps  310 steps/s  12 s left`, the rate measured over the
    /// `elapsed` time since `baseline` steps were done (the first look at the trace, which may come late).
    #[must_use]
    pub fn line(&self, elapsed: Duration, baseline: u64) -> String {
        let seconds = elapsed.as_secs_f64();
        let rate = if seconds > 0.0 { self.done.saturating_sub(baseline) as f64 / seconds } else { 0.0 };
        match self.planned.filter(|p| *p > 0) {
            Some(planned) => {
                let fraction = (self.done as f64 / planned as f64).clamp(0.0, 1.0);
                let filled = (fraction * BAR as f64).round() as usize;
                let left = if rate > 0.0 {
                    format!("{:.0} s left", planned.saturating_sub(self.done) as f64 / rate)
                } else {
                    "time left unknown".to_owned()
                };
                format!(
                    "[{}{}] {}/{planned} steps  {rate:.0} steps/s  {left}",
                    "#".repeat(filled),
                    "-".repeat(BAR - filled),
                    self.done
                )
            }
            None => format!("{} steps  {rate:.0} steps/s", self.done),
        }
    }
}

/// Waits for the child, redrawing the bar on stderr from the trace at `path` as it grows.
pub fn follow_child(path: &Path, child: &mut Child) -> std::io::Result<ExitStatus> {
    follow(path, || child.try_wait())
}

/// Polls `finished` until it gives a result, redrawing the bar on stderr from the trace at `path` meanwhile.
pub fn follow<R>(path: &Path, mut finished: impl FnMut() -> std::io::Result<Option<R>>) -> std::io::Result<R> {
    let mut progress = Progress::default();
    let mut offset = 0u64;
    let mut started: Option<(Instant, u64)> = None;
    let mut stderr = std::io::stderr();
    loop {
        if let Some(result) = finished()? {
            // Clear the bar's line (ECMA-48 EL, "erase in line", parameter 2).
            let _ = write!(stderr, "\r\x1b[2K");
            return Ok(result);
        }
        if let Ok(mut file) = std::fs::File::open(path) {
            // A file shorter than what was read is a new trace (truncated and restarted): start over.
            if file.metadata().is_ok_and(|m| m.len() < offset) {
                (progress, offset, started) = (Progress::default(), 0, None);
            }
            let mut fresh = Vec::new();
            if file.seek(SeekFrom::Start(offset)).is_ok() && file.read_to_end(&mut fresh).is_ok() && !fresh.is_empty() {
                offset += fresh.len() as u64;
                progress.feed(&fresh);
                let (since, baseline) = *started.get_or_insert_with(|| (Instant::now(), progress.done));
                let _ = write!(stderr, "\r\x1b[2K{}", progress.line(since.elapsed(), baseline));
                let _ = stderr.flush();
            }
        }
        std::thread::sleep(POLL);
    }
}
