//! The corner region and its worst point.
//!
//! Pass/fail is the largest ripple over a region, not one corner: the input
//! voltage anywhere in its range, the converter inductance anywhere in its
//! tolerance, and each bank line independently anywhere in its capacitance
//! range `[C_low, C_high]` and its ESR range `[ESR_min, ESR_max]`. With ESL
//! near resonance more capacitance can mean more ripple, interleaved phases
//! ripple most inside the input range, and an anti-resonance swept onto a
//! harmonic peaks inside the capacitance box, so the maximum is searched:
//!
//! 1. the three named corners (`low`, `high`, `typical`) at every starting
//!    operating point (the input-voltage sweep of
//!    [`crate::converter::region_vins`] at the inductances of
//!    [`crate::converter::region_inductances`]);
//! 2. every vertex of the per-line box (C low/high × ESR low/high) at the
//!    two worst operating points (when there are at most 256 vertices;
//!    otherwise the single-line flips of the named corners);
//! 3. from the three worst points, coordinate ascent: a golden-section
//!    search along each line's capacitance and ESR, then along the input
//!    voltage (new operating points between the sweep's neighbours) and,
//!    for a flyback or boost, the inductance; two rounds.
//!
//! Cost, for a bank of L lines and P starting points: 3·P evaluations, then
//! up to 2·4^L, then about 3 × 2 × (2L·12 + 2·12) — a few hundred
//! evaluations (a few milliseconds) for a three-line bank.

use crate::evaluator::{Band, Bank, Evaluator, LineState, PartModel};
use crate::problem::Problem;

/// One of the named corners of the reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Named {
    /// Every line at `C_low` and its highest ESR, nominal inductance.
    Low,
    /// Every line at `C_high` and its lowest ESR, nominal inductance.
    High,
    /// `C_nom · k_bias(vout)` and the catalog ESR, nominal inductance.
    Typical,
}

impl Named {
    /// The corner's name as the reports spell it.
    pub fn name(self) -> &'static str {
        match self {
            Named::Low => "low",
            Named::High => "high",
            Named::Typical => "typical",
        }
    }
}

/// The line states of a named corner.
pub fn named_states(ev: &Evaluator, bank: &Bank, which: Named) -> Vec<LineState> {
    let models: Vec<&PartModel> = (0..ev.line_count(bank))
        .map(|j| ev.line_model(bank, j))
        .collect();
    named_of_models(&models, which)
}

/// The named corner's state of each line of `models`.
pub(crate) fn named_of_models(models: &[&PartModel], which: Named) -> Vec<LineState> {
    models
        .iter()
        .map(|p| match which {
            Named::Low => LineState {
                c: p.c_worst,
                esr: p.esr_max,
            },
            Named::High => LineState {
                c: p.c_high,
                esr: p.esr_min,
            },
            Named::Typical => LineState {
                c: p.c_typical,
                esr: p.esr,
            },
        })
        .collect()
}

/// A point of the region and the figure there.
#[derive(Debug, Clone, PartialEq)]
pub struct Worst {
    /// The figure (peak-to-peak ripple, V) at the point.
    pub value: f64,
    /// Operating point index in the evaluator.
    pub op: usize,
    /// Each bank line's capacitance and ESR.
    pub states: Vec<LineState>,
}

/// The figure at one point.
pub fn value_at(
    ev: &mut Evaluator,
    bank: &Bank,
    states: &[LineState],
    op: usize,
    band: Band,
) -> f64 {
    let n = ev.harmonics_of(band);
    ev.fill_states(bank, states, n);
    ev.pp_filled(op, band)
}

/// The largest figure over the named corner's input-voltage range
/// (nominal inductance), refined between the sweep's points.
pub(crate) fn named_value(
    problem: &Problem,
    ev: &mut Evaluator,
    bank: &Bank,
    which: Named,
    band: Band,
) -> f64 {
    if ev.is_empty(bank) {
        return f64::INFINITY;
    }
    let states = named_states(ev, bank, which);
    let l = problem.scenario.converter.inductance.map(|l| l.0);
    let ops: Vec<usize> = ev.ops_named.clone();
    let n = ev.harmonics_of(band);
    ev.fill_states(bank, &states, n);
    let mut best = (f64::NEG_INFINITY, 0usize);
    for &op in &ops {
        let v = ev.pp_filled(op, band);
        if v > best.0 {
            best = (v, op);
        }
    }
    if !best.0.is_finite() {
        return best.0;
    }
    // Also the region's sweep points at nominal inductance.
    let vins = vin_sweep(problem);
    let mut pts: Vec<(f64, usize)> = Vec::new();
    for &vin in &vins {
        let op = ev.add_op(&problem.operating_point(Some(vin), l));
        pts.push((vin, op));
    }
    ev.fill_states(bank, &states, n);
    let mut best_vin = None;
    for &(vin, op) in &pts {
        let v = ev.pp_filled(op, band);
        if v > best.0 {
            best = (v, op);
            best_vin = Some(vin);
        }
    }
    if let Some(v0) = best_vin.or_else(|| ev.ops[best.1].vin) {
        if vins.len() > 1 {
            let (a, b) = bracket(&vins, v0);
            let f = |vin: f64, ev: &mut Evaluator| {
                let op = ev.add_op(&problem.operating_point(Some(vin), l));
                ev.fill_states(bank, &states, n);
                ev.pp_filled(op, band)
            };
            let (_, v) = golden(a, b, 12, |x| f(x, ev));
            best.0 = best.0.max(v);
        }
    }
    best.0
}

/// The input voltages of the region's sweep (empty without a range).
fn vin_sweep(problem: &Problem) -> Vec<f64> {
    let mut v: Vec<f64> = problem.region_ops.iter().filter_map(|op| op.vin).collect();
    v.sort_by(|a, b| a.total_cmp(b));
    v.dedup();
    v
}

/// The neighbours of `x` in the sorted list `v` (the ends at the ends).
fn bracket(v: &[f64], x: f64) -> (f64, f64) {
    let j = v.iter().position(|&y| y >= x).unwrap_or(v.len() - 1);
    let a = v[j.saturating_sub(1)];
    let b = v[(j + 1).min(v.len() - 1)];
    (a.min(x), b.max(x))
}

/// Golden-section search for the maximum of `f` on `[a, b]`; returns the
/// best argument and value seen (ends included).
pub(crate) fn golden(a: f64, b: f64, iters: usize, mut f: impl FnMut(f64) -> f64) -> (f64, f64) {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let (mut lo, mut hi) = (a, b);
    let mut best = (a, f(a));
    let fb = f(b);
    if fb > best.1 {
        best = (b, fb);
    }
    if hi <= lo {
        return best;
    }
    let mut x1 = hi - r * (hi - lo);
    let mut x2 = lo + r * (hi - lo);
    let mut f1 = f(x1);
    let mut f2 = f(x2);
    for _ in 0..iters {
        if f1 > best.1 {
            best = (x1, f1);
        }
        if f2 > best.1 {
            best = (x2, f2);
        }
        if f1 >= f2 {
            hi = x2;
            x2 = x1;
            f2 = f1;
            x1 = hi - r * (hi - lo);
            f1 = f(x1);
        } else {
            lo = x1;
            x1 = x2;
            f1 = f2;
            x2 = lo + r * (hi - lo);
            f2 = f(x2);
        }
    }
    for (x, v) in [(x1, f1), (x2, f2)] {
        if v > best.1 {
            best = (x, v);
        }
    }
    best
}

/// The choices of one line at the box's vertices.
fn vertex_options(p: &PartModel) -> Vec<LineState> {
    let mut cs = vec![p.c_worst];
    if p.c_high != p.c_worst {
        cs.push(p.c_high);
    }
    let mut rs = vec![p.esr_max];
    if p.esr_min != p.esr_max {
        rs.push(p.esr_min);
    }
    let mut out = Vec::new();
    for &c in &cs {
        for &esr in &rs {
            out.push(LineState { c, esr });
        }
    }
    out
}

/// Every vertex of the bank's box, or (past 256) the named corners'
/// single-line flips.
fn vertices(ev: &Evaluator, bank: &Bank) -> Vec<Vec<LineState>> {
    let models: Vec<&PartModel> = (0..ev.line_count(bank))
        .map(|j| ev.line_model(bank, j))
        .collect();
    vertices_of_models(&models)
}

/// Every vertex of the box of the lines `models`, or (past 256) the named
/// corners' single-line flips.
pub(crate) fn vertices_of_models(models: &[&PartModel]) -> Vec<Vec<LineState>> {
    let opts: Vec<Vec<LineState>> = models.iter().map(|p| vertex_options(p)).collect();
    let total: usize = opts.iter().map(|o| o.len()).product();
    let mut out = Vec::new();
    if total <= 256 {
        let mut idx = vec![0usize; opts.len()];
        loop {
            out.push(idx.iter().zip(&opts).map(|(&j, o)| o[j]).collect());
            let mut d = 0;
            while d < idx.len() {
                idx[d] += 1;
                if idx[d] < opts[d].len() {
                    break;
                }
                idx[d] = 0;
                d += 1;
            }
            if d == idx.len() {
                break;
            }
        }
    } else {
        for base in [Named::Low, Named::High] {
            let b = named_of_models(models, base);
            out.push(b.clone());
            for (j, o) in opts.iter().enumerate() {
                for st in o {
                    let mut v = b.clone();
                    v[j] = *st;
                    out.push(v);
                }
            }
        }
    }
    out
}

/// Evaluate one set of line states at each of `ops`, recording every point.
fn push_points(
    ev: &mut Evaluator,
    bank: &Bank,
    states: &[LineState],
    ops: &[usize],
    band: Band,
    seen: &mut Vec<Worst>,
) {
    ev.fill_states(bank, states, ev.harmonics_of(band));
    for &op in ops {
        let value = ev.pp_filled(op, band);
        seen.push(Worst {
            value,
            op,
            states: states.to_vec(),
        });
    }
}

/// The worst point of the region for `bank` and its figure (see the module
/// documentation for the method). Adds operating points to `ev`.
pub fn worst(problem: &Problem, ev: &mut Evaluator, bank: &Bank, band: Band) -> Worst {
    let empty = Worst {
        value: f64::INFINITY,
        op: 0,
        states: Vec::new(),
    };
    if ev.is_empty(bank) {
        return empty;
    }
    let ops = ev.ops_region.clone();
    // 1. Named corners at every starting point.
    let mut seen: Vec<Worst> = Vec::new();
    for which in [Named::Low, Named::High, Named::Typical] {
        let st = named_states(ev, bank, which);
        push_points(ev, bank, &st, &ops, band, &mut seen);
    }
    if seen.iter().any(|w| !w.value.is_finite()) {
        return seen
            .into_iter()
            .find(|w| !w.value.is_finite())
            .unwrap_or(empty);
    }
    seen.sort_by(|a, b| b.value.total_cmp(&a.value));
    // 2. Vertices at the two worst operating points.
    let mut top_ops: Vec<usize> = Vec::new();
    for w in &seen {
        if !top_ops.contains(&w.op) {
            top_ops.push(w.op);
        }
        if top_ops.len() == 2 {
            break;
        }
    }
    for st in vertices(ev, bank) {
        push_points(ev, bank, &st, &top_ops, band, &mut seen);
    }
    seen.sort_by(|a, b| b.value.total_cmp(&a.value));
    seen.dedup_by(|a, b| a.op == b.op && a.states == b.states);
    // 3. Coordinate ascent from the three worst points.
    let starts: Vec<Worst> = seen.iter().take(3).cloned().collect();
    let mut best = seen[0].clone();
    let vins = vin_sweep(problem);
    let ls: Vec<f64> = crate::converter::region_inductances(&problem.scenario)
        .into_iter()
        .flatten()
        .collect();
    let ranges: Vec<[(f64, f64); 2]> = (0..ev.line_count(bank))
        .map(|j| {
            let p = ev.line_model(bank, j);
            [p.range(0), p.range(1)]
        })
        .collect();
    for start in starts {
        let mut cur = start;
        for _round in 0..2 {
            let before = cur.value;
            let op = cur.op;
            ascend_lines(&ranges, &mut cur.states, &mut cur.value, |st| {
                value_at(ev, bank, st, op, band)
            });
            // Input voltage, between the sweep's neighbours.
            let op0 = ev.ops[cur.op].clone();
            if let (Some(v0), true) = (op0.vin, vins.len() > 1) {
                let (a, b) = bracket(&vins, v0);
                let l = op0.inductance;
                ascend_op(ev, bank, band, &mut cur, a, b, |x| {
                    problem.operating_point(Some(x), l)
                });
            }
            // Inductance (flyback, boost), over its whole tolerance.
            let op0 = ev.ops[cur.op].clone();
            if let (Some(_), true) = (op0.inductance, ls.len() > 1) {
                let (a, b) = (ls[0], ls[ls.len() - 1]);
                ascend_op(ev, bank, band, &mut cur, a, b, |x| {
                    problem.operating_point(op0.vin, Some(x))
                });
            }
            if cur.value <= before * (1.0 + 1e-4) {
                break;
            }
        }
        if cur.value > best.value {
            best = cur;
        }
    }
    best
}

/// One pass of the coordinate ascent over every line's capacitance and ESR
/// (`ranges[j]`, as [`PartModel::range`]): a golden-section search of
/// `figure` along each coordinate with a range, the other states kept; the
/// states move to its largest figure where that is larger than `value`.
pub(crate) fn ascend_lines(
    ranges: &[[(f64, f64); 2]],
    states: &mut [LineState],
    value: &mut f64,
    mut figure: impl FnMut(&[LineState]) -> f64,
) {
    let set = |s: &mut LineState, coord: usize, x: f64| {
        if coord == 0 {
            s.c = x;
        } else {
            s.esr = x;
        }
    };
    for (j, r) in ranges.iter().enumerate() {
        for (coord, &(lo, hi)) in r.iter().enumerate() {
            if hi <= lo {
                continue;
            }
            let mut st = states.to_vec();
            let (x, v) = golden(lo, hi, 12, |x| {
                set(&mut st[j], coord, x);
                figure(&st)
            });
            if v > *value {
                set(&mut states[j], coord, x);
                *value = v;
            }
        }
    }
}

/// One step of the coordinate ascent along an operating-point coordinate
/// (input voltage or inductance) from `a` to `b`: a golden-section search
/// over the operating points `point` makes, with the line states of `cur`
/// kept; `cur` moves to the largest figure found when it is larger.
#[allow(clippy::too_many_arguments)]
fn ascend_op(
    ev: &mut Evaluator,
    bank: &Bank,
    band: Band,
    cur: &mut Worst,
    a: f64,
    b: f64,
    point: impl Fn(f64) -> crate::converter::OperatingPoint,
) {
    let st = cur.states.clone();
    let mut made: Vec<(f64, usize)> = Vec::new();
    let (x, v) = golden(a, b, 12, |x| {
        let op = ev.add_op(&point(x));
        made.push((x, op));
        value_at(ev, bank, &st, op, band)
    });
    if v > cur.value {
        if let Some(&(_, op)) = made.iter().find(|m| m.0 == x) {
            cur.op = op;
            cur.value = v;
        }
    }
}

/// A point the optimizer checks every candidate at: an operating point
/// and, per local part of the evaluator, its capacitance and ESR there,
/// followed by the state of every post-filter line.
#[derive(Debug, Clone)]
pub struct Active {
    /// Operating point index in the evaluator.
    pub op: usize,
    /// Per local part (parts not in the bank that found it: the `low` state).
    pub states: Vec<LineState>,
}

/// The optimizer's pass/fail test beyond the `low` corner: the active
/// points, then every vertex of the bank's box at every starting point,
/// stopping at the first figure above `limit`; ripple currents against the
/// ratings at the same points. True when all pass.
pub fn screen(
    ev: &mut Evaluator,
    bank: &Bank,
    limit: f64,
    active: &[Active],
    ratings: &[Option<f64>],
) -> bool {
    if ev.is_empty(bank) {
        return false;
    }
    let n = ev.n_limited;
    let mut st: Vec<LineState> = Vec::with_capacity(ev.line_count(bank));
    let nt = ev.tail().len();
    for a in active {
        st.clear();
        st.extend(bank.iter().map(|&(i, _)| a.states[i]));
        // The filter's lines follow every local part's state.
        st.extend_from_slice(&a.states[a.states.len() - nt..]);
        ev.fill_states(bank, &st, n);
        if !(ev.pp_filled(a.op, Band::Limited) <= limit) {
            return false;
        }
    }
    let ops = ev.ops_region.clone();
    let check_currents = bank.iter().any(|&(i, _)| ratings[i].is_some());
    let mut cur = vec![0.0; ev.line_count(bank)];
    for v in vertices(ev, bank) {
        ev.fill_states(bank, &v, n);
        for &op in &ops {
            if !(ev.pp_filled(op, Band::Limited) <= limit) {
                return false;
            }
        }
        if check_currents {
            ev.fill_states(bank, &v, ev.n_full);
            for &op in &ops {
                ev.currents_filled(bank, &v, op, &mut cur);
            }
        }
    }
    if check_currents {
        for (j, &(i, _)) in bank.iter().enumerate() {
            if let Some(r) = ratings[i] {
                if cur[j] > r {
                    return false;
                }
            }
        }
    }
    true
}

/// Each line's RMS ripple current (one capacitor), the largest over the
/// starting points at every vertex of the box, the named corners and the
/// worst ripple point `w`.
pub fn currents(ev: &mut Evaluator, bank: &Bank, w: Option<&Worst>) -> Vec<f64> {
    let mut out = vec![0.0; ev.line_count(bank)];
    if ev.is_empty(bank) {
        return out;
    }
    let n = ev.n_full;
    let ops = ev.ops_region.clone();
    let mut sets = vertices(ev, bank);
    sets.push(named_states(ev, bank, Named::Typical));
    for st in &sets {
        ev.fill_states(bank, st, n);
        for &op in &ops {
            ev.currents_filled(bank, st, op, &mut out);
        }
    }
    if let Some(w) = w {
        if w.states.len() == ev.line_count(bank) {
            ev.fill_states(bank, &w.states, n);
            ev.currents_filled(bank, &w.states, w.op, &mut out);
        }
    }
    out
}
