//! The optimizer against brute-force enumeration (the oracle), written
//! independently of the optimizer: it walks every count vector of a small
//! catalog (≤ 6 parts, ≤ 3 lines, counts ≤ 8) in cost order and takes the
//! first one the evaluator passes. Source: brute-force enumeration.

use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use ripplebank::bank::{Band, Corner};
use ripplebank::catalog::Catalog;
use ripplebank::optimize::{self, Settings, Status};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;

const MAX_COUNT: u32 = 8;

fn random_catalog(rng: &mut StdRng, n: usize) -> String {
    let mut s = String::from("part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,dc_bias,case,area,height,ripple_current\n");
    for i in 0..n {
        let kind = rng.gen_range(0..4);
        let row = match kind {
            0 | 1 => {
                let c = [1.0, 2.2, 4.7, 10.0, 22.0, 47.0][rng.gen_range(0..6)];
                let case = ["0402", "0603", "0805", "1206", "1210"][rng.gen_range(0..5)];
                let k = rng.gen_range(0.3..0.9);
                format!(
                    "P{i},ceramic,{c}u,50,{:.1}m,{:.2}n,{:.3},10%,X7R,0:1;50:{k:.2},{case},,1.0,",
                    rng.gen_range(2.0..10.0),
                    rng.gen_range(0.3..1.0),
                    rng.gen_range(0.02..0.3)
                )
            }
            2 => format!(
                "P{i},polymer-aluminum,{}u,50,{:.0}m,{:.1}n,{:.2},20%,,,D6.3x5.8,{:.1},5.8,{:.1}",
                [100, 150, 220, 330][rng.gen_range(0..4)],
                rng.gen_range(6.0..30.0),
                rng.gen_range(1.0..3.0),
                rng.gen_range(0.2..0.8),
                rng.gen_range(30.0..50.0),
                rng.gen_range(1.0..4.0)
            ),
            _ => format!(
                "P{i},aluminum-electrolytic,{}u,50,{:.0}m,{:.1}n,{:.2},20%,,,D8x10,{:.1},10,{:.2}",
                [100, 220, 470][rng.gen_range(0..3)],
                rng.gen_range(40.0..300.0),
                rng.gen_range(2.0..5.0),
                rng.gen_range(0.05..0.3),
                rng.gen_range(60.0..80.0),
                rng.gen_range(0.3..1.5)
            ),
        };
        s.push_str(&row);
        s.push('\n');
    }
    s
}

fn random_converter(rng: &mut StdRng) -> String {
    match rng.gen_range(0..6) {
        0 => format!(
            "topology = \"buck\"\nvin = {}\nvout = {:.1}\niout = 5\nfsw = \"{}k\"\ninductance = \"{:.1}u\"\nphases = {}\n",
            rng.gen_range(8..20),
            rng.gen_range(1.0..5.0),
            rng.gen_range(300..1500),
            rng.gen_range(0.5..4.0),
            rng.gen_range(1..3)
        ),
        1 => format!(
            "topology = \"flyback\"\nvin_min = 36\nvin_max = 72\nvout = 12\niout = {:.1}\nfsw = \"{}k\"\ninductance = \"{}u\"\nturns_ratio = 0.5\nedge_time = \"30n\"\n",
            rng.gen_range(0.3..3.0),
            rng.gen_range(100..400),
            rng.gen_range(30..200)
        ),
        2 => format!(
            "topology = \"boost\"\nvin = 5\nvout = {}\niout = {:.2}\nfsw = \"{}k\"\ninductance = \"{:.1}u\"\nedge_time = \"10n\"\n",
            rng.gen_range(9..30),
            rng.gen_range(0.1..1.0),
            rng.gen_range(300..1500),
            rng.gen_range(2.0..10.0)
        ),
        3 => format!(
            "topology = \"bridge\"\nvin_min = 36\nvin_max = 60\nvout = 5\niout = 10\nfsw = \"{}k\"\ninductance = \"{:.1}u\"\nturns_ratio = 0.25\n",
            rng.gen_range(100..300),
            rng.gen_range(1.0..4.0)
        ),
        4 => format!(
            "topology = \"forward\"\nvin = 48\nvout = 5\niout = 5\nfsw = \"{}k\"\ninductance = \"{:.1}u\"\nturns_ratio = 0.2\n",
            rng.gen_range(100..500),
            rng.gen_range(2.0..10.0)
        ),
        _ => format!(
            "topology = \"module\"\nvin = 12\nvout = 5\niout = 3\nfsw = \"{}k\"\nstandalone_ripple_pp = \"{}m\"\ninternal_capacitance = \"{}u\"\ninternal_esr = \"5m\"\ninternal_esl = \"1n\"\n",
            rng.gen_range(200..800),
            rng.gen_range(20..60),
            rng.gen_range(5..30)
        ),
    }
}

/// Every count vector with at most three lines, each count 1..=MAX_COUNT.
fn all_banks(n: usize) -> Vec<Vec<(usize, u32)>> {
    let mut out = Vec::new();
    for mask in 1u32..(1 << n) {
        if mask.count_ones() > 3 {
            continue;
        }
        let idx: Vec<usize> = (0..n).filter(|i| mask & (1 << i) != 0).collect();
        let mut counts = vec![1u32; idx.len()];
        loop {
            out.push(idx.iter().copied().zip(counts.iter().copied()).collect());
            let mut j = 0;
            while j < counts.len() {
                counts[j] += 1;
                if counts[j] <= MAX_COUNT {
                    break;
                }
                counts[j] = 1;
                j += 1;
            }
            if j == counts.len() {
                break;
            }
        }
    }
    out
}

struct Oracle {
    best: Option<(f64, Vec<(usize, u32)>)>,
    margin_bank: bool,
}

fn oracle(p: &Problem) -> Oracle {
    let cat = &p.catalog;
    let s = &p.scenario;
    let eligible = &p.eligible;
    let mut ev = p.evaluator(eligible);
    let target = s.target.ripple_pp.0;
    let max_cap = s.converter.max_capacitance.map_or(f64::INFINITY, |c| c.0);
    let max_count = s.board.max_count.unwrap_or(u32::MAX);
    let max_area = s.board.max_area.map_or(f64::INFINITY, |a| a.0);
    let mut banks = all_banks(eligible.len());
    if s.converter.internal_capacitance.is_some() {
        banks.push(Vec::new()); // the converter alone
    }
    let cost = |b: &Vec<(usize, u32)>| b.iter().map(|&(i, n)| n as f64 * cat.parts[eligible[i]].cost).sum::<f64>();
    banks.sort_by(|a, b| cost(a).partial_cmp(&cost(b)).unwrap());
    let mut best = None;
    let mut margin_bank = false;
    for b in banks {
        let cap: f64 = b.iter().map(|&(i, n)| n as f64 * cat.parts[eligible[i]].c_nominal_max()).sum();
        let count: u32 = b.iter().map(|x| x.1).sum();
        let area: f64 = b.iter().map(|&(i, n)| n as f64 * cat.parts[eligible[i]].area.unwrap()).sum();
        if cap > max_cap || count > max_count || area > max_area {
            continue;
        }
        let r = ev.ripple_pp(&b, Corner::Worst, Band::Limited);
        if r > target {
            continue;
        }
        let cur = ev.part_currents(&b);
        let ok = b.iter().zip(&cur).all(|(&(i, _), &c)| cat.parts[eligible[i]].ripple_current.is_none_or(|r| c <= r));
        if !ok {
            continue;
        }
        if r <= 0.98 * target {
            margin_bank = true;
        }
        if best.is_none() {
            best = Some((cost(&b), b));
        }
        if margin_bank {
            break;
        }
    }
    Oracle { best, margin_bank }
}

#[test]
fn optimizer_matches_brute_force_on_random_cases() {
    let mut rng = StdRng::seed_from_u64(0x5eed_2026);
    let cases = 200;
    let (mut exact, mut within1, mut worst_excess, mut both_infeasible, mut feasible_cases) = (0, 0, 0.0f64, 0, 0);
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
        let scenario = Scenario::from_str(&scen, "random.toml").unwrap_or_else(|e| panic!("case {case}: {e}\n{scen}"));
        let p = Problem::new(scenario, catalog).unwrap();
        let o = oracle(&p);
        let settings = Settings { explain: false, ..Default::default() };
        let d = optimize::design(&p, &settings);
        match (&o.best, &d.found) {
            (None, None) => both_infeasible += 1,
            (Some((oc, ob)), None) => {
                assert!(!o.margin_bank, "case {case}: tool says infeasible, oracle found {ob:?} at cost {oc}\n{scen}\n{cat_text}");
                // A bank within 2 % of the limit: tolerated, counted as a miss.
                feasible_cases += 1;
            }
            (None, Some(f)) => {
                // The tool's bank must still verify; the oracle's space is smaller only if counts > 8.
                panic!("case {case}: oracle found nothing, tool found {:?}\n{scen}\n{cat_text}", f.bank);
            }
            (Some((oc, _)), Some(f)) => {
                feasible_cases += 1;
                // Every reported bank verifies with the evaluator.
                let a = ripplebank::assessment::assess(&p, &f.bank).unwrap();
                assert!(a.ripple_pp <= p.scenario.target.ripple_pp.0 * (1.0 + 1e-9), "case {case}: bank does not verify");
                let tool = f.key[0];
                let excess = if *oc > 0.0 { (tool - oc) / oc } else { tool };
                assert!(excess < 0.05, "case {case}: tool cost {tool} is {:.1} % above the oracle's {oc}", excess * 100.0);
                assert!(tool >= oc * (1.0 - 1e-9), "case {case}: tool cost {tool} below the oracle's {oc}: the oracle or the limits disagree");
                if excess <= 1e-9 {
                    exact += 1;
                }
                if excess <= 0.01 {
                    within1 += 1;
                }
                worst_excess = worst_excess.max(excess);
                assert_eq!(d.status, Status::Optimal);
            }
        }
    }
    eprintln!(
        "oracle: {cases} cases, {feasible_cases} feasible, {both_infeasible} infeasible for both; optimum reached in {exact}, within 1 % in {within1}, worst excess {:.2} %",
        worst_excess * 100.0
    );
    assert!(feasible_cases >= 60, "too few feasible cases to mean anything: {feasible_cases}");
    assert!(within1 as f64 >= 0.95 * feasible_cases as f64);
}
