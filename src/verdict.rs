//! The verdict: is f64 enough for the run the user plans?
//!
//! For each lens and field the audit keeps a log-spaced history of the largest error estimate. Two growth laws
//! are fitted to it by least squares — a power law `err ≈ c·n^α` (a straight line in log–log) and an exponential
//! `err ≈ c·e^{βn}` (a straight line in semi-log) — and the one with the smaller residual in `ln err` wins. The
//! law is extrapolated to the planned horizon. The status is `enough` (no crossing observed or extrapolated),
//! `enough_until` step N (the last step within tolerance), or `not_enough` (the tolerance is crossed at the
//! initial data or the first step). The least precision that would do needs a sweep over emulated formats, which
//! runs after the summary is written (`Audit::sweep`): the field stays null and the text says so, and a report of
//! a trace that carries the sweep's records takes the least precision from them (`crate::report::sweep`).
//!
//! Which lenses judge is one rule ([`judging_by`]): a certified lens whose certificate held throughout judges
//! alone and the verdict rests on its guarantee ([`Basis::Guarantee`]); otherwise the estimates, else the
//! per-operation bounds.

use serde::{Deserialize, Serialize};

/// A fitted growth law of the error with the step number `n`.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "law", rename_all = "snake_case")]
pub enum Growth {
    /// `err ≈ c·n^α`.
    Power { c: f64, alpha: f64 },
    /// `err ≈ c·e^{βn}`.
    Exponential { c: f64, beta: f64 },
}

impl Growth {
    /// The law's value at step `n`.
    #[must_use]
    pub fn at(&self, n: f64) -> f64 {
        match *self {
            Growth::Power { c, alpha } => c * n.powf(alpha),         // c·n^α
            Growth::Exponential { c, beta } => c * (beta * n).exp(), // c·e^{βn}
        }
    }

    /// The step at which the law reaches `level`, when it grows towards it.
    #[must_use]
    pub fn reaches(&self, level: f64) -> Option<f64> {
        let n = match *self {
            Growth::Power { c, alpha } if alpha > 0.0 => (level / c).powf(1.0 / alpha), // n = (level/c)^(1/α)
            Growth::Exponential { c, beta } if beta > 0.0 => (level / c).ln() / beta,   // n = ln(level/c)/β
            _ => return None,
        };
        n.is_finite().then_some(n.max(0.0))
    }

    /// A short formula with the fitted numbers: `3.1e-17·n^1.02`.
    #[must_use]
    pub fn describe(&self) -> String {
        match *self {
            Growth::Power { c, alpha } => format!("{c:.3e}*n^{alpha:.3}"),
            Growth::Exponential { c, beta } => format!("{c:.3e}*exp({beta:.3e}*n)"),
        }
    }
}

/// The straight line `y ≈ a + b·x` through `points` by ordinary least squares, and its residual sum of squares.
/// `None` with fewer than two distinct abscissae.
fn least_squares(points: &[(f64, f64)]) -> Option<(f64, f64, f64)> {
    let m = points.len() as f64;
    if points.len() < 2 {
        return None;
    }
    let mean_x = points.iter().map(|p| p.0).sum::<f64>() / m;
    let mean_y = points.iter().map(|p| p.1).sum::<f64>() / m;
    // b = Σ(x − x̄)(y − ȳ) / Σ(x − x̄)², a = ȳ − b·x̄ (normal equations of the linear model; any statistics text,
    // common practice, no source). Centring first keeps the sums well conditioned.
    let sxx: f64 = points.iter().map(|p| (p.0 - mean_x).powi(2)).sum();
    if sxx == 0.0 || !sxx.is_finite() {
        return None;
    }
    let sxy: f64 = points.iter().map(|p| (p.0 - mean_x) * (p.1 - mean_y)).sum();
    let b = sxy / sxx;
    let a = mean_y - b * mean_x;
    let rss = points.iter().map(|p| (p.1 - a - b * p.0).powi(2)).sum();
    Some((a, b, rss))
}

/// Fits both growth laws to `(step, err)` samples and returns the better one. Samples at step 0 or with an error
/// that is zero or not finite carry no information on a logarithmic scale and are left out; at least three must
/// remain.
#[must_use]
pub fn fit_growth(samples: &[(u64, f64)]) -> Option<Growth> {
    let usable: Vec<(f64, f64)> =
        samples.iter().filter(|(n, e)| *n > 0 && *e > 0.0 && e.is_finite()).map(|&(n, e)| (n as f64, e.ln())).collect();
    if usable.len() < 3 {
        return None;
    }
    // ln err = ln c + α ln n
    let log_log: Vec<(f64, f64)> = usable.iter().map(|&(n, y)| (n.ln(), y)).collect();
    let power = least_squares(&log_log).map(|(a, alpha, rss)| (Growth::Power { c: a.exp(), alpha }, rss));
    // ln err = ln c + β n
    let exponential = least_squares(&usable).map(|(a, beta, rss)| (Growth::Exponential { c: a.exp(), beta }, rss));
    // Both fits model the same ln err values with two parameters, so their residual sums compare directly.
    match (power, exponential) {
        (Some(p), Some(e)) => Some(if e.1 < p.1 { e.0 } else { p.0 }),
        (p, e) => p.or(e).map(|(g, _)| g),
    }
}

/// `enough`, `enough_until` or `not_enough`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    Enough,
    EnoughUntil,
    NotEnough,
}

/// The conclusion of an audit.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Verdict {
    pub status: Status,
    /// The last step within tolerance, for `enough_until`.
    pub until_step: Option<u64>,
    /// The least precision meeting the tolerance: `None` in the summary, which is written before any precision
    /// sweep runs (the sweep's own record holds it, `crate::sweep::SweepSummary::least_bits`).
    pub least_precision_bits: Option<u32>,
    pub text: String,
}

/// What the verdict needs to know about one lens and field.
#[derive(Clone, Debug)]
pub struct Evidence {
    pub lens: String,
    pub field: String,
    /// Whether the lens's numbers are guaranteed bounds rather than estimates.
    pub guaranteed: bool,
    /// Whether the lens is certified and its certificate held for every field over the whole run: its error is
    /// then known within a guaranteed interval at every step, and it judges alone ([`Standing::Guarantee`]).
    pub certified: bool,
    pub first_crossing: Option<u64>,
    pub final_max_err: f64,
    /// `final_max_err / final tol_ratio`: the error the tolerance allowed at the worst cell at the last step.
    pub allowed_at_end: f64,
    pub growth: Option<Growth>,
}

impl Evidence {
    /// What the lens's numbers are, for [`judging_by`].
    #[must_use]
    pub fn standing(&self) -> Standing {
        match (self.certified, self.guaranteed) {
            (true, _) => Standing::Guarantee,
            (false, true) => Standing::Bound,
            (false, false) => Standing::Estimate,
        }
    }
}

/// The rounding-only caution every verdict and report carries (worded in the report module).
pub use crate::report::words::CAUTION;

/// Which kind of number judges a verdict.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Basis {
    /// The error estimates of the lenses without a guarantee.
    Estimate,
    /// The guaranteed bounds (the audit ran no estimating lens).
    Bound,
    /// The certified lens's error, known within a guaranteed interval at every step (its certificate held).
    Guarantee,
}

/// What a lens's numbers are, for [`judging_by`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Standing {
    /// An estimate of the error (a certified lens whose certificate stopped counts as one: its error is the
    /// shadow's estimate).
    Estimate,
    /// A per-operation guaranteed bound, which may grow far beyond the error (the dependency effect).
    Bound,
    /// A certified lens whose certificate held throughout: the error within a tight guaranteed interval.
    Guarantee,
}

/// The one rule for which lenses judge, shared by the verdict, every report format and the gate: the estimates
/// when there are any — a guaranteed bound can grow by the dependency effect of enclosure arithmetic while the
/// rounding error does not, so it would cry wolf — else the bounds, which errs on the safe side.
pub fn judging<T>(items: &[T], guaranteed: impl Fn(&T) -> bool) -> (Basis, Vec<&T>) {
    judging_by(items, |item| if guaranteed(item) { Standing::Bound } else { Standing::Estimate })
}

/// [`judging`] with certified lenses: a certified lens whose certificate held throughout judges alone — its
/// interval is as tight as the estimate and guaranteed, so nothing is gained by asking an estimate — else the rule
/// of [`judging`], a certified lens whose certificate stopped counting as an estimate.
pub fn judging_by<T>(items: &[T], standing: impl Fn(&T) -> Standing) -> (Basis, Vec<&T>) {
    if items.iter().any(|item| standing(item) == Standing::Guarantee) {
        return (Basis::Guarantee, items.iter().filter(|item| standing(item) == Standing::Guarantee).collect());
    }
    let has_estimates = items.iter().any(|item| standing(item) == Standing::Estimate);
    let basis = if has_estimates { Basis::Estimate } else { Basis::Bound };
    (basis, items.iter().filter(|item| !has_estimates || standing(item) == Standing::Estimate).collect())
}

/// What decided the verdict: the facts its sentence is worded from (`crate::report::words::verdict_text`).
#[derive(Clone, Debug, PartialEq)]
pub enum Finding {
    /// No lens and field had a usable measurement.
    NoMeasurement,
    /// A judging lens and field leaves the tolerance at `step`, `observed` or extrapolated by `growth`.
    Crosses {
        lens: String,
        field: String,
        step: u64,
        observed: bool,
        growth: Option<Growth>,
        final_max_err: f64,
        allowed_at_end: f64,
    },
    /// Every judging lens and field stays within tolerance; this one comes closest.
    Within { lens: String, field: String, final_max_err: f64, allowed_at_end: f64, growth: Option<Growth> },
}

/// A verdict before it is worded.
#[derive(Clone, Debug, PartialEq)]
pub struct Decision {
    pub status: Status,
    pub until_step: Option<u64>,
    pub basis: Basis,
    pub finding: Finding,
    pub steps_done: u64,
    pub horizon: u64,
}

/// The step at which one lens and field leaves the tolerance, observed or extrapolated: `(step, observed)`.
fn crossing(e: &Evidence, steps_done: u64, horizon: u64) -> Option<(u64, bool)> {
    if let Some(step) = e.first_crossing {
        return Some((step, true));
    }
    // A NaN allowance is no allowance: `is_nan` says so explicitly.
    if horizon <= steps_done || e.allowed_at_end.is_nan() || e.allowed_at_end <= 0.0 {
        return None;
    }
    let growth = e.growth?;
    if growth.at(horizon as f64) <= e.allowed_at_end {
        return None;
    }
    // The extrapolated crossing lies beyond the audited steps (none was observed), inside the horizon.
    let at = growth.reaches(e.allowed_at_end).unwrap_or(horizon as f64);
    Some(((at.ceil() as u64).clamp(steps_done + 1, horizon), false))
}

/// `err / allowed`, with a non-finite error or allowance ranked as the worst (NaN never wins a `max` by accident).
fn severity(e: &Evidence) -> f64 {
    let r = e.final_max_err / e.allowed_at_end;
    if r.is_nan() {
        f64::INFINITY
    } else {
        r
    }
}

/// Decides the verdict from the evidence of every lens and field, by the rule of [`judging`].
#[must_use]
pub fn decide(evidence: &[Evidence], steps_done: u64, horizon: u64) -> Decision {
    let (basis, judges) = judging_by(evidence, Evidence::standing);
    let earliest = judges
        .iter()
        .filter_map(|e| crossing(e, steps_done, horizon).map(|c| (c, *e)))
        .min_by_key(|((step, _), _)| *step);
    let worst = judges.iter().copied().max_by(|a, b| severity(a).total_cmp(&severity(b)));
    let (status, until_step, finding) = match (earliest, worst) {
        (None, None) => (Status::Enough, None, Finding::NoMeasurement),
        (Some(((step, observed), e)), _) => {
            let status = if step <= 1 { Status::NotEnough } else { Status::EnoughUntil };
            let until = (status == Status::EnoughUntil).then(|| step - 1);
            let finding = Finding::Crosses {
                lens: e.lens.clone(),
                field: e.field.clone(),
                step,
                observed,
                growth: e.growth,
                final_max_err: e.final_max_err,
                allowed_at_end: e.allowed_at_end,
            };
            (status, until, finding)
        }
        (None, Some(e)) => (
            Status::Enough,
            None,
            Finding::Within {
                lens: e.lens.clone(),
                field: e.field.clone(),
                final_max_err: e.final_max_err,
                allowed_at_end: e.allowed_at_end,
                growth: e.growth,
            },
        ),
    };
    Decision { status, until_step, basis, finding, steps_done, horizon }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn recovers_a_power_law() {
        // Samples of exactly 2e-16·n^1.5 (closed form): the fit must give back c and α and prefer the power law.
        let samples: Vec<(u64, f64)> =
            [1u64, 2, 4, 8, 16, 32, 64, 128, 256, 512].iter().map(|&n| (n, 2e-16 * (n as f64).powf(1.5))).collect();
        match fit_growth(&samples) {
            Some(Growth::Power { c, alpha }) => {
                // Exact samples: the fit must return the law to within the rounding of ten logarithms and a least-
                // squares solve, far inside 1e-9 (common practice, no source).
                assert!((alpha - 1.5).abs() < 1e-9, "alpha {alpha}");
                assert!((c / 2e-16 - 1.0).abs() < 1e-9, "c {c}");
            }
            other => panic!("expected a power law, got {other:?}"),
        }
    }

    #[test]
    fn recovers_an_exponential() {
        // Samples of exactly 1e-16·e^{0.05 n} (closed form).
        let samples: Vec<(u64, f64)> = (1..40u64).map(|n| (n * 5, 1e-16 * (0.05 * (n * 5) as f64).exp())).collect();
        match fit_growth(&samples) {
            Some(Growth::Exponential { c, beta }) => {
                assert!((beta - 0.05).abs() < 1e-9, "beta {beta}");
                // c = e^a with a from a fit over n up to 195: its relative error is about 195·(rounding of β),
                // hence the looser 1e-6 (common practice, no source).
                assert!((c / 1e-16 - 1.0).abs() < 1e-6, "c {c}");
            }
            other => panic!("expected an exponential, got {other:?}"),
        }
    }

    #[test]
    fn too_few_points_give_no_law() {
        assert_eq!(fit_growth(&[(0, 1.0), (1, 0.0), (2, f64::NAN), (3, 1e-16)]), None);
    }

    fn evidence(first_crossing: Option<u64>, growth: Option<Growth>) -> Evidence {
        Evidence {
            lens: "shadow".into(),
            field: "u".into(),
            guaranteed: false,
            certified: false,
            first_crossing,
            final_max_err: 1e-14,
            allowed_at_end: 1e-10,
            growth,
        }
    }

    #[test]
    fn statuses_follow_the_crossing() {
        let v = decide(&[evidence(Some(42), None)], 100, 100);
        assert_eq!((v.status, v.until_step), (Status::EnoughUntil, Some(41)));
        let v = decide(&[evidence(Some(0), None)], 100, 100);
        assert_eq!(v.status, Status::NotEnough);
        let v = decide(&[evidence(None, None)], 100, 100);
        assert_eq!(v.status, Status::Enough);
        assert_eq!(v.basis, Basis::Estimate);
        // 1e-16·n reaches 1e-10 at n = 1e6 (closed form), inside a horizon of 1e7.
        let v = decide(&[evidence(None, Some(Growth::Power { c: 1e-16, alpha: 1.0 }))], 100, 10_000_000);
        assert_eq!(v.status, Status::EnoughUntil);
        let until = v.until_step.unwrap();
        assert!((999_990..=1_000_000).contains(&until), "until {until}");
    }

    #[test]
    fn a_certificate_that_holds_judges_alone() {
        // The rule of `judging_by` (docs/cli.md, "Which lenses judge"): a certified lens whose certificate held
        // judges alone, even beside estimates; one whose certificate stopped counts as an estimate.
        let certified =
            Evidence { certified: true, guaranteed: false, lens: "certified".into(), ..evidence(None, None) };
        let bound = Evidence { guaranteed: true, lens: "bound".into(), ..evidence(None, None) };
        let all = [bound.clone(), evidence(None, None), certified.clone()];
        let (basis, judges) = judging_by(&all, Evidence::standing);
        assert_eq!((basis, judges.len(), judges[0].lens.as_str()), (Basis::Guarantee, 1, "certified"));
        let stopped = Evidence { certified: false, ..certified };
        let pair = [bound, stopped];
        let (basis, judges) = judging_by(&pair, Evidence::standing);
        assert_eq!((basis, judges.len(), judges[0].lens.as_str()), (Basis::Estimate, 1, "certified"));
        // The certified lens's crossing decides the status as any judging lens's does.
        let crossing = Evidence { certified: true, lens: "certified".into(), ..evidence(Some(42), None) };
        let v = decide(&[evidence(None, None), crossing], 100, 100);
        assert_eq!((v.status, v.until_step, v.basis), (Status::EnoughUntil, Some(41), Basis::Guarantee));
    }

    #[test]
    fn estimates_judge_when_there_are_any_and_a_lost_error_ranks_worst() {
        // The rule of `judging` (docs/cli.md, "Which lenses judge"): a guaranteed lens judges only without estimates.
        let bound = Evidence { guaranteed: true, lens: "bound".into(), ..evidence(None, None) };
        let both = [bound.clone(), evidence(None, None)];
        let (basis, judges) = judging(&both, |e| e.guaranteed);
        assert_eq!((basis, judges.len(), judges[0].lens.as_str()), (Basis::Estimate, 1, "shadow"));
        let (basis, judges) = judging(std::slice::from_ref(&bound), |e| e.guaranteed);
        assert_eq!((basis, judges.len()), (Basis::Bound, 1));
        // An error that overflowed (NaN against its allowance) is the closest to the tolerance, not the farthest.
        let lost = Evidence { field: "w".into(), final_max_err: f64::NAN, ..evidence(None, None) };
        match decide(&[evidence(None, None), lost], 100, 100).finding {
            Finding::Within { field, .. } => assert_eq!(field, "w"),
            other => panic!("{other:?}"),
        }
    }
}
