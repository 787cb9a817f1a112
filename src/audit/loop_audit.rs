//! Audits of a time loop that stays where it is: the loop in `main` (or any function without a float in its
//! signature) is annotated, its twin is generic over the scalar, and one call inside the loop,
//! [`twinstep::record!`](crate::record), hands the fields of each step to the audit that started the run.
//!
//! ```ignore
//! #[twinstep::audit]
//! fn main() {
//!     let (mut q, mut p) = (vec![1.0; 64], vec![0.0; 64]);
//!     for step in 1..=1000 {
//!         /* the user's leapfrog, unchanged */
//!         twinstep::record!(step, q, p);        // does nothing unless an audit runs this loop
//!     }
//! }
//!
//! // in a test or an example of the same crate:
//! let trace = LoopAudit::new("leapfrog", Tolerance::absolute(1e-12), 1000)
//!     .original(main)                          // the untouched loop, checked bit for bit against each lens
//!     .lens::<Bound>(main_twin::<Bound>)
//!     .lens::<Shadow>(main_twin::<Shadow>)
//!     .run()?;
//! ```
//!
//! How it works: each run (the original, each lens) goes on its own thread, and before the loop starts the audit
//! puts a *sink* for that run in the thread's slot. `record!` finds the sink of its thread and gives it the
//! step and the fields; outside an audit the slot is empty, and `record!` costs one thread-local look-up per
//! step. A lens's sink measures the fields the way the [`Audit`](super::Audit) driver does and takes the events
//! the lens recorded on that thread since the last step; the main thread gathers every run's step, compares each
//! lens's primal with the original bit for bit (a `primal_mismatch` event otherwise), and hands the step to the
//! [`Recorder`](super::Recorder). The first `record!` names the fields (by the variables' names, or `"name" =>
//! value`) and their lengths; every later one must give the same.
//!
//! Limits: `record!` must be called on the loop's own thread (one inside a rayon closure finds no sink and does
//! nothing; an audit that nothing reached ends with [`Error::NothingRecorded`], which says so); every run must
//! record the same steps; fields are 1-D (a flat buffer of a 2-D grid is one field of
//! `nx·ny` cells).

use std::any::Any;
use std::cell::RefCell;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::PathBuf;
use std::sync::mpsc::{sync_channel, Receiver, SyncSender};

use super::measure::{first_mismatch, measure, FieldMeasure, LensStep};
use super::recorder::{LensInfo, Plan};
use super::{Error, FieldSpec, RecordPolicy, Recorder, Tolerance};
use crate::events::{EventKind, Site};
use crate::lens::Lens;
use crate::trace::Trace;
use crate::Real;

/// Records the fields of one step of a loop that an audit runs; outside an audit, does nothing.
///
/// `twinstep::record!(step, q, p)` names the fields after the variables; `twinstep::record!(step, "height" => h,
/// "momentum" => hu)` names them. A field is anything that gives a slice of the loop's scalar (`Vec`, an array,
/// a slice); `[energy]` records a single value. The step is any unsigned or signed integer.
#[macro_export]
macro_rules! record {
    ($step:expr, $($name:literal => $field:expr),+ $(,)?) => {
        $crate::audit::record_step($step, &[$(($name, $crate::audit::FieldCells::cells(&$field))),+])
    };
    ($step:expr, $($field:ident),+ $(,)?) => {
        $crate::audit::record_step(
            $step,
            &[$((::core::stringify!($field), $crate::audit::FieldCells::cells(&$field))),+],
        )
    };
}

/// A value `record!` takes as a field: it gives its cells as a slice of the loop's scalar.
pub trait FieldCells {
    /// The loop's scalar: `f64` in the original, the lens in a twin.
    type Scalar: Real;
    /// The cells, in order.
    fn cells(&self) -> &[Self::Scalar];
}

impl<R: Real> FieldCells for [R] {
    type Scalar = R;
    fn cells(&self) -> &[R] {
        self
    }
}

impl<R: Real> FieldCells for Vec<R> {
    type Scalar = R;
    fn cells(&self) -> &[R] {
        self
    }
}

impl<R: Real, const N: usize> FieldCells for [R; N] {
    type Scalar = R;
    fn cells(&self) -> &[R] {
        self
    }
}

impl<X: FieldCells + ?Sized> FieldCells for &X {
    type Scalar = X::Scalar;
    fn cells(&self) -> &[X::Scalar] {
        (**self).cells()
    }
}

impl<X: FieldCells + ?Sized> FieldCells for &mut X {
    type Scalar = X::Scalar;
    fn cells(&self) -> &[X::Scalar] {
        (**self).cells()
    }
}

/// A step number as a loop counts it.
pub trait StepNumber {
    /// The step as the trace counts it; a negative step counts as 0 (and the recorder then rejects the order).
    fn step_number(self) -> u64;
}

macro_rules! step_numbers {
    ($($int:ty)*) => {$(
        impl StepNumber for $int {
            #[inline]
            fn step_number(self) -> u64 {
                u64::try_from(self).unwrap_or(0)
            }
        }
    )*};
}
step_numbers!(u8 u16 u32 u64 u128 usize i8 i16 i32 i64 i128 isize);

/// What a run does with the steps its loop records.
trait Sink {
    /// One step: the field names, the cells as `Vec<Vec<R>>` behind `Any` (the loop's scalar `R`), and their
    /// primals.
    fn take(&mut self, step: u64, names: &[&'static str], cells: &dyn Any, primals: Vec<Vec<f64>>);
}

thread_local! {
    static SINK: RefCell<Option<Box<dyn Sink>>> = const { RefCell::new(None) };
}

/// What `record!` calls. Public for the macro; call the macro.
#[doc(hidden)]
pub fn record_step<R: Real>(step: impl StepNumber, fields: &[(&'static str, &[R])]) {
    SINK.with(|slot| {
        // `try_borrow_mut`: a record! reached from inside a sink (it cannot be, but a panic is no answer) is
        // ignored.
        let Ok(mut slot) = slot.try_borrow_mut() else { return };
        let Some(sink) = slot.as_mut() else { return };
        let names: Vec<&'static str> = fields.iter().map(|(name, _)| *name).collect();
        let cells: Vec<Vec<R>> = fields.iter().map(|(_, cells)| cells.to_vec()).collect();
        let primals = cells.iter().map(|field| field.iter().map(|x| x.primal()).collect()).collect();
        sink.take(step.step_number(), &names, &cells, primals);
    });
}

/// One recorded step of a run: the step and each field's name and primals.
#[derive(Clone, Debug, PartialEq)]
pub struct Snapshot {
    pub step: u64,
    pub fields: Vec<(&'static str, Vec<f64>)>,
}

/// Runs a loop on this thread and returns what its `record!` calls gave, as primals: a test that the twin of a
/// loop reproduces the original bit for bit compares `capture(|| run())` with `capture(|| run_twin::<f64>())`.
pub fn capture(run: impl FnOnce()) -> Vec<Snapshot> {
    struct Captured(std::rc::Rc<RefCell<Vec<Snapshot>>>);
    impl Sink for Captured {
        fn take(&mut self, step: u64, names: &[&'static str], _: &dyn Any, primals: Vec<Vec<f64>>) {
            self.0.borrow_mut().push(Snapshot { step, fields: names.iter().copied().zip(primals).collect() });
        }
    }
    let snapshots = std::rc::Rc::new(RefCell::new(Vec::new()));
    with_sink(Box::new(Captured(snapshots.clone())), run);
    let taken = std::mem::take(&mut *snapshots.borrow_mut());
    taken
}

/// What a run's thread tells the main thread.
enum Message {
    Step {
        step: u64,
        names: Vec<&'static str>,
        lengths: Vec<usize>,
        measured: Option<Measured>,
        primals: Vec<Vec<f64>>,
    },
    Done,
    Failed(Error),
}

/// What a lens's sink measured of one step.
struct Measured {
    fields: Vec<FieldMeasure>,
    events: Vec<(EventKind, Site, u64)>,
}

/// The sink of a lens's run: measures each step with lens `L`.
struct LensSink<L> {
    to_main: SyncSender<Message>,
    tolerance: Tolerance,
    profiles: bool,
    wrong_scalar: bool,
    /// The lens's events, from whichever thread the loop computes on; held for the whole run.
    collector: crate::events::Collector,
    _lens: std::marker::PhantomData<fn() -> L>,
}

impl<L: Lens> Sink for LensSink<L> {
    fn take(&mut self, step: u64, names: &[&'static str], cells: &dyn Any, primals: Vec<Vec<f64>>) {
        if self.wrong_scalar {
            return;
        }
        let Some(cells) = cells.downcast_ref::<Vec<Vec<L>>>() else {
            // The closure runs the twin with another scalar than the lens it was added as.
            self.wrong_scalar = true;
            let _ = self.to_main.send(Message::Failed(Error::UnknownLens { lens: L::NAME.to_string() }));
            return;
        };
        let fields = cells.iter().map(|c| measure(c, &self.tolerance, self.profiles)).collect();
        let events = self.collector.take();
        let _ = self.collector.take_unseen_non_finite();
        let lengths = cells.iter().map(Vec::len).collect();
        let measured = Some(Measured { fields, events });
        let _ = self.to_main.send(Message::Step { step, names: names.to_vec(), lengths, measured, primals });
    }
}

/// The sink of the original run: passes its primals on for the bit-for-bit comparison.
struct OriginalSink {
    to_main: SyncSender<Message>,
}

impl Sink for OriginalSink {
    fn take(&mut self, step: u64, names: &[&'static str], _: &dyn Any, primals: Vec<Vec<f64>>) {
        let lengths = primals.iter().map(Vec::len).collect();
        let _ = self.to_main.send(Message::Step { step, names: names.to_vec(), lengths, measured: None, primals });
    }
}

/// A run of the loop: the closure and how to make its sink.
struct Run<'a> {
    name: String,
    info: Option<LensInfo>,
    body: Box<dyn FnOnce() + Send + 'a>,
    sink: fn(SyncSender<Message>, Tolerance, bool) -> Box<dyn Sink>,
}

/// An audit of a loop that stays where it is: the original run and one run per lens, each calling the same
/// `record!` at each step.
pub struct LoopAudit<'a> {
    /// Everything but the fields, which the first `record!` names.
    plan: Plan,
    original: Option<Run<'a>>,
    lenses: Vec<Run<'a>>,
}

/// Messages a run may send ahead of the main thread: enough to keep every thread busy, few enough that a fast
/// run does not pile up copies of its fields.
const AHEAD: usize = 4;

impl<'a> LoopAudit<'a> {
    /// An audit named `kernel`, judged against `tolerance`, of a loop that runs `steps` steps. The trace goes to
    /// the path in `TWINSTEP_TRACE` when it is set, else to the system's temporary directory, unless
    /// [`LoopAudit::trace`] says otherwise.
    #[must_use]
    pub fn new(kernel: &str, tolerance: Tolerance, steps: u64) -> LoopAudit<'a> {
        let trace = std::env::var_os("TWINSTEP_TRACE").map_or_else(
            || std::env::temp_dir().join(format!("twinstep-loop-{}.jsonl", std::process::id())),
            PathBuf::from,
        );
        LoopAudit { plan: Plan::new(kernel, Vec::new(), tolerance, steps, trace), original: None, lenses: Vec::new() }
    }

    /// Where the trace goes.
    #[must_use]
    pub fn trace(mut self, path: impl Into<PathBuf>) -> Self {
        self.plan.trace = path.into();
        self
    }

    /// The steps the user plans to run, when more than the audited ones (the verdict extrapolates to it).
    #[must_use]
    pub fn horizon(mut self, steps: u64) -> Self {
        self.plan.horizon = steps;
        self
    }

    /// Records every step and every event occurrence.
    #[must_use]
    pub fn every_step(mut self) -> Self {
        self.plan.policy = RecordPolicy::Every;
        self
    }

    /// Leaves out the per-cell `profile` records.
    #[must_use]
    pub fn without_profiles(mut self) -> Self {
        self.plan.profiles = false;
        self
    }

    /// The untouched loop (`main`, not its twin): each lens's primal is compared with it bit for bit at every
    /// recorded step, and a difference is a `primal_mismatch` event.
    #[must_use]
    pub fn original(mut self, run: impl FnOnce() + Send + 'a) -> Self {
        self.original = Some(Run {
            name: "original".into(),
            info: None,
            body: Box::new(run),
            sink: |to_main, _, _| Box::new(OriginalSink { to_main }),
        });
        self
    }

    /// A run of the loop's twin with lens `L` (`main_twin::<Bound>`); each lens runs on its own thread.
    #[must_use]
    pub fn lens<L: Lens>(mut self, run: impl FnOnce() + Send + 'a) -> Self {
        fn sink<L: Lens>(to_main: SyncSender<Message>, tolerance: Tolerance, profiles: bool) -> Box<dyn Sink> {
            // Starting the collector drops what earlier runs of the lens left behind.
            let collector = crate::events::Collector::start::<L>();
            let lens = LensSink::<L> {
                to_main,
                tolerance,
                profiles,
                wrong_scalar: false,
                collector,
                _lens: Default::default(),
            };
            Box::new(lens)
        }
        self.lenses.push(Run {
            name: L::NAME.to_string(),
            info: Some(LensInfo::of::<L::Watched>()),
            body: Box::new(run),
            sink: sink::<L>,
        });
        self
    }

    /// Runs every run to its end and returns the trace (also on disk). An error stops the audit; the file, if it
    /// was created, then has no summary and reads as an incomplete run.
    pub fn run(self) -> Result<Trace, Error> {
        if self.lenses.is_empty() {
            return Err(Error::NoLenses);
        }
        for (i, run) in self.lenses.iter().enumerate() {
            if self.lenses[..i].iter().any(|other| other.name == run.name) {
                return Err(Error::DuplicateLens { lens: run.name.clone() });
            }
        }
        self.plan.tolerance.validated()?;
        if self.plan.steps == 0 {
            return Err(Error::ZeroSteps);
        }
        let LoopAudit { plan, original, lenses } = self;
        let (tolerance, profiles) = (plan.tolerance, plan.profiles);
        let infos: Vec<LensInfo> = lenses.iter().filter_map(|run| run.info.clone()).collect();
        let names: Vec<String> = lenses.iter().map(|run| run.name.clone()).collect();
        std::thread::scope(|scope| {
            let mut start = |run: Run<'a>| -> Receiver<Message> {
                let (to_main, from_run) = sync_channel(AHEAD);
                let Run { body, sink, .. } = run;
                scope.spawn(move || {
                    let failed = to_main.clone();
                    let outcome =
                        catch_unwind(AssertUnwindSafe(|| with_sink(sink(to_main, tolerance, profiles), body)));
                    let _ = match outcome {
                        Ok(()) => failed.send(Message::Done),
                        Err(payload) => failed.send(Message::Failed(panicked(payload))),
                    };
                });
                from_run
            };
            let original = original.map(&mut start);
            let lenses: Vec<Receiver<Message>> = lenses.into_iter().map(&mut start).collect();
            let mut gather = Gather { plan, infos, names, recorder: None };
            gather.all(original.as_ref(), &lenses)
        })
    }
}

/// Runs `body` with `sink` in this thread's slot, and puts back what was there afterwards (also when `body`
/// panics).
fn with_sink(sink: Box<dyn Sink>, body: impl FnOnce()) {
    let previous = SINK.with(|slot| slot.borrow_mut().replace(sink));
    struct Restore(Option<Box<dyn Sink>>);
    impl Drop for Restore {
        fn drop(&mut self) {
            let previous = self.0.take();
            SINK.with(|slot| *slot.borrow_mut() = previous);
        }
    }
    let _restore = Restore(previous);
    body();
}

/// The message of a panic payload.
fn panicked(payload: Box<dyn Any + Send>) -> Error {
    let message = payload
        .downcast_ref::<&str>()
        .map(|s| s.to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "a panic without a message".into());
    Error::ScenarioPanicked { lens: "the loop".into(), step: 0, message }
}

/// The main thread's side: takes one step of every run at a time and records it.
struct Gather {
    plan: Plan,
    infos: Vec<LensInfo>,
    names: Vec<String>,
    recorder: Option<(Recorder, Vec<&'static str>, Vec<usize>)>,
}

/// A step as one run gave it.
struct RunStep {
    step: u64,
    names: Vec<&'static str>,
    lengths: Vec<usize>,
    measured: Option<Measured>,
    primals: Vec<Vec<f64>>,
}

impl Gather {
    fn all(&mut self, original: Option<&Receiver<Message>>, lenses: &[Receiver<Message>]) -> Result<Trace, Error> {
        let mut last_step = 0;
        loop {
            let mut taken = Vec::with_capacity(lenses.len());
            let mut done = 0;
            for (index, lens) in lenses.iter().enumerate() {
                match self.next(lens, &self.names[index], last_step)? {
                    Some(step) => taken.push(step),
                    None => done += 1,
                }
            }
            if done == lenses.len() {
                // Every lens ended: the original must have ended too.
                if let Some(original) = original {
                    if self.next(original, "original", last_step)?.is_some() {
                        return Err(differing_steps("original", last_step));
                    }
                }
                return match self.recorder.take() {
                    Some((recorder, _, _)) => recorder.finish(),
                    None => Err(Error::NothingRecorded),
                };
            }
            if done > 0 {
                return Err(differing_steps("a lens", last_step));
            }
            let plain = match original {
                Some(original) => Some(
                    self.next(original, "original", last_step)?
                        .ok_or_else(|| differing_steps("original", last_step))?,
                ),
                None => None,
            };
            last_step = taken[0].step;
            self.ingest(taken, plain)?;
        }
    }

    /// The next step of one run; `None` when it ended.
    fn next(&self, from: &Receiver<Message>, run: &str, last_step: u64) -> Result<Option<RunStep>, Error> {
        match from.recv() {
            Ok(Message::Step { step, names, lengths, measured, primals }) => {
                Ok(Some(RunStep { step, names, lengths, measured, primals }))
            }
            Ok(Message::Done) => Ok(None),
            Ok(Message::Failed(Error::ScenarioPanicked { message, .. })) => {
                Err(Error::ScenarioPanicked { lens: run.to_string(), step: last_step, message })
            }
            Ok(Message::Failed(error)) => Err(error),
            Err(_) => Err(Error::ScenarioPanicked {
                lens: run.to_string(),
                step: last_step,
                message: "the run's thread ended without reporting".into(),
            }),
        }
    }

    /// Checks that every run gave the same step and fields, compares the primals, and records the step.
    fn ingest(&mut self, taken: Vec<RunStep>, plain: Option<RunStep>) -> Result<(), Error> {
        let first = &taken[0];
        let (names, lengths) = (first.names.clone(), first.lengths.clone());
        for other in taken.iter().chain(plain.as_ref()) {
            if other.step != first.step {
                return Err(Error::StepOrder { previous: first.step, got: other.step });
            }
            if other.names != names || other.lengths != lengths {
                return Err(Error::FieldCountMismatch { expected: names.len(), got: other.names.len() });
            }
        }
        if self.recorder.is_none() {
            self.plan.fields = names.iter().zip(&lengths).map(|(&name, &n)| FieldSpec::new(name, &[n])).collect();
            self.plan.horizon = self.plan.horizon.max(self.plan.steps);
            let recorder = Recorder::for_lenses(&self.plan, self.infos.clone())?;
            self.recorder = Some((recorder, names.clone(), lengths.clone()));
        }
        let Some((recorder, expected_names, expected_lengths)) = self.recorder.as_mut() else { return Ok(()) };
        if *expected_names != names || *expected_lengths != lengths {
            return Err(Error::FieldCountMismatch { expected: expected_names.len(), got: names.len() });
        }
        let steps = taken
            .into_iter()
            .map(|run| {
                let mismatches = match &plain {
                    Some(plain) => run
                        .primals
                        .iter()
                        .zip(&plain.primals)
                        .enumerate()
                        .filter_map(|(i, (lens, original))| first_mismatch(i, lens, original))
                        .collect(),
                    None => Vec::new(),
                };
                let Measured { fields, events } =
                    run.measured.unwrap_or(Measured { fields: Vec::new(), events: Vec::new() });
                LensStep { step: run.step, fields, events, mismatches, certificate: None }
            })
            .collect();
        recorder.ingest(steps)
    }
}

fn differing_steps(run: &str, after: u64) -> Error {
    Error::ScenarioPanicked {
        lens: run.to_string(),
        step: after,
        message: "the runs recorded different steps: every run of the loop must call record! at the same steps".into(),
    }
}
