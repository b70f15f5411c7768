//! Rework: the fewest changed line items, then the fewest changed counts,
//! then the objective, then same-footprint replacements.

use super::search::{pool, prune_dominated, run_sets};
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
    /// Kept lines whose count changed.
    pub count_changes: usize,
    /// What the search did.
    pub stats: Stats,
}

/// The bank nearest to `current` that meets the target and every limit:
/// fewest removed plus added line items, then fewest kept lines whose count
/// changes, then the scenario's objective, then the most added lines in the
/// case (footprint) of a removed line.
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
    let mut cuts: Vec<super::Cut> = Vec::new();
    let mut verified: Option<f64> = None;
    let mut round = 0;
    let (mut s, found_at, proven, adds, base, max_lines) = loop {
        round += 1;
        let mut s = super::search_with(problem, &cands, target, &cuts);
        s.budget = settings.max_evaluations;
        let local = |cat: usize| cands.iter().position(|&c| c == cat).expect("candidate");
        let kept: Vec<usize> = kept_cat.iter().map(|&i| local(i)).collect();
        let mut adds: Vec<usize> = (0..s.parts.len()).filter(|i| !kept.contains(i)).collect();
        let mut proven = true;
        if adds.len() > settings.pool * 2 {
            let keep: Vec<usize> = pool(&s, settings.pool * 2);
            adds.retain(|i| keep.contains(i));
            proven = false;
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
                        if set.is_empty() || !s.required_parts.iter().all(|q| set.contains(q)) {
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
            if s.incumbent.is_some() {
                found_at = Some(base + extra);
                break;
            }
        }
        // The bank found must hold over the whole corner region (cutting planes).
        if let Some((_, bank, _)) = s.incumbent.clone() {
            match super::region_cut(problem, &mut s, &bank, target) {
                Ok(v) => verified = Some(v),
                Err(cut) if round < super::MAX_REGION_ROUNDS => {
                    cuts.push(cut);
                    continue;
                }
                Err(_) => {
                    s.incumbent = None;
                    found_at = None;
                }
            }
        }
        break (s, found_at, proven, adds, base, max_lines);
    };
    stats.evaluations = s.evals;
    stats.line_sets_solved = s.sets_solved;
    stats.stopped = s.stopped;
    stats.proven = proven && !s.stopped;
    let mut found = s.incumbent.take().map(|(key, bank, r)| Found {
        bank: bank.iter().map(|&(i, n)| (cands[i], n)).collect(),
        key,
        ripple_pp: verified.unwrap_or(r),
    });
    // Second stage: among the banks with that fewest number of changed line
    // items, the fewest changed counts, then the objective, then footprints.
    if let (Some(level), Some(f)) = (found_at, found.as_mut()) {
        let pool_cat: Vec<usize> = if allowed.len() <= settings.pool * 2 {
            allowed
                .iter()
                .copied()
                .filter(|i| !kept_cat.contains(i))
                .collect()
        } else {
            adds.iter().map(|&i| cands[i]).collect()
        };
        let (better, complete, evals) = refine(
            problem,
            current,
            &kept_cat,
            &pool_cat,
            level - base,
            max_lines,
            f,
        );
        stats.evaluations += evals;
        if !complete {
            stats.proven = false;
        }
        if let Some(b) = better {
            *f = b;
        }
    }
    stats.seconds = t0.elapsed().as_secs_f64();
    let count_changes = found
        .as_ref()
        .map_or(0, |f| count_changes(current, &f.bank));
    let status = match (&found, stats.proven) {
        (Some(_), true) => Status::Optimal,
        (Some(_), false) => Status::Feasible,
        (None, _) => Status::Infeasible,
    };
    Rework {
        status,
        found,
        changes: found_at.unwrap_or(0),
        count_changes,
        stats,
    }
}

/// Kept lines (in both banks) whose count differs.
pub(crate) fn count_changes(old: &[(usize, u32)], new: &[(usize, u32)]) -> usize {
    old.iter()
        .filter(|o| new.iter().any(|n| n.0 == o.0 && n.1 != o.1))
        .count()
}

/// Added lines whose case code equals that of a removed line.
pub(crate) fn same_case(problem: &Problem, old: &[(usize, u32)], new: &[(usize, u32)]) -> usize {
    let parts = &problem.catalog.parts;
    let removed: Vec<&str> = old
        .iter()
        .filter(|o| !new.iter().any(|n| n.0 == o.0))
        .filter_map(|o| parts[o.0].case.as_deref())
        .collect();
    new.iter()
        .filter(|n| !old.iter().any(|o| o.0 == n.0))
        .filter(|n| {
            parts[n.0]
                .case
                .as_deref()
                .is_some_and(|c| removed.contains(&c))
        })
        .count()
}

/// Largest count vectors enumerated for one line set and one choice of
/// kept lines whose count may change, and for the whole second stage.
const REFINE_PER_SET: u64 = 40_000;
const REFINE_TOTAL: u64 = 4_000_000;

/// The second stage of [`rework`]: enumerate every bank with exactly
/// `extra` changed line items (kept lines of `current` minus removals plus
/// additions from `pool`) by increasing number of changed counts, and return
/// the best by (changed counts, objective, same-footprint additions) if it
/// beats `found`. Also returns whether the enumeration was complete, and the
/// number of exact evaluations.
fn refine(
    problem: &Problem,
    current: &[(usize, u32)],
    kept: &[usize],
    pool: &[usize],
    extra: usize,
    max_lines: usize,
    found: &Found,
) -> (Option<Found>, bool, usize) {
    use crate::assessment::{assess_with, AssessOptions};
    use crate::scenario::Objective;
    let sc = &problem.scenario;
    let target = sc.design_target();
    let max_n = sc.selection.max_per_part.max(1);
    let universe: Vec<usize> = kept.iter().chain(pool).copied().collect();
    let mut ev = problem.search_evaluator(&universe);
    let local_of = |cat: usize| {
        universe
            .iter()
            .position(|&u| u == cat)
            .expect("in universe")
    };
    let cur_count = |cat: usize| current.iter().find(|b| b.0 == cat).map_or(0, |b| b.1);
    let objective = |a: &crate::assessment::Assessment| match sc.selection.objective {
        Objective::Cost => a.cost,
        Objective::Area => a.area,
        Objective::Count => a.count as f64,
    };
    let c0 = count_changes(current, &found.bank);
    let mut complete = true;
    let mut evals: u64 = 0;
    for c in 0..=c0 {
        // (objective, same-case additions, bank, ripple) of the best so far at `c`.
        let mut best: Option<(f64, usize, Vec<(usize, u32)>, f64)> = None;
        for r in 0..=extra.min(kept.len()) {
            let a = extra - r;
            if a > pool.len() {
                continue;
            }
            for removed in combinations(kept, r) {
                let stay: Vec<usize> = kept
                    .iter()
                    .copied()
                    .filter(|i| !removed.contains(i))
                    .collect();
                if stay.len() + a > max_lines || c > stay.len() {
                    continue;
                }
                for added in combinations(pool, a) {
                    if stay.is_empty() && added.is_empty() {
                        continue;
                    }
                    for changing in combinations(&stay, c) {
                        let free: Vec<usize> = added.iter().chain(&changing).copied().collect();
                        let size = (max_n as u64).saturating_pow(free.len() as u32);
                        if size > REFINE_PER_SET || evals + size > REFINE_TOTAL {
                            complete = false;
                            continue;
                        }
                        let mut counts = vec![1u32; free.len()];
                        loop {
                            // A changing line must differ from its current count.
                            let differs = changing
                                .iter()
                                .enumerate()
                                .all(|(j, &k)| counts[added.len() + j] != cur_count(k));
                            if differs {
                                let mut bank: Vec<(usize, u32)> = stay
                                    .iter()
                                    .filter(|k| !changing.contains(k))
                                    .map(|&k| (k, cur_count(k)))
                                    .collect();
                                bank.extend(free.iter().zip(&counts).map(|(&k, &n)| (k, n)));
                                let local: Vec<(usize, u32)> =
                                    bank.iter().map(|&(k, n)| (local_of(k), n)).collect();
                                evals += 1;
                                if ev.ripple_check(&local, target) <= target {
                                    let asm = assess_with(
                                        problem,
                                        &mut ev,
                                        &bank,
                                        &local,
                                        &AssessOptions::default(),
                                    );
                                    if asm.all_ok {
                                        let obj = objective(&asm);
                                        let sc_n = same_case(problem, current, &bank);
                                        let better = match &best {
                                            None => true,
                                            Some((bo, bs, _, _)) => {
                                                let tie =
                                                    (obj - bo).abs() <= 1e-9 * bo.abs().max(1e-12);
                                                (!tie && obj < *bo) || (tie && sc_n > *bs)
                                            }
                                        };
                                        if better {
                                            best = Some((obj, sc_n, bank, asm.ripple_pp));
                                        }
                                    }
                                }
                            }
                            // Next count vector.
                            let mut j = 0;
                            while j < counts.len() && counts[j] == max_n {
                                counts[j] = 1;
                                j += 1;
                            }
                            if j == counts.len() {
                                break;
                            }
                            counts[j] += 1;
                        }
                    }
                }
            }
        }
        if let Some((obj, _, bank, r)) = best {
            let mut key = found.key.clone();
            if let Some(k0) = key.first_mut() {
                *k0 = obj;
            }
            return (
                Some(Found {
                    bank,
                    key,
                    ripple_pp: r,
                }),
                complete,
                evals as usize,
            );
        }
    }
    (None, complete, evals as usize)
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
