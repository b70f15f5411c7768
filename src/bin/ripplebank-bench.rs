//! ripplebank-bench: the project's own throughput and scaling figures.
//!
//! 1. Evaluator throughput: worst-corner, band-limited ripple of varied
//!    3-line banks of the bundled demo at 500 harmonics, on one thread.
//! 2. Design time and peak memory against catalog size. The catalogs are
//!    synthetic (invented): rows of the bundled demo catalog with jittered
//!    values, renamed `SYN-00001`…, and a share of rows that are exact
//!    electrical copies of another row at a different cost (to exercise
//!    dominance pruning). Each size runs in its own child process (this
//!    binary re-executed with `--one N`), so that peak memory (VmHWM) is
//!    per size and a size that runs too long can be stopped.
//!
//! Output: Markdown on stdout (and in `--write FILE` when given).

use anyhow::{bail, Context, Result};
use clap::Parser;
use ripplebank::catalog::Catalog;
use ripplebank::evaluator::{Band, Corner};
use ripplebank::load;
use ripplebank::optimize::{self, Settings};
use ripplebank::problem::Problem;
use serde_json::{json, Value};
use std::fmt::Write as _;
use std::hint::black_box;
use std::io::Read;
use std::path::PathBuf;
use std::process::{Command, ExitCode, Stdio};
use std::time::{Duration, Instant};

#[derive(Parser, Debug)]
#[command(
    name = "ripplebank-bench",
    about = "Evaluator throughput and design scaling of ripplebank (synthetic catalogs)"
)]
pub(crate) struct Args {
    /// Catalog sizes (rows) for the design-scaling table.
    #[arg(long, value_delimiter = ',', default_value = "100,500,2000,5000")]
    sizes: Vec<usize>,
    /// Wall-clock limit per catalog size, s; a size over it is stopped and shown as "timeout".
    #[arg(long, default_value_t = 120.0)]
    max_seconds: f64,
    /// Evaluations timed for the throughput figure.
    #[arg(long, default_value_t = 20_000)]
    evals: usize,
    /// Harmonics of the target figure for the throughput figure.
    #[arg(long, default_value_t = 500)]
    harmonics: usize,
    /// Share of synthetic rows that are exact electrical copies of another row.
    #[arg(long, default_value_t = 0.30)]
    duplicates: f64,
    /// Seed of the synthetic catalogs and banks.
    #[arg(long, default_value_t = 20_240_601)]
    seed: u64,
    /// Also write the Markdown to this file.
    #[arg(long)]
    write: Option<PathBuf>,
    /// Skip the evaluator throughput part.
    #[arg(long)]
    no_evaluator: bool,
    /// Skip the design-scaling part.
    #[arg(long)]
    no_design: bool,
    /// Write the synthetic catalog of this size as CSV to stdout and exit.
    #[arg(long, value_name = "N")]
    emit_catalog: Option<usize>,
    /// Also solve sizes up to N rows with every line set enumerated
    /// (`exhaustive_limit` unbounded), to measure the large-catalog search's gap.
    #[arg(long, value_name = "N", default_value_t = 0)]
    exhaustive_up_to: usize,
    /// Internal: with --one, enumerate every line set.
    #[arg(long, hide = true)]
    exhaustive: bool,
    /// Internal: run one catalog size and print its result as one JSON line.
    #[arg(long, value_name = "N", hide = true)]
    one: Option<usize>,
    /// Catalog family of --emit-catalog: `demo` (jittered demo rows), `a`
    /// (variants of a nine-part set) or `b` (a generated library).
    #[arg(long, default_value = "demo")]
    family: String,
    /// Print only the large-catalog and hard-target table (its rows, by
    /// name, when given: eval, a5000, b5000, a20000, b20000, infeasible,
    /// tradeoff, b300, lines).
    #[arg(long, value_delimiter = ',', num_args = 0..)]
    hard: Option<Vec<String>>,
    /// Internal: run one row of the hard table and print it as one JSON line.
    #[arg(long, value_name = "ROW", hide = true)]
    hard_one: Option<String>,
}

#[path = "ripplebank-bench/families.rs"]
mod families;
#[path = "ripplebank-bench/hard.rs"]
mod hard;

/// xorshift64* (Vigna, "An experimental exploration of Marsaglia's xorshift
/// generators, scrambled", 2016): small, seedable, good enough for jitter.
/// `n` varied 3-line banks over `np` parts: three distinct parts, counts 1..=6.
pub(crate) fn three_line_banks(rng: &mut Rng, np: usize, n: usize) -> Vec<[(usize, u32); 3]> {
    (0..n)
        .map(|_| {
            let i = rng.below(np);
            let mut j = rng.below(np);
            while j == i {
                j = rng.below(np);
            }
            let mut k = rng.below(np);
            while k == i || k == j {
                k = rng.below(np);
            }
            [
                (i, 1 + rng.below(6) as u32),
                (j, 1 + rng.below(6) as u32),
                (k, 1 + rng.below(6) as u32),
            ]
        })
        .collect()
}

pub(crate) struct Rng(u64);

impl Rng {
    fn new(seed: u64) -> Rng {
        // splitmix64 step so that nearby seeds give unrelated streams.
        let mut z = seed.wrapping_add(0x9E37_79B9_7F4A_7C15);
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        Rng((z ^ (z >> 31)) | 1)
    }
    fn next_u64(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        self.0 = x;
        x.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    /// Uniform in [0, 1).
    fn unit(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn below(&mut self, n: usize) -> usize {
        (self.unit() * n as f64) as usize % n.max(1)
    }
    /// Log-uniform factor in [1/r, r].
    fn factor(&mut self, r: f64) -> f64 {
        (r.ln() * (2.0 * self.unit() - 1.0)).exp()
    }
}

/// Three significant digits, as a datasheet would print the value.
fn fmt_num(x: f64) -> String {
    format!("{x:.2e}")
}

/// A synthetic (invented) catalog of `rows` parts made from the demo catalog.
fn synthetic_csv(rows: usize, dup_share: f64, seed: u64) -> Result<String> {
    let mut rd = csv::Reader::from_reader(load::DEMO_CATALOG.as_bytes());
    let headers = rd.headers()?.clone();
    let col = |name: &str| {
        headers
            .iter()
            .position(|h| h == name)
            .with_context(|| format!("demo catalog has no column `{name}`"))
    };
    let (c_part, c_cap, c_esr, c_esl, c_cost, c_rip) = (
        col("part")?,
        col("capacitance")?,
        col("esr")?,
        col("esl")?,
        col("cost")?,
        col("ripple_current")?,
    );
    let (c_man, c_mpn, c_desc) = (col("manufacturer")?, col("mpn")?, col("description")?);
    let base: Vec<csv::StringRecord> = rd.records().collect::<std::result::Result<_, _>>()?;
    let demo = Catalog::from_bytes(load::DEMO_CATALOG.as_bytes(), load::DEMO_CATALOG_NAME)?;
    let mut rng = Rng::new(seed);
    let mut out: Vec<Vec<String>> = Vec::with_capacity(rows);
    for r in 0..rows {
        let name = format!("SYN-{:05}", r + 1);
        let mut row: Vec<String>;
        if r > 0 && rng.unit() < dup_share {
            // Exact electrical copy of an earlier row, at another cost.
            row = out[rng.below(out.len())].clone();
            let cost: f64 = row[c_cost].parse().unwrap_or(0.1);
            let mut f = rng.factor(1.3);
            if (f - 1.0).abs() < 0.02 {
                f = 1.05;
            }
            row[c_cost] = format!("{:.4}", (cost * f).max(0.001));
            row[c_desc] = format!(
                "SYNTHETIC BENCH DATA - invented; electrical copy, {}",
                row[c_desc].split("; ").last().unwrap_or("")
            );
        } else {
            let b = rng.below(base.len());
            let p = &demo.parts[b];
            row = base[b].iter().map(|s| s.to_string()).collect();
            row[c_cap] = fmt_num(p.capacitance * rng.factor(1.6));
            row[c_esr] = fmt_num(p.esr * rng.factor(1.4));
            row[c_esl] = fmt_num(p.esl * rng.factor(1.2));
            row[c_cost] = format!("{:.4}", (p.cost * rng.factor(1.5)).max(0.001));
            if let Some(i) = p.ripple_current {
                row[c_rip] = fmt_num(i * rng.factor(1.25));
            }
            row[c_desc] = format!(
                "SYNTHETIC BENCH DATA - invented; jittered from demo row {}",
                base[b][c_part].trim()
            );
        }
        row[c_part] = name.clone();
        row[c_man] = "Synthetic bench data".into();
        row[c_mpn] = format!("BENCH-{:05}", r + 1);
        out.push(row);
    }
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&headers)?;
    for row in &out {
        w.write_record(row)?;
    }
    Ok(String::from_utf8(w.into_inner()?)?)
}

/// Peak resident set size of this process (VmHWM), MB.
pub(crate) fn vm_hwm_mb(pid: Option<u32>) -> Option<f64> {
    let path = match pid {
        Some(p) => format!("/proc/{p}/status"),
        None => "/proc/self/status".into(),
    };
    let text = std::fs::read_to_string(path).ok()?;
    let line = text.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kb: f64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kb / 1024.0)
}

/// Child: one catalog size, one JSON line on stdout.
fn run_one(rows: usize, a: &Args) -> Result<()> {
    let t0 = Instant::now();
    let text = synthetic_csv(rows, a.duplicates, a.seed)?;
    let catalog = Catalog::from_bytes(text.as_bytes(), &format!("synthetic-{rows}.csv"))?;
    let t_catalog = t0.elapsed().as_secs_f64();
    let (scenario, _) = load::scenario_and_catalog(None, None)?;
    let t1 = Instant::now();
    let problem = Problem::new(scenario, catalog)?;
    let t_problem = t1.elapsed().as_secs_f64();
    let mem_before = vm_hwm_mb(None);
    let t2 = Instant::now();
    let settings = if a.exhaustive {
        Settings {
            exhaustive_limit: usize::MAX,
            ..Settings::default()
        }
    } else {
        Settings::default()
    };
    let out = optimize::design(&problem, &settings);
    let t_design = t2.elapsed().as_secs_f64();
    let mem = vm_hwm_mb(None);
    let (cost, bank, ripple) = match &out.found {
        Some(f) => {
            let cost: f64 = f
                .bank
                .iter()
                .map(|&(i, n)| n as f64 * problem.catalog.parts[i].cost)
                .sum();
            let bank: Vec<String> = f
                .bank
                .iter()
                .map(|&(i, n)| format!("{}={n}", problem.catalog.parts[i].id))
                .collect();
            (Some(cost), bank, Some(f.ripple_pp))
        }
        None => (None, Vec::new(), None),
    };
    let doc = json!({
        "rows": rows,
        "eligible": problem.eligible.len(),
        "status": out.status.name(),
        "cost": cost,
        "bank": bank,
        "ripple_pp": ripple,
        "seconds_catalog": t_catalog,
        "seconds_problem": t_problem,
        "seconds_design": t_design,
        "peak_mb_before_design": mem_before,
        "peak_mb": mem,
        "stats": serde_json::to_value(&out.stats)?,
    });
    println!("{doc}");
    Ok(())
}

/// The running image itself, even if a concurrent build has replaced the file.
fn running_image() -> Result<PathBuf> {
    let self_exe = PathBuf::from("/proc/self/exe");
    Ok(if self_exe.exists() {
        self_exe
    } else {
        std::env::current_exe()?
    })
}

/// Parent: run one size in a child process with a wall-clock limit.
fn spawn_one(rows: usize, a: &Args, exhaustive: bool) -> Result<Value> {
    let mut child = Command::new(running_image()?)
        .args([
            "--one",
            &rows.to_string(),
            "--seed",
            &a.seed.to_string(),
            "--duplicates",
            &a.duplicates.to_string(),
        ])
        .args(exhaustive.then_some("--exhaustive"))
        .stdout(Stdio::piped())
        .stderr(Stdio::inherit())
        .spawn()
        .context("cannot start the child process")?;
    let t0 = Instant::now();
    let mut last_mem = None;
    loop {
        if let Some(st) = child.try_wait()? {
            let mut s = String::new();
            child
                .stdout
                .take()
                .context("no child stdout")?
                .read_to_string(&mut s)?;
            if !st.success() {
                eprintln!("ripplebank-bench: size {rows}: the child process ended with {st}");
                return Ok(
                    json!({"rows": rows, "status": format!("failed ({st})"), "seconds_design": t0.elapsed().as_secs_f64(), "peak_mb": last_mem, "timeout": true}),
                );
            }
            let line = s.lines().last().context("child printed nothing")?;
            return Ok(serde_json::from_str(line)?);
        }
        if let Some(m) = vm_hwm_mb(Some(child.id())) {
            last_mem = Some(m);
        }
        let el = t0.elapsed().as_secs_f64();
        if el > a.max_seconds {
            // Our own child, by its handle.
            let _ = child.kill();
            let _ = child.wait();
            return Ok(
                json!({"rows": rows, "status": "timeout", "seconds_design": el, "peak_mb": last_mem, "timeout": true}),
            );
        }
        std::thread::sleep(Duration::from_millis(50));
    }
}

/// CPU time this thread has run, s (Linux `/proc/thread-self/schedstat`,
/// nanoseconds): unlike the wall clock it does not count the time other
/// programs on a shared machine take the core away.
fn thread_cpu_seconds() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/thread-self/schedstat").ok()?;
    let ns: f64 = text.split_whitespace().next()?.parse().ok()?;
    Some(ns * 1e-9)
}

fn evaluator_section(a: &Args) -> Result<String> {
    let (mut s, c) = load::scenario_and_catalog(None, None)?;
    s.target.harmonics = a.harmonics;
    let target = s.target.ripple_pp.0;
    let problem = Problem::new(s, c)?;
    let mut ev = problem.evaluator(&problem.eligible);
    let np = ev.parts.len();
    let banks = three_line_banks(&mut Rng::new(a.seed), np, 512.min(a.evals.max(1)));
    type Call<'a> = dyn FnMut(&[(usize, u32)]) -> f64 + 'a;
    // (calls per second of wall time, wall seconds, calls per CPU second)
    let time = |f: &mut Call| -> (f64, f64, f64) {
        for b in banks.iter().take(200) {
            black_box(f(b));
        }
        let cpu0 = thread_cpu_seconds();
        let t = Instant::now();
        let mut acc = 0.0;
        for e in 0..a.evals {
            let r = f(&banks[e % banks.len()]);
            if r.is_finite() {
                acc += r;
            }
        }
        black_box(acc);
        let secs = t.elapsed().as_secs_f64();
        let cpu = match (cpu0, thread_cpu_seconds()) {
            (Some(c0), Some(c1)) if c1 > c0 => c1 - c0,
            _ => secs,
        };
        (a.evals as f64 / secs, secs, a.evals as f64 / cpu)
    };
    let (pp_rate, pp_secs, pp_cpu) = time(&mut |b| ev.ripple_pp(b, Corner::Worst, Band::Limited));
    let (full_rate, _, full_cpu) = time(&mut |b| ev.ripple_pp(b, Corner::Worst, Band::Full));
    let (chk_rate, _, chk_cpu) = time(&mut |b| ev.ripple_check(b, target));
    // How many of the banks pass (ripple_check has to finish the fine pass for those).
    let passing = banks
        .iter()
        .filter(|b| ev.ripple_check(&b[..], target) <= target)
        .count();
    let mut o = String::new();
    writeln!(o, "## Evaluator throughput\n")?;
    writeln!(
        o,
        "Bundled demo scenario with `target.harmonics = {}` ({} vin corner(s), {} harmonics band-limited, {} full), \
         {} eligible parts, {} varied 3-line banks (counts 1–6, {} of them pass {} V), {} calls per figure, one thread.\n",
        a.harmonics,
        ev.vin_corners(),
        ev.n_limited,
        ev.n_full,
        np,
        banks.len(),
        passing,
        target,
        a.evals
    )?;
    writeln!(
        o,
        "| call | evaluations/s (wall) | evaluations per CPU second | µs of CPU per call |"
    )?;
    writeln!(o, "|---|---:|---:|---:|")?;
    for (name, r, c) in [
        ("`ripple_pp(bank, Worst, Limited)`", pp_rate, pp_cpu),
        ("`ripple_pp(bank, Worst, Full)`", full_rate, full_cpu),
        (
            "`ripple_check(bank, target)` (early exit on failing banks)",
            chk_rate,
            chk_cpu,
        ),
    ] {
        writeln!(o, "| {name} | {:.0} | {:.0} | {:.2} |", r, c, 1e6 / c)?;
    }
    writeln!(
        o,
        "\n({} `ripple_pp` calls took {:.3} s.)\n",
        a.evals, pp_secs
    )?;
    Ok(o)
}

fn get_f(v: &Value, k: &str) -> Option<f64> {
    v.get(k).and_then(Value::as_f64)
}

fn design_section(a: &Args) -> Result<String> {
    let mut rows = Vec::new();
    let mut exh = Vec::new();
    for &n in &a.sizes {
        eprintln!("ripplebank-bench: design with a synthetic catalog of {n} parts …");
        let r = spawn_one(n, a, false)?;
        eprintln!("ripplebank-bench:   {r}");
        rows.push(r);
        if n <= a.exhaustive_up_to {
            eprintln!(
                "ripplebank-bench: exhaustive design with a synthetic catalog of {n} parts …"
            );
            let r = spawn_one(n, a, true)?;
            eprintln!("ripplebank-bench:   {r}");
            exh.push(r);
        }
    }
    let mut o = String::new();
    writeln!(o, "## Design time and memory against catalog size\n")?;
    writeln!(
        o,
        "Bundled demo scenario, synthetic invented catalogs (demo rows jittered, {:.0} % exact electrical copies at another cost, seed {}), \
         `optimize::design` with default settings, each size in its own process (limit {} s). Time is the `design` call alone; \
         peak memory is the process's VmHWM.\n",
        a.duplicates * 100.0,
        a.seed,
        a.max_seconds
    )?;
    writeln!(o, "| catalog size | candidates after pruning | time (s) | peak memory (MB) | status | cost | eligible | dominated | evaluations | line sets solved / total |")?;
    writeln!(o, "|---:|---:|---:|---:|---|---:|---:|---:|---:|---|")?;
    for r in &rows {
        let st = r.get("stats").cloned().unwrap_or(Value::Null);
        let num = |v: &Value, k: &str| {
            v.get(k)
                .and_then(Value::as_u64)
                .map_or("–".to_string(), |x| x.to_string())
        };
        let timeout = r.get("timeout").is_some();
        writeln!(
            o,
            "| {} | {} | {}{:.2} | {} | {} | {} | {} | {} | {} | {} / {} |",
            r["rows"],
            num(&st, "candidates"),
            if timeout { "> " } else { "" },
            get_f(r, "seconds_design").unwrap_or(f64::NAN),
            get_f(r, "peak_mb").map_or("–".into(), |m| format!("{m:.1}")),
            r["status"].as_str().unwrap_or("?"),
            get_f(r, "cost").map_or("–".into(), |c| format!("{c:.3}")),
            num(r, "eligible"),
            num(&st, "dominated"),
            num(&st, "evaluations"),
            num(&st, "line_sets_solved"),
            num(&st, "line_sets_total"),
        )?;
    }
    writeln!(o)?;
    for r in &rows {
        if let Some(b) = r.get("bank").and_then(Value::as_array) {
            let bank: Vec<&str> = b.iter().filter_map(Value::as_str).collect();
            writeln!(
                o,
                "- {} parts: {} (ripple {}); catalog+problem {:.2} s; stats `{}`",
                r["rows"],
                if bank.is_empty() {
                    "no bank".to_string()
                } else {
                    bank.join(", ")
                },
                get_f(r, "ripple_pp").map_or("–".into(), |v| format!("{:.3} mV", v * 1e3)),
                get_f(r, "seconds_catalog").unwrap_or(0.0)
                    + get_f(r, "seconds_problem").unwrap_or(0.0),
                r.get("stats").map_or(String::new(), |s| s.to_string())
            )?;
        }
    }
    if !exh.is_empty() {
        writeln!(o, "\n### Against enumeration of every line set\n")?;
        writeln!(o, "Same catalogs, `exhaustive_limit` unbounded (every line set bounded and, if needed, solved): the default search's gap.\n")?;
        writeln!(o, "| catalog size | default: status | default: cost | exhaustive: status | exhaustive: cost | exhaustive: time (s) | exhaustive: peak memory (MB) | exhaustive: line sets solved / total |")?;
        writeln!(o, "|---:|---|---:|---|---:|---:|---:|---|")?;
        for e in &exh {
            let Some(r) = rows.iter().find(|r| r["rows"] == e["rows"]) else {
                continue;
            };
            let st = e.get("stats").cloned().unwrap_or(Value::Null);
            let num = |v: &Value, k: &str| {
                v.get(k)
                    .and_then(Value::as_u64)
                    .map_or("–".to_string(), |x| x.to_string())
            };
            let cost = |v: &Value| get_f(v, "cost").map_or("–".into(), |c| format!("{c:.4}"));
            writeln!(
                o,
                "| {} | {} | {} | {} | {} | {}{:.2} | {} | {} / {} |",
                e["rows"],
                r["status"].as_str().unwrap_or("?"),
                cost(r),
                e["status"].as_str().unwrap_or("?"),
                cost(e),
                if e.get("timeout").is_some() { "> " } else { "" },
                get_f(e, "seconds_design").unwrap_or(f64::NAN),
                get_f(e, "peak_mb").map_or("–".into(), |m| format!("{m:.1}")),
                num(&st, "line_sets_solved"),
                num(&st, "line_sets_total"),
            )?;
        }
    }
    Ok(o)
}

fn run(a: &Args) -> Result<()> {
    if let Some(n) = a.one {
        return run_one(n, a);
    }
    if let Some(name) = &a.hard_one {
        return hard::run_one(name, a);
    }
    if let Some(n) = a.emit_catalog {
        let text = match a.family.as_str() {
            "demo" => synthetic_csv(n, a.duplicates, a.seed)?,
            "a" => families::family_a(n, a.seed),
            "b" => families::family_b(n, a.seed),
            other => bail!("--family: `{other}` is not demo, a or b"),
        };
        use std::io::Write;
        return match std::io::stdout().lock().write_all(text.as_bytes()) {
            Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
            _ => Ok(()),
        };
    }
    if !(0.0..1.0).contains(&a.duplicates) {
        bail!("--duplicates: {} is not in [0, 1)", a.duplicates);
    }
    if a.evals == 0 {
        bail!("--evals: must be at least 1");
    }
    let mut md = String::from("# ripplebank benchmarks\n\n");
    print!("{md}");
    if let Some(rows) = &a.hard {
        let sec = hard::section(a, rows)?;
        print!("{sec}");
        md.push_str(&sec);
        if let Some(f) = &a.write {
            std::fs::write(f, &md).with_context(|| format!("{}: cannot write", f.display()))?;
        }
        return Ok(());
    }
    if !a.no_evaluator {
        // Printed at once, so the figure is visible while the designs run.
        let sec = evaluator_section(a)?;
        print!("{sec}");
        md.push_str(&sec);
    }
    if !a.no_design {
        let sec = design_section(a)?;
        print!("{sec}");
        md.push_str(&sec);
        let sec = hard::section(a, &[])?;
        print!("{sec}");
        md.push_str(&sec);
    }
    if let Some(f) = &a.write {
        std::fs::write(f, &md).with_context(|| format!("{}: cannot write", f.display()))?;
    }
    Ok(())
}

fn main() -> ExitCode {
    let a = Args::parse();
    match run(&a) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("ripplebank-bench: error: {e:#}");
            ExitCode::from(2)
        }
    }
}
