//! The commands: each takes parsed options and returns the text for stdout
//! and the exit status (0 yes, 1 a well-formed question answered no).
//! Errors (exit 2) are returned as `Err`.

mod design;
mod rework;
mod tradeoff;

pub use design::design;
pub use rework::rework;
pub(crate) use tradeoff::bank_key;
pub use tradeoff::tradeoff;

use crate::assessment::{self, Assessment};
use crate::load::{self, Overrides};
use crate::problem::Problem;
use crate::report::model::{self, Report, Table, Verdict};
use crate::report::{self, text, OutFiles};
use crate::run::Run;
use anyhow::Result;
use serde_json::json;
use std::path::{Path, PathBuf};

/// Options every command shares.
#[derive(Debug, Clone, Default)]
pub struct Common {
    /// `--scenario`: the scenario file (default: the bundled demo).
    pub scenario: Option<PathBuf>,
    /// `--catalog`: the catalog file (default: the scenario's).
    pub catalog: Option<PathBuf>,
    /// `--inductors`: the inductor catalog (default: `[filter] inductors`,
    /// else the bundled demo when a filter is considered).
    pub inductors: Option<PathBuf>,
    /// `--filter`: replaces `[filter] use` (design, tradeoff).
    pub filter: Option<crate::filter::FilterUse>,
    /// `--out`: the folder for output files.
    pub out: Option<PathBuf>,
    /// `--json`: one JSON document on stdout instead of the text report.
    pub json: bool,
    /// Keep the text report to the answer: no unused parts, no per-part limit rows.
    pub quiet: bool,
}

/// What a command prints and its exit status.
pub struct CommandOutput {
    /// The text report or the JSON document.
    pub stdout: String,
    /// Exit status: 0 yes, 1 a well-formed question answered no.
    pub code: u8,
}

pub(crate) fn load(c: &Common, o: &Overrides) -> Result<(Problem, Run)> {
    let mut o = o.clone();
    if o.inductors.is_none() {
        o.inductors = c.inductors.clone();
    }
    if o.filter.is_none() {
        o.filter = c.filter;
    }
    let (p, inputs) = load::problem_and_inputs(c.scenario.as_deref(), c.catalog.as_deref(), &o)?;
    Ok((p, Run::now(inputs)))
}

impl CommandOutput {
    /// The JSON document with `--json`, else the text report.
    pub(crate) fn of(c: &Common, doc: serde_json::Value, r: &Report, code: u8) -> Self {
        let stdout = if c.json {
            report::json_text(doc)
        } else {
            text::render(r)
        };
        CommandOutput { stdout, code }
    }
}

/// The lowest load-step deviation of an infeasible run: its report line
/// (when the scenario has a load step) and its JSON keys `best_deviation`
/// and `lowest_deviation_search` in `doc`.
pub(crate) fn lowest_deviation_part(
    r: &mut Report,
    p: &Problem,
    ld: Option<&crate::optimize::LowestDeviation>,
    doc: &mut serde_json::Value,
) -> Result<()> {
    let Some(ld) = ld else { return Ok(()) };
    if let Some(t) = &p.scenario.transient {
        r.line(if ld.deviation.is_finite() {
            format!(
                "  The lowest load-step deviation any bank meeting the other limits reached is {} against a limit of {}.",
                text::mv(ld.deviation),
                text::mv(t.max_deviation.0)
            )
        } else {
            "  No bank meeting the other limits was found, so no load-step deviation can be given.".into()
        });
    }
    doc["best_deviation"] = json!(ld.deviation);
    doc["lowest_deviation_search"] = serde_json::to_value(ld)?;
    Ok(())
}

/// The JSON document of a run with no bank: every key present, the bank
/// figures null or zero, plus the lowest ripple found and the binding limits.
pub(crate) fn infeasible_doc(
    p: &Problem,
    best_ripple_pp: Option<f64>,
    binding: &crate::optimize::Binding,
) -> serde_json::Value {
    json!({
        "status": "infeasible",
        "bank": [],
        "ripple_pp": null, "ripple_pp_typical": null, "ripple_pp_full_bandwidth": null,
        "cost": null, "area": null, "count": 0, "lines": 0,
        "capacitance_nominal_total": 0.0, "capacitance_max_total": 0.0, "capacitance_effective_total": 0.0,
        "ripple_current": [],
        "excluded": p.excluded,
        "warnings": p.warnings,
        "best_ripple_pp": best_ripple_pp,
        "transient": null,
        "binding": binding.limits,
        "binding_together": binding.together,
        "binding_detail": binding.details,
        "target_ripple_pp": report::echoed(p.scenario.target.ripple_pp.0),
        "scenario": p.scenario.name,
        "objective": p.scenario.selection.objective.name(),
    })
}

/// The standard output files for one bank.
pub(crate) fn bank_files(
    problem: &Problem,
    bank: &[(usize, u32)],
    a: &Assessment,
    doc: &serde_json::Value,
    rep: &Report,
) -> Result<OutFiles> {
    let mut files = OutFiles::default();
    files.add(
        "bom.csv",
        report::bom_csv_with(problem, bank, problem.filter.as_ref()),
    );
    files.add("report.json", report::json_text(doc.clone()));
    files.add("bank.cir", report::spice::netlist(problem, bank)?);
    let plots = report::plots::bank_plots(problem, bank, a)?;
    files.add("report.html", report::html::render(rep, &plots));
    for (name, svg) in plots {
        files.add(&name, svg);
    }
    Ok(files)
}

/// `validate`: check the inputs and list the usable and the unused parts.
pub fn validate(c: &Common) -> Result<CommandOutput> {
    let (p, run) = load(c, &Overrides::default())?;
    if c.json {
        let mut doc = json!({
            "status": "valid",
            "scenario": p.scenario.name,
            "catalog": p.catalog.source,
            "parts": p.catalog.parts.len(),
            "eligible": p.eligible.iter().map(|&i| p.catalog.parts[i].id.clone()).collect::<Vec<_>>(),
            "excluded": p.excluded,
            "warnings": p.warnings,
        });
        if let Some(lc) = &p.inductors {
            doc["inductor_catalog"] = json!(lc.source);
            doc["inductors"] = json!(lc.parts.len());
            doc["inductors_eligible"] = json!(p
                .inductors_eligible
                .iter()
                .map(|&i| lc.parts[i].id.clone())
                .collect::<Vec<_>>());
            doc["inductors_excluded"] = json!(p.inductors_excluded);
        }
        run.stamp(&mut doc);
        return Ok(CommandOutput {
            stdout: report::json_text(doc),
            code: 0,
        });
    }
    let mut r = Report::new("Validation", Some(&run));
    let mut head = model::header(&p);
    head.items.insert(
        0,
        model::Item::Line(format!(
            "Catalog {} is valid: {} parts.",
            p.catalog.source,
            p.catalog.parts.len()
        )),
    );
    head.items.insert(
        0,
        model::Item::Line(format!("Scenario {} is valid.", p.scenario.source)),
    );
    r.push(head);
    r.section(format!("Parts that may be used: {}", p.eligible.len()));
    let vout = p.scenario.converter.vout.0;
    r.table(Table::new(
        &[
            "part",
            "technology",
            "C nominal",
            &format!("C worst-corner at {vout} V"),
        ],
        p.eligible
            .iter()
            .map(|&i| {
                let q = &p.catalog.parts[i];
                vec![
                    q.id.clone(),
                    q.technology.name().to_string(),
                    crate::units::format_si(q.capacitance, "F"),
                    crate::units::format_si(q.c_worst(vout), "F"),
                ]
            })
            .collect(),
    ));
    if !c.quiet {
        if let Some(x) = model::excluded(&p) {
            r.push(x);
        }
    }
    if let Some(lc) = &p.inductors {
        inductor_lists(&mut r, &p, lc, c.quiet);
    }
    if let Some(w) = model::warnings(&p.warnings) {
        r.push(w);
    }
    if p.eligible.is_empty() {
        r.para("No part may be used: a design is impossible until the catalog or the scenario changes.");
    }
    Ok(CommandOutput {
        stdout: text::render(&r),
        code: 0,
    })
}

/// The usable inductors and, unless quiet, every other one with its reason.
fn inductor_lists(
    r: &mut Report,
    p: &Problem,
    lc: &crate::inductors::InductorCatalog,
    quiet: bool,
) {
    use crate::units::format_si;
    r.section(format!(
        "Inductors that may be used ({}): {} of {}",
        lc.source,
        p.inductors_eligible.len(),
        lc.parts.len()
    ));
    r.table(Table::new(
        &["inductor", "L", "DCR", "rated", "saturation", "SRF"],
        p.inductors_eligible
            .iter()
            .map(|&i| {
                let l = &lc.parts[i];
                vec![
                    l.id.clone(),
                    format_si(l.inductance, "H"),
                    format_si(l.dcr, "Ω"),
                    format_si(l.rated_current, "A"),
                    format_si(l.saturation_current, "A"),
                    l.srf.map_or("-".into(), |f| format_si(f, "Hz")),
                ]
            })
            .collect(),
    ));
    if !quiet && !p.inductors_excluded.is_empty() {
        r.section(format!(
            "Inductors not used: {}",
            p.inductors_excluded.len()
        ));
        r.table(Table::new(
            &["inductor", "reason"],
            p.inductors_excluded
                .iter()
                .map(|e| vec![e.part.clone(), e.reason.clone()])
                .collect(),
        ));
    }
}

/// `assess`: a given bank (and filter, if given) against the target and
/// every limit.
pub fn assess(
    c: &Common,
    bank_arg: Option<&str>,
    bom: Option<&Path>,
    opts: &assessment::AssessOptions,
    filter_args: &assessment::FilterArgs,
) -> Result<CommandOutput> {
    if bom.is_some() && filter_args.any() {
        anyhow::bail!(
            "--bom with --inductor, --load-bank or --damping: a bill of materials holds the filter in its \
             `position` column; give --bank with the filter arguments, or the bill of materials alone"
        );
    }
    // A bill of materials is read first: its filter rows need the inductors.
    let bom_rows = match (bank_arg, bom) {
        (None, Some(f)) => Some(assessment::read_bom_rows(f)?),
        _ => None,
    };
    let need_inductors = filter_args.any()
        || bom_rows.as_ref().is_some_and(|rows| {
            rows.iter()
                .any(|r| r.position != assessment::Position::Converter)
        });
    let o = Overrides {
        need_inductors,
        ..Default::default()
    };
    let (p, run) = load(c, &o)?;
    if bank_arg.is_some() && bom.is_some() {
        anyhow::bail!("--bank and --bom: give one of them");
    }
    let (bank, filter) = match (bank_arg, bom, bom_rows) {
        (Some(b), _, _) => (
            assessment::parse_bank_arg(&p, b)?,
            assessment::parse_filter_args(
                &p,
                filter_args.inductor,
                filter_args.load_bank,
                filter_args.damping,
            )?,
        ),
        (None, Some(f), Some(rows)) => {
            assessment::bom_to_design(&p, &rows, &f.display().to_string())?
        }
        _ => anyhow::bail!("assess needs --bank PART=N,... or --bom FILE"),
    };
    let p = match filter {
        Some(f) => p.with_filter(f),
        None => p,
    };
    if p.filter.is_none() && bank.iter().all(|b| b.1 == 0) {
        match bom {
            Some(f) => anyhow::bail!(
                "{}: every count is zero: there is no bank to assess",
                f.display()
            ),
            None => anyhow::bail!("--bank: every count is zero: there is no bank to assess"),
        }
    }
    let a = assessment::assess_opts(&p, &bank, opts)?;
    let status = if a.all_ok { "pass" } else { "fail" };
    let mut doc = report::assessment_json(status, &a, &p);
    run.stamp(&mut doc);
    let mut r = Report::new("Bank assessment", Some(&run));
    r.push(model::header(&p));
    for s in model::assessment(&a, c.quiet) {
        r.push(s);
    }
    r.verdict(
        if a.all_ok {
            Verdict::Pass
        } else {
            Verdict::Fail
        },
        format!(
            "Verdict: {}",
            if a.all_ok {
                "PASS — the bank meets the target and every limit at the worst corner.".to_string()
            } else {
                let failed: Vec<&str> = a
                    .checks
                    .iter()
                    .filter(|c| !c.ok)
                    .map(|c| c.name.as_str())
                    .collect();
                format!("FAIL — {}", failed.join(", "))
            }
        ),
    );
    r.push(model::cautions());
    if let Some(dir) = &c.out {
        bank_files(&p, &bank, &a, &doc, &r)?.commit(dir)?;
    }
    Ok(CommandOutput::of(c, doc, &r, if a.all_ok { 0 } else { 1 }))
}

/// Show progress only on a terminal and never with --json.
pub(crate) fn show_progress(c: &Common) -> bool {
    use std::io::IsTerminal;
    !c.json && std::io::stderr().is_terminal()
}
