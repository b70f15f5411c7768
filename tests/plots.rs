//! Plots and the HTML report: well-formed markup, the labels a reader
//! needs, and plotted numbers that follow circuit theory and Fourier
//! analysis (sources named beside each check).

use num_complex::Complex64;
use ripplebank::assessment::{self, Assessment};
use ripplebank::catalog::Catalog;
use ripplebank::load;
use ripplebank::problem::Problem;
use ripplebank::report::model::{self, Report, Verdict};
use ripplebank::report::{html, plots, CAUTIONS};
use ripplebank::scenario::Scenario;
use std::f64::consts::PI;

const BIG: &str = "RB-C1206-X5R-47U-6V3";
const SMALL: &str = "RB-C0402-X7R-100N-16V";

fn demo() -> Problem {
    load::problem(None, None, &Default::default()).unwrap()
}

/// The demo scenario with its text edited (vin corners, internal capacitance…).
fn demo_edited(edit: impl Fn(&str) -> String) -> Problem {
    let (_, cat) = load::scenario_and_catalog(None, None).unwrap();
    let s = Scenario::from_str(&edit(load::DEMO_SCENARIO), "edited demo").unwrap();
    Problem::new(s, cat).unwrap()
}

fn bank(p: &Problem, spec: &str) -> Vec<(usize, u32)> {
    assessment::parse_bank_arg(p, spec).unwrap()
}

fn assessed(p: &Problem, spec: &str) -> (Vec<(usize, u32)>, Assessment) {
    let b = bank(p, spec);
    let a = assessment::assess(p, &b).unwrap();
    (b, a)
}

/// All `<text>` contents of an SVG, trimmed.
fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| n.text().unwrap_or("").trim().to_string())
        .collect()
}

/// The HTML page as XML (it is written in XHTML syntax; `<!DOCTYPE html>` needs DTDs allowed).
fn parse_html(page: &str) -> roxmltree::Document<'_> {
    let opt = roxmltree::ParsingOptions {
        allow_dtd: true,
        ..Default::default()
    };
    roxmltree::Document::parse_with_options(page, opt)
        .unwrap_or_else(|e| panic!("the page is not well-formed: {e}"))
}

fn parse(svg: &str) -> roxmltree::Document<'_> {
    roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("not well-formed XML: {e}"))
}

/// Checks every plot must pass: XML, an <svg> root with a white
/// background, a title shown as text and as <title>, both axis labels.
fn check_plot(svg: &str, title_word: &str, x_label: &str, y_label: &str) -> Vec<String> {
    let doc = parse(svg);
    let root = doc.root_element();
    assert!(root.has_tag_name("svg"));
    assert!(
        root.attribute("viewBox").is_some(),
        "needs a viewBox to scale in HTML"
    );
    let first_rect = doc
        .descendants()
        .find(|n| n.has_tag_name("rect"))
        .expect("background");
    assert_eq!(
        first_rect.attribute("fill").map(|s| s.to_ascii_uppercase()),
        Some("#FFFFFF".into())
    );
    let t = texts(&doc);
    let title = doc
        .descendants()
        .find(|n| n.has_tag_name("title"))
        .and_then(|n| n.text())
        .expect("<title>")
        .to_string();
    assert!(
        title.to_lowercase().contains(&title_word.to_lowercase()),
        "{title}"
    );
    assert!(t.contains(&title), "title drawn as text: {t:?}");
    for label in [x_label, y_label] {
        assert!(
            t.iter().any(|s| s == label),
            "axis label {label:?} missing from {t:?}"
        );
        // Every axis label names its unit in parentheses.
        assert!(label.ends_with(')') && label.contains('('), "{label}");
    }
    t
}

#[test]
fn bank_plots_are_well_formed_and_labelled() {
    let p = demo();
    let (b, a) = assessed(&p, &format!("{BIG}=4,{SMALL}=2"));
    let plots = plots::bank_plots(&p, &b, &a).unwrap();
    let names: Vec<&str> = plots.iter().map(|x| x.0.as_str()).collect();
    assert_eq!(names, ["impedance.svg", "ripple.svg", "spectrum.svg"]);

    let t = check_plot(&plots[0].1, "impedance", "frequency (Hz)", "|Z| (Ω)");
    // Legend: one entry per line of the bank, the bank and the budget.
    assert!(
        t.iter().any(|s| s.starts_with(&format!("4 × {BIG}"))),
        "{t:?}"
    );
    assert!(
        t.iter().any(|s| s.starts_with(&format!("2 × {SMALL}"))),
        "{t:?}"
    );
    assert!(t.iter().any(|s| s.contains("whole bank")));
    assert!(t
        .iter()
        .any(|s| s.contains("alone would use the whole budget")));
    // Log axis ticks carry units: decades of hertz and ohms.
    assert!(t.iter().any(|s| s == "1 MHz"), "{t:?}");
    assert!(t.iter().any(|s| s.ends_with("mΩ")), "{t:?}");
    let doc = parse(&plots[0].1);
    let lines = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline"))
        .count();
    assert!(lines >= 3, "two part lines and the bank: {lines} polylines");

    let t = check_plot(&plots[1].1, "ripple", "time (µs)", "output ripple (mV)");
    assert!(t.iter().any(|s| s.starts_with("full bandwidth")), "{t:?}");
    assert!(t.iter().any(|s| s.starts_with("20 MHz bandwidth")), "{t:?}");
    assert!(t.iter().any(|s| s.starts_with("target band")), "{t:?}");

    let t = check_plot(
        &plots[2].1,
        "harmonic voltage against the budget",
        "frequency (Hz)",
        "harmonic voltage, peak-to-peak (V)",
    );
    assert!(t.iter().any(|s| s.starts_with("budget")), "{t:?}");
}

#[test]
fn impedance_of_one_line_is_a_series_rlc() {
    // n identical capacitors in parallel: Z = (ESR + jωL + 1/(jωC)) / n,
    // smallest and equal to ESR/n at f0 = 1/(2π√(LC)); far below f0 it is
    // 1/(2πf·nC) (series resonance; Hayt & Kemmerly, Engineering Circuit
    // Analysis, chapter on frequency response).
    let p = demo();
    let b = bank(&p, &format!("{BIG}=4"));
    let m = p.part_model(b[0].0);
    let n = 4.0;
    let f0 = 1.0 / (2.0 * PI * (m.esl * m.c_worst).sqrt());
    let z = plots::bank_impedance(&p, &b, &[f0, f0 * 0.99, f0 * 1.01]);
    assert!(
        (z[0] - m.esr / n).abs() < 1e-9 * m.esr,
        "{} vs {}",
        z[0],
        m.esr / n
    );
    assert!(z[1] > z[0] && z[2] > z[0]);

    let d = plots::impedance_data(&p, &b).unwrap();
    // The sweep starts a decade below the ripple frequency (600 kHz in the demo).
    let f_ripple = p.ops[0].f_ripple;
    assert!((d.freqs[0] - f_ripple / 10.0).abs() < 1e-9 * f_ripple);
    let (i_min, z_min) =
        d.bank
            .iter()
            .copied()
            .enumerate()
            .fold(
                (0, f64::INFINITY),
                |acc, (i, z)| if z < acc.1 { (i, z) } else { acc },
            );
    assert!(
        (z_min / (m.esr / n) - 1.0).abs() < 5e-3,
        "minimum {z_min} vs ESR/n {}",
        m.esr / n
    );
    assert!(
        (d.freqs[i_min] / f0 - 1.0).abs() < 0.015,
        "minimum at {} vs f0 {f0}",
        d.freqs[i_min]
    );
    let f = d.freqs[0];
    let zc = 1.0 / (2.0 * PI * f * n * m.c_worst);
    assert!((d.bank[0] / zc - 1.0).abs() < 0.01, "{} vs {zc}", d.bank[0]);
    // One line: its group curve is the whole bank.
    assert_eq!(d.groups.len(), 1);
    for (g, bk) in d.groups[0].1.iter().zip(&d.bank) {
        assert!((g - bk).abs() <= 1e-12 * bk);
    }
}

#[test]
fn bank_curve_matches_the_circuit_and_the_evaluator() {
    // With the converter's own capacitance Z_i at the current source and a
    // connection inductance Lc to the bank Z_b, the measured node (the bank)
    // sees V = I · Z_i / (Z_i + jωLc + Z_b) · Z_b (current divider; any
    // circuits text, e.g. Hayt & Kemmerly, Engineering Circuit Analysis).
    let p = demo_edited(|t| {
        t.replace("max_capacitance = \"470u\"", "max_capacitance = \"470u\"\ninternal_capacitance = \"22u\"\ninternal_esr = \"4m\"\ninternal_esl = \"0.5n\"")
            .replace("connection_inductance = \"0\"", "connection_inductance = \"0.7n\"")
    });
    let b = bank(&p, &format!("{BIG}=3,{SMALL}=2"));
    let d = plots::impedance_data(&p, &b).unwrap();
    assert!(d.internal.is_some());
    let c = &p.scenario.converter;
    let (ci, ri, li) = (
        c.internal_capacitance.unwrap().0,
        c.internal_esr.0,
        c.internal_esl.0,
    );
    let lc = p.scenario.board.connection_inductance.0;
    let zcap = |r: f64, l: f64, cap: f64, f: f64| {
        let w = 2.0 * PI * f;
        Complex64::new(r, w * l - 1.0 / (w * cap))
    };
    for (k, &f) in d.freqs.iter().enumerate().step_by(37) {
        let mut yb = Complex64::default();
        for &(i, n) in &b {
            let m = p.part_model(i);
            yb += zcap(m.esr, m.esl, m.c_worst, f).inv() * n as f64;
        }
        let zb = yb.inv();
        let zi = zcap(ri, li, ci, f);
        let jwl = Complex64::new(0.0, 2.0 * PI * f * lc);
        let want = (zi / (zi + jwl + zb) * zb).norm();
        assert!(
            (d.bank[k] / want - 1.0).abs() < 1e-9,
            "f {f}: {} vs {want}",
            d.bank[k]
        );
    }
    // The harmonic markers come from the evaluator; they sit on the curve.
    let at = plots::bank_impedance(&p, &b, &d.harmonics.iter().map(|h| h.0).collect::<Vec<_>>());
    for ((f, z), z2) in d.harmonics.iter().zip(&at) {
        assert!(
            (z / z2 - 1.0).abs() < 1e-9,
            "f {f}: evaluator {z} vs curve {z2}"
        );
    }
}

#[test]
fn needed_impedance_follows_the_triangle_spectrum() {
    // Buck inductor ripple: a triangle of ΔI = vout(1−D)/(L f), rising for
    // D·T; the peak amplitude of its fundamental is
    // ΔI·sin(πD)/(π²·D(1−D)) (Erickson & Maksimović, Fundamentals of Power
    // Electronics, harmonics of switching waveforms). The first-order
    // bandwidth limit scales it by 1/|1 + j f/B|. The impedance at which the
    // fundamental alone makes a sinusoid of the target's peak-to-peak is
    // target / (2 · |I_1 H_1|).
    let p = demo();
    let b = bank(&p, &format!("{BIG}=4"));
    let d = plots::impedance_data(&p, &b).unwrap();
    let c = &p.scenario.converter;
    // The plot is drawn at the worst point of the corner region: for a buck
    // that has the inductor at the low end of its tolerance.
    let l = c.inductance.unwrap().0 * (1.0 - c.inductance_tolerance());
    let (vin, vout, f) = (c.vin.unwrap().0, c.vout.0, c.fsw.0);
    let duty = vout / vin;
    let di = vout * (1.0 - duty) / (l * f);
    let i1 = di * (PI * duty).sin() / (PI * PI * duty * (1.0 - duty));
    let bw = p.scenario.target.bandwidth.unwrap().0;
    let h1 = 1.0 / Complex64::new(1.0, f / bw).norm();
    let want = p.scenario.target.ripple_pp.0 / (2.0 * i1 * h1);
    assert!((d.needed[0].0 - f).abs() < 1e-9 * f);
    assert!(
        (d.needed[0].1 / want - 1.0).abs() < 1e-9,
        "{} vs {want}",
        d.needed[0].1
    );
    // Where the bank sits exactly at that impedance, the harmonic's own
    // peak-to-peak equals the target: |Z_k| / Z_needed = 2|V_k| / target.
    let s = plots::spectrum_data(&p, &b).unwrap();
    for ((h, n), v) in d.harmonics.iter().zip(&d.needed).zip(&s.amplitude).take(20) {
        assert!(
            (h.1 / n.1 - 2.0 * v / s.target).abs() < 1e-9 * (h.1 / n.1),
            "at {} Hz",
            h.0
        );
    }
}

#[test]
fn ripple_and_spectrum_show_the_worst_corner() {
    // Three vin corners; the plots must show the one with the largest
    // bandwidth-limited ripple, which is what the assessment reports.
    let p = demo_edited(|t| t.replace("vin = 12\n", "vin = 12\nvin_min = 5\nvin_max = 20\n"));
    assert_eq!(p.ops.len(), 3);
    let (b, a) = assessed(&p, &format!("{BIG}=3,{SMALL}=2"));
    let r = plots::ripple_data(&p, &b).unwrap();
    let pp = |v: &[f64]| {
        v.iter().copied().fold(f64::NEG_INFINITY, f64::max)
            - v.iter().copied().fold(f64::INFINITY, f64::min)
    };
    // The grid samples of the plot, against the figure (which also takes
    // both sides of every breakpoint): the same point of the region.
    assert!(
        (pp(&r.limited) / a.ripple_pp - 1.0).abs() < 2e-3,
        "{} vs {}",
        pp(&r.limited),
        a.ripple_pp
    );
    assert!(pp(&r.full) <= a.ripple_pp_full_bandwidth * (1.0 + 1e-9));
    assert!((r.period * p.scenario.converter.fsw.0 - 1.0).abs() < 1e-12);
    // The target band is centred on the trace: the trace lies inside it
    // exactly when the bank meets the target.
    let inside = r
        .limited
        .iter()
        .all(|v| (v - r.mid).abs() <= r.target / 2.0 + 1e-15);
    assert_eq!(inside, a.meets_target);
    // Buck at higher vin has more inductor ripple: ΔI = vout(1 − vout/vin)/(L f)
    // grows with vin (Erickson & Maksimović, ch. 2), so the worst corner is vin_max.
    assert_eq!(r.vin, Some(20.0));

    // Fourier bounds on a periodic signal with harmonic peak amplitudes |V_k|:
    // |V_k| = |(2/T)∫(v − m)e^{−jkωt}dt| ≤ 2·max|v − m| = p-p (m the
    // mid-range), and p-p ≤ Σ 2|V_k| (triangle inequality on the series;
    // Oppenheim & Willsky, Signals and Systems, ch. 3, Fourier series).
    let s = plots::spectrum_data(&p, &b).unwrap();
    assert_eq!(s.vin_corner, r.vin_corner);
    let max_k = s.amplitude.iter().copied().fold(0.0, f64::max);
    let sum: f64 = s.amplitude.iter().map(|v| 2.0 * v).sum();
    assert!(
        max_k <= a.ripple_pp && a.ripple_pp <= sum,
        "{max_k} ≤ {} ≤ {sum}",
        a.ripple_pp
    );
    assert_eq!(s.amplitude.len(), a.harmonics);
}

#[test]
fn plots_escape_part_names() {
    // A catalog whose part id holds XML's special characters.
    let csv = "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,case,height\n\
               \"A&B <47u> \"\"x\"\"\",ceramic,47u,6.3,3m,0.8n,0.1,10%,1206,1.6\n";
    let cat = Catalog::from_bytes(csv.as_bytes(), "inline").unwrap();
    let s = Scenario::from_str(load::DEMO_SCENARIO, "demo").unwrap();
    let p = Problem::new(s, cat).unwrap();
    let b = vec![(0usize, 4u32)];
    let a = assessment::assess(&p, &b).unwrap();
    let plots = plots::bank_plots(&p, &b, &a).unwrap();
    let doc = parse(&plots[0].1);
    assert!(
        texts(&doc)
            .iter()
            .any(|t| t.starts_with("4 × A&B <47u> \"x\"")),
        "{:?}",
        texts(&doc)
    );
    let mut rep = Report::new("A & <B>", None);
    rep.section("Bank");
    rep.line("A&B <47u>");
    let page = html::render(&rep, &plots);
    let doc = parse_html(&page);
    let h1 = doc.descendants().find(|n| n.has_tag_name("h1")).unwrap();
    assert_eq!(h1.text(), Some("A & <B>"));
}

#[test]
fn empty_bank_is_an_error_not_a_panic() {
    let p = demo();
    let b = bank(&p, &format!("{BIG}=4"));
    let a = assessment::assess(&p, &b).unwrap();
    let err = plots::bank_plots(&p, &[(b[0].0, 0)], &a).unwrap_err();
    assert!(err.to_string().contains("empty"), "{err}");
}

#[test]
fn html_report_is_self_contained_and_embeds_every_plot() {
    let p = demo();
    let (b, a) = assessed(&p, &format!("{BIG}=4,{SMALL}=2"));
    let plots = plots::bank_plots(&p, &b, &a).unwrap();
    let mut rep = Report::new("Bank assessment", None);
    rep.push(model::header(&p));
    for sec in model::assessment(&a, false) {
        rep.push(sec);
    }
    // The verdict's words say "fail"; its class must follow the kind (pass), not the words.
    rep.verdict(Verdict::Pass, "Verdict: test text that says FAIL in words.");
    rep.push(model::cautions());
    let page = html::render(&rep, &plots);
    assert!(page.starts_with("<!DOCTYPE html>"));
    assert!(
        !page.contains("<?xml"),
        "XML declarations must be stripped before inlining"
    );
    let doc = parse_html(&page);
    let svgs: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("svg"))
        .collect();
    assert_eq!(svgs.len(), plots.len());
    for (svg, (name, text)) in svgs.iter().zip(&plots) {
        let src = parse(text);
        // The same drawing: same number of elements and the same title.
        assert_eq!(
            svg.descendants().count(),
            src.root_element().descendants().count(),
            "{name}"
        );
        let t = |n: roxmltree::Node| {
            n.descendants()
                .find(|c| c.has_tag_name("title"))
                .and_then(|c| c.text())
                .map(str::to_string)
        };
        assert_eq!(t(*svg), t(src.root_element()), "{name}");
    }
    // Every caution, once, in the cautions box.
    let lis: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("li"))
        .map(|n| n.text().unwrap_or("").to_string())
        .collect();
    for c in CAUTIONS {
        assert_eq!(lis.iter().filter(|l| l == c).count(), 1, "{c}");
        let shown = doc
            .descendants()
            .filter(|n| n.is_text() && n.text().unwrap_or("").contains(&c[..40]))
            .count();
        assert_eq!(shown, 1, "the body's own cautions section is not repeated");
    }
    // The report's sections become headings.
    let h2: Vec<&str> = doc
        .descendants()
        .filter(|n| n.has_tag_name("h2"))
        .filter_map(|n| n.text())
        .collect();
    for h in ["Bank", "Limits", "Plots", "Cautions"] {
        assert!(h2.contains(&h), "{h} in {h2:?}");
    }
    assert!(doc
        .descendants()
        .any(|n| n.attribute("class") == Some("verdict pass")));
    assert!(!doc
        .descendants()
        .any(|n| n.attribute("class") == Some("verdict fail")));
    // Tables are tables: the bank and the limits, with their headings and rows.
    let tables: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("table"))
        .collect();
    assert!(tables.len() >= 3, "bank, ripple and limits tables");
    let cells = |t: &roxmltree::Node| -> Vec<String> {
        t.descendants()
            .filter(|n| n.has_tag_name("th") || n.has_tag_name("td"))
            .map(|n| n.text().unwrap_or("").to_string())
            .collect()
    };
    assert!(tables.iter().any(|t| {
        let c = cells(t);
        c.iter().any(|x| x == BIG) && c.iter().any(|x| x == "C nominal")
    }));
    let limits = tables
        .iter()
        .find(|t| cells(t).iter().any(|x| x == "must be"))
        .expect("the limits table states each check's direction");
    let rows = limits
        .descendants()
        .filter(|n| n.has_tag_name("tr"))
        .count();
    // One row per check, the two capacitance information rows (low-corner
    // total, effective capacitance at the ripple frequency) and a header.
    assert_eq!(
        rows,
        a.checks.len() + 3,
        "one row per check, two information rows and a header"
    );
    // No scripts and nothing fetched from elsewhere.
    assert!(!doc
        .descendants()
        .any(|n| n.has_tag_name("script") || n.has_tag_name("link") || n.has_tag_name("img")));
    assert!(doc.descendants().all(|n| n.attribute("src").is_none()));
    assert!(doc
        .descendants()
        .filter_map(|n| n.attribute("href"))
        .all(|h| h.starts_with('#')));
    assert!(!page.contains("url(") && !page.contains("@import"));
}

fn point(target_mv: f64, key: &str, cost: Option<f64>) -> plots::TradeoffPoint {
    plots::TradeoffPoint {
        target: target_mv * 1e-3,
        status: if cost.is_some() {
            "optimal".into()
        } else {
            "infeasible".into()
        },
        ripple_pp: cost.map(|_| target_mv * 0.8e-3),
        cost,
        area: cost.map(|c| c * 40.0),
        count: cost.map(|_| 3),
        bank_key: key.into(),
    }
}

#[test]
fn tradeoff_plots_mark_where_the_bank_changes() {
    // Given in no particular order; one target has no bank.
    let pts = vec![
        point(20.0, "A=1", Some(0.2)),
        point(2.0, "", None),
        point(5.0, "A=2,B=1", Some(0.5)),
        point(10.0, "A=1", Some(0.2)),
        point(4.0, "A=2,B=1", Some(0.5)),
        point(3.0, "A=3,B=2", Some(0.9)),
    ];
    let out = plots::tradeoff_plots(&pts, Some(2.0e-3)).unwrap();
    assert_eq!(
        out.iter().map(|x| x.0.as_str()).collect::<Vec<_>>(),
        ["cost.svg", "area.svg"]
    );
    // The scenario's own target (2 mV, inside the plotted range) is marked.
    assert!(out
        .iter()
        .all(|(_, svg)| svg.contains("the scenario&apos;s own target")
            || svg.contains("the scenario's own target")));
    for ((_, svg), y) in out
        .iter()
        .zip(["cost (catalog currency)", "board area (mm²)"])
    {
        let t = check_plot(
            svg,
            "against ripple target",
            "ripple target, peak-to-peak (mV)",
            y,
        );
        // Three distinct banks, tightest target first.
        for k in ["1: A=3,B=2", "2: A=2,B=1", "3: A=1"] {
            assert!(t.iter().any(|s| s == k), "{k} in {t:?}");
        }
        let doc = parse(svg);
        // A filled, larger marker where the bank changes: three changes.
        let big = doc
            .descendants()
            .filter(|n| n.has_tag_name("circle") && n.attribute("r") == Some("6"))
            .count();
        assert_eq!(big, 3);
        assert!(t.iter().any(|s| s == "no bank meets this target"));
    }
    // Nothing feasible still draws a plot that says so.
    let out = plots::tradeoff_plots(&[point(1.0, "", None), point(2.0, "", None)], None).unwrap();
    let t = texts(&parse(&out[0].1));
    assert!(t.iter().any(|s| s.contains("no bank meets any")), "{t:?}");
}

#[test]
fn impedance_band_spans_the_capacitance_box() {
    // Well below resonance the bank is a capacitor: |Z| ≈ 1/(2πf·ΣC), so the
    // high-corner curve sits below the low-corner one by ΣC_low/ΣC_high
    // (series RLC far below resonance, any circuits text, e.g. Hayt &
    // Kemmerly); 3 % allows for ESR and ESL at f_ripple/10.
    let p = demo();
    let b = bank(&p, &format!("{BIG}=3,{SMALL}=2"));
    let d = plots::impedance_data(&p, &b).unwrap();
    let (mut c_low, mut c_high) = (0.0, 0.0);
    for &(i, n) in &b {
        let m = p.part_model(i);
        c_low += n as f64 * m.c_worst;
        c_high += n as f64 * m.c_high;
    }
    let ratio = d.bank_high[0] / d.bank[0];
    assert!(
        (ratio / (c_low / c_high) - 1.0).abs() < 0.03,
        "{ratio} vs {}",
        c_low / c_high
    );
    assert!(d.bank_high.len() == d.freqs.len());
}
