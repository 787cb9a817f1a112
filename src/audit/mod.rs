//! The audit: runs a time loop with one or more lenses beside the plain f64 original, measures every field after
//! every step, and streams what it finds to a trace (`docs/audit.md` shows the harness, `docs/trace.md` the
//! file).
//!
//! Two ways in. A [`Scenario`] describes the fields and gives the initial data and the step, generic over the
//! scalar (`scenario`, written under `#[twinstep::scenario]`); [`Audit`] runs it with every lens on
//! its own thread (`lens_thread`) and the f64 original alongside each (`driver`), and [`Audit::report`] ends a
//! harness's `main`. A [`Recorder`] is for a loop the user keeps as it is: call [`Recorder::record_step`] after
//! each step.

mod driver;
mod field;
mod lens_thread;
mod loop_audit;
mod measure;
mod recorder;
mod scenario;
mod tolerance;

use std::path::PathBuf;

pub use crate::trace::{FieldSpec, RecordPolicy};
pub use driver::Audit;
pub(crate) use field::multi_index;
pub use field::{Field, Levels};
pub use lens_thread::AuditLens;
pub use loop_audit::{capture, record_step, FieldCells, LoopAudit, Snapshot, StepNumber};
pub use recorder::{Plan, Recorder};
pub use scenario::{ProgramFloat, Scenario, Scheme};
pub use tolerance::{ulp, Tolerance};

/// The environment variable that tells a harness where to write its trace: `twinstep run` sets it, and
/// [`Audit::new`] writes there unless [`Audit::trace`] says otherwise.
pub const TRACE_ENV: &str = "TWINSTEP_TRACE";

/// The environment variable `twinstep run` sets for the harness it runs: the CLI renders the report itself, so
/// [`Audit::report`] then prints only where the trace went.
pub const RUN_ENV: &str = "TWINSTEP_RUN";

/// Why an audit could not run, or stopped.
#[derive(Debug)]
pub enum Error {
    /// A tolerance parameter is zero, negative, infinite or NaN.
    BadTolerance { parameter: &'static str, value: f64 },
    /// The audit has no fields.
    NoFields,
    /// A loop audit's runs ended without one `record!` reaching the audit: nothing was recorded.
    NothingRecorded,
    /// The audit has no lenses.
    NoLenses,
    /// The audit would run zero steps.
    ZeroSteps,
    /// The planned horizon is shorter than the steps audited.
    HorizonTooShort { steps: u64, horizon: u64 },
    /// Two fields share a name.
    DuplicateField { name: String },
    /// A field's shape has a zero extent or too many cells.
    BadShape { field: String, shape: Vec<usize> },
    /// Data given for a field does not match its shape.
    LengthMismatch { field: String, expected: usize, got: usize },
    /// The default `Scenario::init` was given initial values for another number of fields (or none: the scenario
    /// neither overrides `init` nor gives `initial_values`).
    InitialValues { fields: usize, given: usize },
    /// The fields passed to a recorder are not the ones it was created with.
    FieldCountMismatch { expected: usize, got: usize },
    /// A recorder was given a step that does not come after the previous one.
    StepOrder { previous: u64, got: u64 },
    /// The same lens was added twice.
    DuplicateLens { lens: String },
    /// The calling thread collects the lens's events already (a `Recorder` of it is alive there), so the audit's
    /// lens thread would wait for it forever.
    LensCollectedHere { lens: String },
    /// A recorder was given values of a lens it was not created for.
    UnknownLens { lens: String },
    /// The certified lens's certificate could not be set up for these levels (too many cells for its ids, or a
    /// colouring in the options made for other levels).
    Certificate { lens: String, reason: crate::certificate::SetupError },
    /// The trace file could not be created.
    TraceCreate { path: PathBuf, source: std::io::Error },
    /// Writing to the trace file failed.
    TraceWrite { path: PathBuf, source: std::io::Error },
    /// The user's initial data or step panicked in a lens's run.
    ScenarioPanicked { lens: String, step: u64, message: String },
    /// The attribution an audit was asked for cannot be made as asked (`Audit::attribute_with`).
    BadAttribution { reason: String },
    /// The precision sweep asked for with [`Audit::sweep`] cannot run as asked, or one of its runs failed.
    Sweep(Box<crate::sweep::SweepError>),
}

impl std::fmt::Display for Error {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Error::BadTolerance { parameter, value } => {
                write!(f, "tolerance parameter {parameter} = {value} must be finite and greater than zero")
            }
            Error::NoFields => write!(f, "the audit has no fields"),
            Error::NothingRecorded => write!(
                f,
                "the loop ran to its end but no twinstep::record! call reached the audit: call \
                 twinstep::record!(step, fields…) once per step on the loop's own thread (a call inside a rayon \
                 closure or a thread the loop spawns finds no audit and records nothing), in the function the audit \
                 runs"
            ),
            Error::NoLenses => write!(f, "the audit has no lenses: add one with .lens::<L>()"),
            Error::ZeroSteps => write!(f, "the audit would run zero steps"),
            Error::HorizonTooShort { steps, horizon } => {
                write!(f, "the planned horizon ({horizon} steps) is shorter than the {steps} steps audited")
            }
            Error::DuplicateField { name } => write!(f, "two fields are named {name:?}"),
            Error::BadShape { field, shape } => {
                write!(f, "field {field:?} has shape {shape:?}: every extent must be at least 1 and the cells must fit")
            }
            Error::LengthMismatch { field, expected, got } => {
                write!(f, "field {field:?} has {expected} cells by its shape but {got} values were given")
            }
            Error::InitialValues { fields, given } => write!(
                f,
                "the scenario has {fields} field(s) but its initial_values give {given}: give one vector per field, \
or override init"
            ),
            Error::FieldCountMismatch { expected, got } => {
                write!(f, "the recorder was created with {expected} fields but {got} were given")
            }
            Error::StepOrder { previous, got } => {
                write!(f, "step {got} recorded after step {previous}: steps must increase")
            }
            Error::DuplicateLens { lens } => write!(f, "lens {lens} was added twice"),
            Error::LensCollectedHere { lens } => write!(
                f,
                "this thread already collects the events of lens {lens} (a Recorder of it is alive here): finish \
that recorder before auditing the same lens"
            ),
            Error::UnknownLens { lens } => write!(f, "the recorder was not created for lens {lens:?}"),
            Error::Certificate { lens, reason } => write!(f, "the certificate of lens {lens} cannot start: {reason}"),
            Error::TraceCreate { path, source } => write!(f, "cannot create trace {}: {source}", path.display()),
            Error::TraceWrite { path, source } => write!(f, "cannot write trace {}: {source}", path.display()),
            Error::ScenarioPanicked { lens, step, message } => {
                write!(f, "the scenario panicked in lens {lens} at step {step}: {message}")
            }
            Error::BadAttribution { reason } => write!(f, "the attribution cannot run as asked: {reason}"),
            Error::Sweep(e) => write!(f, "the precision sweep: {e}"),
        }
    }
}

impl Error {
    /// The exit code a harness returns for this error (`docs/cli.md`): 3 when the audited program itself failed
    /// (a panic in the scenario's `init` or `step`), 2 for everything else — a mistake in the harness's setup
    /// (tolerance, fields, lenses, steps, initial data) or a trace that cannot be written.
    #[must_use]
    pub fn exit_code(&self) -> u8 {
        match self {
            Error::ScenarioPanicked { .. } => 3,
            // A run of the sweep failed as the audit would have: the same code.
            Error::Sweep(e) => match e.as_ref() {
                crate::sweep::SweepError::Audit { source, .. } => source.exit_code(),
                _ => 2,
            },
            _ => 2,
        }
    }
}

impl std::error::Error for Error {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            Error::TraceCreate { source, .. } | Error::TraceWrite { source, .. } => Some(source),
            Error::Sweep(e) => Some(e.as_ref()),
            _ => None,
        }
    }
}

/// Checks a list of field specs: at least one, unique names, shapes with cells.
pub(crate) fn validate_fields(fields: &[FieldSpec]) -> Result<(), Error> {
    if fields.is_empty() {
        return Err(Error::NoFields);
    }
    for (i, spec) in fields.iter().enumerate() {
        if spec.shape.is_empty() || spec.shape.contains(&0) || spec.cells().is_none() {
            return Err(Error::BadShape { field: spec.name.clone(), shape: spec.shape.clone() });
        }
        if fields[..i].iter().any(|other| other.name == spec.name) {
            return Err(Error::DuplicateField { name: spec.name.clone() });
        }
    }
    Ok(())
}
