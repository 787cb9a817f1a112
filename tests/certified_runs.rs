//! Runs of the certificate that check its logic rather than one kernel's numbers: random signed stencils against
//! exact rationals, the signed condensation (a test that fails if absolute values are taken before summing), an
//! undecided limiter that must end the certificate at its line, and tightness over 10⁵ steps against the shadow.

mod certified_support;

use certified_support::{line, HeatStep, MinmodStep, Step, UpwindStep};
use dashu_base::Abs;
use dashu_ratio::RBig;
use proptest::prelude::*;
use rayon::prelude::*;
use twinstep::audit::Levels;
use twinstep::certificate::{certify, CertificateOptions, EndReason, Route};
use twinstep::events::EventKind;
use twinstep::lens::scalar::Core;
use twinstep::{BaseOps, MixedOps, Real, RefOps};
use twinstep_fixtures::plateau::plateau_twin;

/// A linear stencil with arbitrary signed weights on a periodic grid: `out_i = Σ_k w_k u_{i+k−h}`.
// Only the twin runs here; the rewrite keeps the original beside it.
#[allow(dead_code)]
#[twinstep::audit]
fn stencil_step(u: &[f64], out: &mut [f64], weights: &[f64]) {
    let n = u.len();
    let half = weights.len() / 2;
    for i in 0..n {
        let mut acc = 0.0;
        for k in 0..weights.len() {
            acc += weights[k] * u[(i + n + k - half) % n];
        }
        out[i] = acc;
    }
}

/// The same stencil with one rayon task per cell (the loop of many parallel solvers).
#[allow(dead_code)]
#[twinstep::audit]
fn stencil_step_parallel(u: &[f64], out: &mut [f64], weights: &[f64]) {
    let n = u.len();
    let half = weights.len() / 2;
    out.par_iter_mut().enumerate().for_each(|(i, o)| {
        let mut acc = 0.0;
        for k in 0..weights.len() {
            acc += weights[k] * u[(i + n + k - half) % n];
        }
        *o = acc;
    });
}

/// The weights of [`stencil_step`], and whether to run its rayon twin ([`stencil_step_parallel`]) instead.
struct Weights {
    values: Vec<f64>,
    on_rayon: bool,
}

impl Step for Weights {
    fn run<T>(&self, levels: &mut Levels<T>)
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        let w: Vec<T> = self.values.iter().map(|&x| T::from_f64(x)).collect();
        if self.on_rayon {
            stencil_step_parallel_twin::<T>(&levels.current[0], &mut levels.next[0], &w);
        } else {
            stencil_step_twin::<T>(&levels.current[0], &mut levels.next[0], &w);
        }
    }
}

fn rat(x: f64) -> RBig {
    RBig::try_from(x).expect("finite double")
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    /// Random stencils — widths 1 to 5, weights of both signs, grids of 3 to 19 cells whose periodic wrap can make
    /// list slots clash — over four steps, against the scheme in exact rationals (dashu-ratio).
    #[test]
    fn random_signed_stencils_are_enclosed(
        weights in proptest::collection::vec(-1.5f64..1.5, 1..=5),
        start in proptest::collection::vec(-4.0f64..4.0, 3..=19),
    ) {
        let line = line(start.clone(), Weights { values: weights.clone(), on_rayon: false });
        let n = start.len();
        let mut exact: Vec<RBig> = start.iter().map(|&v| rat(v)).collect();
        let w: Vec<RBig> = weights.iter().map(|&v| rat(v)).collect();
        let half = weights.len() / 2;
        certify::<_, 4>(&line, 4, CertificateOptions::default(), |levels, facts| {
            if facts.step > 0 {
                exact = (0..n)
                    .map(|i| (0..w.len()).fold(RBig::ZERO, |acc, k| acc + w[k].clone() * exact[(i + n + k - half) % n].clone()))
                    .collect();
            }
            for (i, value) in levels.current[0].iter().enumerate() {
                let (hi, lo) = value.shadow();
                let d = value.radius();
                let distance = (rat(hi) + rat(lo) - exact[i].clone()).abs();
                assert!(distance <= rat(d), "step {}, cell {i}: |shadow − exact| > D = {d:e}", facts.step);
                let (lower, upper) = value.guaranteed_error();
                let error = (rat(Core::primal(*value)) - exact[i].clone()).abs();
                assert!(rat(lower) <= error && error <= rat(upper), "step {}, cell {i}: true error outside", facts.step);
            }
        })
        .expect("the run");
    }
}

/// Fails when the condensation takes absolute values before summing. At r = ½ the heat stencil's coefficient of
/// `u_i` in its own update is 1 − 2r = 0: summed with signs, `D⁺_i = ½D_{i−1} + ½D_{i+1} + L` and the radius grows
/// by the local bounds only; taken absolutely (the dependency effect), `|1| + |−2r| + 2r = 3` per step, so after
/// 300 steps the radius would be 3³⁰⁰ ≈ 10¹⁴³ times the local bound.
#[test]
fn condensation_sums_signed_coefficients_before_absolute_values() {
    let start: Vec<f64> = (0..40).map(|i| 1.0 + (i as f64 * 0.4).sin()).collect();
    let line = line(start, HeatStep(0.5));
    let mut worst = 0.0f64;
    let options = CertificateOptions { route: Route::Forward, ..Default::default() };
    let run = certify::<_, 4>(&line, 300, options, |_, facts| worst = worst.max(facts.fields[0].max_radius))
        .expect("the run");
    // Each step adds local bounds of a few u²·max|u| (u² ≈ 1.2·10⁻³²; max|u| ≤ 2): 300 steps stay below 10⁻²⁸.
    assert!(worst < 1e-28, "the radius grew to {worst:e}");
    assert!((run.growth - 1.0).abs() < 1e-12, "Σ|c| = 0 + ½ + ½ = 1 per row: {}", run.growth);
}

/// MUSCL with minmod over initial data from `twinstep_fixtures::plateau`, computed through the twin.
struct Plateau;

impl Step for Plateau {
    fn run<T>(&self, levels: &mut Levels<T>)
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        MinmodStep(0.4).run(levels);
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> bool
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        levels.current[0].fill(|ix| plateau_twin::<T>(ix[0]));
        true
    }
}

/// On the plateau the primal slopes are exactly 0, but the computed initial data carry a radius, so the ball of
/// `a·b` holds values of both signs: `a * b <= 0.0` in `fixtures/src/advection_minmod.rs` cannot be decided, and
/// the certificate must end at step 1, naming that line, and hold at no later step.
#[test]
fn an_undecided_limiter_ends_the_certificate_at_its_line() {
    let mut holds = Vec::new();
    let run = certify::<_, 8>(&line(vec![0.0; 24], Plateau), 10, CertificateOptions::default(), |_, facts| {
        holds.push(facts.holds)
    })
    .expect("the run");
    let end = run.end.expect("the certificate ends");
    assert_eq!(end.step, 1);
    let EndReason::Undecided { sites } = end.reason;
    let source = include_str!("../fixtures/src/advection_minmod.rs");
    let line = source.lines().position(|l| l.contains("if a * b <= 0.0")).expect("the limiter's test") as u32 + 1;
    assert!(
        sites.iter().any(|(kind, site, _)| *kind == EventKind::UndecidedComparison
            && site.file.ends_with("advection_minmod.rs")
            && site.line == line),
        "sites {sites:?}, expected advection_minmod.rs:{line}"
    );
    assert_eq!(holds, [true, false, false, false, false, false, false, false, false, false, false]);
}

/// Over 10⁵ steps of the monotone schemes the radius stays far below the error: the upper end of the worst error
/// is within a factor 1 + 10⁻⁶ of the shadow's estimate of it, plus 10⁻³⁰·max|u| (the criterion, compared
/// against the shadow beyond what the 1024-bit oracle can afford; the shadow is within `D` of exact, so
/// `estimate + D` is the upper end itself).
#[test]
fn monotone_schemes_stay_tight_for_100000_steps() {
    let start: Vec<f64> = (0..24).map(|i| 300.0 + (i as f64 * 0.5).sin()).collect();
    let check = |what: &str, facts: &twinstep::certificate::StepCertificate, scale: f64| {
        let f = &facts.fields[0];
        assert!(facts.holds, "{what}: ended at {}", facts.step);
        assert!(
            f.worst.1 <= (1.0 + 1e-6) * f.estimate + 1e-30 * scale,
            "{what}, step {}: upper {:e} against estimate {:e}",
            facts.step,
            f.worst.1,
            f.estimate
        );
    };
    let steps = 100_000;
    let heat = line(start.clone(), HeatStep(0.25));
    certify::<_, 4>(&heat, steps, CertificateOptions::default(), |_, facts| check("heat", facts, 301.0)).expect("heat");
    let nu: Vec<f64> = (0..24).map(|i| 0.6 * (i as f64 * 0.26 + 0.1).cos()).collect();
    let upwind = line(start.clone(), UpwindStep(nu));
    certify::<_, 4>(&upwind, steps, CertificateOptions::default(), |_, facts| check("upwind", facts, 301.0))
        .expect("upwind");
}

/// The pass after each step runs on rayon's threads for grids of `PARALLEL_IDS` ids or more, in runs whose results
/// are merged in order: every step's facts (worst cell and its interval, radii, estimates) and every value's
/// guaranteed interval must be those of the pass on one thread, bit for bit. A limiter scheme over data with
/// repeated values, so that ties for the worst cell fall in different runs, and some cells' radii differ.
#[test]
fn the_parallel_pass_gives_the_facts_of_the_one_thread_pass() {
    use twinstep::certificate::PARALLEL_IDS;
    let cells = PARALLEL_IDS / 2 + 4099; // two levels: more ids than the threshold, runs of unequal length
    let start: Vec<f64> = (0..cells).map(|i| 1.0 + 0.25 * ((i % 97) as f64 * 0.13).sin().round()).collect();
    let case = line(start, MinmodStep(0.4));
    let run = |parallel: bool| {
        let mut facts = Vec::new();
        let mut last = Vec::new();
        let options = CertificateOptions { route: Route::Forward, parallel, ..Default::default() };
        let outcome = certify::<_, 4>(&case, 12, options, |levels, step| {
            facts.push(step.clone());
            last = levels.current[0].iter().map(|v| (v.guaranteed_error(), v.radius())).collect();
        })
        .expect("the run");
        (facts, last, outcome.end)
    };
    let (threads, one) = (run(true), run(false));
    assert!(threads.0.iter().any(|f| f.fields[0].max_radius > 0.0), "the radii stay zero: nothing is compared");
    assert_eq!(threads.0, one.0, "the steps' facts differ");
    let bits = |v: &[((f64, f64), f64)]| {
        v.iter().map(|((a, b), d)| [a.to_bits(), b.to_bits(), d.to_bits()]).collect::<Vec<_>>()
    };
    assert_eq!(bits(&threads.1), bits(&one.1), "the values' guaranteed intervals differ");
    assert_eq!(threads.2, one.2);
}

/// A seven-point stencil with four list slots: some inputs of every cell share a slot whatever the colouring, so
/// the lists clash. Run on rayon's workers, the clashes must be counted as on one thread — step by step and in
/// total — and the colouring trial, which counts them, must choose the same colouring.
#[test]
fn clashes_on_rayon_workers_count_as_on_one_thread() {
    let stencil = vec![0.05, -0.1, 0.2, 0.7, 0.2, -0.1, 0.05];
    let start: Vec<f64> = (0..64).map(|i| 1.0 + (i as f64 * 0.3).sin()).collect();
    let sequential = line(start.clone(), Weights { values: stencil.clone(), on_rayon: false });
    let parallel = line(start, Weights { values: stencil, on_rayon: true });
    let run = |case: &dyn Fn(&mut Vec<u64>) -> twinstep::certificate::CertifiedRun| {
        let mut per_step = Vec::new();
        let outcome = case(&mut per_step);
        (per_step, outcome.clashes, outcome.colouring, outcome.last)
    };
    let one = run(&|steps| {
        certify::<_, 4>(&sequential, 6, CertificateOptions::default(), |_, f| steps.push(f.clashes)).expect("the run")
    });
    let threads = run(&|steps| {
        certify::<_, 4>(&parallel, 6, CertificateOptions::default(), |_, f| steps.push(f.clashes)).expect("the run")
    });
    assert!(one.1 > 0, "no list clashed: the test shows nothing");
    assert_eq!(threads.0, one.0, "clashes per step");
    assert_eq!(threads.1, one.1, "clashes in total");
    assert_eq!(threads.2, one.2, "the colouring chosen");
    assert_eq!(threads.3, one.3, "the last step's facts");
}
