//! The JSON documents carry every key SPEC §8 names (source: SPEC §8), for
//! each command, on the bundled demo and on an infeasible variant of it.

use assert_cmd::Command;
use serde_json::Value;

const BANK_KEYS: &[&str] = &[
    "status",
    "bank",
    "ripple_pp",
    "ripple_pp_typical",
    "ripple_pp_full_bandwidth",
    "cost",
    "area",
    "count",
    "lines",
    "capacitance_nominal_total",
    "capacitance_max_total",
    "capacitance_effective_total",
    "ripple_current",
    "excluded",
    "warnings",
];

fn run(args: &[&str], code: i32) -> Value {
    let out = Command::cargo_bin("ripplebank")
        .unwrap()
        .args(args)
        .arg("--json")
        .assert()
        .code(code)
        .get_output()
        .stdout
        .clone();
    serde_json::from_slice(&out).expect("exactly one JSON document on stdout")
}

fn has_all(v: &Value, keys: &[&str], what: &str) {
    for k in keys {
        assert!(v.get(k).is_some(), "{what}: key `{k}` missing");
    }
}

#[test]
fn design_assess_rework_tradeoff_keys() {
    let d = run(&["design"], 0);
    has_all(&d, BANK_KEYS, "design");
    assert!(matches!(d["status"].as_str(), Some("optimal" | "feasible")));
    for b in d["bank"].as_array().unwrap() {
        assert!(b["part"].is_string() && b["count"].is_u64());
    }
    for r in d["ripple_current"].as_array().unwrap() {
        assert!(r.get("part").is_some() && r.get("rms").is_some() && r.get("rating").is_some());
    }
    for e in d["excluded"].as_array().unwrap() {
        assert!(e["part"].is_string() && e["reason"].is_string());
    }
    let bank: Vec<String> = d["bank"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| format!("{}={}", b["part"].as_str().unwrap(), b["count"]))
        .collect();
    let a = run(&["assess", "--bank", &bank.join(",")], 0);
    has_all(&a, BANK_KEYS, "assess");
    assert_eq!(a["status"], "pass");
    assert_eq!(a["ripple_pp"], d["ripple_pp"]);

    let dir = tempfile::tempdir().unwrap();
    let bom = dir.path().join("bom.csv");
    let mut text = String::from("part,count\n");
    for b in d["bank"].as_array().unwrap() {
        text.push_str(&format!("{},{}\n", b["part"].as_str().unwrap(), b["count"]));
    }
    std::fs::write(&bom, text).unwrap();
    let r = run(&["rework", "--bom", bom.to_str().unwrap()], 0);
    has_all(&r, BANK_KEYS, "rework");
    has_all(&r, &["kept", "removed", "added"], "rework");

    let t = run(
        &["tradeoff", "--points", "3", "--from", "5m", "--to", "20m"],
        0,
    );
    let pts = t["points"].as_array().unwrap();
    assert_eq!(pts.len(), 3);
    for p in pts {
        has_all(
            p,
            &[
                "target",
                "status",
                "ripple_pp",
                "cost",
                "area",
                "count",
                "bank",
            ],
            "tradeoff point",
        );
    }
}

#[test]
fn infeasible_design_keys() {
    let dir = tempfile::tempdir().unwrap();
    let text = ripplebank::load::DEMO_SCENARIO
        .replace("ripple_pp = \"8m\"", "ripple_pp = \"1m\"")
        .replace(
            "../catalogs/demo-parts.csv",
            concat!(env!("CARGO_MANIFEST_DIR"), "/catalogs/demo-parts.csv"),
        );
    let f = dir.path().join("s.toml");
    std::fs::write(&f, text).unwrap();
    let d = run(&["design", "--scenario", f.to_str().unwrap()], 1);
    has_all(&d, BANK_KEYS, "infeasible design");
    has_all(&d, &["best_ripple_pp", "binding"], "infeasible design");
    assert_eq!(d["status"], "infeasible");
    assert!(d["best_ripple_pp"].as_f64().unwrap() > 1e-3);
    assert!(!d["binding"].as_array().unwrap().is_empty());
}
