//! Rework: the fewest changed line items, then the objective.

use super::search::{pool, prune_dominated, run_sets, Search};
use super::{Found, Settings, Stats, Status};
use crate::problem::Problem;
use std::time::Instant;

/// Result of a rework: the fewest changed line items, then the objective.
#[derive(Debug, Clone)]
pub struct Rework {
    /// How good the answer is.
    pub status: Status,
    /// The new bank, unless infeasible.
    pub found: Option<Found>,
    /// Changed line items (removed plus added) of `found`.
    pub changes: usize,
    /// What the search did.
    pub stats: Stats,
}

/// The bank nearest to `current` (fewest removed plus added line items,
/// then the scenario's objective) that meets the target and every limit.
/// `forced_out` are catalog indices that must go; the other parts of
/// `current` may stay (their counts may change) or go.
pub fn rework(
    problem: &Problem,
    current: &[(usize, u32)],
    forced_out: &[usize],
    settings: &Settings,
) -> Rework {
    let t0 = Instant::now();
    let target = problem.scenario.design_target();
    let kept_cat: Vec<usize> = current
        .iter()
        .map(|b| b.0)
        .filter(|i| !forced_out.contains(i))
        .collect();
    // Parts that must go can dominate nothing.
    let allowed: Vec<usize> = problem
        .eligible
        .iter()
        .copied()
        .filter(|i| !forced_out.contains(i))
        .collect();
    let (mut cands, dominated) = prune_dominated(problem, &allowed);
    for &i in &kept_cat {
        if !cands.contains(&i) {
            cands.push(i);
        }
    }
    let mut stats = Stats {
        candidates: cands.len(),
        dominated,
        ..Default::default()
    };
    let mut s = Search::new(problem, &cands, target);
    s.budget = settings.max_evaluations;
    let local = |cat: usize| cands.iter().position(|&c| c == cat).expect("candidate");
    let kept: Vec<usize> = kept_cat.iter().map(|&i| local(i)).collect();
    let mut adds: Vec<usize> = (0..s.parts.len()).filter(|i| !kept.contains(i)).collect();
    let mut exhaustive = true;
    if adds.len() > settings.pool * 2 {
        let keep: Vec<usize> = pool(&s, settings.pool * 2);
        adds.retain(|i| keep.contains(i));
        exhaustive = false;
    }
    let base = forced_out.len();
    let max_lines = s.lim.max_lines;
    let mut found_at = None;
    for extra in 0..=(kept.len() + max_lines) {
        let mut sets: Vec<Vec<usize>> = Vec::new();
        for r in 0..=extra.min(kept.len()) {
            let a = extra - r;
            if a > adds.len() {
                continue;
            }
            for removed in combinations(&kept, r) {
                let stay: Vec<usize> = kept
                    .iter()
                    .copied()
                    .filter(|i| !removed.contains(i))
                    .collect();
                if stay.len() + a > max_lines {
                    continue;
                }
                for added in combinations(&adds, a) {
                    let mut set = stay.clone();
                    set.extend(added);
                    if set.is_empty() || !s.required.iter().all(|q| set.contains(q)) {
                        continue;
                    }
                    sets.push(set);
                }
            }
        }
        if sets.is_empty() {
            continue;
        }
        stats.line_sets_total += sets.len();
        run_sets(&mut s, sets, settings, "rework");
        if s.inc.is_some() {
            found_at = Some(base + extra);
            break;
        }
    }
    stats.evaluations = s.evals;
    stats.line_sets_solved = s.sets_solved;
    stats.stopped = s.stopped;
    stats.exhaustive = exhaustive && !s.stopped;
    stats.seconds = t0.elapsed().as_secs_f64();
    let found = s.inc.take().map(|(key, bank, r)| Found {
        bank: bank.iter().map(|&(i, n)| (cands[i], n)).collect(),
        key,
        ripple_pp: r,
    });
    let status = match (&found, stats.exhaustive) {
        (Some(_), true) => Status::Optimal,
        (Some(_), false) => Status::Feasible,
        (None, _) => Status::Infeasible,
    };
    Rework {
        status,
        found,
        changes: found_at.unwrap_or(0),
        stats,
    }
}

/// All `k`-element subsets of `items`, in order.
pub(super) fn combinations(items: &[usize], k: usize) -> Vec<Vec<usize>> {
    let mut out = Vec::new();
    let mut cur = Vec::with_capacity(k);
    pub(super) fn go(
        items: &[usize],
        start: usize,
        k: usize,
        cur: &mut Vec<usize>,
        out: &mut Vec<Vec<usize>>,
    ) {
        if cur.len() == k {
            out.push(cur.clone());
            return;
        }
        for j in start..items.len() {
            cur.push(items[j]);
            go(items, j + 1, k, cur, out);
            cur.pop();
        }
    }
    go(items, 0, k, &mut cur, &mut out);
    out
}
