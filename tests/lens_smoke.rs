//! Smoke checks of the lens surface: literals as written, events at the user's site.

use twinstep::events::{Collector, EventKind};
use twinstep::lens::{literal_mode, Bound, Interval, Lens, Reference, Shadow};
use twinstep::Real;

#[test]
fn one_tenth_as_written() {
    // 0.1 as a double is 0.1000000000000000055511151231257827… (IEEE 754 binary64 nearest; the excess
    // 5.551115123125783e-18 is from memory, and it is recomputed here as 0.1f64 − 1/10 in dashu exact rationals).
    let excess = dashu_ratio::RBig::try_from(0.1f64).unwrap() - dashu_ratio::RBig::from_str_decimal("0.1").unwrap();
    let excess = excess.to_f64().value();
    let b = Bound::lit(0.1, Reference::of_decimal("0.1").unwrap(), literal_mode());
    assert!(b.radius() >= excess && b.radius() <= excess * (1.0 + 1e-12), "{b}");
    let s = Shadow::lit(0.1, Reference::of_decimal("0.1").unwrap(), literal_mode());
    assert_eq!(s.error_estimate(), excess);
    let i = Interval::lit(0.1, Reference::of_decimal("0.1").unwrap(), literal_mode());
    // fl(0.1) lies above 1/10 (the excess just computed is positive), so the tightest enclosure of 1/10 in doubles
    // is [pred(fl(0.1)), fl(0.1)] (IEEE 1788-2015 asks for the tightest, §12.12.8 for the inf-sup form, from memory).
    assert!(i.enclosure().inf() < 0.1 && i.enclosure().sup() == 0.1);
}

#[test]
fn comparison_records_an_undecided_comparison_at_the_callers_line() {
    let events = Collector::start::<Bound>();
    let x = Bound::new(1.0, 1e-10);
    let y = Bound::from_f64(1.0 + 1e-12);
    let line = line!() + 1;
    let below = x < y;
    assert!(below);
    let events = events.take();
    assert_eq!(events.len(), 1, "{events:?}");
    assert_eq!(events[0].0, EventKind::UndecidedComparison);
    assert_eq!(events[0].1.line, line);
}
