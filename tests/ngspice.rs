//! Checks of the evaluator against ngspice (Debian package) as an
//! independent simulator: the bank's impedance (AC analysis) and the
//! steady-state ripple (transient analysis) of the same circuit.
//!
//! When ngspice is not on PATH these tests print a note and pass, unless
//! RIPPLEBANK_REQUIRE_NGSPICE=1 is set, which makes its absence an error.

use ripplebank::catalog::Catalog;
use ripplebank::evaluator::{admittance, Band, Corner};
use ripplebank::problem::Problem;
use ripplebank::report::spice::{self, Sweep};
use ripplebank::scenario::Scenario;

#[allow(dead_code)]
mod common;
use common::ngspice::{have_ngspice, meas, print_table, run_ngspice, run_ngspice_file};

/// Named beside every comparison.
const REF: &str = "ngspice (Debian package) as an independent simulator";

/// Invented parts (demo data, no real part numbers): two ceramics with a
/// DC-bias curve, an aluminum polymer, an aluminum electrolytic, a film part.
const CATALOG: &str = "\
part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,dc_bias,case,height
T-CER-22U,ceramic,22u,10,3m,0.45n,0.10,20%,X5R,0:1;3.3:0.6;5:0.45;10:0.3,1206,1.6
T-CER-1U,ceramic,1u,16,9m,0.3n,0.02,10%,X7R,0:1;3.3:0.85;12:0.55;16:0.45,0402,0.5
T-POLY-220U,polymer-aluminum,220u,16,12m,1.8n,0.40,20%,,,,2.8
T-ELEC-470U,aluminum-electrolytic,470u,25,60m,4n,0.20,20%,,,,8
T-FILM-4U7,film,4.7u,63,6m,3.5n,0.90,10%,,,,5
";

fn problem(scenario: &str) -> Problem {
    let s = Scenario::from_str(scenario, "test scenario").expect("scenario");
    let c = Catalog::from_bytes(CATALOG.as_bytes(), "test catalog").expect("catalog");
    Problem::new(s, c).expect("problem")
}

fn bank(p: &Problem, spec: &[(&str, u32)]) -> Vec<(usize, u32)> {
    spec.iter()
        .map(|&(id, n)| (p.catalog.position(id).expect("part"), n))
        .collect()
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

const BUCK: &str = r#"
name = "test buck (invented)"
[converter]
topology = "buck"
vin = 12
vout = 3.3
iout = 6
fsw = "600k"
inductance = "1.5u"
[target]
ripple_pp = "10m"
bandwidth = "20M"
bandwidth_order = 1
[board]
mounting_inductance = "0.4n"
"#;

const MIXED: &[(&str, u32)] = &[
    ("T-CER-22U", 4),
    ("T-CER-1U", 3),
    ("T-POLY-220U", 1),
    ("T-ELEC-470U", 1),
];

/// Transfer impedance of the evaluator at every harmonic vs an ngspice AC
/// analysis at the same frequencies.
fn check_transfer(p: &Problem, spec: &[(&str, u32)], what: &str) {
    let b = bank(p, spec);
    let parts: Vec<usize> = b.iter().map(|x| x.0).collect();
    let local: Vec<(usize, u32)> = b.iter().enumerate().map(|(j, x)| (j, x.1)).collect();
    let mut ev = p.evaluator(&parts);
    let z = ev.transfer_magnitude(&local, Corner::Worst);
    let n = z.len();
    let f1 = ev.f_ripple;
    let net = spice::impedance_netlist(
        p,
        &b,
        Sweep::Linear {
            points: n,
            start: f1,
            stop: n as f64 * f1,
        },
    )
    .unwrap();
    let rows = print_table(&run_ngspice(&net));
    assert_eq!(
        rows.len(),
        n,
        "{what}: ngspice printed {} of {n} frequencies",
        rows.len()
    );
    let mut worst = (0.0, 0.0);
    for (k, &(f, zs)) in rows.iter().enumerate() {
        assert!(
            rel(f, (k + 1) as f64 * f1) < 1e-6,
            "{what}: frequency {f} is not harmonic {}",
            k + 1
        );
        let e = rel(z[k], zs);
        if e > worst.0 {
            worst = (e, f);
        }
        assert!(
            e < 0.005,
            "{what}: |Z| at {f} Hz: evaluator {} ohm, {REF} {zs} ohm ({:.3} %)",
            z[k],
            100.0 * e
        );
    }
    eprintln!("{what}: |Z| at {n} harmonics {:.3e}..{:.3e} Hz agrees with {REF}; worst {:.2e} % at {:.3e} Hz", f1, n as f64 * f1, 100.0 * worst.0, worst.1);
}

#[test]
fn bank_impedance_matches_ngspice_ac() {
    if !have_ngspice() {
        return;
    }
    // Mixed bank, mounting inductance, no internal capacitance.
    let p = problem(BUCK);
    check_transfer(&p, MIXED, "mixed bank");

    // The same bank behind a connection inductance, with internal capacitance.
    let module = r#"
name = "test module (invented)"
[converter]
topology = "module"
vin = 12
vout = 5
fsw = "400k"
standalone_ripple_pp = "30m"
internal_capacitance = "10u"
internal_esr = "5m"
internal_esl = "1n"
[target]
ripple_pp = "5m"
bandwidth = "20M"
[board]
mounting_inductance = "0.3n"
connection_inductance = "2n"
"#;
    let pm = problem(module);
    check_transfer(
        &pm,
        &[("T-CER-22U", 2), ("T-POLY-220U", 1)],
        "bank behind 2 nH with internal capacitance",
    );

    // Bank admittance 1/|Σ n·Y_i| from the evaluator's admittance() over a
    // decade sweep 1 kHz … 1 GHz (down where the electrolytic matters).
    let b = bank(&p, MIXED);
    let net = spice::impedance_netlist(
        &p,
        &b,
        Sweep::Decade {
            per_decade: 40,
            start: 1e3,
            stop: 1e9,
        },
    )
    .unwrap();
    let rows = print_table(&run_ngspice(&net));
    assert!(rows.len() >= 240, "ngspice printed {} rows", rows.len());
    let mut worst: f64 = 0.0;
    for &(f, zs) in &rows {
        let y: num_complex::Complex64 = b
            .iter()
            .map(|&(i, n)| {
                let m = p.part_model(i);
                admittance(m.esr, m.esl, m.c_worst, f) * n as f64
            })
            .sum();
        let z = 1.0 / y.norm();
        let e = rel(z, zs);
        worst = worst.max(e);
        assert!(
            e < 0.005,
            "|Z| at {f} Hz: admittance() {z} ohm, {REF} {zs} ohm"
        );
    }
    eprintln!(
        "mixed bank, 1 kHz..1 GHz: |Z| agrees with {REF}; worst {:.2e} %",
        100.0 * worst
    );
}

/// ngspice's steady-state ripple vs the evaluator, at the target bandwidth
/// and at full bandwidth (one vin corner).
fn check_ripple(p: &Problem, spec: &[(&str, u32)], what: &str) {
    check_ripple_bands(p, spec, what, true)
}

/// As [`check_ripple`]; `full = false` checks the target bandwidth only.
fn check_ripple_bands(p: &Problem, spec: &[(&str, u32)], what: &str, check_full: bool) {
    let b = bank(p, spec);
    let parts: Vec<usize> = b.iter().map(|x| x.0).collect();
    let local: Vec<(usize, u32)> = b.iter().enumerate().map(|(j, x)| (j, x.1)).collect();
    let mut ev = p.evaluator(&parts);
    // bank.cir is written at the worst point of the corner region: compare
    // both figures at that point (vin, inductance, each line's C and ESR).
    let w = ripplebank::region::worst(p, &mut ev, &local, Band::Limited);
    let lim = w.value;
    let full = ripplebank::region::value_at(&mut ev, &local, &w.states, w.op, Band::Full);
    let net = spice::netlist(p, &b).unwrap();
    let t0 = std::time::Instant::now();
    let out = run_ngspice(&net);
    let secs = t0.elapsed().as_secs_f64();
    let (sl, sf) = (meas(&out, "pp_limited"), meas(&out, "pp_full"));
    let (sl0, sf0) = (meas(&out, "pp_limited_prev"), meas(&out, "pp_full_prev"));
    eprintln!(
        "{what}: target bandwidth: evaluator {lim:.6e} V, {REF} {sl:.6e} V ({:+.3} %); full bandwidth: evaluator {full:.6e} V, ngspice {sf:.6e} V ({:+.3} %); ngspice {secs:.1} s",
        100.0 * (lim - sl) / sl,
        100.0 * (full - sf) / sf
    );
    // Settled: the window before the last gives the same figure.
    assert!(
        rel(sl0, sl) < 1e-3 && (!check_full || rel(sf0, sf) < 1e-3),
        "{what}: not settled: {sl0} vs {sl}, {sf0} vs {sf}"
    );
    assert!(
        rel(lim, sl) < 0.005,
        "{what}: ripple at the target bandwidth: evaluator {lim} V, {REF} {sl} V"
    );
    assert!(
        !check_full || rel(full, sf) < 0.005,
        "{what}: ripple at full bandwidth: evaluator {full} V, {REF} {sf} V"
    );
}

#[test]
fn buck_ripple_matches_ngspice_transient() {
    if !have_ngspice() {
        return;
    }
    let p = problem(BUCK);
    check_ripple(&p, MIXED, "buck 12 V to 3.3 V, mixed bank");
    check_ripple(
        &p,
        &[("T-CER-22U", 3)],
        "buck 12 V to 3.3 V, three ceramics",
    );
}

#[test]
fn flyback_ripple_matches_ngspice_transient() {
    if !have_ngspice() {
        return;
    }
    let fly = r#"
name = "test flyback (invented)"
[converter]
topology = "flyback"
vin = 48
vout = 12
iout = 2
fsw = "250k"
inductance = "60u"
turns_ratio = 0.5
edge_time = "30n"
[target]
ripple_pp = "60m"
bandwidth = "20M"
bandwidth_order = 1
[board]
mounting_inductance = "0.5n"
"#;
    let p = problem(fly);
    assert_eq!(p.ops[0].mode, "CCM");
    check_ripple(
        &p,
        &[("T-CER-1U", 4), ("T-POLY-220U", 2), ("T-ELEC-470U", 1)],
        "flyback 48 V to 12 V (CCM, 30 ns edges)",
    );
    // Light load: discontinuous conduction.
    let p = problem(&fly.replace("iout = 2", "iout = 0.3"));
    assert_eq!(p.ops[0].mode, "DCM");
    check_ripple(
        &p,
        &[("T-CER-1U", 4), ("T-POLY-220U", 1)],
        "flyback 48 V to 12 V (DCM, 30 ns edges)",
    );
}

#[test]
fn written_netlist_matches_report() {
    if !have_ngspice() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let cat = dir.path().join("parts.csv");
    std::fs::write(&cat, CATALOG).unwrap();
    // A module with two vin corners, internal capacitance, connection
    // inductance and a second-order measurement filter.
    let scen = dir.path().join("module.toml");
    std::fs::write(
        &scen,
        r#"
name = "test module, two corners (invented)"
catalog = "parts.csv"
[converter]
topology = "module"
vin_min = 9
vin_max = 16
vout = 5
fsw = "400k"
standalone_ripple_pp = "30m"
standalone_bandwidth = "20M"
internal_capacitance = "10u"
internal_esr = "5m"
internal_esl = "1n"
[target]
ripple_pp = "5m"
bandwidth = "10M"
bandwidth_order = 2
[board]
mounting_inductance = "0.3n"
connection_inductance = "1n"
"#,
    )
    .unwrap();
    let out = dir.path().join("out");
    let res = assert_cmd::Command::cargo_bin("ripplebank")
        .unwrap()
        .args([
            "assess",
            "--bank",
            "T-CER-22U=2,T-POLY-220U=1",
            "--json",
            "--scenario",
        ])
        .arg(&scen)
        .arg("--out")
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        matches!(res.status.code(), Some(0) | Some(1)),
        "assess: {}",
        String::from_utf8_lossy(&res.stderr)
    );
    let doc: serde_json::Value = serde_json::from_slice(&res.stdout).unwrap();
    let report = doc["ripple_pp"].as_f64().unwrap();
    let file = out.join("bank.cir");
    let text = std::fs::read_to_string(&file).unwrap();
    assert!(text.contains("ripplebank") && text.trim_end().ends_with(".end"));
    let o = run_ngspice_file(&file);
    let sl = meas(&o, "pp_limited");
    eprintln!("bank.cir from `assess --out`: report ripple_pp {report:.6e} V, {REF} {sl:.6e} V ({:+.3} %)", 100.0 * (report - sl) / sl);
    assert!(
        rel(report, sl) < 0.02,
        "bank.cir: report {report} V, {REF} {sl} V"
    );
}

/// The netlist and the simulator against a closed form: one polymer part on
/// the buck, full bandwidth. The ripple current is a triangle of
/// ΔI = Vout (1 − D) / (L f) (Erickson & Maksimović, Fundamentals of Power
/// Electronics, ch. 2); its slope changes by Vin / L at each corner, which
/// the part's inductance turns into a voltage step ESL · Vin / L (inductor
/// law v = L di/dt). With ESR · C well above half a period, the extremes sit
/// at the corners, so pp = ESR · ΔI + ESL · Vin / L exactly.
#[test]
fn ngspice_full_bandwidth_matches_esr_esl_closed_form() {
    if !have_ngspice() {
        return;
    }
    let p = problem(&BUCK.replace("bandwidth = \"20M\"\n", ""));
    let b = bank(&p, &[("T-POLY-220U", 1)]);
    let m = p.part_model(b[0].0);
    let (vin, vout, l, f) = (12.0, 3.3, 1.5e-6, 600e3);
    let di = vout * (1.0 - vout / vin) / (l * f);
    assert!(
        m.esr * m.c_worst > 0.5 / f,
        "the closed form needs ESR·C above half a period"
    );
    let want = m.esr * di + m.esl * vin / l;
    let got = meas(&run_ngspice(&spice::netlist(&p, &b).unwrap()), "pp_full");
    eprintln!(
        "one polymer on the buck: ESR·ΔI + ESL·Vin/L = {want:.6e} V, {REF} {got:.6e} V ({:+.4} %)",
        100.0 * (got - want) / want
    );
    assert!(rel(got, want) < 1e-3, "closed form {want} V, {REF} {got} V");
}

/// When the bank's inductance turns the corners of the current into voltage
/// steps (ESL x change of di/dt), a Fourier series cut at N harmonics
/// overshoots each step by about 9 % of its height (the Gibbs phenomenon;
/// e.g. Oppenheim & Willsky, Signals and Systems, ch. 3). The evaluator
/// treats those steps in closed form, so it must agree with ngspice here,
/// at full bandwidth too (within 0.5 %).
#[test]
fn full_bandwidth_ripple_with_esl_steps_matches_ngspice() {
    if !have_ngspice() {
        return;
    }
    let p = problem(&BUCK.replace("bandwidth = \"20M\"\n", ""));
    check_ripple(
        &p,
        &[("T-POLY-220U", 1)],
        "buck, one polymer, no bandwidth limit",
    );
    let p = problem(&BUCK.replace("iout = 6", "iout = 6\nphases = 3"));
    check_ripple(
        &p,
        &[("T-CER-22U", 4), ("T-CER-1U", 2)],
        "three-phase buck, ceramics",
    );
}

/// Fast current edges through the bank's inductance make a short voltage
/// pulse whose filtered corners a cut Fourier series converges to only as
/// 1/N; with edge_time = 0 the jump of the current through ESL leaves a
/// step in the filtered ripple that a cut series overshoots (Gibbs). The
/// evaluator's closed-form treatment must agree with ngspice within 0.5 %.
#[test]
fn target_bandwidth_ripple_with_fast_edges_matches_ngspice() {
    if !have_ngspice() {
        return;
    }
    let boost = r#"
name = "test boost, 10 ns edges (invented)"
[converter]
topology = "boost"
vin = 5
vout = 24
iout = 0.5
fsw = "1M"
inductance = "4.7u"
edge_time = "10n"
[target]
ripple_pp = "100m"
bandwidth = "20M"
[board]
mounting_inductance = "0.4n"
"#;
    let r = std::panic::catch_unwind(|| {
        check_ripple_bands(
            &problem(boost),
            &[("T-FILM-4U7", 4)],
            "boost 5 V to 24 V at 1 MHz, 10 ns edges, film parts",
            false,
        )
    });
    let fly = r#"
name = "test flyback, ideal edges (invented)"
[converter]
topology = "flyback"
vin = 48
vout = 12
iout = 2
fsw = "250k"
inductance = "60u"
turns_ratio = 0.5
[target]
ripple_pp = "60m"
bandwidth = "20M"
[board]
mounting_inductance = "0.5n"
"#;
    // At full bandwidth an ideal current jump through ESL is a Dirac pulse:
    // the evaluator must say so (not finite), and the target bandwidth is
    // compared.
    {
        let p = problem(fly);
        let b = bank(&p, &[("T-CER-22U", 4), ("T-CER-1U", 2)]);
        let parts: Vec<usize> = b.iter().map(|x| x.0).collect();
        let local: Vec<(usize, u32)> = b.iter().enumerate().map(|(j, x)| (j, x.1)).collect();
        let full = p
            .evaluator(&parts)
            .ripple_pp(&local, Corner::Worst, Band::Full);
        assert!(
            !full.is_finite(),
            "a current jump through ESL at full bandwidth: {full}"
        );
    }
    check_ripple_bands(
        &problem(fly),
        &[("T-CER-22U", 4), ("T-CER-1U", 2)],
        "flyback, edge_time = 0, ceramics",
        false,
    );
    if let Err(e) = r {
        std::panic::resume_unwind(e);
    }
}

/// The region's worst point across more topologies and networks: bank.cir
/// is written at the worst point found, and ngspice must reproduce both
/// figures there within 0.5 % (target bandwidth and full bandwidth).
#[test]
fn worst_points_across_topologies_match_ngspice() {
    if !have_ngspice() {
        return;
    }
    let full_bridge = r#"
name = "test full bridge (invented)"
[converter]
topology = "bridge"
vin_min = 36
vin_max = 60
vout = 5
iout = 10
fsw = "200k"
inductance = "4.7u"
inductance_tolerance = "20%"
turns_ratio = 0.25
[target]
ripple_pp = "30m"
bandwidth = "20M"
[board]
mounting_inductance = "0.4n"
"#;
    check_ripple(
        &problem(full_bridge),
        &[("T-CER-22U", 4), ("T-POLY-220U", 1)],
        "full bridge 36-60 V to 5 V, worst point",
    );
    let module = r#"
name = "test module behind a connection inductance (invented)"
[converter]
topology = "module"
vin = 12
vout = 5
iout = 3
fsw = "400k"
standalone_ripple_pp = "30m"
standalone_bandwidth = "20M"
internal_capacitance = "10u"
internal_esr = "5m"
internal_esl = "1n"
[target]
ripple_pp = "10m"
bandwidth = "20M"
[board]
mounting_inductance = "0.3n"
connection_inductance = "2n"
"#;
    check_ripple(
        &problem(module),
        &[("T-CER-22U", 2), ("T-CER-1U", 2)],
        "module with 2 nH connection inductance",
    );
    let forward = r#"
name = "test forward with an electrolytic (invented)"
[converter]
topology = "forward"
vin_min = 36
vin_max = 72
vout = 12
iout = 3
fsw = "250k"
inductance = "22u"
inductance_tolerance = "20%"
turns_ratio = 0.5
[target]
ripple_pp = "60m"
bandwidth = "20M"
[board]
mounting_inductance = "0.5n"
"#;
    check_ripple(
        &problem(forward),
        &[("T-ELEC-470U", 1), ("T-CER-1U", 2)],
        "forward 36-72 V to 12 V, electrolytic and ceramics",
    );
    let esl_buck = r#"
name = "test 2 MHz ESL-dominated buck (invented)"
[converter]
topology = "buck"
vin = 5
vout = 1.2
iout = 4
fsw = "2M"
inductance = "0.47u"
inductance_tolerance = "20%"
[target]
ripple_pp = "20m"
bandwidth = "20M"
[board]
mounting_inductance = "0.5n"
"#;
    check_ripple(
        &problem(esl_buck),
        &[("T-CER-22U", 2)],
        "2 MHz ESL-dominated buck",
    );
    let flyback2 = r#"
name = "test flyback, second-order bandwidth (invented)"
[converter]
topology = "flyback"
vin_min = 24
vin_max = 60
vout = 12
iout = 1
fsw = "200k"
inductance = "40u"
inductance_tolerance = "20%"
turns_ratio = 0.5
edge_time = "30n"
[target]
ripple_pp = "100m"
bandwidth = "20M"
bandwidth_order = 2
[board]
mounting_inductance = "0.5n"
"#;
    check_ripple(
        &problem(flyback2),
        &[("T-CER-22U", 3), ("T-POLY-220U", 1)],
        "flyback 24-60 V, second-order 20 MHz limit",
    );
}

/// The load step of `bank.cir` (a behavioural current source for the
/// converter's first-order response, the load as a ramped current) against
/// the evaluator's deviation at the same point of the corner region.
fn check_step(scenario: &str, spec: &[(&str, u32)], what: &str) -> f64 {
    let p = problem(scenario);
    let b = bank(&p, spec);
    let a = ripplebank::assessment::assess(&p, &b).expect("assess");
    let t = a.transient.as_ref().expect("the scenario has a load step");
    let net = spice::netlist(&p, &b).expect("netlist");
    assert!(net.contains("Bsconv") && net.contains(".meas tran deviation"));
    let out = run_ngspice(&net);
    let sim = meas(&out, "deviation");
    let e = rel(t.deviation, sim);
    eprintln!(
        "load step, {what}: evaluator {:.5} mV, ngspice {:.5} mV, error {:+.3} % (settled value {:.3} mV) — {REF}",
        t.deviation * 1e3,
        sim * 1e3,
        (t.deviation / sim - 1.0) * 100.0,
        t.settled * 1e3
    );
    assert!(
        e <= 0.01,
        "load step, {what}: evaluator {} V vs ngspice {sim} V ({REF})",
        t.deviation
    );
    t.deviation / t.settled
}

#[test]
fn load_step_matches_ngspice_transient() {
    if !have_ngspice() {
        return;
    }
    // A mixed bank (ceramics, a polymer and an electrolytic, each with its
    // ESR and ESL, mounting and connection inductance, the converter's own
    // capacitance) under a ramped step, at a slow and at a fast loop (the
    // fast one peaks early, on the ESR, far above its settled value).
    let base = format!(
        "{BUCK}connection_inductance = \"0.5n\"\n"
    )
    .replace(
        "inductance = \"1.5u\"",
        "inductance = \"1.5u\"\ninternal_capacitance = \"20u\"\ninternal_esr = \"4m\"\ninternal_esl = \"0.8n\"",
    );
    let slow = format!(
        "{base}[transient]\nload_step = \"4\"\nmax_deviation = \"60m\"\nloop_crossover = \"20k\"\nrise_time = \"0.5u\"\n"
    );
    let r_slow = check_step(&slow, MIXED, "mixed bank, 20 kHz loop, 0.5 µs rise");
    let fast = format!(
        "{base}[transient]\nload_step = \"4\"\nmax_deviation = \"60m\"\nloop_crossover = \"120k\"\nrise_time = \"0.2u\"\n"
    );
    let r_fast = check_step(
        &fast,
        &[("T-ELEC-470U", 2), ("T-CER-1U", 2)],
        "electrolytics and small ceramics, 120 kHz loop, 0.2 µs rise",
    );
    // The two regimes differ: the fast loop's peak lies far above its
    // settled value (the ESR's share), the slow loop's near it.
    assert!(r_fast > 2.0 * r_slow, "peak/settled {r_fast} vs {r_slow}");
}

// ---- The LC post-filter: the ladder of bank.cir against the evaluator.

/// Invented inductors (demo data, no real parts): one without a
/// self-resonant frequency (no winding capacitance), one with it.
const FILTER_INDUCTORS: &str = "\
part,inductance,tolerance,dcr,rated_current,saturation_current,srf,cost,height
T-L-1U,1u,20%,14m,8,9.5,,0.16,2
T-L-0U47,0.47u,20%,4.5m,15,20,,0.20,3
T-L-2U2-SRF,2.2u,20%,17m,8,9,55M,0.23,3
";

/// The sealed 5 V module of the bundled filter demo (invented), its target
/// loosened so that any of these filters is a fair case.
const MODULE: &str = r#"
name = "test module with post-filter (invented)"
[converter]
topology = "module"
vin = 12
vout = 5
iout = 1.2
fsw = "400k"
standalone_ripple_pp = "30m"
standalone_bandwidth = "20M"
internal_capacitance = "10u"
internal_esr = "5m"
internal_esl = "1n"
[target]
ripple_pp = "5m"
bandwidth = "20M"
[board]
mounting_inductance = "0.3n"
"#;

fn filtered(
    scenario: &str,
    bank_spec: &[(&str, u32)],
    inductor: &str,
    load: &[(&str, u32)],
    damping: Option<(f64, &str, u32)>,
) -> (Problem, Vec<(usize, u32)>) {
    let s = Scenario::from_str(scenario, "test scenario").expect("scenario");
    let c = Catalog::from_bytes(CATALOG.as_bytes(), "test catalog").expect("catalog");
    let l = ripplebank::inductors::InductorCatalog::from_bytes(
        FILTER_INDUCTORS.as_bytes(),
        "test inductors",
    )
    .expect("inductors");
    let p = Problem::with_inductors(s, c, Some(l)).expect("problem");
    let b = bank(&p, bank_spec);
    let f = ripplebank::filter::FilterDesign {
        inductor: p.inductors.as_ref().unwrap().position(inductor).unwrap(),
        count: 1,
        load_bank: bank(&p, load),
        damping: damping.map(|(r, id, n)| ripplebank::filter::DampingLeg {
            resistance: r,
            capacitor: p.catalog.position(id).unwrap(),
            count: n,
        }),
    };
    (p.with_filter(f), b)
}

/// The evaluator's figures at the worst point of the load node's ripple
/// (where bank.cir is written) against ngspice's transient at both nodes:
/// (target bandwidth, full bandwidth) at the load node and at the
/// converter-side node. `check_full`: compare the full-bandwidth figures too.
fn check_filter_ripple(p: &Problem, b: &[(usize, u32)], what: &str, check_full: bool) {
    let parts: Vec<usize> = b.iter().map(|x| x.0).collect();
    let local: Vec<(usize, u32)> = b.iter().enumerate().map(|(j, x)| (j, x.1)).collect();
    let mut ev = p.evaluator(&parts);
    assert!(
        !ev.tail().is_empty(),
        "{what}: the evaluator has the filter"
    );
    let w = ripplebank::region::worst(p, &mut ev, &local, Band::Limited);
    let lim = w.value;
    let full = ripplebank::region::value_at(&mut ev, &local, &w.states, w.op, Band::Full);
    let n = ev.n_full;
    ev.fill_states(&local, &w.states, n);
    ev.to_converter_node(n);
    let (clim, cfull) = (
        ev.pp_filled(w.op, Band::Limited),
        ev.pp_filled(w.op, Band::Full),
    );
    // The assessment reports the same figures.
    let a = ripplebank::assessment::assess(p, b).unwrap();
    let fa = a.filter.as_ref().expect("filter figures");
    assert!(
        rel(a.ripple_pp, lim) < 1e-9,
        "{what}: {} vs {lim}",
        a.ripple_pp
    );
    assert!(
        rel(fa.ripple_pp_converter_node, clim) < 1e-9,
        "{what}: converter node"
    );
    let net = spice::netlist(p, b).unwrap();
    assert!(
        net.contains("* ---- post-filter"),
        "{what}: the ladder is in bank.cir"
    );
    let out = run_ngspice(&net);
    let (sl, sf) = (meas(&out, "pp_limited"), meas(&out, "pp_full"));
    let (sl0, sf0) = (meas(&out, "pp_limited_prev"), meas(&out, "pp_full_prev"));
    let (scl, scf) = (meas(&out, "pp_conv_limited"), meas(&out, "pp_conv_full"));
    eprintln!(
        "{what}: load node: evaluator {lim:.6e} / {full:.6e} V, {REF} {sl:.6e} / {sf:.6e} V; converter node: evaluator {clim:.6e} / {cfull:.6e} V, ngspice {scl:.6e} / {scf:.6e} V (target bandwidth / full)"
    );
    assert!(
        rel(sl0, sl) < 1e-3 && (!check_full || rel(sf0, sf) < 1e-3),
        "{what}: not settled: {sl0} vs {sl}, {sf0} vs {sf}"
    );
    for (name, ours, theirs, check) in [
        ("load node, target bandwidth", lim, sl, true),
        ("load node, full bandwidth", full, sf, check_full),
        ("converter node, target bandwidth", clim, scl, true),
        ("converter node, full bandwidth", cfull, scf, check_full),
    ] {
        assert!(
            !check || rel(ours, theirs) < 0.01,
            "{what}: {name}: evaluator {ours} V, {REF} {theirs} V"
        );
    }
}

#[test]
fn damped_and_undamped_filters_match_ngspice_transient_at_both_nodes() {
    if !have_ngspice() {
        return;
    }
    let bank_spec = &[("T-CER-1U", 2)];
    // Damped: a polymer capacitor behind 0.22 Ω across the load-side bank.
    let (p, b) = filtered(
        MODULE,
        bank_spec,
        "T-L-1U",
        &[("T-CER-22U", 2)],
        Some((0.22, "T-POLY-220U", 1)),
    );
    check_filter_ripple(&p, &b, "module, damped filter", true);
    // Undamped: the load-side ceramics' own ESR only.
    let (p, b) = filtered(MODULE, bank_spec, "T-L-1U", &[("T-CER-22U", 2)], None);
    check_filter_ripple(&p, &b, "module, undamped filter", true);
    // A buck with a filter behind its output bank, no damping leg: the
    // load-side polymer capacitor's ESR is the only damping.
    let (p, b) = filtered(
        BUCK,
        &[("T-CER-22U", 3)],
        "T-L-0U47",
        &[("T-POLY-220U", 1), ("T-CER-1U", 2)],
        None,
    );
    check_filter_ripple(&p, &b, "buck, undamped filter", true);
    let (p, b) = filtered(
        BUCK,
        &[("T-CER-22U", 3)],
        "T-L-0U47",
        &[("T-CER-22U", 2)],
        Some((0.1, "T-ELEC-470U", 1)),
    );
    check_filter_ripple(&p, &b, "buck, damped filter", true);
}

#[test]
fn filter_with_winding_capacitance_matches_ngspice() {
    if !have_ngspice() {
        return;
    }
    // With a self-resonant frequency the winding capacitance C_p couples the
    // converter node's fast edges past the inductor.
    let (p, b) = filtered(
        MODULE,
        &[("T-CER-1U", 2)],
        "T-L-2U2-SRF",
        &[("T-CER-22U", 2)],
        Some((0.22, "T-POLY-220U", 1)),
    );
    check_filter_ripple(&p, &b, "module, filter with C_p", true);
}

#[test]
fn filter_output_impedance_matches_ngspice_ac() {
    if !have_ngspice() {
        return;
    }
    for (what, damping, inductor) in [
        ("damped", Some((0.22, "T-POLY-220U", 1)), "T-L-1U"),
        ("undamped", None, "T-L-1U"),
        ("with C_p", Some((0.22, "T-POLY-220U", 1)), "T-L-2U2-SRF"),
    ] {
        let (p, _) = filtered(
            MODULE,
            &[("T-CER-1U", 2)],
            inductor,
            &[("T-CER-22U", 2)],
            damping,
        );
        let lines = p.tail_lines(p.filter.as_ref().unwrap());
        let low: Vec<ripplebank::evaluator::LineState> = lines
            .iter()
            .map(|t| ripplebank::evaluator::LineState {
                c: t.model.c_worst,
                esr: t.model.esr_max,
            })
            .collect();
        let net = spice::output_impedance_netlist(
            &p,
            None,
            Sweep::Decade {
                per_decade: 40,
                start: 1e3,
                stop: 1e9,
            },
        )
        .unwrap();
        let rows = print_table(&run_ngspice(&net));
        assert!(rows.len() > 200, "{what}: {} rows", rows.len());
        let mut worst: f64 = 0.0;
        let (mut peak_ours, mut peak_theirs) = (0.0f64, 0.0f64);
        for &(f, z) in &rows {
            let ours = ripplebank::evaluator::tail_output_impedance(&lines, &low, f)
                .unwrap()
                .norm();
            worst = worst.max(rel(ours, z));
            peak_ours = peak_ours.max(ours);
            peak_theirs = peak_theirs.max(z);
        }
        eprintln!(
            "{what}: |Z_out| against {REF}: largest difference {:.2e} over {} frequencies; peak {peak_ours:.6e} vs {peak_theirs:.6e} ohm",
            worst,
            rows.len()
        );
        assert!(
            worst < 0.01,
            "{what}: |Z_out| differs by {worst} from {REF}"
        );
    }
}
