//! The report's analysis is the library's, [`twinstep::report::analysis`]: worked out once from a trace, rendered by
//! the terminal text, Markdown, HTML, JSON and CSV alike. This module re-exports it under the CLI's name.

pub use twinstep::report::analysis::*;
pub use twinstep::report::words::CAUTION;
