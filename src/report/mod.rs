//! Reports: a trace turned into what a person reads.
//!
//! [`analysis`] works out, once, everything a report says, as typed facts and an ordered list of sections
//! ([`attribution`] is the section on which source lines make the error);
//! [`mod@format`] writes every number; [`words`] holds every sentence (the recorder and the verdict use it for the
//! texts they write into the trace); [`render_text`] is the terminal format. The CLI's Markdown, HTML, JSON and
//! CSV render the same [`analysis::Analysis`]; they live in the CLI crate because the HTML plots need `plotters`,
//! which a user's crate that only depends on `twinstep` should not build.

pub mod analysis;
pub mod attribution;
pub mod certificate;
pub mod format;
pub mod sweep;
mod text;
pub mod words;

pub use analysis::Analysis;
pub use text::{render_analysis, render_text};
