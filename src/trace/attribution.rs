//! The `attribution` record: where a run's rounding error comes from, per source site and per source line
//! (`docs/attribution.md` explains the numbers, `docs/trace.md` the record).
//!
//! [`crate::attribution`] computes it and returns it as it is written, so a report renders the same numbers
//! from a live run and from a trace read back. Everything here is numbers, source sites and tags: no prose, so
//! every format can word it its own way.

use serde::{Deserialize, Serialize};

use super::{nan_if_null, SiteRecord};

/// One attribution of a run: per field, per line and per operation site, and the known patterns found.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AttributionRecord {
    /// The step whose state the shares are measured on (the last step of the attribution run).
    pub step: u64,
    /// How many operation sites the propagated method carries one by one; the sites found after them share one
    /// slot, and their shares are `null` (the field's `other_share` holds their sum).
    pub slots: u32,
    /// Per field: the error the shares divide.
    pub fields: Vec<FieldAttribution>,
    /// Per source line, largest share first.
    pub lines: Vec<LineFacts>,
    /// Per operation site, in the order the run first met them; the representation of constants and inputs
    /// comes first, with no site.
    pub sites: Vec<SiteFacts>,
    /// Lines whose share is large and whose operations show a known pattern, with the remedy.
    pub findings: Vec<Finding>,
    /// Fields that carry another field of the same run with a remedy applied, as the audit was told
    /// (`AttributeOptions::remedy_applied`): a report sets their measured errors side by side. Absent when none.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub applied: Vec<AppliedRemedy>,
}

/// A field of the run that holds the same physics as another with a remedy applied, such as the rise above a
/// background carried instead of the absolute value: the measured drop of the error shows what the remedy buys.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AppliedRemedy {
    /// The field as the program has it (`T`, in kelvin near 1300 K).
    pub field: String,
    /// The field that carries it with the remedy applied (`rise`, `T − 1300 K`).
    pub remedied: String,
    pub remedy: Remedy,
    /// The background the perturbation is carried against, when there is one.
    pub background: Option<f64>,
}

/// The error of one field that the shares divide, and what the shares leave unexplained.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FieldAttribution {
    pub name: String,
    /// The cell with the largest error (multi-index); the `share` members divide its error.
    pub worst_cell: Vec<usize>,
    /// `primal − shadow` at the worst cell (signed).
    #[serde(deserialize_with = "nan_if_null")]
    pub error: f64,
    /// The share of the constants and inputs as written (their representation error).
    pub representation_share: Option<f64>,
    /// The sum of the shares of the sites beyond the carried slots (0 when every site has its own).
    pub other_share: Option<f64>,
    /// `1 − Σ shares` at the worst cell: what the first-order propagation leaves unexplained.
    pub residual: Option<f64>,
    /// The largest `|primal − shadow|` over the cells when every site and the constants are computed exactly
    /// (ablation of everything; zero when the attribution accounts for every rounding), `null` when that run
    /// was not made.
    pub exact_error: Option<f64>,
}

/// What the operations of one site or line did: over the run, or those whose operands depend on one field.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct OpFacts {
    /// How many times they ran.
    pub count: u64,
    /// `Σ |ρ|`, `max |ρ|` and `Σ ρ` of their exact rounding errors `ρ = result − exact result of the operands`.
    #[serde(deserialize_with = "nan_if_null")]
    pub rounding_abs_sum: f64,
    #[serde(deserialize_with = "nan_if_null")]
    pub rounding_abs_max: f64,
    #[serde(deserialize_with = "nan_if_null")]
    pub rounding_sum: f64,
    /// Sums and differences: `log2(max(|x|, |y|) / |x ± y|)`, mean and maximum (`null`: no sum ran). For a line,
    /// the largest mean and the largest maximum of its sites.
    pub cancelled_bits_mean: Option<f64>,
    pub cancelled_bits_max: Option<f64>,
    /// Sums and differences: `log2(max(|x|, |y|) / min(|x|, |y|))` (capped at 53), the bits of the smaller
    /// operand that fall off the larger one's last place.
    pub absorbed_bits_mean: Option<f64>,
    pub absorbed_bits_max: Option<f64>,
    /// Sums and differences: the mean of `max(|x|, |y|)`, the background the smaller operand is added to.
    pub large_operand_mean: Option<f64>,
    /// Sums that continue a run of at least eight sums of their own site within one step (a long sum).
    pub chained: u64,
}

/// What one site or line contributes to one field's error, and what its operations did to that field.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Share {
    pub field: String,
    /// The operations whose operands depend on the field as it stood at the start of each step.
    pub ops: OpFacts,
    /// The propagated contribution to `primal − shadow` at the field's worst cell (signed); `null` for a site
    /// that shares the pooled slot.
    pub contribution: Option<f64>,
    /// `contribution / error` at the worst cell (propagated, first order).
    pub share: Option<f64>,
    /// The same over the whole field: `Σ_c contribution_c · error_c / Σ_c error_c²`.
    pub share_l2: Option<f64>,
    /// By ablation: `(error − error without this line's rounding) / error` at the worst cell (lines only).
    pub ablated: Option<f64>,
    /// By ablation, over the whole field (lines only).
    pub ablated_l2: Option<f64>,
}

/// What one operation site did over the run.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SiteFacts {
    /// The operator's file, line and column (Rust gives a binary operator the column where its left operand
    /// starts); `null` for the representation of constants and inputs.
    pub site: Option<SiteRecord>,
    /// `add`, `sub`, `mul`, `div`, `rem`, `mul_add`, an elementary function's name (`sqrt`, `exp`, …), or
    /// `representation`.
    pub op: String,
    /// Over the run.
    pub ops: OpFacts,
    /// Per field.
    pub shares: Vec<Share>,
}

/// The sites of one source line together: what a report's table shows.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct LineFacts {
    pub file: String,
    pub line: u32,
    /// The columns of its operation sites.
    pub columns: Vec<u32>,
    /// Over the run, its sites together.
    pub ops: OpFacts,
    /// Per field: its sites' facts and propagated contributions and shares summed, and the ablated shares.
    pub shares: Vec<Share>,
    /// Whether every site of the line has its own slot (else the propagated shares leave some out).
    pub complete: bool,
}

impl LineFacts {
    /// The line's share of `field`'s error as a report shows it: the propagated one (a first-order sensitivity,
    /// additive over the lines), or the ablated one where the line has sites beyond the carried slots.
    #[must_use]
    pub fn share_of(&self, field: &str) -> Option<f64> {
        let share = self.shares.iter().find(|s| s.field == field)?;
        share.share.filter(|_| self.complete).or(share.ablated)
    }

    /// The largest magnitude of [`LineFacts::share_of`] over the fields.
    #[must_use]
    pub fn largest_share(&self) -> f64 {
        self.shares.iter().filter_map(|s| self.share_of(&s.field)).fold(0.0, |m, s| m.max(s.abs()))
    }
}

/// A known pattern behind a line's share of a field's error, and the remedy that applies.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Finding {
    pub file: String,
    pub line: u32,
    pub field: String,
    /// The line's share of the field's error ([`LineFacts::share_of`]).
    #[serde(deserialize_with = "nan_if_null")]
    pub share: f64,
    pub patterns: Vec<PatternHit>,
    pub remedy: Remedy,
}

/// One operation of a finding's line that shows a pattern.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct PatternHit {
    pub pattern: Pattern,
    pub column: u32,
    /// The operation there (`add`, `sub`, `mul_add`).
    pub op: String,
    /// The mean bits absorbed or cancelled there.
    #[serde(deserialize_with = "nan_if_null")]
    pub bits: f64,
    /// The mean magnitude of the larger operand: the background a perturbation would be carried against.
    pub background: Option<f64>,
}

/// The patterns twinstep recognizes from the per-site facts.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Pattern {
    /// A small increment added to a large background value: its low bits fall off every time.
    Absorption,
    /// Nearly equal values subtracted: the leading bits cancel and the operands' errors become the result's
    /// leading digits.
    Cancellation,
    /// A sum that accumulates into one value, one term after another.
    LongSum,
}

/// What to change.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Remedy {
    /// Carry the perturbation (the rise above the background) instead of the absolute value.
    CarryPerturbation,
    /// Accumulate with compensated (Kahan–Babuška–Neumaier) summation.
    CompensatedSum,
}

impl Pattern {
    /// The name used in traces (the serde name).
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Pattern::Absorption => "absorption",
            Pattern::Cancellation => "cancellation",
            Pattern::LongSum => "long_sum",
        }
    }
}

impl Remedy {
    /// The name used in traces (the serde name).
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Remedy::CarryPerturbation => "carry_perturbation",
            Remedy::CompensatedSum => "compensated_sum",
        }
    }
}

impl AttributionRecord {
    /// Every field name the record mentions (for the reader's check against the header).
    pub fn field_names(&self) -> impl Iterator<Item = &str> {
        let shares = self.lines.iter().flat_map(|l| &l.shares).chain(self.sites.iter().flat_map(|s| &s.shares));
        self.fields
            .iter()
            .map(|f| f.name.as_str())
            .chain(shares.map(|s| s.field.as_str()))
            .chain(self.findings.iter().map(|f| f.field.as_str()))
            .chain(self.applied.iter().flat_map(|a| [a.field.as_str(), a.remedied.as_str()]))
    }

    /// The lines in the order of their share of `field`'s error, largest magnitude first: the rows of a
    /// report's table. The share is [`LineFacts::share_of`].
    #[must_use]
    pub fn ranked_lines(&self, field: &str) -> Vec<(&LineFacts, f64)> {
        let mut ranked: Vec<(&LineFacts, f64)> =
            self.lines.iter().filter_map(|line| Some((line, line.share_of(field)?))).collect();
        ranked.sort_by(|a, b| b.1.abs().total_cmp(&a.1.abs()));
        ranked
    }
}
