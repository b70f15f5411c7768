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
        let first = rows
            .iter()
            .find(|r| matches!(r.position, Position::Load | Position::Damping))
            .map_or(1, |r| r.line);
        bail!(
            "{src}: line {first}, column `position`: a row in position `load` or `damping` but no row in position \
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::load::{self, Overrides};

    const CAP: &str = "RB-C1206-X5R-47U-6V3";
    const CAP2: &str = "RB-C0603-X5R-10U-6V3";
    const IND: &str = "RB-L4040-1U";

    fn demo() -> Problem {
        let o = Overrides {
            need_inductors: true,
            ..Default::default()
        };
        load::problem(None, None, &o).unwrap()
    }

    fn err(r: Result<impl std::fmt::Debug>) -> String {
        format!("{:#}", r.unwrap_err())
    }

    #[test]
    fn command_line_filter_reads_into_a_design() {
        // The syntax documented for assess (README, "Assessing a filtered design").
        let p = demo();
        let f = parse_filter_args(
            &p,
            Some(IND),
            Some(&format!("{CAP}=2,{CAP2}=1")),
            Some(&format!("0R22,{CAP2}=3")),
        )
        .unwrap()
        .unwrap();
        let lc = p.inductors.as_ref().unwrap();
        assert_eq!(lc.parts[f.inductor].id, IND);
        assert_eq!(f.count, 1);
        let c = |id: &str| p.catalog.position(id).unwrap();
        assert_eq!(f.load_bank, vec![(c(CAP), 2), (c(CAP2), 1)]);
        let d = f.damping.unwrap();
        // IEC 60062 RKM code: 0R22 = 0.22 Ω.
        assert!((d.resistance - 0.22).abs() < 1e-15);
        assert_eq!((d.capacitor, d.count), (c(CAP2), 3));
        // Two in parallel; the colon form and SI prefixes; no damping.
        let f = parse_filter_args(
            &p,
            Some(&format!("{IND}=2")),
            Some(&format!("{CAP}=1")),
            Some(&format!("220m:{CAP}")),
        )
        .unwrap()
        .unwrap();
        assert_eq!(f.count, 2);
        let d = f.damping.unwrap();
        assert!((d.resistance - 0.22).abs() < 1e-15 && d.count == 1);
        let f = parse_filter_args(&p, Some(IND), Some(&format!("{CAP}=1")), None)
            .unwrap()
            .unwrap();
        assert_eq!(f.damping, None);
        assert_eq!(parse_filter_args(&p, None, None, None).unwrap(), None);
    }

    #[test]
    fn command_line_filter_errors_name_the_argument() {
        let p = demo();
        let lb = format!("{CAP}=2");
        for (ind, load, damp, want) in [
            (
                None,
                Some(lb.as_str()),
                None,
                "--load-bank: a filter needs its inductor",
            ),
            (
                None,
                None,
                Some("0R22,X"),
                "--damping: a filter needs its inductor",
            ),
            (
                Some(IND),
                None,
                None,
                "--inductor: a filter needs its load-side bank",
            ),
            (
                Some("RB-L4040-1u"),
                Some(&lb),
                None,
                "did you mean `RB-L4040-1U`?",
            ),
            (
                Some(CAP),
                Some(&lb),
                None,
                "it is a capacitor of the parts catalog",
            ),
            (
                Some("RB-L4040-1U=0"),
                Some(&lb),
                None,
                "--inductor: count 0 of `RB-L4040-1U` must be from 1 to 8",
            ),
            (
                Some("RB-L4040-1U=x"),
                Some(&lb),
                None,
                "--inductor: count `x`",
            ),
            (
                Some(IND),
                Some("NOPE=1"),
                None,
                "--load-bank: part `NOPE` is not in the catalog",
            ),
            (
                Some(IND),
                Some(&format!("{CAP}=0")),
                None,
                "--load-bank: every count is zero",
            ),
            (
                Some(IND),
                Some(&lb),
                Some("0R22"),
                "--damping: `0R22` is not of the form R,PART",
            ),
            (
                Some(IND),
                Some(&lb),
                Some("0R22uF,X"),
                "--damping: resistor `0R22uF`",
            ),
            (
                Some(IND),
                Some(&lb),
                Some("0,X"),
                "--damping: resistor `0` must be above zero",
            ),
            (
                Some(IND),
                Some(&lb),
                Some("2200,X"),
                "did you mean \"2200m\"?",
            ),
            (
                Some(IND),
                Some(&lb),
                Some(&format!("0R22,{IND}")),
                "it is an inductor, and the damping leg's part is a capacitor",
            ),
            (
                Some(IND),
                Some(&lb),
                Some(&format!("0R22,{CAP},{CAP2}")),
                "a leg of several capacitor parts",
            ),
            (
                Some(IND),
                Some(&lb),
                Some("0R22,"),
                "the damping capacitor's part is empty",
            ),
        ] {
            let e = err(parse_filter_args(&p, ind, load, damp));
            assert!(e.contains(want), "{ind:?} {load:?} {damp:?}: {e}");
        }
        // Without an inductor catalog the message says how to give one.
        let bare = load::problem(None, None, &Overrides::default()).unwrap();
        assert!(bare.inductors.is_none());
        let e = err(parse_filter_args(&bare, Some(IND), Some(&lb), None));
        assert!(
            e.contains("--inductor: no inductor catalog is loaded; give --inductors"),
            "{e}"
        );
    }

    fn rows(text: &str) -> Result<(Vec<(usize, u32)>, Option<FilterDesign>)> {
        static N: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);
        let dir = std::env::temp_dir().join(format!(
            "ripplebank-bomfilter-{}-{}",
            std::process::id(),
            N.fetch_add(1, std::sync::atomic::Ordering::Relaxed)
        ));
        std::fs::create_dir_all(&dir).unwrap();
        let f = dir.join("bom.csv");
        std::fs::write(&f, text).unwrap();
        let p = demo();
        let r =
            super::super::read_bom_rows(&f).and_then(|rows| bom_to_design(&p, &rows, "bom.csv"));
        std::fs::remove_dir_all(&dir).ok();
        r
    }

    #[test]
    fn bill_of_materials_positions_read_into_a_design() {
        let (bank, f) = rows(&format!(
            "part,count,position\n{CAP},2,converter\n{IND},1,Inductor\n{CAP},3,load\n{CAP2},1,load\n\
             R 0R22,1,damping\n{CAP2},2,damping\n"
        ))
        .unwrap();
        let p = demo();
        let c = |id: &str| p.catalog.position(id).unwrap();
        assert_eq!(bank, vec![(c(CAP), 2)]);
        let f = f.unwrap();
        assert_eq!(p.inductors.as_ref().unwrap().parts[f.inductor].id, IND);
        assert_eq!(f.load_bank, vec![(c(CAP), 3), (c(CAP2), 1)]);
        let d = f.damping.unwrap();
        assert!((d.resistance - 0.22).abs() < 1e-15 && d.capacitor == c(CAP2) && d.count == 2);
        // No position column: the converter-side bank only.
        let (bank, f) = rows(&format!("part,qty\n{CAP},2\n")).unwrap();
        assert_eq!((bank, f), (vec![(c(CAP), 2)], None));
        // A damping resistor written without the `R ` prefix.
        let (_, f) = rows(&format!(
            "part,count,position\n{CAP},2,\n{IND},1,inductor\n{CAP},3,load\n220m,1,damping\n{CAP2},1,damping\n"
        ))
        .unwrap();
        assert!((f.unwrap().damping.unwrap().resistance - 0.22).abs() < 1e-15);
    }

    #[test]
    fn the_written_bill_of_materials_reads_back_as_the_same_design() {
        let p = demo();
        let c = |id: &str| p.catalog.position(id).unwrap();
        let bank = vec![(c(CAP), 2)];
        let f = FilterDesign {
            inductor: p.inductors.as_ref().unwrap().position(IND).unwrap(),
            count: 2,
            load_bank: vec![(c(CAP), 3), (c(CAP2), 1)],
            damping: Some(DampingLeg {
                resistance: 0.22,
                capacitor: c(CAP2),
                count: 2,
            }),
        };
        let text = String::from_utf8(crate::report::bom_csv_with(&p, &bank, Some(&f))).unwrap();
        assert!(
            text.lines().next().unwrap().contains(",position,"),
            "{text}"
        );
        // IEC 60062 RKM code for the resistor's row; IEC 60063 E24 holds 0.22 Ω.
        assert!(text.contains("R 0R22,1,resistor"), "{text}");
        assert!(text.contains("IEC 60063 E24 value"), "{text}");
        let (b2, f2) = rows(&text).unwrap();
        assert_eq!(b2, bank);
        assert_eq!(f2.unwrap(), f);
        // Without a filter the bill of materials is the capacitor bank's alone.
        let plain = crate::report::bom_csv_with(&p, &bank, None);
        assert_eq!(plain, crate::report::bom_csv(&p, &bank));
        assert!(!String::from_utf8(plain).unwrap().contains("position"));
    }

    #[test]
    fn bill_of_materials_filter_errors_name_line_and_column() {
        let head = format!("part,count,position\n{CAP},2,converter\n");
        for (body, want) in [
            (format!("{CAP},3,load\n"), "line 3, column `position`: a row in position `load` or `damping` but no row in position `inductor`"),
            (format!("{IND},1,inductor\n"), "line 3, column `position`: an inductor but no load-side bank"),
            (format!("{IND},1,inductor\nRB-L4040-2U2,1,inductor\n{CAP},1,load\n"), "line 4, column `position`: a second inductor row (the first is on line 3)"),
            (format!("{IND},9,inductor\n{CAP},1,load\n"), "line 3, column `count`: 9 inductors in parallel"),
            (format!("{IND},1,converter\n"), "line 3, column `part`: part `RB-L4040-1U` is not in the catalog"),
            (format!("NOPE,1,inductor\n{CAP},1,load\n"), "line 3, column `part`: inductor `NOPE` is not in the inductor catalog"),
            (format!("{IND},1,inductor\n{CAP},1,load\nR 0R22,2,damping\n{CAP2},1,damping\n"), "line 5, column `count`: the damping resistor's count is 2"),
            (format!("{IND},1,inductor\n{CAP},1,load\nR 0R22,1,damping\n"), "line 5, column `position`: a damping resistor but no damping capacitor"),
            (format!("{IND},1,inductor\n{CAP},1,load\n{CAP2},1,damping\n"), "line 5, column `position`: a damping capacitor but no damping resistor"),
            (format!("{IND},1,inductor\n{CAP},1,load\nR 2k2,1,damping\n{CAP2},1,damping\n"), "line 5, column `part`: resistor `2k2`"),
            (format!("{IND},1,inductor\n{CAP},1,load\nwidget,1,damping\n"), "line 5, column `part`: `widget` in position `damping` is neither"),
            (format!("{IND},1,inductor\n{CAP},1,filter\n"), "line 4, column 3 (position): unknown position `filter`"),
        ] {
            let e = err(rows(&format!("{head}{body}")));
            assert!(e.starts_with("bom.csv: ") || e.contains("bom.csv: "), "{e}");
            assert!(e.contains(want), "{body}: {e}");
        }
    }
}
