//! Hygiene: the twins still compile, and compute what the originals compute, when the user's code shadows the
//! names generated code could lean on.
//!
//! The shadows here are the ones real solver codes have: a precision alias, a local trait named `Add`, a local
//! `struct Vec`, modules named `core` and `std`, a local trait named `Real`, a local function named like the
//! engine's cast helper `to_usize`, the legacy `std::f64` module in scope, and a type parameter named `T` on the
//! annotated function, struct or `impl` block itself (the engine must then pick another name for the twin's
//! parameter, and a struct's twin and its `impl` block's must agree on where it goes). Generated code that said `core::…`, `Vec`, `Real` or
//! `to_usize` instead of `::core::…` and `::twinstep::…` would fail to compile here or call the user's item.
//!
//! Each twin then runs with its parameter set to `f64` and must reproduce the original kernel bit for bit (compared
//! with `to_bits`), step after step: with `T = f64` every operation of the twin is the operation the original
//! performs (`src/real.rs` forwards each to the primitive), so any difference is a rewrite that changed the maths.
//! The reference is the original kernel as rustc compiles it, not anything the engine produced.

#![allow(dead_code)]

/// The shadows, at the level of the annotated items' parent module.
mod shadows {
    /// A precision alias, named in the attribute.
    pub type Scalar = f64;

    /// A local trait with the name of the operator trait.
    pub trait Add {
        fn add_cells(&self, other: usize) -> usize;
    }

    /// A local trait with the name of the trait twins are written against.
    pub trait Real {
        fn is_real(&self) -> bool;
    }

    /// A local struct with the name of the prelude's vector.
    pub struct Vec {
        pub cells: usize,
    }

    impl Add for Vec {
        fn add_cells(&self, other: usize) -> usize {
            self.cells + other
        }
    }

    /// A local function with the name of the engine's float-to-index helper, on integers.
    pub fn to_usize(count: u32) -> usize {
        count as usize
    }
}

/// A free function with a shadowed environment all around it, and a type parameter of its own named `T`.
mod relax {
    #[allow(unused_imports)]
    use super::shadows::{to_usize, Add, Real, Scalar, Vec};
    /// The legacy module `std::f64` in scope, as older codes import it for `f64::consts`: the name `f64` then
    /// means a module in paths, and generated code must still find the primitive type.
    use ::std::f64;

    /// Modules named like the standard library's: `core::…` and `std::…` in generated code would be ambiguous.
    pub mod core {
        pub fn ops() {}
    }
    pub mod std {
        pub fn vec() {}
    }

    /// Weighted Jacobi relaxation of `u'' = 0` with a bucket count that goes through a float-to-index cast.
    #[twinstep::audit(alias = Scalar)]
    pub fn relax<T: Copy>(u: &[Scalar], out: &mut [Scalar], weight: Scalar, tags: &[T], shape: &Vec) -> usize {
        let n = u.len();
        out[0] = u[0];
        out[n - 1] = u[n - 1];
        for i in 1..n - 1 {
            let average: Scalar = 0.5 * (u[i - 1] + u[i + 1]);
            let phase = f64::consts::FRAC_PI_4.sin();
            out[i] = (1.0 - weight) * u[i] + weight * average * phase;
        }
        let bucket = (out[n / 2] * 4.0) as usize;
        bucket + shape.add_cells(to_usize(tags.len() as u32))
    }
}

/// An `impl` block with a type parameter named `T` of its own: the twin methods need another name for theirs.
pub struct Tagged<T> {
    pub tag: T,
    pub damping: f64,
}

#[twinstep::audit(methods_only)]
impl<T: Copy> Tagged<T> {
    /// Damps every value toward zero and returns the tag, so `T` is used in the signature as well.
    pub fn damp(&self, u: &mut [f64], dt: f64) -> T {
        for v in u.iter_mut() {
            *v -= self.damping * dt * *v;
        }
        self.tag
    }
}

/// A struct and its `impl` block annotated separately, with a type parameter named `T` of their own and the shadows
/// in scope: the twin `PairTwin` must put its parameter in the same place in both, whatever name each picks.
mod pair {
    #[allow(unused_imports)]
    use super::shadows::{to_usize, Add, Real, Vec};

    #[twinstep::audit]
    pub struct Pair<T> {
        pub tag: T,
        pub u: [f64; 6],
        pub shape: Vec,
    }

    #[twinstep::audit]
    impl<T: Copy> Pair<T> {
        /// Damps every value toward its neighbour's and returns the tag.
        pub fn step(&mut self) -> T {
            let n = to_usize(self.u.len() as u32).min(self.shape.add_cells(0));
            for i in 1..n {
                self.u[i] = 0.75 * self.u[i] + 0.25 * self.u[i - 1];
            }
            self.tag
        }
    }
}

/// An inline module whose own items shadow the same names.
#[twinstep::audit]
pub mod rod {
    /// A local struct named `Vec` inside the annotated module.
    pub struct Vec {
        pub cells: usize,
    }

    /// A local trait named `Add`, implemented for the local `Vec`.
    pub trait Add {
        fn add_cells(&self, other: usize) -> usize;
    }

    impl Add for Vec {
        fn add_cells(&self, other: usize) -> usize {
            self.cells + other
        }
    }

    /// A module named `core` inside the annotated module.
    pub mod core {
        pub fn cells(shape: &super::Vec) -> usize {
            shape.cells
        }
    }

    /// A function named like the engine's cast helper.
    pub fn to_usize(shape: &Vec) -> usize {
        core::cells(shape)
    }

    /// The solver state; becomes generic in the twin.
    pub struct Rod {
        pub u: [f64; 8],
        pub r: f64,
    }

    /// One explicit heat step with fixed ends: `u_i ← u_i + r (u_{i-1} − 2 u_i + u_{i+1})`.
    pub fn step(rod: &mut Rod, shape: &Vec) -> usize {
        let n = to_usize(shape).min(rod.u.len());
        let old = rod.u;
        for i in 1..n - 1 {
            rod.u[i] = old[i] + rod.r * (old[i - 1] - 2.0 * old[i] + old[i + 1]);
        }
        let peak = (rod.u[n / 2] * 100.0) as usize;
        shape.add_cells(peak)
    }
}

/// The bit patterns of a slice, to compare values exactly (`-0.0` and `0.0` differ, NaNs compare equal to
/// themselves).
fn bits(values: &[f64]) -> std::vec::Vec<u64> {
    values.iter().map(|v| v.to_bits()).collect()
}

/// Initial data `sin(π x)` on `x_i = i/(n-1)`: a smooth profile whose every step involves rounding.
fn sine_profile<const N: usize>() -> [f64; N] {
    std::array::from_fn(|i| (std::f64::consts::PI * i as f64 / (N - 1) as f64).sin())
}

#[test]
fn a_shadowed_free_function_twin_runs_bit_identical() {
    let shape = shadows::Vec { cells: 3 };
    let tags = ['a', 'b'];
    let mut original = sine_profile::<9>();
    let mut twin = original;
    for step in 0..25 {
        let mut next_original = [0.0; 9];
        let mut next_twin = [0.0; 9];
        let count_original = relax::relax(&original, &mut next_original, 0.8, &tags, &shape);
        let count_twin = relax::relax_twin(&twin, &mut next_twin, 0.8, &tags, &shape);
        assert_eq!(bits(&next_original), bits(&next_twin), "fields differ after step {step}");
        assert_eq!(count_original, count_twin, "index casts differ after step {step}");
        original = next_original;
        twin = next_twin;
    }
}

#[test]
fn a_method_twin_beside_a_type_parameter_named_t_runs_bit_identical() {
    let tagged = Tagged { tag: 7u8, damping: 0.37 };
    let mut original = sine_profile::<6>();
    let mut twin = original;
    for step in 0..25 {
        let tag_original = tagged.damp(&mut original, 0.1);
        let tag_twin = tagged.damp_twin(&mut twin, 0.1);
        assert_eq!(bits(&original), bits(&twin), "fields differ after step {step}");
        assert_eq!(tag_original, tag_twin);
    }
}

#[test]
fn a_shadowing_module_twin_runs_bit_identical() {
    let initial = sine_profile::<8>();
    let mut original = rod::Rod { u: initial, r: 0.3 };
    let mut twin = rod_twin::Rod::<f64> { u: initial, r: 0.3 };
    let shape = rod::Vec { cells: 8 };
    let twin_shape = rod_twin::Vec { cells: 8 };
    for step in 0..25 {
        let peak_original = rod::step(&mut original, &shape);
        let peak_twin = rod_twin::step(&mut twin, &twin_shape);
        assert_eq!(bits(&original.u), bits(&twin.u), "fields differ after step {step}");
        assert_eq!(peak_original, peak_twin, "index casts differ after step {step}");
    }
}

#[test]
fn a_shadowed_struct_twin_with_its_own_parameter_runs_bit_identical() {
    let initial = sine_profile::<6>();
    let mut original = pair::Pair { tag: 'x', u: initial, shape: shadows::Vec { cells: 6 } };
    let mut twin = pair::PairTwin::<f64, char> { tag: 'x', u: initial, shape: shadows::Vec { cells: 6 } };
    for step in 0..25 {
        let tags = (original.step(), twin.step());
        assert_eq!(bits(&original.u), bits(&twin.u), "fields differ after step {step}");
        assert_eq!(tags.0, tags.1);
    }
}
