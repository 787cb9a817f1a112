//! The certified lens's records in a trace (version 3, `docs/trace.md`): its facts at every recorded step (inside
//! that lens's `step` record), a `certificate_end` record at each step where the guarantee stops for a field or
//! for the run, and its totals in the summary.
//!
//! Why a record of its own for the end: the end is the one fact a reader must never miss (no guarantee is claimed
//! past it), and step records are thinned out under the `auto` policy, so it cannot ride on them alone.

use serde::{Deserialize, Serialize};

use super::{nan_if_null, EventName, SiteRecord};

/// The route the certificate takes from step to step.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CertificateRoute {
    /// Per-step condensation only.
    Forward,
    /// Per-step condensation, re-anchored by backward sweeps over the recorded rows.
    Backward,
    /// Not chosen yet: the automatic choice watches the first steps' growth.
    Probing,
}

impl From<crate::certificate::Route> for CertificateRoute {
    fn from(route: crate::certificate::Route) -> CertificateRoute {
        match route {
            crate::certificate::Route::Forward => CertificateRoute::Forward,
            crate::certificate::Route::Backward => CertificateRoute::Backward,
            crate::certificate::Route::Auto => CertificateRoute::Probing,
        }
    }
}

impl CertificateRoute {
    /// The route's name in traces and reports.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            CertificateRoute::Forward => "forward",
            CertificateRoute::Backward => "backward",
            CertificateRoute::Probing => "probing",
        }
    }
}

/// The certificate at one recorded step: the `certificate` member of the certified lens's `step` record.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct StepCertificateRecord {
    /// Whether the certificate holds at this step (never again once it ended).
    pub holds: bool,
    pub route: CertificateRoute,
    /// This step's estimate of the growth of `|J̃|` (the power iteration riding on the condensation).
    #[serde(deserialize_with = "nan_if_null")]
    pub growth: f64,
    /// Whether a backward sweep re-anchored the radii at this step.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub anchored: bool,
    /// Per field, in the header's order.
    pub fields: Vec<FieldCertificateRecord>,
}

/// One field's guarantee at one step.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FieldCertificateRecord {
    pub name: String,
    /// The worst error over the cells lies in `[lower, upper]` (rounded outward); `upper` is `null` when a cell's
    /// bound is lost (infinite).
    #[serde(deserialize_with = "nan_if_null")]
    pub lower: f64,
    pub upper: Option<f64>,
    /// The cell with the largest upper end.
    pub worst_cell: Vec<usize>,
    /// The largest radius `D` (`|shadow − exact| ≤ D`); `null` when infinite.
    pub max_radius: Option<f64>,
    /// Cells whose bound is lost.
    #[serde(default)]
    pub lost_cells: usize,
    /// Whether the interval of the worst error spans more than a factor 3 (see `certificate::FieldCertificate`).
    #[serde(default)]
    pub useless: bool,
}

/// Why the guarantee stops.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum EndCause {
    /// A comparison or integer conversion the ball `shadow ± R` could not decide: exact arithmetic could take
    /// another path. Ends the certificate for every field.
    Undecided,
    /// The field's guaranteed interval spans more than a factor 3: the radius has outgrown the error.
    Useless,
    /// Cells of the field lost their bound (a division by a ball holding 0, a root or logarithm of a ball leaving
    /// the domain, an overflow).
    Lost,
}

/// A source site where a decision could not be made, with how often at the step.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct UndecidedSite {
    pub kind: EventName,
    pub site: SiteRecord,
    pub count: u64,
}

/// The step from which the guarantee stops, for one field (`useless`, `lost`) or for the run (`undecided`).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CertificateEndRecord {
    pub step: u64,
    pub lens: String,
    pub cause: EndCause,
    /// The field, for `useless` and `lost`; `null` for `undecided`, which ends every field.
    #[serde(default)]
    pub field: Option<String>,
    /// `undecided`: every site of the step.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub sites: Vec<UndecidedSite>,
    /// The geometric mean of the measured growth of `|J̃|` per step up to here.
    #[serde(deserialize_with = "nan_if_null")]
    pub growth: f64,
    pub route: CertificateRoute,
    /// `useless`: the largest radius and the largest estimate of the field at the step.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_radius: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub estimate: Option<f64>,
    /// `lost`: how many cells.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lost_cells: Option<usize>,
    /// The sentence a report shows.
    pub detail: String,
}

/// The backward route's cost over the run.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
pub struct BackwardCostRecord {
    pub sweeps: u64,
    #[serde(deserialize_with = "nan_if_null")]
    pub seconds: f64,
    pub multiply_adds: u64,
    /// Bytes of recorded rows at the end.
    pub bytes: u64,
}

/// A certified lens's totals: the `certificates` member of the summary.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CertificateSummary {
    pub lens: String,
    pub route: CertificateRoute,
    /// The geometric mean of the measured growth of `|J̃|` per step.
    #[serde(deserialize_with = "nan_if_null")]
    pub growth: f64,
    /// The step at which the certificate ended for the run (an undecided decision), if it did.
    pub ended_at: Option<u64>,
    /// Whether the backward route was wanted but the levels had too many ids for it.
    #[serde(default)]
    pub backward_declined: bool,
    /// The backward route's cost, when it ran.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub backward: Option<BackwardCostRecord>,
    /// List clashes over the run (entries charged to the remainder: rigorous, less tight).
    #[serde(default)]
    pub clashes: u64,
}
