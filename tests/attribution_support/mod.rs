//! The attribution tests' fixture — a rod kernel with a planted cancellation line — and its oracle: the same
//! program run in exact rationals (dashu-ratio), every operation rounded to the nearest binary64 as the program
//! rounds it, except the operations of the lines asked to be exact.
#![allow(dead_code)]

use std::collections::BTreeMap;

use dashu_base::Abs;
use dashu_ratio::RBig;
use twinstep::audit::{FieldSpec, Levels, Scenario};

/// One explicit step of a rod that diffuses and decays, `u ← u + r·Δ²u − k·u`, with the kept value computed
/// through an offset: `(u + offset) − offset` rounds `u` to the spacing of the doubles near `offset` and then
/// cancels the offset exactly (Sterbenz) — a planted cancellation, the line to blame. Keep the three lines of the
/// loop on the lines marked below: the oracle follows them line by line.
#[twinstep::audit]
pub fn planted_step(u: &[f64], out: &mut [f64], r: f64, k: f64, offset: f64) {
    let n = u.len();
    out[0] = u[0];
    out[n - 1] = u[n - 1];
    for i in 1..n - 1 {
        let lap = u[i - 1] - 2.0 * u[i] + u[i + 1]; // LINE laplacian
        let kept = (u[i] + offset) - offset; // LINE planted
        out[i] = kept + r * lap - k * u[i]; // LINE update
    }
}

/// The three lines of the planted kernel's loop.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Line {
    Laplacian,
    Planted,
    Update,
}

impl Line {
    pub const ALL: [Line; 3] = [Line::Laplacian, Line::Planted, Line::Update];

    /// The source line number in this file, found by its marker.
    pub fn number(self) -> u32 {
        let marker = match self {
            Line::Laplacian => "// LINE laplacian",
            Line::Planted => "// LINE planted",
            Line::Update => "// LINE update",
        };
        let index = SOURCE.lines().position(|l| l.ends_with(marker)).expect("marker in the source");
        index as u32 + 1
    }
}

const SOURCE: &str = include_str!("mod.rs");

/// This file as `Location::file()` names it.
pub const FILE: &str = file!();

/// The rod: `cells` cells, diffusion number `r`, decay `k`, the planted offset; `u_i⁰ = 1 + ½ sin(π i/(n−1))`.
pub struct Planted {
    pub cells: usize,
    pub r: f64,
    pub k: f64,
    pub offset: f64,
}

impl Planted {
    pub fn new(offset: f64) -> Planted {
        Planted { cells: 16, r: 0.25, k: 1.0e-3, offset }
    }

    pub fn initial(&self) -> Vec<f64> {
        let n = self.cells as f64 - 1.0;
        (0..self.cells).map(|i| 1.0 + 0.5 * (std::f64::consts::PI * i as f64 / n).sin()).collect()
    }

    /// The plain f64 program.
    pub fn run_f64(&self, steps: u64) -> Vec<f64> {
        let mut u = self.initial();
        let mut out = u.clone();
        for _ in 0..steps {
            planted_step(&u, &mut out, self.r, self.k, self.offset);
            std::mem::swap(&mut u, &mut out);
        }
        u
    }
}

#[twinstep::scenario]
impl Scenario for Planted {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[self.cells])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![self.initial()]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let (r, k, offset) = (T::from_f64(self.r), T::from_f64(self.k), T::from_f64(self.offset));
        planted_step_twin::<T>(&levels.current[0], &mut levels.next[0], r, k, offset);
    }
}

/// What the oracle saw of one operation kind on one line: how often it ran and its exact rounding errors.
#[derive(Clone, Debug, Default)]
pub struct Roundings {
    pub count: u64,
    pub sum: RBig,
    pub abs_max: RBig,
}

/// The oracle's arithmetic: every operation exact in rationals, then rounded to the nearest double unless its
/// line is exact.
struct Machine<'a> {
    exact: &'a [Line],
    roundings: BTreeMap<(Line, &'static str), Roundings>,
}

impl Machine<'_> {
    fn op(&mut self, line: Line, name: &'static str, exact: RBig) -> RBig {
        if self.exact.contains(&line) {
            return exact;
        }
        // dashu-ratio's to_f64 rounds to nearest (ties to even), the rounding of IEEE 754-2019 §4.3.1.
        let rounded = rational(exact.to_f64().value());
        let rho = &rounded - &exact;
        let entry = self.roundings.entry((line, name)).or_default();
        entry.count += 1;
        if rho.clone().abs() > entry.abs_max {
            entry.abs_max = rho.clone().abs();
        }
        entry.sum += rho;
        rounded
    }
}

/// An f64 as an exact rational (every finite double is a dyadic rational, IEEE 754-2019 §3.2).
pub fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("finite double")
}

/// The planted rod after `steps` steps in the oracle, with the operations of `exact` lines computed exactly,
/// and the rounding errors of every operation kind on every line.
pub fn oracle(p: &Planted, steps: u64, exact: &[Line]) -> (Vec<RBig>, BTreeMap<(Line, &'static str), Roundings>) {
    let mut m = Machine { exact, roundings: BTreeMap::new() };
    let (r, k, offset, two) = (rational(p.r), rational(p.k), rational(p.offset), rational(2.0));
    let mut u: Vec<RBig> = p.initial().into_iter().map(rational).collect();
    let n = u.len();
    for _ in 0..steps {
        let mut out = u.clone(); // the ends are copied
        for i in 1..n - 1 {
            // lap = u[i - 1] - 2.0 * u[i] + u[i + 1], left to right
            let two_u = m.op(Line::Laplacian, "mul", &two * &u[i]);
            let difference = m.op(Line::Laplacian, "sub", &u[i - 1] - two_u);
            let lap = m.op(Line::Laplacian, "add", difference + &u[i + 1]);
            // kept = (u[i] + offset) - offset
            let shifted = m.op(Line::Planted, "add", &u[i] + &offset);
            let kept = m.op(Line::Planted, "sub", shifted - &offset);
            // out[i] = kept + r * lap - k * u[i]
            let diffusion = m.op(Line::Update, "mul", &r * lap);
            let sum = m.op(Line::Update, "add", kept + diffusion);
            let decay = m.op(Line::Update, "mul", &k * &u[i]);
            out[i] = m.op(Line::Update, "sub", sum - decay);
        }
        u = out;
    }
    (u, m.roundings)
}

/// `x` rounded to the nearest double.
pub fn to_f64(x: &RBig) -> f64 {
    x.to_f64().value()
}
