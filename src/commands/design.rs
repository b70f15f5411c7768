//! `design`: the best bank for the scenario's target.

use super::{bank_files, load, show_progress, CommandOutput, Common};
use crate::assessment::{self, Assessment};
use crate::filter::FilterUse;
use crate::load::Overrides;
use crate::optimize;
use crate::problem::Problem;
use crate::report::model::{self, Report, Verdict};
use crate::report::{self, text, OutFiles};
use crate::run::Run;
use crate::scenario::Objective;
use anyhow::Result;

/// The design to report under `[filter] use` (`auto`: the better of the
/// capacitor-only and the filtered design by the objective; `on`: the
/// filtered one), with the problem it is judged on (the filter fixed behind
/// the bank) and lines comparing the two.
fn choose(
    p: &Problem,
    usage: FilterUse,
    cap: &optimize::DesignOutcome,
    fo: &optimize::FilterOutcome,
) -> (Problem, optimize::DesignOutcome, Vec<String>) {
    let filtered_out = optimize::DesignOutcome {
        status: fo.status,
        found: fo.found.clone(),
        stats: fo.stats.clone(),
    };
    let objective = p.scenario.selection.objective.name();
    let mut lines = Vec::new();
    let use_filter = match (&cap.found, &fo.found) {
        (_, None) => usage == FilterUse::On,
        (None, Some(_)) => true,
        (Some(c), Some(f)) => usage == FilterUse::On || optimize::better(&f.key, &c.key),
    };
    match (&cap.found, &fo.found) {
        (Some(c), Some(f)) => {
            let parts: u32 = c.bank.iter().map(|b| b.1).sum();
            let (a, b) = (c.key[0], f.key[0]);
            lines.push(if b < a {
                format!(
                    "A filter saves {:.4} in {objective} ({:.4} against {:.4}); the capacitor-only bank needs {parts} parts ({}).",
                    a - b,
                    b,
                    a,
                    cap.status.name()
                )
            } else {
                format!(
                    "Capacitors alone are better by {:.4} in {objective} ({:.4} against {:.4} with a filter); the capacitor-only bank has {parts} parts ({}).",
                    b - a,
                    a,
                    b,
                    cap.status.name()
                )
            });
        }
        (None, Some(_)) => lines.push(
            "Capacitors alone cannot meet the target under every limit: the filter is needed.".into(),
        ),
        (Some(c), None) => lines.push(format!(
            "No filter in the search space meets the target and the filter's limits; capacitors alone reach it at {:.4} in {objective}.",
            c.key[0]
        )),
        (None, None) => lines.push(
            "Neither capacitors alone nor any filter in the search space meets the target under every limit.".into(),
        ),
    }
    if use_filter {
        let q = match &fo.filter {
            Some(f) => p.with_filter(f.clone()),
            None => p.clone(),
        };
        (q, filtered_out, lines)
    } else {
        (p.clone(), cap.clone(), lines)
    }
}

/// The filter search's own lines in the report and its JSON.
fn filter_summary(
    rep: &mut Report,
    doc: &mut serde_json::Value,
    fo: &optimize::FilterOutcome,
    comparison: &[String],
) {
    rep.para("Post-filter search");
    for l in comparison {
        rep.line(l.clone());
    }
    rep.line(format!(
        "{} filters in the search space, {} searched for their converter-side bank, {:.2} s.",
        fo.filters_total, fo.filters_searched, fo.stats.seconds
    ));
    for (why, n) in &fo.dropped {
        rep.line(format!("  dropped: {why} ({n})"));
    }
    doc["filter_search"] = serde_json::json!({
        "status": fo.status.name(),
        "filters_total": fo.filters_total,
        "filters_searched": fo.filters_searched,
        "dropped": fo.dropped.iter().map(|(w, n)| serde_json::json!({"reason": w, "count": n})).collect::<Vec<_>>(),
        "comparison": comparison,
        "seconds": fo.stats.seconds,
    });
}

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
                } else {
                    let why = if st.stopped {
                        format!("the search stopped at its limit of {} exact evaluations before proving it the best", st.evaluations)
                    } else {
                        "the catalog was too large to prove it the best".to_string()
                    };
                    match st.lower_bound.filter(|&lb| lb > 0.0) {
                        Some(lb) => format!(
                            "feasible, at most {:.1} % above the best possible (a verified bank; {why})",
                            ((f.key[0] - lb) / lb * 100.0).max(0.0)
                        ),
                        None => format!("a verified bank; {why}"),
                    }
                }
            ));
            if f.bank.is_empty() {
                r.line(if p.filter.is_some() {
                    "The converter's own output capacitance is enough on the converter side of the filter: no capacitors need to be added there."
                } else {
                    "The converter's own output capacitance already meets the target: no capacitors need to be added."
                });
            }
            for s in model::assessment(&a, quiet) {
                r.push(s);
            }
            let mut doc = report::assessment_json(out.status.name(), &a, p);
            doc["search"] = serde_json::to_value(st)?;
            if out.status == optimize::Status::Feasible {
                let value = f.key[0];
                doc["lower_bound"] = serde_json::json!(st.lower_bound);
                doc["gap"] = serde_json::json!(st
                    .lower_bound
                    .filter(|_| value > 0.0)
                    .map(|lb| ((value - lb) / value).max(0.0)));
            }
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
                None if st.candidates > 0 => r.line(
                    "  No bank of the allowed parts meets the other limits together, so no lowest ripple can be given (see below).",
                ),
                None => r.line("  No part may be used, so no bank can be built."),
            }
            let mut doc = super::infeasible_doc(p, best, &why.binding);
            super::lowest_deviation_part(&mut r, p, why.lowest_deviation.as_ref(), &mut doc)?;
            r.line(binding_text(&why.binding).trim_end().to_string());
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
        ..Default::default()
    };
    let (p, run) = load(c, &o)?;
    let settings = optimize::Settings {
        progress: show_progress(c),
        ..Default::default()
    };
    let target = p.scenario.design_target();
    let usage = p.scenario.filter.usage;
    // `auto`/`on`: the capacitor-only and the filtered design are
    // independent searches: one core each.
    let (capacitors, filtered) = if usage != FilterUse::Off {
        std::thread::scope(|scope| {
            let cap = scope.spawn(|| optimize::design(&p, &settings));
            let fo = optimize::design_filtered(&p, target, &settings);
            (
                Some(
                    cap.join()
                        .expect("the capacitor-only search does not panic"),
                ),
                Some(fo),
            )
        })
    } else {
        (None, None)
    };
    let (p, out, comparison) = match (&capacitors, &filtered) {
        (Some(cap), Some(fo)) => choose(&p, usage, cap, fo),
        _ => (p.clone(), optimize::design(&p, &settings), Vec::new()),
    };
    let why = out
        .found
        .is_none()
        .then(|| optimize::explain(&p, p.scenario.design_target(), &settings));
    let (mut rep, mut doc, shown) = design_report(&p, &out, why.as_ref(), "Design", c.quiet, &run)?;
    if let Some(fo) = &filtered {
        filter_summary(&mut rep, &mut doc, fo, &comparison);
    }
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
