//! Everything the reports say about one bank: the ripple at every corner,
//! the currents, the totals and every limit, computed by the evaluator.

use crate::catalog::{Part, Status};
use crate::evaluator::{Band, Evaluator};
use crate::limits::{self, LimitId, Totals};
use crate::problem::{cap_limit_value, Problem};
use crate::region::{self, Named};
use crate::scenario::Scenario;
use anyhow::{bail, Result};
use serde::Serialize;
use std::path::Path;

mod filter_args;
pub use filter_args::{
    bom_to_design, parse_damping_arg, parse_damping_resistance, parse_filter_args,
    parse_inductor_arg, FilterArgs, MAX_DAMPING_RESISTANCE, MAX_PARALLEL_INDUCTORS,
};

/// One line of a bank with its details.
#[derive(Debug, Clone, Serialize)]
pub struct BankLine {
    /// Catalog part id.
    pub part: String,
    /// How many of the part are placed.
    pub count: u32,
    /// Technology name as in the catalog's `technology` column.
    pub technology: String,
    /// Case code, if the catalog gives one.
    pub case: Option<String>,
    /// Nominal capacitance of one part, F.
    pub capacitance_nominal: f64,
    /// Capacitance of one part at the typical corner (nominal with DC bias), F.
    pub capacitance_typical: f64,
    /// Capacitance of one part at the low corner, F.
    pub capacitance_worst: f64,
    /// ESR of one part (catalog maximum), Ω.
    pub esr: f64,
    /// ESL of one part, H.
    pub esl: f64,
    /// Rated DC voltage, V.
    pub rated_voltage: f64,
    /// Cost of one part.
    pub unit_cost: f64,
    /// Cost of the whole line (count × unit cost).
    pub line_total_cost: f64,
    /// Footprint of one part, mm², if known.
    pub unit_area: Option<f64>,
    /// Height, mm, if known.
    pub height: Option<f64>,
    /// RMS ripple current in one part, A.
    pub ripple_current_rms: f64,
    /// The part's RMS ripple-current rating, A, if given.
    pub ripple_current_rating: Option<f64>,
    /// Life-cycle status (`active`, `nrnd`, `obsolete`).
    pub status: String,
}

/// RMS ripple current of one part of a line, with its rating.
#[derive(Debug, Clone, Serialize)]
pub struct PartCurrent {
    /// Catalog part id.
    pub part: String,
    /// RMS current in one part, A.
    pub rms: f64,
    /// The part's rating, A, if the catalog gives one.
    pub rating: Option<f64>,
}

/// A limit and whether the bank keeps it.
#[derive(Debug, Clone, Serialize)]
pub struct Check {
    /// What is checked, e.g. `ripple_pp` or `voltage PART`.
    pub name: String,
    /// The bank's figure.
    pub value: f64,
    /// The limit it is held to.
    pub limit: f64,
    /// Unit of `value` and `limit` (`V`, `F`, `A`, `mm²`, `°C` or empty).
    pub unit: String,
    /// True when the bank keeps the limit.
    pub ok: bool,
    /// The part a per-part check belongs to; `None` for checks of the whole bank.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub part: Option<String>,
    /// Which side of the limit the value must stay on.
    pub bound: Bound,
}

/// The direction of a check: `value ≤ limit` or `value ≥ limit`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Bound {
    /// The value must not exceed the limit.
    AtMost,
    /// The value must reach the limit.
    AtLeast,
}

/// A named corner for `assess --corner` (`worst` is the whole corner region).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, clap::ValueEnum)]
#[serde(rename_all = "lowercase")]
pub enum NamedCorner {
    /// The largest ripple over the whole corner region (the default).
    #[default]
    Worst,
    /// Every line at its lowest capacitance and highest ESR, nominal inductance.
    Low,
    /// Every line at its highest capacitance and lowest ESR, nominal inductance.
    High,
    /// Nominal capacitance with DC bias, the catalog ESR, nominal inductance.
    Typical,
}

impl NamedCorner {
    /// The name as written on the command line and in JSON.
    pub fn name(self) -> &'static str {
        match self {
            NamedCorner::Worst => "worst",
            NamedCorner::Low => "low",
            NamedCorner::High => "high",
            NamedCorner::Typical => "typical",
        }
    }
}

/// How a bank is assessed.
#[derive(Debug, Clone, Copy, Default)]
pub struct AssessOptions {
    /// Which corner pass/fail is judged at.
    pub corner: NamedCorner,
}

/// One input-voltage corner of the converter.
#[derive(Debug, Clone, Serialize)]
pub struct CornerInfo {
    /// Input voltage of the corner, V (`None` for a module).
    pub vin: Option<f64>,
    /// Duty cycle at this corner.
    pub duty: f64,
    /// Conduction mode (`CCM`, `DCM`) where the topology has one; else `None` (JSON null).
    pub mode: Option<String>,
    /// Fundamental frequency of the current into the bank, Hz.
    pub ripple_frequency: f64,
    /// Peak-to-peak current into the bank, A.
    pub current_pp: f64,
}

/// One line at the worst point of the corner region.
#[derive(Debug, Clone, Serialize)]
pub struct WorstLine {
    /// Part id.
    pub part: String,
    /// Capacitance of each part of the line there, F.
    pub capacitance: f64,
    /// ESR of each part of the line there, Ω.
    pub esr: f64,
}

/// Where in the corner region the largest ripple occurs.
#[derive(Debug, Clone, Serialize)]
pub struct WorstCorner {
    /// Input voltage, V.
    pub vin: Option<f64>,
    /// Converter inductance, H.
    pub inductance: Option<f64>,
    /// Each line's capacitance and ESR.
    pub lines: Vec<WorstLine>,
}

/// The target figure at the named corners, each the largest over the
/// input-voltage range at nominal inductance.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct CornerFigures {
    /// Every line at its lowest capacitance and highest ESR.
    pub low: f64,
    /// Every line at its highest capacitance and lowest ESR.
    pub high: f64,
    /// Nominal capacitance under DC bias, catalog ESR.
    pub typical: f64,
}

/// Everything the reports say about one bank.
#[derive(Debug, Clone, Serialize)]
pub struct Assessment {
    /// The corner pass/fail was judged at (`assess --corner`; default `worst`).
    pub corner: NamedCorner,
    /// The bank's lines.
    pub bank: Vec<BankLine>,
    /// Where the largest ripple of the corner region occurs.
    pub worst_corner: WorstCorner,
    /// The named corners' figures.
    pub ripple_pp_corners: CornerFigures,
    /// Ripple at the judged corner, target bandwidth, V.
    pub ripple_pp: f64,
    /// Ripple at the typical corner, target bandwidth, V.
    pub ripple_pp_typical: f64,
    /// Ripple at the judged corner without a bandwidth limit, V.
    pub ripple_pp_full_bandwidth: f64,
    /// The scenario's ripple limit, V.
    pub target_ripple_pp: f64,
    /// Measurement bandwidth, Hz (`None`: full bandwidth).
    pub bandwidth: Option<f64>,
    /// Harmonics summed for the bandwidth-limited figure.
    pub harmonics: usize,
    /// Total cost: parts plus `line_cost` per line.
    pub cost: f64,
    /// Cost of the parts alone.
    pub parts_cost: f64,
    /// Total footprint, mm² (a lower bound when `area_known` is false).
    pub area: f64,
    /// False when a part has no area: `area` is then a lower bound and the
    /// JSON reports null.
    #[serde(skip)]
    pub area_known: bool,
    /// Number of parts.
    pub count: u32,
    /// Number of distinct parts (lines).
    pub lines: u32,
    /// Sum of nominal capacitances, F.
    pub capacitance_nominal_total: f64,
    /// Sum of nominal × (1 + tolerance), F.
    pub capacitance_max_total: f64,
    /// Sum of low-corner capacitances, F.
    pub capacitance_effective_total: f64,
    /// Sum of typical-corner capacitances, F.
    pub capacitance_typical_total: f64,
    /// Effective capacitance of the bank (with the converter's internal
    /// capacitance) at the ripple frequency at the `low` corner,
    /// 1/(ω·|Im Z|), F; null when the bank is inductive there
    /// ([`capacitance_at_ripple`]).
    pub capacitance_at_ripple_frequency: Option<f64>,
    /// The ripple frequency, Hz.
    pub ripple_frequency: f64,
    /// Ripple current of each line.
    pub ripple_current: Vec<PartCurrent>,
    /// Every limit and whether it is kept.
    pub checks: Vec<Check>,
    /// The converter's input-voltage corners.
    pub corners: Vec<CornerInfo>,
    /// The ripple meets the target.
    pub meets_target: bool,
    /// The ripple and every limit are met.
    pub all_ok: bool,
    /// Warnings about this bank and the inputs.
    pub warnings: Vec<String>,
    /// The load step's figures (`None` without `[transient]`; JSON null).
    pub transient: Option<crate::transient::StepFigures>,
    /// The post-filter's figures, when the design has one.
    pub filter: Option<crate::filter::FilterAssessment>,
}

/// Effective capacitance of the bank at the ripple frequency at one
/// capacitance corner: `C_eff = 1/(ω·|Im Z_t|)` of the transfer impedance at
/// the first harmonic, taken from the evaluator's `V_1 / (I_1·H_1)` at the
/// first input-voltage corner (the impedance does not depend on it). Below
/// self-resonance the ESL cancels part of the capacitive reactance,
/// `Im Z = −(1/(ωC) − ωL)`, so `C_eff = C/(1 − ω²LC)` is above `C`. `None`
/// when the impedance is inductive there (above self-resonance) or the
/// current has no first harmonic.
pub fn capacitance_at_ripple(
    ev: &mut Evaluator,
    bank: &[(usize, u32)],
    corner: crate::evaluator::Corner,
) -> Option<f64> {
    if ev.vin_corners() == 0 || ev.n_limited == 0 || ev.is_empty(bank) {
        return None;
    }
    let v1 = *ev.harmonic_voltages(bank, corner, 0).first()?;
    let drive = ev.currents[0][0] * ev.filter[0];
    if drive.norm() <= 0.0 {
        return None;
    }
    let z = v1 / drive;
    let w = 2.0 * std::f64::consts::PI * ev.freqs[0];
    (z.im < 0.0 && z.is_finite()).then(|| 1.0 / (w * z.im.abs()))
}

/// The most parts of one line a bank may hold (far beyond any real bank; it
/// keeps every count and sum within `u32`).
pub(crate) const MAX_COUNT_PER_PART: u32 = 100_000;

/// Parse `PART=N,PART=N` into catalog indices and counts.
pub fn parse_bank_arg(problem: &Problem, text: &str) -> Result<Vec<(usize, u32)>> {
    parse_bank_arg_as(problem, text, "--bank")
}

/// As [`parse_bank_arg`], with errors naming the argument `arg`
/// (`--load-bank`).
pub(crate) fn parse_bank_arg_as(
    problem: &Problem,
    text: &str,
    arg: &str,
) -> Result<Vec<(usize, u32)>> {
    let mut out: Vec<(usize, u32)> = Vec::new();
    for item in text.split(',').map(str::trim).filter(|s| !s.is_empty()) {
        let Some((id, n)) = item.split_once('=') else {
            bail!("{arg}: `{item}` is not of the form PART=N");
        };
        let (id, n) = (id.trim(), n.trim());
        let n: u32 = n
            .parse()
            .map_err(|_| anyhow::anyhow!("{arg}: count `{n}` of `{id}` is not a whole number"))?;
        let Some(i) = problem.catalog.position(id) else {
            bail!(
                "{arg}: part `{id}` is not in the catalog {}{}",
                problem.catalog.source,
                did_you_mean(problem, id)
            );
        };
        add(&mut out, i, n);
        if out.iter().any(|&(_, n)| n > MAX_COUNT_PER_PART) {
            bail!("{arg}: more than {MAX_COUNT_PER_PART} of `{id}` is not a bank");
        }
    }
    if out.is_empty() {
        bail!("{arg}: no parts given (write PART=N,PART=N)");
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
    /// Every position word, in lower case.
    pub const NAMES: &'static [&'static str] = &["converter", "inductor", "load", "damping"];

    /// The word of the `position` column.
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
    /// Number of parts.
    pub count: u32,
    /// Line in the file (1-based, the header is line 1).
    pub line: u64,
    /// The `position` column (`converter` when absent).
    pub position: Position,
}

/// Header names read as the `part` column, in order of preference.
pub(crate) const BOM_PART_HEADERS: &[&str] = &["part", "part_number", "item"];
/// Header names read as the `count` column, in order of preference.
pub(crate) const BOM_COUNT_HEADERS: &[&str] = &["count", "qty", "quantity"];

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

/// Relative rounding allowed when a ripple figure is compared with its
/// limit (the optimizer's region check uses the same): a module's current is
/// calibrated to its standalone ripple, which the converter alone must then
/// meet at a target equal to it.
pub(crate) const RIPPLE_ROUNDING: f64 = 1e-9;

/// A voltage in millivolts with sensible digits.
fn text_mv(v: f64) -> String {
    crate::units::format_si(v, "V")
}

/// Evaluate a bank (catalog indices and counts) completely, over the whole
/// corner region.
pub fn assess(problem: &Problem, bank: &[(usize, u32)]) -> Result<Assessment> {
    assess_opts(problem, bank, &AssessOptions::default())
}

/// As [`assess`], with options (the corner to judge at).
pub(crate) fn assess_opts(
    problem: &Problem,
    bank: &[(usize, u32)],
    opts: &AssessOptions,
) -> Result<Assessment> {
    let bank: Vec<(usize, u32)> = bank.iter().copied().filter(|&(_, n)| n > 0).collect();
    let parts: Vec<usize> = bank.iter().map(|&(i, _)| i).collect();
    let mut ev = problem.evaluator(&parts);
    let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, &(_, n))| (j, n)).collect();
    if ev.is_empty(&local) {
        bail!("the bank is empty (no part with a count above zero) and the converter has no internal capacitance: the ripple is unbounded");
    }
    Ok(assess_with(problem, &mut ev, &bank, &local, opts))
}

/// As [`assess`], with an evaluator already built over (at least) the bank's parts.
pub(crate) fn assess_with(
    problem: &Problem,
    ev: &mut Evaluator,
    bank: &[(usize, u32)],
    local: &[(usize, u32)],
    opts: &AssessOptions,
) -> Assessment {
    let s = &problem.scenario;
    let fig = ripple_figures(problem, ev, local, opts.corner);
    let currents = region::currents(ev, local, Some(&fig.worst));
    let half = half_series_figure(ev, local, &fig);
    let worst_corner = worst_corner(problem, ev, bank, &fig.worst);
    let mut warnings = input_warnings(problem, opts.corner, &fig.worst);
    let mut sums = bank_sums(problem, bank);
    let lines = bank_lines(problem, bank, &currents);
    let mut checks = vec![ripple_check(s, fig.ripple_pp)];
    for (j, &(i, n)) in bank.iter().enumerate() {
        let p = &problem.catalog.parts[i];
        part_checks(s, p, n, currents[j], &mut checks);
        part_warnings(s, p, &mut warnings);
    }
    region_warnings(s, ev, local, &fig, half, &mut warnings);
    // A post-filter's parts count toward the design's totals (and its
    // load-side capacitance toward the converter's limit when asked).
    let filter = crate::filter::assess_filter(problem, ev, local, &fig.worst, &currents);
    if let Some(f) = &filter {
        add_filter(problem, f, &mut sums);
        checks.extend(crate::filter::filter_checks(problem, f));
    }
    let nlines = bank.len() as u32;
    let parts_cost = sums.cost;
    let cost = parts_cost + nlines as f64 * s.selection.line_cost.0;
    target_checks(s, &fig, &mut checks);
    let transient = load_step_figures(problem, ev, local);
    warnings.extend(winding_warning(s, ev));
    // The linear limits, from the one table of them.
    let totals = Totals {
        cap_limit: sums.c_limit,
        cap_effective: sums.c_effective,
        count: sums.count,
        lines: nlines,
        area: sums.area,
        area_known: sums.area_known,
        deviation: transient.as_ref().map(|t| t.deviation),
    };
    checks.extend(limits::checks(s, &totals));
    if s.board.max_area.is_some() && !sums.area_known {
        warnings.push("some parts have no area: board.max_area cannot be checked".into());
    }
    checks.extend(require_checks(problem, bank));
    let c_at_ripple = capacitance_at_ripple(ev, local, crate::evaluator::Corner::Worst);
    let meets_target = fig.ripple_pp <= s.target.ripple_pp.0 * (1.0 + RIPPLE_ROUNDING);
    let all_ok = checks.iter().all(|c| c.ok);
    Assessment {
        corner: opts.corner,
        bank: lines,
        worst_corner,
        ripple_pp_corners: fig.corners,
        ripple_pp: fig.ripple_pp,
        ripple_pp_typical: fig.corners.typical,
        ripple_pp_full_bandwidth: fig.ripple_pp_full,
        target_ripple_pp: s.target.ripple_pp.0,
        bandwidth: s.target.bandwidth.map(|b| b.0),
        harmonics: ev.n_limited,
        cost,
        parts_cost,
        area: sums.area,
        area_known: sums.area_known,
        count: sums.count,
        lines: nlines,
        capacitance_nominal_total: sums.c_nominal,
        capacitance_max_total: sums.c_max,
        capacitance_effective_total: sums.c_effective,
        capacitance_typical_total: sums.c_typical,
        capacitance_at_ripple_frequency: c_at_ripple,
        ripple_frequency: ev.freqs.first().copied().unwrap_or(0.0),
        ripple_current: ripple_currents(problem, bank, &currents),
        checks,
        corners: corner_infos(problem),
        meets_target,
        all_ok,
        warnings,
        transient,
        filter,
    }
}

/// The ripple figures of a bank: the worst point of the corner region, the
/// named corners and the judged figure in both bands.
struct RippleFigures {
    /// The worst point of the corner region (target bandwidth).
    worst: region::Worst,
    /// The named corners' figures.
    corners: CornerFigures,
    /// The judged figure, target bandwidth, V.
    ripple_pp: f64,
    /// The judged figure, full bandwidth, V.
    ripple_pp_full: f64,
}

fn ripple_figures(
    problem: &Problem,
    ev: &mut Evaluator,
    local: &[(usize, u32)],
    corner: NamedCorner,
) -> RippleFigures {
    let worst = region::worst(problem, ev, local, Band::Limited);
    let named =
        |ev: &mut Evaluator, w: Named| region::named_value(problem, ev, local, w, Band::Limited);
    let corners = CornerFigures {
        low: named(ev, Named::Low),
        high: named(ev, Named::High),
        typical: named(ev, Named::Typical),
    };
    // `assess --corner`: one named corner instead of the whole region.
    let judged = match corner {
        NamedCorner::Worst => None,
        NamedCorner::Low => Some(Named::Low),
        NamedCorner::High => Some(Named::High),
        NamedCorner::Typical => Some(Named::Typical),
    };
    let (ripple_pp, ripple_pp_full) = match judged {
        None => (
            worst.value,
            region::worst(problem, ev, local, Band::Full).value,
        ),
        Some(w) => (
            region::named_value(problem, ev, local, w, Band::Limited),
            region::named_value(problem, ev, local, w, Band::Full),
        ),
    };
    RippleFigures {
        worst,
        corners,
        ripple_pp,
        ripple_pp_full,
    }
}

/// The worst point's figure with half the harmonics (for the convergence
/// warning); the judged figure when the worst point has no states.
fn half_series_figure(ev: &mut Evaluator, local: &[(usize, u32)], fig: &RippleFigures) -> f64 {
    let worst = &fig.worst;
    if worst.states.len() == ev.line_count(local) {
        ev.fill_states(local, &worst.states, ev.n_limited);
        ev.pp_filled_n(worst.op, Band::Limited, ev.n_limited / 2)
    } else {
        fig.ripple_pp
    }
}

fn worst_corner(
    problem: &Problem,
    ev: &Evaluator,
    bank: &[(usize, u32)],
    worst: &region::Worst,
) -> WorstCorner {
    WorstCorner {
        vin: ev.ops.get(worst.op).and_then(|o| o.vin),
        inductance: ev.ops.get(worst.op).and_then(|o| o.inductance),
        lines: bank
            .iter()
            .zip(&worst.states)
            .map(|(&(i, _), st)| WorstLine {
                part: problem.catalog.parts[i].id.clone(),
                capacitance: st.c,
                esr: st.esr,
            })
            .collect(),
    }
}

/// The problem's warnings about the inputs, and the judged corner's.
fn input_warnings(problem: &Problem, corner: NamedCorner, worst: &region::Worst) -> Vec<String> {
    let mut warnings = problem.warnings.clone();
    if corner != NamedCorner::Worst {
        warnings.push(format!(
            "--corner {}: judged at this named corner only, not over the whole corner region (its worst is {})",
            corner.name(),
            text_mv(worst.value)
        ));
    }
    // The bank's own parts get one note each below; the catalog-wide note
    // would say the same twice.
    warnings.retain(|w| !w.contains(crate::catalog::NO_TOLERANCE));
    warnings
}

/// The sums over a bank's lines (and, once added, its post-filter's parts).
#[derive(Default)]
struct BankSums {
    cost: f64,
    area: f64,
    area_known: bool,
    count: u32,
    c_nominal: f64,
    c_max: f64,
    c_effective: f64,
    c_typical: f64,
    c_limit: f64,
}

fn bank_sums(problem: &Problem, bank: &[(usize, u32)]) -> BankSums {
    let s = &problem.scenario;
    let vout = s.converter.vout.0;
    let mut t = BankSums {
        area_known: true,
        ..BankSums::default()
    };
    for &(i, n) in bank {
        let p = &problem.catalog.parts[i];
        let nf = n as f64;
        t.cost += nf * p.cost;
        match p.area {
            Some(a) => t.area += nf * a,
            None => t.area_known = false,
        }
        t.count += n;
        t.c_nominal += nf * p.capacitance;
        t.c_max += nf * p.c_nominal_max();
        t.c_effective += nf * p.c_worst(vout);
        t.c_typical += nf * p.c_typical(vout);
        t.c_limit += nf * cap_limit_value(s, p);
    }
    t
}

/// A post-filter's cost, area and parts into the sums (and its load-side
/// capacitance into the converter's limit when `filter.count_load_side`).
fn add_filter(problem: &Problem, f: &crate::filter::FilterAssessment, t: &mut BankSums) {
    t.cost += f.cost;
    t.area += f.area;
    t.count += f.parts;
    if problem.scenario.filter.count_load_side {
        for &(i, n) in &f.design.load_bank {
            t.c_limit += problem.part_model(i).c_limit * n as f64;
        }
        if let Some(d) = &f.design.damping {
            t.c_limit += problem.part_model(d.capacitor).c_limit * d.count as f64;
        }
    }
}

fn bank_lines(problem: &Problem, bank: &[(usize, u32)], currents: &[f64]) -> Vec<BankLine> {
    let vout = problem.scenario.converter.vout.0;
    bank.iter()
        .zip(currents)
        .map(|(&(i, n), &current)| {
            let p = &problem.catalog.parts[i];
            BankLine {
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
                line_total_cost: n as f64 * p.cost,
                unit_area: p.area,
                height: p.height,
                ripple_current_rms: current,
                ripple_current_rating: p.ripple_current,
                status: p.status.name().into(),
            }
        })
        .collect()
}

/// One per-part row: `value` against `limit` on the side `bound`.
fn part_check(p: &Part, what: &str, bound: Bound, value: f64, limit: f64, unit: &str) -> Check {
    let ok = match bound {
        Bound::AtMost => value <= limit,
        Bound::AtLeast => value >= limit,
    };
    Check {
        name: format!("{what} {}", p.id),
        part: Some(p.id.clone()),
        bound,
        value,
        limit,
        unit: unit.into(),
        ok,
    }
}

/// A part's own rows (the same rules as eligibility, and the table's
/// per-part limits), with `n` of it carrying `current` RMS each.
fn part_checks(s: &Scenario, p: &Part, n: u32, current: f64, checks: &mut Vec<Check>) {
    let vout = s.converter.vout.0;
    let rated = p.rated_voltage * s.derating(p.technology);
    checks.push(part_check(p, "voltage", Bound::AtMost, vout, rated, "V"));
    let env = &s.environment;
    let (tmin, tmax) = p.temperature_range();
    if let Some(t) = tmin {
        checks.push(part_check(
            p,
            "temperature_min",
            Bound::AtMost,
            t,
            env.temperature_min,
            "°C",
        ));
    }
    if let Some(t) = tmax {
        checks.push(part_check(
            p,
            "temperature_max",
            Bound::AtLeast,
            t,
            env.temperature_max,
            "°C",
        ));
    }
    if let (Some(h), Some(ph)) = (s.board.max_height, p.height) {
        checks.push(part_check(p, "height", Bound::AtMost, ph, h.0, "mm"));
    }
    if let Some(r) = p.ripple_current {
        checks.push(part_check(
            p,
            "ripple_current",
            Bound::AtMost,
            current,
            r,
            "A",
        ));
    }
    checks.extend(limits::limit(LimitId::MaxPerPart).check_part(s, &p.id, n));
}

/// A part's own warnings: polarity, life-cycle status, the exclude list,
/// an assumed tolerance.
fn part_warnings(s: &Scenario, p: &Part, warnings: &mut Vec<String>) {
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
}

/// What the corner region says about the bank: where its worst point lies,
/// a typical corner above the target, a series that has not converged.
fn region_warnings(
    s: &Scenario,
    ev: &Evaluator,
    local: &[(usize, u32)],
    fig: &RippleFigures,
    half: f64,
    warnings: &mut Vec<String>,
) {
    let (worst, ripple_pp, corners) = (&fig.worst, fig.ripple_pp, &fig.corners);
    // Where the worst point lies, in words an engineer can act on.
    let at_high = worst
        .states
        .iter()
        .zip(local)
        .filter(|(st, &(j, _))| {
            let p = &ev.parts[j];
            p.c_high > p.c_worst && st.c > 0.5 * (p.c_worst + p.c_high)
        })
        .count();
    if ripple_pp.is_finite() && !worst.states.is_empty() && at_high > 0 {
        let what = if at_high == worst.states.len() {
            "at the high-capacitance corner".to_string()
        } else {
            format!(
                "with {at_high} of {} lines near their highest capacitance",
                worst.states.len()
            )
        };
        warnings.push(format!(
            "the worst ripple ({}) occurs {what}: this bank is ESL-dominated or anti-resonant near a harmonic, \
             so more capacitance does not lower its ripple (low corner {}, high corner {})",
            text_mv(ripple_pp),
            text_mv(corners.low),
            text_mv(corners.high)
        ));
    }
    if corners.typical > s.target.ripple_pp.0 && corners.typical < ripple_pp {
        warnings.push(format!(
            "the typical corner ({}) is above the target ({}) as well as the worst ({})",
            text_mv(corners.typical),
            text_mv(s.target.ripple_pp.0),
            text_mv(ripple_pp)
        ));
    }
    // Convergence of the remaining series (common practice, no source: a
    // figure that still moves by over 2 % when the harmonics are halved has
    // not converged).
    if ev.n_limited >= 8 && ripple_pp.is_finite() && ripple_pp > 0.0 {
        let moved = (ripple_pp - half).abs() / ripple_pp;
        if moved > 0.02 {
            warnings.push(format!(
                "the ripple changes by {:.1} % between {} and {} harmonics: the series has not converged; \
                 raise target.harmonics (up to 4000) to check",
                moved * 100.0,
                ev.n_limited / 2,
                ev.n_limited
            ));
        }
    }
}

/// The target's row of the judged figure.
fn ripple_check(s: &Scenario, ripple_pp: f64) -> Check {
    Check {
        name: "ripple_pp".into(),
        value: ripple_pp,
        limit: s.target.ripple_pp.0,
        unit: "V".into(),
        ok: ripple_pp <= s.target.ripple_pp.0 * (1.0 + RIPPLE_ROUNDING),
        part: None,
        bound: Bound::AtMost,
    }
}

/// The target's further rows: with the design margin, at the typical corner.
fn target_checks(s: &Scenario, fig: &RippleFigures, checks: &mut Vec<Check>) {
    if s.selection.margin.0 > 0.0 {
        checks.push(Check {
            name: "ripple_pp with margin".into(),
            value: fig.ripple_pp,
            limit: s.design_target(),
            unit: "V".into(),
            ok: fig.ripple_pp <= s.design_target() * (1.0 + RIPPLE_ROUNDING),
            part: None,
            bound: Bound::AtMost,
        });
    }
    if s.selection.check_typical {
        let typical = fig.corners.typical;
        checks.push(Check {
            name: "ripple_pp_typical".into(),
            value: typical,
            limit: s.target.ripple_pp.0,
            unit: "V".into(),
            ok: typical <= s.target.ripple_pp.0,
            part: None,
            bound: Bound::AtMost,
        });
    }
}

/// The load step's figures (`None` without `[transient]`).
fn load_step_figures(
    problem: &Problem,
    ev: &Evaluator,
    local: &[(usize, u32)],
) -> Option<crate::transient::StepFigures> {
    let s = &problem.scenario;
    // At the measured node: behind a filter, the load node with the
    // filter's lines in the region.
    crate::transient::figures(s, &ev.parts, local, ev.tail())
}

/// A winding capacitance resonates with the load-side ESL far above the
/// usual harmonics; the full-bandwidth sum reaches past it
/// ([`crate::evaluator::full_band_top`]) unless that would take more than
/// [`crate::evaluator::MAX_HARMONICS_FULL`] harmonics: then say so.
fn winding_warning(s: &Scenario, ev: &Evaluator) -> Option<String> {
    let top = crate::evaluator::full_band_top(ev.tail())?;
    let reached = ev.n_full as f64 * ev.f_ripple;
    (top > reached * (1.0 + 1e-9)).then(|| {
        format!(
            "the full-bandwidth sum stops at {} ({} harmonics), short of {}, twice the bound on the filter \
             inductor's winding-capacitance resonance with the load-side ESL: the full-bandwidth ripple at the \
             load node can read low{}",
            crate::units::format_si(reached, "Hz"),
            ev.n_full,
            crate::units::format_si(top, "Hz"),
            if s.target.bandwidth.is_some() {
                "; the target's band-limited figure is not affected"
            } else {
                "; the target has no bandwidth, so the pass/fail figure is affected: give target.bandwidth"
            }
        )
    })
}

/// The rows of `selection.require`: at least that many of each part.
fn require_checks<'a>(
    problem: &'a Problem,
    bank: &'a [(usize, u32)],
) -> impl Iterator<Item = Check> + 'a {
    problem
        .scenario
        .selection
        .require
        .iter()
        .map(move |(id, &req)| {
            let have = bank
                .iter()
                .find(|(i, _)| &problem.catalog.parts[*i].id == id)
                .map_or(0, |b| b.1);
            Check {
                name: format!("require {id}"),
                part: None,
                bound: Bound::AtLeast,
                value: have as f64,
                limit: req as f64,
                unit: "".into(),
                ok: have >= req,
            }
        })
}

fn ripple_currents(problem: &Problem, bank: &[(usize, u32)], currents: &[f64]) -> Vec<PartCurrent> {
    bank.iter()
        .zip(currents)
        .map(|(&(i, _), &rms)| PartCurrent {
            part: problem.catalog.parts[i].id.clone(),
            rms,
            rating: problem.catalog.parts[i].ripple_current,
        })
        .collect()
}

fn corner_infos(problem: &Problem) -> Vec<CornerInfo> {
    problem
        .ops
        .iter()
        .map(|op| CornerInfo {
            vin: op.vin,
            duty: op.duty,
            mode: (!op.mode.is_empty()).then(|| op.mode.to_string()),
            ripple_frequency: op.f_ripple,
            current_pp: op.current_pp,
        })
        .collect()
}
