//! A filtered design as the user writes it: `assess --inductor`,
//! `--load-bank` and `--damping`, or a bill of materials with a `position`
//! column. Both become a [`FilterDesign`]; every error names the argument,
//! or the file, line and column.
//!
//! Syntax:
//! - `--inductor PART[=N]`: the filter inductor from the inductor catalog;
//!   `N` equal inductors in parallel (default 1; inductors in series are not
//!   modelled).
//! - `--load-bank "PART=N,PART=N"`: the load-side bank, written like `--bank`.
//! - `--damping "R,PART[=N]"`: the damping leg, a resistor of value `R` in
//!   series with `N` capacitors `PART` in parallel (default 1). `R` is a
//!   resistance as anywhere else: `0R22` (RKM code), `220m`, `0.22`,
//!   `220mOhm`. A colon may stand for the comma (`0R22:PART=2`).
//! - A bill of materials: rows with `position` `converter` (or no
//!   position), `inductor` (one inductor part; its count is N), `load`, and
//!   `damping` (one capacitor part, and the resistor as one row whose `part`
//!   is its value, `R 0R22`, count 1).

use super::{add, did_you_mean, parse_bank_arg_as, BomRow, Position, MAX_COUNT_PER_PART};
use crate::filter::{DampingLeg, FilterDesign};
use crate::problem::Problem;
use crate::units::{self, Unit};
use anyhow::{bail, Result};

/// The most equal inductors in parallel a design may name.
pub const MAX_PARALLEL_INDUCTORS: u32 = 8;

/// The highest damping resistance read as plausible, Ω: a damping resistor
/// is near the filter's characteristic impedance sqrt(L/C), milliohms to
/// ohms.
pub const MAX_DAMPING_RESISTANCE: f64 = 1e3;

/// The filter arguments of `assess` as given on the command line.
#[derive(Debug, Clone, Copy, Default)]
pub struct FilterArgs<'a> {
    /// `--inductor PART[=N]`.
    pub inductor: Option<&'a str>,
    /// `--load-bank "PART=N,…"`.
    pub load_bank: Option<&'a str>,
    /// `--damping "R,PART[=N]"`.
    pub damping: Option<&'a str>,
}

impl FilterArgs<'_> {
    /// Whether any filter argument is given.
    pub fn any(&self) -> bool {
        self.inductor.is_some() || self.load_bank.is_some() || self.damping.is_some()
    }
}

/// The inductor catalog, or an error saying how to give one.
fn inductor_catalog<'p>(
    problem: &'p Problem,
    who: &str,
) -> Result<&'p crate::inductors::InductorCatalog> {
    problem.inductors.as_ref().ok_or_else(|| {
        anyhow::anyhow!(
            "{who}: no inductor catalog is loaded; give --inductors FILE or set [filter] inductors in the scenario"
        )
    })
}

/// The index of inductor `id`, or an error naming `who` and suggesting a
/// near id (another letter case; a capacitor given as the inductor).
fn find_inductor(problem: &Problem, id: &str, who: &str) -> Result<usize> {
    let lc = inductor_catalog(problem, who)?;
    if let Some(i) = lc.position(id) {
        return Ok(i);
    }
    let hint = if let Some(l) = lc.parts.iter().find(|l| l.id.eq_ignore_ascii_case(id)) {
        format!("; did you mean `{}`? (part ids are case-sensitive)", l.id)
    } else if problem.catalog.get(id).is_some() {
        "; it is a capacitor of the parts catalog, not an inductor".to_string()
    } else {
        String::new()
    };
    bail!(
        "{who}: inductor `{id}` is not in the inductor catalog {}{hint}",
        lc.source
    )
}

/// A whole count from 1 to `max`, or an error naming `who`.
fn count(text: &str, of: &str, max: u32, who: &str) -> Result<u32> {
    let t = text.trim();
    let n: u32 = t
        .parse()
        .map_err(|_| anyhow::anyhow!("{who}: count `{t}` of `{of}` is not a whole number"))?;
    if n == 0 || n > max {
        bail!("{who}: count {n} of `{of}` must be from 1 to {max}");
    }
    Ok(n)
}

/// A damping resistance as written (`0R22`, `220m`, `0.22`, `220mOhm`), Ω.
pub fn parse_damping_resistance(text: &str, who: &str) -> Result<f64> {
    let t = text.trim();
    let r = units::parse(t, Unit::Ohm)
        .map_err(|e| anyhow::anyhow!("{who}: resistor `{t}`: {}", e.0))?;
    if !(r > 0.0) || !r.is_finite() {
        bail!("{who}: resistor `{t}` must be above zero ohms");
    }
    if r > MAX_DAMPING_RESISTANCE {
        bail!(
            "{who}: resistor `{t}` is {}, far above any damping resistor of a power rail's filter (near sqrt(L/C), \
             milliohms to ohms){}",
            units::format_si(r, "Ω"),
            if units::is_bare(t) {
                format!("; bare numbers are ohms — did you mean \"{t}m\"?")
            } else {
                String::new()
            }
        );
    }
    Ok(r)
}

/// The capacitor of a damping leg: `PART[=N]`.
fn damping_capacitor(problem: &Problem, text: &str, who: &str) -> Result<(usize, u32)> {
    let (id, n) = match text.split_once('=') {
        Some((id, n)) => (id.trim(), count(n, id.trim(), MAX_COUNT_PER_PART, who)?),
        None => (text.trim(), 1),
    };
    if id.is_empty() {
        bail!("{who}: the damping capacitor's part is empty (write R,PART or R,PART=N)");
    }
    let Some(i) = problem.catalog.position(id) else {
        let also = if problem
            .inductors
            .as_ref()
            .is_some_and(|l| l.get(id).is_some())
        {
            "; it is an inductor, and the damping leg's part is a capacitor"
        } else {
            ""
        };
        bail!(
            "{who}: part `{id}` is not in the catalog {}{}{also}",
            problem.catalog.source,
            did_you_mean(problem, id)
        );
    };
    Ok((i, n))
}

/// `--damping "R,PART[=N]"` (or `R:PART[=N]`) as a damping leg.
pub fn parse_damping_arg(problem: &Problem, text: &str) -> Result<DampingLeg> {
    let who = "--damping";
    let Some(at) = text.find([',', ':']) else {
        bail!(
            "{who}: `{}` is not of the form R,PART (a resistor value and the damping capacitor's part, e.g. \
             0R22,PART or 220m,PART=2)",
            text.trim()
        );
    };
    let (r, rest) = (&text[..at], &text[at + 1..]);
    if rest.contains([',', ':']) {
        bail!(
            "{who}: `{}`: one resistor and one capacitor part (R,PART=N); a leg of several capacitor parts is not \
             modelled",
            text.trim()
        );
    }
    let resistance = parse_damping_resistance(r, who)?;
    let (capacitor, count) = damping_capacitor(problem, rest, who)?;
    Ok(DampingLeg {
        resistance,
        capacitor,
        count,
    })
}

/// `--inductor PART[=N]`: the inductor's index and how many in parallel.
pub fn parse_inductor_arg(problem: &Problem, text: &str) -> Result<(usize, u32)> {
    let who = "--inductor";
    let (id, n) = match text.split_once('=') {
        Some((id, n)) => (id.trim(), count(n, id.trim(), MAX_PARALLEL_INDUCTORS, who)?),
        None => (text.trim(), 1),
    };
    if id.is_empty() {
        bail!("{who}: no inductor given (write PART or PART=N)");
    }
    Ok((find_inductor(problem, id, who)?, n))
}

/// The filter of `assess --inductor … --load-bank … [--damping …]`, or
/// `None` when none of them is given. A load-side bank or a damping leg
/// needs the inductor, and the inductor needs a load-side bank.
pub fn parse_filter_args(
    problem: &Problem,
    inductor: Option<&str>,
    load_bank: Option<&str>,
    damping: Option<&str>,
) -> Result<Option<FilterDesign>> {
    let Some(ind) = inductor else {
        if load_bank.is_some() || damping.is_some() {
            bail!(
                "{}: a filter needs its inductor: give --inductor PART as well",
                if load_bank.is_some() {
                    "--load-bank"
                } else {
                    "--damping"
                }
            );
        }
        return Ok(None);
    };
    let (inductor, count) = parse_inductor_arg(problem, ind)?;
    let Some(lb) = load_bank else {
        bail!(
            "--inductor: a filter needs its load-side bank: give --load-bank \"PART=N,…\" (the capacitors after the \
             inductor)"
        );
    };
    let load_bank = parse_bank_arg_as(problem, lb, "--load-bank")?;
    if load_bank.iter().all(|b| b.1 == 0) {
        bail!("--load-bank: every count is zero: the filter has no load-side bank");
    }
    let damping = damping.map(|d| parse_damping_arg(problem, d)).transpose()?;
    Ok(Some(FilterDesign {
        inductor,
        count,
        load_bank,
        damping,
    }))
}

/// The damping resistor of a bill-of-materials row: its `part` is its
/// value, `R 0R22` (the `R ` prefix optional: `0R22`, `220m`).
fn bom_resistor(part: &str) -> Option<&str> {
    let t = part.trim();
    match t.strip_prefix(['R', 'r']) {
        Some(rest) if rest.starts_with([' ', '\t']) => Some(rest.trim()),
        _ => None,
    }
}

/// A bill of materials (rows from [`super::read_bom_rows`]) as the
/// converter-side bank and the filter, if any rows are in a filter
/// position. `src` names the file in messages.
pub fn bom_to_design(
    problem: &Problem,
    rows: &[BomRow],
    src: &str,
) -> Result<(Vec<(usize, u32)>, Option<FilterDesign>)> {
    let mut bank = Vec::new();
    let mut load = Vec::new();
    let mut inductor: Option<(usize, u32, u64)> = None;
    let mut resistor: Option<(f64, u64)> = None;
    let mut dcap: Option<(usize, u32, u64)> = None;
    let at = |r: &BomRow, col: &str| format!("{src}: line {}, column `{col}`", r.line);
    for r in rows {
        match r.position {
            Position::Converter | Position::Load => {
                let Some(i) = problem.catalog.position(&r.part) else {
                    let hint = if problem
                        .inductors
                        .as_ref()
                        .is_some_and(|l| l.get(&r.part).is_some())
                    {
                        "; it is an inductor: give it position `inductor`".to_string()
                    } else {
                        did_you_mean(problem, &r.part)
                    };
                    bail!(
                        "{}: part `{}` is not in the catalog {}{hint}",
                        at(r, "part"),
                        r.part,
                        problem.catalog.source
                    );
                };
                let into = if r.position == Position::Load {
                    &mut load
                } else {
                    &mut bank
                };
                add(into, i, r.count);
            }
            Position::Inductor => {
                if let Some((_, _, line)) = inductor {
                    bail!(
                        "{}: a second inductor row (the first is on line {line}): a filter has one inductor part",
                        at(r, "position")
                    );
                }
                let i = find_inductor(problem, &r.part, &at(r, "part"))?;
                if r.count == 0 || r.count > MAX_PARALLEL_INDUCTORS {
                    bail!(
                        "{}: {} inductors in parallel; from 1 to {MAX_PARALLEL_INDUCTORS}",
                        at(r, "count"),
                        r.count
                    );
                }
                inductor = Some((i, r.count, r.line));
            }
            Position::Damping => {
                let is_capacitor = problem.catalog.position(&r.part);
                match (is_capacitor, bom_resistor(&r.part)) {
                    (Some(i), _) => {
                        if let Some((_, _, line)) = dcap {
                            bail!(
                                "{}: a second damping capacitor part (the first is on line {line}): the damping leg \
                                 has one capacitor part",
                                at(r, "part")
                            );
                        }
                        if r.count == 0 {
                            bail!("{}: the damping capacitor's count is zero", at(r, "count"));
                        }
                        dcap = Some((i, r.count, r.line));
                    }
                    (None, resistor_text) => {
                        let Some(text) = resistor_text.or_else(|| {
                            units::parse(&r.part, Unit::Ohm)
                                .ok()
                                .map(|_| r.part.as_str())
                        }) else {
                            bail!(
                                "{}: `{}` in position `damping` is neither a capacitor of the catalog {} nor a \
                                 resistor written as its value (`R 0R22`, `R 220m`){}",
                                at(r, "part"),
                                r.part,
                                problem.catalog.source,
                                did_you_mean(problem, &r.part)
                            );
                        };
                        if let Some((_, line)) = resistor {
                            bail!(
                                "{}: a second damping resistor (the first is on line {line}): the leg has one \
                                 resistor; give parallel resistors as their combined value",
                                at(r, "part")
                            );
                        }
                        if r.count != 1 {
                            bail!(
                                "{}: the damping resistor's count is {}; the leg has one resistor (give parallel \
                                 resistors as their combined value)",
                                at(r, "count"),
                                r.count
                            );
                        }
                        resistor = Some((parse_damping_resistance(text, &at(r, "part"))?, r.line));
                    }
                }
            }
        }
    }
    let has_filter_rows =
        !load.is_empty() || inductor.is_some() || resistor.is_some() || dcap.is_some();
    if !has_filter_rows {
        return Ok((bank, None));
    }
    let Some((inductor, count, iline)) = inductor else {
        bail!(
            "{src}: line 1, column `position`: rows in position `load` or `damping` but no row in position \
             `inductor`: a filter needs its inductor"
        );
    };
    if load.iter().all(|b| b.1 == 0) {
        bail!(
            "{src}: line {iline}, column `position`: an inductor but no load-side bank (rows in position `load`): \
             a filter needs the capacitors after its inductor"
        );
    }
    let damping = match (resistor, dcap) {
        (None, None) => None,
        (Some((resistance, _)), Some((capacitor, n, _))) => Some(DampingLeg {
            resistance,
            capacitor,
            count: n,
        }),
        (Some((_, line)), None) => bail!(
            "{src}: line {line}, column `position`: a damping resistor but no damping capacitor (a catalog part in \
             position `damping`)"
        ),
        (None, Some((_, _, line))) => bail!(
            "{src}: line {line}, column `position`: a damping capacitor but no damping resistor (a row `R 0R22` in \
             position `damping`)"
        ),
    };
    Ok((
        bank,
        Some(FilterDesign {
            inductor,
            count,
            load_bank: load,
            damping,
        }),
    ))
}
