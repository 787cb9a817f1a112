//! The plan of an audit — kernel, fields, tolerance, steps, horizon, policy, where the trace goes — and the lenses
//! as the recorder knows them: the part of the setup the recorder and the driver share, checked before any file is
//! created.

use std::path::PathBuf;

use super::super::{validate_fields, Error, FieldSpec, RecordPolicy, Tolerance};
use crate::lens::Lens;

/// What an audit is about: the part of the setup the recorder and the driver share.
#[derive(Clone, Debug)]
pub struct Plan {
    /// The kernel's name, for the header.
    pub kernel: String,
    /// A line describing the run (grid, parameters).
    pub scenario: String,
    pub fields: Vec<FieldSpec>,
    pub tolerance: Tolerance,
    /// Steps audited.
    pub steps: u64,
    /// Steps the user plans to run (the verdict extrapolates to it); at least `steps`.
    pub horizon: u64,
    pub policy: RecordPolicy,
    /// Where the trace goes.
    pub trace: PathBuf,
    /// Run each lens a second time with literals and constants as compiled, to split off the representation
    /// error (`representation_err` in the step records).
    pub split_representation: bool,
    /// Write `profile` records (decimated per-cell errors) for the 1-D fields.
    pub profiles: bool,
    /// The choices of a certified lens's certificate (its route, anchors, colouring), when the audit has one.
    pub certificate: crate::certificate::CertificateOptions,
    /// The float the program computes in (`f64`, `f32`: [`crate::audit::ProgramFloat::NAME`]), for the header and
    /// every sentence that names it. [`Plan::new`] says `f64`; [`crate::audit::Audit`] sets its program's own.
    pub float: &'static str,
}

impl Plan {
    /// A plan with the horizon equal to the audited steps and the `auto` policy.
    #[must_use]
    pub fn new(kernel: &str, fields: Vec<FieldSpec>, tolerance: Tolerance, steps: u64, trace: PathBuf) -> Plan {
        Plan {
            kernel: kernel.to_string(),
            scenario: String::new(),
            fields,
            tolerance,
            steps,
            horizon: steps,
            policy: RecordPolicy::Auto,
            trace,
            split_representation: false,
            profiles: true,
            certificate: crate::certificate::CertificateOptions::default(),
            float: crate::trace::DEFAULT_FLOAT,
        }
    }

    /// Whether field `index` gets `profile` records: profiles are on and the field is 1-D.
    pub(crate) fn profiled(&self, index: usize) -> bool {
        self.profiles && self.fields.get(index).is_some_and(|f| f.shape.len() == 1)
    }

    /// Checks everything that can be checked before a file is created.
    pub(crate) fn validate(&self) -> Result<(), Error> {
        self.tolerance.validated()?;
        validate_fields(&self.fields)?;
        if self.steps == 0 {
            return Err(Error::ZeroSteps);
        }
        if self.horizon < self.steps {
            return Err(Error::HorizonTooShort { steps: self.steps, horizon: self.horizon });
        }
        Ok(())
    }
}

/// A lens as the recorder knows it.
#[derive(Clone, Debug)]
pub(crate) struct LensInfo {
    pub name: &'static str,
    pub guaranteed: bool,
    /// The driver runs a certificate for it (its bound lasts the time loop while the certificate holds).
    pub certified: bool,
}

impl LensInfo {
    pub(crate) fn of<L: Lens>() -> LensInfo {
        LensInfo { name: L::NAME, guaranteed: L::GUARANTEED, certified: false }
    }

    /// The same lens, marked as certified or not.
    pub(crate) fn certified(self, certified: bool) -> LensInfo {
        LensInfo { certified, ..self }
    }
}
