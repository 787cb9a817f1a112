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
    /// The certified lens's certificate after the step (`None` for every other lens).
    pub certificate: Option<crate::certificate::driver::CertificateFacts>,
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
    // One loop per kind of tolerance, each with its kind built in, so the cell loop does not match on it.
    match *tolerance {
        Tolerance::Absolute { atol } => measure_with(cells, profiled, |e, u| Tolerance::Absolute { atol }.ratio(e, u)),
        Tolerance::Relative { rtol } => measure_with(cells, profiled, |e, u| Tolerance::Relative { rtol }.ratio(e, u)),
        Tolerance::Mixed { atol, rtol } => {
            measure_with(cells, profiled, |e, u| Tolerance::Mixed { atol, rtol }.ratio(e, u))
        }
        Tolerance::Ulps { ulps } => measure_with(cells, profiled, |e, u| Tolerance::Ulps { ulps }.ratio(e, u)),
    }
}

/// Independent accumulators the cell loop spreads its cells over, so that its sums and maxima are not one chain
/// of dependent operations and the loop vectorizes (IEEE 754 addition is not associative, so the optimizer keeps a
/// single running sum in order; four lanes — one AVX register per accumulator, so none spills to memory — make the order explicit).
const LANES: usize = 4;

/// What the cell loop accumulates, per lane.
#[derive(Clone, Copy)]
struct Lanes {
    nan: [f64; LANES],
    infinite: [f64; LANES],
    bounded: [f64; LANES],
    max_abs: [f64; LANES],
    max_err: [f64; LANES],
    sum_err: [f64; LANES],
    max_rel: [f64; LANES],
    sum_rel: [f64; LANES],
    tol_ratio: [f64; LANES],
    bound: [f64; LANES],
    bound_ratio: [f64; LANES],
}

impl Lanes {
    const ZERO: Lanes = Lanes {
        nan: [0.0; LANES],
        infinite: [0.0; LANES],
        bounded: [0.0; LANES],
        max_abs: [0.0; LANES],
        max_err: [0.0; LANES],
        sum_err: [0.0; LANES],
        max_rel: [0.0; LANES],
        sum_rel: [0.0; LANES],
        tol_ratio: [0.0; LANES],
        bound: [0.0; LANES],
        bound_ratio: [0.0; LANES],
    };

    /// Adds one cell to `lane`. Straight-line code (selects, no branches) so that a loop over it vectorizes.
    #[inline(always)]
    fn add<L: Lens>(&mut self, lane: usize, cell: L, ratio: &impl Fn(f64, f64) -> f64) {
        let primal = cell.primal();
        // Whether the lane saw a NaN or an infinite primal, as 1.0 or 0.0: flags in the same registers as the
        // numbers keep the loop in vector code (byte flags made it move every lane through integer registers).
        self.nan[lane] = larger(self.nan[lane], if primal.is_nan() { 1.0 } else { 0.0 });
        self.infinite[lane] = larger(self.infinite[lane], if primal.is_infinite() { 1.0 } else { 0.0 });
        self.max_abs[lane] = larger(self.max_abs[lane], magnitude(primal.abs()));
        let err = magnitude(cell.error_estimate());
        self.max_err[lane] = larger(self.max_err[lane], err);
        let reference = cell.reference_value().abs();
        // relative error = |primal − exact| / |exact|, with the reference's value standing in for the exact one.
        // A cell that is 0 in the primal and in the reference has no relative error to speak of: its absolute
        // error is only the slack of the lens's bound (a few subnormals), which would read as "no correct bit".
        let quotient = if reference > 0.0 && reference.is_finite() { err / reference } else { f64::INFINITY };
        let rel = if err == 0.0 || (reference == 0.0 && primal == 0.0) { 0.0 } else { quotient };
        self.max_rel[lane] = larger(self.max_rel[lane], rel);
        self.sum_err[lane] += err;
        self.sum_rel[lane] += rel;
        self.tol_ratio[lane] = larger(self.tol_ratio[lane], magnitude(ratio(err, primal)));
        if let Some(bound) = cell.error_bound() {
            let bound = magnitude(bound);
            self.bounded[lane] = 1.0;
            self.bound[lane] = larger(self.bound[lane], bound);
            self.bound_ratio[lane] = larger(self.bound_ratio[lane], magnitude(ratio(bound, primal)));
        }
    }

    /// Folds a group's lanes into the field's, lane by lane.
    fn merge(&mut self, other: &Lanes) {
        for lane in 0..LANES {
            self.nan[lane] = larger(self.nan[lane], other.nan[lane]);
            self.infinite[lane] = larger(self.infinite[lane], other.infinite[lane]);
            self.bounded[lane] = larger(self.bounded[lane], other.bounded[lane]);
            self.max_abs[lane] = larger(self.max_abs[lane], other.max_abs[lane]);
            self.max_err[lane] = larger(self.max_err[lane], other.max_err[lane]);
            self.sum_err[lane] += other.sum_err[lane];
            self.max_rel[lane] = larger(self.max_rel[lane], other.max_rel[lane]);
            self.sum_rel[lane] += other.sum_rel[lane];
            self.tol_ratio[lane] = larger(self.tol_ratio[lane], other.tol_ratio[lane]);
            self.bound[lane] = larger(self.bound[lane], other.bound[lane]);
            self.bound_ratio[lane] = larger(self.bound_ratio[lane], other.bound_ratio[lane]);
        }
    }
}

/// The larger of two numbers that are not NaN (the cell loop makes every NaN infinite first, see [`magnitude`]):
/// one `maxpd`, where `f64::max` adds two instructions per call to handle NaN operands.
#[inline(always)]
fn larger(a: f64, b: f64) -> f64 {
    if b > a {
        b
    } else {
        a
    }
}

/// The largest of some lanes.
fn largest(lanes: &[f64; LANES]) -> f64 {
    lanes.iter().fold(0.0, |a, &b| larger(a, b))
}

/// [`measure`] with the tolerance's `ratio(err, u)`. The cells are taken in the profile's groups (the whole
/// field as one group when it is not profiled), so no cell needs an integer division to find its group, and
/// within a group in runs of [`LANES`]. The worst cell is found afterwards, in the group that holds it.
#[inline(always)]
fn measure_with<L: Lens>(cells: &[L], profiled: bool, ratio: impl Fn(f64, f64) -> f64) -> FieldMeasure {
    // Groups of ⌈cells / PROFILE_CELLS⌉ neighbours, so that no more than PROFILE_CELLS values remain.
    let group = if profiled { cells.len().div_ceil(PROFILE_CELLS).max(1) } else { cells.len().max(1) };
    let mut profile = Vec::with_capacity(if profiled { cells.len().div_ceil(group) } else { 0 });
    let mut all = Lanes::ZERO;
    let (mut max_err, mut worst_group) = (0.0f64, 0usize);
    for (g, chunk) in cells.chunks(group).enumerate() {
        let mut lanes = Lanes::ZERO;
        let runs = chunk.chunks_exact(LANES);
        let rest = runs.remainder();
        for run in runs {
            for (lane, &cell) in run.iter().enumerate() {
                lanes.add(lane, cell, &ratio);
            }
        }
        for (lane, &cell) in rest.iter().enumerate() {
            lanes.add(lane, cell, &ratio);
        }
        let group_max = largest(&lanes.max_err);
        if group_max > max_err {
            (max_err, worst_group) = (group_max, g);
        }
        if profiled {
            profile.push(group_max);
        }
        all.merge(&lanes);
    }
    // The first cell of the worst group that carries the largest error.
    let worst_flat = cells
        .chunks(group)
        .nth(worst_group)
        .and_then(|chunk| chunk.iter().position(|c| magnitude(c.error_estimate()) == max_err))
        .map_or(0, |k| worst_group * group + k);
    let cells_count = cells.len().max(1) as f64;
    let max_rel_err = largest(&all.max_rel);
    let bounded = largest(&all.bounded) > 0.0;
    FieldMeasure {
        max_err,
        mean_err: all.sum_err.iter().sum::<f64>() / cells_count,
        max_rel_err,
        mean_rel_err: all.sum_rel.iter().sum::<f64>() / cells_count,
        bound: bounded.then(|| largest(&all.bound)),
        bound_tol_ratio: bounded.then(|| largest(&all.bound_ratio)),
        // correct bits = −log2(worst relative error), between 0 and the 53 bits binary64 has
        correct_bits: if max_rel_err == 0.0 { F64_BITS } else { (-max_rel_err.log2()).clamp(0.0, F64_BITS) },
        worst_flat,
        tol_ratio: largest(&all.tol_ratio),
        max_abs: largest(&all.max_abs),
        nan: largest(&all.nan) > 0.0,
        infinite: largest(&all.infinite) > 0.0,
        representation_err: None,
        profile: profiled.then_some(CellProfile { cells_per_value: group, err: profile }),
    }
}

/// The first cell where a lens's primal is not bit-identical to the plain run (NaNs of any payload agree). The
/// plain run's float widens to f64 exactly (an `f32` original: every binary32 value is a double), so one comparison
/// of the doubles' bits serves both.
pub(crate) fn first_mismatch<L: Real, F: Real>(field: usize, lens: &[L], original: &[F]) -> Option<Mismatch> {
    lens.iter().zip(original).enumerate().find_map(|(flat, (&l, &o))| {
        let (p, o) = (l.primal(), o.primal());
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
