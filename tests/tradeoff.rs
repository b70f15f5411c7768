//! `tradeoff`: the cost against ripple front never rises as the target
//! loosens, and every point's bank verifies with the evaluator (source: the
//! definition of the front — a bank meeting a tighter target meets every
//! looser one — and the evaluator as judge).

use assert_cmd::Command;
use ripplebank::assessment::{assess, parse_bank_arg};
use ripplebank::load;

#[test]
fn front_is_monotone_and_every_point_verifies() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("t");
    let o = Command::cargo_bin("ripplebank")
        .unwrap()
        .args([
            "tradeoff", "--json", "--points", "6", "--from", "3m", "--to", "40m", "--out",
        ])
        .arg(&out)
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&o).unwrap();
    let pts = v["points"].as_array().unwrap();
    assert_eq!(pts.len(), 6);
    let p = load::problem(None, None, &Default::default()).unwrap();
    let mut last_target = 0.0;
    let mut last_cost = f64::INFINITY;
    for pt in pts {
        let t = pt["target"].as_f64().unwrap();
        assert!(t > last_target, "ordered by target");
        last_target = t;
        let Some(cost) = pt["cost"].as_f64() else {
            continue;
        };
        assert!(
            cost <= last_cost + 1e-12,
            "cost rose from {last_cost} to {cost} at {t}"
        );
        last_cost = cost;
        let bank: Vec<String> = pt["bank"]
            .as_array()
            .unwrap()
            .iter()
            .map(|b| format!("{}={}", b["part"].as_str().unwrap(), b["count"]))
            .collect();
        let b = parse_bank_arg(&p, &bank.join(",")).unwrap();
        let a = assess(&p, &b).unwrap();
        assert!(
            a.ripple_pp <= t * (1.0 + 1e-9),
            "point {t}: bank ripples {}",
            a.ripple_pp
        );
        assert!((a.ripple_pp - pt["ripple_pp"].as_f64().unwrap()).abs() < 1e-12);
    }
    // The raw per-target optima, before the command carries a tighter bank
    // forward: each solved to optimality on its own, so a looser target can
    // never cost more (source: a bank meeting a tighter target meets every
    // looser one, so the looser optimum is at most its cost).
    let raw = v["raw"].as_array().expect("raw per-target results");
    assert_eq!(raw.len(), pts.len());
    let mut optimal_pairs = 0;
    for w in raw.windows(2) {
        let (tight, loose) = (&w[0], &w[1]);
        assert!(loose["target"].as_f64() > tight["target"].as_f64());
        if tight["status"] == "optimal" && loose["status"] == "optimal" {
            let (ct, cl) = (
                tight["cost"].as_f64().unwrap(),
                loose["cost"].as_f64().unwrap(),
            );
            assert!(
                cl <= ct * (1.0 + 1e-9) + 1e-12,
                "raw optimum at {} costs {cl}, more than {ct} at the tighter {}",
                loose["target"],
                tight["target"]
            );
            optimal_pairs += 1;
        }
    }
    assert!(
        optimal_pairs >= 3,
        "too few optimal neighbours to check: {optimal_pairs}"
    );
    for r in raw.iter().filter(|r| r["status"] != "infeasible") {
        let bank: Vec<String> = r["bank"]
            .as_array()
            .unwrap()
            .iter()
            .map(|b| format!("{}={}", b["part"].as_str().unwrap(), b["count"]))
            .collect();
        if bank.is_empty() {
            continue;
        }
        let a = assess(&p, &parse_bank_arg(&p, &bank.join(",")).unwrap()).unwrap();
        assert!(a.ripple_pp <= r["target"].as_f64().unwrap() * (1.0 + 1e-9));
    }
    // Geometric spacing from --from to --to, both included.
    assert!((pts[0]["target"].as_f64().unwrap() - 3e-3).abs() < 1e-12);
    assert!((pts[5]["target"].as_f64().unwrap() - 40e-3).abs() < 1e-12);
    for f in [
        "tradeoff.csv",
        "cost.svg",
        "area.svg",
        "report.html",
        "report.json",
    ] {
        assert!(out.join(f).is_file(), "{f} missing");
    }
    let csv = std::fs::read_to_string(out.join("tradeoff.csv")).unwrap();
    assert_eq!(csv.lines().count(), 7);
}
