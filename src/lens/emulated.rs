//! Lenses that run a twin *as if* the program computed in another format — binary32, bfloat16, binary16 or p
//! bits — with the double-double shadow of [`super::Shadow`] as the reference: the primal rounds every operation
//! to the format ([`super::format`]), the shadow runs the same operations in about 106 bits, and `|primal − shadow|`
//! estimates how far the program would be from exact arithmetic in that format.
//!
//! They are the `Shadow` lens with another primal arithmetic (one implementation, [`Shadowed`], over
//! [`PrimalFormat`]): branches, `max`/`min` and index casts follow the *emulated* primal, so the twin takes the
//! path the program would take in that format, and the reference records where exact arithmetic could go
//! otherwise.
//!
//! What enters a lens is rounded to its format, as it would be in the program: an `f64` input (`from_f64`, a plain
//! `f64` operand, a literal as the compiler made it) rounds to the format while the shadow holds it exactly, so the
//! error includes representing the inputs in the format; a decimal literal as written and a constant such as π
//! round from their exact value (`0.1` in binary32 is `0.1f32`). An `f32` input is exact in binary32. The
//! twin of an `f32` kernel run with [`Binary32`] is bit-identical to the kernel (`fixtures/tests/bit_identity.rs`).
//!
//! [`Bits`] computes in the p-bit format set for the whole process by [`super::format::bits_format_scope`] (a
//! precision sweep runs one p after another).
//!
//! The audit does not compare these primals with the plain `f64` original (they are meant to differ:
//! [`super::Lens::NATIVE_PRIMAL`] is `false`).

use super::format::{EmulatedBfloat16, EmulatedBinary16, EmulatedBinary32, EmulatedBits, PrimalFormat};
use super::shadow::Shadowed;

/// The twin's primal in binary32, with a double-word shadow.
pub type Binary32Of<const WATCH: bool> = Shadowed<EmulatedBinary32, WATCH>;
/// The twin's primal in bfloat16, with a double-word shadow.
pub type Bfloat16Of<const WATCH: bool> = Shadowed<EmulatedBfloat16, WATCH>;
/// The twin's primal in binary16, with a double-word shadow.
pub type Binary16Of<const WATCH: bool> = Shadowed<EmulatedBinary16, WATCH>;
/// The twin's primal in the process's p-bit format, with a double-word shadow.
pub type BitsOf<const WATCH: bool> = Shadowed<EmulatedBits, WATCH>;

super::watch_variants!(Binary32Of, Binary32, Binary32Unwatched);
super::watch_variants!(Bfloat16Of, Bfloat16, Bfloat16Unwatched);
super::watch_variants!(Binary16Of, Binary16, Binary16Unwatched);
super::watch_variants!(BitsOf, Bits, BitsUnwatched);

// Each also takes plain `f32` operands: these are the lenses that run the twins of `f32` kernels.
crate::lens_scalar!(Binary32Of, f32);
crate::lens_scalar!(Bfloat16Of, f32);
crate::lens_scalar!(Binary16Of, f32);
crate::lens_scalar!(BitsOf, f32);

impl<P: PrimalFormat, const W: bool> Shadowed<P, W> {
    /// The format the primal computes in.
    #[must_use]
    pub fn format() -> super::Format {
        P::format()
    }
}
