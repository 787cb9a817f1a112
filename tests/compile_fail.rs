//! Every construct `#[twinstep::audit]` rejects, one compile-fail case each (`tests/compile_fail/<what>.rs` with
//! the expected diagnostics beside it in `<what>.stderr`).
//!
//! The cases pin three promises: each rejection is a spanned error on the user's own tokens with a `hint:` line;
//! every rejection of an item is reported in the same build; and the original item is still emitted, so calls to
//! it compile and nothing cascades. Regenerate the `.stderr` files with `TRYBUILD=overwrite` after a deliberate
//! change of wording, and review the diff.

#[test]
fn rejected_constructs_fail_to_compile_with_hints() {
    let cases = trybuild::TestCases::new();
    cases.compile_fail("tests/compile_fail/*.rs");
}
