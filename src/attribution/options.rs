//! What an audit that attributes its error is told ([`crate::audit::Audit::attribute_with`]): how many steps the
//! attribution runs, how many lines get an ablation run, and which fields of the run carry another with a remedy
//! applied. The audit checks these against its own plan before it creates a file, and runs the same
//! [`Attribution`] a user can run alone, so the record in the trace is the one `Attribution::run` returns.
//!
//! Why fewer steps than the audit can make sense: an attribution makes `2 + ablated lines` runs of the scenario
//! with a lens about 60 times slower than the shadow (`docs/attribution.md`, Cost), so where the error grows
//! regularly a shorter horizon names the same lines for a fraction of the time.

use super::{Attribution, DEFAULT_ABLATED_LINES};
use crate::audit::{Error, Scenario};
use crate::trace::{AppliedRemedy, FieldSpec, Remedy};

/// How an audit attributes its error.
///
/// ```ignore
/// Audit::new(&wall, Tolerance::absolute(1e-9), 60_000)
///     .lens::<Shadow>()
///     .attribute_with(AttributeOptions::new().steps(5_000).remedy_applied("T", "rise", Remedy::CarryPerturbation, Some(1300.0)))
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct AttributeOptions {
    steps: Option<u64>,
    ablated_lines: usize,
    applied: Vec<AppliedRemedy>,
}

impl Default for AttributeOptions {
    fn default() -> AttributeOptions {
        AttributeOptions::new()
    }
}

impl AttributeOptions {
    /// The attribution of the audit's last step, with ablation runs for the [`DEFAULT_ABLATED_LINES`] lines of
    /// the largest propagated shares.
    #[must_use]
    pub fn new() -> AttributeOptions {
        AttributeOptions { steps: None, ablated_lines: DEFAULT_ABLATED_LINES, applied: Vec::new() }
    }

    /// Attributes the error after `steps` steps (at most the audit's steps) instead of after the audit's last.
    #[must_use]
    pub fn steps(mut self, steps: u64) -> Self {
        self.steps = Some(steps);
        self
    }

    /// How many lines (those of the largest propagated shares) get an ablation run each; 0 for none.
    #[must_use]
    pub fn ablate_lines(mut self, lines: usize) -> Self {
        self.ablated_lines = lines;
        self
    }

    /// Says that field `remedied` holds the same physics as field `field` with `remedy` applied (the rise above
    /// `background` carried instead of the absolute value): the report then sets the two fields' measured errors
    /// side by side, which shows what the remedy buys.
    #[must_use]
    pub fn remedy_applied(mut self, field: &str, remedied: &str, remedy: Remedy, background: Option<f64>) -> Self {
        self.applied.push(AppliedRemedy {
            field: field.to_string(),
            remedied: remedied.to_string(),
            remedy,
            background,
        });
        self
    }

    /// The step the attribution measures, checked against an audit of `audited` steps of `fields`: a step
    /// beyond the audit's, zero steps, or a remedy naming a field the scenario does not have is a clear error.
    pub(crate) fn checked_step(&self, fields: &[FieldSpec], audited: u64) -> Result<u64, Error> {
        let step = self.steps.unwrap_or(audited);
        if step == 0 || step > audited {
            return Err(Error::BadAttribution {
                reason: format!("it must attribute between 1 and the {audited} audited steps, not {step}"),
            });
        }
        for applied in &self.applied {
            for name in [&applied.field, &applied.remedied] {
                if !fields.iter().any(|f| &f.name == name) {
                    let known: Vec<&str> = fields.iter().map(|f| f.name.as_str()).collect();
                    return Err(Error::BadAttribution {
                        reason: format!("a remedy names field {name:?}, but the fields are {}", known.join(", ")),
                    });
                }
            }
            if applied.field == applied.remedied {
                return Err(Error::BadAttribution {
                    reason: format!("field {:?} cannot be its own remedy", applied.field),
                });
            }
        }
        Ok(step)
    }

    /// The attribution these options ask for, of `step` steps of `scenario`.
    pub(crate) fn runner<'s, S: Scenario>(&self, scenario: &'s S, step: u64) -> Attribution<'s, S> {
        Attribution::new(scenario, step).ablate_lines(self.ablated_lines)
    }

    /// The remedies applied, for the record.
    pub(crate) fn applied(&self) -> &[AppliedRemedy] {
        &self.applied
    }
}
