//! The scenario contract: what a time loop tells the audit — its fields, how its time levels relate, its initial
//! data and its step, generic over the scalar.
//!
//! `init` and `step` run with every lens and with `f64`, so they are generic over the lens type `T` and carry the
//! bounds every twin the macro emits carries. Rust implies only a trait's `Self: …` supertraits, never bounds on
//! other types (`f64: MixedOps<T>`, `&T: RefOps<T>`), so each impl method needs them written out:
//! `#[twinstep::scenario]` on the impl block writes them, and a harness carries no `where` clause. Among them is
//! `f64: MixedOps<f64>`, which holds trivially and keeps plain `f64` arithmetic in the body (`self.c * self.c`)
//! from being taken for the mixed `f64 * T` operator (see `Ctx::where_predicates` in the rewrite engine).
//!
//! **The program's float.** A scenario is over the float its program computes in: `Scenario` (that is,
//! `Scenario<f64>`) for an `f64` kernel, `Scenario<f32>` for an `f32` one (a generic parameter with a default,
//! which stable Rust allows where it does not allow a defaulted associated type). The bounds are the twin's for
//! that float (`T: BaseOps<f32>`, `f32: MixedOps<T>`), the plain original runs in it, and the audit checks each
//! lens whose primal is that float's own arithmetic against the original bit for bit ([`ProgramFloat`]): for
//! `f32`, the binary32 lens.

use super::{Error, FieldSpec, Levels};
use crate::lens::{Binary32, Binary32B64, Binary32B64Unwatched, Binary32Unwatched, Lens};
use crate::{BaseOps, MixedOps, Real, RefOps};

/// The float an audited program computes in: `f64` (what [`Scenario`] means without a parameter) or `f32`.
///
/// Its methods run the scenario's generic `init` and `step` with the float itself — the plain original by default
/// — in the one place where the bounds of that call are concrete types and so hold (Rust would otherwise ask
/// every generic user of `Scenario<F>` to repeat them).
pub trait ProgramFloat: Real + BaseOps<Self> + MixedOps<Self> + Send + Sync + 'static {
    /// `f64` or `f32`.
    const NAME: &'static str;
    /// The scenario's `init` with the plain float.
    fn init_plain<S: Scenario<Self> + ?Sized>(scenario: &S, levels: &mut Levels<Self>) -> Result<(), Error>;
    /// The scenario's `step` with the plain float.
    fn step_plain<S: Scenario<Self> + ?Sized>(scenario: &S, levels: &mut Levels<Self>);
    /// Whether lens `L`'s primal is this float's own arithmetic, bit for bit, so that the audit compares it with
    /// the plain original at every cell and step (a `primal_mismatch` event where it differs).
    fn reproduced_by<L: Lens>() -> bool;
}

impl ProgramFloat for f64 {
    const NAME: &'static str = "f64";
    fn init_plain<S: Scenario<f64> + ?Sized>(scenario: &S, levels: &mut Levels<f64>) -> Result<(), Error> {
        scenario.init(levels)
    }
    fn step_plain<S: Scenario<f64> + ?Sized>(scenario: &S, levels: &mut Levels<f64>) {
        scenario.step(levels);
    }
    fn reproduced_by<L: Lens>() -> bool {
        L::NATIVE_PRIMAL
    }
}

impl ProgramFloat for f32 {
    const NAME: &'static str = "f32";
    fn init_plain<S: Scenario<f32> + ?Sized>(scenario: &S, levels: &mut Levels<f32>) -> Result<(), Error> {
        scenario.init(levels)
    }
    fn step_plain<S: Scenario<f32> + ?Sized>(scenario: &S, levels: &mut Levels<f32>) {
        scenario.step(levels);
    }
    /// The binary32 lenses (either reference, either variant): their primal rounds every operation to binary32
    /// with ties to even, which is what the hardware's `f32` does (IEEE 754-2019 §4.3; bit for bit in
    /// `tests/format_oracles.rs`).
    fn reproduced_by<L: Lens>() -> bool {
        [Binary32::NAME, Binary32Unwatched::NAME, Binary32B64::NAME, Binary32B64Unwatched::NAME].contains(&L::NAME)
    }
}

/// How the time levels of a step relate.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Scheme {
    /// The step updates `current` in place.
    InPlace,
    /// The step reads `current` and writes `next`; the two are swapped after it.
    TwoLevel,
    /// The step reads `previous` and `current` and writes `next` (leapfrog); the three rotate after it.
    ThreeLevel,
}

impl Scheme {
    /// How many time levels the scheme keeps.
    #[must_use]
    pub(crate) fn levels(self) -> usize {
        match self {
            Scheme::InPlace => 1,
            Scheme::TwoLevel => 2,
            Scheme::ThreeLevel => 3,
        }
    }
}

/// A time loop to audit: its fields, its initial data and its step, generic over the scalar.
///
/// Write the impl under `#[twinstep::scenario]`, which gives `init` and `step` the bounds every twin carries, so
/// their bodies call `kernel_twin(…)` directly and compute with plain `f64` values as anywhere else:
///
/// ```ignore
/// #[twinstep::scenario]
/// impl Scenario for Rod {
///     fn fields(&self) -> Vec<FieldSpec> { vec![FieldSpec::new("u", &[self.u0.len()])] }
///     fn initial_values(&self) -> Vec<Vec<f64>> { vec![self.u0.clone()] }
///     fn step<T>(&self, l: &mut Levels<T>) { heat_twin(&l.current[0], &mut l.next[0], T::from_f64(self.r)) }
/// }
/// ```
///
/// `init_original` and `step_original` default to the same code with `T = f64`; override them to call the
/// untouched original kernel, and the audit checks at every step that each lens's primal equals it bit for bit.
pub trait Scenario<F: ProgramFloat = f64>: Sync {
    /// The fields, in the order the levels hold them.
    fn fields(&self) -> Vec<FieldSpec>;

    /// How the time levels relate; two-level by default.
    fn scheme(&self) -> Scheme {
        Scheme::TwoLevel
    }

    /// How many scratch levels a multi-stage (Runge–Kutta) step needs; none by default.
    fn stages(&self) -> usize {
        0
    }

    /// The initial data as doubles, one vector per field in the order of [`Scenario::fields`] (row-major), each
    /// value taken as exact. The default [`Scenario::init`] writes them into `levels.current`; a scenario whose
    /// initial data are computed (through the twin, so that the lenses see that computation) or that has a
    /// three-level scheme overrides `init` instead and need not give them.
    fn initial_values(&self) -> Vec<Vec<f64>> {
        Vec::new()
    }

    /// Writes the initial data into `levels.current` (and `levels.previous` for a three-level scheme). By
    /// default: the doubles of [`Scenario::initial_values`] into `levels.current`.
    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error>
    where
        T: Real + BaseOps<F>,
        F: MixedOps<T> + MixedOps<F>,
        for<'a> &'a T: RefOps<T>,
    {
        let values = self.initial_values();
        if values.len() != levels.current.len() {
            return Err(Error::InitialValues { fields: levels.current.len(), given: values.len() });
        }
        levels.current.iter_mut().zip(&values).try_for_each(|(field, values)| field.set_f64(values))
    }

    /// Advances the fields by one step (`levels.step` → `levels.step + 1`).
    fn step<T>(&self, levels: &mut Levels<T>)
    where
        T: Real + BaseOps<F>,
        F: MixedOps<T> + MixedOps<F>,
        for<'a> &'a T: RefOps<T>;

    /// The initial data of the plain original, in the program's float.
    fn init_original(&self, levels: &mut Levels<F>) -> Result<(), Error> {
        F::init_plain(self, levels)
    }

    /// One step of the plain original, in the program's float.
    fn step_original(&self, levels: &mut Levels<F>) {
        F::step_plain(self, levels);
    }
}
