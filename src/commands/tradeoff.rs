//! `tradeoff`: cost, area and count against the ripple target.

use super::{load, show_progress, CommandOutput, Common};
use crate::assessment::{self};
use crate::load::Overrides;
use crate::optimize;
use crate::problem::Problem;
use crate::report::model::{self, Report, Table};
use crate::report::{self, text, OutFiles};
use anyhow::Result;
use serde_json::{json, Value};

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
/// when the converter has no internal capacitance of its own.
pub(crate) const TRADEOFF_SPAN: f64 = 10.0;

/// `PART=N,PART=N` in catalog order: equal strings mean the same bank.
pub(crate) fn bank_key(p: &Problem, bank: &[(usize, u32)]) -> String {
    let mut b: Vec<(usize, u32)> = bank.iter().copied().filter(|x| x.1 > 0).collect();
    b.sort();
    b.iter()
        .map(|&(i, n)| format!("{}={n}", p.catalog.parts[i].id))
        .collect::<Vec<_>>()
        .join(",")
}

/// The search settings of every trade-off point and of the default lower
/// end: each point gets a share of the work a single design may take (per
/// line-count stage).
fn point_settings() -> optimize::Settings {
    optimize::Settings {
        max_evaluations: 300_000,
        ..Default::default()
    }
}

/// The range of targets: its ends (echoed to 12 significant digits) and
/// a note on how the upper end was chosen when `--to` was not given.
struct Span {
    lo: f64,
    hi: f64,
    note: String,
}

/// The ends of the range: `--from` or the lowest ripple any bank reaches,
/// `--to` or the converter alone (or [`TRADEOFF_SPAN`] × the target).
fn span(p: &Problem, from: Option<f64>, to: Option<f64>) -> Result<Span> {
    let lo = match from {
        Some(v) => v,
        None => {
            let r = optimize::lowest_ripple(p, &point_settings()).ripple_pp;
            if !r.is_finite() {
                anyhow::bail!(
                    "no bank can be built from the eligible parts; see `ripplebank validate`"
                );
            }
            r
        }
    };
    let mut note = String::new();
    let target = p.scenario.target.ripple_pp.0;
    let hi = match to {
        Some(v) => v,
        None if p.scenario.converter.internal_capacitance.is_some() => {
            // The converter alone: the loosest meaningful target.
            let a = assessment::assess(p, &[])?;
            note = format!(
                "The upper end of the range is the converter alone (its internal capacitance, no added capacitors): {}. Use --to to change it.",
                text::mv(a.ripple_pp)
            );
            a.ripple_pp
        }
        None => {
            let cap = TRADEOFF_SPAN * target;
            note = format!(
                "The upper end of the range is {}× the target ({}): its row is the cheapest bank reaching it. Use --to to change it.",
                TRADEOFF_SPAN,
                text::mv(cap)
            );
            cap
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
    // Targets echo the user's values (--from, --to, the scenario's target):
    // 12 significant digits, so `10u` prints as 1e-5 (the ends exactly as given).
    Ok(Span {
        lo: report::echoed(lo),
        hi: report::echoed(hi),
        note,
    })
}

/// `points` geometric targets from `lo` to `hi`, and the scenario's own
/// `target` (always a row).
fn targets(lo: f64, hi: f64, target: f64, points: usize) -> Vec<f64> {
    let mut targets: Vec<f64> = (0..points)
        .map(|j| match j {
            0 => lo,
            j if j == points - 1 => hi,
            j => report::echoed(lo * (hi / lo).powf(j as f64 / (points - 1) as f64)),
        })
        .collect();
    if !targets.iter().any(|&t| (t - target).abs() <= 1e-9 * target) {
        targets.push(target);
        targets.sort_by(f64::total_cmp);
    }
    targets
}

/// The best bank at each target. The targets are independent searches:
/// they are spread over the cores, each worker taking the next unsolved
/// target, so tight (slow) and loose (fast) targets share the cores evenly.
fn solve_all(p: &Problem, targets: &[f64], show: bool) -> Vec<(f64, optimize::DesignOutcome)> {
    use indicatif::{ProgressBar, ProgressStyle};
    let pb = if show {
        ProgressBar::new(targets.len() as u64)
    } else {
        ProgressBar::hidden()
    };
    pb.set_style(
        ProgressStyle::with_template("tradeoff [{bar:30}] {pos}/{len} targets ({elapsed})")
            .expect("template")
            .progress_chars("=> "),
    );
    let settings = point_settings();
    // Two targets at once hold two searches' tables: only where they are small.
    let workers = if optimize::two_searches_fit(p, p.eligible.len()) {
        std::thread::available_parallelism().map_or(1, |n| n.get())
    } else {
        1
    };
    let outs = optimize::map_on_threads(targets, workers, |&t| {
        let out = optimize::design_for(p, t, &settings);
        pb.inc(1);
        out
    });
    pb.finish_and_clear();
    targets.iter().copied().zip(outs).collect()
}

/// Each target's own result, before the front is made monotone (reported
/// as `raw`, so the optimizer's per-target answers can be checked).
fn raw_points(p: &Problem, results: &[(f64, optimize::DesignOutcome)]) -> Result<Vec<Value>> {
    let mut raw = Vec::new();
    for (t, out) in results {
        let a = match &out.found {
            Some(f) => Some(assessment::assess(p, &f.bank)?),
            None => None,
        };
        raw.push(json!({
            "target": t,
            "status": out.status.name(),
            "ripple_pp": a.as_ref().map(|a| a.ripple_pp),
            "cost": a.as_ref().map(|a| a.cost),
            "area": a.as_ref().map(|a| a.area),
            "count": a.as_ref().map(|a| a.count),
            "bank": a.as_ref().map_or(json!([]), |a| json!(a.bank)),
        }));
    }
    Ok(raw)
}

/// A bank that meets a tighter target meets every looser one: keep the
/// front monotone when the search could not prove a point optimal.
fn make_monotone(results: &mut [(f64, optimize::DesignOutcome)]) {
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
}

/// The front in every form it is written: JSON points, plot points, report
/// rows and `tradeoff.csv`.
struct Front {
    json: Vec<Value>,
    plot: Vec<report::plots::TradeoffPoint>,
    rows: Vec<Vec<String>>,
    csv: Vec<u8>,
}

/// Every point of the front assessed, in each form.
fn front(p: &Problem, results: &[(f64, optimize::DesignOutcome)], target: f64) -> Result<Front> {
    let mut f = Front {
        json: Vec::new(),
        plot: Vec::new(),
        rows: Vec::new(),
        csv: Vec::new(),
    };
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
    for (t, out) in results {
        let is_scenario = (t - target).abs() <= 1e-9 * target;
        let (bank_json, ripple, cost, area, count, key) = match &out.found {
            Some(f) => {
                let a = assessment::assess(p, &f.bank)?;
                (
                    serde_json::to_value(&a.bank)?,
                    Some(a.ripple_pp),
                    Some(a.cost),
                    Some(a.area),
                    Some(a.count),
                    bank_key(p, &f.bank),
                )
            }
            None => (json!([]), None, None, None, None, String::new()),
        };
        f.json.push(json!({
            "target": t, "scenario_target": is_scenario, "status": out.status.name(), "ripple_pp": ripple, "cost": cost, "area": area,
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
        f.rows.push(vec![
            if is_scenario {
                format!("{} (scenario)", text::mv(*t))
            } else {
                text::mv(*t)
            },
            out.status.name().to_string(),
            ripple.map_or("—".into(), text::mv),
            cost.map_or("—".into(), |x| format!("{x:.3}")),
            per_mv,
            area.map_or("—".into(), |x| format!("{x:.1}")),
            count.map_or("—".into(), |x| x.to_string()),
            match &out.found {
                None => "no bank meets this target".into(),
                Some(f) if f.bank.is_empty() => report::plots::EMPTY_BANK.into(),
                Some(_) => key.clone(),
            },
        ]);
        f.plot.push(report::plots::TradeoffPoint {
            target: *t,
            status: out.status.name().to_string(),
            ripple_pp: ripple,
            cost,
            area,
            count,
            bank_key: key,
        });
    }
    f.csv = csv.into_inner().map_err(|e| anyhow::anyhow!("{e}"))?;
    Ok(f)
}

/// The text and HTML report of a trade-off.
fn tradeoff_report(
    p: &Problem,
    run: &crate::run::Run,
    span: &Span,
    n_targets: usize,
    rows: Vec<Vec<String>>,
    quiet: bool,
    filtered: Option<&FilterRows>,
) -> Report {
    let mut r = Report::new("Ripple trade-off", Some(run));
    r.push(model::header(p));
    r.line(format!(
        "Objective: {}",
        p.scenario.selection.objective.name()
    ));
    r.para(format!(
        "Trade-off: {} ripple targets from {} to {} (geometric, with the scenario's own target)",
        n_targets,
        text::mv(span.lo),
        text::mv(span.hi)
    ));
    r.table(Table::new(
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
        rows,
    ));
    if !quiet {
        r.para(
        "'cost per mV' is what each millivolt costs between this row and the one above: the extra cost of the \
         tighter bank divided by the millivolts gained. Every bank is verified by the evaluator at its target.",
        );
    }
    if !span.note.is_empty() {
        if quiet {
            r.para(span.note.clone());
        } else {
            r.line(span.note.clone());
        }
    }
    if let Some((rows, pays, _)) = filtered {
        r.para("With a post-filter (the best filtered design at each target)");
        r.table(Table::new(
            &[
                "target",
                "status",
                "cost",
                "capacitors only",
                "better",
                "filter",
            ],
            rows.clone(),
        ));
        r.line(match pays {
            Some(t) => format!(
                "The filter starts to pay at {} and below (the loosest target where the filtered design is better).",
                text::mv(*t)
            ),
            None => "The filter does not pay at any target of the range.".into(),
        });
    }
    r.push(model::cautions());
    r
}

/// `tradeoff`: the best bank at each of a range of ripple targets.
pub fn tradeoff(
    c: &Common,
    from: Option<&str>,
    to: Option<&str>,
    points: usize,
) -> Result<CommandOutput> {
    let (p, run) = load(c, &Overrides::default())?;
    if !(2..=200).contains(&points) {
        anyhow::bail!("--points: {points} must be from 2 to 200");
    }
    let from = volts_arg("from", from)?;
    let to = volts_arg("to", to)?;
    let span = span(&p, from, to)?;
    let target = report::echoed(p.scenario.target.ripple_pp.0);
    let targets = targets(span.lo, span.hi, target, points);
    let mut results = solve_all(&p, &targets, show_progress(c));
    let raw_json = raw_points(&p, &results)?;
    make_monotone(&mut results);
    let front = front(&p, &results, target)?;
    // With `[filter] use` auto or on: the filtered design at every target
    // beside the capacitor-only one, and where the filter starts to pay.
    let filtered = if p.scenario.filter.usage != crate::filter::FilterUse::Off {
        Some(filter_rows(&p, &results, &point_settings())?)
    } else {
        None
    };
    let r = tradeoff_report(
        &p,
        &run,
        &span,
        targets.len(),
        front.rows,
        c.quiet,
        filtered.as_ref(),
    );
    let note = &span.note;
    let mut doc = json!({
        "status": "done",
        "scenario": p.scenario.name,
        "objective": p.scenario.selection.objective.name(),
        "from": span.lo, "to": span.hi,
        "points": front.json,
        "raw": raw_json,
        "excluded": p.excluded,
        "warnings": p.warnings.iter().cloned().chain((!note.is_empty()).then(|| note.clone())).collect::<Vec<_>>(),
    });
    if let Some((_, pays, points)) = filtered {
        doc["filter_points"] = json!(points);
        doc["filter_pays_from"] = json!(pays);
    }
    run.stamp(&mut doc);
    if let Some(dir) = &c.out {
        let plots =
            report::plots::tradeoff_plots(&front.plot, Some(p.scenario.target.ripple_pp.0))?;
        let mut files = OutFiles::default();
        files.add("tradeoff.csv", front.csv);
        files.add("report.json", report::json_text(doc.clone()));
        files.add("report.html", report::html::render(&r, &plots));
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
    Ok(CommandOutput::of(c, doc, &r, code))
}

/// The filtered rows of a trade-off: text rows, where the filter pays, JSON points.
type FilterRows = (Vec<Vec<String>>, Option<f64>, Vec<serde_json::Value>);

/// The filtered design at each target of `results` (capacitor-only
/// outcomes): text rows, the loosest target where the filter is better, and
/// the JSON points.
fn filter_rows(
    p: &Problem,
    results: &[(f64, optimize::DesignOutcome)],
    settings: &optimize::Settings,
) -> Result<FilterRows> {
    let mut rows = Vec::new();
    let mut points = Vec::new();
    let mut pays: Option<f64> = None;
    for (t, cap) in results {
        let fo = optimize::design_filtered(p, *t, settings);
        let better = match (&fo.found, &cap.found) {
            (Some(f), Some(c)) => optimize::better(&f.key, &c.key),
            (Some(_), None) => true,
            _ => false,
        };
        if better {
            pays = Some(pays.map_or(*t, |x: f64| x.max(*t)));
        }
        let (cost, desc, ripple) = match (&fo.found, &fo.filter) {
            (Some(f), Some(fd)) => {
                let q = p.with_filter(fd.clone());
                let a = assessment::assess(&q, &f.bank)?;
                let fa = a.filter.as_ref();
                let desc = fa.map_or(String::new(), |fa| {
                    let load: Vec<String> = fa
                        .load_bank
                        .iter()
                        .map(|(id, n)| format!("{id}={n}"))
                        .collect();
                    format!(
                        "{}×{} → {}{}",
                        fa.count,
                        fa.inductor,
                        load.join(","),
                        fa.damping
                            .as_ref()
                            .map_or(String::new(), |(r, id, n)| format!(
                                " + R {} with {id}={n}",
                                crate::units::format_rkm(*r)
                            ))
                    )
                });
                (Some(a.cost), desc, Some(a.ripple_pp))
            }
            _ => (None, String::new(), None),
        };
        let cap_cost = match &cap.found {
            Some(f) => Some(assessment::assess(p, &f.bank)?.cost),
            None => None,
        };
        rows.push(vec![
            text::mv(*t),
            fo.status.name().to_string(),
            cost.map_or("—".into(), |x| format!("{x:.3}")),
            cap_cost.map_or("—".into(), |x| format!("{x:.3}")),
            if better { "filter" } else { "capacitors" }.to_string(),
            if desc.is_empty() {
                "no filter meets this target".into()
            } else {
                desc.clone()
            },
        ]);
        points.push(json!({
            "target": t,
            "status": fo.status.name(),
            "cost": cost,
            "ripple_pp": ripple,
            "capacitor_only_cost": cap_cost,
            "filter_better": better,
            "filter": desc,
        }));
    }
    Ok((rows, pays, points))
}
