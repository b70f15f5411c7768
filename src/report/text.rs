//! The readable report: the report model rendered as plain text.

pub use super::model::mv;
use super::model::{Item, Report, Section};

/// Format rows as left-aligned columns, each line indented by two spaces.
/// An empty `head` prints no header row.
pub fn table(head: &[&str], rows: &[Vec<String>]) -> String {
    let n = if head.is_empty() {
        rows.iter().map(Vec::len).max().unwrap_or(0)
    } else {
        head.len()
    };
    let mut w: Vec<usize> = (0..n)
        .map(|i| head.get(i).map_or(0, |h| h.chars().count()))
        .collect();
    for r in rows {
        for (i, c) in r.iter().enumerate().take(n) {
            w[i] = w[i].max(c.chars().count());
        }
    }
    let mut out = String::new();
    let line = |cells: Vec<&str>, out: &mut String| {
        let mut s = String::from("  ");
        for (i, c) in cells.iter().enumerate().take(n) {
            s.push_str(c);
            if i + 1 < cells.len() {
                s.push_str(&" ".repeat(w[i] - c.chars().count() + 2));
            }
        }
        out.push_str(s.trim_end());
        out.push('\n');
    };
    if !head.is_empty() {
        line(head.to_vec(), &mut out);
    }
    for r in rows {
        line(r.iter().map(|s| s.as_str()).collect(), &mut out);
    }
    out
}

fn section(s: &Section, out: &mut String) {
    let indent = if s.heading.is_some() { "  " } else { "" };
    if let Some(h) = &s.heading {
        out.push_str(h);
        out.push('\n');
    }
    for item in &s.items {
        match item {
            Item::Line(l) | Item::Verdict(_, l) => {
                for part in l.lines() {
                    out.push_str(indent);
                    out.push_str(part);
                    out.push('\n');
                }
            }
            Item::Table(t) => {
                let head: Vec<&str> = t.head.iter().map(String::as_str).collect();
                out.push_str(&table(&head, &t.rows));
            }
            Item::List(v) => {
                for x in v {
                    out.push_str("  - ");
                    out.push_str(x);
                    out.push('\n');
                }
            }
        }
    }
}

/// The whole report as text: the run's lines, then each section, a blank
/// line between sections.
pub fn render(r: &Report) -> String {
    let mut out = String::new();
    if let Some(run) = &r.run {
        for l in run.lines() {
            out.push_str(&l);
            out.push('\n');
        }
    }
    for (i, s) in r.sections.iter().enumerate() {
        if i > 0 {
            out.push('\n');
        }
        section(s, &mut out);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::model::{Table, Verdict};

    #[test]
    fn sections_are_separated_and_indented() {
        let mut r = Report::new("t", None);
        r.para("Head line");
        r.line("  indented as written");
        r.section("Bank");
        r.table(Table::new(
            &["a", "bb"],
            vec![vec!["xyz".into(), "1".into()]],
        ));
        r.line("total: 1");
        r.verdict(Verdict::Pass, "Verdict: PASS — fine.");
        assert_eq!(
            render(&r),
            "Head line\n  indented as written\n\nBank\n  a    bb\n  xyz  1\n  total: 1\n\nVerdict: PASS — fine.\n"
        );
    }
}
