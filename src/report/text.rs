//! The readable report.

use crate::assessment::Assessment;
use crate::problem::Problem;
use crate::units::format_si;
use std::fmt::Write;

/// Format rows as left-aligned columns.
pub fn table(head: &[&str], rows: &[Vec<String>]) -> String {
    let n = head.len();
    let mut w: Vec<usize> = head.iter().map(|h| h.chars().count()).collect();
    for r in rows {
        for (i, c) in r.iter().enumerate().take(n) {
            w[i] = w[i].max(c.chars().count());
        }
    }
    let mut out = String::new();
    let line = |cells: Vec<&str>, out: &mut String| {
        let mut s = String::from("  ");
        for (i, c) in cells.iter().enumerate() {
            s.push_str(c);
            if i + 1 < cells.len() {
                s.push_str(&" ".repeat(w[i] - c.chars().count() + 2));
            }
        }
        out.push_str(s.trim_end());
        out.push('\n');
    };
    line(head.to_vec(), &mut out);
    for r in rows {
        line(r.iter().map(|s| s.as_str()).collect(), &mut out);
    }
    out
}

pub fn mv(v: f64) -> String {
    if v.is_finite() {
        format_si(v, "V")
    } else {
        "unbounded".into()
    }
}

/// The run: version, date and each input with a short hash.
pub fn run_header(run: &crate::run::Run) -> String {
    let mut o = String::new();
    for l in run.lines() {
        let _ = writeln!(o, "{l}");
    }
    o
}

/// Header lines describing the converter and the target.
pub fn header(problem: &Problem) -> String {
    let s = &problem.scenario;
    let c = &s.converter;
    let mut o = String::new();
    if !s.name.is_empty() {
        let _ = writeln!(o, "Scenario: {}", s.name);
    }
    let vins: Vec<String> = s.vin_corners().iter().map(|v| format!("{v} V")).collect();
    let _ = writeln!(
        o,
        "Converter: {} {} → {} V, {} A, fsw {}{}",
        c.topology.name(),
        if vins.is_empty() {
            "(vin not given)".to_string()
        } else {
            vins.join(" / ")
        },
        c.vout.0,
        c.iout.0,
        format_si(c.fsw.0, "Hz"),
        if c.phases > 1 {
            format!(", {} phases", c.phases)
        } else {
            String::new()
        }
    );
    if c.phases > 1 {
        let _ = writeln!(
            o,
            "  {} interleaved phases: only harmonics at multiples of {}× fsw remain in the summed current",
            c.phases, c.phases
        );
    }
    for op in &problem.ops {
        let _ = writeln!(
            o,
            "  corner vin {}: duty {:.3}{}, current into the bank {} p-p at {}",
            op.vin.map_or("—".into(), |v| format!("{v} V")),
            op.duty,
            if op.mode.is_empty() {
                String::new()
            } else {
                format!(" ({})", op.mode)
            },
            format_si(op.current_pp, "A"),
            format_si(op.f_ripple, "Hz")
        );
    }
    let t = &s.target;
    let _ = writeln!(
        o,
        "Target: {} p-p at the worst corner, {}",
        mv(t.ripple_pp.0),
        match t.bandwidth {
            Some(b) => format!(
                "{} bandwidth (order {})",
                format_si(b.0, "Hz"),
                t.bandwidth_order
            ),
            None => "full bandwidth".into(),
        }
    );
    if s.selection.margin.0 > 0.0 {
        let _ = writeln!(
            o,
            "  designed to {} (selection.margin {:.0} %)",
            mv(s.design_target()),
            s.selection.margin.0 * 100.0
        );
    }
    o
}

/// The bank, the ripple figures, the limits and the warnings.
pub fn assessment(a: &Assessment) -> String {
    assessment_quiet(a, false)
}

/// As [`assessment`]; `quiet` leaves out the per-part limit rows.
pub fn assessment_quiet(a: &Assessment, quiet: bool) -> String {
    let mut o = String::new();
    let rows: Vec<Vec<String>> = a
        .bank
        .iter()
        .map(|l| {
            vec![
                l.part.clone(),
                l.count.to_string(),
                l.technology.clone(),
                l.case.clone().unwrap_or_default(),
                format_si(l.capacitance_nominal, "F"),
                format_si(l.capacitance_worst, "F"),
                format_si(l.esr, "Ω"),
                format_si(l.esl, "H"),
                format!(
                    "{}{}",
                    format_si(l.ripple_current_rms, "A"),
                    l.ripple_current_rating
                        .map_or(String::new(), |r| format!(" / {}", format_si(r, "A")))
                ),
                format!("{:.3}", l.unit_cost),
                format!("{:.3}", l.line_total_cost),
                l.unit_area
                    .map_or("—".into(), |x| format!("{:.2}", x * l.count as f64)),
            ]
        })
        .collect();
    let _ = writeln!(o, "\nBank");
    o.push_str(&table(
        &[
            "part",
            "n",
            "technology",
            "case",
            "C nominal",
            "C worst",
            "ESR",
            "ESL",
            "I rms / rating",
            "unit",
            "line",
            "mm²",
        ],
        &rows,
    ));
    let _ = writeln!(
        o,
        "  total: {} part{} on {} line{}, cost {:.3}, area {}, C nominal {}, C worst-corner {}",
        a.count,
        if a.count == 1 { "" } else { "s" },
        a.lines,
        if a.lines == 1 { "" } else { "s" },
        a.cost,
        if a.area_known {
            format!("{:.2} mm²", a.area)
        } else {
            "unknown (some parts give none)".into()
        },
        format_si(a.capacitance_nominal_total, "F"),
        format_si(a.capacitance_effective_total, "F")
    );
    let _ = writeln!(o, "\nRipple ({} harmonics)", a.harmonics);
    let _ = writeln!(
        o,
        "  worst corner      {:>10}   {} (target {})",
        mv(a.ripple_pp),
        if a.meets_target {
            "meets the target"
        } else {
            "MISSES the target"
        },
        mv(a.target_ripple_pp)
    );
    let _ = writeln!(o, "  typical corner    {:>10}", mv(a.ripple_pp_typical));
    let _ = writeln!(
        o,
        "  full bandwidth    {:>10}   (worst corner, no bandwidth limit)",
        mv(a.ripple_pp_full_bandwidth)
    );
    let _ = writeln!(o, "\nLimits");
    let rows: Vec<Vec<String>> = a
        .checks
        .iter()
        .filter(|c| !quiet || c.part.is_none())
        .map(|c| {
            let f = |x: f64| match c.unit.as_str() {
                "V" | "F" | "A" => format_si(x, &c.unit),
                "" => format!("{x}"),
                u => format!("{x:.2} {u}"),
            };
            vec![
                c.name.clone(),
                f(c.value),
                f(c.limit),
                if c.ok { "ok".into() } else { "FAIL".into() },
            ]
        })
        .collect();
    o.push_str(&table(&["check", "value", "limit", ""], &rows));
    if !a.warnings.is_empty() {
        let _ = writeln!(o, "\nWarnings");
        for w in &a.warnings {
            let _ = writeln!(o, "  - {w}");
        }
    }
    o
}

pub fn excluded(problem: &Problem) -> String {
    let mut o = String::new();
    if problem.excluded.is_empty() {
        return o;
    }
    let _ = writeln!(
        o,
        "\nParts not used ({} of {})",
        problem.excluded.len(),
        problem.catalog.parts.len()
    );
    for e in &problem.excluded {
        let _ = writeln!(o, "  {:<28} {}", e.part, e.reason);
    }
    o
}

pub fn cautions() -> String {
    let mut o = String::from("\nCautions\n");
    for c in super::CAUTIONS {
        let _ = writeln!(o, "  - {c}");
    }
    o
}
