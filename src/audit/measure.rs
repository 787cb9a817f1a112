//! Measuring a field: one pass over its cells turns what a lens knows about each value into the numbers a step
//! record carries (largest and mean error, relative error, guaranteed bound, correct bits, worst cell, how close
//! to the tolerance), plus whether the primal went NaN or infinite.
//!
//! Why non-finite estimates count as infinite: a NaN compares false with everything, so a plain `max` would
//! silently skip the very cells that matter most.

use super::Tolerance;
use crate::events::{EventKind, Site};
use crate::lens::Lens;
use crate::Real;

/// Significand bits of binary64 (IEEE 754-2019 Table 3.5, p = 53): the most correct bits a primal can have.
pub(crate) const F64_BITS: f64 = 53.0;

/// One field after one step, as one lens sees it.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct FieldMeasure {
    pub max_err: f64,
    pub mean_err: f64,
    pub max_rel_err: f64,
    pub mean_rel_err: f64,
    pub bound: Option<f64>,
    pub bound_tol_ratio: Option<f64>,
    pub correct_bits: f64,
    pub worst_flat: usize,
    pub tol_ratio: f64,
    pub max_abs: f64,
    pub nan: bool,
    pub infinite: bool,
    /// The part of `max_err` due to representing literals and constants, when the audit splits it.
    pub representation_err: Option<f64>,
    /// Per-cell errors decimated to at most [`PROFILE_CELLS`] values (the largest over each group of
    /// `cells_per_value` neighbours), for fields the audit profiles.
    pub profile: Option<CellProfile>,
}

/// The most values a profile holds: enough columns for a heat map, few enough that a trace of a 10⁶-cell field
/// stays small. Common practice, no source.
pub(crate) const PROFILE_CELLS: usize = 256;

/// A field's per-cell errors at one step, decimated by taking the largest over groups of neighbouring cells.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct CellProfile {
    pub cells_per_value: usize,
    pub err: Vec<f64>,
}

impl CellProfile {
    /// An all-zero profile of a field of `cells` cells: groups of `⌈cells / PROFILE_CELLS⌉` cells, so that no more
    /// than `PROFILE_CELLS` values remain.
    fn zeros(cells: usize) -> CellProfile {
        let cells_per_value = cells.div_ceil(PROFILE_CELLS).max(1);
        CellProfile { cells_per_value, err: vec![0.0; cells.div_ceil(cells_per_value)] }
    }

    /// Counts `err` (already NaN-free: see [`magnitude`]) towards the value of the cell's group.
    fn add(&mut self, flat: usize, err: f64) {
        let value = &mut self.err[flat / self.cells_per_value];
        *value = value.max(err);
    }
}

/// A cell where the lens's primal differs from the plain f64 original.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Mismatch {
    pub field: usize,
    pub flat: usize,
    pub lens_primal: f64,
    pub original: f64,
}

/// Everything one lens reports about one step.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct LensStep {
    pub step: u64,
    pub fields: Vec<FieldMeasure>,
    pub events: Vec<(EventKind, Site, u64)>,
    pub mismatches: Vec<Mismatch>,
}

/// A non-finite (NaN) magnitude counts as infinitely large.
fn magnitude(x: f64) -> f64 {
    if x.is_nan() {
        f64::INFINITY
    } else {
        x
    }
}

/// Measures one field; with `profiled`, keeps its decimated per-cell errors too.
pub(crate) fn measure<L: Lens>(cells: &[L], tolerance: &Tolerance, profiled: bool) -> FieldMeasure {
    let mut m = FieldMeasure {
        max_err: 0.0,
        mean_err: 0.0,
        max_rel_err: 0.0,
        mean_rel_err: 0.0,
        bound: None,
        bound_tol_ratio: None,
        correct_bits: F64_BITS,
        worst_flat: 0,
        tol_ratio: 0.0,
        max_abs: 0.0,
        nan: false,
        infinite: false,
        representation_err: None,
        profile: profiled.then(|| CellProfile::zeros(cells.len())),
    };
    let (mut sum_err, mut sum_rel) = (0.0, 0.0);
    for (flat, &cell) in cells.iter().enumerate() {
        let primal = cell.primal();
        m.nan |= primal.is_nan();
        m.infinite |= primal.is_infinite();
        m.max_abs = m.max_abs.max(magnitude(primal.abs()));
        let err = magnitude(cell.error_estimate());
        if let Some(profile) = m.profile.as_mut() {
            profile.add(flat, err);
        }
        let reference = cell.reference_value().abs();
        // relative error = |primal − exact| / |exact|, with the reference's value standing in for the exact one
        // A cell that is 0 in the primal and in the reference has no relative error to speak of: its absolute
        // error is only the slack of the lens's bound (a few subnormals), which would read as "no correct bit".
        let rel = if err == 0.0 || (reference == 0.0 && primal == 0.0) {
            0.0
        } else if reference > 0.0 && reference.is_finite() {
            err / reference
        } else {
            f64::INFINITY
        };
        if err > m.max_err {
            m.max_err = err;
            m.worst_flat = flat;
        }
        m.max_rel_err = m.max_rel_err.max(rel);
        sum_err += err;
        sum_rel += rel;
        m.tol_ratio = m.tol_ratio.max(magnitude(tolerance.ratio(err, primal)));
        if let Some(bound) = cell.error_bound() {
            let bound = magnitude(bound);
            m.bound = Some(m.bound.map_or(bound, |b: f64| b.max(bound)));
            let ratio = magnitude(tolerance.ratio(bound, primal));
            m.bound_tol_ratio = Some(m.bound_tol_ratio.map_or(ratio, |r: f64| r.max(ratio)));
        }
    }
    let cells_count = cells.len().max(1) as f64;
    m.mean_err = sum_err / cells_count;
    m.mean_rel_err = sum_rel / cells_count;
    // correct bits = −log2(worst relative error), between 0 and the 53 bits binary64 has
    m.correct_bits = if m.max_rel_err == 0.0 { F64_BITS } else { (-m.max_rel_err.log2()).clamp(0.0, F64_BITS) };
    m
}

/// The first cell where a lens's primal is not bit-identical to the plain f64 run (NaNs of any payload agree).
pub(crate) fn first_mismatch<L: Real>(field: usize, lens: &[L], original: &[f64]) -> Option<Mismatch> {
    lens.iter().zip(original).enumerate().find_map(|(flat, (&l, &o))| {
        let p = l.primal();
        let same = p.to_bits() == o.to_bits() || (p.is_nan() && o.is_nan());
        (!same).then_some(Mismatch { field, flat, lens_primal: p, original: o })
    })
}

/// The representation part of a field's error: the largest difference between the error estimates of the run whose
/// literals and constants are as written and the run where they are the doubles the compiler made. Both runs have
/// the same primal `p`, so `e_written − e_compiled = x_compiled − x_written`, the effect of the constants on the
/// exact result; from estimates of `|e|` alone, `||e_w| − |e_c||` is the part a reader can trust (it is at most that
/// effect, by the triangle inequality).
pub(crate) fn representation<L: Lens>(written: &[L], compiled: &[L]) -> f64 {
    written
        .iter()
        .zip(compiled)
        .map(|(w, c)| magnitude((w.error_estimate() - c.error_estimate()).abs()))
        .fold(0.0, f64::max)
}
