//! A lens's thread: keeps the lens's time levels and the plain f64 original's, runs the steps the main thread asks
//! for, and sends back what it measured after each of them.
//!
//! One step, in one place ([`LensThread::advance`]): step the lens's twin → collect the events it recorded → step
//! the original (and the compiled-literal run) → rotate → for the certified lens, condense and seed the values for
//! the next step (`certificate::driver`) → measure.
//!
//! The certified lens is found by its type (`certificate::driver::is_certified`): its thread holds the
//! certificate, starts it on the initial data (and tries colourings on the first step), and hands the recorder the
//! certificate's facts with every step's measurements; a step where the certificate no longer holds is measured
//! without a bound, so nothing downstream reads a guarantee past its end.
//!
//! The lens runs as its unwatched variant, whose loops vectorize. Each chunk of steps starts from a checkpoint of
//! the levels; when a step turns a value non-finite ([`ReplayTrigger`]), the steps from the checkpoint to it are
//! replayed with the watched variant — the same arithmetic, so the same numbers — and the step's events are taken
//! from the replay, which adds the NaN/∞ events with the line where each value arose. The initial data run with
//! the watched variant directly (they run once).

use crate::events::Collector;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::mpsc::{Receiver, Sender};
use std::time::{Duration, Instant};

use super::measure::{first_mismatch, measure, representation, FieldMeasure, LensStep};
use super::recorder::Plan;
use super::{Error, Levels, ProgramFloat, Scenario};
use crate::certificate::driver::{CertificateFacts, DriverCertificate};
use crate::events::{EventKind, Site};
use crate::lens::{with_literal_mode, Lens, LiteralMode};
use crate::{BaseOps, MixedOps, RefOps};

/// What a lens thread sends back for a chunk.
pub(super) type ChunkResult = Result<Vec<LensStep>, Error>;

/// The events one run of a step recorded on this thread.
type Events = Vec<(EventKind, Site, u64)>;

/// A lens thread's ends of its channels: the steps to run up to, and where the measurements of each chunk go.
pub(super) struct LensChannels {
    pub(super) commands: Receiver<u64>,
    pub(super) results: Sender<ChunkResult>,
}

/// A lens an audit can run: a [`Lens`] whose two variants a twin accepts — the bounds every twin's `where` clause
/// carries, for the unwatched variant the driver runs and for the watched one it replays with — in a program that
/// computes in `F` (`f64` by default; `f32` for the twin of an `f32` kernel, [`ProgramFloat`]). Implemented for
/// every such lens, so generic code that starts audits (`fn f<L: AuditLens>`) names this one bound; a lens that
/// cannot take the program's float (the f64-primal lenses in an `f32` program) is a compile error at `.lens`.
///
/// Its methods are the scenario's own, for the two variants: the one place where those bounds are needed (Rust does
/// not imply them), so that the lens thread is written against `L: AuditLens<F>` alone.
pub trait AuditLens<F: ProgramFloat = f64>: Lens {
    /// The scenario's initial data, with the watched variant.
    #[doc(hidden)]
    fn init_watched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Watched>) -> Result<(), Error>;
    /// The scenario's initial data, with the unwatched variant.
    #[doc(hidden)]
    fn init_unwatched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Unwatched>) -> Result<(), Error>;
    /// One step of the scenario, with the unwatched variant.
    #[doc(hidden)]
    fn step_unwatched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Unwatched>);
    /// One step of the scenario, with the watched variant.
    #[doc(hidden)]
    fn step_watched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Watched>);
}

impl<L, F> AuditLens<F> for L
where
    F: ProgramFloat,
    L: Lens,
    L::Unwatched: BaseOps<F>,
    F: MixedOps<L::Unwatched> + MixedOps<L::Watched>,
    for<'a> &'a L::Unwatched: RefOps<L::Unwatched>,
    L::Watched: BaseOps<F>,
    for<'a> &'a L::Watched: RefOps<L::Watched>,
{
    fn init_watched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Watched>) -> Result<(), Error> {
        scenario.init(levels)
    }

    fn init_unwatched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Unwatched>) -> Result<(), Error> {
        scenario.init(levels)
    }

    fn step_unwatched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Unwatched>) {
        scenario.step(levels);
    }

    fn step_watched<S: Scenario<F>>(scenario: &S, levels: &mut Levels<Self::Watched>) {
        scenario.step(levels);
    }
}

/// The body of a lens's thread, instantiated for the lens, the scenario and its float when the lens is added to an
/// audit.
pub(super) fn run<L: AuditLens<F>, S: Scenario<F>, F: ProgramFloat>(scenario: &S, plan: &Plan, channels: LensChannels) {
    LensThread::<L, S, F>::new(scenario, plan).serve(channels);
}

/// The most steps one lens thread replays with the watched lens; past it, NaN/∞ events still name the step and the
/// field (from the measurements) but no longer the line. A field that holds NaN usually keeps meeting it in
/// comparisons at every step, and every replay after the first finds nothing new.
const MAX_REPLAYS: usize = 16;

/// How old a checkpoint may grow before a chunk renews it.
const CHECKPOINT_AGE: Duration = Duration::from_millis(500);

/// What the lens recorded since the last call, on any thread: its events, and whether an unwatched variant noted a
/// non-finite value the fields may not show (`events::note_unseen_non_finite`). Taken together after every run
/// of a step, so that nothing one run leaves behind is read as the next one's.
fn collect(collector: &Collector) -> (Events, bool) {
    (collector.take(), collector.take_unseen_non_finite())
}

/// When a step needs a replay with the watched lens: the first step at which a field's primal or its error turns
/// non-finite, and a step in which the unwatched lens noted a non-finite value that the fields may not show.
struct ReplayTrigger {
    primal_non_finite: Vec<bool>,
    error_non_finite: Vec<bool>,
    replays: usize,
}

impl ReplayTrigger {
    fn new(fields: usize) -> ReplayTrigger {
        ReplayTrigger { primal_non_finite: vec![false; fields], error_non_finite: vec![false; fields], replays: 0 }
    }

    /// Whether the step just measured needs a replay; `noted` is the unwatched lens's note.
    fn fires(&mut self, measured: &LensStep, noted: bool) -> bool {
        let mut fires = noted;
        for (i, field) in measured.fields.iter().enumerate() {
            let primal = field.nan || field.infinite;
            let error = !field.max_err.is_finite();
            fires |= (primal && !self.primal_non_finite[i]) || (error && !self.error_non_finite[i]);
            self.primal_non_finite[i] |= primal;
            self.error_non_finite[i] |= error;
        }
        let fires = fires && self.replays < MAX_REPLAYS;
        self.replays += usize::from(fires);
        fires
    }
}

/// Where a replay begins: the levels before a step, that step, and when the copy was taken.
struct Checkpoint<T> {
    levels: Levels<T>,
    step: u64,
    taken: Instant,
}

/// The state of one lens's thread between chunks.
struct LensThread<'s, L: Lens, S, F> {
    scenario: &'s S,
    plan: &'s Plan,
    /// The lens's levels, unwatched.
    twin: Levels<L::Unwatched>,
    /// The plain original's levels, in the program's float.
    original: Levels<F>,
    /// The same lens with literals and constants as compiled, when the audit splits off the representation error:
    /// what is left in it is arithmetic error only.
    compiled: Option<Levels<L::Unwatched>>,
    trigger: ReplayTrigger,
    checkpoint: Option<Checkpoint<L::Unwatched>>,
    /// The next step to run (`n` of `n → n + 1`); `None` before the initial data.
    next: Option<u64>,
    /// The certified lens's certificate (`None` for every other lens).
    certificate: Option<DriverCertificate>,
}

impl<'s, L: AuditLens<F>, S: Scenario<F>, F: ProgramFloat> LensThread<'s, L, S, F> {
    fn new(scenario: &'s S, plan: &'s Plan) -> Self {
        let (levels, stages) = (scenario.scheme().levels(), scenario.stages());
        LensThread {
            scenario,
            plan,
            twin: Levels::new(&plan.fields, levels, stages),
            original: Levels::new(&plan.fields, levels, stages),
            compiled: plan.split_representation.then(|| Levels::new(&plan.fields, levels, stages)),
            trigger: ReplayTrigger::new(plan.fields.len()),
            checkpoint: None,
            next: None,
            certificate: None,
        }
    }

    /// Runs the chunks the main thread asks for until it hangs up, or until a chunk fails (the error is the
    /// thread's last message).
    fn serve(mut self, channels: LensChannels) {
        for to in channels.commands {
            let outcome = catch_unwind(AssertUnwindSafe(|| self.chunk(to))).unwrap_or_else(|payload| {
                let message = payload
                    .downcast_ref::<&str>()
                    .map(|s| s.to_string())
                    .or_else(|| payload.downcast_ref::<String>().cloned())
                    .unwrap_or_else(|| "a panic without a message".into());
                // `next` is the step that was running: it moves on only once a step is measured.
                let step = self.next.unwrap_or(0);
                Err(Error::ScenarioPanicked { lens: L::Watched::NAME.to_string(), step, message })
            });
            let failed = outcome.is_err();
            if channels.results.send(outcome).is_err() || failed {
                return;
            }
        }
    }

    /// The measurements of every step up to state `to` not yet run (the first chunk is the initial data, step 0).
    fn chunk(&mut self, to: u64) -> ChunkResult {
        let mut out = Vec::new();
        // Held only while this chunk runs, so that another audit of the same lens type can take its turn between
        // chunks (see `events::Collector`). Starting it drops what earlier runs of the lens left behind.
        let collector = Collector::start::<L>();
        if self.next.is_none() {
            out.push(self.initial(&collector)?);
            self.next = Some(0);
        }
        // Copying the levels costs about as much as a step reading and writing them, so the checkpoint is renewed
        // at a chunk's start only every CHECKPOINT_AGE: a replay then runs at most that much work again.
        if self.checkpoint.as_ref().is_none_or(|c| c.taken.elapsed() >= CHECKPOINT_AGE) {
            self.checkpoint =
                Some(Checkpoint { levels: self.twin.clone(), step: self.next.unwrap_or(0), taken: Instant::now() });
        }
        while let Some(n) = self.next.filter(|&n| n < to) {
            out.push(self.advance(n, &collector));
            self.next = Some(n + 1);
        }
        Ok(out)
    }

    /// The initial data, written by the watched variant (they run once) and measured.
    fn initial(&mut self, collector: &Collector) -> Result<LensStep, Error> {
        let mut watched = self.twin.convert(Lens::watched);
        L::init_watched(self.scenario, &mut watched)?;
        let (events, _) = collect(collector); // the watched variant notes nothing
        self.twin = watched.convert(Lens::unwatched);
        self.scenario.init_original(&mut self.original)?;
        if let Some(compiled) = self.compiled.as_mut() {
            with_literal_mode(LiteralMode::AsCompiled, || L::init_unwatched(self.scenario, compiled))?;
        }
        let _ = collect(collector);
        let facts = self.start_certificate(collector)?;
        let measured = self.observe(0, events, facts);
        let _ = self.trigger.fires(&measured, false); // the watched run already saw the initial data
        Ok(measured)
    }

    /// For the certified lens: the certificate on the initial data (their radii, then the seeds of step 0), and,
    /// unless the options fix the colouring, the colouring whose lists clash least on a trial of the first step.
    fn start_certificate(&mut self, collector: &Collector) -> Result<Option<CertificateFacts>, Error> {
        let plan = self.plan;
        let Some(started) = DriverCertificate::start(&mut self.twin, &plan.certificate, plan.steps) else {
            return Ok(None);
        };
        let mut certificate =
            started.map_err(|reason| Error::Certificate { lens: L::Watched::NAME.to_string(), reason })?;
        let facts = certificate.begin(&mut self.twin);
        if plan.certificate.colouring.is_none() {
            let scenario = self.scenario;
            let _ = collector.take_list_clashes(); // the initial data's, if any
            certificate.choose_colouring(&mut self.twin, |copy| {
                L::step_unwatched(scenario, copy);
                let _ = collect(collector);
                Ok::<u64, Error>(collector.take_list_clashes())
            })?;
        }
        self.certificate = Some(certificate);
        Ok(facts)
    }

    /// One step `n → n + 1` of the lens, the original and the compiled-literal run, measured.
    fn advance(&mut self, n: u64, collector: &Collector) -> LensStep {
        (self.twin.step, self.original.step) = (n, n);
        // The list clashes that the last step's compiled-literal run and replay gathered (the same lens type) are
        // not this step's.
        let _ = collector.take_list_clashes();
        L::step_unwatched(self.scenario, &mut self.twin);
        let (events, noted) = collect(collector);
        let clashes = collector.take_list_clashes();
        self.scenario.step_original(&mut self.original);
        if let Some(compiled) = self.compiled.as_mut() {
            compiled.step = n;
            with_literal_mode(LiteralMode::AsCompiled, || L::step_unwatched(self.scenario, compiled));
            compiled.rotate();
        }
        // The original and the compiled-literal run record nothing of interest: their events are dropped.
        let _ = collect(collector);
        self.twin.rotate();
        self.original.rotate();
        let facts = self.certificate.as_mut().and_then(|c| c.after_step(&mut self.twin, &events, clashes));
        let mut measured = self.observe(n + 1, events, facts);
        if self.trigger.fires(&measured, noted) {
            if let Some(checkpoint) = &self.checkpoint {
                let replayed = self.replay(checkpoint, n, collector);
                measured.events = with_non_finite_sites(std::mem::take(&mut measured.events), replayed);
            }
            // Later replays (a NaN keeps meeting comparisons) start from here and cost one step.
            self.checkpoint = Some(Checkpoint { levels: self.twin.clone(), step: n + 1, taken: Instant::now() });
        }
        measured
    }

    /// Runs steps `checkpoint.step..=step` again from the checkpoint, with the watched variant of the lens, and
    /// returns the events of the last of them (the steps before were recorded when they ran).
    fn replay(&self, checkpoint: &Checkpoint<L::Unwatched>, step: u64, collector: &Collector) -> Events {
        let mut watched = checkpoint.levels.convert(Lens::watched);
        let mut events = Vec::new();
        for k in checkpoint.step..=step {
            watched.step = k;
            L::step_watched(self.scenario, &mut watched);
            events = collector.take();
            watched.rotate();
        }
        events
    }

    /// Measures every field of the current level and compares its primal with the original; a certified lens's
    /// step comes with its certificate's facts, and without a bound where the certificate no longer holds.
    fn observe(&self, step: u64, events: Events, certificate: Option<CertificateFacts>) -> LensStep {
        let plan = self.plan;
        let ended = certificate.as_ref().is_some_and(|c| !c.step.holds);
        let fields = self
            .twin
            .current
            .iter()
            .enumerate()
            .map(|(i, f)| {
                let mut measured = FieldMeasure {
                    representation_err: self.compiled.as_ref().map(|c| representation(f, &c.current[i])),
                    ..measure(f, &plan.tolerance, plan.profiled(i))
                };
                if ended {
                    (measured.bound, measured.bound_tol_ratio) = (None, None);
                }
                measured
            })
            .collect();
        // A lens whose primal emulates another format than the program's computes something else by design:
        // nothing to compare.
        let mismatches = self
            .twin
            .current
            .iter()
            .take(if F::reproduced_by::<L>() { usize::MAX } else { 0 })
            .zip(&self.original.current)
            .enumerate()
            .filter_map(|(i, (t, o))| first_mismatch(i, t, o))
            .collect();
        LensStep { step, fields, events, mismatches, certificate }
    }
}

/// The events of a step that was replayed: the NaN/∞ events of the watched replay (with the lines where the values
/// arose) and every other event of the unwatched run. The two variants record the same other events from the same
/// arithmetic; keeping the unwatched run's also keeps what the certificate decided on, since a replay of several
/// steps from an older checkpoint runs the certified lens without the condensations between them.
fn with_non_finite_sites(unwatched: Events, replayed: Events) -> Events {
    let non_finite = |kind: &EventKind| matches!(kind, EventKind::Nan | EventKind::Infinity);
    let mut events: Events = replayed.into_iter().filter(|(kind, _, _)| non_finite(kind)).collect();
    events.extend(unwatched.into_iter().filter(|(kind, _, _)| !non_finite(kind)));
    events
}
