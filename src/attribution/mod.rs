//! Where the rounding error comes from: per source line and operation site, which operations create the error
//! of each field and which amplify it, and the remedy where the pattern is known (`docs/attribution.md`).
//!
//! [`Attribution`] runs a [`Scenario`] on the calling thread with the [`Attributed`](crate::lens::Attributed) lens,
//! which carries per site the propagated part of every value's error (forward mode, first order: the *propagated*
//! shares). It then reruns the scenario once per line of the largest shares with that line's operations computed
//! exactly in the primal (the *ablated* shares: how far the field's error drops without that line's rounding), and once
//! with everything exact, which must leave zero error. The two methods check each other: to first order they agree. The
//! result is an [`AttributionRecord`], the trace record itself: numbers, sites and pattern tags, ready to render.
//!
//! Ordinary audits pay nothing for this: the bookkeeping lives in its own lens and its own runner. The runner is
//! single-threaded; a kernel that computes on rayon workers attributes the operations of those threads to no
//! one (their site tables are their own), which shows as a residual.

mod options;
mod pattern;
pub(crate) mod table;

use std::collections::BTreeMap;
use std::panic::{catch_unwind, AssertUnwindSafe};

use crate::audit::{Error, FieldSpec, Levels, Scenario, Scheme};
use crate::lens::attributed::{AttributedUnwatched, Contributions};
use crate::trace::{AttributionRecord, FieldAttribution, LineFacts, OpFacts, Share, SiteFacts, SiteRecord};
use table::{Op, SiteState, Stats};

pub use options::AttributeOptions;
pub use pattern::{PATTERN_BITS, SIGNIFICANT_SHARE};
pub use table::{Exact, LONG_SUM_RUN, OTHER_SLOT, PRECISION_BITS, REPRESENTATION_SLOT, SLOTS};

/// Lines that get an ablation run by default: the largest propagated shares.
pub const DEFAULT_ABLATED_LINES: usize = 8;

/// An attribution of a scenario's error after `steps` steps.
///
/// ```text
/// let record = Attribution::new(&wall, 5_000).run()?;
/// for (line, share) in record.ranked_lines("T") { … }
/// ```
pub struct Attribution<'s, S: Scenario> {
    scenario: &'s S,
    steps: u64,
    ablated_lines: usize,
    check_everything: bool,
}

/// The state of every field after one run: per cell the signed error and its contributions.
struct Pass {
    fields: Vec<FieldState>,
    sites: Vec<SiteState>,
}

struct FieldState {
    spec: FieldSpec,
    errors: Vec<f64>,
    parts: Vec<Contributions>,
}

/// A field's worst cell and the sums the shares divide by.
struct Measure {
    worst: Option<usize>,
    error: f64,
    sum_of_squares: f64,
}

impl FieldState {
    fn measure(&self) -> Measure {
        let worst = (0..self.errors.len())
            .filter(|&c| self.errors[c].is_finite())
            .max_by(|&a, &b| self.errors[a].abs().total_cmp(&self.errors[b].abs()));
        let error = worst.map_or(f64::NAN, |c| self.errors[c]);
        Measure { worst, error, sum_of_squares: self.errors.iter().map(|e| e * e).sum() }
    }

    /// The propagated contribution of `slot` at the worst cell and its shares (at the cell, over the field).
    fn share(&self, m: &Measure, slot: usize) -> (Option<f64>, Option<f64>, Option<f64>) {
        let Some(worst) = m.worst else { return (None, None, None) };
        let contribution = self.parts[worst][slot];
        let over_field: f64 = self.parts.iter().zip(&self.errors).map(|(p, e)| p[slot] * e).sum();
        (Some(contribution), ratio(contribution, m.error), ratio(over_field, m.sum_of_squares))
    }

    /// The ablated shares: how far the error at the worst cell, and the field's error as a whole, drop in `ablated`.
    fn ablated_share(&self, m: &Measure, ablated: &FieldState) -> (Option<f64>, Option<f64>) {
        let Some(worst) = m.worst else { return (None, None) };
        let drop = self.errors[worst] - ablated.errors[worst];
        let over_field: f64 = self.errors.iter().zip(&ablated.errors).map(|(e, a)| (e - a) * e).sum();
        (ratio(drop, m.error), ratio(over_field, m.sum_of_squares))
    }
}

/// `part / whole`, when the whole is a finite non-zero number.
fn ratio(part: f64, whole: f64) -> Option<f64> {
    (whole != 0.0 && whole.is_finite() && part.is_finite()).then(|| part / whole)
}

impl<'s, S: Scenario> Attribution<'s, S> {
    /// An attribution of the error after `steps` steps of `scenario`, with ablation runs for the
    /// [`DEFAULT_ABLATED_LINES`] lines of the largest propagated shares and a run with everything exact.
    pub fn new(scenario: &'s S, steps: u64) -> Attribution<'s, S> {
        Attribution { scenario, steps, ablated_lines: DEFAULT_ABLATED_LINES, check_everything: true }
    }

    /// How many lines (those of the largest propagated shares) get an ablation run each; 0 for none.
    #[must_use]
    pub fn ablate_lines(mut self, lines: usize) -> Self {
        self.ablated_lines = lines;
        self
    }

    /// Leaves out the run with everything exact (`exact_error` is then `null`).
    #[must_use]
    pub fn without_exact_run(mut self) -> Self {
        self.check_everything = false;
        self
    }

    /// Runs the attribution: one run with the propagated bookkeeping, the ablation runs, the exact run.
    pub fn run(&self) -> Result<AttributionRecord, Error> {
        let base = self.pass(Exact::Nothing)?;
        let measures: Vec<Measure> = base.fields.iter().map(FieldState::measure).collect();
        let sites: Vec<SiteFacts> = base.sites.iter().map(|s| site_facts(s, &base, &measures)).collect();
        let mut lines = line_facts(&base.sites, &sites);
        // Ablation: the lines of the largest propagated share of any field, each computed exactly in one run.
        // (A line with pooled sites ranks here by the part of it that is carried.)
        let carried = |line: &LineFacts| line.shares.iter().filter_map(|s| s.share).fold(0.0f64, |m, s| m.max(s.abs()));
        let mut order: Vec<usize> = (0..lines.len()).collect();
        order.sort_by(|&a, &b| carried(&lines[b]).total_cmp(&carried(&lines[a])));
        for &index in order.iter().take(self.ablated_lines) {
            let line = &lines[index];
            let ablated = self.pass(Exact::Lines(vec![(line.file.clone(), line.line)]))?;
            for (share, ((field, m), after)) in
                lines[index].shares.iter_mut().zip(base.fields.iter().zip(&measures).zip(&ablated.fields))
            {
                (share.ablated, share.ablated_l2) = field.ablated_share(m, after);
            }
        }
        let exact_errors = if self.check_everything {
            let exact = self.pass(Exact::Everything)?;
            exact.fields.iter().map(|f| Some(f.errors.iter().fold(0.0f64, |m, e| m.max(e.abs())))).collect()
        } else {
            vec![None; base.fields.len()]
        };
        let fields = base
            .fields
            .iter()
            .zip(&measures)
            .zip(exact_errors)
            .map(|((field, m), exact_error)| field_attribution(field, m, exact_error))
            .collect();
        lines.sort_by(|a, b| b.largest_share().total_cmp(&a.largest_share()));
        let findings = pattern::find(&lines, &sites);
        Ok(AttributionRecord {
            step: self.steps,
            slots: (OTHER_SLOT - 1) as u32,
            fields,
            lines,
            sites,
            findings,
            applied: Vec::new(),
        })
    }

    /// The signed error `primal − shadow` of every cell of every field after one run in which `exact` is
    /// computed at the shadow's precision (the ablation run the shares are made of; a test compares it with an
    /// arbitrary-precision run of the same program).
    pub fn errors(&self, exact: Exact) -> Result<Vec<Vec<f64>>, Error> {
        Ok(self.pass(exact)?.fields.into_iter().map(|f| f.errors).collect())
    }

    /// One run of the scenario with the attributed lens on this thread.
    fn pass(&self, exact: Exact) -> Result<Pass, Error> {
        let specs = self.scenario.fields();
        crate::audit::validate_fields(&specs)?;
        if self.steps == 0 {
            return Err(Error::ZeroSteps);
        }
        let levels = match self.scenario.scheme() {
            Scheme::InPlace => 1,
            Scheme::TwoLevel => 2,
            Scheme::ThreeLevel => 3,
        };
        table::reset(exact, specs.len());
        // Starting the collector drops what earlier runs left; holding it keeps this run's events from another.
        let collector = crate::events::Collector::start::<AttributedUnwatched>();
        let mut at = 0u64;
        let outcome = catch_unwind(AssertUnwindSafe(|| -> Result<Levels<AttributedUnwatched>, Error> {
            let mut state = Levels::new(&specs, levels, self.scenario.stages());
            self.scenario.init(&mut state)?;
            for n in 0..self.steps {
                at = n;
                state.step = n;
                seed_fields(&mut state);
                // Steps past 2^32 share birth stamps with earlier ones: a chain test then compares step mod 2^32.
                table::begin_step(n as u32 + 1);
                self.scenario.step(&mut state);
                state.rotate();
            }
            Ok(state)
        }));
        // Events belong to audits; this run's are dropped so that they do not reach the next audit on the thread.
        let _ = collector.take();
        let _ = collector.take_unseen_non_finite();
        drop(collector);
        let sites = table::take();
        let state = outcome.map_err(|payload| Error::ScenarioPanicked {
            lens: "attributed".into(),
            step: at,
            message: panic_message(payload.as_ref()),
        })??;
        let fields = state
            .current
            .iter()
            .zip(specs)
            .map(|(field, spec)| FieldState {
                spec,
                errors: field.iter().map(|v| v.signed_error()).collect(),
                parts: field.iter().map(|v| *v.contributions()).collect(),
            })
            .collect();
        Ok(Pass { fields, sites })
    }
}

/// Marks every cell of the levels a step reads with its field, so that the step's operations are told apart by
/// the fields they read.
fn seed_fields(levels: &mut Levels<AttributedUnwatched>) {
    for level in [&mut levels.current, &mut levels.previous] {
        for (i, field) in level.iter_mut().enumerate() {
            field.iter_mut().for_each(|cell| *cell = cell.of_field(i));
        }
    }
}

/// The text a panic carried.
fn panic_message(payload: &(dyn std::any::Any + Send)) -> String {
    payload
        .downcast_ref::<&str>()
        .map(|s| (*s).to_string())
        .or_else(|| payload.downcast_ref::<String>().cloned())
        .unwrap_or_else(|| "a panic without a message".into())
}

/// What the table's statistics say, as the record has it.
fn op_facts(s: &Stats) -> OpFacts {
    let sums = (s.sums > 0).then_some(s.sums as f64);
    OpFacts {
        count: s.count,
        rounding_abs_sum: s.rounding_abs_sum,
        rounding_abs_max: s.rounding_abs_max,
        rounding_sum: s.rounding_sum,
        cancelled_bits_mean: sums.map(|n| s.cancelled_bits_sum / n),
        cancelled_bits_max: sums.map(|_| s.cancelled_bits_max),
        absorbed_bits_mean: sums.map(|n| s.absorbed_bits_sum / n),
        absorbed_bits_max: sums.map(|_| s.absorbed_bits_max),
        large_operand_mean: sums.map(|n| s.large_operand_sum / n),
        chained: s.chained,
    }
}

/// `into` and `more` together: the facts of a line from those of its sites.
fn merge(into: &mut OpFacts, more: &OpFacts) {
    let larger = |a: Option<f64>, b: Option<f64>| match (a, b) {
        (Some(x), Some(y)) => Some(x.max(y)),
        (x, y) => x.or(y),
    };
    into.count += more.count;
    into.rounding_abs_sum += more.rounding_abs_sum;
    into.rounding_abs_max = into.rounding_abs_max.max(more.rounding_abs_max);
    into.rounding_sum += more.rounding_sum;
    into.cancelled_bits_mean = larger(into.cancelled_bits_mean, more.cancelled_bits_mean);
    into.cancelled_bits_max = larger(into.cancelled_bits_max, more.cancelled_bits_max);
    into.absorbed_bits_mean = larger(into.absorbed_bits_mean, more.absorbed_bits_mean);
    into.absorbed_bits_max = larger(into.absorbed_bits_max, more.absorbed_bits_max);
    into.large_operand_mean = larger(into.large_operand_mean, more.large_operand_mean);
    into.chained += more.chained;
}

/// The facts of one site, with its shares of every field.
fn site_facts(state: &SiteState, pass: &Pass, measures: &[Measure]) -> SiteFacts {
    let pooled = state.slot == OTHER_SLOT;
    let shares = pass
        .fields
        .iter()
        .zip(measures)
        .enumerate()
        .map(|(i, (field, m))| {
            let (contribution, share, share_l2) = if pooled { (None, None, None) } else { field.share(m, state.slot) };
            let ops = state.per_field.get(i).map(op_facts).unwrap_or_default();
            Share {
                field: field.spec.name.clone(),
                ops,
                contribution,
                share,
                share_l2,
                ablated: None,
                ablated_l2: None,
            }
        })
        .collect();
    SiteFacts {
        site: state.site.map(SiteRecord::from),
        op: state.op.name().to_string(),
        ops: op_facts(&state.stats),
        shares,
    }
}

/// The sites grouped by source line (the representation, which has no line, left out).
fn line_facts(states: &[SiteState], sites: &[SiteFacts]) -> Vec<LineFacts> {
    let mut lines: BTreeMap<(&str, u32), LineFacts> = BTreeMap::new();
    for (state, facts) in states.iter().zip(sites) {
        let (Some(site), false) = (state.site, state.op == Op::Representation) else { continue };
        let line = lines.entry((site.file, site.line)).or_insert_with(|| LineFacts {
            file: site.file.to_string(),
            line: site.line,
            columns: Vec::new(),
            ops: OpFacts::default(),
            shares: facts.shares.iter().map(|s| zero_share(&s.field)).collect(),
            complete: true,
        });
        if !line.columns.contains(&site.column) {
            line.columns.push(site.column);
        }
        merge(&mut line.ops, &facts.ops);
        line.complete &= state.slot != OTHER_SLOT;
        let add = |a: Option<f64>, b: Option<f64>| Some(a? + b?);
        for (total, share) in line.shares.iter_mut().zip(&facts.shares) {
            merge(&mut total.ops, &share.ops);
            // A pooled site has no share of its own (the line is then incomplete); a site without one because the
            // field has no finite error leaves the line without one too.
            if state.slot != OTHER_SLOT {
                total.contribution = add(total.contribution, share.contribution);
                total.share = add(total.share, share.share);
                total.share_l2 = add(total.share_l2, share.share_l2);
            }
        }
    }
    lines.into_values().collect()
}

/// A share of `field` with zero contribution (the start of a line's sums).
fn zero_share(field: &str) -> Share {
    Share {
        field: field.to_string(),
        ops: OpFacts::default(),
        contribution: Some(0.0),
        share: Some(0.0),
        share_l2: Some(0.0),
        ablated: None,
        ablated_l2: None,
    }
}

/// A field's error, what the representation and the pooled sites explain and what no site does.
fn field_attribution(field: &FieldState, m: &Measure, exact_error: Option<f64>) -> FieldAttribution {
    let (representation_share, other_share, residual) = match m.worst {
        Some(worst) => {
            let parts = &field.parts[worst];
            let total: f64 = parts.iter().sum();
            (
                ratio(parts[REPRESENTATION_SLOT], m.error),
                ratio(parts[OTHER_SLOT], m.error),
                ratio(m.error - total, m.error), // 1 − Σ shares
            )
        }
        None => (None, None, None),
    };
    let worst_cell = m.worst.map_or_else(Vec::new, |c| crate::audit::multi_index(c, &field.spec.shape));
    FieldAttribution {
        name: field.spec.name.clone(),
        worst_cell,
        error: m.error,
        representation_share,
        other_share,
        residual,
        exact_error,
    }
}
