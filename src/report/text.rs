//! The terminal format: an [`Analysis`] as plain text, sections in order, tables with aligned columns. An
//! incomplete trace is rendered as far as it goes and says so near the top.

use super::analysis::{Align, Analysis, Block, Cell, SectionKind};
use crate::trace::Trace;

/// Renders a trace as text.
#[must_use]
pub fn render_text(trace: &Trace) -> String {
    render_analysis(&Analysis::of(trace))
}

/// Renders an analysis as text.
#[must_use]
pub fn render_analysis(analysis: &Analysis<'_>) -> String {
    let mut out = String::new();
    for section in &analysis.sections {
        match (section.kind, &section.title) {
            (SectionKind::Run, Some(title)) => out.push_str(&format!("{title}\n")),
            (SectionKind::Caution, _) => out.push_str("\nNote. "),
            (SectionKind::Figures, _) => {}
            (_, Some(title)) => out.push_str(&format!("\n{title}\n")),
            (_, None) => out.push('\n'),
        }
        let indent = if section.title.is_some() && section.kind != SectionKind::Run { "  " } else { "" };
        for block in &section.blocks {
            block_text(block, indent, &mut out);
        }
    }
    out
}

fn block_text(block: &Block, indent: &str, out: &mut String) {
    match block {
        Block::Facts { facts } => {
            let width = facts.iter().map(|(k, _)| k.chars().count()).max().unwrap_or(0);
            for (key, value) in facts {
                out.push_str(&format!("  {key:<width$}  {value}\n"));
            }
        }
        Block::Notice { text } => out.push_str(&format!("INCOMPLETE. {text}\n")),
        Block::Verdict { label, line, explanation, .. } => {
            out.push_str(&format!("Verdict: {label}\n  {line}\n"));
            if !explanation.is_empty() {
                out.push_str(&format!("  {explanation}\n"));
            }
        }
        Block::Paragraph { text } => out.push_str(&format!("{indent}{}\n", text.replace('`', ""))),
        Block::Table { head, align, rows } => table(head, align, rows, out),
        Block::Figures => {}
    }
}

fn table(head: &[String], align: &[Align], rows: &[Vec<Cell>], out: &mut String) {
    let mut widths: Vec<usize> = head.iter().map(|h| h.chars().count()).collect();
    for row in rows {
        for (w, cell) in widths.iter_mut().zip(row) {
            *w = (*w).max(cell.text.chars().count());
        }
    }
    let line = |cells: Vec<&str>, out: &mut String| {
        let mut text = String::from(" ");
        for (k, cell) in cells.iter().enumerate() {
            let width = widths[k];
            match align.get(k).copied().unwrap_or(Align::Left) {
                Align::Left => text.push_str(&format!(" {cell:<width$}")),
                Align::Right => text.push_str(&format!(" {cell:>width$}")),
            }
        }
        out.push_str(text.trim_end());
        out.push('\n');
    };
    line(head.iter().map(String::as_str).collect(), out);
    for row in rows {
        line(row.iter().map(|c| c.text.as_str()).collect(), out);
    }
}
