//! One table of the limits that are linear in the part counts: what each
//! one is called, how it makes a part ineligible, its coefficients in the
//! optimizer's bounds and mixed-integer model, the exact check of an
//! assessed bank (its report row), and how to relax it when asking which
//! limits bind.
//!
//! Adding such a limit is one entry in [`LIMITS`] plus its tests (see
//! `DEVELOPERS.md`, "Adding a constraint").

use crate::assessment::{Bound, Check};
use crate::catalog::Part;
use crate::evaluator::PartModel;
use crate::problem::cap_limit_value;
use crate::scenario::Scenario;

/// Which limit an entry of [`LIMITS`] is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LimitId {
    /// `converter.max_capacitance`: Σ n·C_limit at most.
    MaxCapacitance,
    /// `converter.min_capacitance`: Σ n·C_low at least.
    MinCapacitance,
    /// `board.max_count`: Σ n at most.
    MaxCount,
    /// `board.max_lines`: distinct parts at most.
    MaxLines,
    /// `board.max_area`: Σ n·area at most.
    MaxArea,
    /// `selection.max_per_part`: n of each part at most.
    MaxPerPart,
    /// `transient.max_deviation`: the load step's deviation at most (its
    /// linear part: the least total capacitance, Σ n·C_low at least).
    MaxDeviation,
}

/// What a limit constrains, linearly in the counts `n_i` (and the line
/// indicators `z_i`, 1 when part i is used).
#[derive(Debug, Clone, Copy)]
pub enum Linear {
    /// `Σ_i coefficient(part_i) · n_i` against the limit.
    Sum(fn(&PartModel) -> f64),
    /// `Σ_i z_i` (the number of lines) against the limit.
    Lines,
    /// Each `n_i` on its own against the limit.
    EachCount,
    /// A necessary condition of a limit that is not itself linear: the
    /// bank's lowest capacitance `Σ_i n_i·C_low,i` at least `need(scenario)`
    /// (the exact check is the figure's).
    Floor(fn(&Scenario) -> Option<f64>),
}

/// The figures of an assessed bank that the limits are checked against.
#[derive(Debug, Clone, Copy, Default)]
pub struct Totals {
    /// Σ n·C on the `max_capacitance_basis`, F.
    pub cap_limit: f64,
    /// Σ n·C_low, F.
    pub cap_effective: f64,
    /// Number of parts.
    pub count: u32,
    /// Number of lines (distinct parts).
    pub lines: u32,
    /// Footprint, mm² (a lower bound when `area_known` is false).
    pub area: f64,
    /// Every part's area is known.
    pub area_known: bool,
    /// The load step's deviation over the corner region, V (`None`
    /// without `[transient]`).
    pub deviation: Option<f64>,
}

/// One linear limit.
pub struct Limit {
    /// Which one.
    pub id: LimitId,
    /// Its name in reports and in `binding` (the scenario key's last part).
    pub name: &'static str,
    /// Which side of the limit a bank must stay on.
    pub bound: Bound,
    /// Unit of the limit in report rows.
    pub unit: &'static str,
    /// Relative slack of the exact check (rounding of sums of products).
    pub slack: f64,
    /// The limit's value in a scenario; `None` when it does not constrain.
    pub value: fn(&Scenario) -> Option<f64>,
    /// What it constrains, for the count bounds and the mixed-integer model.
    pub linear: Linear,
    /// The bank's figure for the exact check (`None`: no row for bank-wide
    /// figures; `EachCount` limits are checked per part).
    pub figure: fn(&Totals) -> Option<f64>,
    /// Why a part is ineligible because of this limit alone, if it is.
    pub ineligible: fn(&Scenario, &Part) -> Option<String>,
    /// Loosen the limit so far that it no longer binds (for `binding`).
    pub relax: fn(&mut Scenario),
}

fn never(_: &Scenario, _: &Part) -> Option<String> {
    None
}

/// The linear limits, in the order of the report's rows.
pub const LIMITS: [Limit; 7] = [
    Limit {
        id: LimitId::MaxCapacitance,
        name: "max_capacitance",
        bound: Bound::AtMost,
        unit: "F",
        slack: 1e-12,
        value: |s| s.converter.max_capacitance.map(|c| c.0),
        linear: Linear::Sum(|p| p.c_limit),
        figure: |t| Some(t.cap_limit),
        ineligible: |s, p| {
            let m = s.converter.max_capacitance?;
            let c = cap_limit_value(s, p);
            (c > m.0)
                .then(|| format!("one part alone ({c:.3e} F) exceeds converter.max_capacitance"))
        },
        relax: |s| s.converter.max_capacitance = None,
    },
    Limit {
        id: LimitId::MinCapacitance,
        name: "min_capacitance",
        bound: Bound::AtLeast,
        unit: "F",
        slack: 0.0,
        value: |s| Some(s.converter.min_capacitance.0).filter(|&m| m > 0.0),
        linear: Linear::Sum(|p| p.c_worst),
        figure: |t| Some(t.cap_effective),
        ineligible: never,
        relax: |s| s.converter.min_capacitance.0 = 0.0,
    },
    Limit {
        id: LimitId::MaxCount,
        name: "max_count",
        bound: Bound::AtMost,
        unit: "",
        slack: 0.0,
        value: |s| s.board.max_count.map(|c| c as f64),
        linear: Linear::Sum(|_| 1.0),
        figure: |t| Some(t.count as f64),
        ineligible: never,
        relax: |s| s.board.max_count = None,
    },
    Limit {
        id: LimitId::MaxLines,
        name: "max_lines",
        bound: Bound::AtMost,
        unit: "",
        slack: 0.0,
        value: |s| Some(s.max_lines() as f64),
        linear: Linear::Lines,
        figure: |t| Some(t.lines as f64),
        ineligible: never,
        relax: |s| s.board.max_lines = Some(s.max_lines() + 2),
    },
    Limit {
        id: LimitId::MaxArea,
        name: "max_area",
        bound: Bound::AtMost,
        unit: "mm²",
        slack: 1e-12,
        value: |s| s.board.max_area.map(|a| a.0),
        linear: Linear::Sum(|p| p.area),
        figure: |t| t.area_known.then_some(t.area),
        ineligible: |s, p| {
            (s.board.max_area.is_some() && p.area.is_none())
                .then(|| crate::problem::NO_AREA.to_string())
        },
        relax: |s| s.board.max_area = None,
    },
    Limit {
        id: LimitId::MaxPerPart,
        name: "max_per_part",
        bound: Bound::AtMost,
        unit: "",
        slack: 0.0,
        value: |s| Some(s.selection.max_per_part as f64),
        linear: Linear::EachCount,
        figure: |_| None,
        ineligible: never,
        relax: |s| s.selection.max_per_part = s.selection.max_per_part.saturating_mul(4).min(10000),
    },
    Limit {
        id: LimitId::MaxDeviation,
        name: "max_deviation",
        bound: Bound::AtMost,
        unit: "V",
        slack: crate::transient::ROUNDING,
        value: |s| s.transient.as_ref().map(|t| t.max_deviation.0),
        // No bank settles below ΔI/(ω_c·C_total): its lowest capacitance
        // (the converter's own included) must reach ΔI/(ω_c·max_deviation).
        linear: Linear::Floor(deviation_floor),
        figure: |t| t.deviation,
        ineligible: never,
        relax: |s| s.transient = None,
    },
];

/// The least Σ n·C_low of a bank meeting `transient.max_deviation`: the
/// settled deviation `ΔI/(ω_c·C)` of its lowest total capacitance, less the
/// converter's own capacitance (with the check's rounding allowed).
fn deviation_floor(s: &Scenario) -> Option<f64> {
    let spec = crate::transient::Spec::of(s)?;
    let own = s.converter.internal_capacitance.map_or(0.0, |c| c.0);
    Some(spec.capacitance_floor() / (1.0 + crate::transient::ROUNDING) - own)
}

#[cfg(test)]
/// The least Σ n·C_low the table's floors ask of a bank (0 when none does).
pub(crate) fn capacitance_floor(s: &Scenario) -> f64 {
    LIMITS
        .iter()
        .filter_map(|l| match l.linear {
            Linear::Floor(need) => need(s),
            _ => None,
        })
        .fold(0.0, f64::max)
}

/// The table's entry for `id`.
pub fn limit(id: LimitId) -> &'static Limit {
    LIMITS
        .iter()
        .find(|l| l.id == id)
        .expect("every LimitId has an entry")
}

impl Limit {
    #[cfg(test)]
    /// The limit's value in `s`, or the value that does not constrain
    /// (+∞ for an upper limit, 0 for a lower one).
    pub(crate) fn value_or_open(&self, s: &Scenario) -> f64 {
        (self.value)(s).unwrap_or(match self.bound {
            Bound::AtMost => f64::INFINITY,
            Bound::AtLeast => 0.0,
        })
    }

    /// Whether `figure` keeps the limit `limit`.
    pub fn holds(&self, figure: f64, limit: f64) -> bool {
        match self.bound {
            Bound::AtMost => figure <= limit * (1.0 + self.slack),
            Bound::AtLeast => figure >= limit * (1.0 - self.slack),
        }
    }

    /// The largest count of one part `p` this limit allows on its own
    /// (+∞ when it does not bound a single part's count).
    pub fn count_max(&self, s: &Scenario, p: &PartModel) -> f64 {
        if self.bound != Bound::AtMost {
            return f64::INFINITY;
        }
        let Some(m) = (self.value)(s) else {
            return f64::INFINITY;
        };
        match self.linear {
            Linear::Sum(coef) => {
                let a = coef(p);
                if a > 0.0 {
                    (m / a * (1.0 + 1e-12)).floor()
                } else {
                    f64::INFINITY
                }
            }
            Linear::Lines | Linear::Floor(_) => f64::INFINITY,
            Linear::EachCount => m,
        }
    }

    /// The report row of an assessed bank, when the limit applies to it.
    pub fn check(&self, s: &Scenario, totals: &Totals) -> Option<Check> {
        let limit = (self.value)(s)?;
        let value = (self.figure)(totals)?;
        Some(Check {
            name: self.name.into(),
            value,
            limit,
            unit: self.unit.into(),
            ok: self.holds(value, limit),
            part: None,
            bound: self.bound,
        })
    }

    /// The report row of one part's count `n` for a per-part limit, when
    /// the count breaks it (only broken per-part limits are listed).
    pub(crate) fn check_part(&self, s: &Scenario, id: &str, n: u32) -> Option<Check> {
        if !matches!(self.linear, Linear::EachCount) {
            return None;
        }
        let limit = (self.value)(s)?;
        let value = n as f64;
        (!self.holds(value, limit)).then(|| Check {
            name: format!("{} {id}", self.name),
            value,
            limit,
            unit: self.unit.into(),
            ok: false,
            part: Some(id.to_string()),
            bound: self.bound,
        })
    }
}

/// The largest count of part `p` every limit of the table allows.
pub fn count_max(s: &Scenario, p: &PartModel) -> u32 {
    LIMITS
        .iter()
        .map(|l| l.count_max(s, p))
        .fold(f64::INFINITY, f64::min)
        .max(0.0) as u32
}

/// The first reason the table gives for `p` to be ineligible.
pub fn ineligible(s: &Scenario, p: &Part, id: LimitId) -> Option<String> {
    (limit(id).ineligible)(s, p)
}

/// The report rows of every bank-wide limit that applies, in table order.
pub fn checks(s: &Scenario, totals: &Totals) -> Vec<Check> {
    LIMITS.iter().filter_map(|l| l.check(s, totals)).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::{Farads, Plain};

    fn demo() -> crate::problem::Problem {
        crate::load::problem(None, None, &Default::default()).unwrap()
    }

    #[test]
    fn every_id_has_one_entry_with_a_unique_name() {
        for id in [
            LimitId::MaxCapacitance,
            LimitId::MinCapacitance,
            LimitId::MaxCount,
            LimitId::MaxLines,
            LimitId::MaxArea,
            LimitId::MaxPerPart,
            LimitId::MaxDeviation,
        ] {
            assert_eq!(LIMITS.iter().filter(|l| l.id == id).count(), 1, "{id:?}");
        }
        for (i, a) in LIMITS.iter().enumerate() {
            assert!(LIMITS[i + 1..].iter().all(|b| b.name != a.name));
        }
    }

    #[test]
    fn relax_loosens_every_limit() {
        // Each relaxed limit is open or strictly looser than before.
        let mut s = demo().scenario;
        s.converter.max_capacitance = Some(Farads(100e-6));
        s.converter.min_capacitance = Farads(10e-6);
        s.board.max_count = Some(6);
        s.board.max_area = Some(Plain(20.0));
        s.transient = Some(crate::scenario::Transient {
            load_step: crate::scenario::Amperes(3.0),
            max_deviation: crate::scenario::Volts(0.05),
            loop_crossover: crate::scenario::Hertz(40e3),
            rise_time: crate::scenario::Seconds(1e-6),
        });
        for l in &LIMITS {
            let before = l.value_or_open(&s);
            let mut r = s.clone();
            (l.relax)(&mut r);
            let after = l.value_or_open(&r);
            match l.bound {
                Bound::AtMost => assert!(after > before, "{}: {before} -> {after}", l.name),
                Bound::AtLeast => assert!(after < before, "{}: {before} -> {after}", l.name),
            }
        }
    }

    #[test]
    fn count_max_is_the_largest_single_part_count_that_passes() {
        // Brute-force enumeration: the largest n for which a bank of n of
        // one part keeps every limit of the table on its own.
        let p = demo();
        let mut s = p.scenario.clone();
        s.converter.max_capacitance = Some(Farads(150e-6));
        s.board.max_count = Some(12);
        s.board.max_area = Some(Plain(9.0));
        s.selection.max_per_part = 10;
        for &i in &p.eligible {
            let m = p.part_model(i);
            let passes = |n: u32| {
                let nf = n as f64;
                let t = Totals {
                    cap_limit: nf * m.c_limit,
                    cap_effective: nf * m.c_worst,
                    count: n,
                    lines: 1,
                    area: nf * m.area,
                    area_known: true,
                    deviation: None,
                };
                LIMITS
                    .iter()
                    .filter(|l| l.bound == Bound::AtMost)
                    .all(|l| l.check(&s, &t).is_none_or(|c| c.ok))
                    && n <= s.selection.max_per_part
            };
            let brute = (0..=1000).rev().find(|&n| passes(n)).unwrap_or(0);
            assert_eq!(count_max(&s, &m), brute, "part {i}");
        }
    }

    #[test]
    fn deviation_floor_is_the_settled_value_of_the_lowest_capacitance() {
        // Closed form of the load-step model: a bank settles at
        // ΔI/(2π·f_c·C) (pure capacitance), so meeting 50 mV on a 5 A step
        // at 40 kHz needs C ≥ 5/(2π·40e3·0.05) = 397.9 µF, less the
        // converter's own capacitance.
        let mut s = demo().scenario;
        assert_eq!(capacitance_floor(&s), 0.0);
        s.transient = Some(crate::scenario::Transient {
            load_step: crate::scenario::Amperes(5.0),
            max_deviation: crate::scenario::Volts(0.05),
            loop_crossover: crate::scenario::Hertz(40e3),
            rise_time: crate::scenario::Seconds(1e-6),
        });
        let want = 5.0 / (2.0 * std::f64::consts::PI * 40e3 * 0.05);
        assert!((capacitance_floor(&s) - want).abs() < 1e-6 * want);
        s.converter.internal_capacitance = Some(Farads(100e-6));
        assert!((capacitance_floor(&s) - (want - 100e-6)).abs() < 1e-6 * want);
        // The exact check is the deviation's.
        let t = Totals {
            deviation: Some(0.051),
            ..Totals::default()
        };
        let row = limit(LimitId::MaxDeviation).check(&s, &t).unwrap();
        assert!(!row.ok && row.name == "max_deviation");
    }

    #[test]
    fn checks_hold_at_the_limit_and_fail_beyond() {
        let mut s = demo().scenario;
        s.converter.max_capacitance = Some(Farads(100e-6));
        s.converter.min_capacitance = Farads(10e-6);
        let at = Totals {
            cap_limit: 100e-6,
            cap_effective: 10e-6,
            count: 1,
            lines: 1,
            area: 1.0,
            area_known: true,
            deviation: None,
        };
        assert!(checks(&s, &at).iter().all(|c| c.ok));
        let over = Totals {
            cap_limit: 101e-6,
            cap_effective: 9.9e-6,
            ..at
        };
        let failed: Vec<String> = checks(&s, &over)
            .into_iter()
            .filter(|c| !c.ok)
            .map(|c| c.name)
            .collect();
        assert_eq!(failed, ["max_capacitance", "min_capacitance"]);
    }
}
