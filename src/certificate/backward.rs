//! The backward route: the sparse rows of every step, kept, and signed sensitivities propagated back from each
//! input of the coming step, so that the bound follows the scheme's own stability rather than that of `|J|`.
//!
//! Per step `k` the condensation leaves, for every value `i` (by its id at step `k + 1`), its coefficients
//! `c̃_ij` over the ids `j` of step `k`, its remainder `M_i` and its spread `F_i = Σ_j |c̃_ij| D_j`. With the exact
//! errors `eᵏ = sᵏ − uᵏ`, the lens's invariant reads `eᵏ⁺¹ = J̃ₖ eᵏ + ℓₖ` with `|ℓₖ| ≤ Mₖ` — `J̃ₖ` the stored `f64`
//! rows themselves, everything else in `M`. For a target `t` at step `N`, `w̃ᴺ = e_t` and `w̃ᵏ = fl(J̃ₖᵀ w̃ᵏ⁺¹)`;
//! telescoping `w̃ᵏ⁺¹·eᵏ⁺¹ = w̃ᵏ·eᵏ + (J̃ₖᵀw̃ᵏ⁺¹ − w̃ᵏ)·eᵏ + w̃ᵏ⁺¹·ℓₖ` gives, rigorously,
//!
//! `|eᴺ_t| ≤ |w̃⁰|·D⁰ + Σₖ |w̃ᵏ⁺¹|·(Mₖ + γₖ Fₖ)`,
//!
//! where `γₖ` bounds the relative rounding of the sums `w̃ᵏ_j = Σ_i c̃_ij w̃ᵏ⁺¹_i` (`γ_n = nu/(1 − nu)` for a sum
//! of `n` products, each added by a fused multiply-add or by a product and a sum — `eft::mul_acc`, fused where the
//! target has an FMA; the first sum, onto 0, is exact, so no term meets more than `n` roundings; Higham §3.1,
//! from memory; `n` the largest number of rows that touch one column), so that
//! `|J̃ₖᵀw̃ᵏ⁺¹ − w̃ᵏ|·Dᵏ ≤ γₖ |w̃ᵏ⁺¹|·|J̃ₖ| Dᵏ = γₖ |w̃ᵏ⁺¹|·Fₖ`. No absolute value of a coefficient is taken before
//! the sums over paths: the bound grows like the products of `J̃`, not of `|J̃|`. All targets are swept at once
//! (a dense matrix, targets × ids), so one sweep back over `N` steps costs `N × nnz × ids` fused multiply-adds.

use crate::lens::eft::mul_acc;

/// The rows of one step, in compressed sparse row form.
#[derive(Clone, Debug, Default)]
struct StepRows {
    starts: Vec<u32>,
    cols: Vec<u32>,
    coefs: Vec<f64>,
    /// M_i + γ F_i.
    local: Vec<f64>,
    /// What underflowing sensitivities can lose in this step, per target: η·(nnz·max D + rows).
    underflow: f64,
}

/// What the forward pass hands over for one step (its rows are pushed one by one).
#[derive(Debug, Default)]
pub struct Tape {
    steps: Vec<StepRows>,
    initial: Vec<f64>,
    /// Scratch: how many rows of the step being recorded touch each column.
    degree: Vec<u32>,
    remainders: Vec<f64>,
    spreads: Vec<f64>,
    open: Option<StepRows>,
}

/// The result of a sweep.
pub struct Sweep {
    /// A rigorous bound of `|e_t|` at the current step, per id.
    pub bounds: Vec<f64>,
    /// Fused multiply-adds done.
    pub work: u64,
}

/// u, the unit roundoff of binary64.
const U: f64 = f64::EPSILON / 2.0;

impl Tape {
    /// A tape starting from the radii of the initial data.
    pub fn new(initial: Vec<f64>) -> Tape {
        let ids = initial.len();
        Tape { steps: Vec::new(), initial, degree: vec![0; ids], ..Tape::default() }
    }

    /// Starts the rows of a step.
    pub fn open(&mut self) {
        self.degree.iter_mut().for_each(|d| *d = 0);
        self.remainders.clear();
        self.spreads.clear();
        self.open = Some(StepRows { starts: vec![0], ..StepRows::default() });
    }

    /// One row: the entries of the value with the next id, its remainder and its spread.
    pub fn row(&mut self, entries: impl Iterator<Item = (u32, f64)>, remainder: f64, spread: f64) {
        let Some(rows) = self.open.as_mut() else { return };
        for (j, c) in entries {
            rows.cols.push(j);
            rows.coefs.push(c);
            if let Some(d) = self.degree.get_mut(j as usize) {
                *d += 1;
            }
        }
        rows.starts.push(rows.cols.len() as u32);
        self.remainders.push(remainder);
        self.spreads.push(spread);
    }

    /// Closes the step: `γ` from the largest column degree, and the local terms `M + γF`, rounded up.
    /// `max_radius` is the largest radius of the step's inputs (for the underflow allowance).
    pub fn close(&mut self, max_radius: f64) {
        let Some(mut rows) = self.open.take() else { return };
        let n = f64::from(self.degree.iter().copied().max().unwrap_or(0) + 1);
        let gamma = n * U / (1.0 - n * U) * (1.0 + 4.0 * U);
        rows.local = self
            .remainders
            .iter()
            .zip(&self.spreads)
            .map(|(&m, &f)| {
                let l = mul_acc(gamma, f, m) * (1.0 + 4.0 * U);
                if l.is_nan() {
                    f64::INFINITY
                } else {
                    l
                }
            })
            .collect();
        // An underflowing fused multiply-add of a sensitivity loses at most η/2, which meets an error ≤ max D;
        // one of the accumulation loses at most η/2 of the bound itself.
        let eta = f64::from_bits(1);
        rows.underflow = eta * ((rows.cols.len() as f64).mul_add(max_radius, rows.local.len() as f64) + 1.0);
        self.steps.push(rows);
    }

    /// Bytes held by the recorded rows.
    pub fn bytes(&self) -> usize {
        self.steps
            .iter()
            .map(|s| s.starts.len() * 4 + s.cols.len() * 4 + s.coefs.len() * 8 + s.local.len() * 8)
            .sum::<usize>()
            + self.initial.len() * 8
    }

    /// Sweeps back from the last recorded step to the initial data, for every id at once.
    pub fn sweep(&self) -> Sweep {
        let n = self.initial.len();
        if n == 0 {
            return Sweep { bounds: Vec::new(), work: 0 };
        }
        // W[i·n + t]: the sensitivity of target t to the value with id i, at the step being swept.
        let mut w = vec![0.0f64; n * n];
        for t in 0..n {
            w[t * n + t] = 1.0;
        }
        let mut back = vec![0.0f64; n * n];
        let mut accumulated = vec![0.0f64; n];
        let mut work = 0u64;
        let mut terms = 0f64;
        let mut underflow = 0.0f64;
        for rows in self.steps.iter().rev() {
            underflow += rows.underflow;
            back.iter_mut().for_each(|x| *x = 0.0);
            for i in 0..rows.local.len().min(n) {
                let wi = &w[i * n..(i + 1) * n];
                let local = rows.local[i];
                if local != 0.0 {
                    for (acc, &x) in accumulated.iter_mut().zip(wi) {
                        *acc = mul_acc(x.abs(), local, *acc); // Σ |w̃ᵏ⁺¹_i| (M_i + γF_i)
                    }
                }
                let (from, to) = (rows.starts[i] as usize, rows.starts[i + 1] as usize);
                for (&j, &c) in rows.cols[from..to].iter().zip(&rows.coefs[from..to]) {
                    let Some(target) = back.get_mut(j as usize * n..(j as usize + 1) * n) else { continue };
                    for (b, &x) in target.iter_mut().zip(wi) {
                        *b = mul_acc(c, x, *b); // w̃ᵏ_j += c̃_ij w̃ᵏ⁺¹_i
                    }
                }
                work += ((to - from) as u64 + 1) * n as u64;
            }
            terms += rows.local.len() as f64;
            std::mem::swap(&mut w, &mut back);
        }
        for j in 0..n {
            let wj = &w[j * n..(j + 1) * n];
            let d = self.initial[j];
            if d != 0.0 {
                for (acc, &x) in accumulated.iter_mut().zip(wj) {
                    *acc = mul_acc(x.abs(), d, *acc); // |w̃⁰|·D⁰
                }
            }
        }
        terms += n as f64;
        // The accumulations are sums of `terms` non-negative products, each rounded once (fused) or twice (a
        // product, then the sum; the first sum, onto 0, is exact): relative error ≤ γ_terms ≤ 2·terms·u while
        // terms·u < 1/4 either way (Higham §3.1 and §3.4, from memory); then what underflow may have lost (a
        // product that underflows loses at most η/2, fused or not; a sum whose result is subnormal is exact), and
        // a normal floor for the last roundings.
        let max_initial = self.initial.iter().copied().fold(0.0, f64::max);
        let inflation = 1.0 + 2.0 * (terms + 2.0) * U;
        let floor =
            (underflow + f64::from_bits(1) * (n as f64).mul_add(max_initial, 1.0)) * 2.0 + 8.0 * f64::MIN_POSITIVE;
        let bounds = accumulated
            .into_iter()
            .map(|b| {
                let b = mul_acc(b, inflation, floor);
                if b.is_nan() || terms * U > 0.25 {
                    f64::INFINITY
                } else {
                    b
                }
            })
            .collect();
        Sweep { bounds, work }
    }
}
