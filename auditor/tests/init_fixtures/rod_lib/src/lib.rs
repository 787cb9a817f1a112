//! A heated rod, solved with the explicit scheme.

pub mod solver;
