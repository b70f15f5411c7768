//! Everything the reports say about one bank: the ripple at every corner,
//! the currents, the totals and every limit, computed by the evaluator.

use crate::bank::{Band, Corner, Evaluator};
use crate::catalog::Status;
use crate::problem::{cap_limit_value, Problem};
use anyhow::{bail, Result};
use serde::Serialize;
use std::path::Path;

/// One line of a bank with its details.
#[derive(Debug, Clone, Serialize)]
pub struct BankLine {
    pub part: String,
    pub count: u32,
    pub technology: String,
    pub case: Option<String>,
    pub capacitance_nominal: f64,
    pub capacitance_typical: f64,
    pub capacitance_worst: f64,
    pub esr: f64,
    pub esl: f64,
    pub rated_voltage: f64,
    pub unit_cost: f64,
    pub line_total_cost: f64,
    pub unit_area: Option<f64>,
    pub height: Option<f64>,
    pub ripple_current_rms: f64,
    pub ripple_current_rating: Option<f64>,
    pub status: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct PartCurrent {
    pub part: String,
    pub rms: f64,
    pub rating: Option<f64>,
}

/// A limit and whether the bank keeps it.
#[derive(Debug, Clone, Serialize)]
pub struct Check {
    pub name: String,
    pub value: f64,
    pub limit: f64,
    pub unit: String,
    pub ok: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct CornerInfo {
    pub vin: Option<f64>,
    pub duty: f64,
    pub mode: String,
    pub ripple_frequency: f64,
    pub current_pp: f64,
}

#[derive(Debug, Clone, Serialize)]
pub struct Assessment {
    pub bank: Vec<BankLine>,
    pub ripple_pp: f64,
    pub ripple_pp_typical: f64,
    pub ripple_pp_full_bandwidth: f64,
    pub target_ripple_pp: f64,
    pub bandwidth: Option<f64>,
    pub harmonics: usize,
    pub cost: f64,
    pub parts_cost: f64,
    pub area: f64,
    /// False when a part has no area: `area` is then a lower bound and the
    /// JSON reports null.
    #[serde(skip)]
    pub area_known: bool,
    pub count: u32,
    pub lines: u32,
    pub capacitance_nominal_total: f64,
    pub capacitance_max_total: f64,
    pub capacitance_effective_total: f64,
    pub capacitance_typical_total: f64,
    pub ripple_current: Vec<PartCurrent>,
    pub checks: Vec<Check>,
    pub corners: Vec<CornerInfo>,
    pub meets_target: bool,
    pub all_ok: bool,
    pub warnings: Vec<String>,
}

/// The most parts of one line a bank may hold (far beyond any real bank; it
/// keeps every count and sum within `u32`).
pub const MAX_COUNT_PER_PART: u32 = 100_000;

/// Parse `PART=N,PART=N` into catalog indices and counts.
pub fn parse_bank_arg(problem: &Problem, text: &str) -> Result<Vec<(usize, u32)>> {
    let mut out: Vec<(usize, u32)> = Vec::new();
    for item in text.split(',').map(str::trim).filter(|s| !s.is_empty()) {
        let Some((id, n)) = item.split_once('=') else {
            bail!("--bank: `{item}` is not of the form PART=N");
        };
        let (id, n) = (id.trim(), n.trim());
        let n: u32 = n
            .parse()
            .map_err(|_| anyhow::anyhow!("--bank: count `{n}` of `{id}` is not a whole number"))?;
        let Some(i) = problem.catalog.position(id) else {
            bail!(
                "--bank: part `{id}` is not in the catalog {}{}",
                problem.catalog.source,
                did_you_mean(problem, id)
            );
        };
        add(&mut out, i, n);
        if out.iter().any(|&(_, n)| n > MAX_COUNT_PER_PART) {
            bail!("--bank: more than {MAX_COUNT_PER_PART} of `{id}` is not a bank");
        }
    }
    if out.is_empty() {
        bail!("--bank: no parts given (write PART=N,PART=N)");
    }
    Ok(out)
}

fn add(out: &mut Vec<(usize, u32)>, i: usize, n: u32) {
    match out.iter_mut().find(|(j, _)| *j == i) {
        Some(e) => e.1 = e.1.saturating_add(n),
        None => out.push((i, n)),
    }
}

/// Where a bill-of-materials row sits in the output network.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Position {
    /// The bank at the converter's output (the default).
    Converter,
    /// The filter inductor.
    Inductor,
    /// The bank after the filter inductor, at the load.
    Load,
    /// The damping leg (its resistor and capacitor).
    Damping,
}

impl Position {
    pub const NAMES: &'static [&'static str] = &["converter", "inductor", "load", "damping"];

    pub fn name(self) -> &'static str {
        match self {
            Position::Converter => "converter",
            Position::Inductor => "inductor",
            Position::Load => "load",
            Position::Damping => "damping",
        }
    }

    /// Case-insensitive.
    pub fn parse(s: &str) -> Option<Position> {
        match s.trim().to_ascii_lowercase().as_str() {
            "converter" => Some(Position::Converter),
            "inductor" => Some(Position::Inductor),
            "load" => Some(Position::Load),
            "damping" => Some(Position::Damping),
            _ => None,
        }
    }
}

/// One line of a bill of materials as read from CSV.
#[derive(Debug, Clone, PartialEq)]
pub struct BomRow {
    /// Part id as written (a damping resistor: its value, e.g. `R 0R22`).
    pub part: String,
    pub count: u32,
    /// Line in the file (1-based, the header is line 1).
    pub line: u64,
    /// The `position` column (`converter` when absent).
    pub position: Position,
}

/// Header names read as the `part` column, in order of preference.
pub const BOM_PART_HEADERS: &[&str] = &["part", "part_number", "item"];
/// Header names read as the `count` column, in order of preference.
pub const BOM_COUNT_HEADERS: &[&str] = &["count", "qty", "quantity"];

/// A bill of materials as read from CSV, every row with its position.
/// Rows of the same part and position are summed.
pub fn read_bom_rows(path: &Path) -> Result<Vec<BomRow>> {
    let src = path.display().to_string();
    let bytes = std::fs::read(path)
        .map_err(|e| anyhow::anyhow!("{src}: cannot read the bill of materials: {e}"))?;
    let text = String::from_utf8(bytes).map_err(|e| {
        let (line, column) =
            crate::catalog::text_position(e.as_bytes(), e.utf8_error().valid_up_to());
        anyhow::anyhow!(
            "{src}: line {line}, column {column}: not UTF-8 text; a bill of materials is CSV text"
        )
    })?;
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
    if text.trim().is_empty() {
        bail!(
            "{src}: line 1: the bill of materials is empty (it needs columns `part` and `count`)"
        );
    }
    let mut rdr = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(true)
        .from_reader(text.as_bytes());
    let headers: Vec<String> = rdr
        .headers()
        .map_err(|e| anyhow::anyhow!("{src}: line 1: {e}"))?
        .iter()
        .map(|h| crate::sheet::normalise_header(h))
        .collect();
    let find = |names: &[&str]| {
        names
            .iter()
            .find_map(|n| headers.iter().position(|h| h == n))
    };
    let pc = find(BOM_PART_HEADERS).ok_or_else(|| {
        anyhow::anyhow!(
            "{src}: line 1: column `part` is missing (also read as `part number`, `item`; have: {})",
            headers.join(", ")
        )
    })?;
    let cc = find(BOM_COUNT_HEADERS).ok_or_else(|| {
        anyhow::anyhow!(
            "{src}: line 1: column `count` is missing (also read as `qty`, `quantity`; have: {})",
            headers.join(", ")
        )
    })?;
    let pos_col = find(&["position"]);
    let mut out: Vec<BomRow> = Vec::new();
    let mut lines = crate::catalog::LineCounter::new(text.as_bytes());
    for rec in rdr.records() {
        let rec =
            rec.map_err(|e| anyhow::anyhow!("{src}: line {}: {e}", lines.line(e.position())))?;
        let line = lines.line(rec.position());
        if rec.iter().all(|f| f.is_empty()) {
            continue;
        }
        let part = rec.get(pc).unwrap_or("").to_string();
        if part.is_empty() {
            bail!(
                "{src}: line {line}, column {} (part): empty part id",
                pc + 1
            );
        }
        let cs = rec.get(cc).unwrap_or("");
        if cs.is_empty() {
            bail!(
                "{src}: line {line}, column {} (count): the count of `{part}` is empty",
                cc + 1
            );
        }
        // A spreadsheet writes whole counts as `2.0`: that is 2.
        let count = cs
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite() && *v >= 0.0 && v.fract() == 0.0)
            .ok_or_else(|| {
                anyhow::anyhow!(
                    "{src}: line {line}, column {} (count): `{cs}` is not a whole number of parts",
                    cc + 1
                )
            })?;
        if count > MAX_COUNT_PER_PART as f64 {
            bail!("{src}: line {line}, column {} (count): more than {MAX_COUNT_PER_PART} of one part is not a bank", cc + 1);
        }
        let count = count as u32;
        let position = match pos_col.and_then(|c| rec.get(c)).map(str::trim) {
            None | Some("") => Position::Converter,
            Some(t) => Position::parse(t).ok_or_else(|| {
                anyhow::anyhow!(
                    "{src}: line {line}, column {} (position): unknown position `{t}` (one of: {})",
                    pos_col.unwrap_or(0) + 1,
                    Position::NAMES.join(", ")
                )
            })?,
        };
        let total = match out
            .iter_mut()
            .find(|e| e.part == part && e.position == position)
        {
            Some(e) => {
                e.count = e.count.saturating_add(count);
                e.count
            }
            None => {
                out.push(BomRow {
                    part,
                    count,
                    line,
                    position,
                });
                count
            }
        };
        if total > MAX_COUNT_PER_PART {
            bail!("{src}: line {line}, column {} (count): more than {MAX_COUNT_PER_PART} of one part is not a bank", cc + 1);
        }
    }
    if out.is_empty() {
        bail!("{src}: line 1: the bill of materials has a header row but lists no parts below it");
    }
    Ok(out)
}

/// A bill of materials of the converter-side bank: (part id, count, line
/// number). Rows in another position are refused until the filter is
/// modelled.
pub fn read_bom(path: &Path) -> Result<Vec<(String, u32, u64)>> {
    let rows = read_bom_rows(path)?;
    if let Some(r) = rows.iter().find(|r| r.position != Position::Converter) {
        bail!(
            "{}: line {}, column `position`: `{}` is in position `{}`: filter positions need the filter model, \
             which this version does not evaluate; list the converter-side bank only",
            path.display(),
            r.line,
            r.part,
            r.position.name()
        );
    }
    Ok(rows
        .into_iter()
        .map(|r| (r.part, r.count, r.line))
        .collect())
}

/// A catalog part whose id differs from `id` only in letter case.
fn case_twin<'a>(problem: &'a Problem, id: &str) -> Option<&'a str> {
    problem
        .catalog
        .parts
        .iter()
        .find(|p| p.id.eq_ignore_ascii_case(id))
        .map(|p| p.id.as_str())
}

/// " (did you mean `X`?)" when a part of that name exists in another case.
fn did_you_mean(problem: &Problem, id: &str) -> String {
    case_twin(problem, id).map_or(String::new(), |t| {
        format!("; did you mean `{t}`? (part ids are case-sensitive)")
    })
}

/// Resolve a bill of materials against the catalog; unknown parts are errors.
pub fn bom_to_bank(
    problem: &Problem,
    bom: &[(String, u32, u64)],
    src: &str,
) -> Result<Vec<(usize, u32)>> {
    let mut out = Vec::new();
    for (id, n, line) in bom {
        let Some(i) = problem.catalog.position(id) else {
            bail!(
                "{src}: line {line}, column `part`: part `{id}` is not in the catalog {}{}",
                problem.catalog.source,
                did_you_mean(problem, id)
            );
        };
        add(&mut out, i, *n);
    }
    Ok(out)
}

/// Evaluate a bank (catalog indices and counts) completely.
pub fn assess(problem: &Problem, bank: &[(usize, u32)]) -> Result<Assessment> {
    let bank: Vec<(usize, u32)> = bank.iter().copied().filter(|&(_, n)| n > 0).collect();
    let parts: Vec<usize> = bank.iter().map(|&(i, _)| i).collect();
    let mut ev = problem.evaluator(&parts);
    let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, &(_, n))| (j, n)).collect();
    if ev.is_empty(&local) {
        bail!("the bank is empty (no part with a count above zero) and the converter has no internal capacitance: the ripple is unbounded");
    }
    Ok(assess_with(problem, &mut ev, &bank, &local))
}

/// As [`assess`], with an evaluator already built over (at least) the bank's parts.
pub fn assess_with(
    problem: &Problem,
    ev: &mut Evaluator,
    bank: &[(usize, u32)],
    local: &[(usize, u32)],
) -> Assessment {
    let s = &problem.scenario;
    let cat = &problem.catalog;
    let ripple_pp = ev.ripple_pp(local, Corner::Worst, Band::Limited);
    let ripple_pp_typical = ev.ripple_pp(local, Corner::Typical, Band::Limited);
    let ripple_pp_full = ev.ripple_pp(local, Corner::Worst, Band::Full);
    let currents = ev.part_currents(local);
    let half = ev.ripple_pp_first(local, ev.n_limited / 2);
    let vout = s.converter.vout.0;
    let mut lines = Vec::new();
    let mut warnings = problem.warnings.clone();
    // The bank's own parts get one note each below; the catalog-wide note
    // would say the same twice.
    warnings.retain(|w| !w.contains(crate::catalog::NO_TOLERANCE));
    let mut checks = Vec::new();
    let (mut cost, mut area, mut count) = (0.0, 0.0, 0u32);
    let (mut cn, mut cmax, mut ceff, mut ctyp, mut climit) = (0.0, 0.0, 0.0, 0.0, 0.0);
    let mut area_known = true;
    for (j, &(i, n)) in bank.iter().enumerate() {
        let p = &cat.parts[i];
        let nf = n as f64;
        cost += nf * p.cost;
        match p.area {
            Some(a) => area += nf * a,
            None => area_known = false,
        }
        count += n;
        cn += nf * p.capacitance;
        cmax += nf * p.c_nominal_max();
        ceff += nf * p.c_worst(vout);
        ctyp += nf * p.c_typical(vout);
        climit += nf * cap_limit_value(s, p);
        lines.push(BankLine {
            part: p.id.clone(),
            count: n,
            technology: p.technology.name().into(),
            case: p.case.clone(),
            capacitance_nominal: p.capacitance,
            capacitance_typical: p.c_typical(vout),
            capacitance_worst: p.c_worst(vout),
            esr: p.esr,
            esl: p.esl,
            rated_voltage: p.rated_voltage,
            unit_cost: p.cost,
            line_total_cost: nf * p.cost,
            unit_area: p.area,
            height: p.height,
            ripple_current_rms: currents[j],
            ripple_current_rating: p.ripple_current,
            status: p.status.name().into(),
        });
        // Per-part rules (the same as eligibility, as checks and warnings).
        if p.technology.polarised() {
            warnings.push(format!(
                "{} is a polarised {} capacitor: mind its orientation, never reverse-bias it{}",
                p.id,
                p.technology.name(),
                if p.technology == crate::catalog::Technology::Tantalum {
                    ", and follow the maker's surge-current and voltage-derating rules"
                } else {
                    ""
                }
            ));
        }
        let der = s.derating(p.technology);
        checks.push(Check {
            name: format!("voltage {}", p.id),
            value: vout,
            limit: p.rated_voltage * der,
            unit: "V".into(),
            ok: p.rated_voltage * der >= vout,
        });
        let (tmin, tmax) = p.temperature_range();
        if let Some(t) = tmin {
            checks.push(Check {
                name: format!("temperature_min {}", p.id),
                value: t,
                limit: s.environment.temperature_min,
                unit: "°C".into(),
                ok: t <= s.environment.temperature_min,
            });
        }
        if let Some(t) = tmax {
            checks.push(Check {
                name: format!("temperature_max {}", p.id),
                value: t,
                limit: s.environment.temperature_max,
                unit: "°C".into(),
                ok: t >= s.environment.temperature_max,
            });
        }
        if let (Some(h), Some(ph)) = (s.board.max_height, p.height) {
            checks.push(Check {
                name: format!("height {}", p.id),
                value: ph,
                limit: h.0,
                unit: "mm".into(),
                ok: ph <= h.0,
            });
        }
        if let Some(r) = p.ripple_current {
            checks.push(Check {
                name: format!("ripple_current {}", p.id),
                value: currents[j],
                limit: r,
                unit: "A".into(),
                ok: currents[j] <= r,
            });
        }
        match p.status {
            Status::Obsolete => warnings.push(format!("{} is obsolete", p.id)),
            Status::Nrnd if !s.selection.allow_nrnd => warnings.push(format!(
                "{} is not recommended for new designs (nrnd)",
                p.id
            )),
            _ => {}
        }
        if s.selection.exclude.contains(&p.id) {
            warnings.push(format!("{} is on the scenario's exclude list", p.id));
        }
        if !p.tolerance_given {
            warnings.push(format!(
                "{}: no tolerance in the catalog; 20 % assumed",
                p.id
            ));
        }
        if n > s.selection.max_per_part {
            checks.push(Check {
                name: format!("max_per_part {}", p.id),
                value: nf,
                limit: s.selection.max_per_part as f64,
                unit: "".into(),
                ok: false,
            });
        }
    }
    // The worst corner is the low-capacitance one (SPEC §4); a bank whose
    // ripple grows with capacitance (ESL- and ESR-dominated) is flagged.
    if ripple_pp_typical > s.target.ripple_pp.0 {
        warnings.push(format!(
            "at the typical corner (nominal capacitance with DC bias) the ripple is {:.3} mV, ABOVE the target \
             of {:.3} mV: this bank's ripple rises with capacitance (ESL/ESR-dominated); pass/fail is judged at \
             the worst corner; set selection.check_typical = true to require both",
            ripple_pp_typical * 1e3,
            s.target.ripple_pp.0 * 1e3
        ));
    } else if ripple_pp_typical > ripple_pp * 1.005 {
        warnings.push(format!(
            "the typical corner ripples more than the worst corner ({:.3} mV against {:.3} mV): the ripple \
             is set mostly by ESL and ESR here, so more capacitance does not lower it",
            ripple_pp_typical * 1e3,
            ripple_pp * 1e3
        ));
    }
    // Convergence of the truncated series (common practice, no source: a
    // figure that still moves by over 2 % when the harmonics are halved has
    // not converged).
    if ev.n_limited >= 8 && ripple_pp.is_finite() && ripple_pp > 0.0 {
        let moved = (ripple_pp - half).abs() / ripple_pp;
        if moved > 0.02 {
            warnings.push(format!(
                "the ripple changes by {:.1} % between {} and {} harmonics: the series has not converged \
                 (fast edges through ESL); raise target.harmonics (up to 20000) to check",
                moved * 100.0,
                ev.n_limited / 2,
                ev.n_limited
            ));
        }
    }
    let nlines = bank.len() as u32;
    let parts_cost = cost;
    cost += nlines as f64 * s.selection.line_cost.0;
    checks.insert(
        0,
        Check {
            name: "ripple_pp".into(),
            value: ripple_pp,
            limit: s.target.ripple_pp.0,
            unit: "V".into(),
            ok: ripple_pp <= s.target.ripple_pp.0,
        },
    );
    if s.selection.margin.0 > 0.0 {
        checks.push(Check {
            name: "ripple_pp with margin".into(),
            value: ripple_pp,
            limit: s.design_target(),
            unit: "V".into(),
            ok: ripple_pp <= s.design_target(),
        });
    }
    if s.selection.check_typical {
        checks.push(Check {
            name: "ripple_pp_typical".into(),
            value: ripple_pp_typical,
            limit: s.target.ripple_pp.0,
            unit: "V".into(),
            ok: ripple_pp_typical <= s.target.ripple_pp.0,
        });
    }
    if let Some(m) = s.converter.max_capacitance {
        checks.push(Check {
            name: "max_capacitance".into(),
            value: climit,
            limit: m.0,
            unit: "F".into(),
            ok: climit <= m.0 * (1.0 + 1e-12),
        });
    }
    if s.converter.min_capacitance.0 > 0.0 {
        let m = s.converter.min_capacitance.0;
        checks.push(Check {
            name: "min_capacitance".into(),
            value: ceff,
            limit: m,
            unit: "F".into(),
            ok: ceff >= m,
        });
    }
    if let Some(m) = s.board.max_count {
        checks.push(Check {
            name: "max_count".into(),
            value: count as f64,
            limit: m as f64,
            unit: "".into(),
            ok: count <= m,
        });
    }
    checks.push(Check {
        name: "max_lines".into(),
        value: nlines as f64,
        limit: s.max_lines() as f64,
        unit: "".into(),
        ok: nlines <= s.max_lines(),
    });
    if let Some(m) = s.board.max_area {
        if area_known {
            checks.push(Check {
                name: "max_area".into(),
                value: area,
                limit: m.0,
                unit: "mm²".into(),
                ok: area <= m.0 * (1.0 + 1e-12),
            });
        } else {
            warnings.push("some parts have no area: board.max_area cannot be checked".into());
        }
    }
    for (id, &req) in &s.selection.require {
        let have = bank
            .iter()
            .find(|(i, _)| &cat.parts[*i].id == id)
            .map_or(0, |b| b.1);
        checks.push(Check {
            name: format!("require {id}"),
            value: have as f64,
            limit: req as f64,
            unit: "".into(),
            ok: have >= req,
        });
    }
    let corners = problem
        .ops
        .iter()
        .map(|op| CornerInfo {
            vin: op.vin,
            duty: op.duty,
            mode: op.mode.into(),
            ripple_frequency: op.f_ripple,
            current_pp: op.current_pp,
        })
        .collect();
    let meets_target = ripple_pp <= s.target.ripple_pp.0;
    let all_ok = checks.iter().all(|c| c.ok);
    Assessment {
        bank: lines,
        ripple_pp,
        ripple_pp_typical,
        ripple_pp_full_bandwidth: ripple_pp_full,
        target_ripple_pp: s.target.ripple_pp.0,
        bandwidth: s.target.bandwidth.map(|b| b.0),
        harmonics: ev.n_limited,
        cost,
        parts_cost,
        area,
        area_known,
        count,
        lines: nlines,
        capacitance_nominal_total: cn,
        capacitance_max_total: cmax,
        capacitance_effective_total: ceff,
        capacitance_typical_total: ctyp,
        ripple_current: bank
            .iter()
            .enumerate()
            .map(|(j, &(i, _))| PartCurrent {
                part: cat.parts[i].id.clone(),
                rms: currents[j],
                rating: cat.parts[i].ripple_current,
            })
            .collect(),
        checks,
        corners,
        meets_target,
        all_ok,
        warnings,
    }
}
