//! The trace: what an audit writes to disk, as JSON Lines (`docs/trace.md` is the contract).
//!
//! One header, then step and event records in step order, then a closing summary written only when the run ended
//! normally. The writer flushes after every record, so a killed run leaves a prefix that [`read`] still accepts
//! (reported as incomplete). The types here are the serde form of each record; the reader and the writer share
//! them, so the round trip is exact by construction and tested.

mod attribution;
mod certificate;
mod reader;
mod writer;

use serde::{Deserialize, Deserializer, Serialize};

pub use crate::audit::Tolerance;
pub use crate::verdict::{Growth, Status, Verdict};
pub use attribution::{
    AppliedRemedy, AttributionRecord, FieldAttribution, Finding, LineFacts, OpFacts, Pattern, PatternHit, Remedy,
    Share, SiteFacts,
};
pub use certificate::{
    BackwardCostRecord, CertificateEndRecord, CertificateRoute, CertificateSummary, EndCause, FieldCertificateRecord,
    StepCertificateRecord, UndecidedSite,
};
pub use reader::{parse, read, read_from, ReadError, MAX_LINE_BYTES};
pub use writer::TraceWriter;

/// The `format` member of every header.
pub const FORMAT: &str = "twinstep-trace";
/// The trace format version this crate writes.
pub const VERSION: u32 = 3;
/// The versions this crate reads: version 1 differs only in the names of three event kinds ([`EVENT_NAMES`]),
/// version 2 only in lacking the certified lens's records (`docs/trace.md`, "Versions").
pub const READABLE_VERSIONS: [u32; 3] = [1, 2, 3];

/// A whole trace, as read back (or as assembled by the audit while it wrote it).
#[derive(Clone, Debug, PartialEq)]
pub struct Trace {
    pub header: Header,
    pub steps: Vec<StepRecord>,
    pub events: Vec<EventRecord>,
    /// Per-cell errors of 1-D fields at some recorded steps (empty in traces written without them).
    pub profiles: Vec<ProfileRecord>,
    /// Where the error comes from, per source line and site (empty unless attribution was asked for).
    pub attribution: Vec<AttributionRecord>,
    /// Where a certified lens's guarantee stops (empty when it holds throughout, or without a certified lens).
    pub certificate_ends: Vec<CertificateEndRecord>,
    /// `None` for an incomplete run (killed, or stopped by an error).
    pub summary: Option<Summary>,
    /// A precision sweep's runs, one per format, after the summary (empty unless the trace is a sweep's main
    /// trace, see [`crate::sweep`]).
    pub format_runs: Vec<crate::sweep::FormatRun>,
    /// A precision sweep's outcome, the last record of a sweep's main trace.
    pub sweep: Option<crate::sweep::SweepSummary>,
    /// The file ended in a partial line (a run killed while writing), which the reader skipped.
    pub truncated_tail: bool,
}

impl Trace {
    /// An empty trace under `header`: what a run has written before its first step.
    #[must_use]
    pub fn started(header: Header) -> Trace {
        Trace {
            header,
            steps: Vec::new(),
            events: Vec::new(),
            profiles: Vec::new(),
            attribution: Vec::new(),
            certificate_ends: Vec::new(),
            summary: None,
            format_runs: Vec::new(),
            sweep: None,
            truncated_tail: false,
        }
    }

    /// The last step any lens recorded.
    #[must_use]
    pub fn last_step(&self) -> Option<u64> {
        self.steps.iter().map(|s| s.step).max()
    }

    /// Whether `lens` has a guaranteed bound: as the header says, or, in a trace whose header does not say,
    /// when any of its step records has a bound (a bound that overflowed is written as `null`, so one record is
    /// not enough).
    ///
    /// A certified lens whose certificate stopped (a `certificate_end` record names it) is not: its bound held only
    /// up to that step, so no report may read it as a guarantee of the run (its step records say where it held).
    #[must_use]
    pub fn is_guaranteed(&self, lens: &str) -> bool {
        if self.certificate_ends.iter().any(|e| e.lens == lens) {
            return false;
        }
        match &self.header.guaranteed_lenses {
            Some(guaranteed) => guaranteed.iter().any(|g| g == lens),
            None => self.steps.iter().filter(|s| s.lens == lens).flat_map(|s| &s.fields).any(|f| f.bound.is_some()),
        }
    }

    /// Whether the run ended normally (the trace has its summary).
    #[must_use]
    pub fn is_complete(&self) -> bool {
        self.summary.as_ref().is_some_and(|s| s.complete)
    }
}

/// One line of the trace.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "record", rename_all = "snake_case")]
pub enum Record {
    Header(Header),
    Step(StepRecord),
    Event(EventRecord),
    Profile(ProfileRecord),
    Attribution(AttributionRecord),
    /// Where a certified lens's guarantee stops, for a field or for the run.
    CertificateEnd(CertificateEndRecord),
    Summary(Summary),
    /// One format's run of a precision sweep (after the summary).
    FormatRun(crate::sweep::FormatRun),
    /// A precision sweep's outcome (the last record).
    Sweep(crate::sweep::SweepSummary),
}

/// The first line: what was audited, how, and on what.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Header {
    pub format: String,
    pub version: u32,
    pub kernel: String,
    pub scenario: String,
    pub lenses: Vec<String>,
    pub fields: Vec<FieldSpec>,
    pub tolerance: Tolerance,
    /// The horizon the user plans to run; the verdict extrapolates to it.
    pub steps_planned: u64,
    /// The steps this audit runs (≤ `steps_planned`); absent in traces that audit the whole horizon.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub steps_audited: Option<u64>,
    pub record_policy: RecordPolicy,
    /// The lenses whose `bound` is a guarantee (absent in traces written before it was added: readers then take a
    /// lens with a non-null bound for a guaranteed one).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub guaranteed_lenses: Option<Vec<String>>,
    /// The float the audited program computes in, `f64` or `f32`: the reports name it in every sentence about the
    /// program. Traces written before it was added lack it and were all of `f64` programs, hence the default.
    #[serde(default = "default_float")]
    pub float: String,
    pub machine: Machine,
    pub build: Build,
    pub started_unix_s: u64,
}

/// The float of a header that does not name one: every trace written before the field was added audited an `f64`
/// program.
fn default_float() -> String {
    DEFAULT_FLOAT.to_owned()
}

/// The program's float when nothing says otherwise (a header without `float`, a recorder of the user's own loop).
pub const DEFAULT_FLOAT: &str = <f64 as crate::audit::ProgramFloat>::NAME;

/// A field's name and shape (row-major: the last index varies fastest).
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct FieldSpec {
    pub name: String,
    pub shape: Vec<usize>,
}

impl FieldSpec {
    /// A field spec; the shape lists the extent of each dimension.
    #[must_use]
    pub fn new(name: impl Into<String>, shape: &[usize]) -> FieldSpec {
        FieldSpec { name: name.into(), shape: shape.to_vec() }
    }

    /// The number of cells, `None` when the product overflows `usize`.
    #[must_use]
    pub fn cells(&self) -> Option<usize> {
        self.shape.iter().try_fold(1usize, |acc, &d| acc.checked_mul(d))
    }
}

/// Which steps get a step record.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RecordPolicy {
    /// Every step around events, log-spaced steps otherwise, and the last step: the trace stays small.
    Auto,
    /// Every step, and every event occurrence.
    Every,
}

/// Facts about the machine the audit ran on.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Machine {
    pub os: String,
    pub arch: String,
    pub cpus: usize,
}

impl Machine {
    /// The machine this process runs on.
    #[must_use]
    pub fn current() -> Machine {
        Machine {
            os: std::env::consts::OS.to_string(),
            arch: std::env::consts::ARCH.to_string(),
            cpus: std::thread::available_parallelism().map_or(1, |n| n.get()),
        }
    }
}

/// Facts about the build that produced the audit.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Build {
    pub twinstep: String,
    pub profile: String,
    pub target_features: Vec<String>,
}

impl Build {
    /// The build of this crate: version, profile (by `debug_assertions`, as cargo's profiles set it) and the
    /// floating-point-relevant target features it was compiled with.
    #[must_use]
    pub fn current() -> Build {
        let mut target_features = Vec::new();
        macro_rules! features {
            ($($f:literal),*) => { $( if cfg!(target_feature = $f) { target_features.push($f.to_string()); } )* };
        }
        features!("sse2", "avx", "avx2", "fma", "avx512f", "neon");
        let profile = if cfg!(debug_assertions) { "debug" } else { "release" };
        Build { twinstep: env!("CARGO_PKG_VERSION").to_string(), profile: profile.to_string(), target_features }
    }
}

/// One recorded step of one lens.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StepRecord {
    pub step: u64,
    pub lens: String,
    pub fields: Vec<FieldStep>,
    /// A certified lens's guarantee at this step (version 3; absent for every other lens).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub certificate: Option<StepCertificateRecord>,
}

/// The error of one field after one step, as one lens sees it.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FieldStep {
    pub name: String,
    #[serde(deserialize_with = "nan_if_null")]
    pub max_err: f64,
    #[serde(deserialize_with = "nan_if_null")]
    pub mean_err: f64,
    #[serde(deserialize_with = "nan_if_null")]
    pub max_rel_err: f64,
    #[serde(deserialize_with = "nan_if_null")]
    pub mean_rel_err: f64,
    pub bound: Option<f64>,
    #[serde(deserialize_with = "nan_if_null")]
    pub correct_bits: f64,
    pub worst_cell: Vec<usize>,
    #[serde(deserialize_with = "nan_if_null")]
    pub tol_ratio: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub representation_err: Option<f64>,
    /// The largest `bound / allowed` over the cells (lenses with a guaranteed bound only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bound_tol_ratio: Option<f64>,
    /// The largest `|u|` over the cells (the primal).
    #[serde(default, deserialize_with = "nan_if_null")]
    pub max_abs: f64,
}

/// The per-cell errors of a 1-D field at one step, as one lens sees them. `err[k]` is the largest error estimate
/// over cells `k·cells_per_value ..< (k+1)·cells_per_value` (the last group may be shorter); `None` (written
/// `null`) where it is not a finite number.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ProfileRecord {
    pub step: u64,
    pub lens: String,
    pub field: String,
    /// How many neighbouring cells each value covers (1, the default, when the field has few cells).
    #[serde(default = "one", skip_serializing_if = "is_one")]
    pub cells_per_value: usize,
    pub err: Vec<Option<f64>>,
}

fn one() -> usize {
    1
}

fn is_one(n: &usize) -> bool {
    *n == 1
}

/// What an event record reports.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum EventName {
    Nan,
    Infinity,
    UndecidedComparison,
    UndecidedIndex,
    DivisorMayBeZero,
    ToleranceCrossed,
    BoundLost,
    PrimalMismatch,
}

/// One row of [`EVENT_NAMES`]: the kind, its name in traces of the current version, its name in version-1 traces
/// when that differs, and the words a report uses for it.
#[derive(Clone, Copy, Debug)]
pub struct EventNaming {
    pub kind: EventName,
    pub name: &'static str,
    pub version_1_name: Option<&'static str>,
    pub wording: &'static str,
}

/// The one table of event kinds: kind ↔ trace name ↔ report wording. Version 1 of the trace named three kinds
/// after another tool's categories; version 2 uses names of our own and the reader still accepts the old ones.
pub const EVENT_NAMES: [EventNaming; 8] = [
    EventNaming { kind: EventName::Nan, name: "nan", version_1_name: None, wording: "NaN produced" },
    EventNaming { kind: EventName::Infinity, name: "infinity", version_1_name: None, wording: "infinity produced" },
    EventNaming {
        kind: EventName::UndecidedComparison,
        name: "undecided_comparison",
        version_1_name: Some("branch_instability"),
        wording: "comparison undecided by rounding",
    },
    EventNaming {
        kind: EventName::UndecidedIndex,
        name: "undecided_index",
        version_1_name: Some("index_instability"),
        wording: "index conversion undecided by rounding",
    },
    EventNaming {
        kind: EventName::DivisorMayBeZero,
        name: "divisor_may_be_zero",
        version_1_name: Some("division_by_zero_enclosure"),
        wording: "divisor that may be zero",
    },
    EventNaming {
        kind: EventName::ToleranceCrossed,
        name: "tolerance_crossed",
        version_1_name: None,
        wording: "tolerance crossed",
    },
    EventNaming {
        kind: EventName::BoundLost,
        name: "bound_lost",
        version_1_name: None,
        wording: "guaranteed bound lost",
    },
    EventNaming {
        kind: EventName::PrimalMismatch,
        name: "primal_mismatch",
        version_1_name: None,
        wording: "twin's primal differs from the original",
    },
];

impl EventName {
    fn naming(self) -> &'static EventNaming {
        // Every kind has its row (checked by `every_kind_has_one_row` below), so the search always ends.
        EVENT_NAMES.iter().find(|n| n.kind == self).unwrap_or(&EVENT_NAMES[0])
    }

    /// The name used in traces of the current version.
    #[must_use]
    pub fn name(self) -> &'static str {
        self.naming().name
    }

    /// The words a report uses for the kind.
    #[must_use]
    pub fn wording(self) -> &'static str {
        self.naming().wording
    }

    /// The kind a trace names, in the current version's names or in version 1's.
    #[must_use]
    pub fn from_name(name: &str) -> Option<EventName> {
        EVENT_NAMES.iter().find(|n| n.name == name || n.version_1_name == Some(name)).map(|n| n.kind)
    }
}

impl Serialize for EventName {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(self.name())
    }
}

impl<'de> Deserialize<'de> for EventName {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<EventName, D::Error> {
        let name = std::borrow::Cow::<'de, str>::deserialize(deserializer)?;
        EventName::from_name(&name).ok_or_else(|| {
            let known: Vec<&str> = EVENT_NAMES.iter().map(|n| n.name).collect();
            serde::de::Error::custom(format!("unknown event kind `{name}`, expected one of {}", known.join(", ")))
        })
    }
}

impl From<crate::events::EventKind> for EventName {
    fn from(kind: crate::events::EventKind) -> EventName {
        use crate::events::EventKind as K;
        match kind {
            K::UndecidedComparison => EventName::UndecidedComparison,
            K::UndecidedIndex => EventName::UndecidedIndex,
            K::Nan => EventName::Nan,
            K::Infinity => EventName::Infinity,
            K::DivisorMayBeZero => EventName::DivisorMayBeZero,
        }
    }
}

/// A source location in the user's kernel, as stored in a trace.
#[derive(Clone, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
pub struct SiteRecord {
    pub file: String,
    pub line: u32,
    pub column: u32,
}

impl From<crate::events::Site> for SiteRecord {
    fn from(site: crate::events::Site) -> SiteRecord {
        SiteRecord { file: site.file.to_string(), line: site.line, column: site.column }
    }
}

impl std::fmt::Display for SiteRecord {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}:{}:{}", self.file, self.line, self.column)
    }
}

/// Something that happened at a step.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct EventRecord {
    pub step: u64,
    pub lens: String,
    pub kind: EventName,
    pub field: Option<String>,
    pub site: Option<SiteRecord>,
    pub count: u64,
    pub detail: String,
    /// `bound_lost`: the guaranteed bound at that step.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub bound: Option<f64>,
    /// `bound_lost`: the best estimate of the true error at that step (from a lens without a guarantee when the
    /// audit has one).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub estimate: Option<f64>,
}

/// The last line, written only when the run ended normally.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Summary {
    pub steps_done: u64,
    pub complete: bool,
    #[serde(deserialize_with = "nan_if_null")]
    pub wall_s: f64,
    pub results: Vec<ResultRecord>,
    pub verdict: Verdict,
    /// Every event of the run, aggregated per lens, kind, field and site (the event records themselves are
    /// thinned out under the `auto` policy).
    #[serde(default)]
    pub event_totals: Vec<EventTotal>,
    /// Each certified lens's totals (version 3; absent without a certified lens).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub certificates: Vec<CertificateSummary>,
}

/// The outcome for one lens and field.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ResultRecord {
    pub lens: String,
    pub field: String,
    pub first_crossing: Option<u64>,
    #[serde(deserialize_with = "nan_if_null")]
    pub final_max_err: f64,
    pub final_bound: Option<f64>,
    pub growth: Option<Growth>,
    pub extrapolated_err: Option<f64>,
}

/// All occurrences of one kind of event at one place.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct EventTotal {
    pub lens: String,
    pub kind: EventName,
    pub field: Option<String>,
    pub site: Option<SiteRecord>,
    pub first_step: u64,
    pub last_step: u64,
    /// Steps at which it happened.
    pub steps: u64,
    /// Occurrences over the run.
    pub count: u64,
}

/// JSON has no NaN or infinity: serde_json writes them as `null`, and this reads `null` back as NaN, so a trace
/// of a run that blew up still reads.
fn nan_if_null<'de, D: Deserializer<'de>>(deserializer: D) -> Result<f64, D::Error> {
    Ok(Option::<f64>::deserialize(deserializer)?.unwrap_or(f64::NAN))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_kind_has_one_row() {
        let kinds = [
            EventName::Nan,
            EventName::Infinity,
            EventName::UndecidedComparison,
            EventName::UndecidedIndex,
            EventName::DivisorMayBeZero,
            EventName::ToleranceCrossed,
            EventName::BoundLost,
            EventName::PrimalMismatch,
        ];
        for kind in kinds {
            assert_eq!(EVENT_NAMES.iter().filter(|n| n.kind == kind).count(), 1, "{kind:?}");
            assert_eq!(EventName::from_name(kind.name()), Some(kind));
        }
        // The version-1 names still read (docs/trace.md, "Versions").
        assert_eq!(EventName::from_name("branch_instability"), Some(EventName::UndecidedComparison));
        assert_eq!(EventName::from_name("index_instability"), Some(EventName::UndecidedIndex));
        assert_eq!(EventName::from_name("division_by_zero_enclosure"), Some(EventName::DivisorMayBeZero));
        assert_eq!(EventName::from_name("branch"), None);
    }
}
