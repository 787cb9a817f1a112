//! Known patterns behind a line's share of the error, recognized from the per-site facts, and the remedy each
//! calls for (`docs/attribution.md` lists the rules).
//!
//! - *Absorption*: a sum whose smaller operand loses [`PATTERN_BITS`] or more bits on average to the larger
//!   one's last place — a small increment added to a large background value, as a temperature in kelvin near
//!   1300 K takes increments of 10⁻⁵ K.
//! - *Cancellation*: a sum or difference that cancels [`PATTERN_BITS`] or more leading bits on average: the
//!   operands' earlier errors become the result's leading digits (the second difference `u[i-1] − 2u[i] +
//!   u[i+1]` of a field near a large value does this).
//! - *Long sum*: a sum that, in at least half of its runs, adds to a value it produced itself in the same step
//!   (an accumulation loop).
//!
//! Both of the first two are cured by carrying the perturbation — the rise above the background — instead of
//! the absolute value, so that the large common part never enters the arithmetic; a long sum by compensated
//! summation (Kahan 1965; Neumaier 1974; see Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed.,
//! §4.3 — from memory). The thresholds are judgement, common practice, no source: eight bits is two and a half
//! decimal digits lost at every run of the operation, far above what a well-scaled sum loses (a bit or two).

use crate::trace::{Finding, LineFacts, Pattern, PatternHit, Remedy, SiteFacts};

/// The mean bits absorbed or cancelled from which a sum counts as a pattern.
pub const PATTERN_BITS: f64 = 8.0;
/// The share of a field's error from which a line is looked at.
pub const SIGNIFICANT_SHARE: f64 = 0.1;
/// The fraction of a sum's runs that must continue its own chain for a long sum.
const CHAINED_FRACTION: f64 = 0.5;

/// The findings for every field and every line whose share of it is at least [`SIGNIFICANT_SHARE`], largest share
/// first. The patterns are read from the facts of the operations that read that field.
#[must_use]
pub fn find(lines: &[LineFacts], sites: &[SiteFacts]) -> Vec<Finding> {
    let mut findings = Vec::new();
    for line in lines {
        for share in &line.shares {
            let Some(value) = line.share_of(&share.field).filter(|v| v.abs() >= SIGNIFICANT_SHARE) else { continue };
            let hits = hits(line, &share.field, sites);
            if hits.is_empty() {
                continue;
            }
            let remedy = if hits.iter().any(|h| h.pattern == Pattern::LongSum) {
                Remedy::CompensatedSum
            } else {
                Remedy::CarryPerturbation
            };
            findings.push(Finding {
                file: line.file.clone(),
                line: line.line,
                field: share.field.clone(),
                share: value,
                patterns: hits,
                remedy,
            });
        }
    }
    findings.sort_by(|a, b| b.share.abs().total_cmp(&a.share.abs()));
    findings
}

/// The operations of `line` that show a pattern in what they do to `field`.
fn hits(line: &LineFacts, field: &str, sites: &[SiteFacts]) -> Vec<PatternHit> {
    let on_line = sites.iter().filter_map(|s| {
        let site = s.site.as_ref()?;
        let ops = &s.shares.iter().find(|share| share.field == field)?.ops;
        (site.file == line.file && site.line == line.line).then_some((site.column, s.op.as_str(), ops))
    });
    let mut hits = Vec::new();
    for (column, op, ops) in on_line {
        let background = ops.large_operand_mean;
        let hit = |pattern, bits| PatternHit { pattern, column, op: op.to_string(), bits, background };
        if ops.count > 0 && ops.chained as f64 >= CHAINED_FRACTION * ops.count as f64 {
            hits.push(hit(Pattern::LongSum, ops.absorbed_bits_mean.unwrap_or(0.0)));
        }
        for (pattern, bits) in
            [(Pattern::Absorption, ops.absorbed_bits_mean), (Pattern::Cancellation, ops.cancelled_bits_mean)]
        {
            if let Some(bits) = bits.filter(|&b| b >= PATTERN_BITS) {
                hits.push(hit(pattern, bits));
            }
        }
    }
    hits
}
