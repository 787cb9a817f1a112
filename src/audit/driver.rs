//! The audit driver: the [`Audit`] builder, and the main thread's loop that starts a thread per lens
//! ([`super::lens_thread`]) and hands every step's measurements to the [`Recorder`].
//!
//! Why chunks: the lenses run at different speeds, and the recorder needs every lens's measurements of a step
//! together (a guaranteed bound is judged against the best estimate of the same step). So the threads run a
//! chunk of steps, the main thread records it, and the next chunk starts; the chunk length adapts so that a
//! chunk takes about a tenth of a second, which keeps the trace on disk close behind the run.

use std::path::PathBuf;
use std::process::ExitCode;
use std::sync::mpsc::{channel, Receiver, Sender};
use std::time::{Duration, Instant};

use super::lens_thread::{self, AuditLens, ChunkResult, LensChannels};
use super::recorder::{LensInfo, Plan};
use super::{Error, RecordPolicy, Recorder, Scenario, Tolerance, RUN_ENV, TRACE_ENV};
use crate::events::Collector;
use crate::trace::Trace;

/// A lens's thread body, instantiated for the lens type when it is added.
type LensRun<S> = fn(&S, &Plan, LensChannels);

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
pub struct Audit<'s, S: Scenario> {
    scenario: &'s S,
    plan: Plan,
    lenses: Vec<LensEntry<S>>,
}

impl<'s, S: Scenario> Audit<'s, S> {
    /// An audit of `steps` steps of `scenario` against `tolerance` (checked when the audit runs). The trace goes
    /// to the path in the `TWINSTEP_TRACE` environment variable when it is set, else to the system's temporary
    /// directory, unless [`Audit::trace`] says otherwise.
    pub fn new(scenario: &'s S, tolerance: Tolerance, steps: u64) -> Audit<'s, S> {
        // `twinstep run` tells a harness where its trace goes through this variable (see the CLI's run command).
        let trace = std::env::var_os(TRACE_ENV)
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
        let collected_here = Collector::active_here::<L>;
        self.lenses.push(LensEntry {
            info: LensInfo::of::<L::Watched>().certified(crate::certificate::driver::is_certified::<L::Unwatched>()),
            run: lens_thread::run::<L, S>,
            collected_here,
        });
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
        let mut recorder = Recorder::for_lenses(&self.plan, self.lenses.iter().map(|l| l.info.clone()).collect())?;
        let (scenario, plan) = (self.scenario, &self.plan);
        std::thread::scope(|scope| {
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
            self.record_chunks(&channels, &mut recorder)?;
            drop(channels);
            recorder.finish()
        })
    }

    /// The main thread's loop: asks every lens thread for the next chunk, waits for all of them, and records the
    /// chunk step by step, until the audited steps are done.
    fn record_chunks(
        &self,
        channels: &[(Sender<u64>, Receiver<ChunkResult>)],
        recorder: &mut Recorder,
    ) -> Result<(), Error> {
        let steps = self.plan.steps;
        let (mut done, mut chunk) = (None::<u64>, 1u64);
        while done != Some(steps) {
            // The first chunk is the initial data alone (step 0).
            let to = done.map_or(0, |d| (d + chunk).min(steps));
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
        Ok(())
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
