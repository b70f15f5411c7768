//! The commands: each takes parsed options and returns the text for stdout
//! and the exit status (0 yes, 1 a well-formed question answered no).
//! Errors (exit 2) are returned as `Err`.

use crate::assessment::{self, Assessment};
use crate::load::{self, Overrides};
use crate::optimize;
use crate::problem::Problem;
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
pub fn bank_files(
    problem: &Problem,
    bank: &[(usize, u32)],
    a: &Assessment,
    doc: &serde_json::Value,
    title: &str,
    body: &str,
) -> Result<OutFiles> {
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
        return Ok(Outcome {
            stdout: report::json_text(doc),
            code: 0,
        });
    }
    let mut o = String::new();
    let _ = writeln!(o, "Scenario {} is valid.", p.scenario.source);
    let _ = writeln!(
        o,
        "Catalog {} is valid: {} parts.",
        p.catalog.source,
        p.catalog.parts.len()
    );
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
    if bank.iter().all(|b| b.1 == 0) {
        match bom {
            Some(f) => anyhow::bail!(
                "{}: every count is zero: there is no bank to assess",
                f.display()
            ),
            None => anyhow::bail!("--bank: every count is zero: there is no bank to assess"),
        }
    }
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
            let failed: Vec<&str> = a
                .checks
                .iter()
                .filter(|c| !c.ok)
                .map(|c| c.name.as_str())
                .collect();
            format!("FAIL — {}", failed.join(", "))
        }
    );
    body.push_str(&text::cautions());
    if let Some(dir) = &c.out {
        bank_files(&p, &bank, &a, &doc, "Bank assessment", &body)?.commit(dir)?;
    }
    let stdout = if c.json { report::json_text(doc) } else { body };
    Ok(Outcome {
        stdout,
        code: if a.all_ok { 0 } else { 1 },
    })
}

/// Show progress only on a terminal and never with --json.
pub fn show_progress(c: &Common) -> bool {
    use std::io::IsTerminal;
    !c.json && std::io::stderr().is_terminal()
}

fn objective_arg(o: Option<&str>) -> Result<Option<Objective>> {
    match o {
        None => Ok(None),
        Some(t) => Objective::parse(t)
            .map(Some)
            .ok_or_else(|| anyhow::anyhow!("--objective: `{t}` is not one of cost, area, count")),
    }
}

/// Plain words for the limits that stop a design.
fn binding_text(b: &optimize::Binding) -> String {
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

/// Text and JSON for a design outcome.
pub fn design_report(
    p: &Problem,
    out: &optimize::Outcome,
    what: &str,
) -> Result<(String, serde_json::Value, Option<Assessment>)> {
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
                    "the best bank under the model (every line set examined or bounded)".to_string()
                } else if st.stopped {
                    format!("a verified bank; the search stopped at its limit of {} exact evaluations before proving it the best", st.evaluations)
                } else {
                    "a verified bank; the catalog was too large to prove it the best".to_string()
                }
            );
            if f.bank.is_empty() {
                let _ = writeln!(
                    body,
                    "The converter's own output capacitance already meets the target: no capacitors need to be added."
                );
            }
            body.push_str(&text::assessment(&a));
            let mut doc = report::assessment_json(out.status.name(), &a, p);
            doc["search"] = serde_json::to_value(st)?;
            (doc, Some(a))
        }
        None => {
            let _ = writeln!(
                body,
                "\n{what}: INFEASIBLE — no bank meets the target under every limit."
            );
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
            body.push_str(&binding_text(&out.binding));
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
                "binding": out.binding.limits,
                "binding_together": out.binding.together,
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
    let o = Overrides {
        objective: objective_arg(objective)?,
        exclude: exclude.to_vec(),
    };
    let p = load(c, &o)?;
    let settings = optimize::Settings {
        progress: show_progress(c),
        ..Default::default()
    };
    let out = optimize::design(&p, &settings);
    let (body, doc, a) = design_report(&p, &out, "Design")?;
    if let Some(dir) = &c.out {
        let files = match (&out.found, &a) {
            (Some(f), Some(a)) => bank_files(&p, &f.bank, a, &doc, "Bank design", &body)?,
            _ => {
                let mut files = OutFiles::default();
                files.add("report.json", report::json_text(doc.clone()));
                files.add(
                    "report.html",
                    report::html::page("Bank design (infeasible)", &body, &[]),
                );
                files
            }
        };
        files.commit(dir)?;
    }
    let code = if out.found.is_some() { 0 } else { 1 };
    let stdout = if c.json { report::json_text(doc) } else { body };
    Ok(Outcome { stdout, code })
}

fn volts_arg(name: &str, v: Option<&str>) -> Result<Option<f64>> {
    match v {
        None => Ok(None),
        Some(t) => {
            let x = crate::units::parse(t, crate::units::Unit::Volt)
                .map_err(|e| anyhow::anyhow!("--{name}: {e}"))?;
            if !(x > 0.0) {
                anyhow::bail!("--{name}: {x} V must be above zero");
            }
            Ok(Some(x))
        }
    }
}

/// Default loose end of a trade-off, as a multiple of the scenario's target,
/// when the smallest allowed bank ripples far more than that.
pub const TRADEOFF_SPAN: f64 = 10.0;

/// `PART=N,PART=N` in catalog order: equal strings mean the same bank.
pub fn bank_key(p: &Problem, bank: &[(usize, u32)]) -> String {
    let mut b: Vec<(usize, u32)> = bank.iter().copied().filter(|x| x.1 > 0).collect();
    b.sort();
    b.iter()
        .map(|&(i, n)| format!("{}={n}", p.catalog.parts[i].id))
        .collect::<Vec<_>>()
        .join(",")
}

pub fn tradeoff(
    c: &Common,
    from: Option<&str>,
    to: Option<&str>,
    points: usize,
) -> Result<Outcome> {
    use indicatif::{ProgressBar, ProgressStyle};
    let p = load(c, &Overrides::default())?;
    if !(2..=200).contains(&points) {
        anyhow::bail!("--points: {points} must be from 2 to 200");
    }
    let from = volts_arg("from", from)?;
    let to = volts_arg("to", to)?;
    let show = show_progress(c);
    let lo = match from {
        Some(v) => v,
        None => {
            let (r, _) = optimize::lowest_ripple(&p);
            if !r.is_finite() {
                anyhow::bail!(
                    "no bank can be built from the eligible parts; see `ripplebank validate`"
                );
            }
            r
        }
    };
    let mut note = String::new();
    let hi = match to {
        Some(v) => v,
        None => {
            let smallest = optimize::smallest_bank(&p)
                .filter(|f| f.ripple_pp.is_finite())
                .ok_or_else(|| {
                    anyhow::anyhow!(
                        "no bank satisfies the limits other than ripple; see `ripplebank validate`"
                    )
                })?;
            let r = smallest.ripple_pp;
            let cap = TRADEOFF_SPAN * p.scenario.target.ripple_pp.0;
            if r > cap && cap > lo {
                note = format!(
                    "The smallest allowed bank ({}) ripples {}; the range stops at {} ({}× the target). Use --to to extend it.",
                    if smallest.bank.is_empty() { "no added part".to_string() } else { bank_key(&p, &smallest.bank) },
                    text::mv(r),
                    text::mv(cap),
                    TRADEOFF_SPAN
                );
                cap
            } else {
                r
            }
        }
    };
    if hi <= lo * (1.0 + 1e-6) {
        match (from.is_some(), to.is_some()) {
            (true, true) => anyhow::bail!(
                "--to ({}) must be above --from ({})",
                text::mv(hi),
                text::mv(lo)
            ),
            (true, false) => anyhow::bail!(
                "--from ({}) is above the default upper end ({}); give --to as well",
                text::mv(lo),
                text::mv(hi)
            ),
            (false, true) => anyhow::bail!(
                "--to ({}) is below the lowest ripple found ({}); no target in that range can be met",
                text::mv(hi),
                text::mv(lo)
            ),
            (false, false) => {}
        }
    }
    let (lo, hi) = if hi > lo * (1.0 + 1e-6) {
        (lo, hi)
    } else {
        (lo, lo * 2.0)
    };
    let targets: Vec<f64> = (0..points)
        .map(|j| lo * (hi / lo).powf(j as f64 / (points - 1) as f64))
        .collect();
    let pb = if show {
        ProgressBar::new(points as u64)
    } else {
        ProgressBar::hidden()
    };
    pb.set_style(
        ProgressStyle::with_template("tradeoff [{bar:30}] {pos}/{len} targets ({elapsed})")
            .expect("template")
            .progress_chars("=> "),
    );
    // Each point gets a share of the work a single design may take.
    let settings = optimize::Settings {
        explain: false,
        max_evaluations: 1_000_000,
        ..Default::default()
    };
    // The targets are independent searches: spread them over the cores.
    let workers = std::thread::available_parallelism()
        .map_or(1, |n| n.get())
        .min(targets.len());
    // Each worker takes the next unsolved target, so tight (slow) and loose
    // (fast) targets share the cores evenly.
    let next = std::sync::atomic::AtomicUsize::new(0);
    let slots: std::sync::Mutex<Vec<Option<optimize::Outcome>>> =
        std::sync::Mutex::new(vec![None; targets.len()]);
    std::thread::scope(|scope| {
        for _ in 0..workers {
            scope.spawn(|| loop {
                let j = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                let Some(&t) = targets.get(j) else { break };
                let out = optimize::design_for(&p, t, &settings);
                slots.lock().expect("no worker panics")[j] = Some(out);
                pb.inc(1);
            });
        }
    });
    pb.finish_and_clear();
    let slots = slots.into_inner().expect("no worker panics");
    let mut results: Vec<(f64, optimize::Outcome)> = targets
        .iter()
        .copied()
        .zip(slots.into_iter().map(|o| o.expect("every target solved")))
        .collect();
    // A bank that meets a tighter target meets every looser one: keep the
    // front monotone when the search could not prove a point optimal.
    for j in 1..results.len() {
        let prev = results[j - 1].1.found.clone();
        if let (Some(pf), Some(cf)) = (prev, &results[j].1.found) {
            if optimize::better(&pf.key, &cf.key) {
                results[j].1.found = Some(pf);
                results[j].1.status = optimize::Status::Feasible;
            }
        } else if let (Some(pf), None) = (results[j - 1].1.found.clone(), &results[j].1.found) {
            results[j].1.found = Some(pf);
            results[j].1.status = optimize::Status::Feasible;
        }
    }
    let mut json_points = Vec::new();
    let mut plot_points = Vec::new();
    let mut rows = Vec::new();
    let mut csv = csv::Writer::from_writer(Vec::new());
    csv.write_record([
        "target",
        "status",
        "ripple_pp",
        "cost",
        "area",
        "count",
        "lines",
        "bank",
    ])?;
    let mut prev_cost: Option<(f64, f64)> = None;
    for (t, out) in &results {
        let (bank_json, ripple, cost, area, count, key) = match &out.found {
            Some(f) => {
                let a = assessment::assess(&p, &f.bank)?;
                (
                    serde_json::to_value(&a.bank)?,
                    Some(a.ripple_pp),
                    Some(a.cost),
                    Some(a.area),
                    Some(a.count),
                    bank_key(&p, &f.bank),
                )
            }
            None => (json!([]), None, None, None, None, String::new()),
        };
        json_points.push(json!({
            "target": t, "status": out.status.name(), "ripple_pp": ripple, "cost": cost, "area": area,
            "count": count, "bank": bank_json,
        }));
        csv.write_record([
            format!("{t:e}"),
            out.status.name().to_string(),
            ripple.map_or(String::new(), |r| format!("{r:e}")),
            cost.map_or(String::new(), |x| format!("{x:.4}")),
            area.map_or(String::new(), |x| format!("{x:.3}")),
            count.map_or(String::new(), |x| x.to_string()),
            out.found
                .as_ref()
                .map_or(String::new(), |f| f.bank.len().to_string()),
            key.clone(),
        ])?;
        let per_mv = match (prev_cost, cost) {
            (Some((pt, pc)), Some(cc)) if (t - pt) > 0.0 => {
                format!("{:.4}", (pc - cc) / ((t - pt) * 1e3))
            }
            _ => "—".into(),
        };
        if let Some(cc) = cost {
            prev_cost = Some((*t, cc));
        }
        rows.push(vec![
            text::mv(*t),
            out.status.name().to_string(),
            ripple.map_or("—".into(), text::mv),
            cost.map_or("—".into(), |x| format!("{x:.3}")),
            per_mv,
            area.map_or("—".into(), |x| format!("{x:.1}")),
            count.map_or("—".into(), |x| x.to_string()),
            if key.is_empty() {
                "no bank meets this target".into()
            } else {
                key.clone()
            },
        ]);
        plot_points.push(report::plots::TradeoffPoint {
            target: *t,
            status: out.status.name().to_string(),
            ripple_pp: ripple,
            cost,
            area,
            count,
            bank_key: key,
        });
    }
    let mut body = text::header(&p);
    let _ = writeln!(body, "Objective: {}", p.scenario.selection.objective.name());
    let _ = writeln!(
        body,
        "\nTrade-off: {} ripple targets from {} to {} (geometric)",
        points,
        text::mv(lo),
        text::mv(hi)
    );
    body.push_str(&text::table(
        &[
            "target",
            "status",
            "ripple",
            "cost",
            "cost per mV",
            "mm²",
            "n",
            "bank",
        ],
        &rows,
    ));
    let _ = writeln!(
        body,
        "\n'cost per mV' is what each millivolt costs between this row and the one above: the extra cost of the \
         tighter bank divided by the millivolts gained. Every bank is verified by the evaluator at its target."
    );
    if !note.is_empty() {
        let _ = writeln!(body, "{note}");
    }
    body.push_str(&text::cautions());
    let doc = json!({
        "status": "done",
        "scenario": p.scenario.name,
        "objective": p.scenario.selection.objective.name(),
        "from": lo, "to": hi,
        "points": json_points,
        "excluded": p.excluded,
        "warnings": p.warnings.iter().cloned().chain((!note.is_empty()).then(|| note.clone())).collect::<Vec<_>>(),
    });
    if let Some(dir) = &c.out {
        let plots =
            report::plots::tradeoff_plots(&plot_points, Some(p.scenario.target.ripple_pp.0))?;
        let mut files = OutFiles::default();
        files.add(
            "tradeoff.csv",
            csv.into_inner().map_err(|e| anyhow::anyhow!("{e}"))?,
        );
        files.add("report.json", report::json_text(doc.clone()));
        files.add(
            "report.html",
            report::html::page("Ripple trade-off", &body, &plots),
        );
        for (name, svg) in plots {
            files.add(&name, svg);
        }
        files.commit(dir)?;
    }
    // No target in the range can be met: the answer is no.
    let code = if results.iter().any(|(_, o)| o.found.is_some()) {
        0
    } else {
        1
    };
    let stdout = if c.json { report::json_text(doc) } else { body };
    Ok(Outcome { stdout, code })
}

pub fn rework(c: &Common, bom: &Path, drop: &[String]) -> Result<Outcome> {
    use crate::catalog::Status as Life;
    let p = load(c, &Overrides::default())?;
    let src = bom.display().to_string();
    let rows = assessment::read_bom(bom)?;
    for d in drop {
        if !rows.iter().any(|r| &r.0 == d) {
            anyhow::bail!("--drop: part `{d}` is not on the bill of materials {src}");
        }
    }
    // Which lines must go, and why.
    let mut current: Vec<(usize, u32)> = Vec::new();
    let mut removed_forced: Vec<(String, u32, String)> = Vec::new();
    let mut forced: Vec<usize> = Vec::new();
    for (id, n, _) in &rows {
        let Some(i) = p.catalog.position(id) else {
            removed_forced.push((id.clone(), *n, "not in the catalog".into()));
            continue;
        };
        current.push((i, *n));
        let part = &p.catalog.parts[i];
        let reason = if drop.contains(id) {
            Some("dropped (--drop)".to_string())
        } else if part.status == Life::Obsolete {
            Some("obsolete".to_string())
        } else if part.status == Life::Nrnd && !p.scenario.selection.allow_nrnd {
            Some("nrnd (not recommended for new designs)".to_string())
        } else {
            // A kept part must still be allowed for reasons other than status.
            crate::problem::ineligibility(&p.scenario, part, p.scenario.selection.objective)
                .map(|r| format!("no longer allowed: {r}"))
        };
        if let Some(r) = reason {
            removed_forced.push((id.clone(), *n, r));
            forced.push(i);
        }
    }
    // The current bank with today's catalog data.
    let before = if current.is_empty() {
        None
    } else {
        Some(assessment::assess(&p, &current)?)
    };
    let complete = removed_forced.iter().all(|r| r.2 != "not in the catalog");
    let still_good = removed_forced.is_empty() && before.as_ref().is_some_and(|a| a.all_ok);
    let settings = optimize::Settings {
        progress: show_progress(c),
        ..Default::default()
    };
    // The fresh optimum for comparison, without the parts that must go.
    let fresh = {
        let mut sc = p.scenario.clone();
        for &i in &forced {
            sc.selection.exclude.push(p.catalog.parts[i].id.clone());
        }
        let fp = Problem::new(sc, p.catalog.clone())?;
        let out = optimize::design(
            &fp,
            &optimize::Settings {
                explain: false,
                ..settings.clone()
            },
        );
        out.found.map(|f| (out.status, f))
    };
    let mut body = text::header(&p);
    let _ = writeln!(
        body,
        "Objective: fewest changed line items, then {}",
        p.scenario.selection.objective.name()
    );
    let _ = writeln!(body, "\nCurrent bill of materials ({src})");
    match &before {
        Some(a) => {
            let _ = writeln!(
                body,
                "  with today's catalog data{}: worst-corner ripple {} against {} — {}",
                if complete {
                    ""
                } else {
                    " (parts missing from the catalog left out)"
                },
                text::mv(a.ripple_pp),
                text::mv(a.target_ripple_pp),
                if a.all_ok {
                    "meets the target and every limit"
                } else {
                    "does NOT meet the target and every limit"
                }
            );
        }
        None => {
            let _ = writeln!(
                body,
                "  none of its parts is in the catalog; it cannot be assessed"
            );
        }
    }
    for (id, n, why) in &removed_forced {
        let _ = writeln!(body, "  must replace {id} ×{n}: {why}");
    }
    let (status, new_bank, changes) = if still_good {
        (optimize::Status::Optimal, current.clone(), 0)
    } else {
        let r = optimize::rework(&p, &current, &forced, &settings);
        (
            r.status,
            r.found.map(|f| f.bank).unwrap_or_default(),
            // Lines missing from the catalog are removed too.
            r.changes + removed_forced.len() - forced.len(),
        )
    };
    let id = |i: usize| p.catalog.parts[i].id.clone();
    let mut kept = Vec::new();
    let mut removed = Vec::new();
    let mut added = Vec::new();
    if status != optimize::Status::Infeasible {
        for &(i, n) in &current {
            match new_bank.iter().find(|b| b.0 == i) {
                Some(&(_, m)) => {
                    kept.push(json!({"part": id(i), "count_before": n, "count_after": m}))
                }
                None => {
                    let why = removed_forced
                        .iter()
                        .find(|r| r.0 == id(i))
                        .map_or("replaced".to_string(), |r| r.2.clone());
                    removed.push(json!({"part": id(i), "count": n, "reason": why}));
                }
            }
        }
        for (pid, n, why) in removed_forced
            .iter()
            .filter(|r| r.2 == "not in the catalog")
        {
            removed.push(json!({"part": pid, "count": n, "reason": why}));
        }
        for &(i, m) in &new_bank {
            if !current.iter().any(|b| b.0 == i) {
                added.push(json!({"part": id(i), "count": m}));
            }
        }
    }
    let mut doc;
    let code;
    if status == optimize::Status::Infeasible {
        let _ = writeln!(body, "\nRework: INFEASIBLE — no bank reachable by changing line items meets the target under every limit.");
        let (r, closest) = optimize::lowest_ripple(&p);
        if r.is_finite() {
            let _ = writeln!(
                body,
                "  The lowest worst-corner ripple any allowed bank reached is {}.",
                text::mv(r)
            );
        }
        let binding = optimize::binding(&p, p.scenario.target.ripple_pp.0);
        body.push_str(&binding_text(&binding));
        doc = json!({
            "status": "infeasible", "bank": [], "ripple_pp": null, "ripple_pp_typical": null, "ripple_pp_full_bandwidth": null,
            "cost": null, "area": null, "count": 0, "lines": 0,
            "capacitance_nominal_total": 0.0, "capacitance_max_total": 0.0, "capacitance_effective_total": 0.0,
            "ripple_current": [], "excluded": p.excluded, "warnings": p.warnings,
            "best_ripple_pp": r.is_finite().then_some(r),
            "binding": binding.limits,
            "binding_together": binding.together,
            "kept": [], "removed": [], "added": [],
        });
        if let Some(b) = closest {
            let a = assessment::assess(&p, &b)?;
            body.push_str("\nClosest bank (lowest ripple found)");
            body.push_str(&text::assessment(&a));
            doc["closest"] = report::assessment_json("closest", &a, &p);
        }
        code = 1;
    } else {
        let a = assessment::assess(&p, &new_bank)?;
        if still_good {
            let _ = writeln!(
                body,
                "\nRework: nothing to change — the bank is still good."
            );
        } else {
            let _ = writeln!(
                body,
                "\nRework: {} — {changes} changed line item(s){}",
                status.name().to_uppercase(),
                if status == optimize::Status::Optimal {
                    " (the fewest possible; cheapest among those)"
                } else if changes == removed_forced.len() {
                    " (the fewest possible; parts to add came from a pool, so a cheaper change may exist)"
                } else {
                    " (parts to add came from a pool: fewer or cheaper changes may exist)"
                }
            );
        }
        let row = |v: &serde_json::Value, what: &str| -> Vec<String> {
            vec![
                what.to_string(),
                v["part"].as_str().unwrap_or("").to_string(),
                v.get("count_before")
                    .or(v.get("count"))
                    .map_or(String::new(), |x| x.to_string()),
                v.get("count_after").map_or(
                    if what == "removed" {
                        "0".into()
                    } else {
                        v["count"].to_string()
                    },
                    |x| x.to_string(),
                ),
                v.get("reason")
                    .and_then(|r| r.as_str())
                    .unwrap_or("")
                    .to_string(),
            ]
        };
        let mut rows: Vec<Vec<String>> = Vec::new();
        for k in &kept {
            rows.push(row(
                k,
                if k["count_before"] == k["count_after"] {
                    "kept"
                } else {
                    "kept, count changed"
                },
            ));
        }
        rows.extend(removed.iter().map(|r| row(r, "removed")));
        rows.extend(added.iter().map(|r| {
            let mut v = row(r, "added");
            v[2] = "0".into();
            v
        }));
        body.push_str(&text::table(
            &["change", "part", "before", "after", "reason"],
            &rows,
        ));
        body.push_str(&text::assessment(&a));
        let before_cost = before.as_ref().map(|b| b.cost);
        let _ = writeln!(
            body,
            "\nCost before {} → after {:.3}; ripple before {} → after {}",
            before_cost.map_or("—".into(), |c| format!("{c:.3}")),
            a.cost,
            before
                .as_ref()
                .map_or("—".into(), |b| text::mv(b.ripple_pp)),
            text::mv(a.ripple_pp)
        );
        if let Some((st, f)) = &fresh {
            let fa = assessment::assess(&p, &f.bank)?;
            let _ = writeln!(
                body,
                "A fresh design without the replaced parts ({}) would cost {:.3}: {}",
                st.name(),
                fa.cost,
                bank_key(&p, &f.bank)
            );
        }
        doc = report::assessment_json(status.name(), &a, &p);
        doc["kept"] = json!(kept);
        doc["removed"] = json!(removed);
        doc["added"] = json!(added);
        doc["changes"] = json!(changes);
        code = 0;
    }
    doc["still_good"] = json!(still_good);
    doc["before"] = match &before {
        Some(b) => {
            json!({"ripple_pp": b.ripple_pp, "cost": b.cost, "meets_target": b.meets_target, "all_ok": b.all_ok, "complete": complete})
        }
        None => serde_json::Value::Null,
    };
    doc["fresh_optimum"] = match &fresh {
        Some((st, f)) => {
            json!({"status": st.name(), "cost": assessment::assess(&p, &f.bank)?.cost, "bank": bank_key(&p, &f.bank)})
        }
        None => serde_json::Value::Null,
    };
    body.push_str(&text::excluded(&p));
    body.push_str(&text::cautions());
    if let Some(dir) = &c.out {
        if code == 0 {
            let a = assessment::assess(&p, &new_bank)?;
            bank_files(&p, &new_bank, &a, &doc, "Bank rework", &body)?.commit(dir)?;
        } else {
            let mut files = OutFiles::default();
            files.add("report.json", report::json_text(doc.clone()));
            files.add(
                "report.html",
                report::html::page("Bank rework (infeasible)", &body, &[]),
            );
            files.commit(dir)?;
        }
    }
    let stdout = if c.json { report::json_text(doc) } else { body };
    Ok(Outcome { stdout, code })
}
