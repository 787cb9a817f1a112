//! A scratch solver crate for CI: a kernel in the style a user's crate has — a cell-wise update parallelised with
//! rayon inside the kernel, a decimal literal, a comparison, a square root — annotated with `#[twinstep::audit]`.
//! Invented for the check; twinstep judges rounding error only, not discretization or modelling error.

pub mod held_out_string;
pub mod held_out_swe;

use rayon::prelude::*;

/// A tenth off every cell, folded at zero, and the root of the folded value, one rayon task per chunk of cells.
#[twinstep::audit]
pub fn fold_step(u: &[f64], out: &mut [f64], root: &mut [f64]) {
    out.par_iter_mut().zip(root.par_iter_mut()).enumerate().for_each(|(i, (o, r))| {
        let v = u[i] - 0.1;
        *o = if v > 0.0 { v } else { -v }; // the comparison of the fold
        *r = o.sqrt();
    });
}
