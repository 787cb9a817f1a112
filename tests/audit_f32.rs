//! `f32` kernels through the audit: a `Scenario<f32>` under `#[twinstep::scenario]` runs the twin of an `f32`
//! fixture kernel with the binary32 lens (primal binary32, double-double reference) beside the untouched `f32`
//! kernel, and the audit compares the two bit for bit at every cell and step (a `primal_mismatch` event where they
//! differ — shown to fire on a one-ulp difference). The lens's error estimate is checked against the exact error of
//! the `f32` run, computed in rationals (dashu-ratio); the 2-D relaxation over `[[f32; NX]; NY]` audits the same way.

mod audit_support;

use audit_support::{rational, rational_to_f64, scratch};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bfloat16, Binary32, Binary32Unwatched};
use twinstep::trace::{EventName, Trace};
use twinstep_fixtures::heat_f32::{heat_f32_step, heat_f32_step_twin};
use twinstep_fixtures::relax_f32::{relax_f32_sweep, relax_f32_sweep_twin, NX, NY};

/// The diffusion number of the heat runs, as the `f32` program holds it.
const R: f32 = 0.4;

/// A rod of `f32` temperatures under the fixture's `f32` heat step (fused update `r·lap + u`, ends held). With
/// `nudge`, the original moves one cell by one ulp after every step: a program the twin does not reproduce.
struct Rod32 {
    start: Vec<f32>,
    nudge: bool,
}

impl Rod32 {
    fn new(cells: usize) -> Rod32 {
        // Arbitrary deterministic data of both signs (a fixed linear congruential sequence; Knuth's MMIX constants,
        // from memory): the test compares runs, it claims nothing about these numbers.
        let mut state: u64 = 0x2545_f491_4f6c_dd1d;
        let start = (0..cells)
            .map(|_| {
                state = state.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1_442_695_040_888_963_407);
                ((state >> 40) as f32 / (1u64 << 24) as f32) * 2.0 - 1.0
            })
            .collect();
        Rod32 { start, nudge: false }
    }
}

#[twinstep::scenario]
impl Scenario<f32> for Rod32 {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[self.start.len()])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        // f32 inputs are exact in binary32 and in the reference.
        levels.current[0].fill(|i| T::from_f32(self.start[i[0]]));
        Ok(())
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        heat_f32_step_twin(&levels.current[0], &mut levels.next[0], T::from_f32(R));
    }

    fn step_original(&self, levels: &mut Levels<f32>) {
        heat_f32_step(&levels.current[0], &mut levels.next[0], R);
        if self.nudge {
            let cell = &mut levels.next[0][3];
            *cell = f32::from_bits(cell.to_bits() + 1);
        }
    }
}

fn mismatches(trace: &Trace) -> Vec<u64> {
    trace.events.iter().filter(|e| e.kind == EventName::PrimalMismatch).map(|e| e.step).collect()
}

#[test]
fn an_f32_kernel_audits_with_the_binary32_lens_bit_for_bit() {
    let rod = Rod32::new(64);
    let steps = 120;
    let trace = Audit::new(&rod, Tolerance::absolute(1e-4), steps)
        .kernel("heat_f32_step")
        .trace(scratch("audit_f32_heat").join("t.jsonl"))
        .every_step()
        .lens::<Binary32>()
        .run()
        .unwrap();
    assert!(trace.is_complete());
    assert_eq!(trace.header.lenses, vec!["binary32".to_owned()]);
    // The header names the program's float, and every sentence of the verdict and the report names it, not f64.
    assert_eq!(trace.header.float, "f32");
    let verdict = &trace.summary.as_ref().unwrap().verdict.text;
    assert!(verdict.starts_with("f32 is enough") || verdict.starts_with("f32 is not enough"), "{verdict}");
    let text = twinstep::report::render_text(&trace);
    assert!(text.contains("f32 is enough") || text.contains("f32 is not enough"), "{text}");
    assert!(!text.contains("f64 is"), "{text}");
    // The audit compared the binary32 primal with the f32 kernel at every cell and step: no difference.
    assert_eq!(mismatches(&trace), Vec::<u64>::new());

    // Oracle: the exact scheme from the same f32 data with r the f32 value 0.4f32 taken as exact (dashu-ratio),
    // beside the f32 program itself; the lens's largest error estimate is the largest true error over the cells
    // (its double-double reference carries about 106 bits: ten digits are far inside it).
    let r = rational(f64::from(R));
    let mut float = rod.start.clone();
    let mut exact: Vec<RBig> = float.iter().map(|&x| rational(f64::from(x))).collect();
    for step in 1..=steps {
        let mut next = float.clone();
        heat_f32_step(&float, &mut next, R);
        float = next;
        let mut following = exact.clone();
        for i in 1..exact.len() - 1 {
            // u_i + r (u_{i-1} − 2u_i + u_{i+1}), exactly
            let lap = &exact[i - 1] - RBig::from(2) * &exact[i] + &exact[i + 1];
            following[i] = &exact[i] + &r * lap;
        }
        exact = following;
        let truth = float
            .iter()
            .zip(&exact)
            .map(|(f, e)| rational_to_f64(&(rational(f64::from(*f)) - e)).abs())
            .fold(0.0, f64::max);
        let record = trace.steps.iter().find(|s| s.step == step).expect("every step is recorded");
        let estimate = record.fields[0].max_err;
        assert!((estimate - truth).abs() <= 1e-10 * truth, "step {step}: {estimate:e} against {truth:e}");
        assert!(step < 3 || truth > 0.0, "rounding shows by step {step}");
    }
}

#[test]
fn the_audit_catches_an_f32_program_the_twin_does_not_reproduce() {
    // One ulp of one cell after the first step: the comparison must see it at that step, as for an f64 kernel.
    let rod = Rod32 { nudge: true, ..Rod32::new(16) };
    let trace = Audit::new(&rod, Tolerance::absolute(1e-4), 5)
        .trace(scratch("audit_f32_nudge").join("t.jsonl"))
        .lens::<Binary32Unwatched>()
        .run()
        .unwrap();
    assert_eq!(mismatches(&trace).first(), Some(&1));
    let mismatch = trace.events.iter().find(|e| e.kind == EventName::PrimalMismatch).unwrap();
    assert!(mismatch.detail.contains("plain f32 original"), "{}", mismatch.detail);
    // A lens whose primal is another format computes something else by design: it is not compared.
    let plain = Rod32::new(16);
    let trace = Audit::new(&plain, Tolerance::absolute(1.0), 5)
        .trace(scratch("audit_f32_bf16").join("t.jsonl"))
        .lens::<Bfloat16>()
        .run()
        .unwrap();
    assert!(mismatches(&trace).is_empty());
    assert!(trace.steps.iter().any(|s| s.fields[0].max_err > 0.0), "bfloat16 rounds the f32 data");
    // The same f32 program audited as bfloat16 in binary32 words: the same primal (so the same path), and an
    // error that is the double-double lens's within binary32's own error, far inside the sweep's margin of 2^-10.
    let words = Audit::new(&plain, Tolerance::absolute(1.0), 5)
        .trace(scratch("audit_f32_bf16_words").join("t.jsonl"))
        .lens::<twinstep::lens::Bfloat16B32>()
        .run()
        .unwrap();
    assert!(mismatches(&words).is_empty());
    for (a, b) in words.steps.iter().zip(&trace.steps) {
        let (a, b) = (a.fields[0].max_err, b.fields[0].max_err);
        assert!((a - b).abs() <= twinstep::sweep::REFERENCE_MARGIN * b, "{a} vs {b}");
    }
}

/// The fixture's weighted-Jacobi sweep for `−Δu = f` on `[[f32; NX]; NY]`, one field `u` of shape `[NY, NX]`.
/// The levels hold the field flat (row-major); the step copies it into the kernel's fixed-size arrays and back.
struct Poisson32 {
    u0: [[f32; NX]; NY],
    source: [[f32; NX]; NY],
}

/// `field[i·NX + j]` as `[[T; NX]; NY]`.
fn grid<T: Copy>(field: &[T]) -> [[T; NX]; NY] {
    std::array::from_fn(|i| std::array::from_fn(|j| field[i * NX + j]))
}

#[twinstep::scenario]
impl Scenario<f32> for Poisson32 {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[NY, NX])]
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        levels.current[0].fill(|ij| T::from_f32(self.u0[ij[0]][ij[1]]));
        Ok(())
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let u = grid(&levels.current[0]);
        let f = self.source.map(|row| row.map(T::from_f32));
        let mut out = u;
        let _residual = relax_f32_sweep_twin(&u, &mut out, &f, T::from_f32(1.0 / 225.0));
        levels.next[0].copy_from_slice(out.as_flattened());
    }

    fn step_original(&self, levels: &mut Levels<f32>) {
        let u = grid(&levels.current[0]);
        let mut out = u;
        let _residual = relax_f32_sweep(&u, &mut out, &self.source, 1.0 / 225.0);
        levels.next[0].copy_from_slice(out.as_flattened());
    }
}

#[test]
fn an_f32_relaxation_over_fixed_size_arrays_audits_bit_for_bit() {
    // A source of both signs and a start of arbitrary data, so the residual keeps changing for the whole run.
    let values = Rod32::new(2 * NX * NY).start;
    let problem =
        Poisson32 { u0: grid(&values[..NX * NY]), source: grid(&values[NX * NY..]).map(|row| row.map(|x| 50.0 * x)) };
    let trace = Audit::new(&problem, Tolerance::absolute(1e-5), 150)
        .kernel("relax_f32_sweep")
        .trace(scratch("audit_f32_relax").join("t.jsonl"))
        .every_step()
        .lens::<Binary32>()
        .run()
        .unwrap();
    assert!(trace.is_complete());
    assert_eq!(
        mismatches(&trace),
        Vec::<u64>::new(),
        "the binary32 primal is the f32 program's at every cell and step"
    );
    // Rounding shows: 0.8·0.25 and h² = 1/225 are not binary32 numbers, and the sweep rounds at every update.
    let last = trace.steps.last().expect("steps");
    assert!(last.fields[0].max_err > 0.0 && last.fields[0].max_err < 1e-3, "{:?}", last.fields[0]);
}
