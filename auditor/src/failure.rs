//! Errors for the user: one line that names the file and what is wrong, and the exit code it maps to. Every
//! command returns them as values; `main` is the one place that prints them.

/// The documented exit codes (`docs/cli.md`).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Exit {
    /// 1: the gate found a field outside its tolerance.
    GateFailed = 1,
    /// 2: bad usage or bad input (unreadable or invalid trace, unwritable output).
    Input = 2,
    /// 3: the audited program, or the cargo build of it, failed.
    Harness = 3,
}

/// An error for the user.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Failure {
    pub message: String,
    pub exit: Exit,
}

impl Failure {
    /// A usage or input error (exit 2).
    #[must_use]
    pub fn input(message: impl Into<String>) -> Failure {
        Failure { message: message.into(), exit: Exit::Input }
    }

    /// A failure of the audited program or its build (exit 3).
    #[must_use]
    pub fn harness(message: impl Into<String>) -> Failure {
        Failure { message: message.into(), exit: Exit::Harness }
    }
}
