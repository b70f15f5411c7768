//! Property tests (proptest, bounded for CI: 256 cases each, small inputs):
//! the readers never panic on any input, and what they accept keeps the
//! promises of the input rules (values in SI units with prefixes, the catalog
//! columns, the scenario keys: finite values, positive capacitances, …).

use proptest::prelude::*;
use proptest::test_runner::Config;
use ripplebank::catalog::Catalog;
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;
use ripplebank::units::{self, Unit};

const UNITS: [Unit; 9] = [
    Unit::Farad,
    Unit::Ohm,
    Unit::Henry,
    Unit::Volt,
    Unit::Ampere,
    Unit::Hertz,
    Unit::Second,
    Unit::Fraction,
    Unit::Plain,
];

/// (unit, the unit symbols accepted for it)
const SYMBOLS: [(Unit, &[&str]); 7] = [
    (Unit::Farad, &["F"]),
    (Unit::Ohm, &["Ohm", "ohm", "Ω", "R"]),
    (Unit::Henry, &["H"]),
    (Unit::Volt, &["V"]),
    (Unit::Ampere, &["A"]),
    (Unit::Hertz, &["Hz"]),
    (Unit::Second, &["s"]),
];

/// SI prefixes the readers accept (case-sensitive; `meg` and `µ`/`u` too) and their scale.
const PREFIXES: [(&str, f64); 13] = [
    ("", 1.0),
    ("f", 1e-15),
    ("p", 1e-12),
    ("n", 1e-9),
    ("u", 1e-6),
    ("µ", 1e-6),
    ("m", 1e-3),
    ("k", 1e3),
    ("K", 1e3),
    ("M", 1e6),
    ("meg", 1e6),
    ("G", 1e9),
    ("μ", 1e-6),
];

const GOOD_CATALOG: &str = include_str!("corpus/good-catalog.csv");
const GOOD_SCENARIO: &str = include_str!("corpus/good-scenario.toml");

/// 256 cases per property (set PROPTEST_CASES for a longer local run).
fn cfg() -> Config {
    let cases = std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(256);
    Config {
        cases,
        failure_persistence: None,
        ..Config::default()
    }
}

/// Strings built from the pieces a value is made of, to reach deep paths.
fn value_like() -> impl Strategy<Value = String> {
    let pieces = vec![
        "0", "1", "4.7", "9", ".", "e", "E", "+", "-", "e308", "e-320", "m", "M", "meg", "k", "u",
        "µ", "μ", "n", "p", "f", "G", "F", "H", "Hz", "V", "A", "s", "Ohm", "Ω", "R", "%", " ",
        "inf", "nan", "x",
    ];
    prop::collection::vec(prop::sample::select(pieces), 0..8).prop_map(|v| v.concat())
}

/// Catalog or TOML tokens that stress the readers.
fn token() -> impl Strategy<Value = String> {
    prop_oneof![
        prop::sample::select(vec![
            "", "0", "-1", "nan", "inf", "-inf", "1e308", "1e-320", "1e300G", "10uH", "4.7u",
            "150%", "\"", "\"\"", ",", ";", "\n", "\r\n", "µ", "\u{feff}", "0:1;1:2", "0:1;0:1",
            "1:", ":", "X7R", "X9Z", "C0G", "obsolete", "nrnd", "buck", "boost", "flyback",
            "module", "bridge", "forward", "[]", "{}", "[x]", "true", "\"1meg\"", "\"0\"",
            "\"-2u\"", "= =", "'", "\\",
        ])
        .prop_map(String::from),
        value_like(),
        "[ -~]{0,12}",
    ]
}

/// One edit of a text: replace, insert or delete a byte.
#[derive(Debug, Clone)]
enum Edit {
    Replace(usize, u8),
    Insert(usize, u8),
    Delete(usize),
}

fn edits() -> impl Strategy<Value = Vec<Edit>> {
    let e = prop_oneof![
        (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Edit::Replace(i, b)),
        (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Edit::Insert(i, b)),
        any::<usize>().prop_map(Edit::Delete),
    ];
    prop::collection::vec(e, 1..8)
}

fn apply(mut b: Vec<u8>, edits: &[Edit]) -> Vec<u8> {
    for e in edits {
        let n = b.len().max(1);
        match *e {
            Edit::Replace(i, x) if !b.is_empty() => b[i % n] = x,
            Edit::Insert(i, x) => b.insert(i % (b.len() + 1), x),
            Edit::Delete(i) if !b.is_empty() => {
                b.remove(i % n);
            }
            _ => {}
        }
    }
    b
}

/// Replace cell `(row, col)` of a comma-separated text by `tok`.
fn replace_cell(text: &str, row: usize, col: usize, tok: &str) -> String {
    let lines: Vec<&str> = text.lines().collect();
    let r = row % lines.len();
    lines
        .iter()
        .enumerate()
        .map(|(i, l)| {
            if i != r {
                return l.to_string();
            }
            let mut cells: Vec<String> = l.split(',').map(String::from).collect();
            let c = col % cells.len();
            cells[c] = tok.to_string();
            cells.join(",")
        })
        .collect::<Vec<_>>()
        .join("\n")
}

/// What a catalog that loaded must hold (the catalog column rules and the loader's checks).
fn check_catalog(c: &Catalog) {
    assert!(!c.parts.is_empty());
    for p in &c.parts {
        assert!(!p.id.is_empty());
        assert!(c.get(&p.id).is_some());
        assert!(
            p.capacitance.is_finite() && p.capacitance > 0.0,
            "{}",
            p.capacitance
        );
        assert!(p.rated_voltage.is_finite() && p.rated_voltage > 0.0);
        assert!(p.esr.is_finite() && p.esr >= 0.0);
        assert!(p.esl.is_finite() && p.esl >= 0.0);
        assert!(p.cost.is_finite() && p.cost >= 0.0);
        assert!((0.0..1.0).contains(&p.tolerance));
        if let Some(b) = &p.dc_bias {
            assert!(!b.points.is_empty());
            assert!(b.points.windows(2).all(|w| w[1].0 > w[0].0));
            assert!(b
                .points
                .iter()
                .all(|&(v, k)| v.is_finite() && v >= 0.0 && k > 0.0 && k <= 1.5));
        }
        let (cw, ct) = (p.c_worst(3.3), p.c_typical(3.3));
        assert!(cw.is_finite() && cw >= 0.0 && ct.is_finite() && ct > 0.0);
    }
}

/// Load the scenario and, when it parses, run it end to end on the good
/// catalog: nothing may panic and the ripple must be a finite number.
fn exercise_scenario(text: &str) {
    let Ok(s) = Scenario::from_str(text, "fuzz.toml") else {
        return;
    };
    assert!(s.converter.vout.0.is_finite() && s.converter.vout.0 > 0.0);
    assert!(s.converter.fsw.0.is_finite() && s.converter.fsw.0 > 0.0);
    assert!(s.target.ripple_pp.0.is_finite() && s.target.ripple_pp.0 > 0.0);
    let cat = Catalog::from_bytes(GOOD_CATALOG.as_bytes(), "good-catalog.csv").unwrap();
    let Ok(p) = Problem::new(s, cat) else { return };
    let bank = [(0usize, 2u32), (2usize, 3u32)];
    if let Ok(a) = ripplebank::assessment::assess(&p, &bank) {
        // Never NaN and never negative; a current jump through ESL at full
        // bandwidth (edge_time = 0) or absurd values overflowing give an
        // infinite figure, which fails the target as it should.
        assert!(
            !a.ripple_pp.is_nan() && a.ripple_pp >= 0.0,
            "{}",
            a.ripple_pp
        );
        assert!(!a.ripple_pp_full_bandwidth.is_nan() && a.ripple_pp_full_bandwidth >= 0.0);
        assert!(a.ripple_current.iter().all(|r| r.rms.is_finite()));
    }
}

proptest! {
    #![proptest_config(cfg())]

    #[test]
    fn units_parse_any_string_is_finite_or_an_error(s in ".{0,24}", u in 0usize..9) {
        if let Ok(v) = units::parse(&s, UNITS[u]) {
            prop_assert!(v.is_finite(), "{s:?} -> {v}");
        }
    }

    #[test]
    fn units_parse_value_like_string_is_finite_or_an_error(s in value_like(), u in 0usize..9) {
        if let Ok(v) = units::parse(&s, UNITS[u]) {
            prop_assert!(v.is_finite(), "{s:?} -> {v}");
        }
    }

    /// Write a value with a random SI prefix (and maybe the unit symbol),
    /// read it back: the value within 1e-12 relative (a value with an SI prefix reads as the plain number).
    #[test]
    fn prefix_round_trip(m in 1e-3f64..1e3, neg in any::<bool>(), p in 0usize..PREFIXES.len(), u in 0usize..SYMBOLS.len(), sym in any::<bool>(), space in any::<bool>()) {
        let (unit, syms) = SYMBOLS[u];
        let (prefix, scale) = PREFIXES[p];
        let m = if neg { -m } else { m };
        let s = syms[(p + u) % syms.len()];
        let text = format!("{m}{}{prefix}{}", if space { " " } else { "" }, if sym { s } else { "" });
        // A bare number with a space and nothing after it is just the number.
        let want = m * scale;
        let got = units::parse(&text, unit);
        prop_assert!(got.is_ok(), "{text:?}: {:?}", got);
        let got = got.unwrap();
        prop_assert!((got - want).abs() <= 1e-12 * want.abs(), "{text:?}: {got} vs {want}");
    }

    /// format_si writes three significant digits: values that have at most
    /// three come back exactly (within 1e-12 relative).
    #[test]
    fn format_si_round_trip(mant in 100i64..1000, e in -17i32..=9, u in 0usize..SYMBOLS.len(), neg in any::<bool>()) {
        let (unit, syms) = SYMBOLS[u];
        let v = (if neg { -mant } else { mant }) as f64 * 10f64.powi(e);
        let text = units::format_si(v, syms[0]);
        let got = units::parse(&text, unit);
        prop_assert!(got.is_ok(), "{v} -> {text:?}: {:?}", got);
        let got = got.unwrap();
        prop_assert!((got - v).abs() <= 1e-12 * v.abs(), "{v} -> {text:?} -> {got}");
    }

    #[test]
    fn percent_round_trip(m in 0.0f64..100.0) {
        let got = units::parse(&format!("{m}%"), Unit::Fraction).unwrap();
        prop_assert!((got - m / 100.0).abs() <= 1e-12 * (m / 100.0).max(1e-300));
    }

    #[test]
    fn catalog_from_arbitrary_bytes(b in prop::collection::vec(any::<u8>(), 0..512)) {
        if let Ok(c) = Catalog::from_bytes(&b, "fuzz.csv") {
            check_catalog(&c);
        }
    }

    #[test]
    fn catalog_from_byte_edited_good_catalog(e in edits()) {
        let b = apply(GOOD_CATALOG.as_bytes().to_vec(), &e);
        match Catalog::from_bytes(&b, "fuzz.csv") {
            Ok(c) => check_catalog(&c),
            Err(err) => prop_assert!(err.to_string().starts_with("fuzz.csv: line "), "{err}"),
        }
    }

    #[test]
    fn catalog_with_a_cell_replaced(cells in prop::collection::vec((0usize..5, 0usize..14, token()), 1..4)) {
        let mut t = GOOD_CATALOG.to_string();
        for (r, c, tok) in &cells {
            t = replace_cell(&t, *r, *c, tok);
        }
        match Catalog::from_bytes(t.as_bytes(), "fuzz.csv") {
            Ok(c) => check_catalog(&c),
            // Every refusal names the file and a line.
            Err(err) => {
                let m = err.to_string();
                prop_assert!(m.starts_with("fuzz.csv: line "), "{m}");
            }
        }
    }

    #[test]
    fn scenario_from_arbitrary_string(s in ".{0,256}") {
        exercise_scenario(&s);
    }

    #[test]
    fn scenario_from_toml_like_string(parts in prop::collection::vec(prop_oneof![
        prop::sample::select(vec!["[converter]\n", "[target]\n", "[board]\n", "[selection]\n", "[environment]\n", "[selection.voltage_derating]\n",
            "topology = ", "vin = ", "vout = ", "fsw = ", "inductance = ", "ripple_pp = ", "require = ", "phases = ", "\n", " = ", "\""]).prop_map(String::from),
        token(),
    ], 0..40)) {
        exercise_scenario(&parts.concat());
    }

    #[test]
    fn scenario_byte_edited(e in edits()) {
        let b = apply(GOOD_SCENARIO.as_bytes().to_vec(), &e);
        exercise_scenario(&String::from_utf8_lossy(&b));
    }

    /// Replace the value of one `key = value` line of the good scenario.
    #[test]
    fn scenario_with_a_value_replaced(line in any::<usize>(), tok in token(), quote in any::<bool>()) {
        let lines: Vec<&str> = GOOD_SCENARIO.lines().collect();
        let keyed: Vec<usize> = (0..lines.len()).filter(|&i| lines[i].contains(" = ")).collect();
        let i = keyed[line % keyed.len()];
        let key = lines[i].split(" = ").next().unwrap();
        let v = if quote { format!("\"{}\"", tok.replace(['"', '\\', '\n', '\r'], "")) } else { tok.clone() };
        let mut out: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
        out[i] = format!("{key} = {v}");
        let text = out.join("\n");
        exercise_scenario(&text);
        // A refusal names the file.
        if let Err(e) = Scenario::from_str(&text, "fuzz.toml") {
            prop_assert!(e.to_string().starts_with("fuzz.toml: "), "{e}");
        }
    }
}

/// A converter drawn from the whole accepted range (and a little beyond):
/// whatever the scenario check lets through must evaluate to finite numbers.
fn converter_scenario() -> impl Strategy<Value = String> {
    fn pick(v: &[&'static str]) -> impl Strategy<Value = &'static str> {
        prop::sample::select(v.to_vec())
    }
    let conv = (
        pick(&["buck", "forward", "bridge", "flyback", "boost", "module"]),
        pick(&["0.001", "1", "5", "12", "48", "400", "10000"]),
        pick(&["0.001", "1", "3.3", "12", "24", "60", "1000"]),
        pick(&["0", "0.001", "1", "6", "100"]),
        pick(&["\"100\"", "\"1k\"", "\"600k\"", "\"10M\"", "\"100M\""]),
        pick(&["\"1n\"", "\"1u\"", "\"1m\"", "1"]),
        pick(&[
            "",
            "turns_ratio = 0.01",
            "turns_ratio = 0.5",
            "turns_ratio = 1",
            "turns_ratio = 10",
        ]),
        pick(&["", "phases = 2", "phases = 3", "phases = 16"]),
        pick(&["", "edge_time = \"1n\"", "edge_time = \"100n\""]),
    );
    let rest = (
        pick(&[
            "",
            "internal_capacitance = \"1p\"",
            "internal_capacitance = \"10u\"",
            "internal_capacitance = 10",
        ]),
        pick(&["", "internal_esr = \"1m\"\ninternal_esl = \"1n\""]),
        pick(&[
            "",
            "standalone_ripple_pp = \"30m\"",
            "standalone_ripple_pp = 1",
        ]),
        pick(&[
            "",
            "bandwidth = \"1k\"",
            "bandwidth = \"20M\"",
            "bandwidth = \"1G\"",
        ]),
        pick(&["1", "2", "8"]),
        pick(&["0", "1", "4000"]),
        pick(&["0", "\"1n\"", "\"1u\""]),
        pick(&["0", "\"0.3n\""]),
    );
    (conv, rest).prop_map(|((t, vin, vout, iout, fsw, l, n, ph, edge), (ci, ce, sa, bw, ord, h, lc, lm))| {
        format!(
            "[converter]\ntopology = \"{t}\"\nvin = {vin}\nvout = {vout}\niout = {iout}\nfsw = {fsw}\ninductance = {l}\n{n}\n{ph}\n{edge}\n{ci}\n{ce}\n{sa}\n\
             [target]\nripple_pp = \"8m\"\n{bw}\nbandwidth_order = {ord}\nharmonics = {h}\n\
             [board]\nconnection_inductance = {lc}\nmounting_inductance = {lm}\n"
        )
    })
}

proptest! {
    #![proptest_config(cfg())]

    #[test]
    fn any_accepted_converter_evaluates_to_finite_numbers(text in converter_scenario()) {
        exercise_scenario(&text);
    }
}

/// Deep nesting must not overflow the stack (the process would abort, not panic).
#[test]
fn deeply_nested_toml_is_an_error_not_a_crash() {
    for open in ["[", "{a="] {
        let text = format!("x = {}", open.repeat(5000));
        assert!(Scenario::from_str(&text, "deep.toml").is_err());
    }
    let text = format!("[a.{}c]\nx = 1\n", "b.".repeat(5000));
    assert!(Scenario::from_str(&text, "deep.toml").is_err());
}
