//! The commands: each takes parsed options and returns the text for stdout
//! and the exit status (0 yes, 1 a well-formed question answered no).
//! Errors (exit 2) are returned as `Err`.

use crate::assessment::{self, Assessment};
use crate::load::{self, Overrides};
use crate::problem::Problem;
use crate::optimize;
use crate::report::{self, text, OutFiles};
use crate::scenario::Objective;
use anyhow::Result;
use serde_json::json;
use std::fmt::Write;
use std::path::{Path, PathBuf};

/// Options every command shares.
#[derive(Debug, Clone, Default)]
pub struct Common {
    pub scenario: Option<PathBuf>,
    pub catalog: Option<PathBuf>,
    pub out: Option<PathBuf>,
    pub json: bool,
}

/// What a command prints and its exit status.
pub struct Outcome {
    pub stdout: String,
    pub code: u8,
}

fn load(c: &Common, o: &Overrides) -> Result<Problem> {
    load::problem(c.scenario.as_deref(), c.catalog.as_deref(), o)
}

/// The standard output files for one bank.
pub fn bank_files(problem: &Problem, bank: &[(usize, u32)], a: &Assessment, doc: &serde_json::Value, title: &str, body: &str) -> Result<OutFiles> {
    let mut files = OutFiles::default();
    files.add("bom.csv", report::bom_csv(problem, bank));
    files.add("report.json", report::json_text(doc.clone()));
    files.add("bank.cir", report::spice::netlist(problem, bank)?);
    let plots = report::plots::bank_plots(problem, bank, a)?;
    files.add("report.html", report::html::page(title, body, &plots));
    for (name, svg) in plots {
        files.add(&name, svg);
    }
    Ok(files)
}

pub fn validate(c: &Common) -> Result<Outcome> {
    let p = load(c, &Overrides::default())?;
    if c.json {
        let doc = json!({
            "status": "valid",
            "scenario": p.scenario.name,
            "catalog": p.catalog.source,
            "parts": p.catalog.parts.len(),
            "eligible": p.eligible.iter().map(|&i| p.catalog.parts[i].id.clone()).collect::<Vec<_>>(),
            "excluded": p.excluded,
            "warnings": p.warnings,
        });
        return Ok(Outcome { stdout: report::json_text(doc), code: 0 });
    }
    let mut o = String::new();
    let _ = writeln!(o, "Scenario {} is valid.", p.scenario.source);
    let _ = writeln!(o, "Catalog {} is valid: {} parts.", p.catalog.source, p.catalog.parts.len());
    o.push_str(&text::header(&p));
    let _ = writeln!(o, "\nParts that may be used: {}", p.eligible.len());
    for &i in &p.eligible {
        let q = &p.catalog.parts[i];
        let _ = writeln!(
            o,
            "  {:<28} {:<22} {:>9} at {} V: {:>9} worst-corner",
            q.id,
            q.technology.name(),
            crate::units::format_si(q.capacitance, "F"),
            p.scenario.converter.vout.0,
            crate::units::format_si(q.c_worst(p.scenario.converter.vout.0), "F")
        );
    }
    o.push_str(&text::excluded(&p));
    if !p.warnings.is_empty() {
        let _ = writeln!(o, "\nWarnings");
        for w in &p.warnings {
            let _ = writeln!(o, "  - {w}");
        }
    }
    if p.eligible.is_empty() {
        let _ = writeln!(o, "\nNo part may be used: a design is impossible until the catalog or the scenario changes.");
    }
    Ok(Outcome { stdout: o, code: 0 })
}

pub fn assess(c: &Common, bank_arg: Option<&str>, bom: Option<&Path>) -> Result<Outcome> {
    let p = load(c, &Overrides::default())?;
    let bank = match (bank_arg, bom) {
        (Some(b), _) => assessment::parse_bank_arg(&p, b)?,
        (None, Some(f)) => {
            let rows = assessment::read_bom(f)?;
            assessment::bom_to_bank(&p, &rows, &f.display().to_string())?
        }
        (None, None) => anyhow::bail!("assess needs --bank PART=N,... or --bom FILE"),
    };
    let a = assessment::assess(&p, &bank)?;
    let status = if a.all_ok { "pass" } else { "fail" };
    let doc = report::assessment_json(status, &a, &p);
    let mut body = text::header(&p);
    body.push_str(&text::assessment(&a));
    let _ = writeln!(
        body,
        "\nVerdict: {}",
        if a.all_ok {
            "PASS — the bank meets the target and every limit at the worst corner.".to_string()
        } else {
            let failed: Vec<&str> = a.checks.iter().filter(|c| !c.ok).map(|c| c.name.as_str()).collect();
            format!("FAIL — {}", failed.join(", "))
        }
    );
    body.push_str(&text::cautions());
    if let Some(dir) = &c.out {
        bank_files(&p, &bank, &a, &doc, "Bank assessment", &body)?.commit(dir)?;
    }
    let stdout = if c.json { report::json_text(doc) } else { body };
    Ok(Outcome { stdout, code: if a.all_ok { 0 } else { 1 } })
}

/// Show progress only on a terminal and never with --json.
pub fn show_progress(c: &Common) -> bool {
    use std::io::IsTerminal;
    !c.json && std::io::stderr().is_terminal()
}

fn objective_arg(o: Option<&str>) -> Result<Option<Objective>> {
    match o {
        None => Ok(None),
        Some(t) => Objective::parse(t).map(Some).ok_or_else(|| anyhow::anyhow!("--objective: `{t}` is not one of cost, area, count")),
    }
}

/// Text and JSON for a design outcome.
pub fn design_report(p: &Problem, out: &optimize::Outcome, what: &str) -> Result<(String, serde_json::Value, Option<Assessment>)> {
    let mut body = text::header(p);
    let _ = writeln!(body, "Objective: {}", p.scenario.selection.objective.name());
    let st = &out.stats;
    let (doc, a) = match &out.found {
        Some(f) => {
            let a = assessment::assess(p, &f.bank)?;
            let _ = writeln!(
                body,
                "\n{what}: {} — {}",
                out.status.name().to_uppercase(),
                if out.status == optimize::Status::Optimal {
                    "the best bank under the model (every line set examined or bounded)"
                } else {
                    "a verified bank; the catalog was too large to prove it the best"
                }
            );
            body.push_str(&text::assessment(&a));
            let mut doc = report::assessment_json(out.status.name(), &a, p);
            doc["search"] = serde_json::to_value(st)?;
            (doc, Some(a))
        }
        None => {
            let _ = writeln!(body, "\n{what}: INFEASIBLE — no bank meets the target under every limit.");
            match out.best_ripple_pp {
                Some(r) => {
                    let _ = writeln!(
                        body,
                        "  The lowest worst-corner ripple any allowed bank reached is {} against a target of {}.",
                        text::mv(r),
                        text::mv(p.scenario.target.ripple_pp.0)
                    );
                }
                None => {
                    let _ = writeln!(body, "  No part may be used, so no bank can be built.");
                }
            }
            let _ = writeln!(body, "  Binding (relaxing any one of these alone makes the target reachable): {}", out.binding.join(", "));
            let mut doc = json!({
                "status": "infeasible",
                "bank": [],
                "ripple_pp": null, "ripple_pp_typical": null, "ripple_pp_full_bandwidth": null,
                "cost": null, "area": null, "count": 0, "lines": 0,
                "capacitance_nominal_total": 0.0, "capacitance_max_total": 0.0, "capacitance_effective_total": 0.0,
                "ripple_current": [],
                "excluded": p.excluded,
                "warnings": p.warnings,
                "best_ripple_pp": out.best_ripple_pp,
                "binding": out.binding,
                "target_ripple_pp": p.scenario.target.ripple_pp.0,
                "scenario": p.scenario.name,
                "objective": p.scenario.selection.objective.name(),
                "search": st,
            });
            if let Some(b) = &out.best_ripple_bank {
                let a = assessment::assess(p, b)?;
                let _ = writeln!(body, "\nClosest bank (lowest ripple found)");
                body.push_str(&text::assessment(&a));
                doc["closest"] = report::assessment_json("closest", &a, p);
            }
            (doc, None)
        }
    };
    let _ = writeln!(
        body,
        "\nSearch: {} candidate parts ({} dominated dropped), {} of {} line sets solved, {} exact evaluations, {:.2} s",
        st.candidates, st.dominated, st.line_sets_solved, st.line_sets_total, st.evaluations, st.seconds
    );
    body.push_str(&text::excluded(p));
    body.push_str(&text::cautions());
    Ok((body, doc, a))
}

pub fn design(c: &Common, objective: Option<&str>, exclude: &[String]) -> Result<Outcome> {
    let o = Overrides { objective: objective_arg(objective)?, exclude: exclude.to_vec() };
    let p = load(c, &o)?;
    let settings = optimize::Settings { progress: show_progress(c), ..Default::default() };
    let out = optimize::design(&p, &settings);
    let (body, doc, a) = design_report(&p, &out, "Design")?;
    if let Some(dir) = &c.out {
        let files = match (&out.found, &a) {
            (Some(f), Some(a)) => bank_files(&p, &f.bank, a, &doc, "Bank design", &body)?,
            _ => {
                let mut files = OutFiles::default();
                files.add("report.json", report::json_text(doc.clone()));
                files.add("report.html", report::html::page("Bank design (infeasible)", &body, &[]));
                files
            }
        };
        files.commit(dir)?;
    }
    let code = if out.found.is_some() { 0 } else { 1 };
    let stdout = if c.json { report::json_text(doc) } else { body };
    Ok(Outcome { stdout, code })
}

pub fn tradeoff(_c: &Common, _from: Option<&str>, _to: Option<&str>, _points: usize) -> Result<Outcome> {
    anyhow::bail!("tradeoff: being written")
}

pub fn rework(_c: &Common, _bom: &Path, _drop: &[String]) -> Result<Outcome> {
    anyhow::bail!("rework: being written")
}
