//! The command line: option values checked at parse time, `--quiet`,
//! `assess --corner`, and a closed stdout. Source: the project's command-line
//! contract (README, "Command line"), exit statuses 0/1/2 as documented there;
//! a closed pipe is not an error (POSIX `write` fails with EPIPE, which a
//! program reading into `head` causes routinely).

use assert_cmd::Command;
use serde_json::Value;
use std::process::Stdio;

fn bin() -> Command {
    Command::cargo_bin("ripplebank").unwrap()
}

fn json(args: &[&str], code: i32) -> Value {
    let out = bin()
        .args(args)
        .arg("--json")
        .assert()
        .code(code)
        .get_output()
        .stdout
        .clone();
    serde_json::from_slice(&out).expect("one JSON document")
}

fn text(args: &[&str], code: i32) -> String {
    let out = bin().args(args).assert().code(code).get_output().clone();
    String::from_utf8(out.stdout).unwrap()
}

/// The demo design's bank as `PART=N,…`.
fn demo_bank() -> String {
    let d = json(&["design"], 0);
    d["bank"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| format!("{}={}", b["part"].as_str().unwrap(), b["count"]))
        .collect::<Vec<_>>()
        .join(",")
}

#[test]
fn objective_is_checked_at_parse_time_and_ignores_case() {
    let d = json(&["design", "--objective", "AREA"], 0);
    assert_eq!(d["objective"], "area");
    let d = json(&["design", "--objective", "Count"], 0);
    assert_eq!(d["objective"], "count");
    // An unknown value is a usage error (2) naming the allowed values.
    let out = bin()
        .args(["design", "--objective", "size"])
        .assert()
        .code(2)
        .get_output()
        .clone();
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(out.stdout.is_empty());
    for v in ["cost", "area", "count"] {
        assert!(err.contains(v), "the message lists `{v}`: {err}");
    }
}

#[test]
fn assess_corner_is_typed_and_defaults_to_worst() {
    let bank = demo_bank();
    let a = json(&["assess", "--bank", &bank], 0);
    assert_eq!(a["corner"], "worst");
    let w = a["ripple_pp"].as_f64().unwrap();
    for c in ["low", "HIGH", "typical", "worst"] {
        let a = json(&["assess", "--bank", &bank, "--corner", c], 0);
        assert_eq!(a["corner"], c.to_lowercase());
        assert!(a["ripple_pp"].as_f64().unwrap().is_finite());
    }
    // `worst` behaves as without the option.
    let a = json(&["assess", "--bank", &bank, "--corner", "worst"], 0);
    assert_eq!(a["ripple_pp"].as_f64().unwrap(), w);
    bin()
        .args(["assess", "--bank", &bank, "--corner", "middle"])
        .assert()
        .code(2);
}

#[test]
fn quiet_keeps_the_answer_and_drops_the_details() {
    let full = text(&["design"], 0);
    let quiet = text(&["design", "--quiet"], 0);
    assert!(full.contains("Parts not used"));
    assert!(!quiet.contains("Parts not used"), "{quiet}");
    assert!(
        full.contains("voltage RB-"),
        "per-part rows without --quiet"
    );
    assert!(!quiet.contains("voltage RB-"), "{quiet}");
    for keep in [
        "Design: OPTIMAL",
        "Bank",
        "Ripple",
        "ripple_pp",
        "max_lines",
    ] {
        assert!(quiet.contains(keep), "`{keep}` stays in the quiet report");
    }
    let bank = demo_bank();
    let quiet = text(&["assess", "--bank", &bank, "--quiet"], 0);
    assert!(!quiet.contains("voltage RB-") && quiet.contains("Verdict"));
    let quiet = text(
        &[
            "tradeoff", "--points", "2", "--from", "6m", "--to", "12m", "--quiet",
        ],
        0,
    );
    assert!(quiet.contains("Trade-off"));
    let dir = tempfile::tempdir().unwrap();
    let bom = dir.path().join("bom.csv");
    std::fs::write(
        &bom,
        format!(
            "part,count\n{}\n",
            bank.replace('=', ",").replace(",RB", "\nRB")
        ),
    )
    .unwrap();
    let quiet = text(&["rework", "--bom", bom.to_str().unwrap(), "--quiet"], 0);
    assert!(!quiet.contains("Parts not used") && quiet.contains("Rework"));
}

/// Run a command with its stdout closed before it writes: exit 0, no panic.
fn closed_stdout(args: &[&str], code: i32) {
    let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("ripplebank"))
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    drop(child.stdout.take()); // the reader goes away, as `head` does
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(code), "{args:?}: {err}");
    assert!(!err.contains("panicked"), "{args:?}: {err}");
}

#[test]
fn closed_stdout_is_not_an_error() {
    closed_stdout(&["design"], 0);
    closed_stdout(&["design", "--json"], 0);
    closed_stdout(&["validate"], 0);
    closed_stdout(
        &["tradeoff", "--points", "2", "--from", "6m", "--to", "12m"],
        0,
    );
}

/// The number printed after `"key": ` in a JSON text.
fn printed<'a>(text: &'a str, key: &str) -> Vec<&'a str> {
    text.match_indices(&format!("\"{key}\": "))
        .map(|(i, m)| {
            let rest = &text[i + m.len()..];
            &rest[..rest.find([',', '\n', '}']).unwrap_or(rest.len())]
        })
        .collect()
}

#[test]
fn echoed_targets_print_as_written() {
    // 10u is 10 × 10⁻⁶, which in binary floating point is
    // 9.999999999999999e-6 (IEEE 754 double rounding, from memory); a value
    // the user wrote is echoed as written (12 significant digits at most).
    let dir = tempfile::tempdir().unwrap();
    let f = dir.path().join("s.toml");
    std::fs::write(
        &f,
        ripplebank::load::DEMO_SCENARIO
            .replace("ripple_pp = \"8m\"", "ripple_pp = \"10u\"")
            .replace(
                "../catalogs/demo-parts.csv",
                concat!(env!("CARGO_MANIFEST_DIR"), "/catalogs/demo-parts.csv"),
            ),
    )
    .unwrap();
    let out = bin()
        .args(["design", "--json", "--scenario", f.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let text = String::from_utf8(out.stdout).unwrap();
    let t = printed(&text, "target_ripple_pp");
    assert!(!t.is_empty());
    for x in t {
        assert!(
            x == "0.00001" || x == "1e-5",
            "target_ripple_pp printed as {x}"
        );
    }
    // Trade-off rows: --from 8.2m (8.2 × 10⁻³ = 0.008199999999999999 in
    // binary) and --to 9m (0.009000000000000001) print as written.
    let out = bin()
        .args([
            "tradeoff", "--json", "--from", "8.2m", "--to", "9m", "--points", "2",
        ])
        .output()
        .unwrap();
    let text = String::from_utf8(out.stdout).unwrap();
    assert_eq!(printed(&text, "from"), ["0.0082"]);
    assert_eq!(printed(&text, "to"), ["0.009"]);
    let targets = printed(&text, "target");
    for want in ["0.0082", "0.009", "0.008"] {
        assert!(targets.contains(&want), "{want} not in {targets:?}");
    }
}
