//! The recorder: turns per-step measurements into trace records, events and, at the end, the summary with the
//! verdict. The driver feeds it every lens's measurements of every step; a user who keeps their own loop feeds it
//! through [`Recorder::record_step`].
//!
//! Why a policy: a 10⁶-step run must not write 10⁶ records. Under [`RecordPolicy::Auto`] a step gets a record
//! when it is on a log-spaced grid (about 20 per decade), when it carries an event, for the two steps before and
//! after an event, and at the end; repeated events at one site are written at their 1st, 2nd, 4th, 8th …
//! occurrence and counted in full in the summary's `event_totals`. Under [`RecordPolicy::Every`] nothing is
//! thinned.
//!
//! Three parts: [`plan`] (what an audit is about, checked before a file is created), this module (recording: the
//! header, step records, events, profiles and the policy that thins them), and [`summary`] (at the end: results,
//! growth fits, the evidence, the verdict and its notes). Every sentence the recorder writes into the trace — event
//! details, the verdict text — comes from `crate::report::words`.

mod plan;
mod summary;

use std::collections::{BTreeMap, VecDeque};
use std::time::{Instant, SystemTime, UNIX_EPOCH};

use super::field::multi_index;
use super::measure::{self, CellProfile, FieldMeasure, LensStep};
use super::{Error, RecordPolicy};
use crate::certificate::driver::{CertificateFacts, RunTotals};
use crate::certificate::{EndReason, Route};
use crate::lens::Lens;
use crate::report::certificate as certificate_words;
use crate::report::words::{self, LostBecause};
use crate::trace::{
    AttributionRecord, Build, CertificateEndRecord, EndCause, EventName, EventRecord, EventTotal,
    FieldCertificateRecord, FieldStep, Header, Machine, ProfileRecord, Record, SiteRecord, StepCertificateRecord,
    StepRecord, Trace, TraceWriter, UndecidedSite, FORMAT, VERSION,
};

pub(crate) use plan::LensInfo;
pub use plan::Plan;

/// Steps recorded before and after an event under the `auto` policy.
const EVENT_CONTEXT: usize = 2;
/// The most steps that get `profile` records besides the last (about 20 per decade: 10¹⁰ steps to fill).
const MAX_PROFILED_STEPS: usize = 200;
/// Log-spaced recording: the next recorded step is at least `step · 10^(1/20)` (20 per decade).
const LOG_RATIO: f64 = 1.122_018_454_301_963_3; // 10^(1/20), from the decimal expansion of 10^0.05

/// What the recorder remembers about one lens and field.
#[derive(Clone, Debug, Default)]
struct Track {
    first_crossing: Option<u64>,
    bound_lost: bool,
    nan: bool,
    infinite: bool,
    mismatch: bool,
    /// `(step, max_err)` at log-spaced steps, for the growth fit.
    history: Vec<(u64, f64)>,
    last: Option<(u64, FieldMeasure)>,
    /// A certified lens's field: whether its guarantee grew useless, whether it lost cells (each said once).
    certificate_useless: bool,
    certificate_lost: bool,
}

/// What the recorder remembers about a certified lens's certificate.
#[derive(Clone, Debug)]
pub(super) struct CertificateTrack {
    pub route: Route,
    pub mean_growth: f64,
    pub ended_at: Option<u64>,
    pub totals: Option<RunTotals>,
}

/// Where an event happened, for counting repeats.
type EventKey = (usize, EventName, Option<usize>, Option<SiteRecord>);

/// Streams an audit's trace and decides its verdict.
#[derive(Debug)]
pub struct Recorder {
    plan: Plan,
    lenses: Vec<LensInfo>,
    writer: TraceWriter,
    trace: Trace,
    tracks: Vec<Vec<Track>>,
    /// Per lens: its certificate, for a certified lens that reported one.
    certificates: Vec<Option<CertificateTrack>>,
    totals: BTreeMap<EventKey, EventTotal>,
    /// The last steps, held back until it is known whether an event follows within the context.
    pending: VecDeque<Held>,
    /// The latest step released with an event.
    last_event_step: Option<u64>,
    next_log_step: u64,
    last_step: Option<u64>,
    /// Steps whose profiles were written (every profiled lens and field has one at each).
    profiled_steps: usize,
    started: Instant,
    /// The lens's events from every thread, for a recorder of the user's own loop (the driver takes them itself).
    collector: Option<crate::events::Collector>,
    /// An attribution waiting for the records of its step to be written.
    attribution: Option<AttributionRecord>,
}

/// A step whose records wait for the next `EVENT_CONTEXT` steps: written if an event comes near it.
#[derive(Debug)]
struct Held {
    step: u64,
    records: Vec<StepRecord>,
    /// `(lens, field, profile)`, made into records only if written: most steps' profiles are not.
    profiles: Vec<(usize, usize, CellProfile)>,
    events: Vec<EventRecord>,
    /// Where a certified lens's guarantee stops at this step (kept like events: never thinned, with context).
    ends: Vec<CertificateEndRecord>,
    on_log_grid: bool,
}

impl Held {
    /// Whether the step carries something a reader must see, with the steps around it.
    fn notable(&self) -> bool {
        !self.events.is_empty() || !self.ends.is_empty()
    }
}

impl Recorder {
    /// A recorder for a loop the user keeps: one lens `L`, the fields and tolerance of `plan`. Writes the header.
    ///
    /// After each step (and, if wanted, for the initial data as step 0) call [`Recorder::record_step`], then
    /// [`Recorder::finish`]. A recorder dropped without `finish` leaves a trace without summary: an incomplete run.
    ///
    /// From here until the recorder is dropped it collects the events of `L` on every thread
    /// ([`crate::events::Collector`]): another recorder or audit of the same lens type on another thread waits.
    pub fn create<L: Lens>(plan: &Plan) -> Result<Recorder, Error> {
        let collector = crate::events::Collector::start::<L>();
        Ok(Recorder { collector: Some(collector), ..Recorder::for_lenses(plan, vec![LensInfo::of::<L>()])? })
    }

    pub(crate) fn for_lenses(plan: &Plan, lenses: Vec<LensInfo>) -> Result<Recorder, Error> {
        plan.validate()?;
        if lenses.is_empty() {
            return Err(Error::NoLenses);
        }
        let header = Header {
            format: FORMAT.to_string(),
            version: VERSION,
            kernel: plan.kernel.clone(),
            scenario: plan.scenario.clone(),
            lenses: lenses.iter().map(|l| l.name.to_string()).collect(),
            fields: plan.fields.clone(),
            tolerance: plan.tolerance,
            steps_planned: plan.horizon,
            steps_audited: (plan.steps != plan.horizon).then_some(plan.steps),
            record_policy: plan.policy,
            guaranteed_lenses: Some(lenses.iter().filter(|l| l.guaranteed).map(|l| l.name.to_string()).collect()),
            float: plan.float.to_owned(),
            machine: Machine::current(),
            build: Build::current(),
            started_unix_s: SystemTime::now().duration_since(UNIX_EPOCH).map_or(0, |d| d.as_secs()),
        };
        let mut writer = TraceWriter::create(&plan.trace)?;
        writer.write(&Record::Header(header.clone()))?;
        let tracks: Vec<Vec<Track>> = lenses.iter().map(|_| vec![Track::default(); plan.fields.len()]).collect();
        Ok(Recorder {
            plan: plan.clone(),
            lenses,
            writer,
            trace: Trace::started(header),
            certificates: vec![None; tracks.len()],
            tracks,
            totals: BTreeMap::new(),
            pending: VecDeque::new(),
            last_event_step: None,
            next_log_step: 0,
            last_step: None,
            profiled_steps: 0,
            started: Instant::now(),
            collector: None,
            attribution: None,
        })
    }

    /// Records the state of every field after `step` (fields in the plan's order), with the events the lens
    /// recorded since the last call, on this thread and every other.
    pub fn record_step<L: Lens>(&mut self, step: u64, fields: &[&[L]]) -> Result<(), Error> {
        if self.lenses.len() != 1 || self.lenses[0].name != L::NAME {
            return Err(Error::UnknownLens { lens: L::NAME.to_string() });
        }
        if fields.len() != self.plan.fields.len() {
            return Err(Error::FieldCountMismatch { expected: self.plan.fields.len(), got: fields.len() });
        }
        for (spec, values) in self.plan.fields.iter().zip(fields) {
            let expected = spec.cells().unwrap_or(0);
            if values.len() != expected {
                return Err(Error::LengthMismatch { field: spec.name.clone(), expected, got: values.len() });
            }
        }
        let measured = fields
            .iter()
            .enumerate()
            .map(|(i, f)| measure::measure(f, &self.plan.tolerance, self.plan.profiled(i)))
            .collect();
        let events = self.collector.as_ref().map(crate::events::Collector::take).unwrap_or_default();
        self.ingest(LensStep { step, fields: measured, events, mismatches: Vec::new(), certificate: None }.into_all())
    }

    /// Takes the measurements of every lens (in the recorder's lens order) for one step.
    pub(crate) fn ingest(&mut self, steps: Vec<LensStep>) -> Result<(), Error> {
        let step = steps.first().map_or(0, |s| s.step);
        if let Some(previous) = self.last_step.filter(|&p| step <= p) {
            return Err(Error::StepOrder { previous, got: step });
        }
        self.last_step = Some(step);
        let on_log_grid = step >= self.next_log_step;
        if on_log_grid {
            self.next_log_step = (step + 1).max((step as f64 * LOG_RATIO).ceil() as u64);
        }
        let mut events = Vec::new();
        for (lens, lens_step) in steps.iter().enumerate() {
            self.track_fields(lens, lens_step, on_log_grid, &mut events);
            for &(kind, site, count) in &lens_step.events {
                let detail = words::occurrences_detail(count);
                events.push(self.event(lens, kind.into(), None, Some(site.into()), count, detail));
            }
        }
        self.check_bounds(&steps, &mut events);
        let ends: Vec<CertificateEndRecord> = steps
            .iter()
            .enumerate()
            .filter_map(|(lens, s)| Some((lens, s.step, s.certificate.as_ref()?)))
            .flat_map(|(lens, step, facts)| self.track_certificate(lens, step, facts))
            .collect();
        let records: Vec<StepRecord> = steps.iter().enumerate().map(|(lens, s)| self.step_record(lens, s)).collect();
        let profiles = steps
            .into_iter()
            .enumerate()
            .flat_map(|(lens, s)| {
                s.fields.into_iter().enumerate().filter_map(move |(field, m)| Some((lens, field, m.profile?)))
            })
            .collect();
        let events: Vec<EventRecord> = events.into_iter().flatten().collect();
        self.pending.push_back(Held { step, records, profiles, events, ends, on_log_grid });
        while self.pending.len() > EVENT_CONTEXT {
            self.release_front(false)?;
        }
        Ok(())
    }

    /// Updates the tracks of one lens's fields and collects the transitions that are events.
    fn track_fields(&mut self, lens: usize, s: &LensStep, on_log_grid: bool, events: &mut Vec<Option<EventRecord>>) {
        for (index, m) in s.fields.iter().enumerate() {
            let name = &self.plan.fields[index].name;
            let track = &mut self.tracks[lens][index];
            let mut found = Vec::new();
            if m.nan && !track.nan {
                found.push((EventName::Nan, words::non_finite_detail(name, true)));
            }
            if m.infinite && !track.infinite {
                found.push((EventName::Infinity, words::non_finite_detail(name, false)));
            }
            (track.nan, track.infinite) = (m.nan, m.infinite);
            if m.tol_ratio > 1.0 && track.first_crossing.is_none() {
                track.first_crossing = Some(s.step);
                let cell = multi_index(m.worst_flat, &self.plan.fields[index].shape);
                found.push((EventName::ToleranceCrossed, words::crossing_detail(m.max_err, &cell, m.tol_ratio)));
            }
            if on_log_grid {
                track.history.push((s.step, m.max_err));
            }
            track.last = Some((s.step, m.clone()));
            for (kind, detail) in found {
                // A NaN or infinity the lens saw arise at this step names the operation that made it.
                let site =
                    s.events.iter().find(|(k, _, _)| EventName::from(*k) == kind).map(|(_, site, _)| (*site).into());
                events.push(self.event(lens, kind, Some(index), site, 1, detail));
            }
        }
        for mismatch in &s.mismatches {
            let track = &mut self.tracks[lens][mismatch.field];
            if !std::mem::replace(&mut track.mismatch, true) {
                let cell = multi_index(mismatch.flat, &self.plan.fields[mismatch.field].shape);
                let detail =
                    words::mismatch_detail(&cell, mismatch.lens_primal, mismatch.original, &self.trace.header.float);
                events.push(self.event(lens, EventName::PrimalMismatch, Some(mismatch.field), None, 1, detail));
            }
        }
    }

    /// Keeps a certified lens's certificate and returns where its guarantee stops at this step: for the run at an
    /// undecided decision, for a field when its interval grows useless or cells lose their bound (each once).
    fn track_certificate(&mut self, lens: usize, step: u64, facts: &CertificateFacts) -> Vec<CertificateEndRecord> {
        let name = self.lenses[lens].name;
        let previous = self.certificates[lens].take();
        let growth = facts.mean_growth.or(previous.as_ref().map(|c| c.mean_growth)).unwrap_or(1.0);
        let track = CertificateTrack {
            route: facts.route,
            mean_growth: growth,
            ended_at: previous.as_ref().and_then(|c| c.ended_at).or(facts.ended.as_ref().map(|e| e.step)),
            totals: facts.totals.clone().or(previous.and_then(|c| c.totals)),
        };
        self.certificates[lens] = Some(track);
        let end = |cause, field: Option<String>, detail: String| CertificateEndRecord {
            step,
            lens: name.to_string(),
            cause,
            field,
            sites: Vec::new(),
            growth,
            route: facts.route.into(),
            max_radius: None,
            estimate: None,
            lost_cells: None,
            detail,
        };
        let mut ends = Vec::new();
        if let Some(ended) = &facts.ended {
            let EndReason::Undecided { sites } = &ended.reason;
            let sites: Vec<UndecidedSite> = sites
                .iter()
                .map(|&(kind, site, count)| UndecidedSite { kind: kind.into(), site: site.into(), count })
                .collect();
            let detail = certificate_words::undecided_detail(&sites);
            ends.push(CertificateEndRecord { sites, ..end(EndCause::Undecided, None, detail) });
        }
        for (index, field) in facts.step.fields.iter().enumerate() {
            let spec = &self.plan.fields[index].name;
            let track = &mut self.tracks[lens][index];
            if field.useless && !std::mem::replace(&mut track.certificate_useless, true) {
                let detail = certificate_words::useless_detail(field.max_radius, field.estimate, growth);
                ends.push(CertificateEndRecord {
                    max_radius: Some(field.max_radius),
                    estimate: Some(field.estimate),
                    ..end(EndCause::Useless, Some(spec.clone()), detail)
                });
            }
            if field.lost_cells > 0 && !std::mem::replace(&mut track.certificate_lost, true) {
                let detail = certificate_words::lost_detail(field.lost_cells);
                ends.push(CertificateEndRecord {
                    lost_cells: Some(field.lost_cells),
                    ..end(EndCause::Lost, Some(spec.clone()), detail)
                });
            }
        }
        ends
    }

    /// Reports, once per lens and field, the step where a guaranteed bound stops being useful while the best
    /// estimate says the error is still within tolerance (the dependency effect of interval-style bounds).
    fn check_bounds(&mut self, steps: &[LensStep], events: &mut Vec<Option<EventRecord>>) {
        let guaranteed: Vec<bool> = self.lenses.iter().map(|l| l.guaranteed).collect();
        // A certified lens's bound is not a per-operation enclosure: where it stops, its certificate says so
        // (`certificate_end`), and while the certificate holds the bound is the guarantee, never "lost".
        let certified: Vec<bool> = self.lenses.iter().map(|l| l.certified).collect();
        for (lens, s) in steps.iter().enumerate().filter(|(l, _)| guaranteed[*l] && !certified[*l]) {
            for (index, m) in s.fields.iter().enumerate() {
                let (Some(bound), Some(bound_ratio)) = (m.bound, m.bound_tol_ratio) else { continue };
                if self.tracks[lens][index].bound_lost {
                    continue;
                }
                // The estimate: the largest among lenses without a guarantee, else this lens's own.
                let estimates: Vec<(usize, &FieldMeasure)> = steps
                    .iter()
                    .enumerate()
                    .filter(|(l, _)| !guaranteed[*l])
                    .map(|(l, other)| (l, &other.fields[index]))
                    .collect();
                let (estimate_lens, estimate) =
                    estimates.iter().copied().max_by(|a, b| a.1.max_err.total_cmp(&b.1.max_err)).unwrap_or((lens, m));
                // Lost: the bound exceeds the tolerance while the estimate does not, or the bound allows no correct
                // digit (≥ |u|) while the estimate still gives one (< |u|/2).
                let past_tolerance = bound_ratio > 1.0 && estimate.tol_ratio <= 1.0;
                let no_digit = bound > 0.0 && bound >= m.max_abs && estimate.max_err < 0.5 * m.max_abs;
                if !(past_tolerance || no_digit) {
                    continue;
                }
                self.tracks[lens][index].bound_lost = true;
                let why = if bound_ratio > 1.0 {
                    LostBecause::PastTolerance(bound_ratio)
                } else {
                    LostBecause::NoDigit { max_abs: m.max_abs }
                };
                let detail = words::bound_lost_detail(
                    bound,
                    self.lenses[lens].name,
                    why,
                    self.lenses[estimate_lens].name,
                    estimate.max_err,
                );
                let mut event = self.event(lens, EventName::BoundLost, Some(index), None, 1, detail);
                if let Some(e) = event.as_mut() {
                    e.bound = Some(bound);
                    e.estimate = Some(estimate.max_err);
                }
                events.push(event);
            }
        }
    }

    /// Counts an event and returns the record to write, if the policy writes this occurrence.
    fn event(
        &mut self,
        lens: usize,
        kind: EventName,
        field: Option<usize>,
        site: Option<SiteRecord>,
        count: u64,
        detail: String,
    ) -> Option<EventRecord> {
        let step = self.last_step.unwrap_or(0);
        let lens_name = self.lenses[lens].name.to_string();
        let field_name = field.map(|f| self.plan.fields[f].name.clone());
        let total = self.totals.entry((lens, kind, field, site.clone())).or_insert_with(|| EventTotal {
            lens: lens_name.clone(),
            kind,
            field: field_name.clone(),
            site: site.clone(),
            first_step: step,
            last_step: step,
            steps: 0,
            count: 0,
        });
        total.last_step = step;
        total.steps += 1;
        total.count += count;
        // Occurrences 1, 2, 4, 8, … of the same event at the same place are written under `auto`.
        let write = self.plan.policy == RecordPolicy::Every || total.steps.is_power_of_two();
        write.then_some(EventRecord {
            step,
            lens: lens_name,
            kind,
            field: field_name,
            site,
            count,
            detail,
            bound: None,
            estimate: None,
        })
    }

    fn step_record(&self, lens: usize, s: &LensStep) -> StepRecord {
        let fields = s
            .fields
            .iter()
            .zip(&self.plan.fields)
            .map(|(m, spec)| FieldStep {
                name: spec.name.clone(),
                max_err: m.max_err,
                mean_err: m.mean_err,
                max_rel_err: m.max_rel_err,
                mean_rel_err: m.mean_rel_err,
                bound: m.bound,
                correct_bits: m.correct_bits,
                worst_cell: multi_index(m.worst_flat, &spec.shape),
                tol_ratio: m.tol_ratio,
                representation_err: m.representation_err,
                bound_tol_ratio: m.bound_tol_ratio,
                max_abs: m.max_abs,
            })
            .collect();
        let certificate = s.certificate.as_ref().map(|c| StepCertificateRecord {
            holds: c.step.holds,
            route: c.route.into(),
            growth: c.step.growth,
            anchored: c.step.anchored,
            fields: c
                .step
                .fields
                .iter()
                .zip(&self.plan.fields)
                .map(|(f, spec)| FieldCertificateRecord {
                    name: spec.name.clone(),
                    lower: f.worst.0,
                    upper: f.worst.1.is_finite().then_some(f.worst.1),
                    worst_cell: multi_index(f.worst_cell, &spec.shape),
                    max_radius: f.max_radius.is_finite().then_some(f.max_radius),
                    lost_cells: f.lost_cells,
                    useless: f.useless,
                })
                .collect(),
        });
        StepRecord { step: s.step, lens: self.lenses[lens].name.to_string(), fields, certificate }
    }

    /// The record of a held profile.
    fn profile_record(&self, step: u64, (lens, field, profile): (usize, usize, CellProfile)) -> ProfileRecord {
        ProfileRecord {
            step,
            lens: self.lenses[lens].name.to_string(),
            field: self.plan.fields[field].name.clone(),
            cells_per_value: profile.cells_per_value,
            // A cell whose estimate was NaN counts as infinite (see `measure`); JSON writes both as null.
            err: profile.err.into_iter().map(|e| e.is_finite().then_some(e)).collect(),
        }
    }

    /// Writes the oldest held step — its records if the policy keeps them, then its events. The step is kept
    /// when every step is, on the log grid, with an event within `EVENT_CONTEXT` steps on either side, or when
    /// `last` (the run's final step).
    fn release_front(&mut self, last: bool) -> Result<(), Error> {
        let Some(held) = self.pending.pop_front() else { return Ok(()) };
        if self.attribution.as_ref().is_some_and(|a| a.step < held.step) {
            self.write_attribution()?;
        }
        let context = EVENT_CONTEXT as u64;
        let event_before = self.last_event_step.is_some_and(|e| held.step - e <= context);
        let event_after = self.pending.iter().any(|h| h.notable() && h.step - held.step <= context);
        if held.notable() {
            self.last_event_step = Some(held.step);
        }
        let keep = self.plan.policy == RecordPolicy::Every
            || held.on_log_grid
            || held.notable()
            || event_before
            || event_after
            || last;
        if keep {
            self.write_steps(held.records)?;
        }
        // Profiles at log-spaced steps only (and the last), at most `MAX_PROFILED_STEPS`: a bounded heat map
        // whatever the policy and the run's length.
        let profiled = (held.on_log_grid && self.profiled_steps < MAX_PROFILED_STEPS) || last;
        if profiled && !held.profiles.is_empty() {
            self.profiled_steps += 1;
            for held_profile in held.profiles {
                let profile = self.profile_record(held.step, held_profile);
                self.writer.write(&Record::Profile(profile.clone()))?;
                self.trace.profiles.push(profile);
            }
        }
        for event in held.events {
            self.writer.write(&Record::Event(event.clone()))?;
            self.trace.events.push(event);
        }
        for end in held.ends {
            self.writer.write(&Record::CertificateEnd(end.clone()))?;
            self.trace.certificate_ends.push(end);
        }
        Ok(())
    }

    /// Takes the attribution of the run: written into the trace after the records of the step it measures (all
    /// of them: the driver hands it over before any later step reaches the recorder).
    pub(crate) fn attribution(&mut self, record: AttributionRecord) {
        self.attribution = Some(record);
    }

    fn write_attribution(&mut self) -> Result<(), Error> {
        if let Some(record) = self.attribution.take() {
            self.writer.write(&Record::Attribution(record.clone()))?;
            self.trace.attribution.push(record);
        }
        Ok(())
    }

    fn write_steps(&mut self, records: Vec<StepRecord>) -> Result<(), Error> {
        for record in records {
            self.writer.write(&Record::Step(record.clone()))?;
            self.trace.steps.push(record);
        }
        Ok(())
    }

    /// Ends a normal run: writes the last step if it is not written yet, then the summary with the verdict, and
    /// returns the whole trace as written.
    pub fn finish(mut self) -> Result<Trace, Error> {
        while !self.pending.is_empty() {
            let last = self.pending.len() == 1;
            self.release_front(last)?;
        }
        self.write_attribution()?;
        let summary = summary::summarize(&self);
        self.writer.write(&Record::Summary(summary.clone()))?;
        self.trace.summary = Some(summary);
        Ok(self.trace)
    }
}

impl LensStep {
    fn into_all(self) -> Vec<LensStep> {
        vec![self]
    }
}
