//! Property: the engine never panics, whatever it is fed.
//!
//! A proc macro that panics gives the user "proc macro panicked" instead of an error on their own tokens, and the
//! CLI would die with a backtrace. So the engine promises a `syn::Error` (attribute) or a list of source errors
//! (`expand_source`) for every input. This test holds it to that on inputs close to real kernels: the fixture
//! kernels (`fixtures/src/*.rs`) and the compile-fail cases (`tests/compile_fail/*.rs`), read at test time so
//! new ones join automatically, with random token deletions, duplications, swaps and transplants, at any depth of
//! the token tree. Edits at the token-tree level keep delimiters balanced, so most mutants still parse and reach
//! the rewrite passes; edits of the raw text break the balance too and exercise the parse-error path.
//!
//! `proc_macro2` runs in its fallback mode outside a proc macro, which is the mode the CLI uses anyway.

use proc_macro2::{Group, TokenStream, TokenTree};
use proptest::prelude::*;
use proptest::test_runner::{Config, TestCaseError, TestRunner};
use quote::ToTokens;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;
use std::str::FromStr;

/// Cases of mutated annotated items fed to `expand_attribute`.
const ATTRIBUTE_CASES: u32 = 10_000;
/// Cases of damaged files fed to `expand_source` (token edits with and without `--item`, text edits). With the
/// attribute's cases, 30 000 in total: a few seconds in the dev profile.
const FILE_CASES: u32 = 20_000;

/// A source file of the corpus and, parsed from it, its annotated items as the attribute would receive them.
struct Sample {
    name: String,
    text: String,
    tokens: TokenStream,
    /// `(attribute arguments, item without the attribute)` for every `#[twinstep::audit]` item.
    annotated: Vec<(TokenStream, TokenStream)>,
}

fn is_audit(attr: &syn::Attribute) -> bool {
    attr.path().segments.last().is_some_and(|s| s.ident == "audit")
}

/// Collects annotated items the way the compiler hands them to the attribute: arguments and item apart.
fn annotated_items(items: &[syn::Item], found: &mut Vec<(TokenStream, TokenStream)>) {
    for item in items {
        let mut stripped = item.clone();
        let attrs = match &mut stripped {
            syn::Item::Fn(f) => &mut f.attrs,
            syn::Item::Impl(i) => &mut i.attrs,
            syn::Item::Mod(m) => &mut m.attrs,
            syn::Item::Struct(s) => &mut s.attrs,
            syn::Item::Enum(e) => &mut e.attrs,
            _ => continue,
        };
        if let Some(index) = attrs.iter().position(is_audit) {
            let attr = attrs.remove(index);
            let args = match attr.meta {
                syn::Meta::List(list) => list.tokens,
                _ => TokenStream::new(),
            };
            found.push((args, stripped.to_token_stream()));
        } else if let syn::Item::Mod(syn::ItemMod { content: Some((_, inner)), .. }) = item {
            annotated_items(inner, found);
        }
    }
}

/// Every `.rs` file of a directory, sorted by name so that a failing case can be found again.
fn read_samples(dir: &Path, samples: &mut Vec<Sample>) {
    let Ok(entries) = std::fs::read_dir(dir) else { return };
    let mut paths: Vec<_> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for path in paths.into_iter().filter(|p| p.extension().is_some_and(|e| e == "rs")) {
        let Ok(text) = std::fs::read_to_string(&path) else { continue };
        let Ok(tokens) = TokenStream::from_str(&text) else { continue };
        let mut annotated = Vec::new();
        if let Ok(file) = syn::parse_file(&text) {
            annotated_items(&file.items, &mut annotated);
        }
        samples.push(Sample { name: path.display().to_string(), text, tokens, annotated });
    }
}

fn corpus() -> Vec<Sample> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("../..");
    let mut samples = Vec::new();
    read_samples(&root.join("fixtures/src"), &mut samples);
    read_samples(&root.join("tests/compile_fail"), &mut samples);
    samples
}

/// One edit of a token list. Indices are taken modulo the list's length when the edit is applied.
#[derive(Clone, Debug)]
enum Edit {
    Delete(usize),
    Duplicate(usize),
    Swap(usize, usize),
    /// A copy of one tree inserted at another place of the same list.
    Transplant(usize, usize),
}

/// An edit and the token list it applies to: `list` counts the lists of the tree in preorder (0 is the top
/// level), modulo their number.
#[derive(Clone, Debug)]
struct Mutation {
    list: usize,
    edit: Edit,
}

fn edit_strategy() -> impl Strategy<Value = Edit> {
    prop_oneof![
        any::<usize>().prop_map(Edit::Delete),
        any::<usize>().prop_map(Edit::Duplicate),
        (any::<usize>(), any::<usize>()).prop_map(|(a, b)| Edit::Swap(a, b)),
        (any::<usize>(), any::<usize>()).prop_map(|(a, b)| Edit::Transplant(a, b)),
    ]
}

fn mutations_strategy() -> impl Strategy<Value = Vec<Mutation>> {
    prop::collection::vec((any::<usize>(), edit_strategy()).prop_map(|(list, edit)| Mutation { list, edit }), 1..4)
}

fn apply_edit(trees: &mut Vec<TokenTree>, edit: &Edit) {
    let n = trees.len();
    if n == 0 {
        return;
    }
    match *edit {
        Edit::Delete(i) => {
            trees.remove(i % n);
        }
        Edit::Duplicate(i) => {
            let copy = trees[i % n].clone();
            trees.insert(i % n, copy);
        }
        Edit::Swap(i, j) => trees.swap(i % n, j % n),
        Edit::Transplant(from, to) => {
            let copy = trees[from % n].clone();
            trees.insert(to % (n + 1), copy);
        }
    }
}

/// How many token lists the stream holds: itself and every group's, at any depth.
fn count_lists(stream: &TokenStream) -> usize {
    1 + stream
        .clone()
        .into_iter()
        .map(|t| if let TokenTree::Group(g) = t { count_lists(&g.stream()) } else { 0 })
        .sum::<usize>()
}

/// Applies the edit to the list numbered `*remaining` in preorder; `None` once it is applied.
fn edit_list(stream: TokenStream, remaining: &mut Option<usize>, edit: &Edit) -> TokenStream {
    let mut trees: Vec<TokenTree> = stream.into_iter().collect();
    match remaining {
        None => return trees.into_iter().collect(),
        Some(0) => {
            apply_edit(&mut trees, edit);
            *remaining = None;
            return trees.into_iter().collect();
        }
        Some(n) => *n -= 1,
    }
    for tree in trees.iter_mut() {
        if remaining.is_none() {
            break;
        }
        if let TokenTree::Group(group) = tree {
            let mut new = Group::new(group.delimiter(), edit_list(group.stream(), remaining, edit));
            new.set_span(group.span());
            *tree = TokenTree::Group(new);
        }
    }
    trees.into_iter().collect()
}

fn mutate(mut stream: TokenStream, mutations: &[Mutation]) -> TokenStream {
    for mutation in mutations {
        let mut remaining = Some(mutation.list % count_lists(&stream));
        stream = edit_list(stream, &mut remaining, &mutation.edit);
    }
    stream
}

/// Deletes, duplicates or swaps whole characters of the raw text: delimiters can end up unbalanced.
fn mutate_text(text: &str, mutations: &[Mutation]) -> String {
    let mut chars: Vec<char> = text.chars().collect();
    for mutation in mutations {
        let n = chars.len();
        if n == 0 {
            break;
        }
        let start = mutation.list % n;
        let span = 1 + mutation.list / n % 8;
        let end = (start + span).min(n);
        match mutation.edit {
            Edit::Delete(_) => {
                chars.drain(start..end);
            }
            Edit::Duplicate(_) | Edit::Transplant(..) => {
                let copy: Vec<char> = chars[start..end].to_vec();
                chars.splice(start..start, copy);
            }
            Edit::Swap(_, j) => chars.swap(start, j % n),
        }
    }
    chars.into_iter().collect()
}

/// Runs `work` and turns a panic into a test failure that names the input.
fn must_not_panic(what: &str, input: &dyn Fn() -> String, work: impl FnOnce()) -> Result<(), TestCaseError> {
    match catch_unwind(AssertUnwindSafe(work)) {
        Ok(()) => Ok(()),
        Err(_) => Err(TestCaseError::fail(format!("the engine panicked on {what}:\n{}", input()))),
    }
}

/// The name `--item` would select for an annotated item: its function or module name, or the impl's type.
fn item_name(item: &TokenStream) -> Option<String> {
    match syn::parse2::<syn::Item>(item.clone()).ok()? {
        syn::Item::Fn(f) => Some(f.sig.ident.to_string()),
        syn::Item::Mod(m) => Some(m.ident.to_string()),
        syn::Item::Impl(i) => Some(i.self_ty.to_token_stream().to_string().replace(' ', "")),
        _ => None,
    }
}

/// Runs `case` on `cases` inputs drawn from `strategy` and fails the test with the smallest failing input.
/// `PROPTEST_CASES=200000` in the environment runs that many instead, for a longer hunt.
fn check<S: Strategy>(cases: u32, strategy: S, case: impl Fn(S::Value) -> Result<(), TestCaseError>) {
    let cases = std::env::var("PROPTEST_CASES").ok().and_then(|n| n.parse().ok()).unwrap_or(cases);
    let mut runner = TestRunner::new(Config { cases, failure_persistence: None, ..Config::default() });
    if let Err(failure) = runner.run(&strategy, case) {
        panic!("{failure}");
    }
}

/// How a source file is damaged before `expand_source` reads it.
#[derive(Clone, Copy, Debug)]
enum FileDamage {
    /// Token-tree edits, the whole file expanded.
    Tokens,
    /// Token-tree edits, one item selected with `--item`.
    TokensOneItem,
    /// Character edits of the raw text.
    Text,
}

#[test]
fn the_attribute_never_panics_on_mutated_items() {
    let samples = corpus();
    let items: Vec<(&str, &TokenStream, &TokenStream)> =
        samples.iter().flat_map(|s| s.annotated.iter().map(|(attr, item)| (s.name.as_str(), attr, item))).collect();
    assert!(items.len() >= 10, "the corpus should hold the fixtures' annotated items, found {}", items.len());
    // Most kernels take no arguments, so mutated arguments come from the pool of every non-empty argument list of
    // the corpus (`float = f32`, `alias = Real`, `calls = [...]`, the malformed ones of the compile-fail cases).
    let arguments: Vec<&TokenStream> = items.iter().map(|(_, attr, _)| *attr).filter(|a| !a.is_empty()).collect();
    assert!(!arguments.is_empty(), "the corpus should hold attribute arguments");
    check(
        ATTRIBUTE_CASES,
        (any::<usize>(), any::<usize>(), any::<bool>(), mutations_strategy()),
        |(pick, pick_arguments, mutate_arguments, mutations)| {
            let (name, attr, item) = items[pick % items.len()];
            let (attr, item) = if mutate_arguments {
                (mutate(arguments[pick_arguments % arguments.len()].clone(), &mutations), item.clone())
            } else {
                (attr.clone(), mutate(item.clone(), &mutations))
            };
            let shown = || format!("{name}, attribute `{attr}`, item:\n{item}");
            must_not_panic("an annotated item", &shown, || {
                let _ = twinstep_engine::expand_attribute(attr.clone(), item.clone());
            })
        },
    );
}

#[test]
fn expanding_a_file_never_panics_on_damaged_sources() {
    let samples = corpus();
    assert!(!samples.is_empty(), "no fixture sources found");
    let damage = prop_oneof![Just(FileDamage::Tokens), Just(FileDamage::TokensOneItem), Just(FileDamage::Text)];
    check(FILE_CASES, (any::<usize>(), damage, mutations_strategy()), |(pick, damage, mutations)| {
        let sample = &samples[pick % samples.len()];
        let source = match damage {
            FileDamage::Tokens | FileDamage::TokensOneItem => mutate(sample.tokens.clone(), &mutations).to_string(),
            FileDamage::Text => mutate_text(&sample.text, &mutations),
        };
        let only = match damage {
            FileDamage::TokensOneItem => sample.annotated.first().and_then(|(_, item)| item_name(item)),
            FileDamage::Tokens | FileDamage::Text => None,
        };
        let shown = || format!("{} ({damage:?}, item {only:?}):\n{source}", sample.name);
        must_not_panic("a source file", &shown, || {
            let _ = twinstep_engine::expand_source(&source, only.as_deref());
        })
    });
}

/// Cases of damaged files twinned whole, as the build helper does, and printed on their original lines.
const WHOLE_FILE_CASES: u32 = 5_000;

#[test]
fn twinning_a_whole_file_never_panics_on_damaged_sources() {
    let samples = corpus();
    check(WHOLE_FILE_CASES, (any::<usize>(), any::<bool>(), mutations_strategy()), |(pick, text, mutations)| {
        let sample = &samples[pick % samples.len()];
        let source = if text {
            mutate_text(&sample.text, &mutations)
        } else {
            mutate(sample.tokens.clone(), &mutations).to_string()
        };
        let shown = || format!("{} (whole file):\n{source}", sample.name);
        must_not_panic("a whole file", &shown, || {
            if let Ok(file) = syn::parse_file(&source) {
                if let Ok(items) = twinstep_engine::twins_of_file(&twinstep_engine::Options::default(), &file) {
                    let _ = twinstep_engine::layout::on_original_lines(&items);
                }
            }
        })
    });
}

/// Regression: a literal with a trailing point (`1.`) made the literal pass build the invalid literal `1.f64` and
/// panic. `1.` is a float literal of value one (Rust Reference, "Floating-point literals", from memory), so its
/// twin must carry a primal literal the compiler reads as the same number: `1.0f64`.
#[test]
fn a_literal_with_a_trailing_point_is_twinned() {
    let source = "#[twinstep::audit]\npub fn damp(u: &mut [f64]) { for v in u.iter_mut() { *v *= 1.; } }\n";
    let twin = twinstep_engine::expand_source(source, None).expect("the kernel is accepted");
    assert!(syn::parse_file(&twin).is_ok(), "the twin is Rust source:\n{twin}");
    assert!(twin.contains("1.0f64"), "the primal literal is the number one:\n{twin}");
}
