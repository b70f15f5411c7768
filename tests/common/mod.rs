#![allow(dead_code)] // each test binary uses its own part of these helpers
//! Random small cases shared by the brute-force tests (invented data).

pub mod ngspice;

use rand::rngs::StdRng;
use rand::Rng;

pub const MAX_COUNT: u32 = 8;

pub fn random_catalog(rng: &mut StdRng, n: usize) -> String {
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

pub fn random_converter(rng: &mut StdRng) -> String {
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
#[allow(dead_code)] // not every test uses it
pub fn all_banks(n: usize) -> Vec<Vec<(usize, u32)>> {
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

/// An independent dense search of the corner region (brute force, not the
/// tool's own search): every line's capacitance at five points of
/// `[C_low, C_high]` and its ESR at both ends, at the region's starting
/// input voltages plus eight more evenly spaced, at each region
/// inductance. Returns the largest target-bandwidth ripple and the largest
/// RMS current of each line (one capacitor) seen.
#[allow(dead_code)]
pub fn dense_region(
    p: &ripplebank::problem::Problem,
    ev: &mut ripplebank::evaluator::Evaluator,
    bank: &[(usize, u32)],
) -> (f64, Vec<f64>) {
    use ripplebank::evaluator::{Band, LineState};
    let mut vins: Vec<Option<f64>> = p.region_ops.iter().map(|o| o.vin).collect();
    let v: Vec<f64> = p.scenario.vin_corners();
    if v.len() > 1 {
        for j in 1..9 {
            vins.push(Some(v[0] + (v[v.len() - 1] - v[0]) * j as f64 / 9.0));
        }
    }
    vins.dedup();
    let ls = ripplebank::converter::region_inductances(&p.scenario);
    let mut ops = Vec::new();
    for l in &ls {
        for vin in &vins {
            ops.push(ev.add_op(&p.operating_point(*vin, *l)));
        }
    }
    let opts: Vec<Vec<LineState>> = bank
        .iter()
        .map(|&(i, _)| {
            let m = &ev.parts[i];
            let mut o = Vec::new();
            for c in 0..5 {
                let cap = m.c_worst + (m.c_high - m.c_worst) * c as f64 / 4.0;
                for esr in [m.esr_min, m.esr_max] {
                    o.push(LineState { c: cap, esr });
                }
            }
            o
        })
        .collect();
    let mut worst = 0.0_f64;
    let mut cur = vec![0.0; bank.len()];
    let mut idx = vec![0usize; bank.len()];
    loop {
        let st: Vec<LineState> = idx.iter().zip(&opts).map(|(&j, o)| o[j]).collect();
        ev.fill_states(bank, &st, ev.n_full);
        for &op in &ops {
            worst = worst.max(ev.pp_filled(op, Band::Limited));
            ev.currents_filled(bank, &st, op, &mut cur);
        }
        let mut d = 0;
        while d < idx.len() {
            idx[d] += 1;
            if idx[d] < opts[d].len() {
                break;
            }
            idx[d] = 0;
            d += 1;
        }
        if d == idx.len() {
            break;
        }
    }
    (worst, cur)
}

/// The brute-force optimum (oracle): every count vector in cost order, the
/// first that passes over the dense region search and every limit.
#[allow(dead_code)] // not every test uses it
pub struct Oracle {
    /// Cost and bank (eligible-list indices) of the optimum, if any passes.
    pub best: Option<(f64, Vec<(usize, u32)>)>,
}

#[allow(dead_code)] // not every test uses it
pub fn oracle(p: &ripplebank::problem::Problem) -> Oracle {
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
    let cost = |b: &Vec<(usize, u32)>| {
        b.iter()
            .map(|&(i, n)| n as f64 * cat.parts[eligible[i]].cost)
            .sum::<f64>()
    };
    banks.sort_by(|a, b| cost(a).partial_cmp(&cost(b)).unwrap());
    let mut best = None;
    for b in banks {
        let cap: f64 = b
            .iter()
            .map(|&(i, n)| n as f64 * cat.parts[eligible[i]].c_nominal_max())
            .sum();
        let count: u32 = b.iter().map(|x| x.1).sum();
        let area: f64 = b
            .iter()
            .map(|&(i, n)| n as f64 * cat.parts[eligible[i]].area.unwrap())
            .sum();
        if cap > max_cap || count > max_count || area > max_area {
            continue;
        }
        // The low corner is one point of the region: a quick necessary test.
        if ev.ripple_check(&b, target) > target {
            continue;
        }
        let (r, cur) = dense_region(p, &mut ev, &b);
        if r > target {
            continue;
        }
        let ok = b
            .iter()
            .zip(&cur)
            .all(|(&(i, _), &c)| cat.parts[eligible[i]].ripple_current.is_none_or(|r| c <= r));
        if !ok {
            continue;
        }
        // The first passing bank in cost order is the optimum.
        best = Some((cost(&b), b));
        break;
    }
    Oracle { best }
}
