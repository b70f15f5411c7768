//! The lowest ripple the other limits allow (for infeasible targets).

use super::search::{binomial_sum, line_sets, Search};
use super::{design_for, Settings};
use crate::problem::Problem;

/// The lowest worst-corner ripple any bank allowed by the other limits
/// reaches (searched, not proven), and that bank.
pub fn min_ripple(problem: &Problem, cands: &[usize]) -> (f64, Option<Vec<(usize, u32)>>) {
    if cands.is_empty() {
        return (f64::INFINITY, None);
    }
    let mut s = Search::new(problem, cands, f64::INFINITY);
    let free = s.lim.max_lines.saturating_sub(s.required.len());
    let all: Vec<usize> = (0..s.parts.len()).collect();
    let sets = if binomial_sum(all.len(), free) <= 20_000 {
        line_sets(&s.required.clone(), &all, free)
    } else {
        // Rank parts by their admittance at the most demanding harmonic.
        let mut order = all.clone();
        let k = (0..s.n)
            .max_by(|&x, &y| s.q[x].total_cmp(&s.q[y]))
            .unwrap_or(0);
        order.sort_by(|&x, &y| {
            (s.ub[y] as f64 * s.a[y * s.n + k]).total_cmp(&(s.ub[x] as f64 * s.a[x * s.n + k]))
        });
        order.truncate(24);
        line_sets(&s.required.clone(), &order, free)
    };
    // Optimistic floor per set, then greedy descent in floor order.
    let mut floored: Vec<(f64, Vec<usize>)> = sets
        .into_iter()
        .filter(|set| set.iter().all(|&i| s.ub[i] >= s.lb[i]))
        .map(|set| {
            let mut sum = vec![0.0; s.n];
            for &i in &set {
                for k in 0..s.n {
                    sum[k] += s.ub[i] as f64 * s.a[i * s.n + k];
                }
            }
            (s.ev.ripple_floor_for(&sum), set)
        })
        .collect();
    floored.sort_by(|x, y| x.0.total_cmp(&y.0));
    let mut best = f64::INFINITY;
    let mut best_bank = None;
    for (floor, set) in floored.iter().take(MIN_RIPPLE_SETS) {
        if *floor >= best {
            break;
        }
        if let Some((r, bank)) = descend(&mut s, set) {
            if r < best {
                best = r;
                best_bank = Some(bank.iter().map(|&(i, n)| (s.catalog_index[i], n)).collect());
            }
        }
    }
    // Polish: ask the exact search for a bank a little below the best found,
    // a few times (each bounded), so the figure is not just the greedy one.
    let polish = Settings {
        explain: false,
        milp_proposals: 0,
        max_evaluations: REFINE_EVALUATIONS,
        ..Settings::default()
    };
    for _ in 0..REFINE_ROUNDS {
        if !best.is_finite() {
            break;
        }
        match design_for(problem, best * (1.0 - REFINE_STEP), &polish).found {
            Some(f) if f.ripple_pp < best => {
                best = f.ripple_pp;
                best_bank = Some(f.bank);
            }
            _ => break,
        }
    }
    (best, best_bank)
}

/// Rounds, step and work of the exact polish of the lowest ripple.
const REFINE_ROUNDS: usize = 4;
const REFINE_STEP: f64 = 0.01;
const REFINE_EVALUATIONS: usize = 300_000;

/// Line sets the lowest-ripple search descends from (in floor order).
pub(super) const MIN_RIPPLE_SETS: usize = 400;

/// Greedy: from the lower bounds, add the part that lowers the ripple most
/// while the limits allow; stop when nothing helps.
pub(super) fn descend(s: &mut Search, set: &[usize]) -> Option<(f64, Vec<(usize, u32)>)> {
    let mut counts: Vec<u32> = set.iter().map(|&i| s.lb[i]).collect();
    let fits = |s: &Search, counts: &[u32]| -> bool {
        let (mut cap, mut cnt, mut area) = (0.0, 0.0, 0.0);
        for (&i, &n) in set.iter().zip(counts) {
            cap += n as f64 * s.parts[i].c_limit;
            cnt += n as f64;
            area += n as f64 * s.parts[i].area;
            if n > s.ub[i] {
                return false;
            }
        }
        cap <= s.lim.max_cap * (1.0 + 1e-12)
            && cnt <= s.lim.max_count
            && area <= s.lim.max_area * (1.0 + 1e-12)
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
            crate::bank::Corner::Worst,
            crate::bank::Band::Limited,
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
