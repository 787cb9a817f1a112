//! The audit driver: the [`Audit`] builder, and the main thread's loop that starts a thread per lens
//! ([`super::lens_thread`]) and hands every step's measurements to the [`Recorder`].
//!
//! Why chunks: the lenses run at different speeds, and the recorder needs every lens's measurements of a step
//! together (a guaranteed bound is judged against the best estimate of the same step). So the threads run a
//! chunk of steps, the main thread records it, and the next chunk starts; the chunk length adapts so that a
//! chunk takes about a tenth of a second, which keeps the trace on disk close behind the run.
//!
//! An audit asked to attribute its error ([`Audit::attribute`]) runs the [`crate::attribution::Attribution`] of
//! the same scenario on one more thread, beside the lenses, and the recorder writes its record into the same
//! trace after the records of the step it measures: the chunks stop at that step until the record is there, so
//! the trace stays in step order.

use std::path::PathBuf;
use std::process::ExitCode;
use std::sync::mpsc::{channel, Receiver, Sender};
use std::time::{Duration, Instant};

use super::lens_thread::{self, AuditLens, ChunkResult, LensChannels};
use super::recorder::{LensInfo, Plan};
use super::{Error, ProgramFloat, RecordPolicy, Recorder, Scenario, Tolerance, RUN_ENV, TRACE_ENV};
use crate::attribution::AttributeOptions;
use crate::events::Collector;
use crate::sweep::{Sweep, SweepError, SweepOutcome, SweepPlan};
use crate::trace::{AttributionRecord, Trace};

/// A lens's thread body, instantiated for the lens type when it is added.
type LensRun<S> = fn(&S, &Plan, LensChannels);

/// The attribution thread's answer, awaited at the step it measures.
type Attributing = (u64, Receiver<Result<AttributionRecord, Error>>);

struct LensEntry<S> {
    info: LensInfo,
    run: LensRun<S>,
    /// Whether this thread collects the lens's events already (then its threads would wait for it forever).
    collected_here: fn() -> bool,
}

/// An audit of a scenario: which lenses, what tolerance, how many steps, where the trace goes.
///
/// ```ignore
/// fn main() -> std::process::ExitCode {
///     Audit::new(&rod, Tolerance::mixed(1e-12, 1e-9), 500)
///         .kernel("heat_step")
///         .lens::<Bound>()
///         .lens::<Shadow>()
///         .report()
/// }
/// ```
///
/// The scenario's float is the program's (`F`, inferred from the scenario: `f64`, or `f32` for a
/// `Scenario<f32>`, whose lenses are the binary32 ones, `docs/audit.md`).
pub struct Audit<'s, S, F> {
    scenario: &'s S,
    plan: Plan,
    lenses: Vec<LensEntry<S>>,
    /// The attribution to run beside the lenses, into the same trace ([`Audit::attribute_with`]).
    attribution: Option<AttributionHook<S>>,
    /// The precision sweep to run after the lenses, into the same trace ([`Audit::sweep`]).
    sweep: Option<SweepHook<S>>,
    float: std::marker::PhantomData<fn() -> F>,
}

/// An attribution of an audit's scenario: its options, and the attribution's run for the scenario's type, taken
/// where the scenario is known to be an f64 one ([`Audit::attribute_with`]) so that [`Audit::run`] stays generic.
struct AttributionHook<S> {
    options: AttributeOptions,
    run: fn(&S, &AttributeOptions, u64) -> Result<AttributionRecord, Error>,
}

/// A precision sweep of an audit's scenario: its plan, and the sweep's two calls for the scenario's type, taken
/// where the scenario is known to be an f64 one ([`Audit::sweep`]) so that [`Audit::run`] stays generic.
struct SweepHook<S> {
    plan: SweepPlan,
    validate: fn(&S, &Plan, SweepPlan) -> Result<(), SweepError>,
    run: fn(&S, &Plan, SweepPlan) -> Result<SweepOutcome, SweepError>,
}

impl<'s, S: Scenario> Audit<'s, S, f64> {
    /// Also attributes the error of the audit's last step to the kernel's source lines, with the defaults of
    /// [`AttributeOptions::new`]: the trace then carries an `attribution` record and every report a table of the
    /// lines that make the error, with the remedy where the pattern is known (`docs/attribution.md`).
    #[must_use]
    pub fn attribute(self) -> Self {
        self.attribute_with(AttributeOptions::new())
    }

    /// Attributes the error as `options` say (fewer steps than the audit, the lines to ablate, the fields that
    /// carry another with a remedy applied).
    #[must_use]
    pub fn attribute_with(mut self, options: AttributeOptions) -> Self {
        self.attribution =
            Some(AttributionHook { options, run: |scenario, options, step| options.runner(scenario, step).run() });
        self
    }

    /// Adds the certified lens ([`crate::lens::Certified`], 8 list slots): on its own thread, the driver seeds
    /// every input before each step and condenses every value after it (`docs/lenses.md`, "Certified"), so its
    /// bound is a guarantee that lasts the time loop; the route between steps is chosen from the measured growth.
    /// The same as `.lens::<Certified>()`; [`Audit::certified_with`] sets the route, anchors or colouring.
    #[must_use]
    pub fn certified(self) -> Self {
        self.lens::<crate::lens::Certified>()
    }

    /// Adds the certified lens with these certificate options (a certified lens added with [`Audit::lens`], of any
    /// capacity, takes them too).
    #[must_use]
    pub fn certified_with(mut self, options: crate::certificate::CertificateOptions) -> Self {
        self.plan.certificate = options;
        self.lens::<crate::lens::Certified>()
    }

    /// Also runs the precision sweep of `plan` ([`crate::sweep`]) — the same scenario, tolerance, steps (unless the
    /// plan audits fewer) and horizon, as if the program computed in each of the plan's formats — after the lenses,
    /// and appends its `format_run` and `sweep` records to this audit's trace, so one trace carries the lens audit
    /// and the sweep and the report names the least precision. Each format's run writes its own trace beside it
    /// (`NAME.FORMAT.jsonl`). The plan is checked with everything else before any file is created.
    #[must_use]
    pub fn sweep(mut self, plan: SweepPlan) -> Self {
        self.sweep = Some(SweepHook {
            plan,
            validate: |scenario, audit, plan| Sweep::attached(scenario, audit, plan).validate(),
            run: |scenario, audit, plan| Sweep::attached(scenario, audit, plan).run(),
        });
        self
    }
}

impl<'s, F: ProgramFloat, S: Scenario<F>> Audit<'s, S, F> {
    /// An audit of `steps` steps of `scenario` against `tolerance` (checked when the audit runs). The trace goes
    /// to the path in the `TWINSTEP_TRACE` environment variable when it is set, else to the system's temporary
    /// directory, unless [`Audit::trace`] says otherwise.
    pub fn new(scenario: &'s S, tolerance: Tolerance, steps: u64) -> Audit<'s, S, F> {
        // `twinstep run` tells a harness where its trace goes through this variable (see the CLI's run command).
        let trace = std::env::var_os(TRACE_ENV)
            .map_or_else(|| std::env::temp_dir().join(format!("twinstep-{}.jsonl", std::process::id())), PathBuf::from);
        Audit {
            scenario,
            plan: Plan { float: F::NAME, ..Plan::new("kernel", scenario.fields(), tolerance, steps, trace) },
            lenses: Vec::new(),
            attribution: None,
            sweep: None,
            float: std::marker::PhantomData,
        }
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
    pub fn lens<L: AuditLens<F>>(mut self) -> Self {
        let collected_here = Collector::active_here::<L>;
        self.lenses.push(LensEntry {
            info: LensInfo::of::<L::Watched>().certified(crate::certificate::driver::is_certified::<L::Unwatched>()),
            run: lens_thread::run::<L, S, F>,
            collected_here,
        });
        self
    }

    /// Runs the audit. On success the trace on disk is complete and the same trace is returned; on an error the
    /// file (if it was created) has no summary, so every reader sees an incomplete run. Everything that needs no
    /// file is checked first (the tolerance, the fields, the lenses), so a harness mistake creates no file.
    pub fn run(self) -> Result<Trace, Error> {
        if self.lenses.is_empty() {
            return Err(Error::NoLenses);
        }
        for (i, entry) in self.lenses.iter().enumerate() {
            if self.lenses[..i].iter().any(|other| other.info.name == entry.info.name) {
                return Err(Error::DuplicateLens { lens: entry.info.name.to_string() });
            }
            if (entry.collected_here)() {
                return Err(Error::LensCollectedHere { lens: entry.info.name.to_string() });
            }
        }
        // The plan first, so that a plan's mistake is named as such rather than as the attribution's it causes.
        self.plan.validate()?;
        let attribution = match &self.attribution {
            Some(hook) => Some((hook, hook.options.checked_step(&self.plan.fields, self.plan.steps)?)),
            None => None,
        };
        let failed = |e| Error::Sweep(Box::new(e));
        if let Some(sweep) = &self.sweep {
            (sweep.validate)(self.scenario, &self.plan, sweep.plan.clone()).map_err(failed)?;
        }
        let mut trace = self.run_lenses(attribution)?;
        if let Some(sweep) = &self.sweep {
            let outcome = (sweep.run)(self.scenario, &self.plan, sweep.plan.clone()).map_err(failed)?;
            (trace.format_runs, trace.sweep) = (outcome.runs, Some(outcome.summary));
        }
        Ok(trace)
    }

    /// The lenses' part of [`Audit::run`] (with the attribution beside them), once everything is checked.
    fn run_lenses(&self, attribution: Option<(&AttributionHook<S>, u64)>) -> Result<Trace, Error> {
        let mut recorder = Recorder::for_lenses(&self.plan, self.lenses.iter().map(|l| l.info.clone()).collect())?;
        let (scenario, plan) = (self.scenario, &self.plan);
        std::thread::scope(|scope| {
            let attributing = attribution.map(|(hook, step)| {
                let (answer, answered) = channel();
                let applied = hook.options.applied().to_vec();
                scope.spawn(move || {
                    let record =
                        (hook.run)(scenario, &hook.options, step).map(|record| AttributionRecord { applied, ..record });
                    // The receiver is gone only when the audit stopped on an error of its own.
                    let _ = answer.send(record);
                });
                (step, answered)
            });
            let channels: Vec<_> = self
                .lenses
                .iter()
                .map(|entry| {
                    let (command_tx, commands) = channel::<u64>();
                    let (result_tx, result_rx) = channel::<ChunkResult>();
                    let run = entry.run;
                    scope.spawn(move || run(scenario, plan, LensChannels { commands, results: result_tx }));
                    (command_tx, result_rx)
                })
                .collect();
            self.record_chunks(&channels, attributing, &mut recorder)?;
            drop(channels);
            recorder.finish()
        })
    }

    /// The main thread's loop: asks every lens thread for the next chunk, waits for all of them, and records the
    /// chunk step by step, until the audited steps are done. With an attribution under way, no chunk goes past
    /// the step it measures before its record is handed to the recorder.
    fn record_chunks(
        &self,
        channels: &[(Sender<u64>, Receiver<ChunkResult>)],
        mut attributing: Option<Attributing>,
        recorder: &mut Recorder,
    ) -> Result<(), Error> {
        let steps = self.plan.steps;
        let (mut done, mut chunk) = (None::<u64>, 1u64);
        let attributed = |(step, answered): Attributing, recorder: &mut Recorder| {
            let lost = || Error::ScenarioPanicked {
                lens: "attributed".into(),
                step,
                message: "the attribution thread ended without reporting".into(),
            };
            recorder.attribution(answered.recv().map_err(|_| lost())??);
            Ok::<(), Error>(())
        };
        while done != Some(steps) {
            if let Some(waiting) = attributing.take_if(|(step, _)| done == Some(*step)) {
                attributed(waiting, recorder)?;
            }
            let until = attributing.as_ref().map_or(steps, |(step, _)| *step);
            // The first chunk is the initial data alone (step 0).
            let to = done.map_or(0, |d| (d + chunk).min(until));
            let started = Instant::now();
            for (command, _) in channels {
                // A send fails only if the thread has ended, which it does after reporting an error below.
                let _ = command.send(to);
            }
            let mut per_lens = Vec::with_capacity(channels.len());
            for (entry, (_, results)) in self.lenses.iter().zip(channels) {
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
        // An attribution of the last step.
        attributing.map_or(Ok(()), |waiting| attributed(waiting, recorder))
    }

    /// Runs the audit, prints the terminal report on stdout and where the trace went on stderr, and returns the
    /// exit code for `main`: 0 when the audit ran to its end, whatever its verdict (`twinstep gate` judges the
    /// trace in CI), else [`Error::exit_code`] — 2 for a mistake in the harness, 3 when the audited program
    /// panicked — with the error on stderr.
    ///
    /// Under `twinstep run`, which renders the trace itself in the format asked for, the report is not printed
    /// twice: the CLI sets `TWINSTEP_RUN` and this prints only the trace's path.
    #[must_use = "return the exit code from main"]
    pub fn report(self) -> ExitCode {
        let path = self.plan.trace.clone();
        match self.run() {
            Ok(trace) => {
                if std::env::var_os(RUN_ENV).is_none() {
                    println!("{}", crate::report::render_text(&trace));
                }
                eprintln!("twinstep: trace written to {}", path.display());
                ExitCode::SUCCESS
            }
            Err(error) => {
                eprintln!("twinstep: the audit failed: {error}");
                ExitCode::from(error.exit_code())
            }
        }
    }
}
