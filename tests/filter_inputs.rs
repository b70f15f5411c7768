//! The post-filter's inputs on the command line: `--filter`, `--inductors`,
//! `[filter]` in a scenario, the inductor catalog's errors, and the bundled
//! filter demo. Source: the project's command-line rules (README, "Command
//! line" and "The LC post-filter"): bad input exits 2 with a message naming
//! the file, line and column or the key or argument.

use assert_cmd::Command;
use serde_json::Value;
use std::path::PathBuf;

fn bin() -> Command {
    Command::cargo_bin("ripplebank").unwrap()
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A fresh folder for one test's files.
fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!(
        "ripplebank-filter-in-{name}-{}",
        std::process::id()
    ));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Run, expect exit status 2, return stderr.
fn fails(args: &[&str]) -> String {
    let out = bin().args(args).assert().code(2).get_output().clone();
    assert!(out.stdout.is_empty(), "nothing on stdout on an input error");
    String::from_utf8(out.stderr).unwrap()
}

#[test]
fn malformed_inductor_catalog_exits_2_naming_file_line_and_column() {
    let d = scratch("badcat");
    for (body, want) in [
        (
            "L1,1u,5m,3,4,0.1\nL2,2.2uF,5m,3,4,0.1\n",
            "line 3, column 2 (inductance)",
        ),
        (
            "L1,1u,5m,3,4\n",
            "line 2, column 6: 5 fields where the header has 6",
        ),
        ("L1,1u,12,3,4,0.1\n", "line 2, column 3 (dcr)"),
        (
            "L1,1u,5m,3,4,0.1\nL1,1u,5m,3,4,0.1\n",
            "line 3, column 1 (part): part `L1` already defined on line 2",
        ),
    ] {
        let f = d.join("l.csv");
        std::fs::write(
            &f,
            format!("part,inductance,dcr,rated_current,saturation_current,cost\n{body}"),
        )
        .unwrap();
        let path = f.display().to_string();
        let e = fails(&["validate", "--inductors", &path]);
        assert!(e.contains(&format!("{path}: {want}")), "{e}");
    }
    let e = fails(&["validate", "--inductors", "/nonexistent/inductors.csv"]);
    assert!(
        e.contains("/nonexistent/inductors.csv: cannot read the inductor catalog"),
        "{e}"
    );
    std::fs::remove_dir_all(&d).ok();
}

#[test]
fn filter_option_is_checked_at_parse_time() {
    let e = fails(&["design", "--filter", "maybe"]);
    assert!(
        e.contains("maybe") && e.contains("off") && e.contains("auto") && e.contains("on"),
        "{e}"
    );
    let e = fails(&["tradeoff", "--filter", "sometimes"]);
    assert!(e.contains("sometimes"), "{e}");
    // Filter arguments of assess belong to a --bank.
    let e = fails(&["assess", "--bom", "x.csv", "--inductor", "RB-L4040-1U"]);
    assert!(
        e.contains("--bom with --inductor") && e.contains("`position` column"),
        "{e}"
    );
    let e = fails(&[
        "assess",
        "--bank",
        "RB-C1206-X5R-47U-6V3=2",
        "--damping",
        "0R22,RB-C1206-X5R-47U-6V3",
    ]);
    assert!(e.contains("--damping: a filter needs its inductor"), "{e}");
    let e = fails(&[
        "assess",
        "--bank",
        "RB-C1206-X5R-47U-6V3=2",
        "--inductor",
        "RB-C1206-X5R-47U-6V3",
        "--load-bank",
        "RB-C1206-X5R-47U-6V3=2",
    ]);
    assert!(
        e.contains("--inductor: inductor `RB-C1206-X5R-47U-6V3`") && e.contains("is a capacitor"),
        "{e}"
    );
}

#[test]
fn filter_off_in_any_letter_case_designs_capacitors_only() {
    let out = bin()
        .args(["design", "--filter", "OFF", "--json"])
        .assert()
        .code(0)
        .get_output()
        .clone();
    let d: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(d["status"], "optimal");
    // No filter considered: no inductor catalog is read.
    assert!(d["inputs"]["inductors"].is_null(), "{}", d["inputs"]);
}

#[test]
fn scenario_filter_keys_are_checked_and_name_the_key() {
    let d = scratch("scen");
    let base = std::fs::read_to_string(root().join("scenarios/adc-rail-5v.toml")).unwrap();
    let base = base.replace("../catalogs/", &format!("{}/catalogs/", root().display()));
    for (from, to, want) in [
        (
            "inductors = \"",
            "inductors = \"missing-",
            "key `filter.inductors`",
        ),
        (
            "sense = \"converter\"",
            "sense = \"load\"",
            "key `filter.sense`: `load` is not supported",
        ),
        (
            "max_dc_drop = \"50m\"",
            "max_dc_drop = 50",
            "did you mean \"50m\"?",
        ),
        ("damping = \"auto\"", "damping = \"heavy\"", "heavy"),
    ] {
        let f = d.join("s.toml");
        assert!(base.contains(from), "{from}");
        std::fs::write(&f, base.replacen(from, to, 1)).unwrap();
        let e = fails(&["validate", "--scenario", &f.display().to_string()]);
        assert!(e.contains(want), "{to}: {e}");
    }
    std::fs::remove_dir_all(&d).ok();
}

#[test]
fn filter_demo_lists_inductors_with_reasons_and_capacitors_alone_fall_short() {
    let scen = root()
        .join("scenarios/adc-rail-5v.toml")
        .display()
        .to_string();
    let out = bin()
        .args(["validate", "--scenario", &scen, "--json"])
        .assert()
        .code(0)
        .get_output()
        .clone();
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert!(v["inputs"]["inductors"]["path"]
        .as_str()
        .unwrap()
        .ends_with("demo-inductors.csv"));
    let excluded = v["inductors_excluded"].as_array().unwrap();
    let reason = |id: &str| {
        excluded
            .iter()
            .find(|e| e["part"] == id)
            .map(|e| e["reason"].as_str().unwrap().to_string())
            .unwrap_or_default()
    };
    // Ohm's law: 1.2 A · 50 mΩ = 60 mV against the 50 mV limit.
    assert!(
        reason("RB-L2520-1U").contains("= 60 mV is above filter.max_dc_drop 50 mV"),
        "{excluded:?}"
    );
    assert!(reason("RB-L1040-1U").contains("board.max_height"));
    assert!(v["inductors_eligible"]
        .as_array()
        .unwrap()
        .iter()
        .any(|x| x == "RB-L4040-1U"));
    // The scenario's premise: capacitors alone cannot meet 1 mV within the
    // module's 200 µF; the added-capacitance limit is what binds.
    let out = bin()
        .args(["design", "--scenario", &scen, "--filter", "off", "--json"])
        .assert()
        .code(1)
        .get_output()
        .clone();
    let d: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(d["status"], "infeasible");
    assert!(
        d["binding"]
            .as_array()
            .unwrap()
            .iter()
            .any(|b| b == "max_capacitance"),
        "{}",
        d["binding"]
    );
    assert!(d["best_ripple_pp"].as_f64().unwrap() > 1e-3);
}
