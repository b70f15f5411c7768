//! The mixed-integer relaxation: integer counts n_i ≤ ub_i·z_i, binary
//! line items z_i, every linear limit, and the necessary condition
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
pub fn hard_harmonics(s: &Search, over: &[usize], count: usize) -> Vec<usize> {
    let mut d: Vec<(f64, usize)> = (0..s.n)
        .filter(|&k| s.q[k] > 0.0)
        .map(|k| {
            let best = over
                .iter()
                .map(|&i| s.ub[i] as f64 * s.a[i * s.n + k])
                .fold(0.0, f64::max);
            (s.q[k] / best.max(1e-300), k)
        })
        .collect();
    d.sort_by(|x, y| y.0.total_cmp(&x.0));
    let mut ks: Vec<usize> = d.iter().take(count).map(|x| x.1).collect();
    if s.q.first().is_some_and(|&q| q > 0.0) && !ks.contains(&0) {
        ks.push(0);
    }
    ks
}

pub fn propose(
    s: &Search,
    over: &[usize],
    harmonics: &[usize],
    cuts: &[Vec<usize>],
    seconds: f64,
) -> Option<Proposal> {
    let mut vars = variables!();
    let n: Vec<Variable> = over
        .iter()
        .map(|&i| vars.add(variable().integer().min(0.0).max(s.ub[i] as f64)))
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
        m = m.with(constraint!(n[j] <= s.ub[i] as f64 * z[j]));
        m = m.with(constraint!(n[j] >= s.lb[i] as f64 * z[j]));
        if s.required.contains(&i) {
            m = m.with(constraint!(z[j] >= 1.0));
        }
    }
    let zsum: Expression = z.iter().fold(Expression::from(0.0), |e, &v| e + v);
    m = m.with(constraint!(zsum.clone() <= s.lim.max_lines as f64));
    m = m.with(constraint!(zsum >= 1.0));
    if s.lim.max_cap.is_finite() {
        m = m.with(constraint!(sum(&|i| s.parts[i].c_limit) <= s.lim.max_cap));
    }
    if s.lim.max_count.is_finite() {
        m = m.with(constraint!(sum(&|_| 1.0) <= s.lim.max_count));
    }
    if s.lim.max_area.is_finite() {
        m = m.with(constraint!(sum(&|i| s.parts[i].area) <= s.lim.max_area));
    }
    if s.lim.min_cap > 0.0 {
        m = m.with(constraint!(sum(&|i| s.parts[i].c_worst) >= s.lim.min_cap));
    }
    for &k in harmonics {
        // Scaled to order one for the solver's tolerances.
        let scale = 1.0 / s.q[k];
        m = m.with(constraint!(sum(&|i| s.a[i * s.n + k] * scale) >= 1.0));
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
