//! A certified run of a [`Scenario`] without the audit driver: initial data, then each step between the two
//! certificate calls, exactly as the driver is to call them (see the module paragraph of [`super`]).

use std::panic::{catch_unwind, AssertUnwindSafe};

use super::{
    BackwardCost, Certificate, CertificateEnd, CertificateOptions, Colouring, Route, SetupError, StepCertificate,
};
use crate::audit::{validate_fields, Error, Levels, Scenario, Scheme};
use crate::lens::{CertifiedOf, Lens};
use crate::{BaseOps, MixedOps, Real, RefOps};

/// What a certified run leaves.
#[derive(Clone, Debug)]
pub struct CertifiedRun {
    /// Steps run.
    pub steps: u64,
    /// Where the certificate ended, if it did.
    pub end: Option<CertificateEnd>,
    /// The route the run took.
    pub route: Route,
    /// The measured growth of `|J̃|` per step (geometric mean, see [`Certificate::growth`]).
    pub growth: f64,
    /// The backward route's cost.
    pub backward: BackwardCost,
    /// Whether the backward route was wanted but the levels had more than `MAX_BACKWARD_IDS` ids.
    pub backward_declined: bool,
    /// The colouring used.
    pub colouring: Colouring,
    /// List clashes over the run.
    pub clashes: u64,
    /// Per field: the first step with lost cells.
    pub lost_from: Vec<Option<u64>>,
    /// Per field: the first step at which the certificate grew useless.
    pub useless_from: Vec<Option<u64>>,
    /// The facts of the last step.
    pub last: StepCertificate,
}

/// How many time levels a scheme keeps.
fn levels_of(scheme: Scheme) -> usize {
    match scheme {
        Scheme::InPlace => 1,
        Scheme::TwoLevel => 2,
        Scheme::ThreeLevel => 3,
    }
}

/// The message of a panic payload.
fn panic_message(payload: &(dyn std::any::Any + Send)) -> String {
    payload
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "a panic without a message".into())
}

/// Runs `steps` steps of `scenario` with the unwatched certified lens of `K` slots, seeding and condensing around
/// every step, and calls `observe` after the initial data (step 0) and after each step with the levels (their
/// `current` values carry the certificate: `CertifiedOf::guaranteed_error`) and the step's facts.
///
/// Without a colouring in `options`, the first step is tried on a copy with each candidate colouring when the
/// default one makes list entries clash, and the one with the fewest clashes is kept.
pub fn certify<S: Scenario, const K: usize>(
    scenario: &S,
    steps: u64,
    options: CertificateOptions,
    mut observe: impl FnMut(&Levels<CertifiedOf<K, false>>, &StepCertificate),
) -> Result<CertifiedRun, Error>
where
    CertifiedOf<K, false>: Real + BaseOps<f64> + Lens,
    f64: MixedOps<CertifiedOf<K, false>>,
    for<'a> &'a CertifiedOf<K, false>: RefOps<CertifiedOf<K, false>>,
{
    let fields = scenario.fields();
    validate_fields(&fields)?;
    if steps == 0 {
        return Err(Error::ZeroSteps);
    }
    let lens = <CertifiedOf<K, false> as Lens>::Watched::NAME;
    let panicked = |step: u64| {
        move |payload: Box<dyn std::any::Any + Send>| Error::ScenarioPanicked {
            lens: lens.to_string(),
            step,
            message: panic_message(payload.as_ref()),
        }
    };
    let mut levels = Levels::<CertifiedOf<K, false>>::new(&fields, levels_of(scenario.scheme()), scenario.stages());
    // Starting the collector drops what earlier runs of the lens left behind; it takes the lens's events from
    // every thread the scenario computes on.
    let collector = crate::events::Collector::start::<CertifiedOf<K, false>>();
    catch_unwind(AssertUnwindSafe(|| scenario.init(&mut levels))).map_err(panicked(0))??;
    let _ = collector.take();
    let _ = collector.take_list_clashes();
    let probe_colouring = options.colouring.is_none();
    let mut certificate = Certificate::new(&mut levels, options, Some(steps)).map_err(|e| match e {
        SetupError::TooManyCells | SetupError::ColouringMismatch => {
            Error::BadShape { field: fields[0].name.clone(), shape: fields[0].shape.clone() }
        }
    })?;
    let start = certificate.begin(&mut levels);
    observe(&levels, &start);
    if probe_colouring {
        choose_colouring(scenario, &mut certificate, &mut levels, &collector).map_err(panicked(0))?;
    }
    let mut clashes = 0;
    let mut last = start;
    for n in 0..steps {
        levels.step = n;
        catch_unwind(AssertUnwindSafe(|| scenario.step(&mut levels))).map_err(panicked(n))?;
        let events = collector.take();
        let step_clashes = collector.take_list_clashes();
        levels.rotate();
        last = certificate.after_step(&mut levels, &events, step_clashes);
        clashes += last.clashes;
        observe(&levels, &last);
    }
    Ok(CertifiedRun {
        steps,
        end: certificate.end().cloned(),
        route: certificate.route(),
        growth: certificate.growth(),
        backward: certificate.backward_cost(),
        backward_declined: certificate.backward_declined(),
        colouring: certificate.colouring().clone(),
        clashes,
        lost_from: certificate.lost_from().to_vec(),
        useless_from: certificate.useless_from().to_vec(),
        last,
    })
}

/// The shared colouring trial ([`super::driver::choose_colouring`]), each trial step caught and its events dropped.
fn choose_colouring<S: Scenario, const K: usize>(
    scenario: &S,
    certificate: &mut Certificate,
    levels: &mut Levels<CertifiedOf<K, false>>,
    collector: &crate::events::Collector,
) -> Result<(), Box<dyn std::any::Any + Send>>
where
    CertifiedOf<K, false>: Real + BaseOps<f64>,
    f64: MixedOps<CertifiedOf<K, false>>,
    for<'a> &'a CertifiedOf<K, false>: RefOps<CertifiedOf<K, false>>,
{
    super::driver::choose_colouring(certificate, levels, |copy| {
        catch_unwind(AssertUnwindSafe(|| scenario.step(copy)))?;
        let _ = collector.take();
        Ok(collector.take_list_clashes())
    })
}
