//! Attribution on the demo's kiln wall (`auditor/src/demo/kiln.rs`): the report names the line of the kernel
//! that makes `T` drift — a small firing increment added to about 1300 K every step — and the remedy, carrying
//! the rise above the background; the same kernel on the `rise` field, which is that remedy applied, shows how
//! far the error drops.

use twinstep::attribution::Attribution;
use twinstep::trace::{AttributionRecord, Pattern, Remedy};
use twinstep_cli::demo::kiln::Wall;

/// Steps of the attribution run: a twelfth of the demo's horizon, enough for the drift to dominate (its error
/// grows linearly, the rest does not).
const STEPS: u64 = 5_000;

/// The lines of `wall_step` that do arithmetic — the two faces and the inner cells — found in the kernel's source.
fn kernel_lines() -> [u32; 3] {
    let source = include_str!("../src/demo/kiln.rs");
    let line =
        |text: &str| source.lines().position(|l| l.trim_start() == text).expect("a line of the kernel") as u32 + 1;
    [
        line("out[0] = u[0] + heat;"),
        line("out[n - 1] = u[n - 1] + heat;"),
        line("out[i] = u[i] + r * (u[i - 1] - 2.0 * u[i] + u[i + 1]) + heat;"),
    ]
}

fn attribute() -> AttributionRecord {
    Attribution::new(&Wall::default(), STEPS).run().expect("the attribution runs")
}

#[test]
fn the_report_names_the_lines_and_the_remedy() {
    let record = attribute();
    let kernel = kernel_lines();
    // At T's worst cell the error comes from the kernel's three lines: the faces, which add the firing increment
    // to the wall's ends and pass their error inwards by conduction, and the inner update.
    let ranked = record.ranked_lines("T");
    assert!(ranked.iter().all(|(l, _)| l.file.ends_with("demo/kiln.rs") && kernel.contains(&l.line)), "{ranked:?}");
    let total: f64 = ranked.iter().map(|(_, share)| share).sum();
    assert!((total - 1.0).abs() < 1e-6, "{total}");
    for line in kernel {
        let finding = record.findings.iter().find(|f| f.field == "T" && f.line == line).expect("a finding");
        assert_eq!(finding.remedy, Remedy::CarryPerturbation, "line {line}");
        // `+ heat` adds 10⁻⁵ K to about 1300 K: log2(1300 / 10⁻⁵) ≈ 27 bits of the increment fall off (a mean
        // over the sums of that site, which on the inner line also add the smaller conduction term). Source: the
        // sum of doubles keeps p = 53 bits of the larger operand (IEEE 754-2019 Table 3.5, §4.3.1), so an addend
        // 2^27 times smaller keeps 26 of its own; the bound 20 leaves room for the mean. The background is the
        // demo's own wall temperature (auditor/src/demo/kiln.rs), a scenario we invented, not an outside value.
        let absorption = finding.patterns.iter().find(|h| h.pattern == Pattern::Absorption).expect("absorption");
        assert!(absorption.bits > 20.0, "line {line}: {absorption:?}");
        let background = absorption.background.expect("a sum");
        assert!((1295.0..1310.0).contains(&background), "line {line}: background {background}");
    }
    // The inner update also cancels: u[i-1] − 2u[i] + u[i+1] near 1300 K keeps the small second difference.
    let inner = record.findings.iter().find(|f| f.field == "T" && f.line == kernel[2]).expect("inner");
    assert!(inner.patterns.iter().any(|h| h.pattern == Pattern::Cancellation), "{inner:?}");
    // Everything exact: no error left, in either field.
    assert!(record.fields.iter().all(|f| f.exact_error == Some(0.0)), "{:?}", record.fields);
}

#[test]
fn the_remedy_carried_as_the_rise_drops_the_error() {
    let record = attribute();
    let error = |name: &str| record.fields.iter().find(|f| f.name == name).expect("field").error.abs();
    let (absolute, rise) = (error("T"), error("rise"));
    // The same physics, carried as the rise above 1300 K: the increments keep about eight more bits
    // (log2(1300/5) ≈ 8: the same rule of p = 53 bits of the larger operand, IEEE 754-2019 Table 3.5, with the
    // rise of about 5 K as the background), so the error drops by 2^8 ≈ 256, two decades at least.
    assert!(rise * 100.0 < absolute, "T {absolute:e}, rise {rise:e}");
}
