//! Self-contained HTML report: the text report in sections, the plots
//! inlined as SVG, and the cautions in a box. No scripts, no external
//! resources; the markup is also well-formed XML (XHTML syntax), so it can
//! be checked with any XML parser.

use super::plots::xml_escape;
use super::CAUTIONS;
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
.verdict.pass { border-color: #2f7d32; background: #eef7ee; color: #1b5e20; }
.verdict.fail { border-color: #b71c1c; background: #fdeeee; color: #8e1515; }
.verdict.info { border-color: #777; background: #f4f4f4; }
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

/// One block of the text report: an optional heading and its lines.
struct Block<'a> {
    heading: Option<&'a str>,
    lines: Vec<&'a str>,
}

/// Split the plain-text report into blocks at blank lines. A block whose
/// first line starts at the margin and whose other lines are indented is
/// a section with a heading.
fn blocks(body: &str) -> Vec<Block<'_>> {
    let mut out = Vec::new();
    let mut cur: Vec<&str> = Vec::new();
    fn flush<'a>(cur: &mut Vec<&'a str>, out: &mut Vec<Block<'a>>) {
        if cur.is_empty() {
            return;
        }
        let first = cur[0];
        let rest_indented =
            cur.len() > 1 && cur[1..].iter().all(|l| l.starts_with(' ') || l.is_empty());
        if !first.starts_with(' ') && rest_indented {
            out.push(Block {
                heading: Some(first),
                lines: cur[1..].to_vec(),
            });
        } else {
            out.push(Block {
                heading: None,
                lines: cur.clone(),
            });
        }
        cur.clear();
    }
    for line in body.lines() {
        if line.trim().is_empty() {
            flush(&mut cur, &mut out);
        } else {
            cur.push(line.trim_end());
        }
    }
    flush(&mut cur, &mut out);
    out
}

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

fn cautions_box(o: &mut String) {
    o.push_str("<section class=\"cautions\" id=\"cautions\">\n<h2>Cautions</h2>\n<ul>\n");
    for c in CAUTIONS {
        let _ = writeln!(o, "<li>{}</li>", xml_escape(c));
    }
    o.push_str("</ul>\n</section>\n");
}

/// One self-contained HTML page: `title`, the plain-text report `body`
/// rendered in sections, the plots inlined, and the cautions.
pub fn page(title: &str, body: &str, plots: &[(String, String)]) -> String {
    let mut o = String::new();
    o.push_str("<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n");
    o.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n");
    let _ = writeln!(o, "<title>{} — ripplebank</title>", xml_escape(title));
    let _ = writeln!(o, "<style>{CSS}</style>\n</head>\n<body>");
    let _ = writeln!(o, "<header>\n<h1>{}</h1>", xml_escape(title));
    let _ = writeln!(
        o,
        "<p class=\"meta\">ripplebank {}</p>\n</header>",
        env!("CARGO_PKG_VERSION")
    );

    let blocks = blocks(body);
    // Verdict lines first, where the reader looks.
    for b in blocks.iter().filter(|b| {
        b.heading.is_none() && b.lines.first().is_some_and(|l| l.starts_with("Verdict:"))
    }) {
        let text = b.lines.join("\n");
        let class = if text.contains("PASS") {
            "pass"
        } else if text.contains("FAIL") {
            "fail"
        } else {
            "info"
        };
        let _ = writeln!(o, "<p class=\"verdict {class}\">{}</p>", xml_escape(&text));
    }
    o.push_str("<p class=\"meta\">Read the <a href=\"#cautions\">cautions</a> before you rely on these results.</p>\n<main>\n");
    for b in &blocks {
        match b.heading {
            // The cautions have their own box below.
            Some(h) if h.trim() == "Cautions" => continue,
            Some(h) => {
                let _ = writeln!(
                    o,
                    "<section class=\"report-section\">\n<h2>{}</h2>\n<pre>{}</pre>\n</section>",
                    xml_escape(h),
                    xml_escape(&b.lines.join("\n"))
                );
            }
            None if b.lines.first().is_some_and(|l| l.starts_with("Verdict:")) => continue,
            None => {
                let _ = writeln!(
                    o,
                    "<section class=\"report-section\">\n<pre>{}</pre>\n</section>",
                    xml_escape(&b.lines.join("\n"))
                );
            }
        }
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
    cautions_box(&mut o);
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
    fn sections_and_plain_blocks() {
        let b = blocks(
            "Scenario: x\nConverter: y\n  corner\n\nBank\n  a  b\n  c  d\n\nVerdict: PASS\n",
        );
        assert_eq!(b.len(), 3);
        assert_eq!(b[0].heading, None);
        assert_eq!(b[1].heading, Some("Bank"));
        assert_eq!(b[1].lines.len(), 2);
        assert_eq!(b[2].lines, vec!["Verdict: PASS"]);
    }

    #[test]
    fn strips_declaration() {
        assert_eq!(
            inline_svg("<?xml version=\"1.0\"?>\n<svg a=\"1\"><g/></svg>\n"),
            Some("<svg a=\"1\"><g/></svg>")
        );
        assert_eq!(inline_svg("not svg"), None);
    }
}
