//! Markdown for a pull request: the verdict as a quote, the outcome and events as GitHub-style tables, cells that
//! matter in bold.

use crate::document::{Block, Tone};

/// Table cells must not break the row: pipes are escaped and line breaks become spaces.
fn cell(text: &str) -> String {
    text.replace('|', "\\|").replace(['\n', '\r'], " ")
}

/// Writes the blocks as Markdown.
#[must_use]
pub fn render(blocks: &[Block]) -> String {
    let mut out = String::new();
    for block in blocks {
        match block {
            Block::Title(title) => out.push_str(&format!("## {title}\n\n")),
            Block::Facts(facts) => {
                for (key, value) in facts {
                    out.push_str(&format!("- **{key}**: {value}\n"));
                }
                out.push('\n');
            }
            Block::Notice(notice) => out.push_str(&format!("> ⚠ **{notice}**\n\n")),
            Block::Verdict { line, explanation, .. } => {
                out.push_str(&format!("> **Verdict: {line}**"));
                if !explanation.is_empty() {
                    out.push_str(&format!("<br>\n> {explanation}"));
                }
                out.push_str("\n\n");
            }
            Block::Heading(heading) => out.push_str(&format!("### {heading}\n\n")),
            Block::Paragraph(text) => out.push_str(&format!("{text}\n\n")),
            Block::Table { head, rows } => {
                out.push_str(&format!("| {} |\n", head.iter().map(|h| cell(h)).collect::<Vec<_>>().join(" | ")));
                out.push_str(&format!("|{}\n", "---|".repeat(head.len())));
                for row in rows {
                    let cells: Vec<String> = row
                        .iter()
                        .map(|c| match c.tone {
                            Tone::Bad => format!("**{}**", cell(&c.text)),
                            _ => cell(&c.text),
                        })
                        .collect();
                    out.push_str(&format!("| {} |\n", cells.join(" | ")));
                }
                out.push('\n');
            }
            Block::Caution(text) => out.push_str(&format!("<sub>{text}</sub>\n")),
            Block::Figures => {}
        }
    }
    out
}
