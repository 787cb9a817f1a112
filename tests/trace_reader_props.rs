//! The trace reader never panics: arbitrary text, and valid traces with bytes flipped, dropped or duplicated,
//! give a trace or a `ReadError`, nothing else.

mod audit_support;

use std::sync::OnceLock;

use audit_support::kernels::Fold;
use audit_support::scratch;
use proptest::prelude::*;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::trace;

/// One valid trace with steps, events and a summary, written once for all cases.
fn valid() -> &'static str {
    static TEXT: OnceLock<String> = OnceLock::new();
    TEXT.get_or_init(|| {
        let path = scratch("trace_reader_props").join("fold.jsonl");
        Audit::new(&Fold, Tolerance::absolute(1e-16), 30).trace(&path).lens::<Bound>().lens::<Shadow>().run().unwrap();
        std::fs::read_to_string(path).unwrap()
    })
}

proptest! {
    #[test]
    fn arbitrary_text_never_panics(text in ".{0,400}") {
        let _ = trace::parse(&text);
    }

    #[test]
    fn mutated_traces_never_panic(edits in prop::collection::vec((any::<prop::sample::Index>(), any::<u8>(), 0..3u8), 1..8)) {
        let mut bytes = valid().as_bytes().to_vec();
        for (at, byte, how) in edits {
            let i = at.index(bytes.len());
            match how {
                0 => bytes[i] = byte,
                1 => { bytes.remove(i); }
                _ => { let b = bytes[i]; bytes.insert(i, b); }
            }
        }
        let text = String::from_utf8_lossy(&bytes);
        if let Ok(t) = trace::parse(&text) {
            // Whatever reads must still start with the header it found.
            prop_assert_eq!(t.header.format.as_str(), trace::FORMAT);
        }
    }
}
