//! Helpers shared by the audit and trace tests: the arbitrary-precision oracle (dashu) and a scratch directory.
#![allow(dead_code)]

use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;
use dashu_ratio::RBig;

/// Working precision of the floating oracle: 320 bits, well beyond the ≥ 300 the checks ask for.
pub const BITS: usize = 320;

/// A binary float of the oracle.
pub type Big = FBig<HalfEven>;

/// An f64 as an exact oracle value (every finite double is a dyadic rational, IEEE 754-2019 §3.2).
pub fn big(x: f64) -> Big {
    Big::try_from(x).expect("finite double").with_precision(BITS).value()
}

/// An f64 as an exact rational.
pub fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("finite double")
}

/// A rational rounded to the nearest double (dashu-ratio's conversion).
pub fn rational_to_f64(q: &RBig) -> f64 {
    q.to_f64().value()
}

/// A fresh directory under the target directory for one test's traces.
pub fn scratch(test: &str) -> std::path::PathBuf {
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR")).join("twinstep-tests").join(test);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch directory");
    dir
}

pub mod kernels;
