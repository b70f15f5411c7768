//! `rework`: the fewest changed line items when parts go.

use super::design::binding_text;
use super::{bank_files, bank_key, load, show_progress, CommandOutput, Common};
use crate::assessment::{self, Assessment};
use crate::load::Overrides;
use crate::optimize::{self, Found, Settings, Status};
use crate::problem::Problem;
use crate::report::model::{self, Report, Table, Verdict};
use crate::report::{self, text, OutFiles};
use anyhow::Result;
use serde_json::{json, Value};
use std::path::Path;

/// Why a line of a bill of materials missing from the catalog goes.
const NOT_IN_CATALOG: &str = "not in the catalog";

/// The bill of materials against today's catalog.
struct Current {
    /// The lines found in the catalog (catalog index, count).
    bank: Vec<(usize, u32)>,
    /// The lines that must go: (part id, count, reason), those missing
    /// from the catalog included.
    must_go: Vec<(String, u32, String)>,
    /// Catalog indices of the lines that must go (found in the catalog).
    forced: Vec<usize>,
}

impl Current {
    /// Every line is in the catalog.
    fn complete(&self) -> bool {
        self.must_go.iter().all(|r| r.2 != NOT_IN_CATALOG)
    }
}

/// `--drop` may only name parts on the bill of materials.
fn check_drops(rows: &[(String, u32, u64)], drop: &[String], src: &str) -> Result<()> {
    for d in drop {
        if !rows.iter().any(|r| &r.0 == d) {
            anyhow::bail!("--drop: part `{d}` is not on the bill of materials {src}");
        }
    }
    Ok(())
}

/// `--drop` of a post-filter part: rework keeps the filter, so say what
/// to do instead rather than "not on the bill of materials".
fn check_filter_drops(rows: &[assessment::BomRow], drop: &[String], src: &str) -> Result<()> {
    for d in drop {
        if let Some(r) = rows
            .iter()
            .find(|r| &r.part == d && r.position != assessment::Position::Converter)
        {
            anyhow::bail!(
                "--drop: part `{d}` is in the post-filter of {src} (line {}, position `{}`); rework replaces \
                 parts of the converter-side bank and keeps the filter as it is. To replace a filter part, run \
                 `design --filter on --exclude {d}`",
                r.line,
                r.position.name()
            );
        }
    }
    Ok(())
}

/// Report lines for post-filter parts whose catalog status says they
/// should go: rework keeps the filter, so the user must redesign it.
fn filter_status_notes(p: &Problem, rows: &[assessment::BomRow]) -> Vec<String> {
    use crate::catalog::Status as Life;
    let mut out = Vec::new();
    for r in rows
        .iter()
        .filter(|r| r.position != assessment::Position::Converter)
    {
        let status = if r.position == assessment::Position::Inductor {
            p.inductors
                .as_ref()
                .and_then(|c| c.position(&r.part).map(|i| c.parts[i].status))
        } else {
            p.catalog
                .position(&r.part)
                .map(|i| p.catalog.parts[i].status)
        };
        let gone = match status {
            Some(Life::Obsolete) => Some("obsolete"),
            Some(Life::Nrnd) if !p.scenario.selection.allow_nrnd => Some("nrnd"),
            _ => None,
        };
        if let Some(g) = gone {
            out.push(format!(
                "WARNING: the post-filter's {} `{}` is {g} in the catalog; rework keeps the filter as it is — \
                 redesign it with `design --filter on --exclude {}`",
                r.position.name(),
                r.part,
                r.part
            ));
        }
    }
    out
}

/// Which lines must go, and why: dropped, obsolete, nrnd (unless allowed),
/// no longer allowed for another reason, or missing from the catalog.
fn current_bank(p: &Problem, rows: &[(String, u32, u64)], drop: &[String]) -> Current {
    use crate::catalog::Status as Life;
    let mut cur = Current {
        bank: Vec::new(),
        must_go: Vec::new(),
        forced: Vec::new(),
    };
    for (id, n, _) in rows {
        let Some(i) = p.catalog.position(id) else {
            cur.must_go.push((id.clone(), *n, NOT_IN_CATALOG.into()));
            continue;
        };
        cur.bank.push((i, *n));
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
            cur.must_go.push((id.clone(), *n, r));
            cur.forced.push(i);
        }
    }
    cur
}

/// The fresh optimum for comparison, without the parts that must go.
fn fresh_optimum(
    p: &Problem,
    forced: &[usize],
    settings: &Settings,
) -> Result<Option<(Status, Found)>> {
    let mut sc = p.scenario.clone();
    for &i in forced {
        sc.selection.exclude.push(p.catalog.parts[i].id.clone());
    }
    let mut fp = Problem::new(sc, p.catalog.clone())?;
    fp.inductors = p.inductors.clone();
    fp.inductors_eligible = p.inductors_eligible.clone();
    fp.filter = p.filter.clone();
    let out = optimize::design(&fp, settings);
    Ok(out.found.map(|f| (out.status, f)))
}

/// The report's section on the bill of materials as it is.
fn current_section(r: &mut Report, src: &str, cur: &Current, before: Option<&Assessment>) {
    r.section(format!("Current bill of materials ({src})"));
    match before {
        Some(a) => {
            r.line(format!(
                "with today's catalog data{}: worst-corner ripple {} against {} — {}",
                if cur.complete() {
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
            ));
        }
        None => {
            r.line("none of its parts is in the catalog; it cannot be assessed");
        }
    }
    for (id, n, why) in &cur.must_go {
        r.line(format!("must replace {id} ×{n}: {why}"));
    }
}

/// The line items kept, removed and added (JSON rows).
#[derive(Default)]
struct Changes {
    kept: Vec<Value>,
    removed: Vec<Value>,
    added: Vec<Value>,
}

impl Changes {
    /// The changes from the current bank to `new_bank`.
    fn between(p: &Problem, cur: &Current, new_bank: &[(usize, u32)]) -> Changes {
        let id = |i: usize| p.catalog.parts[i].id.clone();
        let mut ch = Changes::default();
        for &(i, n) in &cur.bank {
            match new_bank.iter().find(|b| b.0 == i) {
                Some(&(_, m)) => ch
                    .kept
                    .push(json!({"part": id(i), "count_before": n, "count_after": m})),
                None => {
                    let why = cur
                        .must_go
                        .iter()
                        .find(|r| r.0 == id(i))
                        .map_or("replaced".to_string(), |r| r.2.clone());
                    ch.removed
                        .push(json!({"part": id(i), "count": n, "reason": why}));
                }
            }
        }
        for (pid, n, why) in cur.must_go.iter().filter(|r| r.2 == NOT_IN_CATALOG) {
            ch.removed
                .push(json!({"part": pid, "count": n, "reason": why}));
        }
        for &(i, m) in new_bank {
            if !cur.bank.iter().any(|b| b.0 == i) {
                ch.added.push(json!({"part": id(i), "count": m}));
            }
        }
        ch
    }

    /// Kept lines whose count changed.
    fn count_changes(&self) -> usize {
        self.kept
            .iter()
            .filter(|k| k["count_before"] != k["count_after"])
            .count()
    }

    /// The table of changes: change, part, count before and after, reason.
    fn table(&self) -> Table {
        let row = |v: &Value, what: &str| -> Vec<String> {
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
        for k in &self.kept {
            rows.push(row(
                k,
                if k["count_before"] == k["count_after"] {
                    "kept"
                } else {
                    "kept, count changed"
                },
            ));
        }
        rows.extend(self.removed.iter().map(|r| row(r, "removed")));
        rows.extend(self.added.iter().map(|r| {
            let mut v = row(r, "added");
            v[2] = "0".into();
            v
        }));
        Table::new(&["change", "part", "before", "after", "reason"], rows)
    }
}

/// No reachable bank: the lowest ripple, the binding limits and the
/// closest bank, in the report and as the JSON document.
fn infeasible_part(r: &mut Report, p: &Problem, settings: &Settings, quiet: bool) -> Result<Value> {
    r.verdict(Verdict::Infeasible, "Rework: INFEASIBLE — no bank reachable by changing line items meets the target under every limit.");
    let low = optimize::lowest_ripple(p, settings);
    let (lowest, closest) = (low.ripple_pp, low.bank);
    if lowest.is_finite() {
        r.line(format!(
            "  The lowest worst-corner ripple any allowed bank reached is {}.",
            text::mv(lowest)
        ));
    }
    let binding = optimize::binding(p, p.scenario.design_target());
    let mut doc = super::infeasible_doc(p, lowest.is_finite().then_some(lowest), &binding);
    let ld = optimize::lowest_deviation(p, settings);
    super::lowest_deviation_part(r, p, ld.as_ref(), &mut doc)?;
    r.line(binding_text(&binding).trim_end().to_string());
    for k in ["kept", "removed", "added"] {
        doc[k] = json!([]);
    }
    if let Some(b) = closest {
        let a = assessment::assess(p, &b)?;
        r.para("Closest bank (lowest ripple found)");
        for s in model::assessment(&a, quiet) {
            r.push(s);
        }
        doc["closest"] = report::assessment_json("closest", &a, p);
    }
    Ok(doc)
}

/// The verdict line of a rework that found a bank.
fn verdict(
    r: &mut Report,
    status: Status,
    still_good: bool,
    changes: usize,
    count_changes: usize,
    must_go: usize,
) {
    if still_good {
        r.verdict(
            Verdict::Pass,
            "Rework: nothing to change — the bank is still good.",
        );
        return;
    }
    r.verdict(
        Verdict::of_status(status),
        format!(
            "Rework: {} — {changes} changed line item(s), {count_changes} changed count(s){}",
            status.name().to_uppercase(),
            if status == Status::Optimal {
                " (the fewest possible; then the fewest changed counts, then the objective, then same-footprint replacements)"
            } else if changes == must_go {
                " (the fewest possible; parts to add came from a pool, so a cheaper change may exist)"
            } else {
                " (parts to add came from a pool: fewer or cheaper changes may exist)"
            }
        ),
    );
}

/// What the rework found.
struct Outcome {
    status: Status,
    new_bank: Vec<(usize, u32)>,
    /// Changed line items, those missing from the catalog included.
    changes: usize,
    still_good: bool,
}

/// The reworked bank in the report (verdict, changes, assessment, cost and
/// ripple before and after, the fresh optimum) and as the JSON document.
fn found_part(
    r: &mut Report,
    p: &Problem,
    cur: &Current,
    out: &Outcome,
    before: Option<&Assessment>,
    fresh: Option<&(Status, Found)>,
    quiet: bool,
) -> Result<Value> {
    let ch = Changes::between(p, cur, &out.new_bank);
    let a = assessment::assess(p, &out.new_bank)?;
    let count_changes = ch.count_changes();
    verdict(
        r,
        out.status,
        out.still_good,
        out.changes,
        count_changes,
        cur.must_go.len(),
    );
    r.table(ch.table());
    for s in model::assessment(&a, quiet) {
        r.push(s);
    }
    r.para(format!(
        "Cost before {} → after {:.3}; ripple before {} → after {}",
        before.map_or("—".into(), |b| format!("{:.3}", b.cost)),
        a.cost,
        before.map_or("—".into(), |b| text::mv(b.ripple_pp)),
        text::mv(a.ripple_pp)
    ));
    if let Some((st, f)) = fresh {
        let fa = assessment::assess(p, &f.bank)?;
        r.line(format!(
            "A fresh design without the replaced parts ({}) would cost {:.3}: {}",
            st.name(),
            fa.cost,
            bank_key(p, &f.bank)
        ));
    }
    let mut doc = report::assessment_json(out.status.name(), &a, p);
    doc["kept"] = json!(ch.kept);
    doc["removed"] = json!(ch.removed);
    doc["added"] = json!(ch.added);
    doc["changes"] = json!(out.changes);
    doc["count_changes"] = json!(count_changes);
    Ok(doc)
}

/// The keys every rework document has: `still_good`, `before`, `fresh_optimum`.
fn common_keys(
    doc: &mut Value,
    p: &Problem,
    still_good: bool,
    complete: bool,
    before: Option<&Assessment>,
    fresh: Option<&(Status, Found)>,
) -> Result<()> {
    doc["still_good"] = json!(still_good);
    doc["before"] = match before {
        Some(b) => {
            json!({"ripple_pp": b.ripple_pp, "cost": b.cost, "meets_target": b.meets_target, "all_ok": b.all_ok, "complete": complete})
        }
        None => Value::Null,
    };
    doc["fresh_optimum"] = match fresh {
        Some((st, f)) => {
            let fa = assessment::assess(p, &f.bank)?;
            json!({"status": st.name(), "cost": fa.cost, "bank": fa.bank, "bank_key": bank_key(p, &f.bank)})
        }
        None => Value::Null,
    };
    Ok(())
}

/// `--out`: the reworked bank's files, or with no bank the report alone.
fn write_files(
    dir: &Path,
    p: &Problem,
    new_bank: Option<&[(usize, u32)]>,
    doc: &Value,
    r: &mut Report,
) -> Result<()> {
    match new_bank {
        Some(bank) => {
            let a = assessment::assess(p, bank)?;
            bank_files(p, bank, &a, doc, r)?.commit(dir)
        }
        None => {
            let mut files = OutFiles::default();
            files.add("report.json", report::json_text(doc.clone()));
            r.title = "Bank rework (infeasible)".into();
            files.add("report.html", report::html::render(r, &[]));
            files.commit(dir)
        }
    }
}

/// `rework`: the fewest changed line items when parts of a bill of materials go.
pub fn rework(c: &Common, bom: &Path, drop: &[String]) -> Result<CommandOutput> {
    let all_rows = assessment::read_bom_rows(bom)?;
    let has_filter = all_rows
        .iter()
        .any(|r| r.position != assessment::Position::Converter);
    let o = Overrides {
        need_inductors: has_filter,
        ..Default::default()
    };
    let (p, run) = load(c, &o)?;
    let quiet = c.quiet;
    let src = bom.display().to_string();
    // A filtered design keeps its filter: the converter-side bank is reworked
    // with the filter fixed behind it.
    let p = if has_filter {
        match assessment::bom_to_design(&p, &all_rows, &src)?.1 {
            Some(f) => p.with_filter(f),
            None => p,
        }
    } else {
        p
    };
    check_filter_drops(&all_rows, drop, &src)?;
    let filter_notes = filter_status_notes(&p, &all_rows);
    let rows: Vec<(String, u32, u64)> = all_rows
        .into_iter()
        .filter(|r| r.position == assessment::Position::Converter)
        .map(|r| (r.part, r.count, r.line))
        .collect();
    check_drops(&rows, drop, &src)?;
    let cur = current_bank(&p, &rows, drop);
    // The current bank with today's catalog data.
    // Behind a filter an empty converter-side bank is a design (the
    // converter's own capacitance there is enough).
    let before = if cur.bank.is_empty() && p.filter.is_none() {
        None
    } else {
        Some(assessment::assess(&p, &cur.bank)?)
    };
    let still_good = cur.must_go.is_empty() && before.as_ref().is_some_and(|a| a.all_ok);
    let settings = Settings {
        progress: show_progress(c),
        ..Default::default()
    };
    let fresh = fresh_optimum(&p, &cur.forced, &settings)?;
    let mut r = Report::new("Bank rework", Some(&run));
    r.push(model::header(&p));
    r.line(format!(
        "Objective: fewest changed line items, then {}",
        p.scenario.selection.objective.name()
    ));
    current_section(&mut r, &src, &cur, before.as_ref());
    for n in &filter_notes {
        r.line(n.clone());
    }
    let out = if still_good {
        Outcome {
            status: Status::Optimal,
            new_bank: cur.bank.clone(),
            changes: 0,
            still_good,
        }
    } else {
        let rw = optimize::rework(&p, &cur.bank, &cur.forced, &settings);
        Outcome {
            status: rw.status,
            new_bank: rw.found.map(|f| f.bank).unwrap_or_default(),
            // Lines missing from the catalog are removed too.
            changes: rw.changes + cur.must_go.len() - cur.forced.len(),
            still_good,
        }
    };
    let found = out.status != Status::Infeasible;
    let mut doc = if found {
        found_part(
            &mut r,
            &p,
            &cur,
            &out,
            before.as_ref(),
            fresh.as_ref(),
            quiet,
        )?
    } else {
        infeasible_part(&mut r, &p, &settings, quiet)?
    };
    common_keys(
        &mut doc,
        &p,
        still_good,
        cur.complete(),
        before.as_ref(),
        fresh.as_ref(),
    )?;
    if let Some(w) = doc.get_mut("warnings").and_then(|w| w.as_array_mut()) {
        w.extend(filter_notes.iter().map(|n| json!(n)));
    }
    if !c.quiet {
        if let Some(x) = model::excluded(&p) {
            r.push(x);
        }
    }
    r.push(model::cautions());
    run.stamp(&mut doc);
    if let Some(dir) = &c.out {
        write_files(dir, &p, found.then_some(&out.new_bank[..]), &doc, &mut r)?;
    }
    Ok(CommandOutput::of(c, doc, &r, if found { 0 } else { 1 }))
}
