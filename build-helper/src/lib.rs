//! Twins a whole kernel file from a build script, so that a solver whose kernel lives in its own file module
//! (`mod solver;`) is audited without moving the file's code into an inline module.
//!
//! An attribute on `mod solver;` sees that line only, not the file. A build script can read the file: this crate
//! runs the same engine as `#[twinstep::audit]` (and `twinstep expand`) on it, as if the file were an annotated
//! inline module, and writes the items of the twin module to `$OUT_DIR/twinstep-twins/<path>`, each token on the
//! line it has in the kernel file (so that the sites a lens reports are the kernel's own lines):
//!
//! ```ignore
//! // build.rs
//! fn main() {
//!     twinstep_build::twin_file("src/solver.rs");
//! }
//!
//! // src/lib.rs (or main.rs), beside the unchanged `mod solver;`
//! mod solver;
//! mod solver_twin {
//!     include!(concat!(env!("OUT_DIR"), "/twinstep-twins/src/solver.rs"));
//! }
//! ```
//!
//! The twin module holds the same item names with the float type replaced by a type parameter (`solver_twin::
//! step::<Bound>(…)`, `solver_twin::Grid::<Bound>`), exactly as for `#[twinstep::audit] mod solver { … }`; see
//! `docs/rewrite.md`. What cannot be twinned is reported with the file, line and column of the kernel's own
//! tokens, and the build script stops.

use std::fmt;
use std::path::{Path, PathBuf};

/// The directory under `OUT_DIR` that holds the twins; the runtime shows sites inside it by their path below it.
pub const TWINS_DIR: &str = "twinstep-twins";

/// Why a file could not be twinned.
#[derive(Debug)]
pub enum Error {
    /// `OUT_DIR` is not set: the helper runs outside a build script.
    NoOutDir,
    /// The kernel file could not be read.
    Read { path: PathBuf, source: std::io::Error },
    /// The twin could not be written.
    Write { path: PathBuf, source: std::io::Error },
    /// The options string is not what `#[twinstep::audit(…)]` accepts.
    Options { options: String, message: String },
    /// The file does not parse, or has constructs that cannot be twinned: each with its line and column.
    Source { path: PathBuf, errors: Vec<twinstep_engine::SourceError> },
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::NoOutDir => write!(f, "OUT_DIR is not set: call twinstep_build from a build script (build.rs)"),
            Error::Read { path, source } => write!(f, "cannot read {}: {source}", path.display()),
            Error::Write { path, source } => write!(f, "cannot write {}: {source}", path.display()),
            Error::Options { options, message } => {
                write!(f, "the options {options:?} are not what #[twinstep::audit(…)] accepts: {message}")
            }
            Error::Source { path, errors } => {
                let shown: Vec<String> = errors
                    .iter()
                    .map(|e| format!("{}:{}:{}: {}", path.display(), e.line, e.column, e.message))
                    .collect();
                write!(f, "twinstep cannot twin {}:\n{}", path.display(), shown.join("\n"))
            }
        }
    }
}

impl std::error::Error for Error {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            Error::Read { source, .. } | Error::Write { source, .. } => Some(source),
            _ => None,
        }
    }
}

/// Twins `path` (relative to the package, as `"src/solver.rs"`) with the default options, for a build script:
/// on an error it prints every problem and stops the build.
pub fn twin_file(path: impl AsRef<Path>) {
    twin_file_with(path, "");
}

/// [`twin_file`] with the attribute's options, as written between the parentheses of `#[twinstep::audit(…)]`
/// (`"float = f32"`, `"alias = Real, calls = [flux]"`).
pub fn twin_file_with(path: impl AsRef<Path>, options: &str) {
    if let Err(error) = try_twin_file(path.as_ref(), options) {
        eprintln!("error: {error}");
        std::process::exit(1);
    }
}

/// Twins `path` and writes the twin to `$OUT_DIR/twinstep-twins/<path>`; returns where it went. Tells cargo to
/// run the build script again when the file changes.
pub fn try_twin_file(path: &Path, options: &str) -> Result<PathBuf, Error> {
    let out_dir = std::env::var_os("OUT_DIR").ok_or(Error::NoOutDir)?;
    println!("cargo:rerun-if-changed={}", path.display());
    let source = std::fs::read_to_string(path).map_err(|source| Error::Read { path: path.to_path_buf(), source })?;
    let twin = twin_source(&source, options).map_err(|e| match e {
        SourceFailure::Options(message) => Error::Options { options: options.to_string(), message },
        SourceFailure::Source(errors) => Error::Source { path: path.to_path_buf(), errors },
    })?;
    let relative: PathBuf = path.components().filter(|c| matches!(c, std::path::Component::Normal(_))).collect();
    let target = Path::new(&out_dir).join(TWINS_DIR).join(relative);
    if let Some(parent) = target.parent() {
        std::fs::create_dir_all(parent).map_err(|source| Error::Write { path: parent.to_path_buf(), source })?;
    }
    std::fs::write(&target, twin).map_err(|source| Error::Write { path: target.clone(), source })?;
    Ok(target)
}

/// Why a source could not be twinned: bad options, or problems in the source.
#[derive(Debug)]
pub enum SourceFailure {
    Options(String),
    Source(Vec<twinstep_engine::SourceError>),
}

/// The twin of a kernel file's source, as the items of its twin module on the lines of the source.
pub fn twin_source(source: &str, options: &str) -> Result<String, SourceFailure> {
    let options: twinstep_engine::Options =
        syn::parse_str(options).map_err(|e| SourceFailure::Options(e.to_string()))?;
    let file = syn::parse_file(source).map_err(|e| SourceFailure::Source(twinstep_engine::source_errors(e)))?;
    let items = twinstep_engine::twins_of_file(&options, &file)
        .map_err(|e| SourceFailure::Source(twinstep_engine::source_errors(e)))?;
    Ok(twinstep_engine::layout::on_original_lines(&items))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_file_twins_on_its_own_lines() {
        let source =
            "//! A kernel file.\nuse std::f64::consts::PI;\n\npub fn step(u: &mut [f64]) {\n    u[0] *= 0.5 * PI;\n}\n";
        let twin = twin_source(source, "").expect("the file twins");
        let lines: Vec<&str> = twin.lines().collect();
        assert!(lines[3].contains("pub fn step"), "{twin}");
        assert!(lines[4].contains("from_f64") && lines[4].contains("Constant :: PI"), "{twin}");
        assert!(!twin.contains("#!"), "no inner attribute may reach an include!: {twin}");
        assert!(syn::parse_file(&twin).is_ok(), "{twin}");
    }

    #[test]
    fn problems_name_the_kernels_own_line() {
        let source = "pub fn f(u: &mut [f64]) {\n    let b = u[0].to_bits();\n}\n";
        let Err(SourceFailure::Source(errors)) = twin_source(source, "") else { panic!("to_bits is rejected") };
        assert_eq!((errors[0].line, errors[0].column), (2, 18), "{errors:?}");
        assert!(errors[0].message.contains("to_bits"), "{errors:?}");
    }

    #[test]
    fn bad_options_are_an_error() {
        assert!(matches!(twin_source("pub fn f(u: &mut [f64]) {}", "precision = f16"), Err(SourceFailure::Options(_))));
    }
}
