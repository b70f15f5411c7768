//! The optimizer against brute-force enumeration (the oracle), written
//! independently of the optimizer: it walks every count vector of a small
//! catalog (≤ 6 parts, ≤ 3 lines, counts ≤ 8) in cost order and takes the
//! first one that passes over the corner region, judged by an independent
//! dense search of the region (`common::dense_region`), not the tool's own
//! worst-point search. Source: brute-force enumeration.

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use ripplebank::catalog::Catalog;
use ripplebank::evaluator::Band;
use ripplebank::optimize::{self, Settings, Status};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;

mod common;
use common::{oracle, random_catalog, random_converter, MAX_COUNT};

#[test]
fn optimizer_matches_brute_force_on_random_cases() {
    let mut rng = StdRng::seed_from_u64(0x5eed_2026);
    let cases = 200;
    let (mut exact, mut stricter, mut worst_excess, mut both_infeasible, mut feasible_cases) =
        (0, 0, 0.0f64, 0, 0);
    for case in 0..cases {
        let nparts = rng.gen_range(2..=6);
        let cat_text = random_catalog(&mut rng, nparts);
        let conv = random_converter(&mut rng);
        let scen = format!(
            "[converter]\n{conv}max_capacitance = \"{}u\"\n[target]\nripple_pp = \"{}m\"\nbandwidth = \"20M\"\nharmonics = {}\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = {}\nmax_area = \"{}\"\nmax_lines = 3\n[selection]\nmax_per_part = {MAX_COUNT}\n",
            rng.gen_range(200..2000),
            rng.gen_range(3..80),
            rng.gen_range(60..200),
            rng.gen_range(6..20),
            rng.gen_range(40..400),
        );
        let catalog = Catalog::from_bytes(cat_text.as_bytes(), "random.csv").unwrap();
        let scenario = Scenario::from_str(&scen, "random.toml")
            .unwrap_or_else(|e| panic!("case {case}: {e}\n{scen}"));
        let p = Problem::new(scenario, catalog).unwrap();
        let o = oracle(&p);
        let settings = Settings {
            ..Default::default()
        };
        let d = optimize::design(&p, &settings);
        match (&o.best, &d.found) {
            (None, None) => both_infeasible += 1,
            (Some((oc, ob)), None) => {
                panic!("case {case}: tool says infeasible, oracle found {ob:?} at cost {oc}\n{scen}\n{cat_text}");
            }
            (None, Some(f)) => {
                // The tool's bank must still verify; the oracle's space is smaller only if counts > 8.
                panic!(
                    "case {case}: oracle found nothing, tool found {:?}\n{scen}\n{cat_text}",
                    f.bank
                );
            }
            (Some((oc, ob)), Some(f)) => {
                feasible_cases += 1;
                // Every reported bank holds over the region by the dense search
                // (the tool's figure may not fall more than 1 % below it).
                let idx: Vec<usize> = f.bank.iter().map(|b| b.0).collect();
                let local: Vec<(usize, u32)> =
                    f.bank.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
                let mut ev = p.evaluator(&idx);
                let (dense, _) = common::dense_region(&p, &mut ev, &local);
                let target = p.scenario.target.ripple_pp.0;
                assert!(
                    dense <= target * 1.01,
                    "case {case}: the tool's bank ripples {dense} V over the dense region search, target {target}"
                );
                // Every reported bank meets every limit the oracle checks.
                let a = ripplebank::assessment::assess(&p, &f.bank).unwrap();
                assert!(a.all_ok, "case {case}: bank {:?} breaks a limit", f.bank);
                let tool = f.key[0];
                let excess = if *oc > 0.0 { (tool - oc) / oc } else { tool };
                if excess > 1e-9 {
                    // Only legitimate when the tool's own search found a point of
                    // the region where the oracle's bank fails (a real point the
                    // dense grid stepped over).
                    let oidx: Vec<usize> = ob.iter().map(|b| p.eligible[b.0]).collect();
                    let ol: Vec<(usize, u32)> =
                        ob.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
                    let mut oev = p.evaluator(&oidx);
                    let w = ripplebank::region::worst(&p, &mut oev, &ol, Band::Limited);
                    assert!(
                        w.value > target,
                        "case {case}: tool cost {tool} above the oracle's {oc}, whose bank holds ({} V)\n{scen}\n{cat_text}",
                        w.value
                    );
                    stricter += 1;
                } else if tool < oc * (1.0 - 1e-9) {
                    // Cheaper than the oracle: only within the 1 % the region
                    // search may miss.
                    assert!(
                        dense > target,
                        "case {case}: tool cost {tool} below the oracle's {oc}"
                    );
                    stricter += 1;
                } else {
                    exact += 1;
                }
                worst_excess = worst_excess.max(excess);
                assert_eq!(d.status, Status::Optimal);
            }
        }
    }
    eprintln!(
        "oracle: {cases} cases, {feasible_cases} feasible, {both_infeasible} infeasible for both; same optimum in {exact}, \
         differing only where the region searches differ in {stricter}, worst excess {:.2} %",
        worst_excess * 100.0
    );
    assert!(
        feasible_cases >= 60,
        "too few feasible cases to mean anything: {feasible_cases}"
    );
    assert!(
        exact as f64 >= 0.95 * feasible_cases as f64,
        "{exact} of {feasible_cases}"
    );
}
