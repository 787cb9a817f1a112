//! The terminal report: aligned plain text, with ANSI colour for the verdict and the cells that matter when the
//! output is a terminal (the caller decides; `NO_COLOR` and redirection turn it off).

use crate::document::{Block, Cell, Tone};

fn paint(text: &str, tone: Tone, colour: bool) -> String {
    // SGR codes: 32 green, 33 yellow, 31 red, 1 bold (ECMA-48, section 8.3.117).
    let code = match tone {
        Tone::Plain => return text.to_owned(),
        Tone::Good => "32",
        Tone::Warn => "33",
        Tone::Bad => "1;31",
    };
    if colour {
        format!("\x1b[{code}m{text}\x1b[0m")
    } else {
        text.to_owned()
    }
}

/// Aligned columns, each as wide as its widest cell (counted in characters, which the report's symbols are).
fn table(head: &[String], rows: &[Vec<Cell>], colour: bool, out: &mut String) {
    let mut widths: Vec<usize> = head.iter().map(|h| h.chars().count()).collect();
    for row in rows {
        for (width, cell) in widths.iter_mut().zip(row) {
            *width = (*width).max(cell.text.chars().count());
        }
    }
    let line = |cells: Vec<(String, Tone)>, out: &mut String| {
        let padded: Vec<String> = cells
            .iter()
            .zip(&widths)
            .map(|((text, tone), width)| {
                let pad = width.saturating_sub(text.chars().count());
                format!("{}{}", paint(text, *tone, colour), " ".repeat(pad))
            })
            .collect();
        out.push_str("  ");
        out.push_str(padded.join("  ").trim_end());
        out.push('\n');
    };
    line(head.iter().map(|h| (h.clone(), Tone::Plain)).collect(), out);
    line(widths.iter().map(|w| ("-".repeat(*w), Tone::Plain)).collect(), out);
    for row in rows {
        line(row.iter().map(|c| (c.text.clone(), c.tone)).collect(), out);
    }
}

/// Writes the blocks as terminal text.
#[must_use]
pub fn render(blocks: &[Block], colour: bool) -> String {
    let mut out = String::new();
    for block in blocks {
        match block {
            Block::Title(title) => out.push_str(&format!("{title}\n\n")),
            Block::Facts(facts) => {
                let width = facts.iter().map(|(k, _)| k.chars().count()).max().unwrap_or(0);
                for (key, value) in facts {
                    out.push_str(&format!("  {key:<width$}  {value}\n"));
                }
                out.push('\n');
            }
            Block::Notice(notice) => {
                out.push_str(&format!("{}\n\n", paint(&format!("! {notice}"), Tone::Warn, colour)))
            }
            Block::Verdict { line, tone, explanation } => {
                out.push_str(&format!("Verdict: {}\n", paint(line, *tone, colour)));
                if !explanation.is_empty() {
                    out.push_str(&format!("  {explanation}\n"));
                }
                out.push('\n');
            }
            Block::Heading(heading) => out.push_str(&format!("{heading}\n")),
            Block::Paragraph(text) => out.push_str(&format!("{text}\n\n")),
            Block::Table { head, rows } => {
                table(head, rows, colour, &mut out);
                out.push('\n');
            }
            Block::Caution(text) => out.push_str(&format!("Note: {text}\n")),
            Block::Figures => {}
        }
    }
    out
}
