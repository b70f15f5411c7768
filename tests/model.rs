//! The ripple model against textbook formulas and plausibility facts.

mod common;
use ripplebank::assessment::assess;
use ripplebank::catalog::Catalog;
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;

fn problem(converter: &str, target: &str, catalog: &str) -> Problem {
    let text = format!("[converter]\n{converter}\n[target]\n{target}\n");
    let s = Scenario::from_str(&text, "test.toml").unwrap();
    let header = "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,dc_bias,case\n";
    let c = Catalog::from_bytes(format!("{header}{catalog}").as_bytes(), "test.csv").unwrap();
    Problem::new(s, c).unwrap()
}

fn ripple(p: &Problem, bank: &[(&str, u32)]) -> ripplebank::assessment::Assessment {
    let b: Vec<(usize, u32)> = bank
        .iter()
        .map(|(id, n)| (p.catalog.position(id).unwrap(), *n))
        .collect();
    assess(p, &b).unwrap()
}

const BUCK: &str =
    "topology = \"buck\"\nvin = 12\nvout = 3.3\niout = 6\nfsw = \"600k\"\ninductance = \"2.2u\"";

fn buck_di() -> f64 {
    // ΔI = Vout (1 − D) / (L f) (Erickson & Maksimović, Fundamentals of Power
    // Electronics, ch. 2, buck inductor current ripple).
    3.3 * (1.0 - 3.3 / 12.0) / (2.2e-6 * 600e3)
}

#[test]
fn triangle_into_ideal_capacitor() {
    // Ideal capacitor: Δv = ΔI / (8 f C) (Erickson & Maksimović, Fundamentals
    // of Power Electronics, ch. 2, buck output voltage ripple). Within 0.5 %.
    let p = problem(
        BUCK,
        "ripple_pp = \"1\"\nharmonics = 4000",
        "C,film,100u,50,0,0,1,0%,,,\n",
    );
    let a = ripple(&p, &[("C", 1)]);
    let want = buck_di() / (8.0 * 600e3 * 100e-6);
    let err = (a.ripple_pp_full_bandwidth - want).abs() / want;
    assert!(
        err < 0.005,
        "model {} vs ΔI/(8fC) {want}: {:.3} %",
        a.ripple_pp_full_bandwidth,
        err * 100.0
    );
}

#[test]
fn triangle_into_esr_only() {
    // A capacitance large enough to vanish at the ripple frequency leaves
    // the ESR: Δv = ΔI · ESR (Erickson & Maksimović, ch. 2; Ohm's law on the
    // triangle). Within 0.5 %.
    let p = problem(
        BUCK,
        "ripple_pp = \"1\"\nharmonics = 4000",
        "R,film,10,50,20m,0,1,0%,,,\n",
    );
    let a = ripple(&p, &[("R", 1)]);
    let want = buck_di() * 20e-3;
    let err = (a.ripple_pp_full_bandwidth - want).abs() / want;
    assert!(
        err < 0.005,
        "model {} vs ΔI·ESR {want}: {:.3} %",
        a.ripple_pp_full_bandwidth,
        err * 100.0
    );
}

#[test]
fn n_parts_in_parallel_divide_the_impedance() {
    // n identical capacitors in parallel: C·n, ESR/n (circuit law). The
    // ripple of 4 × 25 µF equals that of one 100 µF part with a quarter of the ESR.
    let cat = "A,film,25u,50,8m,0,1,0%,,,\nB,film,100u,50,2m,0,1,0%,,,\n";
    let p = problem(BUCK, "ripple_pp = \"1\"", cat);
    let a = ripple(&p, &[("A", 4)]);
    let b = ripple(&p, &[("B", 1)]);
    assert!((a.ripple_pp - b.ripple_pp).abs() < 1e-9 * b.ripple_pp);
}

#[test]
fn flyback_capacitance_dominated_charge_balance() {
    // While the rectifier is off (D·T) the capacitor alone feeds Iout:
    // Δv ≈ Iout · D / (f · C) (charge balance; Erickson & Maksimović, ch. 6,
    // flyback output ripple). CCM, large capacitance, no ESR or ESL; the
    // secondary current ramp adds a small parabolic part, hence 3 %.
    let conv = "topology = \"flyback\"\nvin = 48\nvout = 12\niout = 2\nfsw = \"250k\"\ninductance = \"200u\"\nturns_ratio = 0.5";
    let p = problem(
        conv,
        "ripple_pp = \"1\"\nharmonics = 4000",
        "C,film,100u,50,0,0,1,0%,,,\n",
    );
    let d = 12.0 / (12.0 + 0.5 * 48.0);
    let a = ripple(&p, &[("C", 1)]);
    let want = 2.0 * d / (250e3 * 100e-6);
    let err = (a.ripple_pp_full_bandwidth - want).abs() / want;
    assert!(
        err < 0.03,
        "model {} vs Iout·D/(fC) {want}: {:.2} %",
        a.ripple_pp_full_bandwidth,
        err * 100.0
    );
    assert_eq!(a.corners[0].mode.as_deref(), Some("CCM"));
}

#[test]
fn boost_capacitance_dominated_charge_balance() {
    // Boost: the capacitor feeds Iout while the switch is on (D·T):
    // Δv ≈ Iout · D / (f · C) (Erickson & Maksimović, ch. 2, boost ripple). 3 %.
    let conv =
        "topology = \"boost\"\nvin = 5\nvout = 12\niout = 1\nfsw = \"500k\"\ninductance = \"10u\"";
    let p = problem(
        conv,
        "ripple_pp = \"1\"\nharmonics = 4000",
        "C,film,47u,50,0,0,1,0%,,,\n",
    );
    let d = 1.0 - 5.0 / 12.0;
    let a = ripple(&p, &[("C", 1)]);
    let want = 1.0 * d / (500e3 * 47e-6);
    let err = (a.ripple_pp_full_bandwidth - want).abs() / want;
    assert!(
        err < 0.03,
        "model {} vs Iout·D/(fC) {want}: {:.2} %",
        a.ripple_pp_full_bandwidth,
        err * 100.0
    );
}

#[test]
fn first_order_bandwidth_filters_the_exact_waveform() {
    // An ESR-only bank (10 mΩ, no ESL, capacitance far too large to matter)
    // on a 50 % triangle: the limited figure is ESR times the first-order
    // low-pass response to the triangle. Reference: the Fourier series
    // Σ ESR·I_k/(1 + j f_k/f_c) summed directly to 3000 harmonics at 4000
    // instants (brute force; it converges as 1/k³).
    let conv =
        "topology = \"buck\"\nvin = 12\nvout = 6\niout = 1\nfsw = \"1meg\"\ninductance = \"10u\"";
    let p = problem(
        conv,
        "ripple_pp = \"1\"\nbandwidth = \"1meg\"",
        "R,film,10,50,10m,0,1,0%,,,\n",
    );
    let a = ripple(&p, &[("R", 1)]);
    let w = &p.ops[0].waveform;
    let h = ripplebank::spectrum::harmonics(w, 3000);
    let samples: Vec<f64> = (0..4000)
        .map(|j| {
            let t = j as f64 / 4000.0 * 1e-6;
            h.iter()
                .enumerate()
                .map(|(k, ik)| {
                    let f = (k + 1) as f64 * 1e6;
                    let hk = num_complex::Complex64::new(1.0, f / 1e6).inv();
                    (ik * hk
                        * 10e-3
                        * num_complex::Complex64::from_polar(
                            1.0,
                            2.0 * std::f64::consts::PI * f * t,
                        ))
                    .re
                })
                .sum()
        })
        .collect();
    let want = samples.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
        - samples.iter().cloned().fold(f64::INFINITY, f64::min);
    assert!(
        (a.ripple_pp - want).abs() / want < 1e-3,
        "filtered {} vs {want}",
        a.ripple_pp
    );
    // Unfiltered: exactly ESR·ΔI (Erickson & Maksimović, ch. 2).
    let di = 6.0 * 0.5 / (10e-6 * 1e6);
    assert!((a.ripple_pp_full_bandwidth - di * 10e-3).abs() < 1e-6 * di * 10e-3);
    assert!(a.ripple_pp < a.ripple_pp_full_bandwidth);
}

/// Facts of the trade, used as plausibility checks (common practice, no source).
mod plausibility {
    use super::*;

    #[test]
    fn a_converter_alone_shows_tens_of_millivolts_and_ceramic_fixes_it() {
        // Common practice, no source: the demo point-of-load buck with a
        // single small ceramic shows tens of millivolts; 1-10 µF of low-ESR
        // ceramic is the usual first remedy; about 100 µF of ceramic brings
        // it to around 10 mV (here over the whole corner region, with the
        // inductor 20 % low).
        let p = ripplebank::load::problem(None, None, &Default::default()).unwrap();
        let id = |s: &str| p.catalog.position(s).unwrap();
        let one = assess(&p, &[(id("RB-C0603-X5R-10U-6V3"), 1)]).unwrap();
        assert!(
            one.ripple_pp > 20e-3 && one.ripple_pp < 500e-3,
            "{}",
            one.ripple_pp
        );
        let hundred = assess(&p, &[(id("RB-C1206-X5R-47U-6V3"), 2)]).unwrap();
        assert!(hundred.ripple_pp < 15e-3, "{}", hundred.ripple_pp);
    }

    #[test]
    fn five_volt_module_with_twenty_microfarads() {
        // Common practice, no source (from memory of a bench measurement): a
        // 5 V, 3 A module showed about 30 mV p-p at 20 MHz; with about 20 µF of
        // low-ESR ceramic added, about 10 mV at full bandwidth and under 5 mV
        // at 20 MHz. The model is calibrated on the first figure and predicts
        // the second. The model has no switching-edge spikes, which is what
        // made the measured full-band figure twice the 20 MHz one, so only
        // the ~10 mV level is checked (typical corner, within a factor of two)
        // and that the bank cuts the 20 MHz ripple to a third or less.
        let conv = "topology = \"module\"\nvin = 12\nvout = 5\niout = 3\nfsw = \"400k\"\nstandalone_ripple_pp = \"30m\"\nstandalone_bandwidth = \"20M\"\ninternal_capacitance = \"10u\"\ninternal_esr = \"5m\"\ninternal_esl = \"1n\"";
        let p = problem(
            conv,
            "ripple_pp = \"5m\"\nbandwidth = \"20M\"",
            "C,ceramic,10u,25,3m,0.4n,0.1,10%,X7R,,0805\n",
        );
        let a = ripple(&p, &[("C", 2)]);
        assert!(
            a.ripple_pp_typical > 5e-3 && a.ripple_pp_typical < 20e-3,
            "20 MHz typical: {}",
            a.ripple_pp_typical
        );
        assert!(
            a.ripple_pp_typical < 30e-3 / 3.0 * 1.05,
            "20 MHz typical: {}",
            a.ripple_pp_typical
        );
    }
}

/// Ripple of an ideal capacitor fed by a triangular pulse Ipk → 0 over t_d
/// once per period and loaded by Iout: the capacitor gains charge while the
/// pulse exceeds Iout, ΔQ = (Ipk − Iout)² · t_d / (2 Ipk), so Δv = ΔQ / C
/// (charge balance, as in Erickson & Maksimović, ch. 5, discontinuous
/// conduction mode).
fn dcm_ripple(ipk: f64, iout: f64, t_d: f64, c: f64) -> f64 {
    (ipk - iout).powi(2) * t_d / (2.0 * ipk * c)
}

#[test]
fn flyback_dcm_charge_balance() {
    // Light load: DCM. Ipk,primary = sqrt(2·vout·iout/(L f)) (energy per
    // cycle, the flyback's DCM peak), Ipk = Ipk,primary / n, t_d = Ipk·Ls/vout.
    let (vin, vout, iout, f, l, n, c): (f64, f64, f64, f64, f64, f64, f64) =
        (48.0, 12.0, 0.3, 250e3, 60e-6, 0.5, 100e-6);
    let conv = format!("topology = \"flyback\"\nvin = {vin}\nvout = {vout}\niout = {iout}\nfsw = \"{f}\"\ninductance = \"{l}\"\nturns_ratio = {n}");
    let p = problem(
        &conv,
        "ripple_pp = \"1\"\nharmonics = 4000",
        "C,film,100u,50,0,0,1,0%,,,\n",
    );
    let a = ripple(&p, &[("C", 1)]);
    assert_eq!(a.corners[0].mode.as_deref(), Some("DCM"));
    let ipk_p = (2.0 * vout * iout / (l * f)).sqrt();
    let ipk = ipk_p / n;
    let t_d = ipk * l * n * n / vout;
    let want = dcm_ripple(ipk, iout, t_d, c);
    let err = (a.ripple_pp_full_bandwidth - want).abs() / want;
    assert!(
        err < 0.01,
        "model {} vs charge balance {want}: {:.2} %",
        a.ripple_pp_full_bandwidth,
        err * 100.0
    );
}

#[test]
fn boost_dcm_charge_balance() {
    // Ipk = sqrt(2·iout·(vout − vin)/(L f)) (the boost's DCM peak from energy per cycle), t_d = Ipk·L/(vout − vin).
    let (vin, vout, iout, f, l, c): (f64, f64, f64, f64, f64, f64) =
        (5.0, 12.0, 0.05, 500e3, 4.7e-6, 47e-6);
    let conv = format!("topology = \"boost\"\nvin = {vin}\nvout = {vout}\niout = {iout}\nfsw = \"{f}\"\ninductance = \"{l}\"");
    let p = problem(
        &conv,
        "ripple_pp = \"1\"\nharmonics = 4000",
        "C,film,47u,50,0,0,1,0%,,,\n",
    );
    let a = ripple(&p, &[("C", 1)]);
    assert_eq!(a.corners[0].mode.as_deref(), Some("DCM"));
    let ipk = (2.0 * iout * (vout - vin) / (l * f)).sqrt();
    let t_d = ipk * l / (vout - vin);
    let want = dcm_ripple(ipk, iout, t_d, c);
    let err = (a.ripple_pp_full_bandwidth - want).abs() / want;
    assert!(
        err < 0.01,
        "model {} vs charge balance {want}: {:.2} %",
        a.ripple_pp_full_bandwidth,
        err * 100.0
    );
}

#[test]
fn esl_dominated_bank_is_worst_at_its_high_capacitance_corner() {
    // A single 47 µF ceramic on a 5 V → 1.8 V, 1 MHz buck with 0.3 nH of
    // mounting: the ESL step vin·ESL/L (Erickson & Maksimović, ch. 2, plus the
    // inductor law) dominates, and the ripple rises with capacitance, so the
    // high-capacitance corner ripples more than the low one and the region's
    // worst point is there. Independent check: the dense region search of
    // tests/common (brute force over the box), and the report must say where.
    let conv =
        "topology = \"buck\"\nvin = 5\nvout = 1.8\niout = 4\nfsw = \"1meg\"\ninductance = \"1u\"";
    let cat = "Z,ceramic,47u,6.3,3m,0.6n,0.1,20%,X5R,0:1;1.8:0.55;3.3:0.35,0805\n";
    let text = format!("[converter]\n{conv}\n[target]\nripple_pp = \"1\"\nbandwidth = \"20M\"\n[board]\nmounting_inductance = \"0.3n\"\n");
    let s = Scenario::from_str(&text, "t.toml").unwrap();
    let header = "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,dc_bias,case\n";
    let c = Catalog::from_bytes(format!("{header}{cat}").as_bytes(), "t.csv").unwrap();
    let mut p = Problem::new(s, c).unwrap();
    let a = ripple(&p, &[("Z", 1)]);
    let rc = a.ripple_pp_corners;
    assert!(rc.high > rc.low, "high {} vs low {}", rc.high, rc.low);
    assert!(a.ripple_pp >= rc.high * (1.0 - 1e-9));
    let part = p.catalog.position("Z").unwrap();
    let mut ev = p.evaluator(&[part]);
    let (dense, _) = common::dense_region(&p, &mut ev, &[(0, 1)]);
    assert!(
        a.ripple_pp >= dense * 0.99,
        "tool {} vs dense search {dense}",
        a.ripple_pp
    );
    assert!(
        a.warnings
            .iter()
            .any(|w| w.contains("high-capacitance corner")),
        "{:?}",
        a.warnings
    );
    // A target between the low and the high corner: v1's single corner
    // would pass it; the region must not.
    p.scenario.target.ripple_pp.0 = (rc.low + rc.high) / 2.0;
    let b = ripple(&p, &[("Z", 1)]);
    assert!(!b.meets_target);
    p.scenario.target.ripple_pp.0 = a.ripple_pp * 1.01;
    let c = ripple(&p, &[("Z", 1)]);
    assert!(
        c.meets_target,
        "{} vs {}",
        c.ripple_pp, p.scenario.target.ripple_pp.0
    );
}

#[test]
fn effective_capacitance_at_the_ripple_frequency_is_the_series_rlc_reactance() {
    // n equal capacitors of C, ESL L, ESR R in parallel: Z = (R + jωL +
    // 1/(jωC))/n, so 1/(ω·|Im Z|) = n·C/(1 − ω²LC) below self-resonance
    // (series RLC impedance, Erickson & Maksimović, Fundamentals of Power
    // Electronics, ch. 8, series resonant circuit). Above resonance the bank
    // is inductive and there is no effective capacitance.
    let (c, l, n) = (10e-6, 2e-9, 3u32);
    let p = problem(
        BUCK,
        "ripple_pp = \"50m\"",
        &format!("C1,ceramic,{c},50,5m,{l},0.1,10%,C0G,,1206\nC2,ceramic,1u,50,5m,20n,0.1,10%,C0G,,1206\n"),
    );
    let a = ripple(&p, &[("C1", n)]);
    let w = 2.0 * std::f64::consts::PI * 600e3;
    assert_eq!(a.ripple_frequency, 600e3);
    // C0G: no temperature drop; the low corner is C·(1 − 10 %).
    let cl = c * 0.9;
    let want = n as f64 * cl / (1.0 - w * w * l * cl);
    let got = a.capacitance_at_ripple_frequency.unwrap();
    assert!((got - want).abs() <= 1e-9 * want, "{got} vs {want}");
    assert!(got > n as f64 * cl);
    // 1 µF with 20 nH resonates at 1/(2π·sqrt(20n·0.9µ)) = 1.19 MHz: at a
    // 4 MHz ripple frequency the bank is inductive.
    let q = problem(
        "topology = \"buck\"\nvin = 12\nvout = 3.3\niout = 6\nfsw = \"4M\"\ninductance = \"0.5u\"",
        "ripple_pp = \"50m\"",
        "C2,ceramic,1u,50,5m,20n,0.1,10%,C0G,,1206\n",
    );
    assert_eq!(
        ripple(&q, &[("C2", 2)]).capacitance_at_ripple_frequency,
        None
    );
}
