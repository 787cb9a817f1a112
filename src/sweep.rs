//! The precision sweep: runs a scenario as if the program computed in each of several formats — binary64,
//! binary32, bfloat16, binary16 by default — then finds by bisection the least precision p (2 ≤ p ≤ 53, 53 being
//! binary64) whose run meets the tolerance up to the horizon, and, where even binary64 does not, extrapolates the
//! bits needed from the measured law of error against p.
//!
//! Two ways in: [`Sweep`] on its own, or [`Audit::sweep`] beside a lens audit, whose trace then receives the
//! sweep's records (every format's run going to a trace beside it); both run the one [`Sweep::run`] with a
//! [`SweepPlan`].
//!
//! Each format's run is an ordinary audit through the public builder ([`Audit`]) with one lens: [`Shadow`] for
//! binary64 (the program's own arithmetic), [`Binary32`], [`Bfloat16`], [`Binary16`], or [`Bits`] for a p-bit
//! format — each the program's primal in that format beside the same double-double reference. Two cheaper
//! references come first where they can stand. bfloat16 and binary16 beside a binary32 run compute in binary32
//! words with a binary32 reference ([`crate::lens::narrow::InBinary32`]: [`Bfloat16B32`], [`Binary16B32`], about
//! a third of the cost of the next), kept only when binary32's own error, as the binary32 run measured it, stays
//! below [`REFERENCE_MARGIN`] times the format's error at every step both runs recorded. Else a format of at most
//! [`NARROW_REFERENCE_BITS`] bits beside binary64 takes the same primal with a binary64 reference
//! ([`crate::lens::narrow`]: [`Binary32B64`], …; binary32 then costs about a third), kept on the same test
//! against binary64's error. Otherwise the format runs with the double-double lens. binary64 runs first and
//! binary32 second, so that their runs can measure the others. Every run writes its own trace; the sweep then
//! appends one `format_run` record per run and one `sweep` record to the main trace (the binary64 run's, else the
//! first run's), so a reader of that one file has every format's curve and the outcome (`docs/trace.md`).
//!
//! **Assumptions.** The bisection assumes that the error at the horizon does not grow with the precision (more bits,
//! no more error), which holds for the schemes twinstep audits as long as no run takes another branch; a run that
//! does is still recorded, and the runs' numbers show it. The p-bit runs use one exponent range (binary64's by
//! default, [`Sweep::exponent_range`]), so between bfloat16 (8 bits) and binary32 (24) they isolate the precision.
//! The extrapolation fits `log2 err ≈ a + b·p` by least squares to the runs whose error at the horizon is positive,
//! finite and below the field's largest magnitude (a run whose error is as large as the values says nothing about
//! the law), and solves it for the error the tolerance allows.
//!
//! twinstep judges rounding error only, not discretization or modelling error; results that feed safety-relevant
//! engineering decisions go through the verification and validation practice and codes that apply locally, and
//! licensed review.
//!
//! The result ([`SweepOutcome`]) is plain data — names and numbers, no prose — for the report renderers.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::audit::{Audit, AuditLens, Error as AuditError, Levels, Plan, Scenario, Tolerance};
use crate::lens::{
    bits_format_scope, Bfloat16, Bfloat16B32, Bfloat16B64, Binary16, Binary16B32, Binary16B64, Binary32, Binary32B64,
    Bits, BitsB64, Format, FormatError, Shadow,
};
use crate::trace::{Record, Status, Trace};

/// The precision of binary64, which a sweep runs natively (IEEE 754-2019 Table 3.5, p = 53).
pub const BINARY64_BITS: u32 = 53;
/// The precision of a double-double (two binary64 significands; common practice, no source): what the sweep
/// suggests for a field that needs more than binary64 and at most this many bits.
pub const DOUBLE_DOUBLE_BITS: f64 = 106.0;
/// The widest format a binary64 reference serves in a sweep: 53 − 24 = 29 bits more than the primal, so the
/// reference's own rounding is about 2^-29 of the primal's at each operation (see [`crate::lens::narrow`]).
pub const NARROW_REFERENCE_BITS: u32 = 24;
/// How small binary64's (binary32's) own error must stay against a format's error, at every step both runs
/// recorded, for the format's binary64-referenced (binary32-word) run to stand: 2^-10, so the format's error is
/// right to about three digits (the estimate is off by at most the reference's own error; common practice, no
/// source).
pub const REFERENCE_MARGIN: f64 = 1.0 / 1024.0;

/// The runs a sweep measures its cheaper references with: a format's run with a binary64 (binary32) reference
/// stands only if binary64's (binary32's) own error, as that format's run measured it, is small against the
/// format's error.
#[derive(Clone, Copy, Debug, Default)]
struct Measures<'a> {
    binary64: Option<&'a FormatRun>,
    binary32: Option<&'a FormatRun>,
}

/// The reference of a format's run.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum ReferenceWord {
    /// Binary32 words ([`crate::lens::narrow::InBinary32`]: bfloat16 and binary16).
    Binary32,
    /// A binary64 reference ([`crate::lens::narrow`]).
    Binary64,
    /// The double-double shadow.
    DoubleDouble,
}

/// A format a sweep runs.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum SweepFormat {
    /// The program's own binary64 arithmetic.
    Binary64,
    /// An emulated format: binary32, bfloat16, binary16 or p bits.
    Emulated(Format),
}

impl SweepFormat {
    /// binary32, emulated.
    pub const BINARY32: SweepFormat = SweepFormat::Emulated(Format::BINARY32);
    /// bfloat16, emulated.
    pub const BFLOAT16: SweepFormat = SweepFormat::Emulated(Format::BFLOAT16);
    /// binary16, emulated.
    pub const BINARY16: SweepFormat = SweepFormat::Emulated(Format::BINARY16);
    /// The formats a sweep runs unless told otherwise.
    pub const STANDARD: [SweepFormat; 4] =
        [SweepFormat::Binary64, SweepFormat::BINARY32, SweepFormat::BFLOAT16, SweepFormat::BINARY16];

    /// A p-bit format with binary64's exponent range (an error for p outside 2..=53; 53 is binary64).
    pub fn bits(p: u32) -> Result<SweepFormat, FormatError> {
        if p == BINARY64_BITS {
            Ok(SweepFormat::Binary64)
        } else {
            Format::bits(p).map(SweepFormat::Emulated)
        }
    }

    /// Significand bits.
    #[must_use]
    pub fn bits_of(self) -> u32 {
        match self {
            SweepFormat::Binary64 => BINARY64_BITS,
            SweepFormat::Emulated(f) => f.precision(),
        }
    }

    /// The exponent range `(emin, emax)`.
    #[must_use]
    pub fn exponents(self) -> (i32, i32) {
        match self {
            SweepFormat::Binary64 => Format::BINARY64_EXPONENTS,
            SweepFormat::Emulated(f) => (f.emin(), f.emax()),
        }
    }

    /// Whether the format has a lens in binary32 words (bfloat16 and binary16; [`Format::fits_binary32`]).
    #[must_use]
    pub fn fits_binary32_words(self) -> bool {
        matches!(self, SweepFormat::Emulated(Format::BFLOAT16 | Format::BINARY16))
    }

    /// The format's name: `binary64`, `binary32`, `bfloat16`, `binary16`, `p38` (see [`Format::name`]).
    #[must_use]
    pub fn name(self) -> String {
        match self {
            SweepFormat::Binary64 => "binary64".into(),
            SweepFormat::Emulated(f) => f.name(),
        }
    }
}

/// Why a sweep run it was asked to run the way it was asked.
#[derive(Debug)]
pub enum SweepError {
    /// The sweep was given no format.
    NoFormats,
    /// A format or exponent range cannot be emulated.
    Format(FormatError),
    /// The initial data do not fit the exponent range of a p-bit format the sweep would run.
    DataOutOfRange { format: String, field: String, value: f64, largest: f64 },
    /// A format's audit failed.
    Audit { format: String, source: AuditError },
    /// The sweep's records could not be appended to the main trace.
    TraceAppend { path: PathBuf, source: std::io::Error },
}

impl std::fmt::Display for SweepError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SweepError::NoFormats => write!(f, "the precision sweep has no formats: give at least one"),
            SweepError::Format(e) => write!(f, "{e}"),
            SweepError::DataOutOfRange { format, field, value, largest } => write!(
                f,
                "the initial data of field {field:?} do not fit format {format}: {value:e} exceeds its largest value \
{largest:e}; choose a wider exponent range"
            ),
            SweepError::Audit { format, source } => write!(f, "the audit in format {format} failed: {source}"),
            SweepError::TraceAppend { path, source } => {
                write!(f, "cannot append the sweep's records to {}: {source}", path.display())
            }
        }
    }
}

impl std::error::Error for SweepError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            SweepError::Format(e) => Some(e),
            SweepError::Audit { source, .. } => Some(source),
            SweepError::TraceAppend { source, .. } => Some(source),
            _ => None,
        }
    }
}

impl From<FormatError> for SweepError {
    fn from(e: FormatError) -> SweepError {
        SweepError::Format(e)
    }
}

/// Why a format was run: asked for, or a step of the bisection.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RunRole {
    Asked,
    Bisection,
}

/// One field of one format's run.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FormatField {
    pub name: String,
    /// The first step whose error exceeds the tolerance, if any.
    pub first_crossing: Option<u64>,
    /// The largest error estimate at the last audited step.
    pub final_max_err: f64,
    /// The error at the horizon: the last step's when the audit ran the whole horizon, else the fitted growth law's
    /// extrapolation (the last step's when no law could be fitted).
    pub horizon_err: f64,
    /// The error the tolerance allows at the worst cell of the last step.
    pub allowed_err: f64,
    /// The largest `|u|` of the field at the last step.
    pub max_abs: f64,
    /// `(step, largest error estimate)` at the steps the run's trace recorded (log-spaced, denser near events).
    pub history: Vec<(u64, f64)>,
}

/// One format's run (the `format_run` trace record).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FormatRun {
    /// `binary64`, `binary32`, `bfloat16`, `binary16`, `p38`, …
    pub format: String,
    /// The lens the run used.
    pub lens: String,
    pub bits: u32,
    pub emin: i32,
    pub emax: i32,
    pub role: RunRole,
    /// Whether the run meets the tolerance at every field up to the horizon (its verdict is `enough`).
    pub meets: bool,
    /// The run's own trace.
    pub trace: PathBuf,
    pub fields: Vec<FormatField>,
}

/// A fitted law of the error at the horizon against the precision: `log2 err ≈ a + b·p`.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct PrecisionLaw {
    pub a: f64,
    pub b: f64,
    /// How many runs the fit used.
    pub points: usize,
}

impl PrecisionLaw {
    /// The law's error at `p` bits: `2^(a + b·p)`.
    #[must_use]
    pub fn at(&self, p: f64) -> f64 {
        (self.a + self.b * p).exp2()
    }
}

/// What to use for a field that binary64 does not carry to the horizon.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Remedy {
    /// Double-double (about 106 bits) is enough by the fitted law.
    DoubleDouble,
    /// More than double-double, by the fitted law.
    BeyondDoubleDouble,
    /// The runs do not give a law (too few usable points, or error that does not fall with p).
    Unknown,
}

/// A field binary64 does not carry to the horizon, with the bits the fitted law says it needs.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct NeededBits {
    pub field: String,
    /// The bits at which the law reaches the allowed error (fractional; `None` without a law).
    pub bits: Option<f64>,
    pub law: Option<PrecisionLaw>,
    pub remedy: Remedy,
}

/// The sweep's outcome (the `sweep` trace record).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SweepSummary {
    /// The least precision (bits, 53 = binary64) whose run meets the tolerance up to the horizon; `None` when no
    /// run up to binary64 does.
    pub least_bits: Option<u32>,
    /// The exponent range of the bisection's p-bit runs.
    pub bisection_emin: i32,
    pub bisection_emax: i32,
    /// The steps audited and the horizon judged.
    pub steps: u64,
    pub horizon: u64,
    /// Where binary64 is not enough: the fields and the bits they need.
    pub needed: Vec<NeededBits>,
}

/// Everything a sweep found: every run, and the summary.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepOutcome {
    pub runs: Vec<FormatRun>,
    pub summary: SweepSummary,
    /// The main trace, which holds the records of every run after its own summary.
    pub trace: PathBuf,
}

impl SweepOutcome {
    /// The run of a format, by name (`binary32`, …; the last one when several runs share it).
    #[must_use]
    pub fn run(&self, format: &str) -> Option<&FormatRun> {
        self.runs.iter().rev().find(|r| r.format == format)
    }
}

/// What a sweep runs: the formats, the exponent range of the bisection's p-bit formats, whether it bisects, and
/// how many steps each format's run audits. One value serves both ways in: [`Sweep`] (a sweep on its own) and
/// [`Audit::sweep`] (a sweep beside a lens audit, in the same trace).
#[derive(Clone, Debug, PartialEq)]
pub struct SweepPlan {
    formats: Vec<SweepFormat>,
    exponents: (i32, i32),
    bisect: bool,
    steps: Option<u64>,
}

impl Default for SweepPlan {
    fn default() -> SweepPlan {
        SweepPlan::standard()
    }
}

impl SweepPlan {
    /// [`SweepFormat::STANDARD`], binary64's exponent range, with bisection, every run auditing the steps of the
    /// sweep (or of the audit it is part of).
    #[must_use]
    pub fn standard() -> SweepPlan {
        SweepPlan {
            formats: SweepFormat::STANDARD.to_vec(),
            exponents: Format::BINARY64_EXPONENTS,
            bisect: true,
            steps: None,
        }
    }

    /// The formats to run instead of the standard four (an empty list is an error when the sweep runs).
    #[must_use]
    pub fn formats(mut self, formats: &[SweepFormat]) -> Self {
        self.formats = formats.to_vec();
        self
    }

    /// The exponent range of the bisection's p-bit formats (binary64's by default).
    pub fn exponent_range(mut self, emin: i32, emax: i32) -> Result<Self, SweepError> {
        Format::new(2, emin, emax)?;
        self.exponents = (emin, emax);
        Ok(self)
    }

    /// Runs the asked formats only, without the bisection.
    #[must_use]
    pub fn without_bisection(mut self) -> Self {
        self.bisect = false;
        self
    }

    /// Each format's run audits this many steps (at most those of the sweep or audit) and is judged at the same
    /// horizon, beyond the audited steps by its fitted growth law: a cheaper sweep of a long run. Zero is an error
    /// when the sweep runs.
    #[must_use]
    pub fn audited_steps(mut self, steps: u64) -> Self {
        self.steps = Some(steps);
        self
    }
}

/// A precision sweep of a scenario: built like an [`Audit`], run with [`Sweep::run`].
pub struct Sweep<'s, S: Scenario> {
    scenario: &'s S,
    tolerance: Tolerance,
    steps: u64,
    horizon: Option<u64>,
    kernel: Option<String>,
    description: Option<String>,
    trace: PathBuf,
    plan: SweepPlan,
    /// The main trace is an existing one (a lens audit's) that the sweep appends to; every format runs into a
    /// trace of its own beside it.
    attached: bool,
}

impl<'s, S: Scenario> Sweep<'s, S> {
    /// A sweep of `steps` steps of `scenario` against `tolerance`, over [`SweepFormat::STANDARD`], with bisection.
    /// The main trace goes where an [`Audit`] of the scenario would write it unless [`Sweep::trace`] says
    /// otherwise; each format's own trace goes beside it (`NAME.FORMAT.jsonl`).
    pub fn new(scenario: &'s S, tolerance: Tolerance, steps: u64) -> Sweep<'s, S> {
        let trace = std::env::var_os("TWINSTEP_TRACE").map_or_else(
            || std::env::temp_dir().join(format!("twinstep-sweep-{}.jsonl", std::process::id())),
            PathBuf::from,
        );
        Sweep {
            scenario,
            tolerance,
            steps,
            horizon: None,
            kernel: None,
            description: None,
            trace,
            plan: SweepPlan::standard(),
            attached: false,
        }
    }

    /// The sweep of an audit's plan ([`Audit::sweep`]): its records go into the audit's finished trace at
    /// `main`, and every format's run into its own trace beside it.
    pub(crate) fn attached(scenario: &'s S, audit: &Plan, plan: SweepPlan) -> Sweep<'s, S> {
        Sweep {
            scenario,
            tolerance: audit.tolerance,
            steps: audit.steps,
            horizon: Some(audit.horizon),
            kernel: Some(audit.kernel.clone()),
            description: (!audit.scenario.is_empty()).then(|| audit.scenario.clone()),
            trace: audit.trace.clone(),
            plan,
            attached: true,
        }
    }

    /// The kernel's name, for every trace.
    #[must_use]
    pub fn kernel(mut self, name: &str) -> Self {
        self.kernel = Some(name.to_string());
        self
    }

    /// A line describing the run.
    #[must_use]
    pub fn describe(mut self, text: &str) -> Self {
        self.description = Some(text.to_string());
        self
    }

    /// The steps the user plans to run, when more than those audited (see [`Audit::horizon`]).
    #[must_use]
    pub fn horizon(mut self, steps: u64) -> Self {
        self.horizon = Some(steps);
        self
    }

    /// Where the main trace goes.
    #[must_use]
    pub fn trace(mut self, path: impl Into<PathBuf>) -> Self {
        self.trace = path.into();
        self
    }

    /// Everything the sweep runs at once (formats, exponent range, bisection, audited steps).
    #[must_use]
    pub fn plan(mut self, plan: SweepPlan) -> Self {
        self.plan = plan;
        self
    }

    /// The formats to run instead of the standard four (an empty list is an error at [`Sweep::run`]).
    #[must_use]
    pub fn formats(mut self, formats: &[SweepFormat]) -> Self {
        self.plan = self.plan.formats(formats);
        self
    }

    /// The exponent range of the bisection's p-bit formats (binary64's by default).
    pub fn exponent_range(mut self, emin: i32, emax: i32) -> Result<Self, SweepError> {
        self.plan = self.plan.exponent_range(emin, emax)?;
        Ok(self)
    }

    /// Runs the asked formats only, without the bisection.
    #[must_use]
    pub fn without_bisection(mut self) -> Self {
        self.plan = self.plan.without_bisection();
        self
    }

    /// The steps each format's run audits: the plan's, at most the sweep's own.
    fn audited(&self) -> u64 {
        self.plan.steps.map_or(self.steps, |n| n.min(self.steps))
    }

    /// The horizon every run is judged at.
    fn judged_horizon(&self) -> u64 {
        self.horizon.unwrap_or(self.steps).max(self.steps)
    }

    /// Checks what needs no run and no file: formats, audited steps, the data's range.
    pub(crate) fn validate(&self) -> Result<(), SweepError> {
        if self.plan.formats.is_empty() {
            return Err(SweepError::NoFormats);
        }
        if self.audited() == 0 {
            return Err(SweepError::Audit { format: "every format".into(), source: AuditError::ZeroSteps });
        }
        let (emin, emax) = self.plan.exponents;
        // The data must fit every p-bit format the sweep runs: the asked ones and, with bisection, its range.
        let mut checked: Vec<Format> = self
            .plan
            .formats
            .iter()
            .filter_map(|f| if let SweepFormat::Emulated(e) = f { Some(*e) } else { None })
            .collect();
        checked.retain(|f| ![Format::BINARY32, Format::BFLOAT16, Format::BINARY16].contains(f));
        if self.plan.bisect {
            checked.push(Format::new(2, emin, emax)?);
        }
        self.check_data(&checked)
    }

    /// Runs every format, bisects, extrapolates, and appends the records to the main trace.
    pub fn run(self) -> Result<SweepOutcome, SweepError> {
        self.validate()?;
        let (emin, emax) = self.plan.exponents;
        let bisection_format = |p: u32| -> Result<SweepFormat, SweepError> {
            Ok(if p == BINARY64_BITS {
                SweepFormat::Binary64
            } else {
                SweepFormat::Emulated(Format::new(p, emin, emax)?)
            })
        };
        // A sweep of its own writes its binary64 run (else its first) into the main trace; an attached one appends
        // to a trace that exists, and every run goes beside it.
        let binary64_at = self.plan.formats.iter().position(|f| *f == SweepFormat::Binary64);
        let main = (!self.attached).then(|| binary64_at.unwrap_or(0));
        let path_of =
            |i: usize, format: SweepFormat| if Some(i) == main { self.trace.clone() } else { self.side_trace(format) };
        // binary64 first, then binary32 (measured with binary64's help), so that the narrower formats can take
        // their runs as the measures of their references.
        let binary64 = binary64_at
            .map(|i| {
                let path = path_of(i, SweepFormat::Binary64);
                self.run_format(SweepFormat::Binary64, RunRole::Asked, path, Measures::default())
            })
            .transpose()?;
        let binary32_at = self.plan.formats.iter().position(|f| *f == SweepFormat::BINARY32);
        let binary32 = binary32_at
            .map(|i| {
                let measures = Measures { binary64: binary64.as_ref(), binary32: None };
                self.run_format(SweepFormat::BINARY32, RunRole::Asked, path_of(i, SweepFormat::BINARY32), measures)
            })
            .transpose()?;
        let measures = Measures { binary64: binary64.as_ref(), binary32: binary32.as_ref() };
        let mut runs = Vec::new();
        for (i, format) in self.plan.formats.iter().enumerate() {
            let run = match (&binary64, &binary32) {
                (Some(run), _) if Some(i) == binary64_at => run.clone(),
                (_, Some(run)) if Some(i) == binary32_at => run.clone(),
                _ => self.run_format(*format, RunRole::Asked, path_of(i, *format), measures)?,
            };
            runs.push(run);
        }
        if self.plan.bisect {
            // Between the least precision that meets and the greatest below it that does not (or p = 1).
            if let Some(mut hi) = runs.iter().filter(|r| r.meets).map(|r| r.bits).min() {
                let mut lo = runs.iter().filter(|r| !r.meets && r.bits < hi).map(|r| r.bits).max().unwrap_or(1);
                while hi - lo > 1 {
                    let mid = lo + (hi - lo) / 2;
                    let format = bisection_format(mid)?;
                    let run = self.run_format(format, RunRole::Bisection, self.side_trace(format), measures)?;
                    if run.meets {
                        hi = mid;
                    } else {
                        lo = mid;
                    }
                    runs.push(run);
                }
            }
        }
        let least_bits = runs.iter().filter(|r| r.meets).map(|r| r.bits).min();
        let widest = runs.iter().max_by_key(|r| r.bits).filter(|r| !r.meets);
        let needed = widest.map_or_else(Vec::new, |w| needed_bits(&runs, w));
        let summary = SweepSummary {
            least_bits,
            bisection_emin: emin,
            bisection_emax: emax,
            steps: self.audited(),
            horizon: self.judged_horizon(),
            needed,
        };
        let trace = main.map_or_else(|| self.trace.clone(), |m| runs[m].trace.clone());
        append_records(&trace, &runs, &summary)?;
        Ok(SweepOutcome { runs, summary, trace })
    }

    /// Checks the initial data of the plain f64 original against the range of each format.
    fn check_data(&self, formats: &[Format]) -> Result<(), SweepError> {
        if formats.is_empty() {
            return Ok(());
        }
        let specs = self.scenario.fields();
        let mut levels = Levels::<f64>::new(&specs, 3, self.scenario.stages());
        self.scenario
            .init_original(&mut levels)
            .map_err(|source| SweepError::Audit { format: "binary64".into(), source })?;
        for format in formats {
            for field in levels.current.iter().chain(&levels.previous) {
                if let Some(&value) = field.values().iter().find(|x| !format.holds_magnitude(**x)) {
                    return Err(SweepError::DataOutOfRange {
                        format: format.name(),
                        field: field.name().to_string(),
                        value,
                        largest: format.max_value(),
                    });
                }
            }
        }
        Ok(())
    }

    /// `NAME.FORMAT.jsonl` beside the main trace.
    fn side_trace(&self, format: SweepFormat) -> PathBuf {
        let stem = self.trace.file_stem().map_or_else(|| "sweep".into(), |s| s.to_string_lossy().into_owned());
        self.trace.with_file_name(format!("{stem}.{}.jsonl", format.name()))
    }

    /// One format's audit, and what the sweep keeps of it, with the cheapest reference that stands (see the
    /// module paragraph): binary32 words for bfloat16 and binary16 when the binary32 run is in `measures`, kept
    /// when binary32's error is small against the format's; else a binary64 reference for a format of at most
    /// [`NARROW_REFERENCE_BITS`] bits when the binary64 run is in `measures`, kept when binary64's error is small
    /// against the format's; else the double-double. Each try writes the same trace.
    fn run_format(
        &self,
        format: SweepFormat,
        role: RunRole,
        path: PathBuf,
        measures: Measures<'_>,
    ) -> Result<FormatRun, SweepError> {
        let tiers = [
            (ReferenceWord::Binary32, measures.binary32.filter(|_| format.fits_binary32_words())),
            (ReferenceWord::Binary64, measures.binary64.filter(|_| format.bits_of() <= NARROW_REFERENCE_BITS)),
        ];
        for (word, measure) in tiers {
            let Some(measure) = measure else { continue };
            let run = self.run_with(format, role, &path, word)?;
            if reference_stands(&run, measure) {
                return Ok(run);
            }
        }
        self.run_with(format, role, &path, ReferenceWord::DoubleDouble)
    }

    /// One format's audit with the lens of `word`'s reference.
    fn run_with(
        &self,
        format: SweepFormat,
        role: RunRole,
        path: &Path,
        word: ReferenceWord,
    ) -> Result<FormatRun, SweepError> {
        let trace = match (format, word) {
            (SweepFormat::Binary64, _) => self.audit::<Shadow>(path),
            (SweepFormat::Emulated(Format::BFLOAT16), ReferenceWord::Binary32) => self.audit::<Bfloat16B32>(path),
            (SweepFormat::Emulated(Format::BINARY16), ReferenceWord::Binary32) => self.audit::<Binary16B32>(path),
            (SweepFormat::Emulated(f), ReferenceWord::Binary64 | ReferenceWord::Binary32) => {
                self.audit_in::<Binary32B64, Bfloat16B64, Binary16B64, BitsB64>(f, path)
            }
            (SweepFormat::Emulated(f), ReferenceWord::DoubleDouble) => {
                self.audit_in::<Binary32, Bfloat16, Binary16, Bits>(f, path)
            }
        }
        .map_err(|source| SweepError::Audit { format: format.name(), source })?;
        Ok(self.format_run(format, role, path.to_path_buf(), &trace))
    }

    /// What the sweep keeps of a format's trace.
    fn format_run(&self, format: SweepFormat, role: RunRole, path: PathBuf, trace: &Trace) -> FormatRun {
        let (emin, emax) = format.exponents();
        FormatRun {
            format: format.name(),
            lens: trace.header.lenses.first().cloned().unwrap_or_default(),
            bits: format.bits_of(),
            emin,
            emax,
            role,
            meets: trace.summary.as_ref().is_some_and(|s| s.verdict.status == Status::Enough),
            trace: path,
            fields: fields_of(trace, &self.tolerance),
        }
    }

    /// The audit of an emulated format with the lens of its kind: binary32, bfloat16, binary16 or p bits (of one
    /// reference, the double-double or binary64).
    fn audit_in<B32: AuditLens, BF16: AuditLens, B16: AuditLens, PBits: AuditLens>(
        &self,
        format: Format,
        path: &Path,
    ) -> Result<Trace, AuditError> {
        match format {
            Format::BINARY32 => self.audit::<B32>(path),
            Format::BFLOAT16 => self.audit::<BF16>(path),
            Format::BINARY16 => self.audit::<B16>(path),
            other => {
                let _scope = bits_format_scope(other);
                self.audit::<PBits>(path)
            }
        }
    }

    fn audit<L: AuditLens>(&self, path: &Path) -> Result<Trace, AuditError> {
        let mut audit =
            Audit::new(self.scenario, self.tolerance, self.audited()).trace(path).horizon(self.judged_horizon());
        if let Some(kernel) = &self.kernel {
            audit = audit.kernel(kernel);
        }
        if let Some(text) = &self.description {
            audit = audit.describe(text);
        }
        audit.lens::<L>().run()
    }
}

/// Whether a run with a binary64 reference stands: at every step both runs recorded, for every field, binary64's
/// own error (the `measure` run's, against its double-double shadow) is at most [`REFERENCE_MARGIN`] times the
/// run's error. The binary64 reference of the run is the binary64 computation along the run's path, so where the
/// two paths agree its error is exactly what the measure run found; a step where the run found no error while
/// binary64 did fails the test too (the estimate would be binary64's error alone).
fn reference_stands(run: &FormatRun, measure: &FormatRun) -> bool {
    run.fields.iter().all(|field| {
        let Some(reference) = measure.fields.iter().find(|f| f.name == field.name) else { return false };
        field.history.iter().all(|&(step, err)| {
            // A run whose error is not finite has a primal that is not (any reference says so); a NaN error of
            // binary64's own fails the comparison.
            reference
                .history
                .iter()
                .find(|(s, _)| *s == step)
                .is_none_or(|&(_, e64)| e64 == 0.0 || !err.is_finite() || e64 <= REFERENCE_MARGIN * err)
        })
    })
}

/// Each field's figures from a run's trace (one lens).
fn fields_of(trace: &Trace, tolerance: &Tolerance) -> Vec<FormatField> {
    let summary = trace.summary.as_ref();
    let (steps_done, horizon) = (summary.map_or(0, |s| s.steps_done), trace.header.steps_planned);
    trace
        .header
        .fields
        .iter()
        .map(|spec| {
            let history: Vec<(u64, f64)> = trace
                .steps
                .iter()
                .filter_map(|s| s.fields.iter().find(|f| f.name == spec.name).map(|f| (s.step, f.max_err)))
                .collect();
            let last = trace.steps.iter().rev().find_map(|s| s.fields.iter().find(|f| f.name == spec.name));
            let result = summary.and_then(|s| s.results.iter().find(|r| r.field == spec.name));
            let final_max_err = result.map_or(f64::NAN, |r| r.final_max_err);
            let horizon_err = if horizon > steps_done {
                result.and_then(|r| r.extrapolated_err).unwrap_or(final_max_err)
            } else {
                final_max_err
            };
            let (max_abs, allowed_err) = last.map_or((f64::NAN, f64::NAN), |f| {
                // The error the tolerance allowed at the worst cell: err / (err / allowed), as the recorder has it.
                let allowed = if f.tol_ratio > 0.0 { f.max_err / f.tol_ratio } else { tolerance.allowed(f.max_abs) };
                (f.max_abs, allowed)
            });
            FormatField {
                name: spec.name.clone(),
                first_crossing: result.and_then(|r| r.first_crossing),
                final_max_err,
                horizon_err,
                allowed_err,
                max_abs,
                history,
            }
        })
        .collect()
}

/// The bits each field of the widest (failing) run needs, from the law fitted over every run.
fn needed_bits(runs: &[FormatRun], widest: &FormatRun) -> Vec<NeededBits> {
    widest
        .fields
        .iter()
        .filter(|f| f.first_crossing.is_some() || f.horizon_err > f.allowed_err)
        .map(|field| {
            let points: Vec<(f64, f64)> = runs
                .iter()
                .filter_map(|r| r.fields.iter().find(|f| f.name == field.name).map(|f| (r.bits, f)))
                .filter(|(_, f)| f.horizon_err > 0.0 && f.horizon_err.is_finite() && f.horizon_err < f.max_abs)
                .map(|(bits, f)| (f64::from(bits), f.horizon_err.log2()))
                .collect();
            let law = fit_line(&points).filter(|l| l.b < 0.0);
            // a + b·p = log2(allowed)  ⇒  p = (log2(allowed) − a)/b
            let bits = law.map(|l| (field.allowed_err.log2() - l.a) / l.b).filter(|p| p.is_finite());
            let remedy = match bits {
                Some(p) if p <= DOUBLE_DOUBLE_BITS => Remedy::DoubleDouble,
                Some(_) => Remedy::BeyondDoubleDouble,
                None => Remedy::Unknown,
            };
            NeededBits { field: field.name.clone(), bits, law, remedy }
        })
        .collect()
}

/// The least-squares line `y ≈ a + b·x` through at least two points with distinct `x` (the normal equations,
/// centred; any statistics text, common practice, no source).
fn fit_line(points: &[(f64, f64)]) -> Option<PrecisionLaw> {
    let n = points.len() as f64;
    let (mx, my) = (points.iter().map(|p| p.0).sum::<f64>() / n, points.iter().map(|p| p.1).sum::<f64>() / n);
    let (sxx, sxy) =
        points.iter().fold((0.0, 0.0), |(sxx, sxy), &(x, y)| (sxx + (x - mx).powi(2), sxy + (x - mx) * (y - my)));
    (points.len() >= 2 && sxx > 0.0).then(|| PrecisionLaw {
        a: my - sxy / sxx * mx,
        b: sxy / sxx,
        points: points.len(),
    })
}

/// Appends the runs and the summary to the main trace, after its own summary (`docs/trace.md`).
fn append_records(path: &Path, runs: &[FormatRun], summary: &SweepSummary) -> Result<(), SweepError> {
    use std::io::Write;
    let fail = |source| SweepError::TraceAppend { path: path.to_path_buf(), source };
    let mut file = std::fs::OpenOptions::new().append(true).open(path).map_err(fail)?;
    let records = runs.iter().cloned().map(Record::FormatRun).chain([Record::Sweep(summary.clone())]);
    for record in records {
        let mut line = serde_json::to_vec(&record).map_err(|e| fail(std::io::Error::other(e)))?;
        line.push(b'\n');
        file.write_all(&line).map_err(fail)?;
    }
    file.flush().map_err(fail)
}
