//! The mixed-integer relaxation: integer counts n_i ≤ count_max_i·z_i,
//! binary line items z_i, every linear limit of [`crate::limits::LIMITS`], and the necessary condition
//! Σ n_i |Y_ik| ≥ q_k at the most demanding harmonics. Every passing bank
//! satisfies it, so its optimum is a lower bound on the true optimum; its
//! line set is a proposal for the exact search. `cuts` exclude line sets
//! already proposed (no-good cuts on the binaries).

use super::search::Search;
use good_lp::{
    constraint, variable, variables, Expression, Solution, SolutionStatus, SolverModel, Variable,
    WithTimeLimit,
};

pub struct Proposal {
    pub set: Vec<usize>,
    pub bound: f64,
    pub proven: bool,
}

/// The harmonics where the condition is hardest to meet.
pub(crate) fn hard_harmonics(s: &Search, over: &[usize], count: usize) -> Vec<usize> {
    let mut d: Vec<(f64, usize)> = (0..s.harmonics)
        .filter(|&k| s.required[k] > 0.0)
        .map(|k| {
            let best = over
                .iter()
                .map(|&i| s.count_max[i] as f64 * s.adm_mag[i * s.harmonics + k])
                .fold(0.0, f64::max);
            (s.required[k] / best.max(1e-300), k)
        })
        .collect();
    d.sort_by(|x, y| y.0.total_cmp(&x.0));
    let mut ks: Vec<usize> = d.iter().take(count).map(|x| x.1).collect();
    if s.required.first().is_some_and(|&q| q > 0.0) && !ks.contains(&0) {
        ks.push(0);
    }
    ks
}

pub(crate) fn propose(
    s: &Search,
    over: &[usize],
    harmonics: &[usize],
    cuts: &[Vec<usize>],
    seconds: f64,
) -> Option<Proposal> {
    let mut vars = variables!();
    let n: Vec<Variable> = over
        .iter()
        .map(|&i| vars.add(variable().integer().min(0.0).max(s.count_max[i] as f64)))
        .collect();
    let z: Vec<Variable> = over.iter().map(|_| vars.add(variable().binary())).collect();
    let mut obj = Expression::from(0.0);
    for (j, &i) in over.iter().enumerate() {
        obj += s.weights[0][i] * n[j] + s.line_w[0] * z[j];
    }
    let mut m = vars.minimise(obj).using(solver);
    m = m.with_time_limit(seconds);
    let sum = |f: &dyn Fn(usize) -> f64| -> Expression {
        let mut e = Expression::from(0.0);
        for (j, &i) in over.iter().enumerate() {
            e += f(i) * n[j];
        }
        e
    };
    for (j, &i) in over.iter().enumerate() {
        m = m.with(constraint!(n[j] <= s.count_max[i] as f64 * z[j]));
        m = m.with(constraint!(n[j] >= s.count_min[i] as f64 * z[j]));
        if s.required_parts.contains(&i) {
            m = m.with(constraint!(z[j] >= 1.0));
        }
    }
    let zsum: Expression = z.iter().fold(Expression::from(0.0), |e, &v| e + v);
    if s.lim.max_lines < usize::MAX {
        m = m.with(constraint!(zsum.clone() <= s.lim.max_lines as f64));
    }
    m = m.with(constraint!(zsum >= 1.0));
    // The linear limits of the table, as the search reads them.
    for row in &s.lim.at_most {
        m = m.with(constraint!(sum(&|i| row.coef[i]) <= row.value));
    }
    for row in &s.lim.at_least {
        m = m.with(constraint!(sum(&|i| row.coef[i]) >= row.value));
    }
    for &k in harmonics {
        // Scaled to order one for the solver's tolerances.
        let scale = 1.0 / s.required[k];
        m = m.with(constraint!(
            sum(&|i| s.adm_mag[i * s.harmonics + k] * scale) >= 1.0
        ));
    }
    for cut in cuts {
        let mut e = Expression::from(0.0);
        for (j, &i) in over.iter().enumerate() {
            if cut.contains(&i) {
                e += z[j];
            }
        }
        m = m.with(constraint!(e <= cut.len() as f64 - 1.0));
    }
    let sol = m.solve().ok()?;
    let set: Vec<usize> = over
        .iter()
        .enumerate()
        .filter(|(j, _)| sol.value(n[*j]) > 0.5)
        .map(|(_, &i)| i)
        .collect();
    let bound: f64 = over
        .iter()
        .enumerate()
        .map(|(j, &i)| {
            s.weights[0][i] * sol.value(n[j]).round() + s.line_w[0] * sol.value(z[j]).round()
        })
        .sum();
    Some(Proposal {
        set,
        bound,
        proven: matches!(sol.status(), SolutionStatus::Optimal),
    })
}

#[cfg(feature = "highs")]
use good_lp::solvers::highs::highs as solver;
#[cfg(not(feature = "highs"))]
use good_lp::solvers::microlp::microlp as solver;
