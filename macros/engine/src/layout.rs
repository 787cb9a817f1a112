//! Prints twins so that every token stands on the line it came from, for the whole-file twins the build helper
//! writes and the source `include!`s.
//!
//! Why: a lens records each event at the caller's location, and for code that `include!` brings in, that is a
//! line of the included file. Formatted twins (`prettyplease`) would put the user's `u[i - 1] - 2.0 * u[i]` on
//! another line than in their kernel; printed on its own line, the twin's line numbers are the kernel's, so a
//! report naming `…/twinstep-twins/src/solver.rs:42` means line 42 of `src/solver.rs`.
//!
//! Before (tokens parsed from `src/solver.rs`, each with its line): `pub fn step` on line 3, `u[i] * 0.5` on line 7.
//! After: the same tokens on lines 3 and 7 of the output, the rewrite's own tokens (`<T as ::twinstep::Real>::…`,
//! the `where` clause) beside the user's token they replace, on its line. Lines only move forward: a token
//! whose line is already passed (a constant the rewrite moved to the top of its block) goes on the current line.

use proc_macro2::{Delimiter, Spacing, TokenStream, TokenTree};
use quote::ToTokens;

/// Items printed on the lines their tokens came from.
#[must_use]
pub fn on_original_lines(items: &[syn::Item]) -> String {
    let mut printer = Printer { out: String::new(), line: 1, joint: true };
    for item in items {
        printer.stream(item.to_token_stream());
    }
    printer.out.push('\n');
    printer.out
}

struct Printer {
    out: String,
    /// The line the next token goes on (1-based).
    line: usize,
    /// Whether the last token asked to be joined to the next (a joint punctuation, an opening delimiter).
    joint: bool,
}

impl Printer {
    /// Moves to the token's own line (never back), then puts a space before it unless it joins the previous one.
    fn place(&mut self, span: proc_macro2::Span) {
        let start = span.start();
        // A line of 0 is a token without a place in the file (made by the rewrite from nothing).
        if start.line > self.line {
            while self.line < start.line {
                self.out.push('\n');
                self.line += 1;
            }
            self.out.push_str(&" ".repeat(start.column));
        } else if !self.joint {
            self.out.push(' ');
        }
        self.joint = false;
    }

    fn text(&mut self, text: &str) {
        self.out.push_str(text);
        // A literal may span lines (a raw string): the lines it holds are lines of the output too.
        self.line += text.matches('\n').count();
    }

    fn stream(&mut self, stream: TokenStream) {
        for tree in stream {
            match tree {
                TokenTree::Group(group) => {
                    let (open, close) = match group.delimiter() {
                        Delimiter::Parenthesis => ("(", ")"),
                        Delimiter::Brace => ("{", "}"),
                        Delimiter::Bracket => ("[", "]"),
                        Delimiter::None => ("", ""),
                    };
                    self.place(group.span_open());
                    self.text(open);
                    self.joint = true;
                    self.stream(group.stream());
                    // A closing delimiter on the line of the last token sits right after it.
                    self.joint = true;
                    self.place(group.span_close());
                    self.text(close);
                }
                TokenTree::Punct(punct) => {
                    self.place(punct.span());
                    self.text(&punct.as_char().to_string());
                    self.joint = punct.spacing() == Spacing::Joint;
                }
                TokenTree::Ident(ident) => {
                    self.place(ident.span());
                    self.text(&ident.to_string());
                }
                TokenTree::Literal(literal) => {
                    self.place(literal.span());
                    self.text(&literal.to_string());
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tokens_stay_on_their_lines_and_the_output_parses() {
        let source = "pub fn step(u: &mut [f64]) {\n\n    let a = u[0]\n        * 2.0;\n    u[1] = a;\n}\n";
        let file = syn::parse_file(source).expect("valid Rust");
        let printed = on_original_lines(&file.items);
        let lines: Vec<&str> = printed.lines().collect();
        assert!(lines[2].contains("let a = u [0]"), "{printed}");
        assert!(lines[0].contains("[f64]"), "{printed}");
        assert!(lines[3].contains("* 2.0"), "{printed}");
        assert!(lines[4].contains("u [1] = a"), "{printed}");
        assert!(syn::parse_file(&printed).is_ok(), "{printed}");
    }

    #[test]
    fn joint_punctuation_and_lifetimes_stay_joined() {
        let file = syn::parse_file("fn f<'a>(x: &'a [f64]) -> f64 { x[0] += 1.0; x[0] }").expect("valid Rust");
        let printed = on_original_lines(&file.items);
        assert!(printed.contains("'a") && printed.contains("+=") && printed.contains("->"), "{printed}");
        assert!(syn::parse_file(&printed).is_ok(), "{printed}");
    }
}
