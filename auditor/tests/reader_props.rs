//! The trace reader and every renderer survive any input: 100,000 mutations of a real trace (bytes flipped,
//! inserted, deleted, lines duplicated, swapped or cut, numbers replaced by extreme values) are read in memory and,
//! when they parse, rendered in all five formats and gated, without a panic.

use proptest::prelude::*;
use twinstep_cli::report::{render, Format};

/// A small valid trace: the fixture's first lines, a profile and its summary, so each case stays cheap.
fn seed() -> Vec<u8> {
    let text = include_str!("../../fixtures/traces/kiln_complete.jsonl");
    let lines: Vec<&str> = text.lines().collect();
    let mut picked: Vec<&str> = lines.iter().take(9).copied().collect();
    // One `profile` record too, so mutations reach the CLI's own part of the reader.
    picked.extend(lines.iter().find(|l| l.contains("\"record\":\"profile\"")));
    picked.push(lines[lines.len() - 1]);
    (picked.join("\n") + "\n").into_bytes()
}

/// Replacements that probe the number and string handling.
const TOKENS: [&str; 12] =
    ["null", "-0", "1e308", "1e-320", "-1e999", "18446744073709551616", "\"\"", "[]", "{}", "\"\\u0000\"", "NaN", "7"];

#[derive(Clone, Debug)]
enum Mutation {
    Flip(usize, u8),
    Insert(usize, u8),
    Delete(usize, usize),
    Token(usize, usize),
    DuplicateLine(usize),
    SwapLines(usize, usize),
    Cut(usize),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    prop_oneof![
        (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Mutation::Flip(i, b)),
        (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Mutation::Insert(i, b)),
        (any::<usize>(), 1usize..40).prop_map(|(i, n)| Mutation::Delete(i, n)),
        (any::<usize>(), 0..TOKENS.len()).prop_map(|(i, t)| Mutation::Token(i, t)),
        any::<usize>().prop_map(Mutation::DuplicateLine),
        (any::<usize>(), any::<usize>()).prop_map(|(a, b)| Mutation::SwapLines(a, b)),
        any::<usize>().prop_map(Mutation::Cut),
    ]
}

fn apply(bytes: &mut Vec<u8>, mutation: &Mutation) {
    let len = bytes.len().max(1);
    match *mutation {
        Mutation::Flip(i, b) => {
            if !bytes.is_empty() {
                bytes[i % len] ^= b;
            }
        }
        Mutation::Insert(i, b) => bytes.insert(i % (bytes.len() + 1), b),
        Mutation::Delete(i, n) => {
            let start = i % len;
            let end = (start + n).min(bytes.len());
            bytes.drain(start.min(end)..end);
        }
        Mutation::Token(i, t) => {
            // Replace the number or word that starts after the i-th ':' with the token.
            let colons: Vec<usize> = bytes.iter().enumerate().filter(|(_, b)| **b == b':').map(|(k, _)| k).collect();
            if let Some(&at) = colons.get(i % colons.len().max(1)) {
                let end = bytes[at + 1..]
                    .iter()
                    .position(|b| matches!(b, b',' | b'}' | b']'))
                    .map_or(bytes.len(), |p| at + 1 + p);
                bytes.splice(at + 1..end, TOKENS[t].bytes());
            }
        }
        Mutation::DuplicateLine(i) | Mutation::SwapLines(i, _) | Mutation::Cut(i) => {
            let mut lines: Vec<Vec<u8>> = bytes.split(|b| *b == b'\n').map(<[u8]>::to_vec).collect();
            let n = lines.len();
            match *mutation {
                Mutation::DuplicateLine(_) => {
                    let line = lines[i % n].clone();
                    lines.insert(i % n, line);
                }
                Mutation::SwapLines(_, j) => lines.swap(i % n, j % n),
                _ => lines.truncate(i % n),
            }
            *bytes = lines.join(&b'\n');
        }
    }
}

/// The seed trace after the mutations, when it still reads.
fn read_mutated(mutations: &[Mutation]) -> Option<twinstep_cli::trace::Trace> {
    let mut bytes = seed();
    for m in mutations {
        apply(&mut bytes, m);
    }
    twinstep_cli::input::parse_trace(&bytes).ok()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 100_000, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn mutated_traces_never_panic(mutations in proptest::collection::vec(mutation(), 1..4)) {
        if let Some(trace) = read_mutated(&mutations) {
            for format in [Format::Text, Format::Md, Format::Json, Format::Csv] {
                let _ = render(&trace, format, false);
            }
            let _ = twinstep_cli::gate::gate(&trace, None, &[]);
        }
    }
}

/// HTML draws plots, which costs more: fewer cases, same property.
mod html {
    use super::*;
    proptest! {
        #![proptest_config(ProptestConfig { cases: 2_000, failure_persistence: None, ..ProptestConfig::default() })]

        #[test]
        fn mutated_traces_render_html(mutations in proptest::collection::vec(mutation(), 1..3)) {
            if let Some(trace) = read_mutated(&mutations) {
                let _ = render(&trace, Format::Html, false);
            }
        }
    }
}

/// The property above is only worth something if mutated traces reach the renderers: many number replacements
/// (`null`, `-0`, `1e308`, …) leave a readable trace with odd values.
#[test]
fn many_mutated_traces_still_read() {
    let read = (0..300).filter(|&i| read_mutated(&[Mutation::Token(i, i % TOKENS.len())]).is_some()).count();
    assert!(read >= 30, "only {read} of 300 mutated traces read");
}

/// Regression: a value of 1e308 in a step record made the top of a log axis 3e308 = +∞, and plotters' mesh up to
/// +∞ allocated without end (8 GiB at once, found by the property above). The axis top now stays finite.
#[test]
fn a_value_near_the_largest_double_keeps_the_log_axis_finite() {
    let mutations = [Mutation::Token(17967862388525808098, 2)];
    let trace = read_mutated(&mutations).expect("the mutated trace still reads");
    let page = render(&trace, Format::Html, false);
    assert!(page.contains("<svg"), "the page still has its plots");
}
