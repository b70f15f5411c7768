//! The infeasible path: the lowest ripple reported for an unreachable
//! target (and the default lower end of `tradeoff`, the same figure) against
//! the lowest target `design` itself meets, found here by an independent
//! bisection on `design_for` (source: the optimizer's own verified answers,
//! each bank checked over the corner region by the evaluator), on a
//! generated catalog of about 1,000 invented parts.

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use ripplebank::catalog::Catalog;
use ripplebank::optimize::{self, Settings};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;
use std::time::Instant;

/// About 1,000 variants of the invented demo parts: the same technologies,
/// capacitances and bias curves, ESR, ESL and cost scattered (invented data).
fn generated_catalog(rng: &mut StdRng, variants: usize) -> String {
    let mut rd = csv::Reader::from_reader(ripplebank::load::DEMO_CATALOG.as_bytes());
    let head = rd.headers().unwrap().clone();
    let col = |name: &str| head.iter().position(|h| h == name).unwrap();
    let (part, esr, esl, cost, mpn) =
        (col("part"), col("esr"), col("esl"), col("cost"), col("mpn"));
    let rows: Vec<csv::StringRecord> = rd.records().map(|r| r.unwrap()).collect();
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&head).unwrap();
    for j in 0..variants {
        for r in &rows {
            let mut scale = |cell: &str, lo: f64, hi: f64, unit: f64| -> String {
                let v = ripplebank::units::parse(
                    cell,
                    if unit == 1.0 {
                        ripplebank::units::Unit::Cost
                    } else if unit == 1e-3 {
                        ripplebank::units::Unit::Ohm
                    } else {
                        ripplebank::units::Unit::Henry
                    },
                )
                .unwrap();
                format!("{:e}", v * rng.gen_range(lo..hi))
            };
            let mut out: Vec<String> = r.iter().map(str::to_string).collect();
            out[part] = format!("{}-V{j}", r.get(part).unwrap());
            out[mpn] = format!("{}-V{j}", r.get(mpn).unwrap());
            out[esr] = scale(r.get(esr).unwrap(), 0.7, 1.4, 1e-3);
            out[esl] = scale(r.get(esl).unwrap(), 0.8, 1.25, 1e-9);
            out[cost] = scale(r.get(cost).unwrap(), 0.7, 1.5, 1.0);
            w.write_record(&out).unwrap();
        }
    }
    String::from_utf8(w.into_inner().unwrap()).unwrap()
}

fn problem(target_mv: f64, variants: usize) -> Problem {
    let mut rng = StdRng::seed_from_u64(0x5eed_1000);
    let cat = generated_catalog(&mut rng, variants);
    let scen = ripplebank::load::DEMO_SCENARIO
        .replace(
            "ripple_pp = \"8m\"",
            &format!("ripple_pp = \"{target_mv}m\""),
        )
        .replace("catalog = \"../catalogs/demo-parts.csv\"\n", "");
    Problem::new(
        Scenario::from_str(&scen, "generated.toml").unwrap(),
        Catalog::from_bytes(cat.as_bytes(), "generated.csv").unwrap(),
    )
    .unwrap()
}

/// Budget settings (the test runs on two shared cores); both searches below
/// use the same ones.
fn budget() -> Settings {
    Settings {
        pool: 24,
        milp_proposals: 0,
        max_evaluations: 50_000,
        ..Default::default()
    }
}

#[test]
fn lowest_ripple_is_what_design_meets_on_a_1000_part_catalog() {
    let p = problem(1.0, 13);
    let n = p.catalog.parts.len();
    assert!((900..=1200).contains(&n), "{n} parts");
    let s = budget();
    // The tool's figure and the independent bisection run side by side (two cores).
    let t0 = Instant::now();
    let (low, (met, lo)) = std::thread::scope(|sc| {
        let tool = sc.spawn(|| optimize::lowest_ripple(&p, &s));
        // Independent bisection on design itself, from a target nothing can
        // meet (below the region's harmonic floor of the best part at its
        // largest count, checked below) to one far above.
        let mine = sc.spawn(|| {
            let (mut lo, mut hi) = (1e-5, 0.1);
            assert!(optimize::design_for(&p, hi, &s).found.is_some());
            assert!(optimize::design_for(&p, lo, &s).found.is_none());
            let mut met = hi;
            while hi > lo * 1.003 {
                let t = (lo * hi).sqrt();
                match optimize::design_for(&p, t, &s).found {
                    Some(f) => {
                        met = met.min(f.ripple_pp);
                        hi = t.min(f.ripple_pp);
                    }
                    None => lo = t,
                }
            }
            (met, lo)
        });
        (tool.join().unwrap(), mine.join().unwrap())
    });
    eprintln!(
        "lowest {low:?}; design meets {met:e} (fails at {lo:e}); {:.1} s",
        t0.elapsed().as_secs_f64()
    );
    assert!(low.ripple_pp.is_finite());
    // The floor is a proven lower bound, the greedy figure an upper bracket.
    assert!(low.floor_pp <= low.ripple_pp && low.ripple_pp <= low.greedy_pp * (1.0 + 1e-12));
    // Never above what design meets, and within 2 % of it.
    assert!(
        low.ripple_pp <= met * (1.0 + 1e-9),
        "{} > {met}",
        low.ripple_pp
    );
    assert!(
        low.ripple_pp >= met * 0.98,
        "{} < 0.98 × {met}",
        low.ripple_pp
    );
    // And design meets the reported figure itself.
    let at = optimize::design_for(&p, low.ripple_pp, &s);
    assert!(at.found.is_some());
}
