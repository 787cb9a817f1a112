//! Lenses: scalar types a twin runs with. Each pairs the *primal* (the number the float program computes, which
//! branches and index casts follow) with a *reference* that tells how far rounding has moved it.
//!
//! One lens per file, all behind [`Lens`]: [`Bound`] (midpoint and rigorous radius, the fast default),
//! [`Interval`] (inf–sup enclosure, IEEE 1788-2015, our own pure-Rust [`enclosure`] core), [`Shadow`] (a double-double running the same operations). The
//! operator boilerplate every lens shares — mixed operations with `f64`, references, compound assignment,
//! comparisons that record undecided comparisons, `Sum`, the whole [`crate::Real`] surface — is written once in
//! [`scalar`] and instantiated per lens from the lens's small [`scalar::Core`] of primitive operations.
//!
//! Literals and `std::f64::consts` enter through [`reference`](mod@reference): under [`LiteralMode::AsWritten`]
//! (the default) the reference holds the decimal number as written and the real constant; under
//! [`LiteralMode::AsCompiled`] it holds the double the compiler made, so an audit can split representation error
//! from arithmetic error.

/// Declares a lens's two variants over its `…Of<const WATCH: bool>` type: the watched one, which records the line
/// of every NaN/∞, and the unwatched one, whose loops vectorize. One declaration, so the variants mean the same in
/// every lens.
macro_rules! watch_variants {
    ($of:ident, $watched:ident, $unwatched:ident) => {
        /// The lens, watching every operation for NaN/∞ and recording the event at the caller's line. Name it in
        /// an audit (`.lens::<…>()`): the driver runs the unwatched variant and replays with this one only the
        /// steps where a value turns non-finite (`docs/audit.md`). In a loop of your own with a `Recorder`, this
        /// variant records every line, at two to three times the cost.
        pub type $watched = $of<true>;

        /// The same lens without the per-operation NaN/∞ test: the reference and every other event are the same,
        /// a non-finite value still propagates (and shows in the field), but the operation producing it is not
        /// recorded. Loops over it can vectorize; see the benchmark in `docs/lenses.md`.
        pub type $unwatched = $of<false>;
    };
}
use watch_variants;

/// The [`Lens`] items that move a value between a lens's two variants (the same fields, another `WATCH`), for a
/// lens type `$of<const WATCH: bool>` with the listed fields.
macro_rules! variant_conversions {
    ($of:ident { $($field:ident),* }) => {
        type Unwatched = $of<false>;
        type Watched = $of<true>;
        #[inline(always)]
        fn unwatched(self) -> $of<false> {
            $of { $($field: self.$field),* }
        }
        #[inline(always)]
        fn watched(self) -> $of<true> {
            $of { $($field: self.$field),* }
        }
    };
}
use variant_conversions;

/// The [`scalar::Core`] items a lens `{ primal: f64, … }` whose primal computes in the [`format::PrimalFormat`]
/// `$p` shares with every such lens: its watch flag `$w`, the format's limits (`EPSILON`, `MAX`, `MIN_POSITIVE`)
/// and the primal. The shadowed and the binary64-referenced lenses use it.
macro_rules! primal_format_core {
    ($p:ident, $w:ident) => {
        const WATCH: bool = $w;

        #[inline(always)]
        fn format_epsilon() -> f64 {
            $p::epsilon()
        }

        #[inline(always)]
        fn format_max() -> f64 {
            $p::max_value()
        }

        #[inline(always)]
        fn format_min_positive() -> f64 {
            $p::min_positive()
        }

        #[inline(always)]
        fn primal(self) -> f64 {
            self.primal
        }
    };
}
use primal_format_core;

/// The [`Lens`] impl of a lens `$ty<P, const W: bool>` whose primal computes in a [`format::PrimalFormat`] `P`
/// (bounded by `$bound`) and whose reference is a point estimate: no guarantee, the estimate `|signed_error()|`,
/// the variants moved by `$ty::of(primal, $other)`. The shadowed and the binary64-referenced lenses share it.
macro_rules! estimate_lens {
    ($ty:ident<$bound:ident>, other: $other:ident, name: $name:expr, native: $native:expr,
        reference: |$x:ident| $reference:expr) => {
        impl<P: $bound, const W: bool> $crate::lens::Lens for $ty<P, W>
        where
            $ty<P, W>: $crate::Real,
            $ty<P, true>: $crate::Real,
            $ty<P, false>: $crate::Real,
        {
            const NAME: &'static str = $name;
            const GUARANTEED: bool = false;
            const NATIVE_PRIMAL: bool = $native;
            type Unwatched = $ty<P, false>;
            type Watched = $ty<P, true>;

            #[inline(always)]
            fn unwatched(self) -> $ty<P, false> {
                $ty::of(self.primal, self.$other)
            }

            #[inline(always)]
            fn watched(self) -> $ty<P, true> {
                $ty::of(self.primal, self.$other)
            }

            fn error_estimate(self) -> f64 {
                self.signed_error().abs()
            }

            fn error_bound(self) -> Option<f64> {
                None
            }

            fn reference_value(self) -> f64 {
                let $x = self;
                $reference
            }
        }
    };
}
use estimate_lens;

pub mod attributed;
pub mod bound;
pub mod certified;
pub mod directed;
pub mod dwmath;
pub mod eft;
pub mod elementary;
pub mod emulated;
pub mod enclosure;
pub mod format;
pub mod interval;
pub mod narrow;
pub mod num;
pub mod reference;
#[macro_use]
pub mod scalar;
pub mod shadow;

pub use attributed::{Attributed, AttributedOf, AttributedUnwatched};
pub use bound::{Bound, BoundOf, BoundUnwatched};
pub use certified::{
    Certified, Certified16, Certified16Unwatched, Certified4, Certified4Unwatched, CertifiedOf, CertifiedUnwatched,
};
pub use emulated::{
    Bfloat16, Bfloat16Of, Bfloat16Unwatched, Binary16, Binary16Of, Binary16Unwatched, Binary32, Binary32Of,
    Binary32Unwatched, Bits, BitsOf, BitsUnwatched,
};
pub use enclosure::Enclosure;
pub use format::{bits_format_scope, Format, FormatError};
pub use interval::{Interval, IntervalOf, IntervalUnwatched};
pub use narrow::{
    Bfloat16B32, Bfloat16B32Unwatched, Bfloat16B64, Bfloat16B64Unwatched, Binary16B32, Binary16B32Unwatched,
    Binary16B64, Binary16B64Unwatched, Binary32B64, Binary32B64Unwatched, BitsB64, BitsB64Unwatched, Narrowed,
};
pub use reference::{literal_mode, set_literal_mode, with_literal_mode, LiteralMode, Reference};
pub use shadow::{Shadow, ShadowOf, ShadowUnwatched, Shadowed};

/// A scalar that tracks the rounding error of its primal.
pub trait Lens: crate::Real {
    /// The lens's name in traces and reports.
    const NAME: &'static str;
    /// Whether [`Lens::error_bound`] is a guarantee (`|primal − exact| ≤ bound`).
    const GUARANTEED: bool;
    /// Whether the primal is the program's own binary64 arithmetic, bit for bit (the audit then checks it
    /// against the plain f64 original); `false` for a lens whose primal emulates another format
    /// ([`emulated`]), which by design computes something else.
    const NATIVE_PRIMAL: bool = true;
    /// The same lens without the per-operation NaN/∞ watch: what the audit driver runs, because its loops
    /// vectorize.
    type Unwatched: Lens<Unwatched = Self::Unwatched, Watched = Self::Watched>;
    /// The same lens watching every operation for NaN/∞: what the driver replays a step with to find the source
    /// line of a non-finite value (see `docs/audit.md`).
    type Watched: Lens<Unwatched = Self::Unwatched, Watched = Self::Watched>;
    /// This value as the unwatched variant (the same numbers).
    fn unwatched(self) -> Self::Unwatched;
    /// This value as the watched variant (the same numbers).
    fn watched(self) -> Self::Watched;
    /// The best estimate of `|primal − exact|` the reference gives.
    fn error_estimate(self) -> f64;
    /// A guaranteed bound on `|primal − exact|`, for lenses that have one; `None` otherwise.
    fn error_bound(self) -> Option<f64>;
    /// The reference's best value of the exact result, rounded to f64 (for reports).
    fn reference_value(self) -> f64;
}
