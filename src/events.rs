//! Events a lens reports while a twin runs: a comparison or an integer conversion its reference cannot decide,
//! a NaN or an infinity. Lenses call [`record`] from `#[track_caller]` operator impls, so the site is the user's
//! own file, line and column; whoever runs the twin — the audit driver for each chunk of steps, a [`Recorder`]
//! for a loop of the user's — takes the events with a [`Collector`].
//!
//! Why a process-wide collector keyed by lens type: a kernel may compute on threads nobody hands anything to —
//! rayon workers inside `par_iter_mut`, threads the kernel spawns — and those threads do not inherit the thread's
//! locals that once held the events (10 000 events sequentially, none with `par_iter_mut`). What such a thread
//! does know is the lens type it computes with, so [`record`] files each event under that type, in a buffer of
//! the recording thread (no contention between threads on the hot side), and a [`Collector`] for lens `L`
//! gathers the events of `L`'s two variants from the buffers of every thread. For two audits of the same lens
//! type in one process (tests run many at once) not to mix their events, one collector per lens type is active
//! at a time: a second [`Collector::start`] for the same lens type on another thread waits until the first ends.
//! The audit driver holds one only while a lens thread runs a chunk of steps, so concurrent audits of one lens
//! type take turns chunk by chunk, and audits of different lens types do not wait for each other.
//!
//! [`Recorder`]: crate::audit::Recorder

use std::any::TypeId;
use std::cell::Cell;
use std::collections::{BTreeMap, HashMap};
use std::panic::Location;
use std::sync::{Arc, Condvar, Mutex, MutexGuard, OnceLock, PoisonError};
use std::thread::ThreadId;

use crate::lens::Lens;

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

/// The events and notes one thread recorded and no collector has taken yet.
#[derive(Debug, Default)]
struct Buffer {
    /// How often each `(lens variant, kind, site)` occurred.
    counts: HashMap<(TypeId, EventKind, Site), u64>,
    /// The lens variants that noted an unseen non-finite value ([`note_unseen_non_finite`]).
    unseen: Vec<TypeId>,
    /// How many list clashes each lens variant met ([`note_list_clash`]).
    clashes: HashMap<TypeId, u64>,
}

type SharedBuffer = Arc<Mutex<Buffer>>;

/// A lock that a panic elsewhere cannot make unusable: the buffers and the holders table stay consistent at every
/// point a panic could leave them (each update is one map operation).
fn lock<T>(mutex: &Mutex<T>) -> MutexGuard<'_, T> {
    mutex.lock().unwrap_or_else(PoisonError::into_inner)
}

/// Every thread's buffer, so that a collector reaches the events of threads it knows nothing about. The buffer of
/// a thread that has ended stays until its events are taken.
fn buffers() -> &'static Mutex<Vec<SharedBuffer>> {
    static BUFFERS: OnceLock<Mutex<Vec<SharedBuffer>>> = OnceLock::new();
    BUFFERS.get_or_init(|| Mutex::new(Vec::new()))
}

/// A buffer registered for a thread (or, for a thread being torn down, one more buffer of its own).
fn registered_buffer() -> SharedBuffer {
    let buffer = SharedBuffer::default();
    lock(buffers()).push(Arc::clone(&buffer));
    buffer
}

thread_local! {
    static BUFFER: SharedBuffer = registered_buffer();
}

/// Runs `f` on this thread's buffer.
fn with_buffer(f: impl FnOnce(&mut Buffer)) {
    // A thread's locals may already be gone while it is torn down (a destructor computing with a lens): such a
    // late event gets a buffer of its own rather than being dropped.
    let mut f = Some(f);
    let _ = BUFFER.try_with(|buffer| {
        if let Some(f) = f.take() {
            f(&mut lock(buffer));
        }
    });
    if let Some(f) = f {
        f(&mut lock(&registered_buffer()));
    }
}

/// Records one event of the lens variant `L` at the caller's caller (the user's operator or method call), on
/// whichever thread computes.
#[track_caller]
#[inline(never)]
#[cold]
pub fn record<L: 'static>(kind: EventKind) {
    let site = Site::from_location(Location::caller());
    with_buffer(|buffer| *buffer.counts.entry((TypeId::of::<L>(), kind, site)).or_insert(0) += 1);
}

/// Notes that the unwatched variant `L` met a NaN where it leaves no trace in the fields: a comparison, `max`/`min`
/// or an integer conversion of a NaN primal answers without propagating it. The audit driver takes the note after
/// each step ([`Collector::take_unseen_non_finite`]) and replays the step with the watched lens to find the line
/// that made the NaN. Cold: it is only reached with a NaN in hand.
#[cold]
#[inline(never)]
pub fn note_unseen_non_finite<L: 'static>() {
    let variant = TypeId::of::<L>();
    with_buffer(|buffer| {
        if !buffer.unseen.contains(&variant) {
            buffer.unseen.push(variant);
        }
    });
}

/// Counts one list clash of the certified lens variant `L` (two inputs in one slot of its coefficient list: rigorous,
/// one entry charged to the remainder) on whichever thread computes. Not an event: no trace or report lists it; the
/// certificate sums the count per step ([`Collector::take_list_clashes`]) to choose its colouring and to report it.
/// Cold: a good colouring makes clashes rare.
#[cold]
#[inline(never)]
pub fn note_list_clash<L: 'static>() {
    with_buffer(|buffer| *buffer.clashes.entry(TypeId::of::<L>()).or_insert(0) += 1);
}

/// Which thread holds the collection of each lens type, and how many times over (a thread may start a second
/// collector for a lens type it already collects: both then see the same events).
#[derive(Default)]
struct Holders {
    held: Mutex<HashMap<TypeId, (ThreadId, usize)>>,
    released: Condvar,
}

fn holders() -> &'static Holders {
    static HOLDERS: OnceLock<Holders> = OnceLock::new();
    HOLDERS.get_or_init(Holders::default)
}

/// Takes the events of one lens — both its variants — recorded on any thread while the collector lives.
///
/// One collector per lens type is active at a time in the process: [`Collector::start`] on another thread waits
/// until the active one is dropped (the same thread may start another; both see the same events). Hold one only
/// while the twin runs and its events are taken: a thread that waits for another thread while holding a
/// collector that the other needs would wait forever (the audit driver refuses to start in that case, see
/// `docs/audit.md`).
pub struct Collector {
    /// The lens's watched variant: the key of the lock.
    lens: TypeId,
    /// The two variants, whose events this collector takes.
    variants: [TypeId; 2],
    name: &'static str,
    /// List clashes gathered by [`Collector::take`] since the last [`Collector::take_list_clashes`].
    clashes: Cell<u64>,
}

impl Collector {
    /// Starts collecting the events of lens `L` (either variant names the same lens), waiting while another
    /// thread collects them. Events of `L` left over from before — by a run that ended without taking them — are
    /// dropped: they belong to no one.
    #[must_use]
    pub fn start<L: Lens>() -> Collector {
        let lens = TypeId::of::<L::Watched>();
        let me = std::thread::current().id();
        let registry = holders();
        let mut held = lock(&registry.held);
        let fresh = loop {
            match held.get_mut(&lens) {
                None => {
                    held.insert(lens, (me, 1));
                    break true;
                }
                Some((holder, depth)) if *holder == me => {
                    *depth += 1;
                    break false;
                }
                Some(_) => held = registry.released.wait(held).unwrap_or_else(PoisonError::into_inner),
            }
        };
        drop(held);
        let collector = Collector {
            lens,
            variants: [lens, TypeId::of::<L::Unwatched>()],
            name: <L::Watched as Lens>::NAME,
            clashes: Cell::new(0),
        };
        if fresh {
            let _ = collector.take();
            let _ = collector.take_unseen_non_finite();
            let _ = collector.take_list_clashes();
        }
        collector
    }

    /// Whether this thread collects the events of lens `L` now (a [`Collector`] for it is alive here).
    #[must_use]
    pub fn active_here<L: Lens>() -> bool {
        let lens = TypeId::of::<L::Watched>();
        lock(&holders().held).get(&lens).is_some_and(|(holder, _)| *holder == std::thread::current().id())
    }

    /// Takes the events of the lens recorded on every thread since the last call: kind, site and how many
    /// times, ordered by kind and site. The list clashes recorded with them are kept for
    /// [`Collector::take_list_clashes`] (one sweep over the threads' buffers for both).
    #[must_use]
    pub fn take(&self) -> Vec<(EventKind, Site, u64)> {
        let mut merged = BTreeMap::new();
        let mut clashes = 0;
        self.sweep(|buffer| {
            buffer.counts.retain(|&(variant, kind, site), &mut count| {
                let mine = self.variants.contains(&variant);
                if mine {
                    *merged.entry((kind, site)).or_insert(0) += count;
                }
                !mine
            });
            for variant in &self.variants {
                clashes += buffer.clashes.remove(variant).unwrap_or(0);
            }
        });
        self.clashes.set(self.clashes.get() + clashes);
        merged.into_iter().map(|((kind, site), count)| (kind, site, count)).collect()
    }

    /// Whether an unwatched variant of the lens noted an unseen non-finite value ([`note_unseen_non_finite`]) on
    /// any thread since the last call, and clears the note.
    #[must_use]
    pub fn take_unseen_non_finite(&self) -> bool {
        let mut noted = false;
        self.sweep(|buffer| {
            buffer.unseen.retain(|variant| {
                let mine = self.variants.contains(variant);
                noted |= mine;
                !mine
            });
        });
        noted
    }

    /// The list clashes of the lens ([`note_list_clash`]) that the calls of [`Collector::take`] since the last call
    /// gathered, from every thread; resets the count. Take the events of a run first: what its threads recorded
    /// after the last `take` waits for the next one.
    #[must_use]
    pub fn take_list_clashes(&self) -> u64 {
        self.clashes.replace(0)
    }

    /// Runs `f` on every thread's buffer, and forgets the buffers of threads that have ended once they are empty.
    fn sweep(&self, mut f: impl FnMut(&mut Buffer)) {
        lock(buffers()).retain(|shared| {
            let mut buffer = lock(shared);
            f(&mut buffer);
            // Only this list still refers to the buffer of an ended thread.
            let ended = Arc::strong_count(shared) == 1;
            !(ended && buffer.counts.is_empty() && buffer.unseen.is_empty() && buffer.clashes.is_empty())
        });
    }
}

impl Drop for Collector {
    fn drop(&mut self) {
        let registry = holders();
        let mut held = lock(&registry.held);
        if let Some((_, depth)) = held.get_mut(&self.lens) {
            *depth -= 1;
            if *depth == 0 {
                held.remove(&self.lens);
                registry.released.notify_all();
            }
        }
    }
}

impl std::fmt::Debug for Collector {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Collector").field("lens", &self.name).finish()
    }
}
