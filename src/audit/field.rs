//! Fields and time levels as a step sees them.
//!
//! A [`Field`] is a flat buffer plus a shape (row-major: the last index varies fastest), so 1-D, 2-D and n-D
//! grids share one type; it dereferences to a slice, so a kernel taking `&[T]` / `&mut [T]` gets it directly.
//! [`Levels`] holds the time levels of every field — the level being read, the one being written, the one before
//! (leapfrog) and scratch stages (Runge–Kutta) — as public vectors, so a step can borrow several of them at once.

use std::ops::{Deref, DerefMut};

use super::{Error, FieldSpec};
use crate::Real;

/// One field at one time level.
#[derive(Clone, Debug, PartialEq)]
pub struct Field<T> {
    name: String,
    shape: Vec<usize>,
    data: Vec<T>,
}

impl<T: Real> Field<T> {
    /// A field of exact zeros with the spec's name and shape (the spec has been validated).
    pub(crate) fn zeros(spec: &FieldSpec) -> Field<T> {
        let cells = spec.cells().unwrap_or(0);
        Field { name: spec.name.clone(), shape: spec.shape.clone(), data: vec![T::zero(); cells] }
    }

    /// Sets every cell from f64 values, each taken as exact (the reference starts from the value as given).
    pub fn set_f64(&mut self, values: &[f64]) -> Result<(), Error> {
        if values.len() != self.data.len() {
            return Err(Error::LengthMismatch {
                field: self.name.clone(),
                expected: self.data.len(),
                got: values.len(),
            });
        }
        for (cell, &value) in self.data.iter_mut().zip(values) {
            *cell = T::from_f64(value);
        }
        Ok(())
    }

    /// Sets every cell from a function of its multi-index, such as an annotated initial-data twin:
    /// `field.fill(|ix| initial_twin::<T>(ix[0], n))`.
    pub fn fill(&mut self, mut value: impl FnMut(&[usize]) -> T) {
        let mut index = vec![0; self.shape.len()];
        for cell in &mut self.data {
            *cell = value(&index);
            advance(&mut index, &self.shape);
        }
    }
}

impl<T> Field<T> {
    /// The field's name.
    #[must_use]
    pub fn name(&self) -> &str {
        &self.name
    }

    /// The extent of each dimension.
    #[must_use]
    pub fn shape(&self) -> &[usize] {
        &self.shape
    }

    /// The flat position of a multi-index, `None` when it is out of range or of the wrong rank.
    #[must_use]
    pub fn flat(&self, index: &[usize]) -> Option<usize> {
        if index.len() != self.shape.len() {
            return None;
        }
        // Row-major: flat = ((i0·n1 + i1)·n2 + i2)…
        index.iter().zip(&self.shape).try_fold(0usize, |acc, (&i, &n)| (i < n).then(|| acc * n + i))
    }

    /// The values, as a slice.
    #[must_use]
    pub fn values(&self) -> &[T] {
        &self.data
    }

    /// The same field with every value converted (the driver moves a lens's levels between its variants).
    pub(crate) fn convert<U>(&self, f: impl Fn(T) -> U) -> Field<U>
    where
        T: Copy,
    {
        Field { name: self.name.clone(), shape: self.shape.clone(), data: self.data.iter().map(|&x| f(x)).collect() }
    }
}

/// The multi-index of a flat position in a row-major array of `shape`.
#[must_use]
pub fn multi_index(mut flat: usize, shape: &[usize]) -> Vec<usize> {
    let mut index = vec![0; shape.len()];
    for (slot, &n) in index.iter_mut().zip(shape).rev() {
        *slot = flat % n.max(1);
        flat /= n.max(1);
    }
    index
}

/// Steps a row-major multi-index to the next cell (wrapping to zeros after the last).
fn advance(index: &mut [usize], shape: &[usize]) {
    for (slot, &n) in index.iter_mut().zip(shape).rev() {
        *slot += 1;
        if *slot < n {
            return;
        }
        *slot = 0;
    }
}

impl<T> Deref for Field<T> {
    type Target = [T];
    fn deref(&self) -> &[T] {
        &self.data
    }
}

impl<T> DerefMut for Field<T> {
    fn deref_mut(&mut self) -> &mut [T] {
        &mut self.data
    }
}

/// The time levels of every field, in the order of the scenario's field specs.
///
/// `current` holds step `n` when a step starts and is what the audit measures after the step. A two-level step
/// reads `current` and writes `next`; a three-level (leapfrog) step also reads `previous`; an in-place step
/// updates `current`. `stages` are scratch levels for multi-stage (Runge–Kutta) steps. The driver rotates the
/// levels after each step; their contents otherwise persist.
#[derive(Clone, Debug)]
pub struct Levels<T> {
    /// The step being computed (`n` in `n → n + 1`); 0 during the initial data.
    pub step: u64,
    /// Step `n − 1` (three-level schemes only; empty otherwise).
    pub previous: Vec<Field<T>>,
    /// Step `n`.
    pub current: Vec<Field<T>>,
    /// Step `n + 1`, to be written (two- and three-level schemes; empty for in-place ones).
    pub next: Vec<Field<T>>,
    /// Scratch levels for the stages of a multi-stage step.
    pub stages: Vec<Vec<Field<T>>>,
}

impl<T: Real> Levels<T> {
    /// Zeroed levels for the fields, `levels` time levels (1, 2 or 3) and `stages` scratch levels.
    pub(crate) fn new(fields: &[FieldSpec], levels: usize, stages: usize) -> Levels<T> {
        let level = || fields.iter().map(Field::zeros).collect::<Vec<_>>();
        let maybe = |wanted: bool| if wanted { level() } else { Vec::new() };
        Levels {
            step: 0,
            previous: maybe(levels >= 3),
            current: level(),
            next: maybe(levels >= 2),
            stages: (0..stages).map(|_| level()).collect(),
        }
    }

    /// The same levels with every value converted.
    pub(crate) fn convert<U: Real>(&self, f: impl Fn(T) -> U + Copy) -> Levels<U> {
        let level = |fields: &Vec<Field<T>>| fields.iter().map(|field| field.convert(f)).collect();
        Levels {
            step: self.step,
            previous: level(&self.previous),
            current: level(&self.current),
            next: level(&self.next),
            stages: self.stages.iter().map(level).collect(),
        }
    }

    /// Moves the levels on by one step: `next` becomes `current`, `current` becomes `previous`.
    pub(crate) fn rotate(&mut self) {
        if self.next.is_empty() {
            return;
        }
        // (previous, current, next) = (a, b, c) becomes (b, c, a); with two levels (b, c) becomes (c, b).
        if !self.previous.is_empty() {
            std::mem::swap(&mut self.previous, &mut self.current);
        }
        std::mem::swap(&mut self.current, &mut self.next);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn row_major_indexing_round_trips() {
        let f = Field::<f64>::zeros(&FieldSpec::new("u", &[3, 4, 5]));
        // Row-major order (common practice, no source): (1, 2, 3) ↦ (1·4 + 2)·5 + 3 = 33.
        assert_eq!(f.flat(&[1, 2, 3]), Some(33));
        assert_eq!(multi_index(33, &[3, 4, 5]), vec![1, 2, 3]);
        assert_eq!(f.flat(&[3, 0, 0]), None);
        assert_eq!(f.flat(&[0, 0]), None);
        let mut g = Field::<f64>::zeros(&FieldSpec::new("g", &[2, 3]));
        g.fill(|ix| (10 * ix[0] + ix[1]) as f64);
        assert_eq!(g.values(), &[0.0, 1.0, 2.0, 10.0, 11.0, 12.0]);
    }

    #[test]
    fn three_levels_rotate_forward() {
        let specs = [FieldSpec::new("u", &[1])];
        let mut levels = Levels::<f64>::new(&specs, 3, 0);
        levels.previous[0][0] = 1.0;
        levels.current[0][0] = 2.0;
        levels.next[0][0] = 3.0;
        levels.rotate();
        assert_eq!((levels.previous[0][0], levels.current[0][0], levels.next[0][0]), (2.0, 3.0, 1.0));
        let mut two = Levels::<f64>::new(&specs, 2, 0);
        two.current[0][0] = 2.0;
        two.next[0][0] = 3.0;
        two.rotate();
        assert_eq!((two.current[0][0], two.next[0][0]), (3.0, 2.0));
    }
}
