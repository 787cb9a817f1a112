//! The audit driver: runs a [`Scenario`] with several lenses at once, each on its own thread, each beside the
//! plain f64 original, and hands every step's measurements to the [`Recorder`].
//!
//! Why chunks: the lenses run at different speeds, and the recorder needs every lens's measurements of a step
//! together (a guaranteed bound is judged against the best estimate of the same step). So the threads run a
//! chunk of steps, the main thread records it, and the next chunk starts; the chunk length adapts so that a
//! chunk takes about a tenth of a second, which keeps the trace on disk close behind the run.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::PathBuf;
use std::sync::mpsc::{channel, Receiver, Sender};
use std::time::{Duration, Instant};

use super::measure::{first_mismatch, measure, representation, FieldMeasure, LensStep};
use super::recorder::{LensInfo, Plan};
use super::{Error, FieldSpec, Levels, RecordPolicy, Recorder, Tolerance};
use crate::lens::{with_literal_mode, Lens, LiteralMode};
use crate::trace::Trace;
use crate::{BaseOps, MixedOps, Real, RefOps};

/// How the time levels of a step relate.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Scheme {
    /// The step updates `current` in place.
    InPlace,
    /// The step reads `current` and writes `next`; the two are swapped after it.
    TwoLevel,
    /// The step reads `previous` and `current` and writes `next` (leapfrog); the three rotate after it.
    ThreeLevel,
}

impl Scheme {
    fn levels(self) -> usize {
        match self {
            Scheme::InPlace => 1,
            Scheme::TwoLevel => 2,
            Scheme::ThreeLevel => 3,
        }
    }
}

/// A time loop to audit: its fields, its initial data and its step, generic over the scalar.
///
/// `init` and `step` are called with every lens and with `f64`; the `where` clause is the one every twin the
/// macro emits carries, so the bodies can call `kernel_twin::<T>(…)` directly. `init_original` and
/// `step_original` default to the same code with `T = f64`; override them to call the untouched original kernel,
/// and the audit checks at every step that each lens's primal equals it bit for bit.
pub trait Scenario: Sync {
    /// The fields, in the order the levels hold them.
    fn fields(&self) -> Vec<FieldSpec>;

    /// How the time levels relate; two-level by default.
    fn scheme(&self) -> Scheme {
        Scheme::TwoLevel
    }

    /// How many scratch levels a multi-stage (Runge–Kutta) step needs; none by default.
    fn stages(&self) -> usize {
        0
    }

    /// The initial data as doubles, one vector per field in the order of [`Scenario::fields`] (row-major), each
    /// value taken as exact. The default [`Scenario::init`] writes them into `levels.current`; a scenario whose
    /// initial data are computed (through the twin, so that the lenses see that computation) or that has a
    /// three-level scheme overrides `init` instead and need not give them.
    fn initial_values(&self) -> Vec<Vec<f64>> {
        Vec::new()
    }

    /// Writes the initial data into `levels.current` (and `levels.previous` for a three-level scheme). By
    /// default: the doubles of [`Scenario::initial_values`] into `levels.current`.
    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error>
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        let values = self.initial_values();
        if values.len() != levels.current.len() {
            return Err(Error::InitialValues { fields: levels.current.len(), given: values.len() });
        }
        levels.current.iter_mut().zip(&values).try_for_each(|(field, values)| field.set_f64(values))
    }

    /// Advances the fields by one step (`levels.step` → `levels.step + 1`).
    fn step<T>(&self, levels: &mut Levels<T>)
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>;

    /// The initial data of the plain f64 original.
    fn init_original(&self, levels: &mut Levels<f64>) -> Result<(), Error> {
        self.init(levels)
    }

    /// One step of the plain f64 original.
    fn step_original(&self, levels: &mut Levels<f64>) {
        self.step(levels)
    }
}

/// What a lens thread sends back for a chunk.
type ChunkResult = Result<Vec<LensStep>, Error>;
/// A lens's thread body, instantiated for the lens type when it is added.
type LensRun<S> = fn(&S, &Plan, LensChannels);

/// A lens thread's ends of its channels: the steps to run up to, and where the measurements of each chunk go.
#[doc(hidden)]
pub struct LensChannels {
    commands: Receiver<u64>,
    results: Sender<ChunkResult>,
}

/// A lens an audit can run: a [`Lens`] whose two variants a twin accepts — the bounds every twin's `where` clause
/// carries, for the unwatched variant the driver runs and for the watched one it replays with. Implemented for
/// every such lens, so generic code that starts audits (`fn f<L: AuditLens>`) names this one bound.
pub trait AuditLens: Lens {
    /// The body of the lens's thread.
    #[doc(hidden)]
    fn run_thread<S: Scenario>(scenario: &S, plan: &Plan, channels: LensChannels);
}

struct LensEntry<S> {
    info: LensInfo,
    run: LensRun<S>,
}

/// An audit of a scenario: which lenses, what tolerance, how many steps, where the trace goes.
///
/// ```ignore
/// let trace = Audit::new(&rod, Tolerance::mixed(1e-12, 1e-9)?, 500)
///     .kernel("heat_step")
///     .trace("target/twinstep/heat.jsonl")
///     .lens::<Bound>()
///     .lens::<Shadow>()
///     .run()?;
/// ```
pub struct Audit<'s, S: Scenario> {
    scenario: &'s S,
    plan: Plan,
    lenses: Vec<LensEntry<S>>,
}

impl<'s, S: Scenario> Audit<'s, S> {
    /// An audit of `steps` steps of `scenario` against `tolerance`. The trace goes to the path in the
    /// `TWINSTEP_TRACE` environment variable when it is set, else to the system's temporary directory, unless
    /// [`Audit::trace`] says otherwise.
    pub fn new(scenario: &'s S, tolerance: Tolerance, steps: u64) -> Audit<'s, S> {
        // `twinstep run` tells a harness where its trace goes through this variable (see the CLI's run command).
        let trace = std::env::var_os("TWINSTEP_TRACE")
            .map_or_else(|| std::env::temp_dir().join(format!("twinstep-{}.jsonl", std::process::id())), PathBuf::from);
        Audit { scenario, plan: Plan::new("kernel", scenario.fields(), tolerance, steps, trace), lenses: Vec::new() }
    }

    /// The kernel's name, for the trace and the report.
    #[must_use]
    pub fn kernel(mut self, name: &str) -> Self {
        self.plan.kernel = name.to_string();
        self
    }

    /// A line describing the run (grid, parameters).
    #[must_use]
    pub fn describe(mut self, text: &str) -> Self {
        self.plan.scenario = text.to_string();
        self
    }

    /// The number of steps the user plans to run, when it is more than the audited steps: the verdict
    /// extrapolates the fitted growth to it.
    #[must_use]
    pub fn horizon(mut self, steps: u64) -> Self {
        self.plan.horizon = steps;
        self
    }

    /// Where the trace goes.
    #[must_use]
    pub fn trace(mut self, path: impl Into<PathBuf>) -> Self {
        self.plan.trace = path.into();
        self
    }

    /// Records every step and every event occurrence (the trace grows with the run).
    #[must_use]
    pub fn every_step(mut self) -> Self {
        self.plan.policy = RecordPolicy::Every;
        self
    }

    /// Runs every lens a second time with the literals and constants the compiler made (instead of the decimals
    /// as written and the real constants), so each step record splits off `representation_err`, the part of the
    /// error due to representing the program's constants. Doubles the cost of every lens.
    #[must_use]
    pub fn split_representation(mut self) -> Self {
        self.plan.split_representation = true;
        self
    }

    /// Leaves out the per-cell `profile` records the trace otherwise carries for 1-D fields (the heat map of
    /// the HTML report), e.g. for readers that predate them.
    #[must_use]
    pub fn without_profiles(mut self) -> Self {
        self.plan.profiles = false;
        self
    }

    /// Adds a lens; each lens runs on its own thread. Either variant of a lens may be given (`Bound` or
    /// `BoundUnwatched`): the driver runs the unwatched one and replays with the watched one where a value turns
    /// non-finite, so both audit the same way under the watched lens's name.
    #[must_use]
    pub fn lens<L: AuditLens>(mut self) -> Self {
        self.lenses.push(LensEntry { info: LensInfo::of::<L::Watched>(), run: L::run_thread::<S> });
        self
    }

    /// Runs the audit. On success the trace on disk is complete and the same trace is returned; on an error the
    /// file (if it was created) has no summary, so every reader sees an incomplete run.
    pub fn run(self) -> Result<Trace, Error> {
        if self.lenses.is_empty() {
            return Err(Error::NoLenses);
        }
        for (i, entry) in self.lenses.iter().enumerate() {
            if self.lenses[..i].iter().any(|other| other.info.name == entry.info.name) {
                return Err(Error::DuplicateLens { lens: entry.info.name.to_string() });
            }
        }
        let mut recorder = Recorder::for_lenses(&self.plan, self.lenses.iter().map(|l| l.info.clone()).collect())?;
        let (scenario, plan) = (self.scenario, &self.plan);
        std::thread::scope(|scope| {
            let mut channels = Vec::new();
            for entry in &self.lenses {
                let (command_tx, commands) = channel::<u64>();
                let (result_tx, result_rx) = channel::<ChunkResult>();
                let run = entry.run;
                scope.spawn(move || run(scenario, plan, LensChannels { commands, results: result_tx }));
                channels.push((command_tx, result_rx));
            }
            let (mut done, mut chunk) = (None::<u64>, 1u64);
            while done != Some(plan.steps) {
                // The first chunk is the initial data alone (step 0).
                let to = done.map_or(0, |d| (d + chunk).min(plan.steps));
                let started = Instant::now();
                let mut per_lens = Vec::with_capacity(channels.len());
                for (command, _) in &channels {
                    // A send fails only if the thread has ended, which it does after reporting an error below.
                    let _ = command.send(to);
                }
                for (entry, (_, results)) in self.lenses.iter().zip(&channels) {
                    let lost = || Error::ScenarioPanicked {
                        lens: entry.info.name.to_string(),
                        step: to,
                        message: "the lens thread ended without reporting".into(),
                    };
                    per_lens.push(results.recv().map_err(|_| lost())??.into_iter());
                }
                for _ in 0..per_lens.first().map_or(0, ExactSizeIterator::len) {
                    recorder.ingest(per_lens.iter_mut().filter_map(Iterator::next).collect())?;
                }
                done = Some(to);
                // Aim at about 0.1 s per chunk, so the trace on disk stays close behind the run.
                chunk = if started.elapsed() < Duration::from_millis(100) { (chunk * 2).min(4096) } else { chunk / 2 };
                chunk = chunk.max(1);
            }
            drop(channels);
            recorder.finish()
        })
    }
}

/// The most steps one lens thread replays with the watched lens; past it, NaN/∞ events still name the step and the
/// field (from the measurements) but no longer the line. A field that holds NaN usually keeps meeting it in
/// comparisons at every step, and every replay after the first finds nothing new.
const MAX_REPLAYS: usize = 16;

/// What this thread's lens recorded since the last call: its events, and whether an unwatched variant noted a
/// non-finite value the fields may not show (`events::note_unseen_non_finite`). Taken together after every run
/// of a step, so that nothing one run leaves behind is read as the next one's.
fn collect() -> (Vec<(crate::events::EventKind, crate::events::Site, u64)>, bool) {
    (crate::events::drain(), crate::events::take_unseen_non_finite())
}

/// How old a checkpoint may grow before a chunk renews it.
const CHECKPOINT_AGE: Duration = Duration::from_millis(500);

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

/// A lens's thread: keeps the lens's levels and the f64 original's, and runs the steps each command asks for.
///
/// The lens runs as its unwatched variant, whose loops vectorize. Each chunk of steps starts from a checkpoint of
/// the levels; when a step turns a value non-finite ([`ReplayTrigger`]), the steps from the checkpoint to it are
/// replayed with the watched variant — the same arithmetic, so the same numbers — and the step's events are taken
/// from the replay, which adds the NaN/∞ events with the line where each value arose. The initial data run with
/// the watched variant directly (they run once).
impl<L> AuditLens for L
where
    L: Lens,
    L::Unwatched: BaseOps<f64>,
    f64: MixedOps<L::Unwatched> + MixedOps<L::Watched>,
    for<'a> &'a L::Unwatched: RefOps<L::Unwatched>,
    L::Watched: BaseOps<f64>,
    for<'a> &'a L::Watched: RefOps<L::Watched>,
{
    fn run_thread<S: Scenario>(scenario: &S, plan: &Plan, channels: LensChannels) {
        let LensChannels { commands, results } = channels;
        // Runs steps `from..=step` again from the `checkpoint` taken before step `from`, with the watched variant of
        // the lens, and returns the events of the last of them (the steps before were recorded when they ran).
        let replay = |checkpoint: &Levels<L::Unwatched>, from: u64, step: u64| {
            let mut watched = checkpoint.convert(Lens::watched);
            let mut events = Vec::new();
            for k in from..=step {
                watched.step = k;
                scenario.step(&mut watched);
                events = crate::events::drain();
                watched.rotate();
            }
            events
        };
        let (levels, stages) = (scenario.scheme().levels(), scenario.stages());
        let mut twin = Levels::<L::Unwatched>::new(&plan.fields, levels, stages);
        let mut original = Levels::<f64>::new(&plan.fields, levels, stages);
        // The same lens with literals and constants as compiled: what is left is arithmetic error only.
        let mut compiled = plan.split_representation.then(|| Levels::<L::Unwatched>::new(&plan.fields, levels, stages));
        let as_compiled = |f: &mut dyn FnMut()| with_literal_mode(LiteralMode::AsCompiled, f);
        let mut trigger = ReplayTrigger::new(plan.fields.len());
        let mut checkpoint = None::<(Levels<L::Unwatched>, u64, Instant)>;
        let mut next = None::<u64>;
        for to in commands {
            let mut at = next.unwrap_or(0);
            let outcome = catch_unwind(AssertUnwindSafe(|| -> ChunkResult {
                let mut out = Vec::new();
                if next.is_none() {
                    let _ = collect(); // nothing from before the audit belongs to it
                    let mut watched = Levels::<L::Watched>::new(&plan.fields, levels, stages);
                    scenario.init(&mut watched)?;
                    let (events, _) = collect(); // the watched variant notes nothing
                    twin = watched.convert(Lens::unwatched);
                    scenario.init_original(&mut original)?;
                    if let Some(c) = compiled.as_mut() {
                        let mut result = Ok(());
                        as_compiled(&mut || result = scenario.init(c));
                        result?;
                    }
                    let _ = collect();
                    let measured = observe(0, &twin, compiled.as_ref(), &original, plan, events);
                    let _ = trigger.fires(&measured, false); // the watched run already saw the initial data
                    out.push(measured);
                    next = Some(0);
                }
                // Where a replay begins: the levels before a step and the step. Copying the levels costs about as much
                // as a step reading and writing them, so the copy is renewed at a chunk's start only every
                // CHECKPOINT_AGE: a replay then runs at most that much work again.
                let start = next.unwrap_or(0);
                if checkpoint.as_ref().is_none_or(|c| c.2.elapsed() >= CHECKPOINT_AGE) {
                    checkpoint = Some((twin.clone(), start, Instant::now()));
                }
                while let Some(n) = next.filter(|&n| n < to) {
                    at = n;
                    (twin.step, original.step) = (n, n);
                    scenario.step(&mut twin);
                    let (events, noted) = collect();
                    scenario.step_original(&mut original);
                    if let Some(c) = compiled.as_mut() {
                        c.step = n;
                        as_compiled(&mut || scenario.step(c));
                        c.rotate();
                    }
                    // The original and the compiled-literal run record nothing of interest: their events are dropped.
                    let _ = collect();
                    twin.rotate();
                    original.rotate();
                    let mut measured = observe(n + 1, &twin, compiled.as_ref(), &original, plan, events);
                    if trigger.fires(&measured, noted) {
                        if let Some((levels, from, _)) = &checkpoint {
                            measured.events = replay(levels, *from, n);
                        }
                        // Later replays (a NaN keeps meeting comparisons) start from here and cost one step.
                        checkpoint = Some((twin.clone(), n + 1, Instant::now()));
                    }
                    out.push(measured);
                    next = Some(n + 1);
                }
                Ok(out)
            }));
            let outcome = outcome.unwrap_or_else(|payload| {
                let message = payload
                    .downcast_ref::<&str>()
                    .map(|s| s.to_string())
                    .or_else(|| payload.downcast_ref::<String>().cloned())
                    .unwrap_or_else(|| "a panic without a message".into());
                Err(Error::ScenarioPanicked { lens: L::Watched::NAME.to_string(), step: at, message })
            });
            let failed = outcome.is_err();
            if results.send(outcome).is_err() || failed {
                return;
            }
        }
    }
}

/// Measures every field of the current level and compares its primal with the original.
fn observe<L: Lens>(
    step: u64,
    twin: &Levels<L>,
    compiled: Option<&Levels<L>>,
    original: &Levels<f64>,
    plan: &Plan,
    events: Vec<(crate::events::EventKind, crate::events::Site, u64)>,
) -> LensStep {
    let fields = twin
        .current
        .iter()
        .enumerate()
        .map(|(i, f)| FieldMeasure {
            representation_err: compiled.map(|c| representation(f, &c.current[i])),
            ..measure(f, &plan.tolerance, plan.profiled(i))
        })
        .collect();
    // A lens whose primal emulates another format computes something else by design: nothing to compare.
    let mismatches = twin
        .current
        .iter()
        .take(if L::NATIVE_PRIMAL { usize::MAX } else { 0 })
        .zip(&original.current)
        .enumerate()
        .filter_map(|(i, (t, o))| first_mismatch(i, t, o))
        .collect();
    LensStep { step, fields, events, mismatches }
}
