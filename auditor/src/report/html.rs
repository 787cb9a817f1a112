//! The HTML report: one self-contained file (inline CSS and SVG, no script, no network, no external asset) that a
//! newcomer can open and read top to bottom: the verdict, which field drifts and from which step, the table of
//! outcomes, the plots, where the error comes from (with the ranked lines marked in an excerpt of the kernel's
//! source), the events, and the rounding-only caution.

use crate::analysis::{Analysis, Block, Outcome, SectionKind, Tone};
use crate::report::plots;
use twinstep::report::attribution::AttributionFacts;

/// Text for an HTML text node or attribute value.
fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// Inline `code` spans in the wording (field names are written `like this`) become `<code>`.
fn inline(text: &str) -> String {
    let mut out = String::new();
    for (i, part) in escape(text).split('`').enumerate() {
        if i % 2 == 1 {
            out.push_str(&format!("<code>{part}</code>"));
        } else {
            out.push_str(part);
        }
    }
    out
}

fn tone_class(tone: Tone) -> &'static str {
    match tone {
        Tone::Plain => "plain",
        Tone::Good => "good",
        Tone::Warn => "warn",
        Tone::Bad => "bad",
    }
}

const STYLE: &str = "body{font-family:system-ui,sans-serif;max-width:980px;margin:2em auto;padding:0 1em;color:#222}\
h1{font-size:1.5em}h2{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid #ccc}\
.verdict{font-size:1.3em;padding:.7em 1em;border-radius:6px;margin:1em 0}\
.verdict.good{background:#e3f4e8;border:2px solid #2a8a4a}.verdict.warn{background:#fff4d6;border:2px solid #c08a00}\
.verdict.bad{background:#fde4e1;border:2px solid #c0392b}.verdict p{font-size:.75em;margin:.4em 0 0}\
.notice{background:#fff4d6;border-left:6px solid #c08a00;padding:.6em 1em;font-weight:bold}\
table{border-collapse:collapse;margin:.6em 0}td,th{border:1px solid #ccc;padding:.25em .6em;text-align:left}\
th{background:#f3f3f3}td.bad{color:#b00;font-weight:bold}td.warn{color:#8a6200}td.good{color:#2a6a3a}\
dl{display:grid;grid-template-columns:max-content auto;gap:.2em 1em}dt{font-weight:bold}dd{margin:0}\
figure{margin:1em 0}figcaption{font-size:.9em;color:#555}.caution{font-size:.9em;color:#555;border-top:1px solid #ccc;\
padding-top:.8em;margin-top:2em}\
pre.source{background:#f7f7f7;border:1px solid #ddd;padding:.5em 0;overflow-x:auto;line-height:1.35}\
pre.source span{display:block;padding:0 .8em}pre.source .no{display:inline;color:#888;padding:0 .8em 0 0}\
pre.source mark{display:block;background:#fde4e1;border-left:4px solid #c0392b;padding:0 .8em 0 calc(.8em - 4px)}\
pre.source .share{display:inline;color:#b00;font-weight:bold;padding:0 0 0 1.5em}";

/// The attribution section's source excerpts: the kernel's lines around the ranked ones, each ranked line marked
/// with its rank and share.
fn source_excerpts(analysis: &Analysis<'_>, out: &mut String) {
    let Some(facts) = AttributionFacts::of(analysis) else { return };
    for excerpt in &facts.excerpts {
        out.push_str("<figure class=\"excerpt\"><pre class=\"source\">");
        for (offset, text) in excerpt.lines.iter().enumerate() {
            let number = excerpt.first_line + offset as u32;
            let marks: Vec<String> = excerpt
                .marks
                .iter()
                .filter(|m| m.line == number)
                .map(|m| format!("#{} of {}: {:.1} %", m.rank, m.field, 100.0 * m.share))
                .collect();
            let body = format!("<span class=\"no\">{number:>4}</span>{}", escape(text));
            if marks.is_empty() {
                out.push_str(&format!("<span>{body}</span>"));
            } else {
                let label = marks.join(", ");
                out.push_str(&format!(
                    "<mark title=\"{}\">{body}<span class=\"share\">← {}</span></mark>",
                    escape(&label),
                    escape(&label)
                ));
            }
        }
        out.push_str(&format!(
            "</pre><figcaption>{}</figcaption></figure>\n",
            inline(&format!(
                "`{}`, lines {} to {}: the ranked lines marked.",
                excerpt.file,
                excerpt.first_line,
                excerpt.first_line + excerpt.lines.len().saturating_sub(1) as u32
            ))
        ));
    }
}

/// One plot with its caption, or the words that say why there is none.
fn figure(svg: Result<Option<String>, String>, caption: String, out: &mut String) {
    match svg {
        Ok(Some(svg)) => out
            .push_str(&format!("<figure class=\"plot\">{svg}<figcaption>{}</figcaption></figure>\n", inline(&caption))),
        Ok(None) => out
            .push_str(&format!("<p>{}: nothing to plot (no positive finite value recorded).</p>\n", inline(&caption))),
        Err(e) => out.push_str(&format!("<p class=\"notice\">{}: {}</p>\n", inline(&caption), escape(&e))),
    }
}

/// The precision sweep's plots, under its section: per field, the error against the step of every format's run,
/// and the error at the horizon against the precision with the fitted law where binary64 is not enough.
fn sweep_figures(analysis: &Analysis<'_>, out: &mut String) {
    let trace = analysis.trace;
    let Some(sweep) = &trace.sweep else { return };
    for field in &trace.header.fields {
        figure(
            plots::format_errors(&field.name, &trace.format_runs, trace.header.tolerance),
            format!(
                "Field `{}`: largest rounding error over the cells per step, one line per format the sweep ran (the \
                 steps each run recorded).",
                field.name
            ),
            out,
        );
        let need = sweep.needed.iter().find(|n| n.field == field.name);
        figure(
            plots::precision_errors(&field.name, &trace.format_runs, need),
            format!(
                "Field `{}`: error at the horizon (step {}) against the precision p of each run; the red line is \
                 the error the tolerance allows at the worst cell{}.",
                field.name,
                sweep.horizon,
                if need.is_some_and(|n| n.law.is_some()) { "; dashed: the fitted law of error against p" } else { "" }
            ),
            out,
        );
    }
}

/// The plots: ratios of every field first (the quickest answer to "which field, from when"), then each field's
/// error history, then heat maps where the trace has per-cell profiles.
fn figures(analysis: &Analysis<'_>, out: &mut String) {
    out.push_str("<h2>Plots</h2>\n");
    figure(
        plots::tolerance_ratios(&analysis.outcomes),
        "Rounding error divided by what the tolerance allows, per field and lens. Above the red line at 1 the \
         tolerance is crossed."
            .to_owned(),
        out,
    );
    for field in &analysis.trace.header.fields {
        let outcomes: Vec<Outcome> = analysis.outcomes.iter().filter(|o| o.field == field.name).cloned().collect();
        figure(
            plots::field_errors(&field.name, &outcomes, analysis.trace.header.tolerance),
            format!(
                "Field `{}`: largest rounding error over the cells per step. Solid: the lens's estimate; dashed: \
                 its guaranteed bound, where it has one.",
                field.name
            ),
            out,
        );
    }
    let mut shown_heat_map = false;
    for field in analysis.trace.header.fields.iter().filter(|f| f.shape.len() == 1) {
        for lens in &analysis.trace.header.lenses {
            let profiles: Vec<_> =
                analysis.trace.profiles.iter().filter(|p| p.field == field.name && &p.lens == lens).collect();
            if profiles.is_empty() {
                continue;
            }
            shown_heat_map = true;
            let outcomes: Vec<Outcome> = analysis.outcomes.iter().filter(|o| o.field == field.name).cloned().collect();
            let ceiling = plots::ceiling(&outcomes, analysis.trace.header.tolerance);
            let caption = format!(
                "Field `{}`, {lens} lens: where along the field the rounding error sits, step by step (rows at the \
                 recorded steps; each column the largest error of its cells; blank: an error of 0, or one that is not \
                 a finite number, as when a bound overflows).",
                field.name
            );
            match plots::heat_map(&field.name, lens, &profiles, ceiling) {
                Ok(Some(map)) => {
                    let caption = match map.clip {
                        Some(clip) => format!("{caption} {clip}"),
                        None => caption,
                    };
                    figure(Ok(Some(map.svg)), caption, out);
                }
                Ok(None) => figure(Ok(None), caption, out),
                Err(e) => figure(Err(e), caption, out),
            }
        }
    }
    if !shown_heat_map {
        out.push_str(
            "<p>No space × time map: the trace has no per-cell <code>profile</code> records (they are optional).</p>\n",
        );
    }
}

/// Writes the report as one HTML page.
#[must_use]
pub fn render(analysis: &Analysis<'_>) -> String {
    let title =
        analysis.sections.iter().find(|s| s.kind == SectionKind::Run).and_then(|s| s.title.clone()).unwrap_or_default();
    let mut out = format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{}</title>\n<style>{STYLE}</style>\n\
         </head>\n<body>\n",
        escape(&title)
    );
    for section in &analysis.sections {
        match (section.kind, &section.title) {
            (SectionKind::Run, Some(title)) => out.push_str(&format!("<h1>{}</h1>\n", inline(title))),
            (_, Some(title)) => out.push_str(&format!("<h2>{}</h2>\n", inline(title))),
            (_, None) => {}
        }
        for block in &section.blocks {
            match block {
                Block::Facts { facts } => {
                    out.push_str("<dl>\n");
                    for (key, value) in facts {
                        out.push_str(&format!("<dt>{}</dt><dd>{}</dd>\n", escape(key), inline(value)));
                    }
                    out.push_str("</dl>\n");
                }
                Block::Notice { text } => out.push_str(&format!("<p class=\"notice\">{}</p>\n", inline(text))),
                Block::Verdict { line, tone, explanation, .. } => {
                    out.push_str(&format!(
                        "<div class=\"verdict {}\"><strong>Verdict: {}</strong>",
                        tone_class(*tone),
                        inline(line)
                    ));
                    if !explanation.is_empty() {
                        out.push_str(&format!("<p>{}</p>", inline(explanation)));
                    }
                    out.push_str("</div>\n");
                }
                Block::Paragraph { text } if section.kind == SectionKind::Caution => {
                    out.push_str(&format!("<p class=\"caution\">{}</p>\n", inline(text)));
                }
                Block::Paragraph { text } => out.push_str(&format!("<p>{}</p>\n", inline(text))),
                Block::Table { head, rows, .. } => {
                    out.push_str("<table>\n<tr>");
                    for h in head {
                        out.push_str(&format!("<th>{}</th>", escape(h)));
                    }
                    out.push_str("</tr>\n");
                    for row in rows {
                        out.push_str("<tr>");
                        for cell in row {
                            out.push_str(&format!(
                                "<td class=\"{}\">{}</td>",
                                tone_class(cell.tone),
                                escape(&cell.text)
                            ));
                        }
                        out.push_str("</tr>\n");
                    }
                    out.push_str("</table>\n");
                }
                Block::Figures => figures(analysis, &mut out),
            }
        }
        match section.kind {
            SectionKind::Attribution => source_excerpts(analysis, &mut out),
            SectionKind::Sweep => sweep_figures(analysis, &mut out),
            _ => {}
        }
    }
    out.push_str("</body>\n</html>\n");
    out
}
