//! The optimizer: the bank of lowest cost (or area, or count) whose exact
//! worst-corner ripple meets the target under every limit.
//!
//! Method (branch and bound over line sets, the evaluator as sole judge):
//!
//! 1. Parts that another part dominates (electrically identical, no worse
//!    in cost, area, capacitance-limit share, rating) are dropped.
//! 2. Every line set (which parts are used) gets a valid lower bound on its
//!    objective from the linear necessary condition Σ n_i |Y_ik| ≥ q_k of
//!    [`crate::evaluator::Evaluator::required_admittance`]; sets that cannot reach q_k even
//!    at their largest counts are dropped.
//! 3. Sets are solved in order of their bound. Within a set the counts are
//!    enumerated in objective order: all but the last count by loops, the
//!    last from the smallest value the necessary condition allows upward;
//!    the first count whose exact ripple (and ripple currents) pass is the
//!    cheapest for the others' counts. Every bound only discards what
//!    provably cannot beat the incumbent, so when all sets are examined the
//!    result is `optimal` under the model.
//! 4. Catalogs too large to enumerate every line set use a pool of the most
//!    promising parts (admittance per unit of objective at each harmonic,
//!    plus line sets proposed by a mixed-integer model of the necessary
//!    condition, solved with good_lp), then a neighbourhood search that
//!    swaps, adds or removes one part at a time over the whole catalog; the
//!    result is `optimal` only if it meets the mixed-integer lower bound,
//!    else `feasible`.
//! 5. With no design, [`explain`] (called by the commands, not here) finds
//!    the lowest ripple by bisection on the target with this same search,
//!    and relaxes each limit in turn to find the ones that bind.

use crate::assessment::RIPPLE_ROUNDING;
use crate::evaluator::{Band, LineState};
use crate::limits::LimitId;
use crate::problem::Problem;

/// Most searches the cutting-plane loop of [`design_for`] runs.
const MAX_REGION_ROUNDS: usize = 12;
use serde::Serialize;
use std::time::Instant;

/// Objective vector: primary, then the two tie-breakers.
pub type Key = [f64; 3];

fn tol(a: f64, b: f64) -> f64 {
    1e-9 * a.abs().max(b.abs()) + 1e-12
}

/// True when `a` is strictly better than `b` (lexicographic).
pub fn better(a: &Key, b: &Key) -> bool {
    for i in 0..3 {
        let t = tol(a[i], b[i]);
        if a[i] < b[i] - t {
            return true;
        }
        if a[i] > b[i] + t {
            return false;
        }
    }
    false
}

/// How good an answer is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Status {
    /// The best bank under the model: every line set examined or bounded.
    Optimal,
    /// A verified bank, not proven the best.
    Feasible,
    /// No bank meets the target under every limit.
    Infeasible,
}

impl Status {
    /// `optimal`, `feasible` or `infeasible`.
    pub fn name(self) -> &'static str {
        match self {
            Status::Optimal => "optimal",
            Status::Feasible => "feasible",
            Status::Infeasible => "infeasible",
        }
    }
}

/// A verified bank.
#[derive(Debug, Clone)]
pub struct Found {
    /// Catalog indices and counts.
    pub bank: Vec<(usize, u32)>,
    /// The objective key the search orders banks by (the objective first).
    pub key: Key,
    /// Worst-corner ripple of the bank, V.
    pub ripple_pp: f64,
}

/// Result of a design run.
#[derive(Debug, Clone)]
pub struct DesignOutcome {
    /// How good the answer is.
    pub status: Status,
    /// The bank, unless infeasible.
    pub found: Option<Found>,
    /// What the search did.
    pub stats: Stats,
}

/// What a search did, for reports.
#[derive(Debug, Clone, Default, Serialize)]
pub struct Stats {
    /// Eligible parts the search considered.
    pub candidates: usize,
    /// Parts dropped because another part dominates them.
    pub dominated: usize,
    /// Line sets (choices of parts) in the search space.
    pub line_sets_total: usize,
    /// Line sets whose counts were searched.
    pub line_sets_solved: usize,
    /// Exact ripple evaluations made, with the count enumeration charged as
    /// one evaluation per eight nodes and the load step as its grid work.
    pub evaluations: usize,
    /// The bank found is proven the best under the model: every line set
    /// was enumerated, or the incumbent met a proven lower bound.
    pub proven: bool,
    /// The search reached its evaluation budget before it finished.
    pub stopped: bool,
    /// A proven lower bound on the objective, when one is known.
    pub lower_bound: Option<f64>,
    /// Searches run by the cutting-plane loop (1 when the first bank found
    /// held over the whole corner region).
    pub region_rounds: usize,
    /// Wall time, s.
    pub seconds: f64,
}

/// Knobs of the search.
#[derive(Debug, Clone)]
pub struct Settings {
    /// Show a progress bar on stderr.
    pub progress: bool,
    /// Largest number of line sets enumerated exhaustively.
    pub exhaustive_limit: usize,
    /// Pool size for large catalogs.
    pub pool: usize,
    /// Largest candidate list given to the mixed-integer model (whole);
    /// a larger one gets no mixed-integer proposals.
    pub milp_parts: usize,
    /// Line sets the mixed-integer model proposes (with no-good cuts).
    pub milp_proposals: usize,
    /// Time limit of one mixed-integer solve, s.
    pub milp_seconds: f64,
    /// Exact evaluations allowed in each line-count stage of a search (the
    /// same for every stage, so a looser line limit never thins it out);
    /// past it the stage stops and the result is `feasible` at best.
    pub max_evaluations: usize,
    /// Only banks whose objective is below this are of interest (the
    /// filter search's incumbent minus a filter's own share): the search
    /// starts with it as its bound and finds nothing above it.
    pub cutoff: Option<f64>,
    /// Threads the search may use (0: as many as the machine has cores).
    /// The answer does not depend on it: the line sets go over a fixed
    /// number of lanes whatever the threads (the mixed-integer proposals,
    /// which stop on `milp_seconds`, depend on the machine's speed).
    pub threads: usize,
    /// Check a bank over the whole corner region before it becomes the
    /// search's best so far (a refused bank adds its cut and the search
    /// goes on). Off: only the bank a round ends with is checked, and a
    /// refusal starts another round (the same answer, more work; kept to
    /// test the one against the other).
    pub region_each_best: bool,
}

/// Bytes a search keeps per candidate and harmonic of the target figure
/// (worst-corner admittance, its magnitude, the phase screen's terms).
const SEARCH_BYTES: f64 = 40.0;
/// Two searches run at once (bisection probes, relaxed designs, trade-off
/// targets) only while one search's tables take at most this.
const PAIR_BYTES: f64 = 150e6;

/// Whether two searches over `parts` candidates of `problem` may run at
/// once: their tables together stay small.
pub(crate) fn two_searches_fit(problem: &Problem, parts: usize) -> bool {
    parts as f64 * problem.search_harmonics() as f64 * SEARCH_BYTES <= PAIR_BYTES
}

/// `f` of every item on up to `workers` threads, each thread taking the
/// next item left; the answers in the items' order (independent of the
/// threads: `f` of one item does not see the others).
pub(crate) fn map_on_threads<T: Sync, R: Send>(
    items: &[T],
    workers: usize,
    f: impl Fn(&T) -> R + Sync,
) -> Vec<R> {
    let workers = workers.min(items.len());
    if workers <= 1 {
        return items.iter().map(f).collect();
    }
    let next = std::sync::atomic::AtomicUsize::new(0);
    let slots: std::sync::Mutex<Vec<Option<R>>> =
        std::sync::Mutex::new((0..items.len()).map(|_| None).collect());
    std::thread::scope(|scope| {
        for _ in 0..workers {
            scope.spawn(|| loop {
                let j = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                let Some(item) = items.get(j) else { break };
                let r = f(item);
                slots.lock().expect("no worker panics")[j] = Some(r);
            });
        }
    });
    slots
        .into_inner()
        .expect("no worker panics")
        .into_iter()
        .map(|r| r.expect("every item done"))
        .collect()
}

impl Settings {
    /// The threads to use: `threads`, or the machine's cores when 0.
    pub(crate) fn thread_count(&self) -> usize {
        if self.threads > 0 {
            self.threads
        } else {
            std::thread::available_parallelism().map_or(1, |n| n.get())
        }
    }
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            progress: false,
            exhaustive_limit: 1_500_000,
            pool: 36,
            milp_parts: 120,
            milp_proposals: 2,
            milp_seconds: 2.0,
            max_evaluations: 1_000_000,
            cutoff: None,
            threads: 0,
            region_each_best: true,
        }
    }
}

mod explain;
mod filtered;
mod milp;
mod rework;
mod search;

pub use explain::{
    binding, explain, lowest_deviation, lowest_ripple, Binding, BindingDetail, Explanation, Lowest,
    LowestDeviation,
};
pub use filtered::{design_filtered, problem_with, FilterOutcome};
pub use rework::{rework, Rework};
use search::{binomial_sum, neighbourhood, pool, prune_dominated, run_sized_sets, Search};

/// A point of the corner region to check every candidate at: for the
/// ripple, an operating point and the state of every candidate part there;
/// for the load step, the state of every candidate part.
#[derive(Debug, Clone)]
pub(crate) enum Cut {
    /// A point where a bank's ripple broke the target.
    Ripple(crate::converter::OperatingPoint, Vec<LineState>),
    /// A point where a bank's load-step deviation broke its limit.
    Step(Vec<LineState>),
}

/// A search over `cands` that also checks every cut.
fn search_with<'p>(problem: &'p Problem, cands: &[usize], target: f64, cuts: &[Cut]) -> Search<'p> {
    let mut s = Search::new(problem, cands, target);
    for cut in cuts {
        s.add_cut(cut);
    }
    s
}

/// Every candidate part at its `low` state, the bank's lines at `states`.
fn cut_states(s: &Search, bank: &[(usize, u32)], states: &[LineState]) -> Vec<LineState> {
    let mut st: Vec<LineState> = s
        .parts
        .iter()
        .map(|p| LineState {
            c: p.c_worst,
            esr: p.esr_max,
        })
        .collect();
    for (j, &(i, _)) in bank.iter().enumerate() {
        if let Some(x) = states.get(j) {
            st[i] = *x;
        }
    }
    // A post-filter's lines follow, at their states there (`low` if none).
    for j in bank.len()..s.ev.line_count(bank) {
        let m = s.ev.line_model(bank, j);
        st.push(states.get(j).copied().unwrap_or(LineState {
            c: m.c_worst,
            esr: m.esr_max,
        }));
    }
    st
}

/// Verify a bank (local indices of `s`) over the whole corner region: its
/// worst ripple when it holds (and the load step's deviation, when the
/// scenario has one, holds too), else the cut at the point that breaks it
/// (the bank's lines at their states there, every other part at `low`).
fn region_cut(
    problem: &Problem,
    s: &mut Search,
    bank: &[(usize, u32)],
    target: f64,
) -> Result<f64, Cut> {
    let w = crate::region::worst(problem, &mut s.ev, bank, Band::Limited);
    if w.value > target * (1.0 + RIPPLE_ROUNDING) {
        return Err(Cut::Ripple(
            s.ev.ops[w.op].clone(),
            cut_states(s, bank, &w.states),
        ));
    }
    if let Some(m) = s.step.as_mut() {
        let limit = m.spec.max_deviation;
        let sw = m.worst(&s.parts, bank);
        if !(sw.deviation <= limit * (1.0 + crate::transient::ROUNDING)) {
            return Err(Cut::Step(cut_states(s, bank, &sw.states)));
        }
    }
    Ok(w.value)
}

/// Find the best bank for the scenario's target.
pub fn design(problem: &Problem, settings: &Settings) -> DesignOutcome {
    design_for(problem, problem.scenario.design_target(), settings)
}

/// Find the best bank for a given ripple target.
pub fn design_for(problem: &Problem, target: f64, settings: &Settings) -> DesignOutcome {
    design_from(problem, target, settings, None)
}

/// What the line-count stages of one search round found out.
struct Stages {
    /// Every stage examined every line set (none stopped, none pooled).
    exhaustive: bool,
    /// A valid lower bound on the primary objective of the sets the stages
    /// did not rule out (+∞ when they ruled out all of them).
    open_bound: f64,
    /// Some stage reached its evaluation budget.
    stopped: bool,
}

/// The search of one cutting-plane round, by line count: stage l looks at
/// the line sets of exactly l lines, starting from the incumbent of the
/// stages before it, with an evaluation budget of its own. Stage l does the
/// same whatever `max_lines` is above l, so a looser line limit only adds
/// stages after the same ones: its answer is never worse (monotone by
/// construction), and the budget never spreads thinner as lines are added.
/// A stage whose line sets number at most `exhaustive_limit` examines all
/// of them; a larger one takes the sets of a pool of promising parts (the
/// same pool at every stage) and the line sets the mixed-integer model
/// proposes, then a neighbourhood search over the whole catalog.
fn run_stages(s: &mut Search, settings: &Settings, stats: &mut Stats) -> Stages {
    let max_lines = s.lim.max_lines;
    let req = s.required_parts.len();
    let all: Vec<usize> = (0..s.parts.len()).collect();
    let others = all.len() - req;
    let mut out = Stages {
        exhaustive: true,
        open_bound: f64::INFINITY,
        stopped: false,
    };
    if req > max_lines {
        return out;
    }
    let first = req.max(1);
    let last = max_lines.min(others + req);
    stats.line_sets_total = binomial_sum(others, last.saturating_sub(req)) + usize::from(req > 0)
        - usize::from(req > 0 && first > req);
    let mut pool_parts: Option<Vec<usize>> = None;
    let mut milp_bound: Option<f64> = None;
    for l in first..=last {
        s.lim.max_lines = l;
        s.budget = s.evals.saturating_add(settings.max_evaluations);
        s.stopped = false;
        let exhaustive = binomial_sum(others, l - req) <= settings.exhaustive_limit;
        let msg = format!("design ({l} lines)");
        if exhaustive {
            let b = run_sized_sets(s, &all, l, settings, &msg);
            out.open_bound = out.open_bound.min(b);
            if s.stopped {
                neighbourhood(s, settings);
            }
        } else {
            out.exhaustive = false;
            let base = pool_parts
                .get_or_insert_with(|| pool(s, settings.pool))
                .clone();
            let mut parts = base;
            // Line sets proposed by the mixed-integer relaxation over every
            // candidate join the pool; its proven optimum is a lower bound.
            // Over a larger catalog (a pool of it) the proposals changed no
            // answer on the benchmark catalogs and took most of the time
            // (5,000 parts: 8.3 s of 13.3 s), so they are not made.
            let proposals = if all.len() <= settings.milp_parts {
                settings.milp_proposals
            } else {
                0
            };
            let ks = if proposals > 0 {
                milp::hard_harmonics(s, &all, 8)
            } else {
                Vec::new()
            };
            let mut cuts: Vec<Vec<usize>> = Vec::new();
            for t in 0..proposals {
                let Some(prop) = milp::propose(s, &all, &ks, &cuts, settings.milp_seconds) else {
                    break;
                };
                if t == 0 && l == max_lines && prop.proven {
                    milp_bound = Some(prop.bound);
                }
                for &i in &prop.set {
                    if !parts.contains(&i) {
                        parts.push(i);
                    }
                }
                cuts.push(prop.set);
            }
            run_sized_sets(s, &parts, l, settings, &msg);
            neighbourhood(s, settings);
        }
        out.stopped |= s.stopped;
    }
    s.lim.max_lines = max_lines;
    if !out.exhaustive {
        // Pooled stages may have left any line set open: the disjunctive
        // bound over every candidate (and the mixed-integer one) holds for all.
        let g = s.global_bound(max_lines).max(milp_bound.unwrap_or(0.0));
        out.open_bound = out.open_bound.min(g);
    }
    if out.stopped {
        out.exhaustive = false;
    }
    out
}

/// Find the best bank for a given ripple target, starting from `warm` (a
/// bank, catalog indices and counts, known to meet a tighter problem on the
/// same catalog): the answer is then never worse than `warm` when `warm`
/// still holds.
pub(crate) fn design_from(
    problem: &Problem,
    target: f64,
    settings: &Settings,
    warm: Option<&[(usize, u32)]>,
) -> DesignOutcome {
    let t0 = Instant::now();
    let (cands, dominated) = prune_dominated(problem, &problem.eligible);
    let mut stats = Stats {
        candidates: cands.len(),
        dominated,
        ..Default::default()
    };
    let mut found: Option<Found> = None;
    let mut proven = false;
    let mut stopped = false;
    let mut lower: Option<f64> = None;
    // Cutting planes (Blankenship & Falk 1976): search against a finite set
    // of region points, verify the best bank over the whole region, add the
    // point that breaks it and search again.
    let mut actives: Vec<Cut> = Vec::new();
    let mut round = 0;
    while !cands.is_empty() || problem.scenario.converter.internal_capacitance.is_some() {
        round += 1;
        let mut s = search_with(problem, &cands, target, &actives);
        s.budget = settings.max_evaluations;
        s.verify_region &= settings.region_each_best;
        if let Some(c) = settings.cutoff {
            // A bound, not a bank: an empty bank of infinite ripple.
            s.incumbent = Some(([c, f64::INFINITY, f64::INFINITY], Vec::new(), f64::INFINITY));
        }
        // The converter alone (no added parts), when it has capacitance of its own.
        if s.required_parts.is_empty()
            && problem.scenario.converter.internal_capacitance.is_some()
            && s.lim.value(LimitId::MinCapacitance) <= 0.0
        {
            s.bank_buf.clear();
            // A module's current is calibrated so that the converter alone
            // shows standalone_ripple_pp; a target equal to it must pass
            // despite rounding (the same allowance as the region check).
            let exact_target = s.target;
            s.target = exact_target * (1.0 + RIPPLE_ROUNDING);
            if let Some(r) = s.exact() {
                s.incumbent = Some(([0.0; 3], Vec::new(), r));
            }
            s.target = exact_target;
        }
        if let Some(w) = warm {
            s.warm_start(w);
        }
        let stages = run_stages(&mut s, settings, &mut stats);
        stats.evaluations += s.evals;
        stopped = stages.stopped;
        // With no bank found, every line set enumerated proves that none
        // exists (the filter search relies on it under its cutoff).
        proven = stages.exhaustive;
        stats.line_sets_solved += s.sets_solved;
        stats.region_rounds = round;
        if let Some((key, bank, _)) = s.incumbent.take().filter(|i| i.2.is_finite()) {
            let verdict = region_cut(problem, &mut s, &bank, target);
            if let Err(cut) = verdict {
                if round < MAX_REGION_ROUNDS {
                    // The cuts the search added to itself, then this one.
                    actives.append(&mut s.cuts);
                    actives.push(cut);
                    found = None;
                    proven = false;
                    continue;
                }
                // Out of rounds: no verified bank.
                stopped = true;
            } else if let Ok(value) = verdict {
                let value0 = key[0];
                // Every bank that could beat this one lies in a line set
                // the stages left open, whose bound is at least open_bound.
                let lb = stages.open_bound.min(value0);
                proven = stages.exhaustive || lb >= value0 - tol(lb, value0);
                lower = Some(if proven { value0 } else { lb });
                found = Some(Found {
                    bank: bank.iter().map(|&(i, n)| (s.catalog_index[i], n)).collect(),
                    key,
                    ripple_pp: value,
                });
            }
        }
        break;
    }
    stats.stopped = stopped;
    stats.proven = proven && !stopped;
    stats.lower_bound = lower;
    let proven = stats.proven;
    let status = match (&found, proven) {
        (Some(_), true) => Status::Optimal,
        (Some(_), false) => Status::Feasible,
        (None, _) => Status::Infeasible,
    };
    let mut out = DesignOutcome {
        status,
        found,
        stats,
    };
    out.stats.seconds = t0.elapsed().as_secs_f64();
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn milp_bound_is_below_the_exhaustive_optimum() {
        // The mixed-integer relaxation is a relaxation: its proven optimum
        // can never exceed the optimum found by exhaustive search (source:
        // the exhaustive enumeration of every line set on the demo).
        let p = crate::load::problem(None, None, &Default::default()).unwrap();
        let (cands, _) = prune_dominated(&p, &p.eligible);
        let s = Search::new(&p, &cands, p.scenario.target.ripple_pp.0);
        let all: Vec<usize> = (0..s.parts.len()).collect();
        let ks = milp::hard_harmonics(&s, &all, 8);
        let prop = milp::propose(&s, &all, &ks, &[], 20.0).expect("the relaxation has a solution");
        let exact = design(&p, &Settings::default());
        let opt = exact.found.unwrap().key[0];
        eprintln!(
            "milp bound {} proven {} set {:?}; optimum {opt}",
            prop.bound, prop.proven, prop.set
        );
        assert!(prop.proven);
        assert!(prop.bound <= opt * (1.0 + 1e-9));
    }
}
