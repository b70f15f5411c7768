//! Self-contained HTML report: the report model's sections with tables as
//! `<table>`, the verdict coloured from its kind, the plots inlined as SVG,
//! and the cautions in a box. No scripts, no external resources; the markup
//! is also well-formed XML (XHTML syntax), so it can be checked with any XML
//! parser.

use super::model::{Item, Report, SectionKind, Table};
use super::plots::xml_escape;
use std::fmt::Write;

const CSS: &str = r#"
:root { color-scheme: light; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
  color: #1e1e1e; background: #fff; margin: 0 auto; max-width: 1040px; padding: 24px 28px 48px; line-height: 1.45; }
h1 { font-size: 1.6em; margin: 0 0 4px; }
h2 { font-size: 1.15em; margin: 28px 0 8px; padding-bottom: 3px; border-bottom: 1px solid #ccc; }
p.meta { color: #5a5a5a; margin: 0 0 18px; font-size: 0.92em; }
pre { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "Liberation Mono", monospace;
  font-size: 12.5px; line-height: 1.4; background: #f7f7f7; border: 1px solid #e2e2e2; border-radius: 4px;
  padding: 10px 12px; margin: 0; overflow-x: auto; white-space: pre; }
.verdict { font-weight: 600; font-size: 1.05em; padding: 10px 14px; border-radius: 4px; margin: 16px 0; border: 2px solid; }
.verdict.pass, .verdict.optimal { border-color: #2f7d32; background: #eef7ee; color: #1b5e20; }
.verdict.feasible { border-color: #9a6700; background: #fff8e1; color: #6d4a00; }
.verdict.fail, .verdict.infeasible { border-color: #b71c1c; background: #fdeeee; color: #8e1515; }
table { border-collapse: collapse; font-size: 0.9em; margin: 4px 0 8px; }
th, td { text-align: left; padding: 3px 10px 3px 0; border-bottom: 1px solid #e6e6e6; vertical-align: top; white-space: nowrap; }
th { font-weight: 600; border-bottom: 1px solid #999; }
table.inputs { font-size: 0.85em; color: #5a5a5a; }
table.inputs td { border: none; padding: 1px 10px 1px 0; }
code { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "Liberation Mono", monospace; }
.cautions { border: 2px solid #b26a00; background: #fff8e6; border-radius: 4px; padding: 8px 16px 10px; margin: 20px 0; }
.cautions h2 { border: none; margin: 4px 0 6px; color: #7a4a00; }
.cautions ul { margin: 0; padding-left: 20px; }
.cautions li { margin: 3px 0; }
figure { margin: 18px 0 26px; padding: 0; break-inside: avoid; page-break-inside: avoid; }
figure svg { display: block; width: 100%; height: auto; max-width: 960px; border: 1px solid #e2e2e2; }
figcaption { color: #5a5a5a; font-size: 0.9em; margin-top: 4px; }
footer { margin-top: 32px; color: #777; font-size: 0.85em; }
@page { margin: 14mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  pre { font-size: 7pt; white-space: pre-wrap; background: #fff; border-color: #bbb; }
  h2 { break-after: avoid; page-break-after: avoid; }
  section.report-section { break-inside: avoid; page-break-inside: avoid; }
  figure { break-before: auto; }
  figure svg { border: none; max-width: 100%; }
  .verdict, .cautions { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"#;

/// Remove a leading XML declaration, doctype or comments: keep from `<svg`.
fn inline_svg(svg: &str) -> Option<&str> {
    let start = svg.find("<svg")?;
    let end = svg.rfind("</svg>")? + "</svg>".len();
    (end > start).then(|| &svg[start..end])
}

fn caption(name: &str) -> &'static str {
    match name {
        "impedance.svg" => "Impedance of each line of the bank, of the whole bank as the converter's current sees it, and the impedance each harmonic of the ripple current needs.",
        "ripple.svg" => "Output ripple over two periods at the worst corner, at full bandwidth and at the measurement bandwidth, with the target band.",
        "spectrum.svg" => "Each harmonic's share of the ripple against the budget.",
        "cost.svg" => "Cost of the chosen bank against the ripple target.",
        "area.svg" => "Board area of the chosen bank against the ripple target.",
        _ => "",
    }
}

fn table_html(o: &mut String, t: &Table, class: Option<&str>) {
    match class {
        Some(c) => {
            let _ = writeln!(o, "<table class=\"{c}\">");
        }
        None => o.push_str("<table>\n"),
    }
    if !t.head.is_empty() {
        o.push_str("<thead><tr>");
        for h in &t.head {
            let _ = write!(o, "<th>{}</th>", xml_escape(h));
        }
        o.push_str("</tr></thead>\n");
    }
    o.push_str("<tbody>\n");
    for r in &t.rows {
        o.push_str("<tr>");
        for c in r {
            let _ = write!(o, "<td>{}</td>", xml_escape(c));
        }
        o.push_str("</tr>\n");
    }
    o.push_str("</tbody>\n</table>\n");
}

fn list_html(o: &mut String, v: &[String]) {
    o.push_str("<ul>\n");
    for x in v {
        let _ = writeln!(o, "<li>{}</li>", xml_escape(x));
    }
    o.push_str("</ul>\n");
}

/// One self-contained HTML page of `report`, with the plots inlined.
pub fn render(report: &Report, plots: &[(String, String)]) -> String {
    let title = &report.title;
    let mut o = String::new();
    o.push_str("<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n");
    o.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n");
    let _ = writeln!(o, "<title>{} — ripplebank</title>", xml_escape(title));
    let _ = writeln!(o, "<style>{CSS}</style>\n</head>\n<body>");
    let _ = writeln!(o, "<header>\n<h1>{}</h1>", xml_escape(title));
    match &report.run {
        Some(run) => {
            let _ = writeln!(
                o,
                "<p class=\"meta\">ripplebank {}, run <time datetime=\"{}\">{}</time></p>",
                xml_escape(run.version),
                xml_escape(&run.date),
                xml_escape(&run.date)
            );
            let rows: Vec<Vec<String>> = [
                ("scenario", &run.inputs.scenario),
                ("catalog", &run.inputs.catalog),
                ("inductors", &run.inputs.inductors),
            ]
            .iter()
            .filter_map(|(w, i)| {
                i.as_ref().map(|i| {
                    vec![
                        w.to_string(),
                        i.path.clone(),
                        format!("sha256 {}", i.short_hash()),
                    ]
                })
            })
            .collect();
            table_html(
                &mut o,
                &Table {
                    head: Vec::new(),
                    rows,
                },
                Some("inputs"),
            );
        }
        None => {
            let _ = writeln!(
                o,
                "<p class=\"meta\">ripplebank {}</p>",
                env!("CARGO_PKG_VERSION")
            );
        }
    }
    o.push_str("</header>\n");
    // The verdicts first, where the reader looks; the class comes from the kind.
    for (v, text) in report.verdicts() {
        let _ = writeln!(
            o,
            "<p class=\"verdict {}\" data-verdict=\"{}\">{}</p>",
            v.name(),
            v.name(),
            xml_escape(text)
        );
    }
    o.push_str("<p class=\"meta\">Read the <a href=\"#cautions\">cautions</a> before you rely on these results.</p>\n<main>\n");
    let mut cautions = Vec::new();
    for s in &report.sections {
        if s.kind == SectionKind::Cautions {
            cautions.push(s);
            continue;
        }
        let rest: Vec<&Item> = s
            .items
            .iter()
            .filter(|i| !matches!(i, Item::Verdict(..)))
            .collect();
        if rest.is_empty() && s.heading.is_none() {
            continue;
        }
        o.push_str("<section class=\"report-section\">\n");
        if let Some(h) = &s.heading {
            let _ = writeln!(o, "<h2>{}</h2>", xml_escape(h));
        }
        let mut lines: Vec<&str> = Vec::new();
        let flush = |lines: &mut Vec<&str>, o: &mut String| {
            if !lines.is_empty() {
                let _ = writeln!(o, "<pre>{}</pre>", xml_escape(&lines.join("\n")));
                lines.clear();
            }
        };
        for i in rest {
            match i {
                Item::Line(l) => lines.push(l),
                Item::Table(t) => {
                    flush(&mut lines, &mut o);
                    table_html(&mut o, t, None);
                }
                Item::List(v) => {
                    flush(&mut lines, &mut o);
                    list_html(&mut o, v);
                }
                Item::Verdict(..) => {}
            }
        }
        flush(&mut lines, &mut o);
        o.push_str("</section>\n");
    }
    if !plots.is_empty() {
        o.push_str("<h2>Plots</h2>\n");
        for (name, svg) in plots {
            let _ = writeln!(
                o,
                "<figure id=\"{}\">",
                xml_escape(name.trim_end_matches(".svg"))
            );
            match inline_svg(svg) {
                Some(s) => o.push_str(s),
                None => {
                    let _ = write!(o, "<p>{} could not be inlined.</p>", xml_escape(name));
                }
            }
            let cap = caption(name);
            let _ = writeln!(
                o,
                "\n<figcaption>{}{}{}</figcaption>\n</figure>",
                xml_escape(name),
                if cap.is_empty() { "" } else { " — " },
                xml_escape(cap)
            );
        }
    }
    o.push_str("</main>\n");
    for s in cautions {
        o.push_str("<section class=\"cautions\" id=\"cautions\">\n");
        let _ = writeln!(
            o,
            "<h2>{}</h2>",
            xml_escape(s.heading.as_deref().unwrap_or("Cautions"))
        );
        for i in &s.items {
            match i {
                Item::List(v) => list_html(&mut o, v),
                Item::Line(l) => {
                    let _ = writeln!(o, "<p>{}</p>", xml_escape(l));
                }
                Item::Table(t) => table_html(&mut o, t, None),
                Item::Verdict(..) => {}
            }
        }
        o.push_str("</section>\n");
    }
    let _ = writeln!(
        o,
        "<footer>Written by ripplebank {}. A model, not a measurement: verify on hardware.</footer>\n</body>\n</html>",
        env!("CARGO_PKG_VERSION")
    );
    o
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn strips_declaration() {
        assert_eq!(
            inline_svg("<?xml version=\"1.0\"?>\n<svg a=\"1\"><g/></svg>\n"),
            Some("<svg a=\"1\"><g/></svg>")
        );
        assert_eq!(inline_svg("not svg"), None);
    }
}
