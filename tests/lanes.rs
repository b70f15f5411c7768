//! The search's answer does not depend on the machine: the line sets go
//! over a fixed number of lanes, run on one thread or on two, and the
//! lowest ripple's probe schedule depends on the input alone. A rule of
//! this project (reproducible answers), checked against itself on one
//! thread, which is the sequential reference; no outside source. Invented
//! random catalogs.

mod common;

use common::random_catalog;
use rand::rngs::StdRng;
use rand::SeedableRng;
use ripplebank::catalog::Catalog;
use ripplebank::optimize::{self, Settings};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;

fn problem(target_mv: f64, parts: usize, seed: u64) -> Problem {
    let mut rng = StdRng::seed_from_u64(seed);
    let cat = random_catalog(&mut rng, parts);
    let scen = format!(
        "[converter]\ntopology = \"buck\"\nvin = 12\nvout = 3.3\niout = 6\nfsw = \"500k\"\ninductance = \"1.5u\"\nmax_capacitance = \"1500u\"\n[target]\nripple_pp = \"{target_mv}m\"\nbandwidth = \"20M\"\nharmonics = 60\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = 12\nmax_lines = 3\n[selection]\nmax_per_part = 8\n"
    );
    Problem::new(
        Scenario::from_str(&scen, "lanes.toml").unwrap(),
        Catalog::from_bytes(cat.as_bytes(), "lanes.csv").unwrap(),
    )
    .unwrap()
}

fn settings(threads: usize, budget: usize) -> Settings {
    Settings {
        exhaustive_limit: 200_000,
        milp_proposals: 0,
        max_evaluations: budget,
        threads,
        ..Default::default()
    }
}

#[test]
fn one_thread_and_two_give_the_same_design() {
    let mut rounds_seen = 0;
    let mut stopped_seen = 0;
    // (seed, target mV, budget per stage, parts): the pool path and the
    // exhaustive path, each once run to the end and once stopped.
    for (seed, target, budget, parts) in [
        (0x1a_0001u64, 6.0, 1_000_000usize, 300usize),
        (0x1a_0002, 4.0, 300, 300),
        (0x1a_0003, 2.5, 1_000_000, 60),
        (0x1a_0004, 2.0, 2_000, 60),
    ] {
        let p = problem(target, parts, seed);
        let one = optimize::design(&p, &settings(1, budget));
        eprintln!(
            "{seed:#x}: {:?}, {} of {} line sets solved, {} evaluations, stopped {}",
            one.status,
            one.stats.line_sets_solved,
            one.stats.line_sets_total,
            one.stats.evaluations,
            one.stats.stopped
        );
        let two = optimize::design(&p, &settings(2, budget));
        assert_eq!(one.status, two.status, "seed {seed:#x}");
        assert_eq!(
            one.found.as_ref().map(|f| (f.bank.clone(), f.key)),
            two.found.as_ref().map(|f| (f.bank.clone(), f.key)),
            "seed {seed:#x}"
        );
        assert_eq!(
            one.stats.evaluations, two.stats.evaluations,
            "seed {seed:#x}"
        );
        assert_eq!(one.stats.line_sets_solved, two.stats.line_sets_solved);
        assert_eq!(one.stats.lower_bound, two.stats.lower_bound);
        // The rounds over the lanes start past 64 line sets.
        if one.stats.line_sets_solved > 64 {
            rounds_seen += 1;
        }
        if one.stats.stopped {
            stopped_seen += 1;
        }
    }
    assert!(rounds_seen >= 3, "the cases must reach the lanes' rounds");
    assert!(stopped_seen >= 2, "cases must stop on their budget");
}

#[test]
fn one_thread_and_two_give_the_same_lowest_ripple() {
    let p = problem(6.0, 60, 0x1a_0004);
    let one = optimize::lowest_ripple(&p, &settings(1, 20_000));
    let two = optimize::lowest_ripple(&p, &settings(2, 20_000));
    assert!(one.ripple_pp.is_finite());
    // The greedy descent runs in two lanes on two threads, in one on one.
    assert_eq!(one.greedy_pp, two.greedy_pp);
    assert_eq!(one.ripple_pp, two.ripple_pp);
    assert_eq!(one.probes, two.probes);
    assert_eq!(one.bank, two.bank);
}
