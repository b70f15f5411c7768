//! The large-catalog path (part pool, mixed-integer proposals, neighbourhood
//! search) against the exhaustive search on the same cases (source:
//! exhaustive enumeration of every line set, itself checked against brute
//! force in tests/oracle.rs). The pool is made deliberately small (5 of 14
//! parts) and the mixed-integer proposals are off, so that the neighbourhood
//! search has the work to do.

mod common;

use common::{random_catalog, random_converter, MAX_COUNT};
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use ripplebank::catalog::Catalog;
use ripplebank::optimize::{self, Settings, Status};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;

#[test]
fn pool_and_neighbourhood_stay_close_to_the_exhaustive_optimum() {
    let mut rng = StdRng::seed_from_u64(0x9001);
    let (mut compared, mut exact, mut within5, mut worst) = (0, 0, 0, 0.0f64);
    for case in 0..60 {
        let cat_text = random_catalog(&mut rng, 14);
        let conv = random_converter(&mut rng);
        let scen = format!(
            "[converter]\n{conv}max_capacitance = \"{}u\"\n[target]\nripple_pp = \"{}m\"\nbandwidth = \"20M\"\nharmonics = 100\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = 16\nmax_lines = 3\n[selection]\nmax_per_part = {MAX_COUNT}\n",
            rng.gen_range(300..2000),
            rng.gen_range(5..60),
        );
        let p = Problem::new(
            Scenario::from_str(&scen, "random.toml").unwrap(),
            Catalog::from_bytes(cat_text.as_bytes(), "random.csv").unwrap(),
        )
        .unwrap();
        let full = optimize::design(
            &p,
            &Settings {
                ..Default::default()
            },
        );
        let small = optimize::design(
            &p,
            &Settings {
                exhaustive_limit: 0,
                pool: 5,
                milp_proposals: 0,
                ..Default::default()
            },
        );
        match (&full.found, &small.found) {
            (Some(f), Some(s)) => {
                assert_eq!(full.status, Status::Optimal);
                compared += 1;
                let excess = if f.key[0] > 0.0 {
                    (s.key[0] - f.key[0]) / f.key[0]
                } else {
                    s.key[0]
                };
                assert!(
                    excess >= -1e-9,
                    "case {case}: pool result below the exhaustive optimum"
                );
                if excess <= 1e-9 {
                    exact += 1;
                }
                if excess <= 0.05 {
                    within5 += 1;
                }
                worst = worst.max(excess);
            }
            (Some(f), None) => panic!(
                "case {case}: the pool path found nothing, exhaustive found {:?}",
                f.bank
            ),
            (None, Some(s)) => panic!(
                "case {case}: exhaustive found nothing, the pool path found {:?}",
                s.bank
            ),
            (None, None) => {}
        }
    }
    eprintln!("pool: {compared} cases; exhaustive optimum reached in {exact}, within 5 % in {within5}, worst excess {:.1} %", worst * 100.0);
    assert!(compared >= 25);
    assert!(within5 as f64 >= 0.8 * compared as f64);
}
