//! The per-thread table of operation sites that the [`crate::lens::Attributed`] lens keeps: which slot of a
//! value's contribution vector each site owns, whether the site is computed exactly (ablation), and what it did
//! over the run.
//!
//! Why a direct-mapped cache in front of a map: every operation of the lens looks its site up, and the site is
//! the `&'static Location` that `#[track_caller]` hands over. One source location is one static per
//! instantiation of the code that contains it, so its address is a key that needs no hashing of the file name:
//! the cache takes bits of the address as the index and compares the address, one load and one compare on a
//! hit. A miss (the first time an instantiation meets a site, or two sites colliding) goes to the ordered map
//! keyed by file, line and column, which also merges the instantiations of one location into one site.

use std::cell::RefCell;
use std::collections::BTreeMap;
use std::panic::Location;

use crate::events::Site;

/// Slots of a value's contribution vector: slot 0 is the representation of constants and inputs, slots
/// `1 .. SLOTS − 1` are the first `SLOTS − 2` operation sites the run meets, the last slot sums all later ones.
/// 32 keeps a value at 296 bytes; a kernel with more operation sites still gets every site's facts and every
/// line's ablated share, only the propagated shares of the sites met after the first 30 are pooled.
pub const SLOTS: usize = 32;
/// The slot of the constants and inputs as written.
pub const REPRESENTATION_SLOT: usize = 0;
/// The slot every site beyond the first `SLOTS − 2` shares.
pub const OTHER_SLOT: usize = SLOTS - 1;

/// Entries of the cache (a power of two). Open addressing with linear probing and no eviction: a run meets a
/// few dozen site instantiations, so the table stays sparse and a lookup is one probe; past [`CACHE_FILL`]
/// entries the rest go to the map.
const CACHE: usize = 256;
const CACHE_FILL: usize = CACHE / 2;

/// The kind of operation at a site.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Op {
    Add,
    Sub,
    Mul,
    Div,
    Rem,
    MulAdd,
    /// An elementary function, by its `f64` method name.
    Function(&'static str),
    /// The constants and inputs as written.
    Representation,
}

impl Op {
    /// A small number per kind, which spreads the operations of one location over the cache.
    #[inline(always)]
    fn code(self) -> usize {
        match self {
            Op::Add => 1,
            Op::Sub => 2,
            Op::Mul => 3,
            Op::Div => 4,
            Op::Rem => 5,
            Op::MulAdd => 6,
            Op::Function(_) => 7,
            Op::Representation => 0,
        }
    }

    /// The name in the attribution record.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Op::Add => "add",
            Op::Sub => "sub",
            Op::Mul => "mul",
            Op::Div => "div",
            Op::Rem => "rem",
            Op::MulAdd => "mul_add",
            Op::Function(name) => name,
            Op::Representation => "representation",
        }
    }
}

/// Which roundings a run removes: the listed lines and sites (and, for [`Exact::Everything`], the constants)
/// are computed at the shadow's precision in the primal as well.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub enum Exact {
    /// The program as it is.
    #[default]
    Nothing,
    /// Every operation and every constant: the primal is the shadow, the error is zero.
    Everything,
    /// The operations on these `(file, line)`s.
    Lines(Vec<(String, u32)>),
    /// The operations at these sites.
    Sites(Vec<crate::trace::SiteRecord>),
}

impl Exact {
    fn covers(&self, site: &Site) -> bool {
        match self {
            Exact::Nothing => false,
            Exact::Everything => true,
            Exact::Lines(lines) => lines.iter().any(|(file, line)| file == site.file && *line == site.line),
            Exact::Sites(sites) => {
                sites.iter().any(|s| s.file == site.file && s.line == site.line && s.column == site.column)
            }
        }
    }
}

/// What one site did over the run.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Stats {
    pub count: u64,
    pub rounding_abs_sum: f64,
    pub rounding_abs_max: f64,
    pub rounding_sum: f64,
    /// Sums and differences only.
    pub sums: u64,
    pub cancelled_bits_sum: f64,
    pub cancelled_bits_max: f64,
    pub absorbed_bits_sum: f64,
    pub absorbed_bits_max: f64,
    pub large_operand_sum: f64,
    /// Sums that continue a chain of at least [`LONG_SUM_RUN`] sums of their own site within the step.
    pub chained: u64,
}

/// The run of sums of one site, one after another within a step, from which a sum counts as part of a long sum:
/// with half of a site's sums past it, its chains have at least `2·LONG_SUM_RUN` terms. A fold of a few terms
/// written in one expression (`a + b + c`, one site since Rust gives both sums the same location) stays below it.
pub const LONG_SUM_RUN: u32 = 8;

/// The significand bits of binary64 (IEEE 754-2019 Table 3.5: p = 53): a result that cancels to zero lost them
/// all, and no more than them can be absorbed.
pub const PRECISION_BITS: f64 = 53.0;

/// What one sum `x + y` (a difference as `x + (−y)`) did, worked out once per operation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SumFacts {
    /// `log2(max(|x|, |y|) / |x + y|)`, 53 when the sum is zero and an operand is not.
    pub cancelled: f64,
    /// `log2(max / min)`, capped at 53.
    pub absorbed: f64,
    /// `max(|x|, |y|)` (0 when not finite).
    pub large: f64,
    /// Whether the sum continues a run of at least [`LONG_SUM_RUN`] sums of its own site.
    pub long: bool,
}

impl SumFacts {
    /// The facts of the sum `x + y = sum` whose chain of sums of its own site has length `chain`.
    #[inline(always)]
    #[must_use]
    pub fn of(x: f64, y: f64, sum: f64, chain: u32) -> SumFacts {
        let (large, small) = if x.abs() >= y.abs() { (x.abs(), y.abs()) } else { (y.abs(), x.abs()) };
        let finite = large.is_finite();
        let cancelled = if large == 0.0 || !finite {
            0.0
        } else if sum == 0.0 {
            PRECISION_BITS
        } else {
            log2(large / sum.abs()).max(0.0) // log2(max(|x|,|y|)/|x ± y|), the definition
        };
        let absorbed = if small == 0.0 || !finite {
            0.0
        } else {
            log2(large / small).min(PRECISION_BITS) // the bits of the smaller operand below the larger's ulp
        };
        SumFacts { cancelled, absorbed, large: if finite { large } else { 0.0 }, long: chain >= LONG_SUM_RUN }
    }
}

/// `log2 x` for a finite `x > 0`, to about 10⁻¹⁰ (an absolute error in bits), without a library call: the
/// library's `log2` was a fifth of the lens's time in the benchmark. `x = 2^e·m` with `m ∈ [√½, √2)`, then
/// `ln m = 2·atanh(t) = 2(t + t³/3 + t⁵/5 + … + t¹¹/11 + …)` with `t = (m − 1)/(m + 1)`, `|t| ≤ 0.172`
/// (Abramowitz & Stegun 4.1.27, from memory), whose first omitted term is below `2·0.172¹³/13 ≈ 2·10⁻¹¹`
/// (`3·10⁻¹¹` bits).
/// Subnormal and non-finite arguments take the library's function.
#[inline(always)]
#[must_use]
pub fn log2(x: f64) -> f64 {
    let bits = x.to_bits();
    let biased = ((bits >> 52) & 0x7ff) as i64;
    if biased == 0 || biased == 0x7ff || x < 0.0 {
        return x.log2();
    }
    let mut exponent = biased - 1023;
    let mut m = f64::from_bits((bits & ((1 << 52) - 1)) | (1023 << 52)); // the significand, in [1, 2)
    if m > core::f64::consts::SQRT_2 {
        m *= 0.5; // exact
        exponent += 1;
    }
    let t = (m - 1.0) / (m + 1.0);
    let t2 = t * t;
    let ln_m =
        2.0 * t * (1.0 + t2 * (1.0 / 3.0 + t2 * (1.0 / 5.0 + t2 * (1.0 / 7.0 + t2 * (1.0 / 9.0 + t2 * (1.0 / 11.0))))));
    exponent as f64 + ln_m * core::f64::consts::LOG2_E
}

impl Stats {
    /// One operation with exact rounding error `ρ = result − exact result of the operands`, and what it did as a
    /// sum.
    #[inline(always)]
    pub fn add(&mut self, rounding: f64, sum: Option<&SumFacts>) {
        self.count += 1;
        let magnitude = rounding.abs();
        self.rounding_abs_sum += magnitude;
        self.rounding_abs_max = self.rounding_abs_max.max(magnitude);
        self.rounding_sum += rounding;
        if let Some(facts) = sum {
            self.sums += 1;
            self.cancelled_bits_sum += facts.cancelled;
            self.cancelled_bits_max = self.cancelled_bits_max.max(facts.cancelled);
            self.absorbed_bits_sum += facts.absorbed;
            self.absorbed_bits_max = self.absorbed_bits_max.max(facts.absorbed);
            self.large_operand_sum += facts.large;
            self.chained += u64::from(facts.long);
        }
    }
}

/// One site of the table: an operation kind at a source location. Rust gives a binary operator the location
/// of the whole expression, which starts with its left operand, so in `a - b + c` the difference and the sum
/// share file, line and column: the kind tells them apart. Two operations of one kind there (`a + b + c`) are
/// one site.
#[derive(Clone, Debug, PartialEq)]
pub struct SiteState {
    /// `None`: the representation of constants and inputs.
    pub site: Option<Site>,
    pub op: Op,
    /// The site's number, 1-based, which a value stores as its origin (0: no site).
    pub id: u32,
    /// The slot of the contribution vector it adds its rounding errors to.
    pub slot: usize,
    /// Whether its operations are computed exactly in this run.
    pub exact: bool,
    /// Over the run.
    pub stats: Stats,
    /// Per field, the operations whose operands depend on that field (see [`crate::lens::attributed`]).
    pub per_field: Vec<Stats>,
}

impl SiteState {
    /// Adds one operation to the facts over the run and to those of every field in the `fields` mask.
    #[inline(always)]
    fn note(&mut self, fields: u64, rounding: f64, sum: Option<&SumFacts>) {
        self.stats.add(rounding, sum);
        let mut mask = fields;
        while mask != 0 {
            let field = mask.trailing_zeros() as usize;
            if let Some(stats) = self.per_field.get_mut(field) {
                stats.add(rounding, sum);
            }
            mask &= mask - 1;
        }
    }
}

/// A site as an operation sees it: where its facts go, the slot of its rounding, whether it is exact.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct At {
    index: u32,
    /// The site's number (see [`SiteState::id`]).
    pub id: u32,
    pub slot: usize,
    pub exact: bool,
    /// The step being computed.
    pub step: u32,
}

struct Table {
    /// `(address of the Location, operation, index into sites)`; address 0 is an empty entry.
    cache: [(usize, Op, u32); CACHE],
    by_site: BTreeMap<(Site, Op), u32>,
    sites: Vec<SiteState>,
    exact: Exact,
    /// The step being computed, which values carry as their birth step: an operand this same site produced in
    /// the same step makes an accumulation chain inside the step (a long sum), one it produced in an earlier
    /// step is the field carried on (a time-step accumulation).
    step: u32,
    /// How many fields the per-field facts tell apart.
    fields: usize,
    /// Entries of the cache in use.
    cached: usize,
}

impl Table {
    const fn new() -> Table {
        Table {
            cache: [(0, Op::Representation, 0); CACHE],
            by_site: BTreeMap::new(),
            sites: Vec::new(),
            exact: Exact::Nothing,
            step: 0,
            fields: 0,
            cached: 0,
        }
    }

    /// The index of the site at `location`, entered on the first meeting.
    #[inline(always)]
    fn index(&mut self, location: &'static Location<'static>, op: Op) -> usize {
        let address = std::ptr::from_ref(location) as usize;
        // A Location is at least 16 bytes: the bits above the fourth tell neighbouring statics apart.
        let mut entry = ((address >> 4) ^ (op.code() << 5)) & (CACHE - 1);
        loop {
            let (cached, cached_op, index) = self.cache[entry];
            if cached == address && cached_op == op {
                return index as usize;
            }
            if cached == 0 {
                break;
            }
            entry = (entry + 1) & (CACHE - 1);
        }
        let index = self.enter(location, op);
        if self.cached < CACHE_FILL {
            self.cache[entry] = (address, op, index as u32);
            self.cached += 1;
        }
        index
    }

    #[cold]
    #[inline(never)]
    fn enter(&mut self, location: &'static Location<'static>, op: Op) -> usize {
        self.ensure_representation();
        let site = Site::from_location(location);
        if let Some(&index) = self.by_site.get(&(site, op)) {
            return index as usize;
        }
        let index = self.sites.len();
        let state = SiteState {
            site: Some(site),
            op,
            id: index as u32 + 1,
            // Sites take slots 1, 2, … in the order met; past OTHER_SLOT − 1 they share the last one.
            slot: index.min(OTHER_SLOT),
            exact: self.exact.covers(&site),
            stats: Stats::default(),
            per_field: vec![Stats::default(); self.fields],
        };
        self.sites.push(state);
        self.by_site.insert((site, op), index as u32);
        index
    }

    /// Entry 0 is the representation, always.
    fn ensure_representation(&mut self) {
        if self.sites.is_empty() {
            self.sites.push(SiteState {
                site: None,
                op: Op::Representation,
                id: 1,
                slot: REPRESENTATION_SLOT,
                exact: self.exact == Exact::Everything,
                stats: Stats::default(),
                per_field: vec![Stats::default(); self.fields],
            });
        }
    }
}

thread_local! {
    static TABLE: RefCell<Table> = const { RefCell::new(Table::new()) };
}

/// The site at `location` for an operation `op` (entered when first met).
#[inline(always)]
#[must_use]
pub fn site(location: &'static Location<'static>, op: Op) -> At {
    TABLE.with(|table| {
        let mut table = table.borrow_mut();
        let index = table.index(location, op);
        let site = &table.sites[index];
        At { index: index as u32, id: site.id, slot: site.slot, exact: site.exact, step: table.step }
    })
}

/// The pseudo-site of the constants and inputs as written.
#[must_use]
pub fn representation() -> At {
    TABLE.with(|table| {
        let mut table = table.borrow_mut();
        table.ensure_representation();
        let site = &table.sites[0];
        At { index: 0, id: site.id, slot: site.slot, exact: site.exact, step: table.step }
    })
}

/// Adds one operation at `at` to its facts: over the run, and for every field in the `fields` mask.
#[inline(always)]
pub fn note(at: At, fields: u64, rounding: f64, sum: Option<SumFacts>) {
    TABLE.with(|table| {
        if let Some(site) = table.borrow_mut().sites.get_mut(at.index as usize) {
            site.note(fields, rounding, sum.as_ref());
        }
    });
}

/// Tells the table that step `step` begins.
pub fn begin_step(step: u32) {
    TABLE.with(|table| table.borrow_mut().step = step);
}

/// Empties this thread's table and sets what the next run computes exactly and how many fields it has.
pub fn reset(exact: Exact, fields: usize) {
    TABLE.with(|table| *table.borrow_mut() = Table { exact, fields: fields.min(64), ..Table::new() });
}

/// This thread's sites, in the order met (the representation first), leaving the table empty.
#[must_use]
pub fn take() -> Vec<SiteState> {
    TABLE.with(|table| {
        let mut table = table.borrow_mut();
        table.ensure_representation();
        let sites = std::mem::take(&mut table.sites);
        *table = Table::new();
        sites
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn log2_matches_the_library_to_ten_digits() {
        // Against the platform's correctly-rounded-or-nearly log2 (C99 log2 through std; its error is below an
        // ulp, far below the 10⁻¹⁰ checked here), over significands across [1, 2) and exponents from 2^-1000 to
        // 2^1000; exact at powers of two (log2 2^k = k).
        let mut worst = 0.0f64;
        for k in (-1000..=1000).step_by(37) {
            for j in 0..200 {
                let x = (1.0 + j as f64 / 200.0) * 2f64.powi(k);
                worst = worst.max((log2(x) - x.log2()).abs());
            }
            assert_eq!(log2(2f64.powi(k)), f64::from(k));
        }
        assert!(worst < 1e-10, "{worst}");
    }

    #[test]
    fn sum_facts_count_cancelled_and_absorbed_bits() {
        // 1024 + 1 − 1024: |x| = 1025, sum 1: log2(1025) ≈ 10.0014 bits cancelled (closed form).
        let f = SumFacts::of(1025.0, -1024.0, 1.0, 0);
        assert!((f.cancelled - 1025f64.log2()).abs() < 1e-9 && (f.absorbed - (1025.0f64 / 1024.0).log2()).abs() < 1e-9);
        // 1300 + 1e-5: log2(1.3e8) ≈ 26.95 bits of the increment fall off; nothing cancels.
        let f = SumFacts::of(1300.0, 1e-5, 1300.00001, LONG_SUM_RUN);
        assert!((f.absorbed - 1.3e8f64.log2()).abs() < 1e-6 && f.cancelled == 0.0 && f.long);
        // A sum to zero of non-zero operands loses the whole significand (p = 53, IEEE 754-2019 Table 3.5).
        assert_eq!(SumFacts::of(1.5, -1.5, 0.0, 0).cancelled, PRECISION_BITS);
    }
}
