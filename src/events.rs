//! Events a lens reports while a twin runs: a comparison or an integer conversion its reference cannot decide,
//! a NaN or an infinity. Lenses call [`record`] from `#[track_caller]` operator impls, so the site is the user's
//! own file, line and column; the audit driver drains the events of each step with [`drain`].
//!
//! The collector is thread-local: each lens of an audit runs on its own thread, and a twin never shares scalars
//! across threads within one step in a way that would need ordering between them (rayon workers inside a kernel
//! record into their own collectors, which [`drain`] does not see; see DEVELOPERS.md).

use std::cell::RefCell;
use std::collections::BTreeMap;
use std::panic::Location;

/// What happened. The names a trace and a report use for each kind are in one table, `crate::trace::EventName`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum EventKind {
    /// A comparison followed the primal while the reference could not decide it: exact arithmetic might have
    /// taken the other branch.
    UndecidedComparison,
    /// A float→integer conversion followed the primal while the reference allows another integer.
    UndecidedIndex,
    /// An operation produced NaN.
    Nan,
    /// An operation produced an infinity from finite operands.
    Infinity,
    /// A division whose divisor's reference contains zero: the exact divisor may be zero.
    DivisorMayBeZero,
}

impl EventKind {
    /// The name used in traces and reports (from the one table of `crate::trace::EventName`).
    #[must_use]
    pub fn name(self) -> &'static str {
        crate::trace::EventName::from(self).name()
    }
}

/// A source location in the user's kernel.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Site {
    pub file: &'static str,
    pub line: u32,
    pub column: u32,
}

impl Site {
    /// The site of a caller location.
    #[must_use]
    pub fn from_location(location: &'static Location<'static>) -> Site {
        // A whole-file twin's sites name the kernel file they stand for (`twin::source_file`).
        Site { file: crate::twin::source_file(location.file()), line: location.line(), column: location.column() }
    }
}

impl std::fmt::Display for Site {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}:{}:{}", self.file, self.line, self.column)
    }
}

thread_local! {
    static EVENTS: RefCell<BTreeMap<(EventKind, Site), u64>> = const { RefCell::new(BTreeMap::new()) };
}

/// Records one event at the caller's caller (the user's operator or method call).
#[track_caller]
#[inline(never)]
#[cold]
pub fn record(kind: EventKind) {
    let site = Site::from_location(Location::caller());
    EVENTS.with(|events| *events.borrow_mut().entry((kind, site)).or_insert(0) += 1);
}

/// Takes the events recorded on this thread since the last drain: kind, site and how many times.
#[must_use]
pub fn drain() -> Vec<(EventKind, Site, u64)> {
    EVENTS.with(|events| std::mem::take(&mut *events.borrow_mut()).into_iter().map(|((k, s), n)| (k, s, n)).collect())
}

thread_local! {
    static UNSEEN_NON_FINITE: std::cell::Cell<bool> = const { std::cell::Cell::new(false) };
}

/// Notes that an unwatched lens met a NaN where it leaves no trace in the fields: a comparison, `max`/`min` or an
/// integer conversion of a NaN primal answers without propagating it. The audit driver takes the note after each
/// step ([`take_unseen_non_finite`]) and replays the step with the watched lens to find the line that made the
/// NaN. Cold: it is only reached with a NaN in hand.
#[cold]
#[inline(never)]
pub fn note_unseen_non_finite() {
    UNSEEN_NON_FINITE.with(|seen| seen.set(true));
}

/// Whether [`note_unseen_non_finite`] was called on this thread since the last call, and clears the note.
#[must_use]
pub fn take_unseen_non_finite() -> bool {
    UNSEEN_NON_FINITE.with(|seen| seen.replace(false))
}
