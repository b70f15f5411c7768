//! The two invented catalog families of the large-catalog benchmarks (all
//! values invented, no real part numbers or makers):
//!
//! - **A, variants of a small set**: nine base parts (ceramics 0603–1210,
//!   polymers, a tantalum) and jittered copies of them (capacitance ±25 %,
//!   ESR ±30 %, ESL ±15 %, price ±40 %), on an invented 18–30 V → 5 V,
//!   400 kHz buck ([`FAMILY_A_SCENARIO`]);
//! - **B, a realistic generated library**: ceramics 0402–1210 in X5R and
//!   X7R with DC-bias curves that fall faster for more capacitance per case
//!   volume, 0.1–100 µF in the E3 series at 6.3–25 V, each value offered by
//!   several invented makers with their own ESL and price; polymer-aluminum,
//!   polymer-tantalum and tantalum parts 33–470 µF, 5–40 mΩ; on the bundled
//!   3.3 V buck scenario.
//!
//! `ripplebank-bench --emit-catalog N --family a|b` writes one as CSV.

use super::Rng;

/// Header of the generated CSV (the catalog's own column names).
const HEADER: &str = "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,dc_bias,case,area,height,ripple_current,temp_min,temp_max,temp_drop,status,manufacturer,mpn,description,esr_temp";

/// Family A's converter: an invented 18–30 V → 5 V, 5 A buck at 400 kHz.
pub const FAMILY_A_SCENARIO: &str = r#"# Invented benchmark scenario (family A of ripplebank-bench).
name = "Benchmark family A (invented) - 18-30 V to 5 V buck"
[converter]
topology = "buck"
vin_min = 18
vin_max = 30
vout = 5
iout = 5
fsw = "400k"
inductance = "10u"
inductance_tolerance = "20%"
[target]
ripple_pp = "TARGET"
bandwidth = "20M"
harmonics = 0
[board]
mounting_inductance = "0.3n"
max_count = 24
max_lines = LINES
[selection]
objective = "cost"
max_per_part = 16
"#;

/// One base part of family A: technology, µF, V, mΩ, nH, price, dielectric,
/// DC-bias curve, case, area (mm², empty: from the case), height (mm),
/// ripple-current rating (A, empty: none).
type Base = (
    &'static str,
    f64,
    f64,
    f64,
    f64,
    f64,
    &'static str,
    &'static str,
    &'static str,
    &'static str,
    f64,
    &'static str,
);

const FAMILY_A_BASE: [Base; 9] = [
    (
        "ceramic",
        4.7,
        16.0,
        6.0,
        0.5,
        0.03,
        "X7R",
        "0:1;5:0.7;10:0.5;16:0.35",
        "0603",
        "",
        0.9,
        "",
    ),
    (
        "ceramic",
        10.0,
        16.0,
        4.0,
        0.6,
        0.06,
        "X5R",
        "0:1;5:0.6;10:0.4;16:0.3",
        "0805",
        "",
        1.25,
        "",
    ),
    (
        "ceramic",
        22.0,
        16.0,
        3.0,
        0.8,
        0.12,
        "X5R",
        "0:1;5:0.55;10:0.35;16:0.25",
        "1206",
        "",
        1.6,
        "",
    ),
    (
        "ceramic",
        47.0,
        10.0,
        2.5,
        0.95,
        0.25,
        "X5R",
        "0:1;5:0.45;10:0.3",
        "1210",
        "",
        2.5,
        "",
    ),
    (
        "ceramic",
        1.0,
        25.0,
        10.0,
        0.35,
        0.012,
        "X7R",
        "0:1;5:0.85;12:0.6;25:0.4",
        "0402",
        "",
        0.5,
        "",
    ),
    (
        "polymer-aluminum",
        150.0,
        10.0,
        12.0,
        1.4,
        0.35,
        "",
        "",
        "7343-19",
        "31.4",
        1.9,
        "3.0",
    ),
    (
        "polymer-aluminum",
        330.0,
        10.0,
        9.0,
        2.5,
        0.45,
        "",
        "",
        "D6.3x5.8",
        "43.6",
        5.8,
        "3.5",
    ),
    (
        "polymer-tantalum",
        220.0,
        10.0,
        15.0,
        1.8,
        0.55,
        "",
        "",
        "7343-31",
        "31.4",
        3.1,
        "2.8",
    ),
    (
        "tantalum", 100.0, 16.0, 90.0, 2.2, 0.25, "", "", "7343-31", "31.4", 3.1, "1.2",
    ),
];

fn row(out: &mut String, fields: &[String]) {
    out.push_str(&fields.join(","));
    out.push('\n');
}

/// Family A: `rows` jittered variants of the nine base parts.
pub fn family_a(rows: usize, seed: u64) -> String {
    let mut rng = Rng::new(seed ^ 0xA);
    let mut out = format!("{HEADER}\n");
    for r in 0..rows {
        let b = &FAMILY_A_BASE[r % FAMILY_A_BASE.len()];
        let (tech, c, v, esr, esl, cost, diel, bias, case, area, h, rip) = *b;
        let j = if r < FAMILY_A_BASE.len() { 1.0 } else { 0.0 };
        let f = |rng: &mut Rng, x: f64| if j > 0.0 { 1.0 } else { rng.factor(x) };
        let fc = f(&mut rng, 1.25);
        let fr = f(&mut rng, 1.3);
        let fl = f(&mut rng, 1.15);
        let fp = f(&mut rng, 1.4);
        let name = format!("BA-{:05}", r + 1);
        row(
            &mut out,
            &[
                name.clone(),
                tech.into(),
                format!("{:.3e}", c * fc * 1e-6),
                format!("{v}"),
                format!("{:.3e}", esr * fr * 1e-3),
                format!("{:.3e}", esl * fl * 1e-9),
                format!("{:.4}", cost * fp),
                if tech == "ceramic" {
                    "10%".into()
                } else {
                    "20%".into()
                },
                diel.into(),
                bias.into(),
                case.into(),
                area.into(),
                format!("{h}"),
                rip.into(),
                "-55".into(),
                "125".into(),
                String::new(),
                "active".into(),
                "Invented bench maker".into(),
                format!("INV-A-{:05}", r + 1),
                format!(
                    "INVENTED BENCH DATA - not a real part; variant of base part {}",
                    r % 9 + 1
                ),
                String::new(),
            ],
        );
    }
    out
}

/// Ceramic cases of family B: code, area (mm², empty: from the case code),
/// height (mm), base ESL (nH), volume factor (for the DC bias), largest
/// value offered (µF).
const CASES: [(&str, f64, f64, f64, f64); 5] = [
    ("0402", 0.5, 0.35, 0.25, 2.2),
    ("0603", 0.9, 0.5, 1.0, 10.0),
    ("0805", 1.25, 0.6, 2.5, 22.0),
    ("1206", 1.6, 0.8, 6.0, 47.0),
    ("1210", 2.5, 0.95, 10.0, 100.0),
];
const VALUES_UF: [f64; 10] = [0.1, 0.22, 0.47, 1.0, 2.2, 4.7, 10.0, 22.0, 47.0, 100.0];
const VOLTS: [f64; 4] = [6.3, 10.0, 16.0, 25.0];
/// Invented makers: ESL factor and price factor.
const MAKERS: [(&str, f64, f64); 4] = [
    ("Invented Maker North", 1.0, 1.0),
    ("Invented Maker East", 0.85, 1.25),
    ("Invented Maker South", 1.15, 0.8),
    ("Invented Maker West", 0.7, 1.6),
];

/// One row of the family B menu before maker and lot variation.
struct Menu {
    tech: &'static str,
    c_uf: f64,
    volts: f64,
    esr_m: f64,
    esl_n: f64,
    cost: f64,
    diel: &'static str,
    bias: String,
    case: &'static str,
    area: String,
    height: f64,
    ripple: String,
}

fn family_b_menu() -> Vec<Menu> {
    let mut menu = Vec::new();
    let values = VALUES_UF;
    for &(case, h, esl, vol, cmax) in &CASES {
        for &c in &values {
            if c > cmax {
                continue;
            }
            for &v in &VOLTS {
                // Higher voltage costs capacitance per volume.
                if c * v > cmax * 10.0 {
                    continue;
                }
                for diel in ["X5R", "X7R"] {
                    // Capacitance per unit volume sets how fast the DC bias bites.
                    let density = c / vol;
                    let k = (0.15 + 0.35 * density.powf(0.3)).min(0.85)
                        * if diel == "X7R" { 0.9 } else { 1.0 };
                    let bias: Vec<String> = [0.0, 0.25, 0.5, 0.75, 1.0]
                        .iter()
                        .map(|f| {
                            let frac = 1.0 / (1.0 + (k * 4.0 * f).powi(2));
                            format!("{}:{:.2}", (v * f * 100.0).round() / 100.0, frac)
                        })
                        .collect();
                    menu.push(Menu {
                        tech: "ceramic",
                        c_uf: c,
                        volts: v,
                        esr_m: (12.0 / (1.0 + c).sqrt()).max(1.5),
                        esl_n: esl,
                        cost: 0.006 + 0.004 * c.powf(0.8) * (v / 10.0).powf(0.5) / vol.powf(0.3),
                        diel,
                        bias: bias.join(";"),
                        case,
                        area: String::new(),
                        height: h,
                        ripple: String::new(),
                    });
                }
            }
        }
    }
    // Polymers and tantalums: 33–470 µF, 5–40 mΩ.
    let bulk: [(&str, f64, f64, f64, f64, &str, f64); 12] = [
        ("polymer-aluminum", 100.0, 10.0, 15.0, 1.4, "7343-19", 1.9),
        ("polymer-aluminum", 220.0, 6.3, 9.0, 1.3, "7343-19", 1.9),
        ("polymer-aluminum", 330.0, 6.3, 6.0, 1.2, "7343-19", 1.9),
        ("polymer-aluminum", 470.0, 4.0, 5.0, 1.2, "7343-28", 2.8),
        ("polymer-aluminum", 150.0, 16.0, 12.0, 1.5, "7343-28", 2.8),
        ("polymer-tantalum", 33.0, 25.0, 40.0, 1.8, "7343-20", 2.0),
        ("polymer-tantalum", 68.0, 16.0, 25.0, 1.8, "7343-20", 2.0),
        ("polymer-tantalum", 150.0, 10.0, 18.0, 2.0, "7343-31", 3.1),
        ("polymer-tantalum", 330.0, 6.3, 10.0, 2.0, "7343-31", 3.1),
        ("polymer-tantalum", 470.0, 6.3, 7.0, 2.2, "7343-43", 4.3),
        ("tantalum", 100.0, 10.0, 40.0, 2.2, "7343-31", 3.1),
        ("tantalum", 220.0, 10.0, 35.0, 2.2, "7343-31", 3.1),
    ];
    for &(tech, c, v, esr, esl, case, h) in &bulk {
        menu.push(Menu {
            tech,
            c_uf: c,
            volts: v,
            esr_m: esr,
            esl_n: esl,
            cost: 0.12 + 0.0012 * c * (v / 6.3).powf(0.4) + 2.0 / esr,
            diel: "",
            bias: String::new(),
            case,
            area: "31.4".into(),
            height: h,
            ripple: format!("{:.1}", (1.2 * (40.0 / esr).sqrt()).min(5.0)),
        });
    }
    menu
}

/// Family B: `rows` parts of the generated library (every menu entry from
/// every maker, then further lots of them with their own price and ESR,
/// until `rows`).
pub fn family_b(rows: usize, seed: u64) -> String {
    let menu = family_b_menu();
    let mut rng = Rng::new(seed ^ 0xB);
    let mut out = format!("{HEADER}\n");
    for r in 0..rows {
        let m = &menu[r % menu.len()];
        let (maker, esl_f, price_f) = MAKERS[(r / menu.len()) % MAKERS.len()];
        let lot = r / (menu.len() * MAKERS.len());
        let (fr, fp) = if lot == 0 {
            (1.0, 1.0)
        } else {
            (rng.factor(1.2), rng.factor(1.15))
        };
        let esl = if m.tech == "ceramic" {
            m.esl_n * esl_f
        } else {
            m.esl_n
        };
        row(
            &mut out,
            &[
                format!("BB-{:05}", r + 1),
                m.tech.into(),
                format!("{:.3e}", m.c_uf * 1e-6),
                format!("{}", m.volts),
                format!("{:.3e}", m.esr_m * fr * 1e-3),
                format!("{:.3e}", esl * 1e-9),
                format!("{:.4}", m.cost * price_f * fp),
                if m.tech == "ceramic" {
                    "10%".into()
                } else {
                    "20%".into()
                },
                m.diel.into(),
                m.bias.clone(),
                m.case.into(),
                m.area.clone(),
                format!("{}", m.height),
                m.ripple.clone(),
                "-55".into(),
                "125".into(),
                String::new(),
                "active".into(),
                maker.into(),
                format!("INV-B-{:05}", r + 1),
                format!(
                    "INVENTED BENCH DATA - not a real part; {} {} uF {} V {}",
                    m.case, m.c_uf, m.volts, m.tech
                ),
                String::new(),
            ],
        );
    }
    out
}
