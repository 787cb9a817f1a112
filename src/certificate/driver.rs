//! The certificate inside the audit driver, which is generic over the lens: the driver's levels are reached as the
//! certified lens's own by downcasting (`Any`), so the lens thread needs no trait bound of its own for it, and the
//! certificate runs around every step of whichever lens thread holds a certified lens (any of its capacities).
//!
//! [`DriverCertificate`] wraps a [`Certificate`] with what the recorder needs besides the step's facts: the
//! route, the end at the step it happens, the mean growth where the report words it, and the run's totals at the
//! last step. The colouring trial of the first step (`choose_colouring`) is shared with [`super::certify`].

use std::any::Any;

use super::{
    BackwardCost, Certificate, CertificateEnd, CertificateOptions, Colouring, Route, SetupError, StepCertificate,
};
use crate::audit::Levels;
use crate::events::{EventKind, Site};
use crate::lens::CertifiedOf;

/// The levels of the unwatched certified lens, by capacity.
enum CertifiedLevels<'a> {
    K4(&'a mut Levels<CertifiedOf<4, false>>),
    K8(&'a mut Levels<CertifiedOf<8, false>>),
    K16(&'a mut Levels<CertifiedOf<16, false>>),
}

impl<'a> CertifiedLevels<'a> {
    /// `levels` as a certified lens's, when that is what they hold.
    fn of<T: 'static>(levels: &'a mut Levels<T>) -> Option<CertifiedLevels<'a>> {
        let any = levels as &mut dyn Any;
        if any.is::<Levels<CertifiedOf<4, false>>>() {
            any.downcast_mut().map(CertifiedLevels::K4)
        } else if any.is::<Levels<CertifiedOf<8, false>>>() {
            any.downcast_mut().map(CertifiedLevels::K8)
        } else {
            any.downcast_mut().map(CertifiedLevels::K16)
        }
    }
}

/// Calls a generic method of [`Certificate`] on whichever capacity the levels hold.
macro_rules! on_levels {
    ($levels:expr, |$l:ident| $body:expr) => {
        match $levels {
            CertifiedLevels::K4($l) => $body,
            CertifiedLevels::K8($l) => $body,
            CertifiedLevels::K16($l) => $body,
        }
    };
}

/// Whether a lens type's unwatched levels are the certified lens's (then the driver runs a certificate for it).
#[must_use]
pub fn is_certified<T: 'static>() -> bool {
    let id = std::any::TypeId::of::<T>();
    [
        std::any::TypeId::of::<CertifiedOf<4, false>>(),
        std::any::TypeId::of::<CertifiedOf<8, false>>(),
        std::any::TypeId::of::<CertifiedOf<16, false>>(),
    ]
    .contains(&id)
}

/// What the run left, for the summary: sent with the last step's facts.
#[derive(Clone, Debug, PartialEq)]
pub struct RunTotals {
    pub backward: BackwardCost,
    pub backward_declined: bool,
    pub clashes: u64,
}

/// The certificate's facts after one step, as the driver hands them to the recorder.
#[derive(Clone, Debug, PartialEq)]
pub struct CertificateFacts {
    pub step: StepCertificate,
    pub route: Route,
    /// The end, at the step where it happened (once).
    pub ended: Option<CertificateEnd>,
    /// The geometric mean of the growth per step so far, at the steps where the certificate ends or a field turns
    /// useless or loses cells, and at the last step (it costs a pass over the growths, so not at every step).
    pub mean_growth: Option<f64>,
    /// At the last step.
    pub totals: Option<RunTotals>,
}

/// A certificate run by the audit driver.
pub struct DriverCertificate {
    certificate: Certificate,
    horizon: u64,
    clashes: u64,
}

impl DriverCertificate {
    /// A certificate for the levels, when they are a certified lens's (`None` for any other lens); `horizon` is the
    /// number of steps the audit runs.
    pub fn start<T: 'static>(
        levels: &mut Levels<T>,
        options: &CertificateOptions,
        horizon: u64,
    ) -> Option<Result<DriverCertificate, SetupError>> {
        if !is_certified::<T>() {
            return None;
        }
        let levels = CertifiedLevels::of(levels)?;
        let certificate = on_levels!(levels, |l| Certificate::new(l, options.clone(), Some(horizon)));
        Some(certificate.map(|certificate| DriverCertificate { certificate, horizon, clashes: 0 }))
    }

    /// Starts on the initial data (see [`Certificate::begin`]).
    pub fn begin<T: 'static>(&mut self, levels: &mut Levels<T>) -> Option<CertificateFacts> {
        let step = on_levels!(CertifiedLevels::of(levels)?, |l| self.certificate.begin(l));
        Some(self.facts(step))
    }

    /// After a step, once the levels have rotated (see [`Certificate::after_step`]).
    pub fn after_step<T: 'static>(
        &mut self,
        levels: &mut Levels<T>,
        events: &[(EventKind, Site, u64)],
        clashes: u64,
    ) -> Option<CertificateFacts> {
        let step = on_levels!(CertifiedLevels::of(levels)?, |l| self.certificate.after_step(l, events, clashes));
        self.clashes += step.clashes;
        Some(self.facts(step))
    }

    fn facts(&self, step: StepCertificate) -> CertificateFacts {
        let c = &self.certificate;
        let n = step.step;
        let ended = c.end().filter(|end| end.step == n).cloned();
        let turned = |from: &[Option<u64>]| from.contains(&Some(n)) && n > 0;
        let last = n == self.horizon;
        let mean_growth =
            (ended.is_some() || turned(c.useless_from()) || turned(c.lost_from()) || last).then(|| c.growth());
        let totals = last.then(|| RunTotals {
            backward: c.backward_cost(),
            backward_declined: c.backward_declined(),
            clashes: self.clashes,
        });
        CertificateFacts { step, route: c.route(), ended, mean_growth, totals }
    }

    /// Chooses the colouring by trying the first step, see `choose_colouring`.
    pub fn choose_colouring<T: Clone + 'static, E>(
        &mut self,
        levels: &mut Levels<T>,
        step: impl FnMut(&mut Levels<T>) -> Result<u64, E>,
    ) -> Result<(), E> {
        choose_colouring(&mut self.certificate, levels, step)
    }
}

/// Tries the first step on a copy of the seeded levels with the current colouring and, if its lists clash, with
/// each candidate; keeps the one with the fewest clashes (the first on a tie) and re-seeds `levels` with it. `step`
/// runs one step of the scenario on a copy, drops the events it recorded and returns its list clashes (from the
/// lens's collector, so that those on other threads count).
pub(crate) fn choose_colouring<T: Clone + 'static, E>(
    certificate: &mut Certificate,
    levels: &mut Levels<T>,
    mut step: impl FnMut(&mut Levels<T>) -> Result<u64, E>,
) -> Result<(), E> {
    if !is_certified::<T>() {
        return Ok(());
    }
    let mut trial = |certificate: &mut Certificate, colouring: &Colouring| -> Result<u64, E> {
        let mut copy = levels.clone();
        if let Some(l) = CertifiedLevels::of(&mut copy) {
            let _ = on_levels!(l, |l| certificate.recolour(l, colouring.clone()));
        }
        step(&mut copy)
    };
    let first = certificate.colouring().clone();
    let mut best = (trial(certificate, &first)?, first);
    if best.0 > 0 {
        for candidate in certificate.colourings(certificate.colouring_slots()).into_iter().skip(1) {
            let clashes = trial(certificate, &candidate)?;
            if clashes < best.0 {
                best = (clashes, candidate);
            }
            if best.0 == 0 {
                break;
            }
        }
    }
    if let Some(l) = CertifiedLevels::of(levels) {
        let _ = on_levels!(l, |l| certificate.recolour(l, best.1));
    }
    Ok(())
}
