//! The LC post-filter: what a filtered design is made of.
//!
//! A filtered design adds, after the converter-side bank, a series inductor
//! (one or more equal inductors in parallel), a load-side bank and an
//! optional damping leg (a resistor in series with capacitors from the
//! capacitor catalog) at the load-side node. The ripple is measured at the
//! load-side node. [`crate::network::Ladder`] holds the circuit;
//! this module holds the choices.

/// Whether `design` considers a post-filter (`[filter] use`, `--filter`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FilterUse {
    /// Capacitors only (the default).
    #[default]
    Off,
    /// Design both a capacitor-only bank and a filtered design; keep the better.
    Auto,
    /// A filtered design only.
    On,
}

/// Which damping the search may use (`[filter] damping`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DampingMode {
    /// No damping leg (the load-side bank's own ESR is the only damping).
    None,
    /// Always an R–C leg.
    Rc,
    /// Whichever is better: none or an R–C leg (the default).
    #[default]
    Auto,
}

/// The damping leg of a filtered design.
#[derive(Debug, Clone, PartialEq)]
pub struct DampingLeg {
    /// The damping resistor, Ω (one resistor in series with the capacitors).
    pub resistance: f64,
    /// Capacitor catalog index of the damping capacitor.
    pub capacitor: usize,
    /// Number of damping capacitors in parallel.
    pub count: u32,
}

/// The filter of a design: the inductor, the load-side bank and the damping.
/// The converter-side bank is the design's ordinary bank.
#[derive(Debug, Clone, PartialEq)]
pub struct FilterDesign {
    /// Inductor catalog index.
    pub inductor: usize,
    /// Equal inductors in parallel (1 in almost every design).
    pub count: u32,
    /// The load-side bank: capacitor catalog indices and counts.
    pub load_bank: Vec<(usize, u32)>,
    /// The damping leg, if any.
    pub damping: Option<DampingLeg>,
}

use crate::evaluator::{tail_output_impedance, Evaluator, LineState, TailLine, TailRole};
use crate::problem::Problem;
use crate::scenario::Objective;
use serde::Serialize;
use std::f64::consts::PI;

/// Points per decade of the output-impedance sweep.
const Z_POINTS_PER_DECADE: usize = 30;

/// Erickson & Maksimović, Fundamentals of Power Electronics, ch. 10
/// (input filter design, parallel R–C damping): with `n = C_b/C` the
/// ratio of the damping capacitance to the filter's, the resistance that
/// minimises the peak output impedance, `Q_opt·R0` with `R0 = sqrt(L/C)`
/// and `Q_opt = sqrt((2+n)(4+3n) / (2n²(4+n)))`.
pub fn optimal_damping_resistance(l: f64, c: f64, n: f64) -> f64 {
    let q = ((2.0 + n) * (4.0 + 3.0 * n) / (2.0 * n * n * (4.0 + n))).sqrt();
    q * (l / c).sqrt()
}

/// The same source's peak output impedance with that optimum:
/// `R0·sqrt(2(2+n))/n`.
pub fn optimal_damping_peak(l: f64, c: f64, n: f64) -> f64 {
    (l / c).sqrt() * (2.0 * (2.0 + n)).sqrt() / n
}

/// The filter's own figures (those that do not depend on the
/// converter-side bank), the worst over its lines' region where it has one.
#[derive(Debug, Clone, Serialize)]
pub struct TailFigures {
    /// `f0 = 1/(2π·sqrt(L·C_load))`, nominal inductance (over the parallel
    /// count) and the load-side bank's typical capacitance, Hz.
    pub corner_frequency: f64,
    /// Peak of the output impedance (converter side held) around the
    /// resonance, f0/100 to 10·f0, the largest over the filter's lines'
    /// corners, Ω.
    pub peak_output_impedance: f64,
    /// Where that peak is, Hz.
    pub peak_frequency: f64,
    /// `iout · DCR` of the parallel inductors, V.
    pub dc_drop: f64,
    /// Output current per inductor, A (its DC share).
    pub dc_current: f64,
}

/// Lowest and highest catalog values of the filter's lines.
fn corner_states(tail: &[TailLine]) -> Vec<Vec<LineState>> {
    // Every vertex of the filter lines' box: C (or L) low/high × ESR (or
    // DCR) low/high per line, at most 4^lines (the filter has three lines).
    let opts: Vec<Vec<LineState>> = tail
        .iter()
        .map(|t| {
            let m = &t.model;
            let mut v = Vec::new();
            for c in [m.c_worst, m.c_high] {
                for esr in [m.esr_max, m.esr_min] {
                    let s = LineState { c, esr };
                    if !v.contains(&s) {
                        v.push(s);
                    }
                }
            }
            v
        })
        .collect();
    let mut out = vec![Vec::new()];
    for o in &opts {
        let mut next = Vec::with_capacity(out.len() * o.len());
        for base in &out {
            for s in o {
                let mut b = base.clone();
                b.push(*s);
                next.push(b);
            }
        }
        out = next;
    }
    out
}

/// The corner frequency of a filter: nominal inductance over the count,
/// the load-side bank's typical capacitance (0 without a filter).
pub fn corner_frequency(tail: &[TailLine]) -> f64 {
    let (mut l, mut c) = (0.0, 0.0);
    for t in tail {
        match t.role {
            TailRole::Load => c += t.model.c_typical * t.count as f64,
            TailRole::Inductor { .. } => l = t.model.c_typical / t.count as f64,
            TailRole::Damping { .. } => {}
        }
    }
    if l > 0.0 && c > 0.0 {
        1.0 / (2.0 * PI * (l * c).sqrt())
    } else {
        0.0
    }
}

/// The filter's own figures for its evaluator lines
/// ([`Problem::tail_lines`]).
pub fn tail_figures(problem: &Problem, tail: &[TailLine]) -> TailFigures {
    let iout = problem.scenario.converter.iout.0;
    let f0 = corner_frequency(tail);
    let (mut dcr, mut count) = (0.0, 1.0);
    for t in tail {
        if let TailRole::Inductor { .. } = t.role {
            dcr = t.model.esr_max;
            count = t.count.max(1) as f64;
        }
    }
    let (peak, at) = if f0 > 0.0 {
        peak_output_impedance(tail, f0 / 100.0, f0 * 10.0)
    } else {
        (0.0, 0.0)
    };
    TailFigures {
        corner_frequency: f0,
        peak_output_impedance: peak,
        peak_frequency: at,
        dc_drop: iout * dcr / count,
        dc_current: iout / count,
    }
}

/// Largest |Z_out| between `f_lo` and `f_hi` over the filter lines'
/// corners, and its frequency: a logarithmic sweep, then a golden-section
/// refinement around each corner's largest sample.
pub fn peak_output_impedance(tail: &[TailLine], f_lo: f64, f_hi: f64) -> (f64, f64) {
    peak_over(tail, &corner_states(tail), f_lo, f_hi)
}

fn peak_over(tail: &[TailLine], states: &[Vec<LineState>], f_lo: f64, f_hi: f64) -> (f64, f64) {
    let decades = (f_hi / f_lo).log10().max(0.0);
    let n = ((decades * Z_POINTS_PER_DECADE as f64).ceil() as usize).max(2);
    let mut best = (0.0_f64, f_lo);
    for st in states {
        let z = |f: f64| tail_output_impedance(tail, st, f).map_or(0.0, |z| z.norm());
        let mut top = (0.0, 0usize);
        let fs: Vec<f64> = (0..=n)
            .map(|i| f_lo * (f_hi / f_lo).powf(i as f64 / n as f64))
            .collect();
        for (i, &f) in fs.iter().enumerate() {
            let v = z(f);
            if v > top.0 {
                top = (v, i);
            }
        }
        let (a, b) = (
            fs[top.1.saturating_sub(1)].ln(),
            fs[(top.1 + 1).min(n)].ln(),
        );
        // Golden section on ln f (the peak is smooth and single there).
        let r = 0.5 * (5f64.sqrt() - 1.0);
        let (mut lo, mut hi) = (a, b);
        let mut x1 = hi - r * (hi - lo);
        let mut x2 = lo + r * (hi - lo);
        let (mut f1, mut f2) = (z(x1.exp()), z(x2.exp()));
        for _ in 0..40 {
            if f1 >= f2 {
                hi = x2;
                x2 = x1;
                f2 = f1;
                x1 = hi - r * (hi - lo);
                f1 = z(x1.exp());
            } else {
                lo = x1;
                x1 = x2;
                f1 = f2;
                x2 = lo + r * (hi - lo);
                f2 = z(x2.exp());
            }
        }
        for (v, f) in [(top.0, fs[top.1]), (f1, x1.exp()), (f2, x2.exp())] {
            if v > best.0 {
                best = (v, f);
            }
        }
    }
    best
}

/// The peak output impedance with every filter line at its typical state
/// (a quick necessary test: the region's peak is at least this).
pub(crate) fn typical_peak_output_impedance(tail: &[TailLine]) -> f64 {
    let f0 = corner_frequency(tail);
    if f0 <= 0.0 {
        return 0.0;
    }
    let st = crate::evaluator::typical_states(tail);
    peak_over(tail, &[st], f0 / 100.0, f0 * 10.0).0
}

/// The filter's parts in the objective's terms: `(cost, area, count)`.
pub(crate) fn tail_totals(problem: &Problem, f: &FilterDesign) -> (f64, f64, u32) {
    let cat = &problem.catalog.parts;
    let (mut cost, mut area, mut count) = (0.0, 0.0, 0u32);
    for &(i, n) in &f.load_bank {
        cost += cat[i].cost * n as f64;
        area += cat[i].area.unwrap_or(0.0) * n as f64;
        count += n;
    }
    if let Some(d) = &f.damping {
        let p = &cat[d.capacitor];
        cost += p.cost * d.count as f64 + problem.scenario.filter.damping_resistor_cost.0;
        area += p.area.unwrap_or(0.0) * d.count as f64;
        count += d.count + 1;
    }
    if let Some(ind) = problem
        .inductors
        .as_ref()
        .and_then(|c| c.parts.get(f.inductor))
    {
        cost += ind.cost * f.count as f64;
        area += ind.area.unwrap_or(0.0) * f.count as f64;
        count += f.count;
    }
    (cost, area, count)
}

/// The filter's share of the objective key (primary, then tie-breakers),
/// in the same terms as a bank's.
pub(crate) fn tail_key(problem: &Problem, f: &FilterDesign) -> [f64; 3] {
    let (cost, area, count) = tail_totals(problem, f);
    let lines = (f.load_bank.len() + usize::from(f.damping.is_some()) + 1) as f64;
    let lc = problem.scenario.selection.line_cost.0 * lines;
    match problem.scenario.selection.objective {
        Objective::Cost => [cost + lc, area, count as f64],
        Objective::Area => [area, cost + lc, count as f64],
        Objective::Count => [count as f64, cost + lc, area],
    }
}

/// The inductor's current, the worst over the region for `bank`
/// (converter-side, local indices of `ev`) at the worst point found for the
/// ripple and at the filter's named corners: peak-to-peak ripple and the
/// peak (DC share plus half the ripple), per inductor, A.
pub(crate) fn inductor_current(
    problem: &Problem,
    ev: &mut Evaluator,
    bank: &[(usize, u32)],
    worst: Option<&crate::region::Worst>,
) -> (f64, f64) {
    let iout = problem.scenario.converter.iout.0;
    let count = ev
        .tail()
        .iter()
        .find_map(|t| matches!(t.role, TailRole::Inductor { .. }).then_some(t.count.max(1)))
        .unwrap_or(1) as f64;
    let n = ev.n_full;
    let ops = ev.ops_region.clone();
    let mut sets: Vec<(Vec<LineState>, Vec<usize>)> = Vec::new();
    for which in [
        crate::region::Named::Low,
        crate::region::Named::High,
        crate::region::Named::Typical,
    ] {
        sets.push((crate::region::named_states(ev, bank, which), ops.clone()));
    }
    if let Some(w) = worst {
        if w.states.len() == ev.line_count(bank) {
            sets.push((w.states.clone(), vec![w.op]));
        }
    }
    let mut pp: f64 = 0.0;
    for (st, ops) in &sets {
        ev.fill_states(bank, st, n);
        for &op in ops {
            pp = pp.max(ev.inductor_ripple_filled(st, op, bank.len()));
        }
    }
    (pp, iout / count + pp / 2.0)
}

/// Everything the reports show of a filtered design's filter.
#[derive(Debug, Clone, Serialize)]
pub struct FilterAssessment {
    /// The filter's choices.
    #[serde(skip)]
    pub design: FilterDesign,
    /// Inductor part id.
    pub inductor: String,
    /// Inductors in parallel.
    pub count: u32,
    /// Nominal inductance of one inductor, H.
    pub inductance: f64,
    /// Its tolerance (fraction).
    pub inductance_tolerance: f64,
    /// DCR of one inductor (the catalog's maximum), Ω.
    pub dcr: f64,
    /// The filter's own figures.
    #[serde(flatten)]
    pub tail: TailFigures,
    /// Ripple at the converter-side node at the load node's worst point, V.
    pub ripple_pp_converter_node: f64,
    /// The inductor's peak-to-peak ripple current, per inductor, A.
    pub inductor_ripple_pp: f64,
    /// DC share plus half the ripple, per inductor, A.
    pub inductor_peak_current: f64,
    /// Thermal rating of one inductor, A.
    pub rated_current: f64,
    /// Saturation current of one inductor, A.
    pub saturation_current: f64,
    /// The load-side bank: (part id, count).
    pub load_bank: Vec<(String, u32)>,
    /// The damping leg: resistor Ω, capacitor id, count.
    pub damping: Option<(f64, String, u32)>,
    /// RMS ripple current of one capacitor of each load-side line and of
    /// the damping line, with its rating, A.
    pub capacitor_currents: Vec<(String, f64, Option<f64>)>,
    /// The filter's parts: cost, area (mm²), count (the damping resistor
    /// included).
    pub cost: f64,
    /// Area of the filter's parts with a known area, mm².
    pub area: f64,
    /// Parts of the filter.
    pub parts: u32,
}

/// The filter of `problem` (set) behind the bank `local` of `ev`, at the
/// worst point `worst` of the load node's ripple, with `currents` the
/// region's per-line RMS currents (bank lines, then the filter's).
pub(crate) fn assess_filter(
    problem: &Problem,
    ev: &mut Evaluator,
    local: &[(usize, u32)],
    worst: &crate::region::Worst,
    currents: &[f64],
) -> Option<FilterAssessment> {
    let design = problem.filter.clone()?;
    let ind = problem
        .inductors
        .as_ref()?
        .parts
        .get(design.inductor)?
        .clone();
    let tail_lines = ev.tail().to_vec();
    let tail = tail_figures(problem, &tail_lines);
    let conv = if worst.states.len() == ev.line_count(local) {
        let n = ev.n_limited;
        ev.fill_states(local, &worst.states, n);
        ev.to_converter_node(n);
        ev.pp_filled(worst.op, crate::evaluator::Band::Limited)
    } else {
        f64::NAN
    };
    let (pp, peak) = inductor_current(problem, ev, local, Some(worst));
    let cat = &problem.catalog.parts;
    let nb = local.len();
    let mut capacitor_currents = Vec::new();
    for (j, t) in tail_lines.iter().enumerate() {
        if matches!(t.role, TailRole::Inductor { .. }) {
            continue;
        }
        let p = &cat[t.model.index];
        capacitor_currents.push((
            p.id.clone(),
            currents.get(nb + j).copied().unwrap_or(0.0),
            p.ripple_current,
        ));
    }
    let (cost, area, parts) = tail_totals(problem, &design);
    Some(FilterAssessment {
        inductor: ind.id.clone(),
        count: design.count,
        inductance: ind.inductance,
        inductance_tolerance: ind.tolerance,
        dcr: ind.dcr,
        tail,
        ripple_pp_converter_node: conv,
        inductor_ripple_pp: pp,
        inductor_peak_current: peak,
        rated_current: ind.rated_current,
        saturation_current: ind.saturation_current,
        load_bank: design
            .load_bank
            .iter()
            .map(|&(i, n)| (cat[i].id.clone(), n))
            .collect(),
        damping: design
            .damping
            .as_ref()
            .map(|d| (d.resistance, cat[d.capacitor].id.clone(), d.count)),
        capacitor_currents,
        cost,
        area,
        parts,
        design,
    })
}

/// The filter's checks: its own limits and its parts' ratings.
pub(crate) fn filter_checks(
    problem: &Problem,
    f: &FilterAssessment,
) -> Vec<crate::assessment::Check> {
    use crate::assessment::{Bound, Check};
    let s = &problem.scenario.filter;
    let mut out = Vec::new();
    let mut push =
        |name: &str, value: f64, limit: f64, unit: &str, bound: Bound, part: Option<String>| {
            let ok = match bound {
                Bound::AtMost => value <= limit * (1.0 + 1e-9),
                Bound::AtLeast => value >= limit * (1.0 - 1e-9),
            };
            out.push(Check {
                name: name.into(),
                value,
                limit,
                unit: unit.into(),
                ok,
                part,
                bound,
            });
        };
    if let Some(m) = s.min_corner_frequency {
        push(
            "filter corner_frequency",
            f.tail.corner_frequency,
            m.0,
            "Hz",
            Bound::AtLeast,
            None,
        );
    }
    if let Some(m) = s.max_output_impedance {
        push(
            "filter peak_output_impedance",
            f.tail.peak_output_impedance,
            m.0,
            "Ω",
            Bound::AtMost,
            None,
        );
    }
    if let Some(m) = s.max_dc_drop {
        push(
            "filter dc_drop",
            f.tail.dc_drop,
            m.0,
            "V",
            Bound::AtMost,
            None,
        );
    }
    push(
        "inductor rated_current",
        f.tail.dc_current,
        f.rated_current,
        "A",
        Bound::AtMost,
        Some(f.inductor.clone()),
    );
    push(
        "inductor saturation_current",
        f.inductor_peak_current,
        f.saturation_current,
        "A",
        Bound::AtMost,
        Some(f.inductor.clone()),
    );
    for (id, rms, rating) in &f.capacitor_currents {
        if let Some(r) = rating {
            push(
                "ripple_current (filter)",
                *rms,
                *r,
                "A",
                Bound::AtMost,
                Some(id.clone()),
            );
        }
    }
    out
}
