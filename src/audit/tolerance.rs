//! Tolerances: how much rounding error the user accepts in a cell, as a function of the cell's value.
//!
//! Four kinds, one rule each (`err` is the rounding error of a cell, `u` its computed value):
//! absolute `err ≤ atol`, relative `err ≤ rtol·|u|`, mixed `err ≤ atol + rtol·|u|`, and ulps `err ≤ k·ulp(u)`.
//! The constructors give plain values, so a harness writes `Tolerance::mixed(1e-12, 1e-9)` without `?`; the
//! audit validates the tolerance before it starts ([`Tolerance::validated`]), so it never divides by a zero or
//! NaN allowance by mistake, and a bad parameter is [`Error::BadTolerance`] naming it.

use serde::{Deserialize, Serialize};

use super::Error;

/// How much rounding error a cell may carry.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Tolerance {
    /// `err ≤ atol`.
    Absolute { atol: f64 },
    /// `err ≤ rtol·|u|`.
    Relative { rtol: f64 },
    /// `err ≤ atol + rtol·|u|`.
    Mixed { atol: f64, rtol: f64 },
    /// `err ≤ ulps·ulp(u)`.
    Ulps { ulps: f64 },
}

impl Tolerance {
    /// An absolute tolerance; `atol` must be finite and positive (checked when the audit runs).
    #[must_use]
    pub const fn absolute(atol: f64) -> Tolerance {
        Tolerance::Absolute { atol }
    }

    /// A relative tolerance; `rtol` must be finite and positive.
    #[must_use]
    pub const fn relative(rtol: f64) -> Tolerance {
        Tolerance::Relative { rtol }
    }

    /// A mixed tolerance `atol + rtol·|u|`; both must be finite and positive.
    #[must_use]
    pub const fn mixed(atol: f64, rtol: f64) -> Tolerance {
        Tolerance::Mixed { atol, rtol }
    }

    /// A tolerance of `ulps` units in the last place of the computed value; must be finite and positive.
    #[must_use]
    pub const fn ulps(ulps: f64) -> Tolerance {
        Tolerance::Ulps { ulps }
    }

    /// The tolerance itself when every parameter is finite and positive, a clear error otherwise.
    ///
    /// Every tolerance goes through here before an audit or a recorder uses it.
    pub fn validated(self) -> Result<Tolerance, Error> {
        let parameters: &[(&'static str, f64)] = match &self {
            Tolerance::Absolute { atol } => &[("atol", *atol)],
            Tolerance::Relative { rtol } => &[("rtol", *rtol)],
            Tolerance::Mixed { atol, rtol } => &[("atol", *atol), ("rtol", *rtol)],
            Tolerance::Ulps { ulps } => &[("ulps", *ulps)],
        };
        for &(name, value) in parameters {
            // NaN fails `> 0.0` too, so one comparison rejects zero, negatives and NaN.
            if !(value > 0.0 && value.is_finite()) {
                return Err(Error::BadTolerance { parameter: name, value });
            }
        }
        Ok(self)
    }

    /// The error a cell of computed value `u` may carry.
    #[inline]
    #[must_use]
    pub fn allowed(&self, u: f64) -> f64 {
        match *self {
            Tolerance::Absolute { atol } => atol,
            Tolerance::Relative { rtol } => rtol * u.abs(),
            Tolerance::Mixed { atol, rtol } => atol + rtol * u.abs(),
            Tolerance::Ulps { ulps } => ulps * ulp(u),
        }
    }

    /// `err / allowed(u)`: above 1 the cell is out of tolerance. An allowance of zero (a relative tolerance at
    /// `u = 0`) gives infinity for any nonzero error and 0 for an exact cell.
    #[inline]
    #[must_use]
    pub fn ratio(&self, err: f64, u: f64) -> f64 {
        let allowed = self.allowed(u);
        if err == 0.0 {
            0.0
        } else if allowed > 0.0 {
            err / allowed
        } else {
            f64::INFINITY
        }
    }

    /// One line for reports: `mixed: atol = 1e-12, rtol = 1e-9`.
    #[must_use]
    pub fn describe(&self) -> String {
        match *self {
            Tolerance::Absolute { atol } => format!("absolute: err <= {atol:e}"),
            Tolerance::Relative { rtol } => format!("relative: err <= {rtol:e}*|u|"),
            Tolerance::Mixed { atol, rtol } => format!("mixed: err <= {atol:e} + {rtol:e}*|u|"),
            Tolerance::Ulps { ulps } => format!("ulps: err <= {ulps} ulp(u)"),
        }
    }
}

/// The unit in the last place of a binary64 value: the gap between `|x|` and the next larger finite double
/// (Goldberg, "What every computer scientist should know about floating-point arithmetic", 1991, from memory;
/// the "gap above" convention is common practice, no source). At `f64::MAX` the gap below is used, so the result
/// stays finite; a non-finite `x` has no ulp and gives NaN.
#[must_use]
pub fn ulp(x: f64) -> f64 {
    let magnitude = x.abs();
    if !magnitude.is_finite() {
        return f64::NAN;
    }
    if magnitude == f64::MAX {
        // ulp(MAX) = MAX − pred(MAX) = 2^(1023−52)
        return magnitude - f64::from_bits(magnitude.to_bits() - 1);
    }
    // Adjacent positive doubles have adjacent bit patterns (IEEE 754-2019 §3.4 encoding), so +1 is the successor.
    f64::from_bits(magnitude.to_bits() + 1) - magnitude
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ulp_matches_the_binary64_spacing() {
        // IEEE 754-2019 binary64 has p = 53: the spacing in [1, 2) is 2^-52 (= f64::EPSILON, Rust core docs).
        assert_eq!(ulp(1.0), f64::EPSILON);
        assert_eq!(ulp(-1.5), f64::EPSILON);
        // In [2^10, 2^11) the spacing is 2^(10−52).
        assert_eq!(ulp(1500.0), 2f64.powi(10 - 52));
        // The smallest subnormal is 2^-1074 (IEEE 754-2019 §3.3, emin = −1022, p = 53).
        assert_eq!(ulp(0.0), 2f64.powi(-1074));
        assert_eq!(ulp(f64::MAX), 2f64.powi(1023 - 52));
        assert!(ulp(f64::INFINITY).is_nan());
    }

    #[test]
    fn bad_parameters_are_errors() {
        for bad in [0.0, -1.0, f64::NAN, f64::INFINITY] {
            assert!(Tolerance::absolute(bad).validated().is_err());
            assert!(Tolerance::relative(bad).validated().is_err());
            assert!(Tolerance::mixed(1e-12, bad).validated().is_err());
            assert!(Tolerance::mixed(bad, 1e-9).validated().is_err());
            assert!(Tolerance::ulps(bad).validated().is_err());
        }
        for good in [1e-300, 1.0, 3.0] {
            assert!(Tolerance::absolute(good).validated().is_ok());
            assert!(Tolerance::mixed(good, good).validated().is_ok());
            assert!(Tolerance::ulps(good).validated().is_ok());
        }
    }

    #[test]
    fn mixed_allowance_is_atol_plus_rtol_times_u() {
        // err <= atol + rtol |u| by definition (docs/trace.md); 1e-3 + 1e-2 * 2 = 0.021 within one rounding.
        let t = Tolerance::mixed(1e-3, 1e-2);
        assert!((t.allowed(-2.0) - 0.021).abs() <= 0.021 * f64::EPSILON);
        assert_eq!(t.ratio(0.0, 0.0), 0.0);
        let r = Tolerance::relative(1e-6);
        assert_eq!(r.ratio(1e-20, 0.0), f64::INFINITY);
    }
}
