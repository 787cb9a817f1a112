//! Lenses: scalar types a twin runs with. Each pairs the *primal* (the number the float program computes, which
//! branches and index casts follow) with a *reference* that tells how far rounding has moved it.
//!
//! One lens per file, all behind [`Lens`].

/// A scalar that tracks the rounding error of its primal.
pub trait Lens: crate::Real {
    /// The lens's name in traces and reports.
    const NAME: &'static str;
    /// Whether [`Lens::error_bound`] is a guarantee (`|primal − exact| ≤ bound`).
    const GUARANTEED: bool;
    /// The best estimate of `|primal − exact|` the reference gives.
    fn error_estimate(self) -> f64;
    /// A guaranteed bound on `|primal − exact|`, for lenses that have one; `None` otherwise.
    fn error_bound(self) -> Option<f64>;
    /// The reference's best value of the exact result, rounded to f64 (for reports).
    fn reference_value(self) -> f64;
}
