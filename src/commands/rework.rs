//! `rework`: the fewest changed line items when parts go.

use super::design::binding_text;
use super::{bank_files, bank_key, load, show_progress, CommandOutput, Common};
use crate::assessment::{self};
use crate::load::Overrides;
use crate::optimize;
use crate::problem::Problem;
use crate::report::model::{self, Report, Table, Verdict};
use crate::report::{self, text, OutFiles};
use anyhow::Result;
use serde_json::json;
use std::path::Path;

/// `rework`: the fewest changed line items when parts of a bill of materials go.
pub fn rework(c: &Common, bom: &Path, drop: &[String]) -> Result<CommandOutput> {
    use crate::catalog::Status as Life;
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
    let rows: Vec<(String, u32, u64)> = all_rows
        .into_iter()
        .filter(|r| r.position == assessment::Position::Converter)
        .map(|r| (r.part, r.count, r.line))
        .collect();
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
        let mut fp = Problem::new(sc, p.catalog.clone())?;
        fp.inductors = p.inductors.clone();
        fp.inductors_eligible = p.inductors_eligible.clone();
        fp.filter = p.filter.clone();
        let out = optimize::design(&fp, &settings);
        out.found.map(|f| (out.status, f))
    };
    let mut r = Report::new("Bank rework", Some(&run));
    r.push(model::header(&p));
    r.line(format!(
        "Objective: fewest changed line items, then {}",
        p.scenario.selection.objective.name()
    ));
    r.section(format!("Current bill of materials ({src})"));
    match &before {
        Some(a) => {
            r.line(format!(
                "with today's catalog data{}: worst-corner ripple {} against {} — {}",
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
            ));
        }
        None => {
            r.line("none of its parts is in the catalog; it cannot be assessed");
        }
    }
    for (id, n, why) in &removed_forced {
        r.line(format!("must replace {id} ×{n}: {why}"));
    }
    let (status, new_bank, changes) = if still_good {
        (optimize::Status::Optimal, current.clone(), 0)
    } else {
        let rw = optimize::rework(&p, &current, &forced, &settings);
        (
            rw.status,
            rw.found.map(|f| f.bank).unwrap_or_default(),
            // Lines missing from the catalog are removed too.
            rw.changes + removed_forced.len() - forced.len(),
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
        r.verdict(Verdict::Infeasible, "Rework: INFEASIBLE — no bank reachable by changing line items meets the target under every limit.");
        let low = optimize::lowest_ripple(&p, &settings);
        let (lowest, closest) = (low.ripple_pp, low.bank);
        if lowest.is_finite() {
            r.line(format!(
                "  The lowest worst-corner ripple any allowed bank reached is {}.",
                text::mv(lowest)
            ));
        }
        let binding = optimize::binding(&p, p.scenario.design_target());
        r.line(binding_text(&binding).trim_end().to_string());
        doc = super::infeasible_doc(&p, lowest.is_finite().then_some(lowest), &binding);
        for k in ["kept", "removed", "added"] {
            doc[k] = json!([]);
        }
        if let Some(b) = closest {
            let a = assessment::assess(&p, &b)?;
            r.para("Closest bank (lowest ripple found)");
            for s in model::assessment(&a, quiet) {
                r.push(s);
            }
            doc["closest"] = report::assessment_json("closest", &a, &p);
        }
        code = 1;
    } else {
        let a = assessment::assess(&p, &new_bank)?;
        let count_changes = kept
            .iter()
            .filter(|k| k["count_before"] != k["count_after"])
            .count();
        if still_good {
            r.verdict(
                Verdict::Pass,
                "Rework: nothing to change — the bank is still good.",
            );
        } else {
            r.verdict(
                Verdict::of_status(status),
                format!(
                "Rework: {} — {changes} changed line item(s), {count_changes} changed count(s){}",
                status.name().to_uppercase(),
                if status == optimize::Status::Optimal {
                    " (the fewest possible; then the fewest changed counts, then the objective, then same-footprint replacements)"
                } else if changes == removed_forced.len() {
                    " (the fewest possible; parts to add came from a pool, so a cheaper change may exist)"
                } else {
                    " (parts to add came from a pool: fewer or cheaper changes may exist)"
                }
            ));
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
        r.table(Table::new(
            &["change", "part", "before", "after", "reason"],
            rows,
        ));
        for s in model::assessment(&a, quiet) {
            r.push(s);
        }
        let before_cost = before.as_ref().map(|b| b.cost);
        r.para(format!(
            "Cost before {} → after {:.3}; ripple before {} → after {}",
            before_cost.map_or("—".into(), |c| format!("{c:.3}")),
            a.cost,
            before
                .as_ref()
                .map_or("—".into(), |b| text::mv(b.ripple_pp)),
            text::mv(a.ripple_pp)
        ));
        if let Some((st, f)) = &fresh {
            let fa = assessment::assess(&p, &f.bank)?;
            r.line(format!(
                "A fresh design without the replaced parts ({}) would cost {:.3}: {}",
                st.name(),
                fa.cost,
                bank_key(&p, &f.bank)
            ));
        }
        doc = report::assessment_json(status.name(), &a, &p);
        doc["kept"] = json!(kept);
        doc["removed"] = json!(removed);
        doc["added"] = json!(added);
        doc["changes"] = json!(changes);
        doc["count_changes"] = json!(count_changes);
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
            let fa = assessment::assess(&p, &f.bank)?;
            json!({"status": st.name(), "cost": fa.cost, "bank": fa.bank, "bank_key": bank_key(&p, &f.bank)})
        }
        None => serde_json::Value::Null,
    };
    if !c.quiet {
        if let Some(x) = model::excluded(&p) {
            r.push(x);
        }
    }
    r.push(model::cautions());
    run.stamp(&mut doc);
    if let Some(dir) = &c.out {
        if code == 0 {
            let a = assessment::assess(&p, &new_bank)?;
            bank_files(&p, &new_bank, &a, &doc, &r)?.commit(dir)?;
        } else {
            let mut files = OutFiles::default();
            files.add("report.json", report::json_text(doc.clone()));
            r.title = "Bank rework (infeasible)".into();
            files.add("report.html", report::html::render(&r, &[]));
            files.commit(dir)?;
        }
    }
    let stdout = if c.json {
        report::json_text(doc)
    } else {
        text::render(&r)
    };
    Ok(CommandOutput { stdout, code })
}
