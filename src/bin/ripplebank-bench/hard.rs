//! The large-catalog and hard-target table (`--hard`): each row its own
//! child process (this binary re-executed with `--hard-one NAME`), for its
//! own peak memory and a wall-clock limit.

use super::families::{family_a, family_b, FAMILY_A_SCENARIO};
use super::{running_image, three_line_banks, vm_hwm_mb, Args, Rng};
use anyhow::{bail, Context, Result};
use ripplebank::catalog::Catalog;
use ripplebank::commands::{self, Common};
use ripplebank::evaluator::{Band, Corner};
use ripplebank::load;
use ripplebank::optimize::{self, Settings, Status};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;
use serde_json::{json, Value};
use std::fmt::Write as _;
use std::io::Read;
use std::path::PathBuf;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// The rows of the table: name, work, goal.
pub const ROWS: [(&str, &str, &str); 9] = [
    ("eval", "evaluator, 500 harmonics, one core (`low` corner; the whole region per bank)", "≥ 150,000 bank evaluations/s"),
    ("a5000", "family A, 5,000 parts, target 5 % above the best reachable", "< 5 s, `optimal` or gap ≤ 1 %"),
    ("b5000", "family B, 5,000 parts, target 5 % above the best reachable", "< 5 s, `optimal` or gap ≤ 1 %"),
    ("a20000", "family A, 20,000 parts, same", "< 20 s, ≤ 500 MB, gap reported"),
    ("b20000", "family B, 20,000 parts, same", "< 20 s, ≤ 500 MB, gap reported"),
    ("infeasible", "family A, 2,000 parts, infeasible target (half the best reachable), `design` with `binding`", "< 3 s"),
    ("tradeoff", "`tradeoff`, bundled two-phase core scenario", "< 3 s"),
    ("b300", "`design` at the best reachable + 3 %, family B, 300 parts", "< 3 s"),
    ("lines", "family A, 2,000 parts, 6 mV: `max_lines` 3 → 4 → 5 (monotone)", "cost never rises"),
];

fn family_a_problem(rows: usize, target: &str, lines: usize, seed: u64) -> Result<Problem> {
    let text = FAMILY_A_SCENARIO
        .replace("TARGET", target)
        .replace("LINES", &lines.to_string());
    let s = Scenario::from_str(&text, "family-a.toml")?;
    let c = Catalog::from_bytes(family_a(rows, seed).as_bytes(), "family-a.csv")?;
    Problem::new(s, c)
}

fn family_b_problem(rows: usize, seed: u64) -> Result<Problem> {
    let (s, _) = load::scenario_and_catalog(None, None)?;
    let c = Catalog::from_bytes(family_b(rows, seed).as_bytes(), "family-b.csv")?;
    Problem::new(s, c)
}

fn with_target(p: &Problem, target: f64) -> Result<Problem> {
    let mut s = p.scenario.clone();
    s.target.ripple_pp.0 = target;
    Problem::new(s, p.catalog.clone())
}

/// One design's figures.
fn design_doc(p: &Problem, settings: &Settings) -> Value {
    let t = Instant::now();
    let out = optimize::design(p, settings);
    let secs = t.elapsed().as_secs_f64();
    let value = out.found.as_ref().map(|f| f.key[0]);
    let gap = match (value, out.stats.lower_bound) {
        (Some(v), Some(lb)) if v > 0.0 => Some(((v - lb) / v).max(0.0)),
        _ => None,
    };
    json!({
        "seconds": secs,
        "status": out.status.name(),
        "cost": value,
        "lower_bound": out.stats.lower_bound,
        "gap": if out.status == Status::Optimal { Some(0.0) } else { gap },
        "candidates": out.stats.candidates,
        "evaluations": out.stats.evaluations,
        "stopped": out.stats.stopped,
    })
}

/// Child: one row, one JSON line on stdout.
pub fn run_one(name: &str, a: &Args) -> Result<()> {
    let seed = a.seed;
    let settings = Settings::default();
    let doc = match name {
        "eval" => eval_row(a)?,
        "a5000" | "b5000" | "a20000" | "b20000" | "b300" => {
            let rows: usize = name[1..].parse()?;
            let p = if name.starts_with('a') {
                family_a_problem(rows, "6m", 3, seed)?
            } else {
                family_b_problem(rows, seed)?
            };
            let t = Instant::now();
            let best = optimize::lowest_ripple(&p, &settings).ripple_pp;
            let t_best = t.elapsed().as_secs_f64();
            let margin = if name == "b300" { 1.03 } else { 1.05 };
            let q = with_target(&p, best * margin)?;
            let mem0 = vm_hwm_mb(None);
            let mut d = design_doc(&q, &settings);
            d["best_reachable"] = json!(best);
            d["seconds_best_reachable"] = json!(t_best);
            d["target"] = json!(best * margin);
            d["peak_mb_before"] = json!(mem0);
            d
        }
        "infeasible" => {
            let p = family_a_problem(2000, "6m", 3, seed)?;
            let best = optimize::lowest_ripple(&p, &settings).ripple_pp;
            let dir = std::env::temp_dir().join(format!("ripplebank-bench-{}", std::process::id()));
            std::fs::create_dir_all(&dir)?;
            let cat = dir.join("family-a.csv");
            std::fs::write(&cat, family_a(2000, seed))?;
            let scen = dir.join("family-a.toml");
            let text = FAMILY_A_SCENARIO
                .replace("TARGET", &format!("{:.6e}", best * 0.5))
                .replace("LINES", "3");
            std::fs::write(&scen, format!("catalog = \"{}\"\n{text}", cat.display()))?;
            let c = json_input(scen, Some(cat));
            let t = Instant::now();
            let out = commands::design(&c, None, &[])?;
            let secs = t.elapsed().as_secs_f64();
            let _ = std::fs::remove_dir_all(&dir);
            let v: Value = serde_json::from_str(&out.stdout)?;
            json!({
                "seconds": secs,
                "status": v["status"],
                "best_ripple_pp": v["best_ripple_pp"],
                "binding": v["binding"],
                "best_reachable": best,
            })
        }
        "tradeoff" => {
            let scen = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("scenarios/core-2phase.toml");
            let c = json_input(scen, None);
            let t = Instant::now();
            let out = commands::tradeoff(&c, None, None, 8)?;
            let secs = t.elapsed().as_secs_f64();
            let v: Value = serde_json::from_str(&out.stdout)?;
            json!({"seconds": secs, "points": v["points"].as_array().map_or(0, |p| p.len())})
        }
        "lines" => {
            let mut costs = Vec::new();
            let mut secs = Vec::new();
            for lines in [3, 4, 5] {
                let p = family_a_problem(2000, "6m", lines, seed)?;
                let d = design_doc(&p, &settings);
                costs.push(d["cost"].clone());
                secs.push(d["seconds"].clone());
            }
            json!({"costs": costs, "seconds_each": secs})
        }
        other => bail!("no benchmark row `{other}`"),
    };
    let mut doc = doc;
    doc["row"] = json!(name);
    doc["peak_mb"] = json!(vm_hwm_mb(None));
    println!("{doc}");
    Ok(())
}

/// The command-line input of a quiet JSON run on `scenario` (and `catalog`).
fn json_input(scenario: PathBuf, catalog: Option<PathBuf>) -> Common {
    Common {
        scenario: Some(scenario),
        catalog,
        inductors: None,
        filter: None,
        out: None,
        json: true,
        quiet: true,
    }
}

fn eval_row(a: &Args) -> Result<Value> {
    let (mut s, c) = load::scenario_and_catalog(None, None)?;
    s.target.harmonics = 500;
    let target = s.target.ripple_pp.0;
    let p = Problem::new(s, c)?;
    let mut ev = p.evaluator(&p.eligible);
    let np = ev.parts.len();
    let banks = three_line_banks(&mut Rng::new(a.seed), np, 512);
    let n = a.evals;
    let t = Instant::now();
    let mut acc = 0.0;
    for e in 0..n {
        acc += ev.ripple_pp(&banks[e % banks.len()], Corner::Worst, Band::Limited);
    }
    let pp = n as f64 / t.elapsed().as_secs_f64();
    let t = Instant::now();
    for e in 0..n {
        acc += ev.ripple_check(&banks[e % banks.len()], target).min(1.0);
    }
    let check = n as f64 / t.elapsed().as_secs_f64();
    let m = (n / 50).max(20);
    let t = Instant::now();
    for e in 0..m {
        acc += ripplebank::region::worst(&p, &mut ev, &banks[e % banks.len()], Band::Limited).value;
    }
    let region = m as f64 / t.elapsed().as_secs_f64();
    std::hint::black_box(acc);
    Ok(
        json!({"ripple_pp_per_s": pp, "ripple_check_per_s": check, "region_worst_per_s": region, "harmonics": ev.n_limited}),
    )
}

/// Parent: one row in a child process with a wall-clock limit.
fn spawn(name: &str, a: &Args) -> Result<Value> {
    let mut child = Command::new(running_image()?)
        .args([
            "--hard-one",
            name,
            "--seed",
            &a.seed.to_string(),
            "--evals",
            &a.evals.to_string(),
        ])
        .stdout(Stdio::piped())
        .stderr(Stdio::inherit())
        .spawn()
        .context("cannot start the child process")?;
    let t0 = Instant::now();
    loop {
        if let Some(st) = child.try_wait()? {
            let mut s = String::new();
            child
                .stdout
                .take()
                .context("no child stdout")?
                .read_to_string(&mut s)?;
            if !st.success() {
                return Ok(json!({"row": name, "failed": st.to_string()}));
            }
            let line = s.lines().last().context("child printed nothing")?;
            return Ok(serde_json::from_str(line)?);
        }
        if t0.elapsed().as_secs_f64() > a.max_seconds {
            // Our own child, by its handle.
            let _ = child.kill();
            let _ = child.wait();
            return Ok(json!({"row": name, "timeout": a.max_seconds}));
        }
        std::thread::sleep(Duration::from_millis(50));
    }
}

fn f(v: &Value, k: &str) -> Option<f64> {
    v.get(k).and_then(Value::as_f64)
}

fn mv(v: Option<f64>) -> String {
    v.map_or("–".into(), |x| format!("{:.3} mV", x * 1e3))
}

/// What a row measured, in words, and whether the goal is met.
fn measured(name: &str, r: &Value) -> (String, &'static str) {
    if r.get("timeout").is_some() {
        return (format!("stopped after {} s", r["timeout"]), "no");
    }
    if let Some(e) = r.get("failed") {
        return (format!("failed: {e}"), "no");
    }
    let secs = f(r, "seconds").unwrap_or(f64::NAN);
    let mem = f(r, "peak_mb").unwrap_or(f64::NAN);
    match name {
        "eval" => {
            let pp = f(r, "ripple_pp_per_s").unwrap_or(0.0);
            (
                format!(
                    "{:.0}/s exact figure (`ripple_pp`), {:.0}/s pass/fail cascade (`ripple_check`), {:.0}/s whole-region worst case (`region::worst`)",
                    pp,
                    f(r, "ripple_check_per_s").unwrap_or(0.0),
                    f(r, "region_worst_per_s").unwrap_or(0.0)
                ),
                if pp >= 150_000.0 { "yes" } else { "no" },
            )
        }
        "a5000" | "b5000" | "a20000" | "b20000" | "b300" => {
            let gap = f(r, "gap");
            let status = r["status"].as_str().unwrap_or("?");
            let text = format!(
                "{secs:.2} s, {mem:.0} MB, {status}, cost {}, lower bound {}, gap {} (target {}, best reachable {} found in {:.1} s)",
                f(r, "cost").map_or("–".into(), |c| format!("{c:.4}")),
                f(r, "lower_bound").map_or("–".into(), |c| format!("{c:.4}")),
                gap.map_or("–".into(), |g| format!("{:.1} %", g * 100.0)),
                mv(f(r, "target")),
                mv(f(r, "best_reachable")),
                f(r, "seconds_best_reachable").unwrap_or(f64::NAN),
            );
            let ok = match name {
                "a5000" | "b5000" => {
                    secs < 5.0 && (status == "optimal" || gap.is_some_and(|g| g <= 0.01))
                }
                "a20000" | "b20000" => secs < 20.0 && mem <= 500.0 && gap.is_some(),
                _ => secs < 3.0,
            };
            (text, if ok { "yes" } else { "no" })
        }
        "infeasible" => (
            format!(
                "{secs:.2} s, {}, best ripple {}, binding {}",
                r["status"].as_str().unwrap_or("?"),
                mv(f(r, "best_ripple_pp")),
                r["binding"]
            ),
            if secs < 3.0 { "yes" } else { "no" },
        ),
        "tradeoff" => (
            format!("{secs:.2} s, {} points", r["points"]),
            if secs < 3.0 { "yes" } else { "no" },
        ),
        "lines" => {
            let c: Vec<f64> = r["costs"]
                .as_array()
                .map(|v| {
                    v.iter()
                        .map(|x| x.as_f64().unwrap_or(f64::INFINITY))
                        .collect()
                })
                .unwrap_or_default();
            let mono = c.windows(2).all(|w| w[1] <= w[0] * (1.0 + 1e-9));
            (
                format!(
                    "costs {} (each {} s)",
                    c.iter()
                        .map(|x| format!("{x:.4}"))
                        .collect::<Vec<_>>()
                        .join(" → "),
                    r["seconds_each"]
                        .as_array()
                        .map(|v| v
                            .iter()
                            .map(|x| format!("{:.1}", x.as_f64().unwrap_or(0.0)))
                            .collect::<Vec<_>>()
                            .join(" / "))
                        .unwrap_or_default()
                ),
                if mono && c.len() == 3 { "yes" } else { "no" },
            )
        }
        _ => (r.to_string(), "?"),
    }
}

/// Parent: the whole table, Markdown.
pub fn section(a: &Args, only: &[String]) -> Result<String> {
    let mut o = String::new();
    writeln!(o, "## Large catalogs and hard targets\n")?;
    writeln!(
        o,
        "Invented catalog families (`--emit-catalog N --family a|b`), seed {}, default settings, each row in its own process (limit {} s); time is the command's or the `design` call's alone, memory the process's peak (VmHWM).\n",
        a.seed, a.max_seconds
    )?;
    writeln!(o, "| work | goal | measured | met |")?;
    writeln!(o, "|---|---|---|---|")?;
    for (name, work, goal) in ROWS {
        if !only.is_empty() && !only.iter().any(|x| x == name) {
            continue;
        }
        eprintln!("ripplebank-bench: {name} …");
        let r = spawn(name, a)?;
        eprintln!("ripplebank-bench:   {r}");
        let (text, ok) = measured(name, &r);
        writeln!(o, "| {work} | {goal} | {text} | {ok} |")?;
    }
    Ok(o)
}
