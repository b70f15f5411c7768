//! The JSON documents carry every key of the JSON contract (source: the interface contract as README "JSON" states it), for
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

/// SHA-256 of a file by `sha256sum` (GNU coreutils) when installed, else by
/// the library's own (checked against the FIPS 180-4 vectors in its unit tests).
fn sha256_of(path: &std::path::Path) -> String {
    match std::process::Command::new("sha256sum").arg(path).output() {
        Ok(o) if o.status.success() => String::from_utf8(o.stdout)
            .unwrap()
            .split_whitespace()
            .next()
            .unwrap()
            .to_string(),
        _ => ripplebank::sha256::hex(&std::fs::read(path).unwrap()),
    }
}

/// `version`, `inputs` and `date`, in every document (v2 keys).
fn run_keys(v: &Value, what: &str) {
    assert_eq!(
        v["version"].as_str(),
        Some(env!("CARGO_PKG_VERSION")),
        "{what}: version"
    );
    let inputs = v["inputs"].as_object().expect("inputs is an object");
    for k in ["scenario", "catalog", "inductors"] {
        let i = inputs
            .get(k)
            .unwrap_or_else(|| panic!("{what}: inputs.{k} missing"));
        assert!(
            i.is_null() || (i["path"].is_string() && i["sha256"].is_string()),
            "{what}: inputs.{k}"
        );
    }
    // The bundled demo: its path says so, its hash is that of the file it was built from.
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    if inputs["scenario"]["path"]
        .as_str()
        .is_some_and(|p| p.starts_with("(bundled)"))
    {
        assert_eq!(
            inputs["scenario"]["path"],
            "(bundled) scenarios/pol-buck-3v3.toml"
        );
        assert_eq!(
            inputs["scenario"]["sha256"].as_str().unwrap(),
            sha256_of(&root.join("scenarios/pol-buck-3v3.toml"))
        );
    }
    let cat = &inputs["catalog"];
    assert_eq!(
        cat["sha256"].as_str().unwrap(),
        sha256_of(&root.join("catalogs/demo-parts.csv")),
        "{what}: every run here uses the demo catalog's bytes"
    );
    // RFC 3339, UTC: YYYY-MM-DDThh:mm:ssZ.
    let d = v["date"].as_str().expect("date is a string");
    let b = d.as_bytes();
    assert_eq!(b.len(), 20, "{what}: date {d}");
    for (i, c) in b.iter().enumerate() {
        match i {
            4 | 7 => assert_eq!(*c, b'-', "{d}"),
            10 => assert_eq!(*c, b'T', "{d}"),
            13 | 16 => assert_eq!(*c, b':', "{d}"),
            19 => assert_eq!(*c, b'Z', "{d}"),
            _ => assert!(c.is_ascii_digit(), "{d}"),
        }
    }
    let month: u32 = d[5..7].parse().unwrap();
    let day: u32 = d[8..10].parse().unwrap();
    assert!((1..=12).contains(&month) && (1..=31).contains(&day), "{d}");
    assert!(d[..4].parse::<u32>().unwrap() >= 2024, "{d}");
}

#[test]
fn design_assess_rework_tradeoff_keys() {
    let d = run(&["design"], 0);
    has_all(&d, BANK_KEYS, "design");
    run_keys(&d, "design");
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
    run_keys(&a, "assess");
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
    run_keys(&r, "rework");
    has_all(&r, &["kept", "removed", "added"], "rework");

    let t = run(
        &["tradeoff", "--points", "3", "--from", "5m", "--to", "20m"],
        0,
    );
    run_keys(&t, "tradeoff");
    let pts = t["points"].as_array().unwrap();
    // Three geometric targets plus the scenario's own (8 mV), in order.
    assert_eq!(pts.len(), 4);
    assert_eq!(
        pts.iter().filter(|p| p["scenario_target"] == true).count(),
        1
    );
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
fn validate_keys() {
    let v = run(&["validate"], 0);
    run_keys(&v, "validate");
    assert!(v["inputs"]["inductors"].is_null());
    // A scenario from a file: its own path and hash.
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let f = root.join("scenarios/module-5v.toml");
    let v = run(&["validate", "--scenario", f.to_str().unwrap()], 0);
    run_keys(&v, "validate --scenario");
    assert_eq!(v["inputs"]["scenario"]["path"], f.to_str().unwrap());
    assert_eq!(
        v["inputs"]["scenario"]["sha256"].as_str().unwrap(),
        sha256_of(&f)
    );
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
    run_keys(&d, "infeasible design");
    has_all(&d, &["best_ripple_pp", "binding"], "infeasible design");
    assert_eq!(d["status"], "infeasible");
    assert!(d["best_ripple_pp"].as_f64().unwrap() > 1e-3);
    assert!(!d["binding"].as_array().unwrap().is_empty());
}

#[test]
fn transient_object_keys() {
    // Without [transient] the key is present and null; with it, every key
    // of the object, in design and assess (source: the JSON section of the
    // README).
    let d = run(&["design"], 0);
    assert!(d.get("transient").is_some_and(|t| t.is_null()));
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let f = root.join("scenarios/fpga-core-step.toml");
    let d = run(&["design", "--scenario", f.to_str().unwrap()], 0);
    let keys = [
        "load_step",
        "max_deviation",
        "deviation",
        "z_target",
        "z_peak",
        "z_peak_frequency",
        "ok",
    ];
    has_all(&d["transient"], &keys, "design transient");
    assert_eq!(d["transient"]["ok"], true);
    let bank: Vec<String> = d["bank"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| format!("{}={}", b["part"].as_str().unwrap(), b["count"]))
        .collect();
    let a = run(
        &[
            "assess",
            "--scenario",
            f.to_str().unwrap(),
            "--bank",
            &bank.join(","),
        ],
        0,
    );
    has_all(&a["transient"], &keys, "assess transient");
    assert_eq!(a["transient"]["deviation"], d["transient"]["deviation"]);
    // The ripple-only bank (eight ceramics) misses the step: assess fails.
    let short = "RB-C0805-X5R-22U-6V3=8";
    let a = run(
        &["assess", "--scenario", f.to_str().unwrap(), "--bank", short],
        1,
    );
    assert_eq!(a["transient"]["ok"], false);
    assert_eq!(a["status"], "fail");
}
