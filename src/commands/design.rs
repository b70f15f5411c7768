//! `design`: the best bank for the scenario's target.

use super::{bank_files, load, show_progress, CommandOutput, Common};
use crate::assessment::{self, Assessment};
use crate::load::Overrides;
use crate::optimize;
use crate::problem::Problem;
use crate::report::model::{self, Report, Verdict};
use crate::report::{self, text, OutFiles};
use crate::run::Run;
use crate::scenario::Objective;
use anyhow::Result;

/// Plain words for the limits that stop a design, each with what the
/// relaxed design needed.
pub(super) fn binding_text(b: &optimize::Binding) -> String {
    let mut s = binding_names(b);
    if !b.details.is_empty() {
        s.push_str("  Needed with the limit relaxed:\n");
        for d in &b.details {
            s.push_str(&format!("    {}\n", d.text()));
        }
    }
    s
}

fn binding_names(b: &optimize::Binding) -> String {
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

/// A bank and its assessment: the design's, or when infeasible the closest.
pub(crate) type Shown = (Vec<(usize, u32)>, Assessment);

/// The report and the JSON for a design outcome (`why`: the explanation of
/// an infeasible one), with the bank whose files `--out` writes.
pub(crate) fn design_report(
    p: &Problem,
    out: &optimize::DesignOutcome,
    why: Option<&optimize::Explanation>,
    what: &str,
    quiet: bool,
    run: &Run,
) -> Result<(Report, serde_json::Value, Option<Shown>)> {
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
            (doc, Some((f.bank.clone(), a)))
        }
        None => {
            r.verdict(
                Verdict::Infeasible,
                format!("{what}: INFEASIBLE — no bank meets the target under every limit."),
            );
            let empty = optimize::Explanation::default();
            let why = why.unwrap_or(&empty);
            let best = why.lowest.ripple_pp;
            let best = best.is_finite().then_some(best);
            match best {
                Some(x) => r.line(format!(
                    "  The lowest worst-corner ripple any allowed bank reached is {} against a target of {}.",
                    text::mv(x),
                    text::mv(p.scenario.target.ripple_pp.0)
                )),
                None => r.line("  No part may be used, so no bank can be built."),
            }
            r.line(binding_text(&why.binding).trim_end().to_string());
            let mut doc = super::infeasible_doc(p, best, &why.binding);
            doc["search"] = serde_json::to_value(st)?;
            doc["lowest_search"] = serde_json::to_value(&why.lowest)?;
            let mut shown = None;
            if let Some(b) = &why.lowest.bank {
                let a = assessment::assess(p, b)?;
                r.para("Closest bank (lowest ripple found)");
                for s in model::assessment(&a, quiet) {
                    r.push(s);
                }
                doc["closest"] = report::assessment_json("closest", &a, p);
                shown = Some((b.clone(), a));
            }
            (doc, shown)
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
pub fn design(
    c: &Common,
    objective: Option<Objective>,
    exclude: &[String],
) -> Result<CommandOutput> {
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
    let why = out
        .found
        .is_none()
        .then(|| optimize::explain(&p, p.scenario.design_target(), &settings));
    let (rep, doc, shown) = design_report(&p, &out, why.as_ref(), "Design", c.quiet, &run)?;
    if let Some(dir) = &c.out {
        // An infeasible design writes the closest bank's files.
        let files = match &shown {
            Some((bank, a)) => bank_files(&p, bank, a, &doc, &rep)?,
            None => {
                let mut files = OutFiles::default();
                files.add("report.json", report::json_text(doc.clone()));
                files.add("report.html", report::html::render(&rep, &[]));
                files
            }
        };
        files.commit(dir)?;
    }
    let code = if out.found.is_some() { 0 } else { 1 };
    Ok(CommandOutput::of(c, doc, &rep, code))
}
