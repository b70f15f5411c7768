//! Large catalogs: the answer never gets worse when a limit is relaxed, and
//! the lower bound every `feasible` answer carries is valid (sources:
//! brute-force enumeration of every count vector on the oracle's small
//! cases, `common::oracle`; and the best bank found by a long run with every
//! line set enumerated on mid-size cases). Invented random catalogs.

mod common;

use common::{oracle, random_catalog, random_converter, MAX_COUNT};
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use ripplebank::catalog::Catalog;
use ripplebank::optimize::{self, Settings, Status};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;

fn problem(scen: &str, cat: &str) -> Problem {
    Problem::new(
        Scenario::from_str(scen, "random.toml").unwrap_or_else(|e| panic!("{e}\n{scen}")),
        Catalog::from_bytes(cat.as_bytes(), "random.csv").unwrap(),
    )
    .unwrap()
}

/// A modest budget, so that the large-catalog path (pool, neighbourhood,
/// budget stops) does the work and the test stays fast.
fn modest() -> Settings {
    Settings {
        exhaustive_limit: 5_000,
        pool: 12,
        milp_proposals: 0,
        max_evaluations: 4_000,
        ..Default::default()
    }
}

#[test]
fn relaxing_any_limit_never_raises_the_objective() {
    let mut rng = StdRng::seed_from_u64(0x14_0001);
    let mut compared = 0;
    for (case, parts) in [200usize, 500, 1000].into_iter().enumerate() {
        let cat = random_catalog(&mut rng, parts);
        let conv = "topology = \"buck\"\nvin = 12\nvout = 3.3\niout = 6\nfsw = \"500k\"\ninductance = \"1.5u\"\n";
        let (cap, count, area, lines, per) = (1500, 10, 120, 2, 6);
        let scen = |cap: u32, count: u32, area: u32, lines: u32, per: u32| {
            format!(
                "[converter]\n{conv}max_capacitance = \"{cap}u\"\n[target]\nripple_pp = \"{}m\"\nbandwidth = \"20M\"\nharmonics = 60\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = {count}\nmax_area = \"{area}\"\nmax_lines = {lines}\n[selection]\nmax_per_part = {per}\n",
                [6, 9, 12][case]
            )
        };
        let base = optimize::design(
            &problem(&scen(cap, count, area, lines, per), &cat),
            &modest(),
        );
        let Some(b) = base.found else {
            panic!("case {case}: the tight problem must be feasible for the test to mean anything");
        };
        let relaxed = [
            ("max_capacitance", scen(cap * 2, count, area, lines, per)),
            ("max_count", scen(cap, count + 4, area, lines, per)),
            ("max_area", scen(cap, count, area * 2, lines, per)),
            ("max_lines", scen(cap, count, area, lines + 1, per)),
            ("max_per_part", scen(cap, count, area, lines, per + 4)),
        ];
        for (name, s) in relaxed {
            let r = optimize::design(&problem(&s, &cat), &modest());
            let f = r.found.unwrap_or_else(|| {
                panic!("case {case}: {name} relaxed, the tighter bank was lost")
            });
            assert!(
                f.key[0] <= b.key[0] * (1.0 + 1e-9),
                "case {case} ({parts} parts): relaxing {name} raised the cost {} → {}",
                b.key[0],
                f.key[0]
            );
            compared += 1;
        }
    }
    assert_eq!(compared, 15);
}

#[test]
fn lower_bound_never_exceeds_the_brute_force_optimum() {
    // The pool path is forced (every line set is not enumerated), so the
    // answer carries the disjunctive bound rather than a proof.
    let mut rng = StdRng::seed_from_u64(0x14_0002);
    let (mut checked, mut positive) = (0, 0);
    for case in 0..40 {
        let nparts = rng.gen_range(3..=6);
        let cat = random_catalog(&mut rng, nparts);
        let conv = random_converter(&mut rng);
        let scen = format!(
            "[converter]\n{conv}max_capacitance = \"{}u\"\n[target]\nripple_pp = \"{}m\"\nbandwidth = \"20M\"\nharmonics = {}\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = {}\nmax_area = \"{}\"\nmax_lines = 3\n[selection]\nmax_per_part = {MAX_COUNT}\n",
            rng.gen_range(200..2000),
            rng.gen_range(3..80),
            rng.gen_range(60..200),
            rng.gen_range(6..20),
            rng.gen_range(40..400),
        );
        let p = problem(&scen, &cat);
        let Some((best, _)) = oracle(&p).best else {
            continue;
        };
        let d = optimize::design(
            &p,
            &Settings {
                exhaustive_limit: 0,
                pool: 2,
                milp_proposals: 0,
                ..Default::default()
            },
        );
        let f = d.found.as_ref().expect("the oracle found a bank");
        let lb = d.stats.lower_bound.unwrap_or_else(|| {
            panic!(
                "case {case}: a {} answer with no lower bound",
                d.status.name()
            )
        });
        assert!(
            lb <= best * (1.0 + 1e-9),
            "case {case}: lower bound {lb} above the brute-force optimum {best}\n{scen}\n{cat}"
        );
        assert!(lb <= f.key[0] * (1.0 + 1e-9));
        if d.status == Status::Optimal {
            assert!(
                (f.key[0] - best).abs() <= 1e-9 * best.max(1e-12),
                "case {case}: optimal but not the optimum"
            );
        }
        checked += 1;
        if lb > 0.0 {
            positive += 1;
        }
    }
    eprintln!("lower bound: {checked} cases checked against brute force, {positive} with a positive bound");
    assert!(checked >= 12, "too few feasible cases: {checked}");
    assert!(
        positive * 2 >= checked,
        "the bound is trivial too often: {positive} of {checked}"
    );
}

#[test]
fn lower_bound_never_exceeds_the_best_of_a_long_run() {
    let mut rng = StdRng::seed_from_u64(0x14_0003);
    let mut checked = 0;
    for case in 0..6 {
        let n = rng.gen_range(60..120);
        let cat = random_catalog(&mut rng, n);
        let conv = random_converter(&mut rng);
        let scen = format!(
            "[converter]\n{conv}max_capacitance = \"{}u\"\n[target]\nripple_pp = \"{}m\"\nbandwidth = \"20M\"\nharmonics = 60\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = 16\nmax_lines = 3\n[selection]\nmax_per_part = {MAX_COUNT}\n",
            rng.gen_range(300..2000),
            rng.gen_range(5..60),
        );
        let p = problem(&scen, &cat);
        let quick = optimize::design(&p, &modest());
        let long = optimize::design(
            &p,
            &Settings {
                exhaustive_limit: usize::MAX,
                ..Default::default()
            },
        );
        let (Some(q), Some(l)) = (&quick.found, &long.found) else {
            continue;
        };
        let lb = quick
            .stats
            .lower_bound
            .expect("every answer carries a bound");
        assert!(
            lb <= l.key[0] * (1.0 + 1e-9),
            "case {case}: bound {lb} above the long run's best {}",
            l.key[0]
        );
        assert!(q.key[0] >= l.key[0] * (1.0 - 1e-9) || long.status != Status::Optimal);
        checked += 1;
    }
    assert!(checked >= 3, "too few feasible cases: {checked}");
}

#[test]
fn lowest_ripple_is_not_far_above_what_design_meets() {
    // The lowest reachable ripple once came out several times too high on
    // large catalogs (parts ranked by ESL alone at an infinite target). A
    // design at half of it must find nothing (source: the design search
    // itself, every bank it returns verified by the evaluator).
    let mut rng = StdRng::seed_from_u64(0x14_0004);
    for case in 0..2 {
        let cat = random_catalog(&mut rng, 150);
        let scen = "[converter]\ntopology = \"buck\"\nvin = 12\nvout = 3.3\niout = 6\nfsw = \"500k\"\ninductance = \"1.5u\"\n[target]\nripple_pp = \"10m\"\nbandwidth = \"20M\"\nharmonics = 60\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = 12\nmax_lines = 3\n[selection]\nmax_per_part = 8\n";
        let p = problem(scen, &cat);
        let low = optimize::lowest_ripple(&p, &modest()).ripple_pp;
        assert!(low.is_finite(), "case {case}: no bank at all");
        let d = optimize::design_for(&p, low * 0.5, &Settings::default());
        assert!(
            d.found.is_none(),
            "case {case}: design meets {} V, half the lowest ripple {low} V",
            d.found.unwrap().ripple_pp
        );
    }
}

#[test]
fn a_target_no_bank_meets_stops_on_the_budget() {
    // The two-phase core scenario at 1 mV: no bank of the demo catalog
    // reaches it (its lowest ripple is about 2 mV), yet the line-set bounds
    // leave sets open (at 0.2 mV they rule out every set). The search must
    // stop on its budget, with the work charged (exact evaluations plus the
    // enumeration's nodes) within the stages' budgets. Source: the budget
    // rule of the search (a rule of this project, no outside source).
    let p = core_2phase(1.0e-3);
    let budget = 20_000;
    let settings = Settings {
        max_evaluations: budget,
        ..Default::default()
    };
    let out = optimize::design(&p, &settings);
    assert_eq!(out.status, Status::Infeasible);
    assert!(
        out.stats.stopped,
        "the search must stop on its budget: {:?}",
        out.stats
    );
    let stages = p.scenario.max_lines() as usize;
    assert!(
        out.stats.evaluations > 0 && out.stats.evaluations <= stages * (budget + 1),
        "work charged {} for {stages} stages of {budget}",
        out.stats.evaluations
    );
    // Explaining why 0.2 mV is out of reach relaxes each limit in turn and
    // designs again; nothing relaxed reaches it, so the catalog binds.
    // (The 8-minute infeasible run measured on the command line before the
    // enumeration was charged is not reproduced by this test: with the
    // charge removed it still passes here in about 2 s.)
    let t0 = std::time::Instant::now();
    let b = optimize::binding(&p, 0.2e-3);
    eprintln!(
        "binding {:?} in {:.1} s",
        b.limits,
        t0.elapsed().as_secs_f64()
    );
    assert_eq!(b.limits, vec!["catalog".to_string()]);
}

#[test]
fn a_best_bank_the_region_refuses_adds_its_cut_without_a_new_round() {
    // The two-phase core scenario at 6.02 mV: the cheapest bank that passes
    // the `low` corner and its box's vertices (a small ceramic beside
    // thirteen bulk parts) breaks the target elsewhere in the corner region.
    // Checking each would-be best bank over the whole region at once must
    // give the answer of the search that ends its round and starts again
    // with the new point, in one round and with less work. A fast path
    // against its reference (a rule of this project, no outside source; the
    // brute-force oracle in tests/oracle.rs checks the answers themselves).
    let p = core_2phase(6.02047022558e-3);
    let fast = optimize::design(&p, &Settings::default());
    let rounds = optimize::design(
        &p,
        &Settings {
            region_each_best: false,
            ..Default::default()
        },
    );
    assert!(
        rounds.stats.region_rounds >= 2,
        "the case must make the region refuse a best bank: {:?}",
        rounds.stats
    );
    assert_eq!(fast.status, Status::Optimal, "{:?}", fast.stats);
    assert_eq!(rounds.status, Status::Optimal, "{:?}", rounds.stats);
    let (f, r) = (fast.found.unwrap(), rounds.found.unwrap());
    assert_eq!(f.bank, r.bank);
    assert_eq!(f.key, r.key);
    assert_eq!(fast.stats.region_rounds, 1, "{:?}", fast.stats);
    assert!(
        fast.stats.evaluations < rounds.stats.evaluations,
        "{} evaluations against {}",
        fast.stats.evaluations,
        rounds.stats.evaluations
    );
}

/// The bundled two-phase core scenario and demo catalog at `target` (V).
fn core_2phase(target: f64) -> Problem {
    let text = std::fs::read_to_string("scenarios/core-2phase.toml").unwrap();
    let mut sc = Scenario::from_str(&text, "scenarios/core-2phase.toml").unwrap();
    sc.target.ripple_pp.0 = target;
    let cat = Catalog::from_bytes(
        &std::fs::read("catalogs/demo-parts.csv").unwrap(),
        "catalogs/demo-parts.csv",
    )
    .unwrap();
    Problem::new(sc, cat).unwrap()
}
