//! Reports: readable text, JSON, bill of materials, SPICE netlist, plots.
//! Files go to a temporary folder first and are renamed into place, so a
//! failed run never leaves an existing output folder half-written.

pub mod html;
pub mod model;
pub mod plots;
pub mod spice;
pub mod text;

use crate::assessment::Assessment;
use crate::problem::Problem;
use anyhow::{Context, Result};
use serde_json::{json, Value};
use std::path::{Path, PathBuf};

/// Cautions printed with every report (common practice, no source).
pub const CAUTIONS: &[&str] = &[
    "Check every capacitor's voltage rating against the highest output voltage, including transients and start-up overshoot; large banks store energy that can hurt people and damage parts when shorted.",
    "Tantalum and aluminum electrolytic capacitors are polarised: reverse voltage destroys them. Derate MnO2 tantalum for surge (50 % is common practice) and respect the maker's surge-current rules.",
    "Added output capacitance changes the converter's control loop and can make it unstable: stay within the converter maker's limits (max_capacitance) and check stability (phase margin, load-step response).",
    "Keep the remote-sense connection on the converter side of any added filter or bank inductance, unless the converter maker says otherwise.",
    "This is a model: verify the ripple on hardware with the stated measurement bandwidth and a short ground connection on the probe.",
    "Follow local codes, safety standards and licensed engineering practice; this tool does not replace them.",
];

/// The JSON document shared by `design`, `assess` and `rework`.
pub(crate) fn assessment_json(status: &str, a: &Assessment, problem: &Problem) -> Value {
    let mut v = serde_json::to_value(a).expect("serialisable");
    let o = v.as_object_mut().expect("object");
    o.insert("status".into(), json!(status));
    if !a.area_known {
        o.insert("area".into(), serde_json::Value::Null);
    }
    o.insert(
        "excluded".into(),
        serde_json::to_value(&problem.excluded).expect("serialisable"),
    );
    o.insert(
        "filter".into(),
        a.filter.as_ref().map_or(Value::Null, |f| filter_json(a, f)),
    );
    o.insert("target_ripple_pp".into(), json!(echoed(a.target_ripple_pp)));
    o.insert("scenario".into(), json!(problem.scenario.name));
    o.insert(
        "objective".into(),
        json!(problem.scenario.selection.objective.name()),
    );
    v
}

/// A value echoed from the user's input (a target, a range end), rounded to
/// 12 significant digits so that it prints as written: `10u` parses to
/// 9.999999999999999e-6 and prints as 1e-5. Computed values are printed in
/// full (shortest round-trip form) and do not pass through here.
pub fn echoed(x: f64) -> f64 {
    if !x.is_finite() || x == 0.0 {
        return x;
    }
    format!("{x:.11e}").parse().unwrap_or(x)
}

/// Replace NaN and infinities (never valid JSON) by null, recursively.
pub(crate) fn sanitize(v: &mut Value) {
    match v {
        Value::Number(n) if n.as_f64().is_some_and(|x| !x.is_finite()) => *v = Value::Null,
        Value::Array(a) => a.iter_mut().for_each(sanitize),
        Value::Object(o) => o.values_mut().for_each(sanitize),
        _ => {}
    }
}

/// Files of one run, written together into an output folder.
#[derive(Default)]
pub struct OutFiles {
    /// File names and contents, in the order added.
    pub files: Vec<(String, Vec<u8>)>,
}

impl OutFiles {
    /// Add a file `name` with contents `data`.
    pub fn add(&mut self, name: &str, data: impl Into<Vec<u8>>) {
        self.files.push((name.to_string(), data.into()));
    }

    /// Write every file into `dir`: first into a fresh sibling folder, then
    /// rename it into place (or, when `dir` exists, rename each file into
    /// it). Nothing is touched until every file is written; files in `dir`
    /// that this run does not write are kept.
    pub(crate) fn commit(&self, dir: &Path) -> Result<()> {
        let parent = match dir.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let name = dir
            .file_name()
            .context("--out needs a folder name")?
            .to_string_lossy()
            .to_string();
        if dir.exists() && !dir.is_dir() {
            anyhow::bail!("--out {}: exists and is not a folder", dir.display());
        }
        std::fs::create_dir_all(&parent)
            .with_context(|| format!("--out: cannot create {}", parent.display()))?;
        let stamp = format!(
            "{}-{}",
            std::process::id(),
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map_or(0, |d| d.as_nanos())
        );
        let tmp = parent.join(format!(".{name}.tmp-{stamp}"));
        std::fs::create_dir(&tmp)
            .with_context(|| format!("--out: cannot create {}", tmp.display()))?;
        let write_all = || -> Result<()> {
            for (f, data) in &self.files {
                std::fs::write(tmp.join(f), data)
                    .with_context(|| format!("--out: cannot write {f}"))?;
            }
            Ok(())
        };
        if let Err(e) = write_all() {
            let _ = std::fs::remove_dir_all(&tmp);
            return Err(e);
        }
        if dir.exists() {
            // Move our files in one by one (each rename is atomic and
            // replaces only a file of the same name); anything else the
            // folder holds is left alone.
            for (f, _) in &self.files {
                if let Err(e) = std::fs::rename(tmp.join(f), dir.join(f)) {
                    let _ = std::fs::remove_dir_all(&tmp);
                    return Err(e)
                        .with_context(|| format!("--out: cannot move {f} into {}", dir.display()));
                }
            }
            let _ = std::fs::remove_dir_all(&tmp);
        } else {
            std::fs::rename(&tmp, dir)
                .with_context(|| format!("--out: cannot rename into {}", dir.display()))?;
        }
        Ok(())
    }
}

/// Bill of materials CSV: part, count and the catalog's details, extra
/// columns carried through.
pub fn bom_csv(problem: &Problem, bank: &[(usize, u32)]) -> Vec<u8> {
    bom_csv_with(problem, bank, None)
}

/// The columns of a capacitor row (and, with a filter, of every row).
const BOM_HEAD: &[&str] = &[
    "part",
    "count",
    "technology",
    "capacitance",
    "rated_voltage",
    "dielectric",
    "case",
    "esr",
    "esl",
    "unit_cost",
    "line_total_cost",
    "manufacturer",
    "mpn",
    "description",
];

/// The columns a filtered design adds: where each row sits, and the
/// inductor's and the damping resistor's own values.
const BOM_FILTER_HEAD: &[&str] = &[
    "position",
    "inductance",
    "dcr",
    "rated_current",
    "saturation_current",
    "resistance",
];

/// Bill of materials CSV of a design: without a filter exactly
/// [`bom_csv`]; with one, a `position` column (`converter`, `inductor`,
/// `load`, `damping`) and a row for every part in order from the converter
/// outward: the converter-side bank, the inductor, the load-side bank, the
/// damping resistor (its `part` is its value in the RKM code, `R 0R22`) and
/// the damping capacitor. `assess --bom` reads it back as the same design.
pub(crate) fn bom_csv_with(
    problem: &Problem,
    bank: &[(usize, u32)],
    filter: Option<&crate::filter::FilterDesign>,
) -> Vec<u8> {
    use crate::units::format_compact;
    let cat = &problem.catalog;
    let lc = filter.and(problem.inductors.as_ref());
    let mut head: Vec<String> = BOM_HEAD.iter().map(|s| s.to_string()).collect();
    if lc.is_some() {
        head.extend(BOM_FILTER_HEAD.iter().map(|s| s.to_string()));
    }
    head.extend(cat.extra_columns.iter().cloned());
    let ind_extra: Vec<String> = lc.map_or(Vec::new(), |l| {
        l.extra_columns
            .iter()
            .filter(|c| !head.contains(c))
            .cloned()
            .collect()
    });
    head.extend(ind_extra.iter().cloned());
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&head).expect("in memory");
    let extras = |row: &mut Vec<String>, cap: &[(String, String)], ind: &[(String, String)]| {
        let find = |v: &[(String, String)], c: &str| {
            v.iter()
                .find(|(h, _)| h == c)
                .map_or(String::new(), |(_, x)| x.clone())
        };
        for c in &cat.extra_columns {
            row.push(find(cap, c));
        }
        for c in &ind_extra {
            row.push(find(ind, c));
        }
    };
    let capacitor_row = |i: usize, n: u32, position: &str| -> Vec<String> {
        let p = &cat.parts[i];
        let mut row = vec![
            p.id.clone(),
            n.to_string(),
            p.technology.name().to_string(),
            format_compact(p.capacitance),
            p.rated_voltage.to_string(),
            p.dielectric.as_ref().map_or(String::new(), |d| d.0.clone()),
            p.case.clone().unwrap_or_default(),
            format_compact(p.esr),
            format_compact(p.esl),
            p.cost.to_string(),
            format!("{:.4}", p.cost * n as f64),
            p.manufacturer.clone().unwrap_or_default(),
            p.mpn.clone().unwrap_or_default(),
            p.description.clone().unwrap_or_default(),
        ];
        if lc.is_some() {
            row.push(position.to_string());
            row.extend(std::iter::repeat_n(
                String::new(),
                BOM_FILTER_HEAD.len() - 1,
            ));
        }
        extras(&mut row, &p.extra, &[]);
        row
    };
    for &(i, n) in bank.iter().filter(|b| b.1 > 0) {
        w.write_record(capacitor_row(i, n, "converter"))
            .expect("in memory");
    }
    if let (Some(f), Some(lc)) = (filter, lc) {
        let l = &lc.parts[f.inductor];
        let n = f.count.max(1);
        let mut row = vec![
            l.id.clone(),
            n.to_string(),
            "inductor".into(),
            String::new(),
            String::new(),
            String::new(),
            l.case.clone().unwrap_or_default(),
            String::new(),
            String::new(),
            l.cost.to_string(),
            format!("{:.4}", l.cost * n as f64),
            l.manufacturer.clone().unwrap_or_default(),
            l.mpn.clone().unwrap_or_default(),
            l.description.clone().unwrap_or_default(),
            "inductor".into(),
            format_compact(l.inductance),
            format_compact(l.dcr),
            format_compact(l.rated_current),
            format_compact(l.saturation_current),
            String::new(),
        ];
        extras(&mut row, &[], &l.extra);
        w.write_record(&row).expect("in memory");
        for &(i, n) in f.load_bank.iter().filter(|b| b.1 > 0) {
            w.write_record(capacitor_row(i, n, "load"))
                .expect("in memory");
        }
        if let Some(d) = &f.damping {
            let fs = &problem.scenario.filter;
            let cost = fs.damping_resistor_cost.0;
            let series = fs.damping_resistors;
            let in_series = crate::eseries::values(series, d.resistance, d.resistance)
                .iter()
                .any(|v| (v - d.resistance).abs() <= 1e-9 * d.resistance);
            let mut row = vec![
                format!("R {}", crate::units::format_rkm(d.resistance)),
                "1".into(),
                "resistor".into(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                cost.to_string(),
                format!("{cost:.4}"),
                String::new(),
                String::new(),
                if in_series {
                    format!(
                        "damping resistor, IEC 60063 {} value; choose its power rating and pulse capability",
                        series.label()
                    )
                } else {
                    "damping resistor; choose its power rating and pulse capability".into()
                },
                "damping".into(),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
                format_compact(d.resistance),
            ];
            extras(&mut row, &[], &[]);
            w.write_record(&row).expect("in memory");
            w.write_record(capacitor_row(d.capacitor, d.count, "damping"))
                .expect("in memory");
        }
    }
    w.into_inner().expect("in memory")
}

/// The JSON `filter` object of a filtered design: the inductor and its
/// figures, the damping leg (`null` without one), the ripple at the
/// converter-side node, both banks as `{part, count}` lists; and, as our
/// extensions, the inductor's currents and ratings, the characteristic
/// impedance, the filter's capacitors' ripple currents and its parts'
/// totals.
pub(crate) fn filter_json(a: &Assessment, f: &crate::filter::FilterAssessment) -> Value {
    let bank = |b: &mut dyn Iterator<Item = (String, u32)>| -> Vec<Value> {
        b.map(|(part, count)| json!({"part": part, "count": count}))
            .collect()
    };
    let t = &f.tail;
    json!({
        "inductor": f.inductor,
        "count": f.count,
        "inductance": f.inductance,
        "inductance_tolerance": f.inductance_tolerance,
        "dcr": f.dcr,
        "corner_frequency": t.corner_frequency,
        "characteristic_impedance": characteristic_impedance(f),
        "peak_output_impedance": t.peak_output_impedance,
        "peak_frequency": t.peak_frequency,
        "dc_drop": t.dc_drop,
        "dc_current": t.dc_current,
        "damping": f.damping.as_ref().map(|(r, part, n)| json!({
            "resistor": r,
            "resistor_code": crate::units::format_rkm(*r),
            "capacitor": part,
            "count": n,
        })),
        "ripple_pp_converter_node": f.ripple_pp_converter_node,
        "converter_bank": bank(&mut a.bank.iter().map(|l| (l.part.clone(), l.count))),
        "load_bank": bank(&mut f.load_bank.iter().cloned()),
        "inductor_ripple_pp": f.inductor_ripple_pp,
        "inductor_peak_current": f.inductor_peak_current,
        "rated_current": f.rated_current,
        "saturation_current": f.saturation_current,
        "capacitor_currents": f.capacitor_currents.iter().map(|(part, rms, rating)| json!({
            "part": part, "rms": rms, "rating": rating,
        })).collect::<Vec<_>>(),
        "cost": f.cost,
        "area": f.area,
        "parts": f.parts,
    })
}

/// The filter's characteristic impedance `R0 = sqrt(L/C) = 2π·f0·L`, with
/// `L` the inductance of the parallel inductors and `f0` the corner (the
/// same nominal L and typical load-side C), Ω.
pub fn characteristic_impedance(f: &crate::filter::FilterAssessment) -> f64 {
    2.0 * std::f64::consts::PI * f.tail.corner_frequency * f.inductance / f.count.max(1) as f64
}

/// Pretty JSON text with non-finite numbers removed.
pub(crate) fn json_text(mut v: Value) -> String {
    sanitize(&mut v);
    serde_json::to_string_pretty(&v).expect("serialisable") + "\n"
}
