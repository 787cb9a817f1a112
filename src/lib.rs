//! twinstep measures how far floating-point rounding moves the fields of a time-stepping stencil solver.
//!
//! One attribute, [`macro@audit`], on an existing kernel makes the macro emit a generic *twin* of it: the same code
//! with a type parameter `T: Real` in place of the float type. With `T = f64` the twin computes bit for bit what the
//! original computes; with a *lens* (an error-tracking scalar) it tells how far rounding has moved each value. This
//! crate holds the [`Real`] trait the twins are written against, its `f64` and `f32` implementations and the conversion
//! helpers the rewrite emits ([`twin`]).
//!
//! twinstep judges rounding error only, not discretization or modelling error.

pub mod attribution;
pub mod audit;
pub mod certificate;
pub mod events;
pub mod lens;
pub mod real;
pub mod report;
pub mod sweep;
pub mod trace;
pub mod twin;
pub mod verdict;

/// The num-traits crate the lenses implement (`Float`, `Num`, …), for `#[twinstep::audit(bounds = [...])]`.
pub use num_traits;
pub use real::{BaseOps, Constant, MixedOps, Real, RefOps};
pub use twinstep_macros::{audit, scenario};

/// The README's code blocks, compiled and run as doctests, so the harness it shows stays one that works.
#[doc = include_str!("../README.md")]
#[cfg(doctest)]
pub struct ReadmeDoctests;
