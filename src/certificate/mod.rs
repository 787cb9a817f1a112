//! The certificate: a guarantee on the f64 run that lasts the whole time loop, built from the
//! [`Certified`](crate::lens::Certified) lens by seeding every step's inputs and condensing every value at its end
//! (docs/lenses.md, "Certified").
//!
//! Per cell, the certificate keeps a rigorous radius `D` with `|shadow − exact| ≤ D`, where *exact* is the same
//! scheme run in exact arithmetic from the same inputs, along the primal's path; the guaranteed error of the f64
//! value `p` is then `|p − exact| ∈ [|p − shadow| − D, |p − shadow| + D]` (outward). At the start of each step every
//! input (each cell of each field of each level present) carries coefficient 1 on its own id and the ball radius
//! `D`; at its end each value's affine form condenses to `D⁺ = M + Σ_j |c̃_j| D_j`. Two routes:
//!
//! - **forward** (streaming): that condensation alone; tight while `Σ_j |c̃_ij| ≤ 1 + O(Δt)` (heat, diffusion,
//!   upwind and limited advection, reaction–diffusion), since `D` then grows linearly at the u² level;
//! - **backward**: each step's rows are kept and, at anchors, sensitivities are propagated back to the initial
//!   data (`backward.rs`), so the bound follows the products of the signed Jacobians (shallow water, leapfrog
//!   waves, where `ρ(|J|) > 1` makes the forward radius grow geometrically). An anchor sets `D` to the smaller of
//!   the two bounds, and is due whenever the forward radius has grown [`CertificateOptions::anchor_growth`]-fold
//!   since the last one, at the requested steps and at the horizon.
//!
//! [`Route::Auto`] records rows for the first [`PROBE_STEPS`] steps, estimates `ρ(|J̃|)` by a power iteration that
//! rides along the condensation, and keeps the backward route only when `ρ^horizon` would exceed 10⁶.
//!
//! A comparison or integer conversion the ball cannot decide (the lens records an `undecided_comparison` or
//! `undecided_index` event at the caller's line) means exact arithmetic might take another path: the
//! certificate ends at that step for every cell — the lens cannot tell which cells a control-flow decision
//! affects — and [`CertificateEnd`] names the step and the sites. A value whose bound is lost (a division by a ball
//! holding zero, a root of a ball reaching below zero, an overflow) has `D = ∞` from then on: those cells are
//! counted per field.
//!
//! **What the audit driver calls** (one call before the loop, one after each step):
//!
//! ```ignore
//! let events = twinstep::events::Collector::start::<Certified>(); // the lens's events, from every thread
//! let mut certificate = Certificate::new(&mut levels, CertificateOptions::default(), Some(horizon))?;
//! // after the initial data are in `levels` (computed through the twin or given as doubles):
//! let start = certificate.begin(&mut levels);              // D⁰, then seeds step 0
//! for n in 0..steps {
//!     levels.step = n;
//!     scenario.step(&mut levels);                          // the twin, with the (unwatched) certified lens
//!     let step_events = events.take();                     // the step's events, as the driver takes them
//!     let clashes = events.take_list_clashes();            // and the list clashes gathered with them
//!     levels.rotate();
//!     let facts = certificate.after_step(&mut levels, &step_events, clashes); // condenses, anchors, seeds n + 1
//!     // measure `levels.current` now: Lens::error_bound is the upper end of the guaranteed interval
//! }
//! ```
//!
//! The audit driver does exactly that on the certified lens's thread ([`driver`]: `Audit::certified`, or any
//! certified lens added with `Audit::lens`); [`crate::certificate::certify`] runs a [`crate::audit::Scenario`] the
//! same way without the driver.

mod backward;
pub mod driver;
mod layout;
mod run;

use crate::audit::Levels;
use crate::events::{EventKind, Site};
use crate::lens::CertifiedOf;
use std::time::{Duration, Instant};

pub use layout::{Colouring, Role};
pub use run::{certify, CertifiedRun};

use backward::Tape;
use layout::{fields_mut, Layout};
use rayon::prelude::*;

/// How many steps [`Route::Auto`] watches before it chooses.
pub const PROBE_STEPS: u64 = 16;

/// The most ids the backward route sweeps: its dense matrix of sensitivities holds ids² doubles (two of them, 256 MB
/// at this size). Beyond it the certificate stays on the forward route and says so ([`Certificate::backward_declined`]).
pub const MAX_BACKWARD_IDS: usize = 4096;

/// How the certificate carries `D` from step to step.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Route {
    /// Per-step condensation only.
    Forward,
    /// Per-step condensation, re-anchored by backward sweeps over the recorded rows.
    Backward,
    /// Forward unless the measured growth of `|J̃|` would make the forward radius grow more than 10⁶-fold over the
    /// horizon.
    Auto,
}

/// Choices of a certificate.
#[derive(Clone, Debug)]
pub struct CertificateOptions {
    /// The route (by default chosen from the measured growth).
    pub route: Route,
    /// The backward route anchors when the forward radius has grown this many times beyond the accumulated local
    /// bounds since the last anchor.
    pub anchor_growth: f64,
    /// Steps at which to anchor in any case (the backward route; the horizon is always one).
    pub anchor_steps: Vec<u64>,
    /// The colouring of the inputs; `None`: the first of [`Colouring::candidates`], which the runner may replace
    /// after trying the others on the first step.
    pub colouring: Option<Colouring>,
    /// Whether the pass after each step may run on rayon's threads when the levels hold [`PARALLEL_IDS`] ids or
    /// more (the forward route; the facts are the same either way). Off, it runs on the caller's thread only.
    pub parallel: bool,
}

impl Default for CertificateOptions {
    fn default() -> Self {
        CertificateOptions {
            route: Route::Auto,
            anchor_growth: 1e6,
            anchor_steps: Vec::new(),
            colouring: None,
            parallel: true,
        }
    }
}

/// Why the certificate ended.
#[derive(Clone, Debug, PartialEq)]
pub enum EndReason {
    /// A comparison or an integer conversion that the ball `shadow ± R` could not decide: exact arithmetic could
    /// take another path. Every site of the step, with its kind and count.
    Undecided { sites: Vec<(EventKind, Site, u64)> },
}

/// The step from which the certificate no longer holds, and why.
#[derive(Clone, Debug, PartialEq)]
pub struct CertificateEnd {
    pub step: u64,
    pub reason: EndReason,
}

/// The guaranteed error of one field at one step.
#[derive(Clone, Debug, PartialEq)]
pub struct FieldCertificate {
    /// The worst error over the field's cells lies in `[worst.0, worst.1]`: `max_i lower_i ≤ max_i |p_i − u_i| ≤
    /// max_i upper_i`.
    pub worst: (f64, f64),
    /// The cell (flat index) with the largest upper end.
    pub worst_cell: usize,
    /// The largest `|p − shadow|` (the estimate).
    pub estimate: f64,
    /// The largest radius `D`.
    pub max_radius: f64,
    /// Cells whose bound is lost (`D = ∞`).
    pub lost_cells: usize,
    /// Whether the interval of the worst error spans more than a factor 3 (`max D > max|p − shadow|/2`) while `D`
    /// is above 10⁻³⁰ of the field's largest value (below, the certificate still says the error is negligible).
    pub useless: bool,
}

/// What one step left: per field of the current level, and the facts of the step.
#[derive(Clone, Debug, PartialEq)]
pub struct StepCertificate {
    /// The step just completed (its values are the current level).
    pub step: u64,
    /// Whether the certificate holds at this step (it never holds again once it ended).
    pub holds: bool,
    /// Per field of the current level.
    pub fields: Vec<FieldCertificate>,
    /// The growth of the power iteration on `|J̃|` in this step (an estimate of `ρ(|J̃|)`).
    pub growth: f64,
    /// Whether a backward sweep re-anchored `D` at this step.
    pub anchored: bool,
    /// List clashes in this step (see `layout.rs`).
    pub clashes: u64,
}

/// The cost of the backward route so far.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct BackwardCost {
    pub sweeps: u64,
    pub time: Duration,
    pub multiply_adds: u64,
    /// Bytes of recorded rows (now).
    pub bytes: usize,
}

/// The state of a certificate over a run.
pub struct Certificate {
    options: CertificateOptions,
    /// The lens's list slots `K` (the colourings are chosen for it).
    capacity: usize,
    horizon: Option<u64>,
    layout: Layout,
    colouring: Colouring,
    slots: Vec<u8>,
    /// `D` of every input id of the coming step.
    radii: Vec<f64>,
    scratch: Vec<f64>,
    /// The power iteration on |J̃|: a positive vector over the ids, normalized to max 1.
    probe: Vec<f64>,
    probe_next: Vec<f64>,
    growths: Vec<f64>,
    route: Route,
    /// Whether the backward route was asked for (or left to [`Route::Auto`]) but the levels have too many ids.
    declined: bool,
    tape: Option<Tape>,
    step: u64,
    end: Option<CertificateEnd>,
    /// The largest radius at the last anchor, and the local bounds accumulated since.
    anchor_reference: f64,
    cost: BackwardCost,
    lost_from: Vec<Option<u64>>,
    useless_from: Vec<Option<u64>>,
}

/// Why a certificate could not be set up.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum SetupError {
    /// More inputs than 32-bit ids can name.
    TooManyCells,
    /// A colouring that does not match the levels (one offset per block).
    ColouringMismatch,
}

impl std::fmt::Display for SetupError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SetupError::TooManyCells => {
                write!(f, "the levels hold more cells than 2^32, which the certificate ids name")
            }
            SetupError::ColouringMismatch => write!(f, "the colouring has another number of blocks than the levels"),
        }
    }
}

impl std::error::Error for SetupError {}

impl Certificate {
    /// A certificate for runs over levels shaped like `levels`, with `slots` list slots (the lens's `K`). `horizon`
    /// is the number of steps planned (the backward route anchors there, and [`Route::Auto`] judges the growth
    /// over it; `None`: 10⁵).
    pub fn new<const K: usize, const W: bool>(
        levels: &mut Levels<CertifiedOf<K, W>>,
        options: CertificateOptions,
        horizon: Option<u64>,
    ) -> Result<Certificate, SetupError> {
        let layout = Layout::of(levels).ok_or(SetupError::TooManyCells)?;
        let colouring = options.colouring.clone().unwrap_or_else(|| Colouring::candidates(&layout, K).remove(0));
        if colouring.offsets.len() != layout.blocks.len() {
            return Err(SetupError::ColouringMismatch);
        }
        let slots = colouring.slots(&layout);
        let ids = layout.ids;
        let fields = levels.current.len();
        let declined = ids > MAX_BACKWARD_IDS && options.route != Route::Forward;
        Ok(Certificate {
            route: if declined { Route::Forward } else { options.route },
            declined,
            options,
            capacity: K,
            horizon,
            layout,
            colouring,
            slots,
            radii: vec![0.0; ids],
            scratch: vec![0.0; ids],
            probe: vec![1.0; ids],
            probe_next: vec![0.0; ids],
            growths: Vec::new(),
            tape: None,
            step: 0,
            end: None,
            anchor_reference: 0.0,
            cost: BackwardCost::default(),
            lost_from: vec![None; fields],
            useless_from: vec![None; fields],
        })
    }

    /// The colourings worth trying for these levels (see [`Colouring::candidates`]).
    pub fn colourings(&self, slots: usize) -> Vec<Colouring> {
        Colouring::candidates(&self.layout, slots)
    }

    /// The lens's list slots, for [`Certificate::colourings`].
    pub fn colouring_slots(&self) -> usize {
        self.capacity
    }

    /// The colouring in use.
    pub fn colouring(&self) -> &Colouring {
        &self.colouring
    }

    /// Changes the colouring and re-seeds the levels with it (between steps only: the radii stay).
    pub fn recolour<const K: usize, const W: bool>(
        &mut self,
        levels: &mut Levels<CertifiedOf<K, W>>,
        colouring: Colouring,
    ) -> Result<(), SetupError> {
        if colouring.offsets.len() != self.layout.blocks.len() {
            return Err(SetupError::ColouringMismatch);
        }
        self.slots = colouring.slots(&self.layout);
        self.colouring = colouring;
        let radii = std::mem::take(&mut self.radii);
        self.seed(levels, &radii);
        self.radii = radii;
        Ok(())
    }

    /// Starts the certificate on the initial data: each value's radius `D⁰` is what the lens bounds (0 for a
    /// double given as exact; the rigorous bound of the computation for initial data computed through the twin,
    /// where every list is empty), then every value is seeded for step 0.
    pub fn begin<const K: usize, const W: bool>(&mut self, levels: &mut Levels<CertifiedOf<K, W>>) -> StepCertificate {
        let mut radii = std::mem::take(&mut self.radii);
        for (block, (_, _, field)) in self.layout.blocks.iter().zip(fields_mut(levels)) {
            let base = block.base as usize;
            for (cell, value) in field.iter().enumerate() {
                radii[base + cell] = value.radius();
            }
        }
        if matches!(self.route, Route::Backward | Route::Auto) {
            self.tape = Some(Tape::new(radii.clone()));
        }
        self.anchor_reference = max_of(&radii);
        self.seed(levels, &radii);
        self.radii = radii;
        let mut fields = vec![FieldSummary::default(); levels.current.len()];
        for (f, field) in levels.current.iter().enumerate() {
            field.iter().enumerate().for_each(|(cell, value)| fields[f].add(cell, value));
        }
        self.facts(fields, 1.0, false, 0)
    }

    /// Condenses every value after a step (call it after the levels have rotated, with the step's events and its
    /// list clashes, both from the lens's [`crate::events::Collector`]: `take`, then `take_list_clashes`),
    /// re-anchors on the backward route when due, and seeds the values for the next step. Returns the step's
    /// facts.
    pub fn after_step<const K: usize, const W: bool>(
        &mut self,
        levels: &mut Levels<CertifiedOf<K, W>>,
        events: &[(EventKind, Site, u64)],
        clashes: u64,
    ) -> StepCertificate {
        self.step += 1;
        let undecided: Vec<_> = events
            .iter()
            .filter(|(kind, _, _)| matches!(kind, EventKind::UndecidedComparison | EventKind::UndecidedIndex))
            .copied()
            .collect();
        if self.end.is_none() && !undecided.is_empty() {
            self.end = Some(CertificateEnd { step: self.step, reason: EndReason::Undecided { sites: undecided } });
        }
        // The forward route condenses, seeds and summarizes in one pass over the values (condensing a value reads
        // only itself and the previous radii); the backward route may anchor between condensing and seeding.
        let fused = self.route == Route::Forward;
        let (growth, largest_remainder, fused_fields) = self.condense(levels, fused);
        // The anchor reference grows by the local bounds each step adds, so that a linear accumulation of them
        // (a stable scheme) never counts as growth.
        self.anchor_reference += largest_remainder;
        self.growths.push(growth);
        self.choose_route();
        let mut anchored = false;
        let fields = match fused_fields {
            Some(fields) => fields,
            None => {
                anchored = self.anchor_if_due();
                let radii = std::mem::take(&mut self.radii);
                self.seed(levels, &radii);
                self.radii = radii;
                let mut fields = vec![FieldSummary::default(); levels.current.len()];
                for (f, field) in levels.current.iter().enumerate() {
                    field.iter().enumerate().for_each(|(cell, value)| fields[f].add(cell, value));
                }
                fields
            }
        };
        self.facts(fields, growth, anchored, clashes)
    }

    /// The step from which the certificate no longer holds, if it ended.
    pub fn end(&self) -> Option<&CertificateEnd> {
        self.end.as_ref()
    }

    /// The route in use (decided after [`PROBE_STEPS`] steps under [`Route::Auto`]).
    pub fn route(&self) -> Route {
        self.route
    }

    /// The geometric mean of the measured per-step growth of `|J̃|` over the steps so far (after the first few,
    /// which the power iteration needs to settle).
    pub fn growth(&self) -> f64 {
        let settled = &self.growths[self.growths.len().min(self.growths.len() / 2)..];
        if settled.is_empty() {
            return 1.0;
        }
        (settled.iter().map(|g| g.ln()).sum::<f64>() / settled.len() as f64).exp()
    }

    /// Whether the backward route was wanted but not taken: more than [`MAX_BACKWARD_IDS`] ids. The certificate is
    /// then the forward route's, rigorous but growing with `ρ(|J̃|)` (see [`Certificate::growth`]).
    pub fn backward_declined(&self) -> bool {
        self.declined
    }

    /// The cost of the backward route so far.
    pub fn backward_cost(&self) -> BackwardCost {
        BackwardCost { bytes: self.tape.as_ref().map_or(0, Tape::bytes), ..self.cost }
    }

    /// Per field: the first step with cells whose bound is lost.
    pub fn lost_from(&self) -> &[Option<u64>] {
        &self.lost_from
    }

    /// Per field: the first step at which the interval of the worst error spans more than a factor 3.
    pub fn useless_from(&self) -> &[Option<u64>] {
        &self.useless_from
    }

    /// Every value's condensed radius into `scratch` (by its id at the next step), the rows onto the tape, and one
    /// step of the power iteration; returns its growth and the largest remainder `M`. With `seed_now`, each value
    /// is also seeded with its new radius and summarized in the same pass (then the summaries come back).
    ///
    /// Without a tape, a level structure of at least [`PARALLEL_IDS`] ids is condensed in runs of [`RUN`] values
    /// on rayon's threads (condensing a value reads only itself and the previous radii); the runs' results are
    /// merged in order, so the facts are those of the one-thread pass, bit for bit.
    fn condense<const K: usize, const W: bool>(
        &mut self,
        levels: &mut Levels<CertifiedOf<K, W>>,
        seed_now: bool,
    ) -> (f64, f64, Option<Vec<FieldSummary>>) {
        let mut fields = vec![FieldSummary::default(); levels.current.len()];
        if let Some(tape) = self.tape.as_mut() {
            tape.open();
        }
        let parallel = self.options.parallel && self.tape.is_none() && self.layout.ids >= PARALLEL_IDS;
        let pass = Pass { radii: &self.radii, probe: &self.probe, slots: &self.slots, seed: seed_now };
        let mut total = Condensed::default();
        for (block, (role, f, field)) in self.layout.blocks.iter().zip(fields_mut(levels)) {
            let base = block.base as usize;
            let summarize = seed_now && role == Role::Current;
            let cells = field.len();
            let scratch = &mut self.scratch[base..base + cells];
            let probe_next = &mut self.probe_next[base..base + cells];
            let done = if parallel {
                let runs: Vec<Condensed> = field
                    .par_chunks_mut(RUN)
                    .zip(scratch.par_chunks_mut(RUN))
                    .zip(probe_next.par_chunks_mut(RUN))
                    .enumerate()
                    .map(|(r, ((values, radii_next), probe_next))| {
                        let run = Run { values, first_id: base + r * RUN, first_cell: r * RUN, radii_next, probe_next };
                        pass.condense(run, summarize, None)
                    })
                    .collect();
                runs.into_iter().reduce(Condensed::then).unwrap_or_default()
            } else {
                let run = Run { values: field, first_id: base, first_cell: 0, radii_next: scratch, probe_next };
                pass.condense(run, summarize, self.tape.as_mut())
            };
            total.largest_remainder = total.largest_remainder.max(done.largest_remainder);
            total.top = total.top.max(done.top);
            if summarize {
                fields[f] = done.summary;
            }
        }
        if let Some(tape) = self.tape.as_mut() {
            tape.close(max_of(&self.radii));
        }
        std::mem::swap(&mut self.radii, &mut self.scratch);
        // Power iteration: growth = max(|J̃| v)/max(v), with max(v) = 1; renormalized, with a floor so that a cell
        // nothing depends on keeps a positive entry.
        let top = total.top;
        let growth = if top > 0.0 && top.is_finite() { top } else { 1.0 };
        for (v, &next) in self.probe.iter_mut().zip(&self.probe_next) {
            *v = (next / growth).max(1e-300);
        }
        (growth, total.largest_remainder, seed_now.then_some(fields))
    }

    /// Under [`Route::Auto`], after [`PROBE_STEPS`] steps: forward when the measured growth raised to the horizon
    /// stays below 10⁶ (the forward radius then stays near the accumulated local bounds), backward otherwise.
    fn choose_route(&mut self) {
        if self.route != Route::Auto || self.step < PROBE_STEPS {
            return;
        }
        let horizon = self.horizon.unwrap_or(100_000) as f64;
        if self.growth().ln() * horizon <= 1e6f64.ln() {
            self.route = Route::Forward;
            self.tape = None;
        } else {
            self.route = Route::Backward;
        }
    }

    /// On the backward route: sweeps when the forward radius has outgrown the reference, at a requested step or at
    /// the horizon, and keeps the smaller bound per id.
    fn anchor_if_due(&mut self) -> bool {
        if self.route == Route::Forward {
            return false;
        }
        let Some(tape) = self.tape.as_ref() else { return false };
        let largest = max_of(&self.radii);
        let requested = self.options.anchor_steps.contains(&self.step) || self.horizon == Some(self.step);
        let grown = self.route == Route::Backward
            && largest > self.options.anchor_growth * self.anchor_reference.max(f64::MIN_POSITIVE);
        if !(requested || grown) {
            return false;
        }
        let started = Instant::now();
        let sweep = tape.sweep();
        for (d, b) in self.radii.iter_mut().zip(sweep.bounds) {
            *d = d.min(b);
        }
        self.cost.sweeps += 1;
        self.cost.time += started.elapsed();
        self.cost.multiply_adds += sweep.work;
        self.anchor_reference = max_of(&self.radii);
        true
    }

    /// Seeds every value for the next step with its radius.
    fn seed<const K: usize, const W: bool>(&self, levels: &mut Levels<CertifiedOf<K, W>>, radii: &[f64]) {
        for (block, (_, _, field)) in self.layout.blocks.iter().zip(fields_mut(levels)) {
            let base = block.base as usize;
            for (cell, value) in field.iter_mut().enumerate() {
                let id = base + cell;
                value.seed(id as u32, usize::from(self.slots[id]), radii[id]);
            }
        }
    }

    /// The facts of the step just done, from the summaries of the current level's fields.
    fn facts(&mut self, fields: Vec<FieldSummary>, growth: f64, anchored: bool, clashes: u64) -> StepCertificate {
        let fields = fields
            .into_iter()
            .enumerate()
            .map(|(f, summary)| {
                let out = summary.finish();
                if out.lost_cells > 0 && self.lost_from[f].is_none() {
                    self.lost_from[f] = Some(self.step);
                }
                if out.useless && self.useless_from[f].is_none() {
                    self.useless_from[f] = Some(self.step);
                }
                out
            })
            .collect();
        StepCertificate { step: self.step, holds: self.end.is_none(), fields, growth, anchored, clashes }
    }
}

/// From how many ids on the pass after a step runs on rayon's threads (below, the threads' start-up would cost
/// more than they save: a value takes about 10 ns).
pub const PARALLEL_IDS: usize = 1 << 15;

/// Values per run of the parallel pass.
const RUN: usize = 1 << 13;

/// What the pass after a step reads: the radii of the step's inputs, the power iteration's vector, the slots, and
/// whether to seed the values for the next step.
#[derive(Clone, Copy)]
struct Pass<'a> {
    radii: &'a [f64],
    probe: &'a [f64],
    slots: &'a [u8],
    seed: bool,
}

/// Consecutive values of one block, where their ids and cells start, and their places in the next radii and the
/// next vector of the power iteration.
struct Run<'a, V> {
    values: &'a mut [V],
    first_id: usize,
    first_cell: usize,
    radii_next: &'a mut [f64],
    probe_next: &'a mut [f64],
}

/// What condensing a run gives besides the radii: the largest remainder `M`, the largest entry of `|J̃| v` (∞ for a
/// NaN), and the run's summary when it was summarized.
#[derive(Clone, Debug, Default)]
struct Condensed {
    largest_remainder: f64,
    top: f64,
    summary: FieldSummary,
}

impl Condensed {
    /// The results of a run followed by those of the run after it.
    fn then(self, later: Condensed) -> Condensed {
        Condensed {
            largest_remainder: self.largest_remainder.max(later.largest_remainder),
            top: self.top.max(later.top),
            summary: self.summary.then(later.summary),
        }
    }
}

impl Pass<'_> {
    /// Condenses a run of values and, when the pass seeds, seeds them and (with `summarize`) summarizes them;
    /// with a tape, records their rows.
    #[inline]
    fn condense<const K: usize, const W: bool>(
        &self,
        run: Run<'_, CertifiedOf<K, W>>,
        summarize: bool,
        mut tape: Option<&mut Tape>,
    ) -> Condensed {
        let mut out = Condensed::default();
        let Run { values, first_id, first_cell, radii_next, probe_next } = run;
        for (offset, ((value, d_next), p_next)) in values.iter_mut().zip(radii_next).zip(probe_next).enumerate() {
            let id = first_id + offset;
            let (d, spread, weight) = value.condensed(self.radii, self.probe);
            *d_next = d;
            out.largest_remainder = out.largest_remainder.max(value.remainder());
            *p_next = weight;
            // The largest entry of |J̃| v, gathered as the entries are made (a separate pass over them was a
            // twentieth of a certified run's time: one dependent comparison per id); a NaN counts as ∞, as in
            // `max_of`.
            out.top = if weight.is_nan() { f64::INFINITY } else { out.top.max(weight) };
            if let Some(tape) = tape.as_mut() {
                tape.row(value.entries(), value.remainder(), spread);
            }
            if self.seed {
                value.seed(id as u32, usize::from(self.slots[id]), d);
                if summarize {
                    out.summary.add(first_cell + offset, value);
                }
            }
        }
        out
    }
}

/// The running summary of one field's cells.
#[derive(Clone, Debug, Default)]
struct FieldSummary {
    out: FieldCertificate,
    scale: f64,
}

impl Default for FieldCertificate {
    fn default() -> Self {
        FieldCertificate {
            worst: (0.0, 0.0),
            worst_cell: 0,
            estimate: 0.0,
            max_radius: 0.0,
            lost_cells: 0,
            useless: false,
        }
    }
}

impl FieldSummary {
    /// Takes one seeded value (its radius is its `D`).
    #[inline]
    fn add<const K: usize, const W: bool>(&mut self, cell: usize, value: &CertifiedOf<K, W>) {
        let out = &mut self.out;
        let (lower, upper) = value.guaranteed_error();
        let d = value.radius();
        out.worst.0 = out.worst.0.max(lower);
        if upper > out.worst.1 || cell == 0 {
            out.worst.1 = upper;
            out.worst_cell = cell;
        }
        out.estimate = out.estimate.max(value.signed_error().abs());
        out.max_radius = out.max_radius.max(d);
        out.lost_cells += usize::from(!d.is_finite());
        self.scale = self.scale.max(value.shadow().0.abs());
    }

    /// The summary of a run of cells followed by that of the run after it (the same as one summary of both: the
    /// worst cell is the first with the largest upper end).
    fn then(self, later: FieldSummary) -> FieldSummary {
        let (a, b) = (self.out, later.out);
        let (worst_upper, worst_cell) =
            if b.worst.1 > a.worst.1 { (b.worst.1, b.worst_cell) } else { (a.worst.1, a.worst_cell) };
        FieldSummary {
            out: FieldCertificate {
                worst: (a.worst.0.max(b.worst.0), worst_upper),
                worst_cell,
                estimate: a.estimate.max(b.estimate),
                max_radius: a.max_radius.max(b.max_radius),
                lost_cells: a.lost_cells + b.lost_cells,
                useless: false,
            },
            scale: self.scale.max(later.scale),
        }
    }

    fn finish(mut self) -> FieldCertificate {
        self.out.useless = self.out.max_radius > 0.5 * self.out.estimate && self.out.max_radius > 1e-30 * self.scale;
        self.out
    }
}

fn max_of(values: &[f64]) -> f64 {
    values.iter().copied().fold(0.0, |a, b| if b.is_nan() { f64::INFINITY } else { a.max(b) })
}
