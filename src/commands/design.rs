//! `design`: the best bank for the scenario's target.

use super::{bank_files, load, show_progress, Common, Outcome};
use crate::assessment::{self, Assessment};
use crate::load::Overrides;
use crate::optimize;
use crate::problem::Problem;
use crate::report::model::{self, Report, Verdict};
use crate::report::{self, text, OutFiles};
use crate::run::Run;
use crate::scenario::Objective;
use anyhow::Result;

/// Plain words for the limits that stop a design.
pub(super) fn binding_text(b: &optimize::Binding) -> String {
    if b.limits == ["catalog"] {
        "  Binding: no limit — even with every limit relaxed the eligible parts do not reach the target.\n".into()
    } else if b.together {
        format!(
            "  Binding: no single limit, but these together (relaxing them all reaches the target): {}\n",
            b.limits.join(", ")
        )
    } else {
        format!(
            "  Binding (relaxing any one of these alone makes the target reachable): {}\n",
            b.limits.join(", ")
        )
    }
}

/// The report and the JSON for a design outcome.
pub(crate) fn design_report(
    p: &Problem,
    out: &optimize::Outcome,
    what: &str,
    quiet: bool,
    run: &Run,
) -> Result<(Report, serde_json::Value, Option<Assessment>)> {
    let mut r = Report::new(
        if out.found.is_some() {
            "Bank design"
        } else {
            "Bank design (infeasible)"
        },
        Some(run),
    );
    r.push(model::header(p));
    r.line(format!(
        "Objective: {}",
        p.scenario.selection.objective.name()
    ));
    let st = &out.stats;
    let (doc, a) = match &out.found {
        Some(f) => {
            let a = assessment::assess(p, &f.bank)?;
            r.verdict(
                Verdict::of_status(out.status),
                format!(
                "{what}: {} — {}",
                out.status.name().to_uppercase(),
                if out.status == optimize::Status::Optimal {
                    "the best bank under the model (every line set examined or bounded)".to_string()
                } else if st.stopped {
                    format!("a verified bank; the search stopped at its limit of {} exact evaluations before proving it the best", st.evaluations)
                } else {
                    "a verified bank; the catalog was too large to prove it the best".to_string()
                }
            ));
            if f.bank.is_empty() {
                r.line(
                    "The converter's own output capacitance already meets the target: no capacitors need to be added."
                );
            }
            for s in model::assessment(&a, quiet) {
                r.push(s);
            }
            let mut doc = report::assessment_json(out.status.name(), &a, p);
            doc["search"] = serde_json::to_value(st)?;
            (doc, Some(a))
        }
        None => {
            r.verdict(
                Verdict::Infeasible,
                format!("{what}: INFEASIBLE — no bank meets the target under every limit."),
            );
            match out.best_ripple_pp {
                Some(x) => r.line(format!(
                    "  The lowest worst-corner ripple any allowed bank reached is {} against a target of {}.",
                    text::mv(x),
                    text::mv(p.scenario.target.ripple_pp.0)
                )),
                None => r.line("  No part may be used, so no bank can be built."),
            }
            r.line(binding_text(&out.binding).trim_end().to_string());
            let mut doc = super::infeasible_doc(p, out.best_ripple_pp, &out.binding);
            doc["search"] = serde_json::to_value(st)?;
            if let Some(b) = &out.best_ripple_bank {
                let a = assessment::assess(p, b)?;
                r.para("Closest bank (lowest ripple found)");
                for s in model::assessment(&a, quiet) {
                    r.push(s);
                }
                doc["closest"] = report::assessment_json("closest", &a, p);
            }
            (doc, None)
        }
    };
    r.para(format!(
        "Search: {} candidate parts ({} dominated dropped), {} of {} line sets solved, {} exact evaluations, {:.2} s",
        st.candidates, st.dominated, st.line_sets_solved, st.line_sets_total, st.evaluations, st.seconds
    ));
    if !quiet {
        if let Some(x) = model::excluded(p) {
            r.push(x);
        }
    }
    r.push(model::cautions());
    let mut doc = doc;
    run.stamp(&mut doc);
    Ok((r, doc, a))
}

/// `design`: the best bank for the scenario's target (`objective` overrides the scenario's).
pub fn design(c: &Common, objective: Option<Objective>, exclude: &[String]) -> Result<Outcome> {
    let o = Overrides {
        objective,
        exclude: exclude.to_vec(),
    };
    let (p, run) = load(c, &o)?;
    let settings = optimize::Settings {
        progress: show_progress(c),
        ..Default::default()
    };
    let out = optimize::design(&p, &settings);
    let (rep, doc, a) = design_report(&p, &out, "Design", c.quiet, &run)?;
    if let Some(dir) = &c.out {
        let files = match (&out.found, &a) {
            (Some(f), Some(a)) => bank_files(&p, &f.bank, a, &doc, &rep)?,
            _ => {
                let mut files = OutFiles::default();
                files.add("report.json", report::json_text(doc.clone()));
                files.add("report.html", report::html::render(&rep, &[]));
                files
            }
        };
        files.commit(dir)?;
    }
    let code = if out.found.is_some() { 0 } else { 1 };
    let stdout = if c.json {
        report::json_text(doc)
    } else {
        text::render(&rep)
    };
    Ok(Outcome { stdout, code })
}
