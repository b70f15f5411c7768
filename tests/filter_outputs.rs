//! What the reports say about a filtered design: the JSON `filter` object,
//! the text section with its cautions, and the bill of materials that
//! `assess --bom` reads back as the same design. Sources: the project's
//! report contract (README, "The LC post-filter" and "JSON"); Ohm's law for
//! the DC drop; R0 = sqrt(L/C) = 2π·f0·L from the second-order LC resonance
//! f0 = 1/(2π·sqrt(LC)) (Erickson & Maksimović, Fundamentals of Power
//! Electronics, ch. 8, the resonant second-order system).

use assert_cmd::Command;
use serde_json::Value;
use std::path::PathBuf;
use std::sync::OnceLock;

fn bin() -> Command {
    Command::cargo_bin("ripplebank").unwrap()
}

fn scenario() -> String {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("scenarios/adc-rail-5v.toml")
        .display()
        .to_string()
}

/// The bundled filter demo's design, as JSON (once for every test here).
fn design() -> &'static Value {
    static D: OnceLock<Value> = OnceLock::new();
    D.get_or_init(|| {
        let out = bin()
            .args(["design", "--scenario", &scenario(), "--json"])
            .assert()
            .code(0)
            .get_output()
            .clone();
        serde_json::from_slice(&out.stdout).unwrap()
    })
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * b.abs().max(1e-300)
}

#[test]
fn json_filter_object_has_every_key_with_its_shape() {
    let d = design();
    let f = &d["filter"];
    for key in [
        "inductor",
        "count",
        "inductance",
        "dcr",
        "corner_frequency",
        "peak_output_impedance",
        "peak_frequency",
        "dc_drop",
        "damping",
        "ripple_pp_converter_node",
        "converter_bank",
        "load_bank",
    ] {
        assert!(f.get(key).is_some(), "filter.{key} missing: {f}");
    }
    assert!(f["inductor"].is_string() && f["count"].as_u64().unwrap() >= 1);
    // The converter-side bank is the design's bank, as {part, count}.
    let conv: Vec<(String, u64)> = f["converter_bank"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| {
            (
                b["part"].as_str().unwrap().into(),
                b["count"].as_u64().unwrap(),
            )
        })
        .collect();
    let bank: Vec<(String, u64)> = d["bank"]
        .as_array()
        .unwrap()
        .iter()
        .map(|b| {
            (
                b["part"].as_str().unwrap().into(),
                b["count"].as_u64().unwrap(),
            )
        })
        .collect();
    assert_eq!(conv, bank);
    let load = f["load_bank"].as_array().unwrap();
    assert!(
        !load.is_empty()
            && load
                .iter()
                .all(|b| b["part"].is_string() && b["count"].as_u64().unwrap() >= 1)
    );
    match &f["damping"] {
        Value::Null => {}
        dmp => {
            assert!(dmp["resistor"].as_f64().unwrap() > 0.0, "{dmp}");
            assert!(
                dmp["capacitor"].is_string() && dmp["count"].as_u64().unwrap() >= 1,
                "{dmp}"
            );
        }
    }
    // Ohm's law: the drop is iout · DCR / N (iout = 1.2 A in the scenario).
    let n = f["count"].as_f64().unwrap();
    assert!(close(
        f["dc_drop"].as_f64().unwrap(),
        1.2 * f["dcr"].as_f64().unwrap() / n,
        1e-12
    ));
    // R0 = sqrt(L/C) = 2π·f0·L for the same L and C.
    let r0 = 2.0
        * std::f64::consts::PI
        * f["corner_frequency"].as_f64().unwrap()
        * f["inductance"].as_f64().unwrap()
        / n;
    assert!(close(
        f["characteristic_impedance"].as_f64().unwrap(),
        r0,
        1e-12
    ));
    // The filter does its job: the load node is quieter than the converter node.
    assert!(f["ripple_pp_converter_node"].as_f64().unwrap() > d["ripple_pp"].as_f64().unwrap());
    // Peak current = DC share + half the ripple.
    let peak = f["dc_current"].as_f64().unwrap() + f["inductor_ripple_pp"].as_f64().unwrap() / 2.0;
    assert!(close(
        f["inductor_peak_current"].as_f64().unwrap(),
        peak,
        1e-12
    ));
}

#[test]
fn text_report_shows_the_filter_and_its_cautions() {
    let out = bin()
        .args(["design", "--scenario", &scenario(), "--quiet"])
        .assert()
        .code(0)
        .get_output()
        .clone();
    let t = String::from_utf8(out.stdout).unwrap();
    let f = &design()["filter"];
    for want in [
        "Bank (converter side of the filter)",
        "Post-filter (",
        &format!("Inductor {}", f["inductor"].as_str().unwrap()),
        "corner frequency f0",
        "peak output impedance |Z_out|",
        "DC drop iout · DCR (not regulated)",
        "inductor peak current",
        "ripple at the converter-side node",
        "ripple at the load node",
        "Filter cautions",
        "Remote sense stays on the converter side of the filter",
        "loop crossover",
        "An LC filter rings",
        "is not regulated",
        "Verify on hardware",
    ] {
        assert!(t.contains(want), "text lacks `{want}`:\n{t}");
    }
}

#[test]
fn bill_of_materials_reads_back_as_the_same_design() {
    let dir = std::env::temp_dir().join(format!("ripplebank-filter-out-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    bin()
        .args([
            "design",
            "--scenario",
            &scenario(),
            "--out",
            &dir.display().to_string(),
            "--quiet",
        ])
        .assert()
        .code(0);
    // Both nodes in the waveform plot, one panel each; the ladder in bank.cir.
    let svg = std::fs::read_to_string(dir.join("ripple.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("ripple.svg is XML");
    let panels = doc
        .root_element()
        .children()
        .filter(|n| n.has_tag_name("svg"))
        .count();
    assert_eq!(panels, 2, "load node and converter-side node");
    for want in [
        "Load node (after the filter",
        "Converter-side node (before the filter)",
        "target band",
    ] {
        assert!(svg.contains(want), "ripple.svg lacks `{want}`");
    }
    assert!(dir.join("filter.svg").is_file());
    let cir = std::fs::read_to_string(dir.join("bank.cir")).unwrap();
    for want in [
        "* ---- post-filter",
        "\nLf bank ",
        ".meas tran pp_conv_limited",
        "PP v(load)",
    ] {
        assert!(cir.contains(want), "bank.cir lacks `{want}`");
    }
    let bom = dir.join("bom.csv");
    let text = std::fs::read_to_string(&bom).unwrap();
    assert!(
        text.lines().next().unwrap().contains(",position,"),
        "{text}"
    );
    // The demo's converter side needs no added capacitor (the module's own
    // capacitance is enough there), so it has no converter row.
    for pos in [",inductor,", ",load,", ",damping,"] {
        assert!(text.contains(pos), "{pos}: {text}");
    }
    let out = bin()
        .args([
            "assess",
            "--scenario",
            &scenario(),
            "--bom",
            &bom.display().to_string(),
            "--json",
        ])
        .assert()
        .code(0)
        .get_output()
        .clone();
    let a: Value = serde_json::from_slice(&out.stdout).unwrap();
    let d = design();
    assert_eq!(a["status"], "pass");
    assert_eq!(a["filter"]["inductor"], d["filter"]["inductor"]);
    assert_eq!(a["filter"]["load_bank"], d["filter"]["load_bank"]);
    assert_eq!(a["filter"]["damping"], d["filter"]["damping"]);
    assert_eq!(
        a["bank"].as_array().unwrap().len(),
        d["bank"].as_array().unwrap().len()
    );
    assert!(close(
        a["ripple_pp"].as_f64().unwrap(),
        d["ripple_pp"].as_f64().unwrap(),
        1e-9
    ));
    std::fs::remove_dir_all(&dir).ok();
}
