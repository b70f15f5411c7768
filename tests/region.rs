//! The corner region's worst point against an independent dense search of
//! the same region (brute force over a grid, `common::dense_region`, not
//! the tool's own search), on cases built so that the worst point is not a
//! named corner.

use ripplebank::assessment::assess;
use ripplebank::bank::Band;
use ripplebank::catalog::Catalog;
use ripplebank::problem::Problem;
use ripplebank::region::{named_states, value_at, Named};
use ripplebank::scenario::Scenario;

mod common;

const HEADER: &str =
    "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,dc_bias,case\n";

fn problem(scenario: &str, catalog: &str) -> Problem {
    let s = Scenario::from_str(scenario, "region.toml").unwrap();
    let c = Catalog::from_bytes(format!("{HEADER}{catalog}").as_bytes(), "region.csv").unwrap();
    Problem::new(s, c).unwrap()
}

fn bank(p: &Problem, spec: &[(&str, u32)]) -> Vec<(usize, u32)> {
    spec.iter()
        .map(|(id, n)| (p.catalog.position(id).unwrap(), *n))
        .collect()
}

fn dense(p: &Problem, b: &[(usize, u32)]) -> f64 {
    let idx: Vec<usize> = b.iter().map(|x| x.0).collect();
    let local: Vec<(usize, u32)> = b.iter().enumerate().map(|(j, x)| (j, x.1)).collect();
    let mut ev = p.evaluator(&idx);
    common::dense_region(p, &mut ev, &local).0
}

#[test]
fn interleaved_buck_ripples_most_inside_its_input_range() {
    // Two phases from 5.6–8.3 V to 5 V: the duty runs 0.60–0.89. Two
    // interleaved phases cancel completely at D = 0.5 and least near
    // D = 0.75 (between the cancellation points k/N; Erickson & Maksimović,
    // ch. 2 ripple plus the interleaving sum), which is inside the range
    // (vin = 6.67 V), so the worst input voltage is not an end.
    let scen = "[converter]\ntopology = \"buck\"\nvin_min = 5.6\nvin_max = 8.3\nvout = 5\niout = 10\nfsw = \"500k\"\ninductance = \"1u\"\nphases = 2\n[target]\nripple_pp = \"20m\"\nbandwidth = \"20M\"\n[board]\nmounting_inductance = \"0.3n\"\n";
    let p = problem(scen, "P,polymer-aluminum,220u,10,8m,1.5n,0.3,20%,,,\n");
    let b = bank(&p, &[("P", 2)]);
    let a = assess(&p, &b).unwrap();
    let v = a.worst_corner.vin.unwrap();
    assert!(
        v > 5.7 && v < 8.2,
        "worst vin {v} should be inside the range"
    );
    let d = dense(&p, &b);
    assert!(a.ripple_pp >= 0.99 * d, "tool {} vs dense {d}", a.ripple_pp);
    // And clearly above what either end of the range gives, at any vertex.
    let local = [(0usize, 2u32)];
    let mut ev = p.evaluator(&[b[0].0]);
    let l = ripplebank::converter::region_inductances(&p.scenario)[0];
    let mut ends: f64 = 0.0;
    for vin in [5.6, 8.3] {
        let op = ev.add_op(&p.operating_point(Some(vin), l));
        for w in [Named::Low, Named::High, Named::Typical] {
            let st = named_states(&ev, &local, w);
            ends = ends.max(value_at(&mut ev, &local, &st, op, Band::Limited));
        }
    }
    assert!(a.ripple_pp > 1.05 * ends, "{} vs ends {ends}", a.ripple_pp);
}

#[test]
fn anti_resonant_bank_is_worst_inside_its_capacitance_box() {
    // A bulk part (100 µF, 2 nH) is inductive at MHz; a small ceramic in
    // parallel resonates against it at f = 1/(2π·sqrt((La + Lb)·C_b))
    // (parallel LC anti-resonance, any circuits text, e.g. Hayt & Kemmerly).
    // With C_b = 1.2 µF ± 20 % (X7R ± 15 %) that frequency sweeps across the
    // 3 MHz harmonic of a 1 MHz, D = 0.5 buck inside C_b's box, so the worst
    // point of the region has C_b strictly between its ends.
    let scen = "[converter]\ntopology = \"buck\"\nvin = 12\nvout = 6\niout = 5\nfsw = \"1meg\"\ninductance = \"2.2u\"\n[target]\nripple_pp = \"50m\"\nbandwidth = \"20M\"\n";
    let cat = "A,polymer-aluminum,100u,16,5m,2n,0.3,20%,,,\nB,ceramic,1.2u,16,2m,0.3n,0.01,20%,X7R,,0603\n";
    let p = problem(scen, cat);
    let b = bank(&p, &[("A", 1), ("B", 1)]);
    let a = assess(&p, &b).unwrap();
    let ib = p.catalog.position("B").unwrap();
    let m = p.part_model(ib);
    let cb = a.worst_corner.lines[1].capacitance;
    let (lo, hi) = (m.c_worst, m.c_high);
    assert!(
        cb > lo + 0.02 * (hi - lo) && cb < hi - 0.02 * (hi - lo),
        "worst C_b {cb} should be inside ({lo}, {hi})"
    );
    let d = dense(&p, &b);
    assert!(a.ripple_pp >= 0.99 * d, "tool {} vs dense {d}", a.ripple_pp);
    let corners = a.ripple_pp_corners.low.max(a.ripple_pp_corners.high);
    assert!(
        a.ripple_pp > 1.02 * corners,
        "{} vs corners {corners}",
        a.ripple_pp
    );
}
