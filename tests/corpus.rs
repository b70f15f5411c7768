//! Malformed and real-world inputs (tests/corpus/, manifest in
//! tests/corpus/README.md) and numbers at the edges of the model's range.
//!
//! Bad input: every case must end with exit status 2, a message on stderr
//! that names the file and the line and column (catalog, bill of materials)
//! or the key (scenario), and never a panic (project rules: a bad catalog names
//! file, line and column, a bad scenario names its key, exit status 2).
//! Accepted catalogs: the formats spreadsheets and parts databases export.

use assert_cmd::Command;
use ripplebank::catalog::{Catalog, Technology};
use serde_json::Value;
use std::path::{Path, PathBuf};

const CORPUS: &str = "tests/corpus";

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn corpus(name: &str) -> String {
    format!("{CORPUS}/{name}")
}

fn bin() -> Command {
    let mut c = Command::cargo_bin("ripplebank").expect("binary ripplebank");
    c.current_dir(root());
    c
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    /// `validate --scenario good-scenario.toml --catalog FILE`
    Catalog,
    /// `validate --scenario FILE` (its catalog key points to good-catalog.csv)
    Scenario,
    /// `assess --scenario good-scenario.toml --bom FILE`
    Bom,
    /// An inductor catalog, read through `InductorCatalog::from_path` (the
    /// inductor catalog is not wired into a command yet).
    Inductors,
}
use Kind::*;

/// (file, kind, substrings stderr must contain). The file name itself is
/// always checked too.
const CASES: &[(&str, Kind, &[&str])] = &[
    // ---- catalogs: line and column (or the column's name for a header fault)
    (
        "cat-missing-esr-column.csv",
        Catalog,
        &["line 1", "required column `esr` is missing"],
    ),
    (
        "cat-wrong-unit.csv",
        Catalog,
        &["line 3, column 3 (capacitance)", "`10uH` is an inductance"],
    ),
    (
        "cat-negative-capacitance.csv",
        Catalog,
        &["line 2, column 3 (capacitance)", "above zero"],
    ),
    (
        "cat-nan-esr.csv",
        Catalog,
        &["line 4, column 5 (esr)", "not a finite number"],
    ),
    (
        "cat-inf-esl.csv",
        Catalog,
        &["line 3, column 6 (esl)", "not a finite number"],
    ),
    (
        "cat-absurd-capacitance.csv",
        Catalog,
        &["line 2, column 3 (capacitance)", "prefix"],
    ),
    (
        "cat-absurd-esr.csv",
        Catalog,
        &["line 5, column 5 (esr)", "not a plausible ESR"],
    ),
    (
        "cat-negative-esr.csv",
        Catalog,
        &["line 2, column 5 (esr)", "zero or more"],
    ),
    (
        "cat-duplicate-part.csv",
        Catalog,
        &[
            "line 4, column 1 (part)",
            "`CX-A-22U-6V3` already defined on line 2",
        ],
    ),
    (
        "cat-bias-not-monotonic.csv",
        Catalog,
        &["line 2, column 10 (dc_bias)", "point 3", "rise strictly"],
    ),
    (
        "cat-bias-fraction-high.csv",
        Catalog,
        &["line 2, column 10 (dc_bias)", "point 2", "at most 1.5"],
    ),
    (
        "cat-bias-missing-colon.csv",
        Catalog,
        &[
            "line 4, column 10 (dc_bias)",
            "`5 0.8` is not of the form V:fraction",
        ],
    ),
    (
        "cat-unknown-dielectric.csv",
        Catalog,
        &["line 4, column 9 (dielectric)", "`X7Q`"],
    ),
    (
        "cat-tolerance-150.csv",
        Catalog,
        &["line 3, column 8 (tolerance)", "below 1 (100 %)"],
    ),
    (
        "cat-unknown-technology.csv",
        Catalog,
        &["line 3, column 2 (technology)", "`supercapacitor`"],
    ),
    (
        "cat-field-count.csv",
        Catalog,
        &["line 3, column 15", "15 fields where the header has 14"],
    ),
    (
        "cat-empty.csv",
        Catalog,
        &["line 1", "the catalog is empty"],
    ),
    (
        "cat-whitespace-only.csv",
        Catalog,
        &["line 1", "the catalog is empty"],
    ),
    ("cat-header-only.csv", Catalog, &["line 1", "no parts"]),
    (
        "cat-unknown-status.csv",
        Catalog,
        &["line 5, column 13 (status)", "`discontinued`"],
    ),
    (
        "cat-empty-required-cell.csv",
        Catalog,
        &[
            "line 3, column 4 (rated_voltage)",
            "required value is empty",
        ],
    ),
    (
        "cat-not-a-number.csv",
        Catalog,
        &["line 4, column 7 (cost)", "`cheap`"],
    ),
    (
        "cat-duplicate-column.csv",
        Catalog,
        &["line 1, column 15", "`esr` appears twice"],
    ),
    (
        "cat-empty-column-name.csv",
        Catalog,
        &["line 1, column 15", "empty column name"],
    ),
    (
        "cat-semicolon-wrong-unit.csv",
        Catalog,
        &["line 3, column 6 (esl)", "is a capacitance (F)"],
    ),
    (
        "cat-temp-range-inverted.csv",
        Catalog,
        &["line 3, column 16 (temp_max)", "not above temp_min"],
    ),
    (
        "cat-empty-part-id.csv",
        Catalog,
        &["line 3, column 1 (part)", "part id is empty"],
    ),
    // CRLF and blank lines must not shift the line numbers.
    (
        "cat-wrong-unit-crlf-blank-lines.csv",
        Catalog,
        &["line 6, column 5 (esr)", "`12mH` is an inductance"],
    ),
    (
        "cat-field-count-crlf.csv",
        Catalog,
        &[
            "line 4, column 14",
            "13 fields where the header has 14",
            "`description`",
        ],
    ),
    (
        "cat-huge-exponent.csv",
        Catalog,
        &[
            "line 2, column 3 (capacitance)",
            "`1e300G`",
            "not a finite number",
        ],
    ),
    // ---- scenarios: the key (TOML errors also quote the offending line)
    (
        "scn-step-deviation-volts.toml",
        Scenario,
        &["key `transient.max_deviation`", "did you mean \"5m\""],
    ),
    (
        "scn-step-crossover-above-fsw.toml",
        Scenario,
        &[
            "key `transient.loop_crossover`",
            "half the switching frequency",
            "\"60k\"",
        ],
    ),
    (
        "scn-step-rise-seconds.toml",
        Scenario,
        &["key `transient.rise_time`", "did you mean \"1u\""],
    ),
    (
        "scn-step-missing-crossover.toml",
        Scenario,
        &["[transient]", "missing field `loop_crossover`"],
    ),
    (
        "scn-step-unknown-key.toml",
        Scenario,
        &["line 30", "unknown field `load_stp`"],
    ),
    (
        "scn-unknown-key.toml",
        Scenario,
        &["line 10", "unknown field `fws`"],
    ),
    (
        "scn-unknown-topology.toml",
        Scenario,
        &["topology = \"buk\"", "unknown variant `buk`"],
    ),
    (
        "scn-unknown-table.toml",
        Scenario,
        &["line 22", "unknown field `boards`"],
    ),
    (
        "scn-buck-step-up.toml",
        Scenario,
        &["key `converter.vout`", "a buck cannot make 15 V from 12 V"],
    ),
    (
        "scn-boost-step-down.toml",
        Scenario,
        &["key `converter.vout`", "a boost needs vout above vin"],
    ),
    (
        "scn-flyback-no-turns-ratio.toml",
        Scenario,
        &["key `converter.turns_ratio`"],
    ),
    (
        "scn-zero-fsw.toml",
        Scenario,
        &["key `converter.fsw`", "above zero"],
    ),
    (
        "scn-absurd-fsw.toml",
        Scenario,
        &["key `converter.fsw`", "outside 1 kHz"],
    ),
    (
        "scn-negative-inductance.toml",
        Scenario,
        &["key `converter.inductance`", "above zero"],
    ),
    (
        "scn-ideal-edges-no-bandwidth.toml",
        Scenario,
        &[
            "key `converter.edge_time`",
            "not finite",
            "edge_time = \"20n\"",
        ],
    ),
    (
        "scn-edge-time-too-long.toml",
        Scenario,
        &["key `converter.edge_time`", "switching period"],
    ),
    (
        "scn-wrong-unit.toml",
        Scenario,
        &[
            "inductance = \"2.2uF\"",
            "is a capacitance (F), but this field is an inductance (H)",
        ],
    ),
    ("scn-missing-vout.toml", Scenario, &["missing field `vout`"]),
    (
        "scn-missing-target.toml",
        Scenario,
        &["missing field `target`"],
    ),
    (
        "scn-catalog-not-found.toml",
        Scenario,
        &["key `catalog`", "no-such-catalog.csv"],
    ),
    (
        "scn-require-unknown-part.toml",
        Scenario,
        &["key `selection.require.CX-NOPE-1U`", "not in the catalog"],
    ),
    (
        "scn-exclude-unknown-part.toml",
        Scenario,
        &["key `selection.exclude`", "`CX-NOPE-1U`"],
    ),
    (
        "scn-require-above-max.toml",
        Scenario,
        &["key `selection.require.CX-A-22U-6V3`", "max_per_part"],
    ),
    (
        "scn-nan-vout.toml",
        Scenario,
        &["vout = nan", "not a finite number"],
    ),
    (
        "scn-inf-iout.toml",
        Scenario,
        &["iout = inf", "not a finite number"],
    ),
    (
        "scn-negative-iout.toml",
        Scenario,
        &["key `converter.iout`", "zero or more"],
    ),
    ("scn-empty.toml", Scenario, &["missing field `converter`"]),
    ("scn-syntax-error.toml", Scenario, &["line 7", "vin = = 12"]),
    (
        "scn-derating-unknown-technology.toml",
        Scenario,
        &[
            "key `selection.voltage_derating.supercap`",
            "unknown technology",
        ],
    ),
    (
        "scn-zero-phases.toml",
        Scenario,
        &["key `converter.phases`"],
    ),
    (
        "scn-temperature-inverted.toml",
        Scenario,
        &["key `environment.temperature_min`"],
    ),
    (
        "scn-unknown-objective.toml",
        Scenario,
        &["objective = \"price\"", "unknown variant `price`"],
    ),
    (
        "scn-bandwidth-order-zero.toml",
        Scenario,
        &["key `target.bandwidth_order`"],
    ),
    (
        "scn-string-not-number.toml",
        Scenario,
        &["vin = \"twelve\"", "does not start with a number"],
    ),
    (
        "scn-huge-exponent.toml",
        Scenario,
        &["vin = \"1e300G\"", "not a finite number"],
    ),
    (
        "scn-not-utf8.toml",
        Scenario,
        &["line 2, column 20", "not UTF-8"],
    ),
    // ---- bills of materials
    (
        "bom-unknown-part.csv",
        Bom,
        &[
            "line 3, column `part`",
            "`CX-NOPE-1U` is not in the catalog",
        ],
    ),
    (
        "bom-unknown-part-crlf.csv",
        Bom,
        &["line 5, column `part`", "`CX-NOPE-1U`"],
    ),
    (
        "bom-non-integer-count.csv",
        Bom,
        &["line 2, column 2 (count)", "`2.5` is not a whole number"],
    ),
    (
        "bom-negative-count.csv",
        Bom,
        &["line 3, column 2 (count)", "`-1` is not a whole number"],
    ),
    (
        "bom-missing-count-column.csv",
        Bom,
        &["line 1", "column `count` is missing", "qty"],
    ),
    (
        "bom-missing-count-cell.csv",
        Bom,
        &["line 2, column 2 (count)", "empty"],
    ),
    ("bom-empty.csv", Bom, &["line 1", "empty"]),
    (
        "bom-empty-part.csv",
        Bom,
        &["line 3, column 1 (part)", "empty part id"],
    ),
    ("bom-header-only.csv", Bom, &["line 1", "lists no parts"]),
    (
        "bom-absurd-count.csv",
        Bom,
        &["line 2, column 2 (count)", "100000"],
    ),
    ("bom-not-utf8.csv", Bom, &["line 3, column 13", "not UTF-8"]),
    // ---- plausibility: the field and the likely intended value
    (
        "cat-ceramic-in-farads.csv",
        Catalog,
        &[
            "line 3, column 3 (capacitance)",
            "4.7 F for a ceramic",
            "bare numbers are farads",
            "did you mean 4.7u?",
        ],
    ),
    (
        "cat-esr-above-10-ohm.csv",
        Catalog,
        &[
            "line 3, column 5 (esr)",
            "not a plausible ESR",
            "did you mean 30m?",
        ],
    ),
    (
        "cat-esl-microhenry.csv",
        Catalog,
        &[
            "line 2, column 6 (esl)",
            "not a plausible ESL",
            "did you mean 2n?",
        ],
    ),
    (
        "scn-ripple-at-vout.toml",
        Scenario,
        &[
            "key `target.ripple_pp`",
            "at or above vout",
            "did you mean \"8m\"?",
        ],
    ),
    (
        "scn-fsw-below-1k.toml",
        Scenario,
        &[
            "key `converter.fsw`",
            "below 1 kHz",
            "did you mean \"600k\"?",
        ],
    ),
    (
        "scn-bandwidth-below-ripple.toml",
        Scenario,
        &[
            "key `target.bandwidth`",
            "below the ripple frequency 600 kHz",
            "did you mean \"20M\"?",
        ],
    ),
    (
        "scn-inductance-henries.toml",
        Scenario,
        &[
            "key `converter.inductance`",
            "1 nH … 10 mH",
            "did you mean \"2.2u\"?",
        ],
    ),
    // ---- v2 catalog columns
    (
        "cat-esr-temp-not-rising.csv",
        Catalog,
        &["line 2, column 9 (esr_temp)", "point 2", "rise strictly"],
    ),
    (
        "cat-esr-temp-missing-colon.csv",
        Catalog,
        &["line 2, column 9 (esr_temp)", "point 2", "°C:factor"],
    ),
    (
        "cat-esr-min-above-esr.csv",
        Catalog,
        &["line 2, column 9 (esr_min)", "above the part's esr"],
    ),
    (
        "cat-aging-out-of-range.csv",
        Catalog,
        &["line 2, column 10 (aging)", "from 0 to 25"],
    ),
    (
        "cat-temp-rise-high.csv",
        Catalog,
        &["line 2, column 9 (temp_rise)", "from 0 to 1"],
    ),
    (
        "cat-header-unit-wrong.csv",
        Catalog,
        &[
            "line 1, column 3 (capacitance)",
            "header unit `uH`",
            "inductance",
        ],
    ),
    (
        "cat-rkm-wrong-unit.csv",
        Catalog,
        &[
            "line 3, column 3 (capacitance)",
            "RKM code",
            "`4.7uH` is an inductance",
        ],
    ),
    // ---- v2 scenario keys
    (
        "scn-inductance-tolerance-high.toml",
        Scenario,
        &["key `converter.inductance_tolerance`", "below 0.9"],
    ),
    (
        "scn-service-hours-negative.toml",
        Scenario,
        &["key `environment.service_hours`", "-1000"],
    ),
    (
        "scn-unknown-bridge.toml",
        Scenario,
        &[
            "bridge = \"quarter\"",
            "unknown variant `quarter`",
            "push-pull",
        ],
    ),
    (
        "scn-half-bridge-cannot-make-vout.toml",
        Scenario,
        &["key `converter.vout`", "a half bridge cannot make 5 V"],
    ),
    (
        "scn-standalone-order-zero.toml",
        Scenario,
        &["key `converter.standalone_bandwidth_order`", "from 1 to 8"],
    ),
    // ---- bills of materials
    (
        "bom-case-mismatch.csv",
        Bom,
        &["line 3, column `part`", "did you mean `CX-C-1U-16V`?"],
    ),
    (
        "bom-filter-position.csv",
        Bom,
        &["line 3, column `position`", "a filter needs its inductor"],
    ),
    (
        "bom-unknown-position.csv",
        Bom,
        &[
            "line 2, column 3 (position)",
            "unknown position `Upstream`",
            "damping",
        ],
    ),
    // ---- inductor catalogs
    (
        "ind-inductance-henries.csv",
        Inductors,
        &["line 3, column 2 (inductance)", "did you mean 2.2u?"],
    ),
    (
        "ind-dcr-ohms.csv",
        Inductors,
        &["line 2, column 4 (dcr)", "did you mean 12m?"],
    ),
    (
        "ind-srf-hertz.csv",
        Inductors,
        &["line 2, column 7 (srf)", "did you mean 60M?"],
    ),
    (
        "ind-missing-saturation-column.csv",
        Inductors,
        &["line 1", "required column `saturation_current` is missing"],
    ),
];

/// Run one bad-input case and check the rules for bad input.
fn run_bad(file: &str, kind: Kind, expect: &[&str]) -> Result<(), String> {
    let path = file.to_string();
    if kind == Inductors {
        let msg = match ripplebank::inductors::InductorCatalog::from_path(&root().join(file)) {
            Ok(_) => return Err(format!("{file}: accepted, want an error")),
            Err(e) => format!("{e:#}"),
        };
        let name = Path::new(file).file_name().unwrap().to_string_lossy();
        let missing: Vec<&str> = std::iter::once(&*name)
            .chain(std::iter::once("line "))
            .chain(expect.iter().copied())
            .filter(|e| !msg.contains(e))
            .collect();
        return if missing.is_empty() {
            Ok(())
        } else {
            Err(format!("{file}: message lacks {missing:?}: {msg}"))
        };
    }
    let good_scn = corpus("good-scenario.toml");
    let args: Vec<&str> = match kind {
        Catalog => vec!["validate", "--scenario", &good_scn, "--catalog", &path],
        Scenario => vec!["validate", "--scenario", &path],
        Bom => vec!["assess", "--scenario", &good_scn, "--bom", &path],
        Inductors => unreachable!("handled above"),
    };
    let out = bin().args(&args).output().map_err(|e| e.to_string())?;
    let stderr = String::from_utf8_lossy(&out.stderr);
    let stdout = String::from_utf8_lossy(&out.stdout);
    let mut problems = Vec::new();
    if out.status.code() != Some(2) {
        problems.push(format!("exit status {:?}, want 2", out.status.code()));
    }
    if stderr.contains("panicked") {
        problems.push("stderr shows a panic".into());
    }
    let name = Path::new(file).file_name().unwrap().to_string_lossy();
    if !stderr.contains(&*name) {
        problems.push(format!("stderr does not name the file {name}"));
    }
    if matches!(kind, Catalog | Bom) && !stderr.contains("line ") {
        problems.push("stderr names no line".into());
    }
    for e in expect {
        if !stderr.contains(e) {
            problems.push(format!("stderr lacks `{e}`"));
        }
    }
    if !stdout.trim().is_empty() {
        problems.push(format!("stdout is not empty: {stdout}"));
    }
    if problems.is_empty() {
        Ok(())
    } else {
        Err(format!(
            "{file} ({kind:?}): {}\n  stderr: {stderr}",
            problems.join("; ")
        ))
    }
}

#[test]
fn every_malformed_input_exits_2_and_names_file_and_place() {
    assert!(
        CASES.len() >= 30,
        "the brief asks for at least 30 malformed inputs"
    );
    let failures: Vec<String> = CASES
        .iter()
        .filter_map(|&(f, k, e)| run_bad(&corpus(f), k, e).err())
        .collect();
    assert!(
        failures.is_empty(),
        "{} of {} cases fail:\n{}",
        failures.len(),
        CASES.len(),
        failures.join("\n")
    );
}

/// Deterministic bytes (xorshift64), with NUL and 0xFF bytes forced in.
fn garbage(n: usize, mut seed: u64) -> Vec<u8> {
    let mut v = Vec::with_capacity(n);
    for _ in 0..n {
        seed ^= seed << 13;
        seed ^= seed >> 7;
        seed ^= seed << 17;
        v.push((seed >> 24) as u8);
    }
    v[40] = 0;
    v[41] = 0xff;
    v
}

#[test]
fn binary_garbage_is_refused_with_a_position() {
    let dir = tempfile::tempdir().unwrap();
    let bytes = garbage(4096, 0x9e37_79b9_7f4a_7c15);
    for (name, kind, expect) in [
        (
            "garbage-catalog.csv",
            Catalog,
            &["line ", "column ", "not a text file"][..],
        ),
        (
            "garbage-scenario.toml",
            Scenario,
            &["line ", "column ", "not UTF-8"][..],
        ),
        (
            "bom-garbage.csv",
            Bom,
            &["line ", "column ", "not UTF-8"][..],
        ),
    ] {
        let p = dir.path().join(name);
        std::fs::write(&p, &bytes).unwrap();
        run_bad(p.to_str().unwrap(), kind, expect).unwrap();
    }
}

#[test]
fn unknown_part_on_the_command_line_exits_2() {
    let out = bin()
        .args([
            "assess",
            "--scenario",
            &corpus("good-scenario.toml"),
            "--bank",
            "CX-NOPE-1U=2",
        ])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("--bank") && stderr.contains("CX-NOPE-1U"),
        "{stderr}"
    );
    assert!(!stderr.contains("panicked"));
}

#[test]
fn manifest_lists_every_corpus_file_and_the_table_covers_every_bad_file() {
    let readme = std::fs::read_to_string(root().join(CORPUS).join("README.md")).unwrap();
    let mut names: Vec<String> = std::fs::read_dir(root().join(CORPUS))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n != "README.md" && n != ".gitattributes")
        .collect();
    names.sort();
    for n in &names {
        assert!(
            readme.contains(&format!("`{n}`")),
            "tests/corpus/README.md does not list {n}"
        );
        let ok = n.starts_with("ok-") || n.starts_with("good-");
        let in_table = CASES.iter().any(|c| c.0 == n);
        assert!(
            ok || in_table,
            "{n} is in the corpus but not in the test table"
        );
        assert!(!(ok && in_table), "{n} is both a good file and a bad case");
    }
    for c in CASES {
        assert!(
            names.iter().any(|n| n == c.0),
            "table names {} which is not in the corpus",
            c.0
        );
    }
}

// ---------------------------------------------------------------------------
// Catalogs as they really arrive: accepted, and read correctly.

const OK_CATALOGS: &[(&str, usize)] = &[
    ("good-catalog.csv", 4),
    ("ok-utf8-bom.csv", 4),
    ("ok-crlf.csv", 4),
    ("ok-quoted-commas.csv", 3),
    ("ok-semicolon-decimal-comma.csv", 2),
    ("ok-header-variants.csv", 2),
    ("ok-latin1.csv", 2),
    ("ok-blank-lines.csv", 3),
    ("ok-header-units.csv", 3),
    ("ok-rkm-values.csv", 3),
    ("ok-currency-semicolon.csv", 2),
];

#[test]
fn real_world_catalogs_validate_through_the_cli() {
    for &(f, n) in OK_CATALOGS {
        let out = bin()
            .args([
                "validate",
                "--json",
                "--scenario",
                &corpus("good-scenario.toml"),
                "--catalog",
                &corpus(f),
            ])
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(0), "{f}: {stderr}");
        let doc: Value = serde_json::from_slice(&out.stdout)
            .unwrap_or_else(|e| panic!("{f}: stdout is not JSON: {e}"));
        assert_eq!(doc["status"], "valid", "{f}");
        assert_eq!(doc["parts"].as_u64(), Some(n as u64), "{f}");
    }
    // The good scenario alone, with its relative `catalog` key.
    let out = bin()
        .args(["validate", "--scenario", &corpus("good-scenario.toml")])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    // A good bill of materials against the good scenario is a well-formed question.
    let out = bin()
        .args([
            "assess",
            "--json",
            "--scenario",
            &corpus("good-scenario.toml"),
            "--bom",
            &corpus("good-bom.csv"),
        ])
        .output()
        .unwrap();
    assert!(
        matches!(out.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
}

fn load(f: &str) -> Catalog {
    let bytes = std::fs::read(root().join(CORPUS).join(f)).unwrap();
    Catalog::from_bytes(&bytes, f).unwrap_or_else(|e| panic!("{f}: {e:#}"))
}

#[track_caller]
fn close(a: f64, b: f64) {
    assert!((a - b).abs() <= 1e-12 * b.abs().max(1e-300), "{a} vs {b}");
}

#[test]
fn utf8_byte_order_mark_is_not_part_of_the_first_column() {
    let c = load("ok-utf8-bom.csv");
    assert_eq!(c.parts.len(), 4);
    assert_eq!(c.parts[0].id, "CX-A-22U-6V3");
    assert!(c.get("CX-A-22U-6V3").is_some());
    close(c.parts[0].capacitance, 22e-6);
    assert_eq!(c.parts[0].line, 2);
}

#[test]
fn crlf_line_ends_leave_no_carriage_return_in_values() {
    let c = load("ok-crlf.csv");
    let g = load("good-catalog.csv");
    assert_eq!(c.parts.len(), g.parts.len());
    for (a, b) in c.parts.iter().zip(&g.parts) {
        assert_eq!(a.id, b.id);
        assert_eq!(a.description, b.description);
        assert!(!a.description.as_deref().unwrap_or("").contains('\r'));
        close(a.capacitance, b.capacitance);
        close(a.esr, b.esr);
        close(a.esl, b.esl);
        assert_eq!(a.dc_bias, b.dc_bias);
        assert_eq!(a.line, b.line);
    }
    let d = c.get("CX-D-10N-50V").unwrap();
    assert_eq!(d.status, ripplebank::catalog::Status::Active);
    close(d.tolerance, 0.05);
}

#[test]
fn quoted_fields_keep_commas_quotes_and_newlines() {
    let c = load("ok-quoted-commas.csv");
    assert_eq!(c.parts.len(), 3);
    let a = c.get("CX-Q-22U-6V3").unwrap();
    assert_eq!(a.description.as_deref(), Some("invented, demo part A"));
    assert_eq!(a.extra, vec![("note".to_string(), "keep, dry".to_string())]);
    assert_eq!(
        a.dc_bias.as_ref().unwrap().points,
        vec![(0.0, 1.0), (3.3, 0.5)]
    );
    let b = c.get("CX-Q-47U-6V3").unwrap();
    close(b.capacitance, 47e-6);
    close(b.esr, 2e-3);
    assert_eq!(
        b.description.as_deref(),
        Some("the \"big\" one,\ntwo lines")
    );
    let q = c.get("CX-Q-1U-16V").unwrap();
    assert_eq!(q.description.as_deref(), Some("a, b"));
    // The quoted newline makes the third part start on line 5 of the file.
    assert_eq!(q.line, 5);
}

#[test]
fn semicolon_export_with_decimal_commas() {
    let c = load("ok-semicolon-decimal-comma.csv");
    assert_eq!(c.parts.len(), 2);
    let a = c.get("CX-S-4U7-6V3").unwrap();
    close(a.capacitance, 4.7e-6);
    close(a.rated_voltage, 6.3);
    close(a.esr, 2.5e-3);
    close(a.esl, 0.45e-9);
    close(a.cost, 0.05);
    close(a.tolerance, 0.10);
    assert_eq!(
        a.dc_bias.as_ref().unwrap().points,
        vec![(0.0, 1.0), (1.8, 0.8), (3.3, 0.5)]
    );
    assert_eq!(a.description.as_deref(), Some("invented, semicolon export"));
    close(a.area.unwrap(), 1.6 * 0.8); // EIA 0603 body 1.6 x 0.8 mm
    let b = c.get("CX-S-330U-6V3").unwrap();
    assert_eq!(b.technology, Technology::PolymerTantalum);
    close(b.capacitance, 330e-6);
    close(b.cost, 1.25);
    // Metric EIA code 7343 (7.3 x 4.3 mm), an extension beyond the imperial EIA case codes.
    close(b.area.unwrap(), 7.3 * 4.3);
}

#[test]
fn header_names_with_spaces_case_and_hyphens() {
    let c = load("ok-header-variants.csv");
    assert_eq!(c.parts.len(), 2);
    let a = c.get("CX-H-100U-16V").unwrap();
    assert_eq!(a.technology, Technology::PolymerAluminum);
    close(a.capacitance, 100e-6);
    close(a.rated_voltage, 16.0);
    close(a.cost, 0.40);
    close(a.ripple_current.unwrap(), 3.2);
    assert_eq!((a.temp_min, a.temp_max), (Some(-55.0), Some(105.0)));
    close(a.temp_drop.unwrap(), 0.05);
    let b = c.get("CX-H-220U-16V").unwrap();
    assert_eq!(b.technology, Technology::AluminumElectrolytic);
    close(b.temp_drop.unwrap(), 0.2);
    assert!(c.extra_columns.is_empty(), "{:?}", c.extra_columns);
}

#[test]
fn latin1_bytes_are_read_byte_for_byte() {
    let c = load("ok-latin1.csv");
    assert_eq!(c.parts.len(), 2);
    let a = c.get("CX-L-4U7-10V").unwrap();
    // 0xB5 is MICRO SIGN in Latin-1: a valid prefix (µ and u are micro).
    close(a.capacitance, 4.7e-6);
    assert_eq!(
        a.description.as_deref(),
        Some("condensateur céramique inventé")
    );
    let b = c.get("CX-L-10U-10V").unwrap();
    assert_eq!(b.technology, Technology::Film);
    close(b.capacitance, 10e-6);
    assert_eq!(b.description.as_deref(), Some("film inventé, 10 µF"));
}

#[test]
fn blank_lines_are_skipped_and_line_numbers_stay_true() {
    let c = load("ok-blank-lines.csv");
    assert_eq!(c.parts.len(), 3);
    let lines: Vec<u64> = c.parts.iter().map(|p| p.line).collect();
    // Header 1, blank 2, A 3, blanks 4-5, B 6, a row of empty cells 7, C 8.
    assert_eq!(lines, vec![3, 6, 8]);
    let text = std::fs::read_to_string(root().join(CORPUS).join("ok-blank-lines.csv")).unwrap();
    for p in &c.parts {
        let l = text.lines().nth(p.line as usize - 1).unwrap();
        assert!(
            l.starts_with(&p.id),
            "line {} is `{l}`, not part {}",
            p.line,
            p.id
        );
    }
}

// ---------------------------------------------------------------------------
// Numbers at the edges: 1 pF … 10 F, ESR 0 … 10 Ω, fsw 1 kHz and 10 MHz.

const EXTREME_CATALOG: &str = "\
part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,temp_drop,case
X-1P,ceramic,1p,100,10,0.1n,0.01,0,C0G,,0402
X-1P-IDEAL,ceramic,1p,100,0,0,0.01,0,C0G,,0402
X-10F,aluminum-electrolytic,10,100,0.1m,20n,5,0,,0,
X-10F-IDEAL,aluminum-electrolytic,10,100,0.1m,0,5,0,,0,
X-1U-10R,ceramic,1u,100,10,1n,0.01,10%,X7R,,0603
";

struct Conv {
    topology: &'static str,
    body: &'static str,
}

const CONVERTERS: &[Conv] = &[
    Conv {
        topology: "buck",
        body: "vin = 12\nvout = 3.3\niout = 2\n",
    },
    Conv {
        topology: "boost",
        body: "vin = 5\nvout = 24\niout = 0.5\nedge_time = \"5n\"\n",
    },
    Conv {
        topology: "flyback",
        body: "vin = 48\nvout = 12\niout = 1\nturns_ratio = 0.5\nedge_time = \"5n\"\n",
    },
];

fn extreme_scenario(c: &Conv, fsw: &str, inductance: &str, target_extra: &str) -> String {
    format!(
        "name = \"extremes\"\n[converter]\ntopology = \"{}\"\n{}fsw = \"{fsw}\"\ninductance = \"{inductance}\"\n[target]\nripple_pp = \"8m\"\n{target_extra}\n",
        c.topology, c.body
    )
}

fn assess_json(dir: &Path, scenario: &str, bank: &str) -> (Option<i32>, Value, String) {
    let sp = dir.join("s.toml");
    std::fs::write(&sp, scenario).unwrap();
    let cp = dir.join("c.csv");
    std::fs::write(&cp, EXTREME_CATALOG).unwrap();
    let out = bin()
        .args([
            "assess",
            "--json",
            "--bank",
            bank,
            "--scenario",
            sp.to_str().unwrap(),
            "--catalog",
            cp.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(!stderr.contains("panicked"), "{scenario}\n{bank}: {stderr}");
    let doc: Value = serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("{scenario}\n{bank}: not JSON ({e}); stderr {stderr}"));
    (out.status.code(), doc, stderr)
}

/// Paths of every null in the document.
fn nulls(v: &Value, path: &str, out: &mut Vec<String>) {
    match v {
        Value::Null => out.push(path.to_string()),
        Value::Array(a) => a
            .iter()
            .enumerate()
            .for_each(|(i, x)| nulls(x, &format!("{path}[{i}]"), out)),
        Value::Object(o) => o
            .iter()
            .for_each(|(k, x)| nulls(x, &format!("{path}.{k}"), out)),
        _ => {}
    }
}

/// Keys that are null by meaning (a value the catalog or scenario does not give).
const OPTIONAL: &[&str] = &[
    // null without a [transient] table / a post-filter (documented keys)
    "transient",
    "filter",
    "rating",
    "ripple_current_rating",
    "unit_area",
    "area", // null when a part gives no area (README: unknown, not zero)
    "height",
    "case",
    "bandwidth",
    "vin",
    "mode",      // null where the topology has no conduction mode (README "JSON")
    "inductors", // null: no inductor catalog is read (README "JSON")
    "transient", // null without [transient] (README "JSON")
    // null when the bank is inductive at the ripple frequency (README "Limits on capacitance")
    "capacitance_at_ripple_frequency",
];

#[test]
fn extreme_values_give_finite_numbers() {
    let dir = tempfile::tempdir().unwrap();
    let mut runs = 0;
    for conv in CONVERTERS {
        for (fsw, l) in [("1k", "1m"), ("10M", "1u")] {
            for bw in ["", "bandwidth = \"20M\""] {
                let s = extreme_scenario(conv, fsw, l, bw);
                for bank in ["X-1P=1", "X-10F=1", "X-1P-IDEAL=1,X-10F=20,X-1U-10R=3"] {
                    let (code, doc, stderr) = assess_json(dir.path(), &s, bank);
                    let ctx = format!("{} fsw {fsw} {bw} bank {bank}", conv.topology);
                    assert!(
                        matches!(code, Some(0 | 1)),
                        "{ctx}: exit {code:?}: {stderr}"
                    );
                    for k in [
                        "ripple_pp",
                        "ripple_pp_typical",
                        "ripple_pp_full_bandwidth",
                        "cost",
                        "capacitance_nominal_total",
                        "capacitance_max_total",
                        "capacitance_effective_total",
                    ] {
                        let x = doc[k]
                            .as_f64()
                            .unwrap_or_else(|| panic!("{ctx}: `{k}` is {}", doc[k]));
                        assert!(x.is_finite() && x >= 0.0, "{ctx}: {k} = {x}");
                    }
                    assert!(doc["ripple_pp"].as_f64().unwrap() > 0.0, "{ctx}");
                    for rc in doc["ripple_current"].as_array().unwrap() {
                        let x = rc["rms"]
                            .as_f64()
                            .unwrap_or_else(|| panic!("{ctx}: rms is {}", rc["rms"]));
                        assert!(x.is_finite() && x >= 0.0, "{ctx}");
                    }
                    let mut n = Vec::new();
                    nulls(&doc, "", &mut n);
                    n.retain(|p| !OPTIONAL.iter().any(|k| p.ends_with(&format!(".{k}"))));
                    assert!(
                        n.is_empty(),
                        "{ctx}: unexpected nulls (non-finite numbers?) at {n:?}"
                    );
                    runs += 1;
                }
            }
        }
    }
    assert_eq!(runs, 36);
}

/// Buck inductor ripple ΔI = vout (1 − D) / (L f) (Erickson & Maksimović,
/// Fundamentals of Power Electronics, ch. 2).
fn buck_di(vin: f64, vout: f64, l: f64, f: f64) -> f64 {
    vout * (1.0 - vout / vin) / (l * f)
}

#[test]
fn one_picofarad_at_one_kilohertz_matches_the_charge_formula() {
    // A triangle current ΔI into an ideal C: ΔV = ΔI·T / (8 C) (Erickson &
    // Maksimović, Fundamentals of Power Electronics, ch. 2, capacitor voltage
    // ripple: the charge of one half-triangle is ΔI·T/8). Here about 3e8 V:
    // absurd as a design, but the numbers must stay right.
    let dir = tempfile::tempdir().unwrap();
    let s = extreme_scenario(&CONVERTERS[0], "1k", "1m", "harmonics = 4000");
    let (code, doc, stderr) = assess_json(dir.path(), &s, "X-1P-IDEAL=1");
    assert_eq!(code, Some(1), "{stderr}");
    let want = buck_di(12.0, 3.3, 1e-3, 1e3) * 1e-3 / (8.0 * 1e-12);
    let got = doc["ripple_pp"].as_f64().unwrap();
    assert!((got - want).abs() <= 1e-3 * want, "{got} vs {want}");
}

#[test]
fn ten_farads_at_ten_megahertz_matches_a_time_domain_integration() {
    // Brute force: v(t) = ESR·i(t) + (1/C)∫(i − mean) dt for the triangle
    // current of a buck (D = vout/vin, ΔI = vout(1 − D)/(L f)), integrated on a fine grid; compared with the
    // evaluator's Fourier sum (4000 harmonics; the tail of a triangle's series
    // is below 1e-3 of ΔI at that count).
    let dir = tempfile::tempdir().unwrap();
    let s = extreme_scenario(&CONVERTERS[0], "10M", "1u", "harmonics = 4000");
    let (_, doc, stderr) = assess_json(dir.path(), &s, "X-10F-IDEAL=1");
    let got = doc["ripple_pp"]
        .as_f64()
        .unwrap_or_else(|| panic!("{stderr}"));
    let (vin, vout, l, f, esr, c) = (12.0, 3.3, 1e-6, 10e6, 1e-4, 10.0);
    let di = buck_di(vin, vout, l, f);
    let (t, d) = (1.0 / f, vout / vin);
    let n = 200_000;
    let dt = t / n as f64;
    let i_at = |x: f64| {
        if x < d * t {
            -di / 2.0 + di * x / (d * t)
        } else {
            di / 2.0 - di * (x - d * t) / ((1.0 - d) * t)
        }
    };
    let (mut q, mut lo, mut hi) = (0.0f64, f64::MAX, f64::MIN);
    for k in 0..n {
        let x = k as f64 * dt;
        let v = esr * i_at(x) + q / c;
        lo = lo.min(v);
        hi = hi.max(v);
        q += 0.5 * (i_at(x) + i_at(x + dt)) * dt;
    }
    let want = hi - lo;
    assert!((got - want).abs() <= 1e-3 * want, "{got} vs {want}");
}

#[test]
fn header_units_scale_bare_numbers_and_leave_written_units_alone() {
    // `Capacitance (uF)`: 22 is 22 µF; `ESR [mOhm]`: 3 is 3 mΩ; `ESL (nH)`:
    // 0.4 is 0.4 nH; `Tolerance (%)`: 10 is 10 %. The third row writes its
    // own prefixes and units, which win over the header's.
    let c = load("ok-header-units.csv");
    let a = c.get("CX-U-22U-6V3").unwrap();
    close(a.capacitance, 22e-6);
    close(a.rated_voltage, 6.3);
    close(a.esr, 3e-3);
    close(a.esl, 0.4e-9);
    close(a.cost, 0.08);
    close(a.tolerance, 0.10);
    assert_eq!(a.height, Some(1.25));
    let b = c.get("CX-U-100U-6V3").unwrap();
    close(b.capacitance, 100e-6);
    close(b.esr, 12e-3);
    close(b.esl, 2e-9);
    assert_eq!(
        (b.area, b.temp_min, b.temp_max),
        (Some(42.3), Some(-55.0), Some(105.0))
    );
    let q = c.get("CX-U-1U-16V").unwrap();
    close(q.capacitance, 1e-6);
    close(q.esr, 8e-3);
    close(q.esl, 350e-12);
    close(q.cost, 0.01);
    close(q.tolerance, 0.10);
}

#[test]
fn rkm_codes_percent_signs_and_currency_read_right() {
    // IEC 60062 RKM code: 4u7 = 4.7 µ, 2n2 = 2.2 n, 0R005 = 5 m, 0n4 = 0.4 n.
    let c = load("ok-rkm-values.csv");
    let a = c.get("CX-K-4U7-6V3").unwrap();
    close(a.capacitance, 4.7e-6);
    close(a.esr, 5e-3);
    close(a.esl, 0.4e-9);
    close(a.cost, 0.12);
    close(a.tolerance, 0.10);
    let b = c.get("CX-K-2N2-50V").unwrap();
    close(b.capacitance, 2.2e-9);
    close(b.cost, 0.02);
    close(b.tolerance, 0.05);
    let t = c.get("CX-K-330U-6V3").unwrap();
    close(t.esr, 25e-3);
    close(t.esl, 2.2e-9);
    close(t.cost, 1.25);
    // Semicolon export: `€0,05` and `0,22 €` with decimal commas.
    let e = load("ok-currency-semicolon.csv");
    close(e.get("CX-M-10U-6V3").unwrap().cost, 0.05);
    close(e.get("CX-M-10U-6V3").unwrap().rated_voltage, 6.3);
    close(e.get("CX-M-47U-6V3").unwrap().cost, 0.22);
    close(e.get("CX-M-47U-6V3").unwrap().esl, 1.8e-9);
}

#[test]
fn bill_of_materials_header_aliases_and_whole_decimal_counts() {
    use ripplebank::assessment::{read_bom_rows, Position};
    // `Item` (a line number here) loses to `Part Number`; `Qty` is the
    // count; `4.0` is 4; an empty position is the converter's bank.
    let rows = read_bom_rows(&root().join(CORPUS).join("good-bom-aliases.csv")).unwrap();
    assert_eq!(rows.len(), 2);
    assert_eq!(
        (
            rows[0].part.as_str(),
            rows[0].count,
            rows[0].line,
            rows[0].position
        ),
        ("CX-A-22U-6V3", 4, 2, Position::Converter)
    );
    assert_eq!(
        (rows[1].part.as_str(), rows[1].count, rows[1].position),
        ("CX-C-1U-16V", 2, Position::Converter)
    );
    // Through the command line it is the same bank as good-bom.csv.
    let run = |f: &str| {
        let out = bin()
            .args([
                "assess",
                "--json",
                "--scenario",
                &corpus("good-scenario.toml"),
                "--bom",
                &corpus(f),
            ])
            .output()
            .unwrap();
        assert!(
            matches!(out.status.code(), Some(0 | 1)),
            "{f}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let doc: Value = serde_json::from_slice(&out.stdout).unwrap();
        (doc["bank"].clone(), doc["ripple_pp"].as_f64().unwrap())
    };
    assert_eq!(run("good-bom-aliases.csv"), run("good-bom.csv"));
}

#[test]
fn inductor_catalog_with_header_units_reads_right() {
    // Semicolon export with CRLF: `Inductance (uH)` 2,2 = 2.2 µH, `DCR [mOhm]`
    // 30 = 30 mΩ, `SRF (MHz)` 60 = 60 MHz, `Tolerance (%)` 20 = 20 %; the
    // second row writes its own units (`470n`, `0R004`, `150M`, `±10%`, `€0,30`).
    let bytes = std::fs::read(root().join(CORPUS).join("ok-inductors-header-units.csv")).unwrap();
    let c =
        ripplebank::inductors::InductorCatalog::from_bytes(&bytes, "ok-inductors-header-units.csv")
            .unwrap_or_else(|e| panic!("{e:#}"));
    let a = c.get("LX-H-2U2").unwrap();
    close(a.inductance, 2.2e-6);
    close(a.tolerance, 0.20);
    close(a.dcr, 30e-3);
    close(a.rated_current, 5.5);
    close(a.saturation_current, 6.5);
    close(a.srf.unwrap(), 60e6);
    close(a.cost, 0.18);
    let b = c.get("LX-H-470N").unwrap();
    close(b.inductance, 470e-9);
    close(b.tolerance, 0.10);
    close(b.dcr, 4e-3);
    close(b.srf.unwrap(), 150e6);
    close(b.cost, 0.30);
    assert_eq!(b.height, Some(3.0));
}
