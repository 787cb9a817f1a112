//! Markdown for a pull request: the analysis's sections in order — the verdict as a quote, tables GitHub-style,
//! cells that matter in bold.

use crate::analysis::{Analysis, Block, SectionKind, Tone};

/// Table cells must not break the row: pipes are escaped and line breaks become spaces.
fn cell(text: &str) -> String {
    text.replace('|', "\\|").replace(['\n', '\r'], " ")
}

/// Writes the analysis as Markdown.
#[must_use]
pub fn render(analysis: &Analysis<'_>) -> String {
    let mut out = String::new();
    for section in &analysis.sections {
        match (section.kind, &section.title) {
            (SectionKind::Run, Some(title)) => out.push_str(&format!("## {title}\n\n")),
            (_, Some(title)) => out.push_str(&format!("### {title}\n\n")),
            (_, None) => {}
        }
        for block in &section.blocks {
            match block {
                Block::Facts { facts } => {
                    for (key, value) in facts {
                        out.push_str(&format!("- **{key}**: {value}\n"));
                    }
                    out.push('\n');
                }
                Block::Notice { text } => out.push_str(&format!("> ⚠ **{text}**\n\n")),
                Block::Verdict { line, explanation, .. } => {
                    out.push_str(&format!("> **Verdict: {line}**"));
                    if !explanation.is_empty() {
                        out.push_str(&format!("<br>\n> {explanation}"));
                    }
                    out.push_str("\n\n");
                }
                Block::Paragraph { text } if section.kind == SectionKind::Caution => {
                    out.push_str(&format!("<sub>{text}</sub>\n"));
                }
                Block::Paragraph { text } => out.push_str(&format!("{text}\n\n")),
                Block::Table { head, rows, .. } => {
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
                Block::Figures => {}
            }
        }
    }
    out
}
