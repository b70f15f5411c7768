//! Why a target cannot be met: the lowest ripple any allowed bank reaches
//! and the limits that stop a design. Called by the commands (never by
//! [`super::design_for`]), after a design came back infeasible, and by
//! `tradeoff` for its default lower end.
//!
//! The lowest ripple is found by bisection on the target with
//! [`super::design_for`] itself, so every probe is the same search as
//! `design` and every bank it returns is verified over the whole corner
//! region:
//!
//! 1. upper bracket: a greedy descent (from each promising line set, add the
//!    part that lowers the ripple most while the limits allow), its bank
//!    verified over the corner region ([`crate::region::worst`]);
//! 2. lower bracket: the harmonic floor (pp ≥ 1.53·|V_k|) with the largest
//!    admittance sum any allowed bank can have at each harmonic (every part
//!    at its count limit, no more than `max_count` parts and `max_lines`
//!    lines): no bank can go below it;
//! 3. probes, first just under the upper end (at 1/[`FIRST_REACH`] of it and
//!    closer, reaching further down while they find banks), then, after the
//!    first probe that finds none, at the geometric middle of the bracket
//!    (while a search's tables are small, two probes at once, at its
//!    geometric thirds, on two threads where the machine has two cores): a
//!    bank found lowers the upper end to that bank's verified ripple, no
//!    bank raises the lower end to the probe; stop when the bracket is
//!    within [`BISECT_TOLERANCE`] or after [`MAX_PROBES`] probes.
//!
//! The figure reported is the verified ripple of the best bank found, so
//! `design` meets it as a target, and a probe [`BISECT_TOLERANCE`] or less
//! below it found no bank. A probe that its budget stopped may have missed
//! one, so the figure is not a proven minimum (the harmonic floor is).

use super::search::{binomial_sum, line_sets, prune_dominated, Search};
use super::{design_for, Settings};
use crate::evaluator::Band;
use crate::limits::LimitId;
use crate::problem::Problem;
use serde::Serialize;
use serde_json::{json, Value};

/// The bisection stops when the upper end is within this fraction of the lower.
pub const BISECT_TOLERANCE: f64 = 0.0025;
/// Exact evaluations per line-count stage of one bisection probe.
pub(crate) const PROBE_EVALUATIONS: usize = 60_000;
/// Most `design_for` probes of the bisection.
pub const MAX_PROBES: usize = 14;
/// How far below the upper end the first probes reach (the ratio of the
/// upper end to the lower probe; the upper probe of a pair sits at its
/// fourth root, a single probe at its square root).
pub(crate) const FIRST_REACH: f64 = 1.04;

/// The lowest ripple found, with how it was found.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Lowest {
    /// The lowest worst-over-the-region ripple any allowed bank reached, V
    /// (infinite when no bank can be built).
    pub ripple_pp: f64,
    /// That bank (catalog indices and counts).
    #[serde(skip)]
    pub bank: Option<Vec<(usize, u32)>>,
    /// The greedy descent's verified figure (the first upper bracket), V.
    pub greedy_pp: f64,
    /// The proven lower bound (harmonic floor), V.
    pub floor_pp: f64,
    /// Lower end of the final bracket: `design` found no bank there, V.
    pub bracket_low: f64,
    /// `design_for` probes made.
    pub probes: usize,
    /// Wall time, s.
    pub seconds: f64,
}

/// Why a design is infeasible.
#[derive(Debug, Clone, Default)]
pub struct Explanation {
    /// The lowest ripple any allowed bank reaches.
    pub lowest: Lowest,
    /// The limits that stop a design.
    pub binding: Binding,
    /// With a load step: the lowest deviation any bank meeting every other
    /// limit reaches.
    pub lowest_deviation: Option<LowestDeviation>,
}

/// The lowest ripple and the binding limits for an infeasible `target`.
pub fn explain(problem: &Problem, target: f64, settings: &Settings) -> Explanation {
    Explanation {
        lowest: lowest_ripple(problem, settings),
        binding: binding(problem, target),
        lowest_deviation: lowest_deviation(problem, settings),
    }
}

/// Verified ripple of a bank (catalog indices) over the whole corner
/// region; infinite when the bank misses the scenario's load step.
fn verified(problem: &Problem, bank: &[(usize, u32)]) -> f64 {
    let parts: Vec<usize> = bank.iter().map(|b| b.0).collect();
    let mut ev = problem.search_evaluator(&parts);
    let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
    if ev.is_empty(&local) {
        return f64::INFINITY;
    }
    if let Some(d) = verified_deviation(problem, &ev.parts, &local) {
        if !(d
            <= problem
                .scenario
                .transient
                .as_ref()
                .map_or(f64::INFINITY, |t| t.max_deviation.0)
                * (1.0 + crate::transient::ROUNDING))
        {
            return f64::INFINITY;
        }
    }
    crate::region::worst(problem, &mut ev, &local, Band::Limited).value
}

/// The load step's deviation of a bank over the corner region (`None`
/// without `[transient]`).
fn verified_deviation(
    problem: &Problem,
    parts: &[crate::evaluator::PartModel],
    local: &[(usize, u32)],
) -> Option<f64> {
    let tail = problem
        .filter
        .as_ref()
        .map_or_else(Vec::new, |f| problem.tail_lines(f));
    let mut m = crate::transient::StepModel::new(&problem.scenario, parts)?.with_tail(tail);
    Some(m.worst(parts, local).deviation)
}

/// The lowest load-step deviation found, with its bank.
#[derive(Debug, Clone, Default, Serialize)]
pub struct LowestDeviation {
    /// The lowest deviation over the corner region any bank meeting every
    /// other limit reached (the ripple target left out), V.
    pub deviation: f64,
    /// That bank (catalog indices and counts).
    #[serde(skip)]
    pub bank: Option<Vec<(usize, u32)>>,
    /// Lower end of the final bracket, V: the settled value of the most
    /// capacitance the limits allow, or a probe `design` found no bank for.
    pub bracket_low: f64,
    /// `design_for` probes made.
    pub probes: usize,
}

/// The lowest load-step deviation any bank meeting every limit but the
/// ripple target reaches: bisection on `max_deviation` with
/// [`super::design_for`] at an open ripple target, from the cheapest bank
/// without the step (upper end) and the settled value of the most
/// capacitance the count limits allow (lower end). `None` without
/// `[transient]`.
pub fn lowest_deviation(problem: &Problem, settings: &Settings) -> Option<LowestDeviation> {
    let spec = crate::transient::Spec::of(&problem.scenario)?;
    let quiet = Settings {
        progress: false,
        milp_proposals: 0,
        ..settings.clone()
    };
    let with_limit = |t: Option<f64>| -> Option<Problem> {
        let mut sc = problem.scenario.clone();
        match t {
            Some(t) => {
                if let Some(tr) = sc.transient.as_mut() {
                    tr.max_deviation.0 = t;
                }
            }
            None => sc.transient = None,
        }
        Problem::new(sc, problem.catalog.clone()).ok()
    };
    let deviation_of = |bank: &[(usize, u32)]| -> f64 {
        let parts: Vec<usize> = bank.iter().map(|b| b.0).collect();
        let models: Vec<crate::evaluator::PartModel> =
            parts.iter().map(|&i| problem.part_model(i)).collect();
        let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
        verified_deviation(problem, &models, &local).unwrap_or(f64::INFINITY)
    };
    let mut out = LowestDeviation {
        deviation: f64::INFINITY,
        ..Default::default()
    };
    // Upper end: the cheapest bank with the step left open.
    let open = with_limit(None)?;
    if let Some(f) = design_for(&open, f64::MAX, &quiet).found {
        out.deviation = deviation_of(&f.bank);
        out.bank = Some(f.bank);
    }
    // Lower end: the most low-corner capacitance any allowed bank can have
    // (each part at its count limit, at most `max_lines` lines), settled.
    let (cands, _) = prune_dominated(problem, &problem.eligible);
    let s = Search::new(problem, &cands, f64::INFINITY);
    let mut caps: Vec<f64> = (0..s.parts.len())
        .map(|i| s.count_max[i] as f64 * s.parts[i].c_worst)
        .collect();
    caps.sort_by(|a, b| b.total_cmp(a));
    let own = problem
        .scenario
        .converter
        .internal_capacitance
        .map_or(0.0, |c| c.0);
    let c_max: f64 = caps.iter().take(s.lim.max_lines).sum::<f64>() + own;
    let mut lo = if c_max > 0.0 {
        spec.settled(c_max)
    } else {
        0.0
    };
    while out.probes < MAX_PROBES && out.deviation.is_finite() {
        if out.deviation <= lo * (1.0 + BISECT_TOLERANCE) {
            break;
        }
        let t = if lo > 0.0 {
            (lo * out.deviation).sqrt()
        } else {
            out.deviation * 0.5
        };
        out.probes += 1;
        let Some(p) = with_limit(Some(t)) else { break };
        match design_for(&p, f64::MAX, &quiet).found {
            Some(f) => {
                let d = deviation_of(&f.bank);
                if d < out.deviation {
                    out.deviation = d;
                    out.bank = Some(f.bank);
                } else {
                    // Cannot happen (the bank meets t < the upper end); stop.
                    break;
                }
            }
            None => lo = t,
        }
    }
    out.bracket_low = lo;
    Some(out)
}

/// The lowest worst-over-the-region ripple any allowed bank reaches (see the
/// module notes), searched with `settings` (those of the design it explains).
pub fn lowest_ripple(problem: &Problem, settings: &Settings) -> Lowest {
    let t0 = std::time::Instant::now();
    let (cands, _) = prune_dominated(problem, &problem.eligible);
    let mut out = Lowest {
        ripple_pp: f64::INFINITY,
        greedy_pp: f64::INFINITY,
        ..Default::default()
    };
    let internal = problem.scenario.converter.internal_capacitance.is_some();
    if cands.is_empty() && !internal {
        return out;
    }
    let (greedy, floor) = if cands.is_empty() {
        (Some(Vec::new()), 0.0)
    } else {
        greedy_and_floor(problem, &cands, settings.thread_count() >= 2)
    };
    out.floor_pp = floor;
    if let Some(b) = greedy {
        out.greedy_pp = verified(problem, &b);
        if out.greedy_pp.is_finite() {
            out.ripple_pp = out.greedy_pp;
            out.bank = Some(b);
        }
    }
    // Each probe is a design at a hard target; a smaller budget per stage
    // keeps the bisection fast (a probe that finds nothing only moves the
    // lower end of the bracket, never the figure reported).
    let quiet = Settings {
        progress: false,
        exhaustive_limit: settings.exhaustive_limit.min(200_000),
        milp_proposals: 0,
        max_evaluations: settings.max_evaluations.min(PROBE_EVALUATIONS),
        ..settings.clone()
    };
    let mut lo = floor.max(0.0);
    let mut hi = out.ripple_pp;
    if !hi.is_finite() {
        // No greedy bank: start from a loose target.
        hi = f64::INFINITY;
    }
    // Two probes at once hold two searches' tables: only where they are
    // small ([`super::two_searches_fit`]). The schedule (pairs or single probes) depends on the input alone, so
    // that the figure is the same on any machine; a pair runs on two
    // threads where there are two.
    let pairs = super::two_searches_fit(problem, cands.len());
    let parallel = settings.thread_count() >= 2;
    let keep = |out: &mut Lowest, f: Option<super::Found>| -> bool {
        match f {
            Some(f) => {
                if f.ripple_pp < out.ripple_pp {
                    out.ripple_pp = f.ripple_pp;
                    out.bank = Some(f.bank);
                }
                true
            }
            None => false,
        }
    };
    // The greedy bank is usually within a few per cent of the lowest
    // ripple and the harmonic floor far below it: the probes start just
    // under the upper end and reach further down (×4 in the logarithm)
    // while they keep finding banks; after the first probe that finds none
    // they split the bracket.
    let mut reach = FIRST_REACH;
    let mut galloping = true;
    while out.probes < MAX_PROBES {
        if hi.is_finite() && hi <= lo * (1.0 + BISECT_TOLERANCE) {
            break;
        }
        let gallop = galloping && hi.is_finite() && hi > lo * reach;
        if pairs && lo > 0.0 && hi.is_finite() && out.probes + 2 <= MAX_PROBES {
            // Two probes at once: from the top, at hi/reach and
            // hi/reach^¼, or at the thirds of the bracket (geometric), so
            // that it shrinks to a third per round instead of a half.
            let (t1, t2) = if gallop {
                (hi / reach, hi / reach.powf(0.25))
            } else {
                (
                    lo.powf(2.0 / 3.0) * hi.powf(1.0 / 3.0),
                    lo.powf(1.0 / 3.0) * hi.powf(2.0 / 3.0),
                )
            };
            out.probes += 2;
            let (f1, f2) = if parallel {
                std::thread::scope(|scope| {
                    let other = scope.spawn(|| design_for(problem, t2, &quiet).found);
                    let f1 = design_for(problem, t1, &quiet).found;
                    (f1, other.join().expect("a probe does not panic"))
                })
            } else {
                (
                    design_for(problem, t1, &quiet).found,
                    design_for(problem, t2, &quiet).found,
                )
            };
            let (ok1, ok2) = (keep(&mut out, f1), keep(&mut out, f2));
            if ok1 {
                hi = out.ripple_pp;
                if ok2 && gallop {
                    reach = reach.powi(4);
                } else {
                    galloping = false;
                }
            } else if ok2 {
                lo = t1;
                hi = out.ripple_pp;
                galloping = false;
            } else {
                lo = t2;
                galloping = false;
            }
            continue;
        }
        let t = if gallop {
            hi / reach.sqrt()
        } else if !hi.is_finite() {
            if lo > 0.0 {
                lo * 4.0
            } else {
                break;
            }
        } else if lo > 0.0 {
            (lo * hi).sqrt()
        } else {
            hi * 0.5
        };
        out.probes += 1;
        if keep(&mut out, design_for(problem, t, &quiet).found) {
            hi = out.ripple_pp;
            if gallop {
                reach = reach.powi(4);
            }
        } else {
            lo = t;
            galloping = false;
        }
    }
    out.bracket_low = lo;
    out.seconds = t0.elapsed().as_secs_f64();
    out
}

/// The greedy descent's best bank (catalog indices) and the harmonic floor
/// of any allowed bank.
fn greedy_and_floor(
    problem: &Problem,
    cands: &[usize],
    parallel: bool,
) -> (Option<Vec<(usize, u32)>>, f64) {
    let mut s = Search::new(problem, cands, f64::INFINITY);
    let floor = floor_of(&s);
    let free = s.lim.max_lines.saturating_sub(s.required_parts.len());
    let all: Vec<usize> = (0..s.parts.len()).collect();
    let sets = if binomial_sum(all.len(), free) <= 20_000 {
        line_sets(&s.required_parts.clone(), &all, free)
    } else {
        // Rank parts by the lowest ripple they could reach alone (the
        // harmonic floor at their count limit): at an infinite target every
        // harmonic's requirement is zero and cannot rank them.
        let mut order = all.clone();
        let mut sum = vec![0.0; s.harmonics];
        let terms = s.ev.floor_terms();
        let alone: Vec<f64> = all
            .iter()
            .map(|&i| {
                for k in 0..s.harmonics {
                    sum[k] = s.count_max[i] as f64 * s.adm_mag[i * s.harmonics + k];
                }
                crate::evaluator::ripple_floor_with(&terms, &sum)
            })
            .collect();
        order.sort_by(|&x, &y| alone[x].total_cmp(&alone[y]));
        order.truncate(12);
        // With, at harmonics spread over the band, the parts of most
        // admittance there (a bank mixes bulk and high-frequency parts).
        let mut k = 0usize;
        while k < s.harmonics {
            let mut by: Vec<usize> = all.clone();
            let a = |i: usize| s.count_max[i] as f64 * s.adm_mag[i * s.harmonics + k];
            by.sort_by(|&x, &y| a(y).total_cmp(&a(x)));
            for &i in by.iter().take(3) {
                if !order.contains(&i) {
                    order.push(i);
                }
            }
            k = 2 * k + 1;
        }
        line_sets(&s.required_parts.clone(), &order, free)
    };
    // Optimistic floor per set, then greedy descent in floor order.
    let terms = s.ev.floor_terms();
    let mut floored: Vec<(f64, Vec<usize>)> = sets
        .into_iter()
        .filter(|set| set.iter().all(|&i| s.count_max[i] >= s.count_min[i]))
        .map(|set| {
            let mut sum = vec![0.0; s.harmonics];
            for &i in &set {
                for k in 0..s.harmonics {
                    sum[k] += s.count_max[i] as f64 * s.adm_mag[i * s.harmonics + k];
                }
            }
            (crate::evaluator::ripple_floor_with(&terms, &sum), set)
        })
        .collect();
    floored.sort_by(|x, y| x.0.total_cmp(&y.0));
    // The descents in floor order, over `lanes` lanes (lane j takes sets
    // j, j + lanes, …); a lane stops at the first set whose floor is not
    // below its best. The lowest ripple over the lanes, the earliest set on
    // a tie, is the one a single pass finds: a set left out has a floor,
    // hence a ripple, no lower than a figure already found before it.
    let top = &floored[..floored.len().min(MIN_RIPPLE_SETS)];
    let lanes = if parallel && top.len() > 1 { 2 } else { 1 };
    // A lane's best: its ripple, the set's place in floor order, the bank.
    type Descent = (f64, usize, Vec<(usize, u32)>);
    let lane = |s: &mut Search, j: usize| -> Option<Descent> {
        let mut best: Option<Descent> = None;
        for (idx, (f, set)) in top.iter().enumerate().skip(j).step_by(lanes) {
            if best.as_ref().is_some_and(|b| *f >= b.0) {
                break;
            }
            if let Some((r, bank)) = descend(s, set) {
                if best.as_ref().is_none_or(|b| r < b.0) {
                    best = Some((r, idx, bank));
                }
            }
        }
        best
    };
    let found: Vec<Option<Descent>> = if lanes == 2 {
        let mut other = s.clone();
        std::thread::scope(|scope| {
            let h = scope.spawn(|| lane(&mut other, 1));
            let first = lane(&mut s, 0);
            vec![first, h.join().expect("a descent does not panic")]
        })
    } else {
        vec![lane(&mut s, 0)]
    };
    let best = found
        .into_iter()
        .flatten()
        .min_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    let best_bank =
        best.map(|(_, _, bank)| bank.iter().map(|&(i, n)| (s.catalog_index[i], n)).collect());
    (best_bank, floor)
}

/// Harmonic floor of every allowed bank: at each harmonic the largest
/// Σ n_i |Y_ik| is at most the smaller of (a) the `max_lines` largest
/// `ub_i·|Y_ik|` and (b) the `max_count` largest single admittances taken
/// with multiplicity `ub_i`; [`crate::evaluator::Evaluator::ripple_floor_for`]
/// turns that into a ripple no bank can go below.
fn floor_of(s: &Search) -> f64 {
    let np = s.parts.len();
    let mut sum = vec![0.0; s.harmonics];
    let mut col: Vec<(f64, u32)> = Vec::with_capacity(np);
    for k in 0..s.harmonics {
        col.clear();
        col.extend((0..np).map(|i| (s.adm_mag[i * s.harmonics + k], s.count_max[i])));
        col.sort_by(|x, y| y.0.total_cmp(&x.0));
        let mut by_line: Vec<f64> = col.iter().map(|&(a, u)| a * u as f64).collect();
        by_line.sort_by(|x, y| y.total_cmp(x));
        let lines: f64 = by_line.iter().take(s.lim.max_lines).sum();
        let mut left = s.lim.value(LimitId::MaxCount);
        let mut units = 0.0;
        for &(a, u) in &col {
            if left <= 0.0 {
                break;
            }
            let take = (u as f64).min(left);
            units += take * a;
            left -= take;
        }
        sum[k] = lines.min(units);
    }
    s.ev.ripple_floor_for(&sum)
}

/// Line sets the lowest-ripple search descends from (in floor order).
pub(super) const MIN_RIPPLE_SETS: usize = 400;

/// Greedy: from the lower bounds, add the part that lowers the ripple most
/// while the limits allow; stop when nothing helps.
pub(super) fn descend(s: &mut Search, set: &[usize]) -> Option<(f64, Vec<(usize, u32)>)> {
    let mut counts: Vec<u32> = set.iter().map(|&i| s.count_min[i]).collect();
    let fits = |s: &Search, counts: &[u32]| -> bool {
        set.iter().zip(counts).all(|(&i, &n)| n <= s.count_max[i]) && s.lim.upper_hold(set, counts)
    };
    if !fits(s, &counts) {
        return None;
    }
    let eval = |s: &mut Search, counts: &[u32]| -> f64 {
        s.bank_buf.clear();
        s.bank_buf
            .extend(set.iter().zip(counts).map(|(&a, &b)| (a, b)));
        s.evals += 1;
        let Search { ev, bank_buf, .. } = s;
        ev.ripple_pp(
            bank_buf,
            crate::evaluator::Corner::Worst,
            crate::evaluator::Band::Limited,
        )
    };
    let mut cur = eval(s, &counts);
    loop {
        let mut best: Option<(f64, usize)> = None;
        for j in 0..set.len() {
            counts[j] += 1;
            if fits(s, &counts) {
                let r = eval(s, &counts);
                if r < cur && best.is_none_or(|b| r < b.0) {
                    best = Some((r, j));
                }
            }
            counts[j] -= 1;
        }
        match best {
            Some((r, j)) => {
                counts[j] += 1;
                cur = r;
            }
            None => break,
        }
    }
    Some((
        cur,
        set.iter().zip(&counts).map(|(&a, &b)| (a, b)).collect(),
    ))
}

/// Whether the search's own bounds show that no bank of `p` meets `target`
/// (so `binding` need not run a design for that relaxation): the harmonic
/// floor of every allowed bank lies above the target, or the disjunctive
/// bound finds a harmonic no allowed bank can satisfy.
fn provably_infeasible(p: &Problem, target: f64) -> bool {
    let (cands, _) = prune_dominated(p, &p.eligible);
    if cands.is_empty() {
        return p.scenario.converter.internal_capacitance.is_none();
    }
    let s = Search::new(p, &cands, target);
    floor_of(&s) > target * (1.0 + 1e-9) || s.global_bound(s.lim.max_lines).is_infinite()
}

/// Relax each limit in turn; those whose removal lets the target be met bind.
pub fn binding(problem: &Problem, target: f64) -> Binding {
    use crate::scenario::{Plain, Scenario};
    let base = &problem.scenario;
    type Relax = Box<dyn Fn(&mut Scenario)>;
    let mut tries: Vec<(&str, Relax)> = Vec::new();
    if base.converter.max_capacitance.is_some() {
        tries.push((
            "max_capacitance",
            Box::new(|s: &mut Scenario| s.converter.max_capacitance = None),
        ));
    }
    if base.board.max_count.is_some() {
        tries.push((
            "max_count",
            Box::new(|s: &mut Scenario| s.board.max_count = None),
        ));
    }
    if base.board.max_area.is_some() {
        tries.push((
            "max_area",
            Box::new(|s: &mut Scenario| s.board.max_area = None),
        ));
    }
    tries.push((
        "max_lines",
        Box::new(|s: &mut Scenario| s.board.max_lines = Some(s.max_lines() + 2)),
    ));
    tries.push((
        "max_per_part",
        Box::new(|s: &mut Scenario| {
            s.selection.max_per_part = s.selection.max_per_part.saturating_mul(4).min(10000)
        }),
    ));
    if base.board.max_height.is_some() {
        tries.push((
            "max_height",
            Box::new(|s: &mut Scenario| s.board.max_height = Some(Plain(1e9))),
        ));
    }
    if !base.selection.exclude.is_empty() {
        tries.push((
            "exclude",
            Box::new(|s: &mut Scenario| s.selection.exclude.clear()),
        ));
    }
    if !base.selection.allow_nrnd {
        tries.push((
            "status nrnd",
            Box::new(|s: &mut Scenario| s.selection.allow_nrnd = true),
        ));
    }
    if !base.selection.require.is_empty() {
        tries.push((
            "require",
            Box::new(|s: &mut Scenario| s.selection.require.clear()),
        ));
    }
    if base.transient.is_some() {
        let relax = crate::limits::limit(crate::limits::LimitId::MaxDeviation).relax;
        tries.push(("max_deviation", Box::new(relax)));
    }
    if base.converter.min_capacitance.0 > 0.0 {
        tries.push((
            "min_capacitance",
            Box::new(|s: &mut Scenario| s.converter.min_capacitance.0 = 0.0),
        ));
    }
    let mut out = Vec::new();
    let mut details = Vec::new();
    let quick = Settings {
        progress: false,
        exhaustive_limit: 20_000,
        pool: 24,
        milp_proposals: 0,
        milp_seconds: 1.0,
        max_evaluations: 150_000,
        ..Settings::default()
    };
    let mut relaxed: Vec<(&str, Problem)> = Vec::new();
    for (name, relax) in &tries {
        let mut sc = base.clone();
        relax(&mut sc);
        let Ok(mut p) = Problem::new(sc, problem.catalog.clone()) else {
            continue;
        };
        p.inductors = problem.inductors.clone();
        p.inductors_eligible = problem.inductors_eligible.clone();
        p.inductors_excluded = problem.inductors_excluded.clone();
        p.filter = problem.filter.clone();
        if provably_infeasible(&p, target) {
            continue;
        }
        relaxed.push((name, p));
    }
    // One design per relaxed limit, independent of each other: two at once
    // where the machine has the cores and their tables are small, each
    // answer kept in the order of the limits.
    let workers = if super::two_searches_fit(problem, problem.eligible.len()) {
        std::thread::available_parallelism()
            .map_or(1, |n| n.get())
            .min(2)
    } else {
        1
    };
    let found = super::map_on_threads(&relaxed, workers, |(_, p)| {
        design_for(p, target, &quick).found
    });
    for ((name, _), f) in relaxed.iter().zip(found) {
        if let Some(f) = f {
            out.push(name.to_string());
            details.extend(details_of(problem, &f.bank, Some(name)));
        }
    }
    let all_relax = tries;
    // Ripple-current ratings: ignore them.
    let mut p = Problem {
        scenario: base.clone(),
        catalog: problem.catalog.clone(),
        eligible: problem.eligible.clone(),
        excluded: vec![],
        inductors: problem.inductors.clone(),
        inductors_eligible: problem.inductors_eligible.clone(),
        inductors_excluded: vec![],
        ops: problem.ops.clone(),
        region_ops: problem.region_ops.clone(),
        warnings: vec![],
        filter: problem.filter.clone(),
        template: None,
    };
    if p.eligible
        .iter()
        .any(|&i| p.catalog.parts[i].ripple_current.is_some())
    {
        for part in p.catalog.parts.iter_mut() {
            part.ripple_current = None;
        }
        if let Some(f) = design_for(&p, target, &quick).found {
            out.push("ripple_current".into());
            details.extend(details_of(problem, &f.bank, Some("ripple_current")));
        }
    }
    if out.is_empty() {
        // No single limit: relax them all at once. If that reaches the
        // target, the limits its bank breaks bind together; if not, the
        // eligible parts themselves cannot reach it.
        let mut sc = base.clone();
        for (_, relax) in &all_relax {
            relax(&mut sc);
        }
        let mut cat = problem.catalog.clone();
        for part in cat.parts.iter_mut() {
            part.ripple_current = None;
        }
        let found = Problem::new(sc, cat)
            .ok()
            .filter(|p| !provably_infeasible(p, target))
            .and_then(|p| design_for(&p, target, &quick).found);
        match found {
            Some(f) => {
                let details = details_of(problem, &f.bank, None);
                let mut names: Vec<String> = Vec::new();
                for d in &details {
                    if !names.contains(&d.limit) {
                        names.push(d.limit.clone());
                    }
                }
                return Binding {
                    limits: names,
                    together: true,
                    details,
                };
            }
            None => out.push("catalog".into()),
        }
    }
    Binding {
        limits: out,
        together: false,
        details,
    }
}

/// The limits that stop a design.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Binding {
    /// Limit names; `["catalog"]` when even relaxing every limit does not
    /// reach the target.
    pub limits: Vec<String>,
    /// No single limit binds: relaxing these together reaches the target.
    pub together: bool,
    /// For each binding limit, what the relaxed design's bank needed.
    pub details: Vec<BindingDetail>,
}

/// One binding limit and by how much: the scenario's value and the value
/// the bank found with that limit relaxed has (JSON `binding_detail`).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct BindingDetail {
    /// The limit's name, as in `binding`.
    pub limit: String,
    /// The part a per-part limit belongs to (height, ripple current,
    /// count per part, exclusion, status).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub part: Option<String>,
    /// The scenario's (or the catalog's) value of the limit.
    pub value: Value,
    /// What the relaxed design's bank needed.
    pub needed: Value,
    /// Unit of `value` and `needed` (`F`, `A`, `mm²`, `mm` or empty).
    pub unit: String,
}

impl BindingDetail {
    /// `max_count 12 → 17`, `max_height 3 mm → 5.8 mm (P4)`.
    pub fn text(&self) -> String {
        let f = |v: &Value| match v.as_f64() {
            Some(x) => match self.unit.as_str() {
                "F" | "A" | "V" => crate::units::format_si(x, &self.unit),
                "" => format!("{}", (x * 1000.0).round() / 1000.0),
                u => format!("{} {u}", (x * 100.0).round() / 100.0),
            },
            None => v.as_str().unwrap_or("").to_string(),
        };
        let part = self
            .part
            .as_ref()
            .map_or(String::new(), |p| format!(" ({p})"));
        format!(
            "{} {} → {}{part}",
            self.limit,
            f(&self.value),
            f(&self.needed)
        )
    }
}

/// The limits a bank (found with limits relaxed) breaks in the original
/// problem, each with the scenario's value and the bank's; `only` keeps one
/// limit name.
fn details_of(problem: &Problem, bank: &[(usize, u32)], only: Option<&str>) -> Vec<BindingDetail> {
    let mut out = Vec::new();
    let mut push = |limit: &str, part: Option<String>, value: Value, needed: Value, unit: &str| {
        if only.is_some_and(|o| o != limit) {
            return;
        }
        out.push(BindingDetail {
            limit: limit.to_string(),
            part,
            value,
            needed,
            unit: unit.to_string(),
        });
    };
    if let Ok(a) = crate::assessment::assess(problem, bank) {
        for c in a.checks.iter().filter(|c| !c.ok) {
            let (head, rest) = c.name.split_once(' ').unwrap_or((c.name.as_str(), ""));
            let name = match head {
                "height" => "max_height",
                "ripple_pp" | "voltage" | "temperature_min" | "temperature_max" => continue,
                other => other,
            };
            let part = c
                .part
                .clone()
                .or_else(|| (!rest.is_empty()).then(|| rest.to_string()));
            push(name, part, json!(c.limit), json!(c.value), &c.unit);
        }
    }
    let base = &problem.scenario;
    for &(i, n) in bank {
        let part = &problem.catalog.parts[i];
        if let Some(r) = crate::problem::ineligibility(base, part, base.selection.objective) {
            if r.contains("excluded") {
                push(
                    "exclude",
                    Some(part.id.clone()),
                    json!("excluded"),
                    json!(format!("{n} used")),
                    "",
                );
            } else if r.contains("nrnd") {
                push(
                    "status nrnd",
                    Some(part.id.clone()),
                    json!("not allowed"),
                    json!(format!("{n} used")),
                    "",
                );
            }
        }
    }
    out
}
