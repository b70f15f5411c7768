//! The filtered design: the inductor, the load-side bank, the damping and
//! the converter-side bank chosen together.
//!
//! For a fixed filter (inductor, load-side bank, damping leg) the voltage at
//! the load node is `h_k·D_k / (Y_b·G_k + Y_int + G_k·ty_k)`: the same form
//! as without a filter, with a different offset and a scaled drive. So the
//! converter-side bank is found by the ordinary search ([`design_for`])
//! on the problem with that filter fixed behind the bank, cutting planes
//! over the corner region included (the filter's lines are region lines
//! like the bank's).
//!
//! The filters are enumerated over a finite space: every eligible inductor
//! (the fewest in parallel, up to `max_inductor_count`, that carry the
//! current within the DC-drop limit), every load-side bank of up to
//! `load_max_lines` part numbers (default 1) and `load_max_count` parts
//! (default 4), and the damping legs `damping` allows: none, or a damping
//! capacitor (1 or 2 in parallel, from the same candidates, of at least the
//! load-side bank's typical capacitance) in series with the two resistors
//! of the E-series (between `damping_resistance_min` and
//! `damping_resistance_max`) nearest the optimum of Erickson &
//! Maksimović's parallel R–C damping, `Q_opt·R0` with `R0 =
//! sqrt(L/C_load)` (every resistor of the range when it holds at most 13).
//!
//! The filters are taken in order of their own share of the objective. A
//! filter is dropped, before any search, when it breaks one of its own
//! limits (corner frequency, output-impedance peak at the typical state and
//! then over its lines' corners, DC drop, rated current) or when no bank
//! the limits allow, of objective below the best design so far minus the
//! filter's share, could meet the target behind it (the single-harmonic
//! floor, with a fractional-knapsack bound on the bank's admittance). Each
//! remaining search starts with that difference as its bound, and a filter
//! whose share alone reaches the best design ends the loop. A design whose
//! inductor would saturate is refused. When every search was complete the
//! answer is `optimal` over this space, else `feasible`.

use super::{better, design_for, DesignOutcome, Found, Settings, Stats, Status};
use crate::evaluator::Band;
use crate::filter::{self, DampingLeg, DampingMode, FilterDesign};
use crate::problem::Problem;
use std::time::Instant;

/// Most filters whose converter-side bank is searched; past it the search
/// stops (and the answer is `feasible`).
const MAX_FILTERS: usize = 400;
/// With a load step (each deviation behind a filter is a long transform),
/// most filters searched.
const MAX_FILTERS_STEP: usize = 16;
/// A filter whose load node misses the load step by more than this factor
/// with the bank's node held still is not searched.
const STEP_SCREEN: f64 = 1.5;
/// The reason a filter is dropped by the load-step screen.
const STEP: &str =
    "the load step misses the limit at the load node even with the bank's node held still";
/// Default largest load-side bank, parts (common practice, no source).
pub(crate) const DEFAULT_LOAD_MAX_COUNT: u32 = 4;
/// Largest number of damping capacitors in parallel the search tries.
const MAX_DAMPING_COUNT: u32 = 2;
/// A resistor series of at most this many values between the scenario's
/// damping limits is tried whole.
const ALL_RESISTORS_UP_TO: usize = 13;
/// Smallest damping-to-filter capacitance ratio n the search tries (below
/// 1 the optimum's peak R0·sqrt(2(2+n))/n grows fast).
const MIN_DAMPING_RATIO: f64 = 1.0;

/// A filtered design and how it was found.
#[derive(Debug, Clone)]
pub struct FilterOutcome {
    /// `optimal` over the filter space, `feasible`, or `infeasible`.
    pub status: Status,
    /// The converter-side bank (catalog indices), its key including the
    /// filter's share, and its ripple at the load node.
    pub found: Option<Found>,
    /// The filter of the design.
    pub filter: Option<FilterDesign>,
    /// The search's statistics, summed over every filter searched.
    pub stats: Stats,
    /// Filters that met their own limits.
    pub filters_total: usize,
    /// Filters whose converter-side bank was searched.
    pub filters_searched: usize,
    /// Why filters were dropped before any search, with how many each.
    pub dropped: Vec<(String, usize)>,
}

/// Inductor catalog indices a filter may use, each with the counts in
/// parallel that meet the rated-current and DC-drop limits.
fn inductor_choices(problem: &Problem) -> Vec<(usize, u32)> {
    let Some(cat) = &problem.inductors else {
        return Vec::new();
    };
    let s = &problem.scenario;
    let iout = s.converter.iout.0;
    let eligible: Vec<usize> =
        if problem.inductors_eligible.is_empty() && problem.inductors_excluded.is_empty() {
            (0..cat.parts.len()).collect()
        } else {
            problem.inductors_eligible.clone()
        };
    let mut out = Vec::new();
    for i in eligible {
        let ind = &cat.parts[i];
        if ind.status == crate::catalog::Status::Obsolete {
            continue;
        }
        for n in 1..=s.filter.max_inductor_count.max(1) {
            let nf = n as f64;
            if ind.rated_current * nf < iout {
                continue;
            }
            if let Some(d) = s.filter.max_dc_drop {
                if iout * ind.dcr / nf > d.0 {
                    continue;
                }
            }
            out.push((i, n));
            break;
        }
    }
    out
}

/// Every load-side bank of the space: up to `lines` part numbers from
/// `cands`, `max_count` parts in all.
fn load_banks(cands: &[usize], lines: usize, max_count: u32) -> Vec<Vec<(usize, u32)>> {
    let mut out = Vec::new();
    let mut cur: Vec<(usize, u32)> = Vec::new();
    fn go(
        cands: &[usize],
        start: usize,
        lines: usize,
        left: u32,
        cur: &mut Vec<(usize, u32)>,
        out: &mut Vec<Vec<(usize, u32)>>,
    ) {
        if !cur.is_empty() {
            out.push(cur.clone());
        }
        if cur.len() == lines {
            return;
        }
        for j in start..cands.len() {
            for n in 1..=left {
                cur.push((cands[j], n));
                go(cands, j + 1, lines, left - n, cur, out);
                cur.pop();
            }
        }
    }
    go(cands, 0, lines, max_count, &mut cur, &mut out);
    out
}

/// The damping legs of the space for a load-side bank of typical
/// capacitance `c_load` behind an inductance `l`: none (unless `rc`), and
/// for every damping capacitor and count the two resistors of the series
/// nearest the optimum of [`filter::optimal_damping_resistance`].
fn damping_legs(
    problem: &Problem,
    cands: &[usize],
    l: f64,
    c_load: f64,
) -> Vec<Option<DampingLeg>> {
    let f = &problem.scenario.filter;
    let mut out = Vec::new();
    if f.damping != DampingMode::Rc {
        out.push(None);
    }
    if f.damping == DampingMode::None || c_load <= 0.0 {
        return out;
    }
    let vout = problem.scenario.converter.vout.0;
    let (rmin, rmax) = (f.damping_resistance_min.0, f.damping_resistance_max.0);
    let series = crate::eseries::values(f.damping_resistors, rmin, rmax);
    for &c in cands {
        let ct = problem.catalog.parts[c].c_typical(vout);
        for n in 1..=MAX_DAMPING_COUNT {
            let ratio = ct * n as f64 / c_load;
            if ratio < MIN_DAMPING_RATIO {
                continue;
            }
            // A short series (a narrowed range) is taken whole; a long one
            // near the optimum only.
            let rs: Vec<f64> = if series.len() <= ALL_RESISTORS_UP_TO {
                series.clone()
            } else {
                let r = filter::optimal_damping_resistance(l, c_load, ratio);
                let below = series.iter().rev().find(|&&x| x <= r).copied();
                let above = series.iter().find(|&&x| x > r).copied();
                [below, above].into_iter().flatten().collect()
            };
            for r in rs {
                out.push(Some(DampingLeg {
                    resistance: r,
                    capacitor: c,
                    count: n,
                }));
            }
        }
    }
    out
}

/// The problem with the filter fixed behind the bank, its parts taken from
/// the board's count and area limits (and, with `count_load_side`, its
/// capacitance from the converter's limit).
pub fn problem_with(problem: &Problem, f: &FilterDesign) -> Problem {
    let mut p = problem.with_filter(f.clone());
    let (_, area, count) = filter::tail_totals(problem, f);
    let b = &mut p.scenario.board;
    if let Some(m) = b.max_count.as_mut() {
        *m = m.saturating_sub(count);
    }
    if let Some(m) = b.max_area.as_mut() {
        m.0 = (m.0 - area).max(0.0);
    }
    if p.scenario.filter.count_load_side {
        let c_load: f64 = f
            .load_bank
            .iter()
            .map(|&(i, n)| problem.part_model(i).c_limit * n as f64)
            .sum::<f64>()
            + f.damping.as_ref().map_or(0.0, |d| {
                problem.part_model(d.capacitor).c_limit * d.count as f64
            });
        if let Some(m) = p.scenario.converter.max_capacitance.as_mut() {
            m.0 = (m.0 - c_load).max(0.0);
        }
    }
    p
}

const CORNER: &str = "corner frequency below filter.min_corner_frequency";
const IMPEDANCE: &str = "output-impedance peak above filter.max_output_impedance";

/// Why a filter breaks one of its own limits, or `None`.
pub(crate) fn tail_violation(
    problem: &Problem,
    figs: &filter::TailFigures,
) -> Option<&'static str> {
    let f = &problem.scenario.filter;
    if let Some(m) = f.min_corner_frequency {
        if figs.corner_frequency < m.0 {
            return Some(CORNER);
        }
    }
    if let Some(m) = f.max_output_impedance {
        if figs.peak_output_impedance > m.0 {
            return Some(IMPEDANCE);
        }
    }
    if let Some(m) = f.max_dc_drop {
        if figs.dc_drop > m.0 * (1.0 + 1e-12) {
            return Some("DC drop above filter.max_dc_drop");
        }
    }
    None
}

/// The best filtered design for `target` at the load node.
pub fn design_filtered(problem: &Problem, target: f64, settings: &Settings) -> FilterOutcome {
    let t0 = Instant::now();
    let (cands, _) = super::search::prune_dominated(problem, &problem.eligible);
    // Every search below builds its evaluator over these same candidates.
    let mut shared = problem.clone();
    shared.keep_evaluator(&cands);
    let problem = &shared;
    let fs = &problem.scenario.filter;
    let lines = fs.load_max_lines.unwrap_or(1).max(1) as usize;
    let max_count = fs.load_max_count.unwrap_or(DEFAULT_LOAD_MAX_COUNT).max(1);
    // The load side stands outside the converter's loop: unless
    // `count_load_side`, a part excluded only by `max_capacitance` may sit
    // there (a bulk damping capacitor, say).
    let mut load_cands = cands.clone();
    if !fs.count_load_side && problem.scenario.converter.max_capacitance.is_some() {
        let mut open = problem.scenario.clone();
        open.converter.max_capacitance = None;
        let obj = open.selection.objective;
        for (i, part) in problem.catalog.parts.iter().enumerate() {
            if !problem.eligible.contains(&i)
                && crate::problem::ineligibility(&open, part, obj).is_none()
            {
                load_cands.push(i);
            }
        }
    }
    let banks = load_banks(&load_cands, lines, max_count);
    let vout = problem.scenario.converter.vout.0;
    let mut dropped: std::collections::BTreeMap<String, usize> = Default::default();
    // Every filter of the space with its own share of the objective.
    let mut filters: Vec<([f64; 3], FilterDesign)> = Vec::new();
    for (ind, count) in inductor_choices(problem) {
        let l = problem
            .inductors
            .as_ref()
            .map_or(0.0, |c| c.parts[ind].inductance)
            / count as f64;
        for bank in &banks {
            let c_load: f64 = bank
                .iter()
                .map(|&(i, n)| problem.catalog.parts[i].c_typical(vout) * n as f64)
                .sum();
            for damping in damping_legs(problem, &load_cands, l, c_load) {
                let fd = FilterDesign {
                    inductor: ind,
                    count,
                    load_bank: bank.clone(),
                    damping,
                };
                filters.push((filter::tail_key(problem, &fd), fd));
            }
        }
    }
    filters.sort_by(|a, b| {
        a.0[0]
            .total_cmp(&b.0[0])
            .then(a.0[1].total_cmp(&b.0[1]))
            .then(a.0[2].total_cmp(&b.0[2]))
    });
    let filters_total = filters.len();
    // The largest admittance any allowed bank can have at each harmonic:
    // its lines' largest counts, the best `max_lines` parts there.
    let base = problem.search_evaluator(&cands);
    let max_lines = problem
        .scenario
        .board
        .max_lines
        .unwrap_or(crate::scenario::DEFAULT_MAX_LINES) as usize;
    let mags: Vec<Vec<f64>> = (0..cands.len())
        .map(|j| {
            let m = crate::limits::count_max(&problem.scenario, &base.parts[j]) as f64;
            base.admittance_magnitudes(j)
                .into_iter()
                .map(|a| a * m)
                .collect()
        })
        .collect();
    let ymax: Vec<f64> = (0..base.n_limited)
        .map(|k| {
            let mut v: Vec<f64> = mags.iter().map(|m| m[k]).collect();
            v.sort_by(|a, b| b.total_cmp(a));
            v.iter().take(max_lines).sum()
        })
        .collect();
    // Admittance per unit of objective, the best part at each harmonic: a
    // bank of objective at most B has at most B times it (fractional
    // knapsack bound).
    let obj = problem.scenario.selection.objective;
    let per_unit: Vec<f64> = (0..base.n_limited)
        .map(|k| {
            (0..cands.len())
                .map(|j| {
                    let w = super::search::weights(obj, &base.parts[j])[0];
                    let a = base.y(j, k, crate::evaluator::Corner::Worst).norm();
                    if w > 0.0 {
                        a / w
                    } else {
                        f64::INFINITY
                    }
                })
                .fold(0.0, f64::max)
        })
        .collect();
    let mut ycap = ymax.clone();
    let mut complete = true;
    let mut stats = Stats::default();
    let mut best: Option<(Found, FilterDesign)> = None;
    let mut searched = 0;
    // Filters are searched two at a time (one per core); each batch starts
    // from the best design before it, which only loosens its cutoffs.
    let workers = std::thread::available_parallelism()
        .map_or(1, |n| n.get())
        .clamp(1, 2);
    let mut next = 0usize;
    'outer: loop {
        let mut batch: Vec<(&[f64; 3], &FilterDesign)> = Vec::new();
        while batch.len() < workers {
            let Some((share, fd)) = filters.get(next) else {
                break;
            };
            next += 1;
            if let Some((b, _)) = &best {
                if share[0] >= b.key[0] {
                    break;
                }
            }
            let most = if problem.scenario.transient.is_some() {
                MAX_FILTERS_STEP
            } else {
                MAX_FILTERS
            };
            if searched + batch.len() >= most {
                complete = false;
                break;
            }
            let tail = problem.tail_lines(fd);
            // The cheap tests first: the corner frequency, the ripple floor,
            // then the output impedance (typical state, then every corner).
            if let Some(m) = fs.min_corner_frequency {
                if filter::corner_frequency(&tail) < m.0 {
                    *dropped.entry(CORNER.to_string()).or_default() += 1;
                    continue;
                }
            }
            if let Some(m) = fs.max_output_impedance {
                if filter::typical_peak_output_impedance(&tail) > m.0 {
                    *dropped.entry(IMPEDANCE.to_string()).or_default() += 1;
                    continue;
                }
            }
            // The load step with the bank's node held still: a filter that
            // misses the limit by more than STEP_SCREEN that way is not
            // searched (a screen, so the answer is no longer proven).
            if let Some(spec) = crate::transient::Spec::of(&problem.scenario) {
                let d = crate::transient::held_node_deviation(spec, &tail);
                if !(d <= spec.max_deviation * STEP_SCREEN) {
                    *dropped.entry(STEP.to_string()).or_default() += 1;
                    complete = false;
                    continue;
                }
            }
            let budget = best
                .as_ref()
                .map_or(f64::INFINITY, |(b, _)| b.key[0] - share[0]);
            for k in 0..ycap.len() {
                ycap[k] = ymax[k].min(budget * per_unit[k]);
            }
            if base.tail_ripple_floor(&tail, &ycap) > target {
                *dropped
                    .entry("no allowed bank reaches the target behind it".into())
                    .or_default() += 1;
                continue;
            }
            let figs = filter::tail_figures(problem, &tail);
            if let Some(why) = tail_violation(problem, &figs) {
                *dropped.entry(why.to_string()).or_default() += 1;
                continue;
            }
            batch.push((share, fd));
        }
        if batch.is_empty() {
            break 'outer;
        }
        let cutoff_of = |share: &[f64; 3]| best.as_ref().map(|(b, _)| b.key[0] - share[0]);
        let solve = |share: &[f64; 3], fd: &FilterDesign| {
            let p = problem_with(problem, fd);
            // With a load step each filter's search shares the budget of
            // one design (a deviation behind a filter is a long transform).
            let max_evaluations = if problem.scenario.transient.is_some() {
                settings.max_evaluations / MAX_FILTERS_STEP
            } else {
                settings.max_evaluations
            };
            let inner = Settings {
                cutoff: cutoff_of(share),
                progress: false,
                max_evaluations,
                ..settings.clone()
            };
            let out = design_for(&p, target, &inner);
            (p, out)
        };
        let outs: Vec<(Problem, DesignOutcome)> = if batch.len() == 1 {
            vec![solve(batch[0].0, batch[0].1)]
        } else {
            std::thread::scope(|scope| {
                let handles: Vec<_> = batch[1..]
                    .iter()
                    .map(|&(share, fd)| scope.spawn(move || solve(share, fd)))
                    .collect();
                let mut v = vec![solve(batch[0].0, batch[0].1)];
                for h in handles {
                    v.push(h.join().expect("a filter search does not panic"));
                }
                v
            })
        };
        for ((share, fd), (p, out)) in batch.into_iter().zip(outs) {
            searched += 1;
            stats.evaluations += out.stats.evaluations;
            stats.line_sets_solved += out.stats.line_sets_solved;
            stats.line_sets_total += out.stats.line_sets_total;
            stats.candidates = out.stats.candidates;
            stats.dominated = out.stats.dominated;
            stats.region_rounds = stats.region_rounds.max(out.stats.region_rounds);
            if !out.stats.proven {
                complete = false;
            }
            let Some(mut f) = out.found else {
                continue;
            };
            // The inductor's peak current against its saturation rating.
            let parts: Vec<usize> = f.bank.iter().map(|b| b.0).collect();
            let mut ev = p.search_evaluator(&parts);
            let local: Vec<(usize, u32)> =
                f.bank.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
            let w = crate::region::worst(&p, &mut ev, &local, Band::Limited);
            let (_, peak) = filter::inductor_current(&p, &mut ev, &local, Some(&w));
            let sat = problem
                .inductors
                .as_ref()
                .map_or(f64::INFINITY, |c| c.parts[fd.inductor].saturation_current);
            if peak > sat {
                *dropped
                    .entry("inductor peak current above its saturation current".into())
                    .or_default() += 1;
                // A different bank could have passed: not proven.
                complete = false;
                continue;
            }
            for j in 0..3 {
                f.key[j] += share[j];
            }
            if best.as_ref().is_none_or(|(b, _)| better(&f.key, &b.key)) {
                best = Some((f, fd.clone()));
            }
        }
    }
    stats.proven = complete;
    stats.seconds = t0.elapsed().as_secs_f64();
    let (found, filter) = match best {
        Some((f, d)) => (Some(f), Some(d)),
        None => (None, None),
    };
    let status = match (&found, complete) {
        (Some(_), true) => Status::Optimal,
        (Some(_), false) => Status::Feasible,
        (None, _) => Status::Infeasible,
    };
    FilterOutcome {
        status,
        found,
        filter,
        stats,
        filters_total,
        filters_searched: searched,
        dropped: dropped.into_iter().collect(),
    }
}
