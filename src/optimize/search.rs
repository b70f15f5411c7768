//! The exact search: line sets, their bounds, and count enumeration.

use super::{better, milp, tol, Key, Settings};
use crate::assessment::Bound;
use crate::evaluator::{Evaluator, PartModel};
use crate::limits::{self, LimitId, Linear};
use crate::problem::Problem;
use crate::scenario::Objective;
use indicatif::{ProgressBar, ProgressStyle};
use num_complex::Complex64;

/// A limit of [`crate::limits::LIMITS`] on a sum over the parts,
/// Σ coef_i · n_i, as the search reads it.
#[derive(Debug, Clone)]
pub(super) struct SumLimit {
    /// Which entry of the table.
    pub(super) id: LimitId,
    /// The entry's coefficient for each local part.
    pub(super) coef: Vec<f64>,
    /// The limit's value in the scenario.
    pub(super) value: f64,
    /// The entry's relative slack (rounding of sums of products).
    pub(super) slack: f64,
}

/// Directions of the disjunctive bound ([`Search::global_bound`]): the
/// bound loses at most 1 − cos(π/32) = 0.5 % of each harmonic's need.
pub(super) const BOUND_DIRECTIONS: usize = 32;
/// Harmonics the disjunctive bound is taken at (the hardest ones).
pub(super) const BOUND_HARMONICS: usize = 24;

/// Most entries of the table (the size of the fixed per-limit arrays of
/// the count enumeration).
pub(super) const MAX_SUMS: usize = limits::LIMITS.len();

/// The limits of [`crate::limits::LIMITS`] that constrain the search, read
/// entry by entry from the table (open limits are left out): the sums with
/// an upper and with a lower limit, and the number of lines.
#[derive(Debug, Clone)]
pub(super) struct Limits {
    /// Σ coef·n ≤ value.
    pub(super) at_most: Vec<SumLimit>,
    /// Σ coef·n ≥ value.
    pub(super) at_least: Vec<SumLimit>,
    /// Most lines (distinct parts).
    pub(super) max_lines: usize,
}

impl Limits {
    fn of(s: &crate::scenario::Scenario, parts: &[PartModel]) -> Limits {
        let mut out = Limits {
            at_most: Vec::new(),
            at_least: Vec::new(),
            max_lines: usize::MAX,
        };
        for l in &limits::LIMITS {
            let Some(value) = (l.value)(s) else { continue };
            match l.linear {
                Linear::Sum(coef) => {
                    let row = SumLimit {
                        id: l.id,
                        coef: parts.iter().map(coef).collect(),
                        value,
                        slack: l.slack,
                    };
                    match l.bound {
                        Bound::AtMost => out.at_most.push(row),
                        Bound::AtLeast if value > 0.0 => out.at_least.push(row),
                        Bound::AtLeast => {}
                    }
                }
                Linear::Lines => out.max_lines = out.max_lines.min(value as usize),
                // Per-part counts are in the count bounds (`limits::count_max`).
                Linear::EachCount => {}
                // A non-linear limit's necessary condition: the bank's
                // lowest capacitance at least the floor.
                Linear::Floor(need) => {
                    if let Some(v) = need(s).filter(|&v| v > 0.0) {
                        out.at_least.push(SumLimit {
                            id: l.id,
                            coef: parts.iter().map(|p| p.c_worst).collect(),
                            value: v,
                            slack: l.slack,
                        });
                    }
                }
            }
        }
        out
    }

    /// Lower the floors on the bank's lowest capacitance by `c`, F: the
    /// capacitance a post-filter's load side (and damping leg) holds at its
    /// lowest, which settles a load step as the bank's own does.
    pub(super) fn credit_capacitance(&mut self, c: f64) {
        for r in &mut self.at_least {
            if matches!(limits::limit(r.id).linear, Linear::Floor(_)) {
                r.value -= c;
            }
        }
        self.at_least.retain(|r| r.value > 0.0);
    }

    /// The value of limit `id` in the search, or the value that does not
    /// constrain (+∞ for an upper limit, 0 for a lower one).
    pub(super) fn value(&self, id: LimitId) -> f64 {
        if let Some(r) = self.at_most.iter().find(|r| r.id == id) {
            return r.value;
        }
        if let Some(r) = self.at_least.iter().find(|r| r.id == id) {
            return r.value;
        }
        match limits::limit(id).bound {
            Bound::AtMost => f64::INFINITY,
            Bound::AtLeast => 0.0,
        }
    }

    /// Whether counts `counts` of parts `set` keep every upper limit.
    pub(super) fn upper_hold(&self, set: &[usize], counts: &[u32]) -> bool {
        self.at_most.iter().all(|r| {
            let used: f64 = set
                .iter()
                .zip(counts)
                .map(|(&i, &n)| n as f64 * r.coef[i])
                .sum();
            used <= r.value * (1.0 + r.slack)
        })
    }
}

/// The search over one candidate list. A clone shares the large tables
/// (the evaluator's admittances, `adm_mag`, `ph_b`) and copies the rest:
/// the workers of [`solve_bounded`].
#[derive(Clone)]
pub(super) struct Search<'p> {
    /// The problem searched (for the whole-region check of a new incumbent).
    pub(super) problem: &'p Problem,
    pub(super) ev: Evaluator,
    /// Catalog index of each local part.
    pub(super) catalog_index: Vec<usize>,
    pub(super) parts: Vec<PartModel>,
    /// Objective weights per part: weights[j][i].
    pub(super) weights: [Vec<f64>; 3],
    pub(super) line_w: Key,
    /// Smallest count of each part when it is used (its required count, or 1).
    pub(super) count_min: Vec<u32>,
    /// Largest count of each part every limit allows ([`limits::count_max`]).
    pub(super) count_max: Vec<u32>,
    /// |Y_ik| of each part, n harmonics each.
    pub(super) adm_mag: std::sync::Arc<Vec<f64>>,
    /// r_k of the necessary condition Σ n_i |Y_ik| ≥ r_k per harmonic
    /// ([`Evaluator::required_admittance`]).
    pub(super) required: Vec<f64>,
    /// The harmonics whose `required` is positive: the only ones the
    /// necessary condition can fail at.
    pub(super) needed: Vec<usize>,
    /// (r_k, G_k, Y_int,k) of [`Evaluator::phase_terms`].
    pub(super) phase_terms: Vec<(f64, Complex64, Complex64)>,
    /// The phase screen of the count enumeration ([`Search::phase_need`]):
    /// the harmonics it tests, those whose r_k is not negligible (an
    /// interleaved converter's cancelled harmonics are left out; any subset
    /// gives a valid necessary condition).
    pub(super) ph_k: Vec<usize>,
    /// Per part, Y_ik·G_k at the screen's harmonics: P real parts, then P
    /// imaginary parts (2P values per part, P = `ph_k.len()`).
    pub(super) ph_b: std::sync::Arc<Vec<f64>>,
    /// The offset of [`Evaluator::phase_terms`] (Y_int,k, plus G_k·ty_k
    /// behind a post-filter) at the screen's harmonics, laid out as `ph_b`:
    /// the screen's sum for no added part.
    pub(super) ph_a0: Vec<f64>,
    /// r_k² at the screen's harmonics.
    pub(super) ph_r2: Vec<f64>,
    /// r_k²·(1 − 1e−9): the screen's pass threshold.
    pub(super) ph_r2_pass: Vec<f64>,
    /// required·(1 − 1e−9): the magnitude condition's pruning threshold.
    pub(super) req_thr: Vec<f64>,
    /// Scratch: the worst-corner admittance of the enumeration's fixed parts.
    pub(super) yb_base: Vec<Complex64>,
    /// Harmonics of the target figure.
    pub(super) harmonics: usize,
    pub(super) target: f64,
    pub(super) lim: Limits,
    /// Local indices of the parts the scenario requires.
    pub(super) required_parts: Vec<usize>,
    pub(super) check_currents: bool,
    /// Also require the typical corner to pass (`selection.check_typical`).
    pub(super) check_typical: bool,
    /// The best bank found so far: its key, bank and ripple.
    pub(super) incumbent: Option<(Key, Vec<(usize, u32)>, f64)>,
    pub(super) evals: usize,
    pub(super) sets_solved: usize,
    pub(super) bank_buf: Vec<(usize, u32)>,
    pub(super) yb_buf: Vec<Complex64>,
    pub(super) cur_buf: Vec<f64>,
    /// Points of the corner region every candidate is also checked at (the
    /// cutting planes added by [`super::design_for`]).
    pub(super) active: Vec<crate::region::Active>,
    /// Ripple-current rating of each local part.
    pub(super) ratings: Vec<Option<f64>>,
    /// Exact evaluations allowed; past it the search stops (result `feasible`).
    pub(super) budget: usize,
    /// The load-step model over the candidates, with `[transient]`.
    pub(super) step: Option<crate::transient::StepModel>,
    /// Points of the corner region every candidate's load step is also
    /// checked at (per local part, its state there).
    pub(super) step_cuts: Vec<Vec<crate::evaluator::LineState>>,
    pub(super) step_buf: Vec<crate::evaluator::LineState>,
    pub(super) stopped: bool,
    /// Count-enumeration nodes not yet charged to `evals` (see [`NODES_PER_EVAL`]).
    pub(super) nodes: usize,
    /// Check a bank over the whole corner region before it becomes the
    /// incumbent ([`Search::region_accepts`]).
    pub(super) verify_region: bool,
    /// The cuts this search added to itself, in order (region points that
    /// broke a would-be incumbent).
    pub(super) cuts: Vec<super::Cut>,
}

/// Count-enumeration nodes (a partial sum over the harmonics, or the leaf's
/// exact per-harmonic test) charged to the budget as one evaluation. A
/// line set whose counts all fail the per-harmonic test makes no exact
/// evaluation, so without this charge a target no bank meets would be
/// enumerated to the end (the two-phase core scenario at 0.2 mV took 8 min
/// 25 s on the command line; 6.4 s with the charge); with it
/// the budget bounds every search's work.
pub(super) const NODES_PER_EVAL: usize = 8;

/// Harmonics whose r_k is below this share of the largest are left out of
/// the phase screen: their condition is met by any bank up to rounding
/// (the harmonics an interleaved converter cancels), and leaving a
/// harmonic out only weakens a necessary condition the exact evaluation
/// follows.
pub(super) const PHASE_NEGLIGIBLE: f64 = 1e-9;

/// [`Search::phase_need`] on its tables: `a` and `b` laid out as
/// [`Search::ph_b`], `r2` the r_k² and `pass` the pass thresholds.
fn phase_need_in(a: &[f64], b: &[f64], r2: &[f64], pass: &[f64], lo: f64, hi: f64) -> Option<f64> {
    let p = r2.len();
    let (are, aim) = a.split_at(p);
    let (bre, bim) = b.split_at(p);
    let mut c = lo;
    loop {
        if phase_clear(a, b, pass, c) {
            return Some(c);
        }
        let mut moved = false;
        for k in 0..p {
            let r2 = r2[k];
            let (ar, ai, br, bi) = (are[k], aim[k], bre[k], bim[k]);
            let qa = br * br + bi * bi;
            let qb = 2.0 * (ar * br + ai * bi);
            let qc = ar * ar + ai * ai - r2;
            let val = (qa * c + qb) * c + qc;
            if val >= -1e-9 * r2 {
                continue;
            }
            if qa <= 0.0 {
                return None;
            }
            let disc = qb * qb - 4.0 * qa * qc;
            if disc <= 0.0 {
                continue;
            }
            let x2 = (-qb + disc.sqrt()) / (2.0 * qa);
            let next = (x2 - 1e-9 * x2.abs().max(1.0)).ceil().max(c + 1.0);
            if next > hi {
                return None;
            }
            c = next;
            moved = true;
        }
        if !moved {
            return Some(c);
        }
    }
}

/// Whether |a_k + c·b_k|² ≥ `pass`_k at every harmonic of the phase screen
/// (`a` and `b` laid out as [`Search::ph_b`]): one pass without branches,
/// four running minima, so that it vectorises.
#[inline]
fn phase_clear(a: &[f64], b: &[f64], pass: &[f64], c: f64) -> bool {
    let p = pass.len();
    let (are, aim) = a.split_at(p);
    let (bre, bim) = b.split_at(p);
    let mut lo = [f64::INFINITY; 4];
    let mut k = 0;
    while k + 4 <= p {
        for q in 0..4 {
            let xr = are[k + q] + c * bre[k + q];
            let xi = aim[k + q] + c * bim[k + q];
            let v = xr * xr + xi * xi - pass[k + q];
            lo[q] = if v < lo[q] { v } else { lo[q] };
        }
        k += 4;
    }
    let mut m = lo[0].min(lo[1]).min(lo[2]).min(lo[3]);
    while k < p {
        let xr = are[k] + c * bre[k];
        let xi = aim[k] + c * bim[k];
        m = m.min(xr * xr + xi * xi - pass[k]);
        k += 1;
    }
    m >= 0.0
}

pub(super) fn weights(obj: Objective, p: &PartModel) -> Key {
    match obj {
        Objective::Cost => [p.cost, p.area, 1.0],
        Objective::Area => [p.area, p.cost, 1.0],
        Objective::Count => [1.0, p.cost, p.area],
    }
}

impl<'p> Search<'p> {
    pub(super) fn new(problem: &'p Problem, candidates: &[usize], target: f64) -> Search<'p> {
        let s = &problem.scenario;
        let ev = problem.search_evaluator(candidates);
        let parts = ev.parts.clone();
        let obj = s.selection.objective;
        let mut per_part: [Vec<f64>; 3] = [vec![], vec![], vec![]];
        for p in &parts {
            let k = weights(obj, p);
            for j in 0..3 {
                per_part[j].push(k[j]);
            }
        }
        let lc = s.selection.line_cost.0;
        let line_w = match obj {
            Objective::Cost => [lc, 0.0, 0.0],
            _ => [0.0, lc, 0.0],
        };
        let mut lim = Limits::of(s, &parts);
        let behind: f64 = ev
            .tail()
            .iter()
            .filter(|t| !matches!(t.role, crate::evaluator::TailRole::Inductor { .. }))
            .map(|t| t.count as f64 * t.model.c_worst)
            .sum();
        if behind > 0.0 {
            lim.credit_capacitance(behind);
        }
        let mut count_min = Vec::new();
        let mut count_max = Vec::new();
        let mut required_parts = Vec::new();
        for (j, p) in parts.iter().enumerate() {
            let id = &problem.catalog.parts[p.index].id;
            let req = s.selection.require.get(id).copied().unwrap_or(0);
            if req > 0 {
                required_parts.push(j);
            }
            count_min.push(req.max(1));
            count_max.push(limits::count_max(s, p));
        }
        let required = ev.required_admittance(target);
        let harmonics = required.len();
        let mut adm_mag = Vec::with_capacity(parts.len() * harmonics);
        for j in 0..parts.len() {
            adm_mag.extend(ev.admittance_magnitudes(j));
        }
        let check_currents = parts.iter().any(|p| p.rating.is_some());
        let phase_terms = ev.phase_terms(target);
        let r_top = phase_terms.iter().map(|t| t.0).fold(0.0, f64::max);
        let ph_k: Vec<usize> = (0..harmonics)
            .filter(|&k| phase_terms[k].0 > PHASE_NEGLIGIBLE * r_top)
            .collect();
        let np_k = ph_k.len();
        let mut ph_b = Vec::with_capacity(parts.len() * 2 * np_k);
        for j in 0..parts.len() {
            let row = ev.y_row(j);
            let b: Vec<Complex64> = ph_k.iter().map(|&k| row[k] * phase_terms[k].1).collect();
            ph_b.extend(b.iter().map(|x| x.re));
            ph_b.extend(b.iter().map(|x| x.im));
        }
        let mut ph_a0: Vec<f64> = ph_k.iter().map(|&k| phase_terms[k].2.re).collect();
        ph_a0.extend(ph_k.iter().map(|&k| phase_terms[k].2.im));
        let ph_r2: Vec<f64> = ph_k.iter().map(|&k| phase_terms[k].0.powi(2)).collect();
        let ph_r2_pass = ph_r2.iter().map(|r| r * (1.0 - 1e-9)).collect();
        let req_thr = required.iter().map(|r| r * (1.0 - 1e-9)).collect();
        let ratings = parts.iter().map(|p| p.rating).collect();
        let step =
            crate::transient::StepModel::new(s, &parts).map(|m| m.with_tail(ev.tail().to_vec()));
        Search {
            problem,
            verify_region: target.is_finite(),
            cuts: Vec::new(),
            step,
            step_cuts: Vec::new(),
            step_buf: Vec::new(),
            active: Vec::new(),
            ratings,
            phase_terms,
            ph_k,
            ph_b: std::sync::Arc::new(ph_b),
            ph_a0,
            ph_r2,
            ph_r2_pass,
            req_thr,
            yb_base: vec![Complex64::default(); harmonics],
            catalog_index: candidates.to_vec(),
            ev,
            parts,
            weights: per_part,
            line_w,
            count_min,
            count_max,
            adm_mag: std::sync::Arc::new(adm_mag),
            needed: (0..required.len()).filter(|&k| required[k] > 0.0).collect(),
            required,
            harmonics,
            target,
            lim,
            required_parts,
            check_currents,
            check_typical: s.selection.check_typical,
            incumbent: None,
            evals: 0,
            sets_solved: 0,
            bank_buf: Vec::new(),
            yb_buf: vec![Complex64::default(); harmonics],
            cur_buf: Vec::new(),
            budget: usize::MAX,
            stopped: false,
            nodes: 0,
        }
    }

    /// Valid lower bound on the primary objective of line set `set`, or
    /// `None` if the set cannot meet the necessary condition or the limits.
    pub(super) fn set_bound(&self, set: &[usize]) -> Option<f64> {
        if set.iter().any(|&i| self.count_max[i] < self.count_min[i]) {
            return None;
        }
        let mut base = set.len() as f64 * self.line_w[0];
        for &i in set {
            base += self.count_min[i] as f64 * self.weights[0][i];
        }
        // Upper limits at the smallest counts, and what is left of each.
        let mut left = [0.0; MAX_SUMS];
        for (r, row) in self.lim.at_most.iter().enumerate() {
            let used: f64 = set
                .iter()
                .map(|&i| self.count_min[i] as f64 * row.coef[i])
                .sum();
            if used > row.value * (1.0 + row.slack) {
                return None;
            }
            left[r] = row.value - used;
        }
        // Lower limits at the largest counts.
        for row in &self.lim.at_least {
            let most: f64 = set
                .iter()
                .map(|&i| self.count_max[i] as f64 * row.coef[i])
                .sum();
            if most < row.value {
                return None;
            }
        }
        let mut extra: f64 = 0.0;
        let items: Vec<(usize, f64)> = set
            .iter()
            .map(|&i| (i, (self.count_max[i] - self.count_min[i]) as f64))
            .collect();
        let left = &left[..self.lim.at_most.len()];
        for &k in &self.needed {
            let (mut at_lb, mut best_ratio) = (0.0, f64::INFINITY);
            for &i in set {
                let ai = self.adm_mag[i * self.harmonics + k];
                at_lb += self.count_min[i] as f64 * ai;
                if ai > 0.0 {
                    best_ratio = best_ratio.min(self.weights[0][i] / ai);
                }
            }
            let need = self.required[k];
            if need > at_lb && at_lb + self.capacity(&items, left, k) < need * (1.0 - 1e-9) {
                return None;
            }
            if need > at_lb {
                extra = extra.max((need - at_lb) * best_ratio);
            }
        }
        Some(base + extra)
    }

    /// Upper bound on Σ a_ik·x_i over 0 ≤ x_i ≤ room_i under each of the
    /// remaining budgets `left` of the upper limits (`lim.at_most`, in
    /// order): the smallest of the fractional-knapsack optima, one budget
    /// at a time (each drops the other budgets, so each is a valid upper
    /// bound).
    pub(super) fn capacity(&self, items: &[(usize, f64)], left: &[f64], k: usize) -> f64 {
        let n = self.harmonics;
        let mut best = items
            .iter()
            .map(|&(i, room)| room * self.adm_mag[i * n + k])
            .sum::<f64>();
        if items.len() > 8 {
            return best;
        }
        for (row, &budget) in self.lim.at_most.iter().zip(left) {
            // Items in order of value per unit of this resource.
            let mut order: [(f64, usize, f64); 8] = [(0.0, 0, 0.0); 8];
            let m = items.len();
            for (j, &(i, room)) in items.iter().enumerate() {
                let w = row.coef[i];
                let v = self.adm_mag[i * n + k];
                order[j] = (if w > 0.0 { v / w } else { f64::INFINITY }, i, room);
            }
            order[..m].sort_by(|x, y| y.0.total_cmp(&x.0));
            let (mut b, mut total) = (budget.max(0.0), 0.0);
            for &(_, i, room) in &order[..m] {
                let w = row.coef[i];
                let v = self.adm_mag[i * n + k];
                let take = if w > 0.0 { room.min(b / w) } else { room };
                total += take * v;
                b -= take * w;
                if b <= 0.0 && w > 0.0 {
                    break;
                }
            }
            best = best.min(total);
        }
        best
    }

    /// A valid lower bound on the primary objective of every bank of at
    /// most `max_lines` lines that meets the target (or +∞ when none can).
    ///
    /// At each harmonic k a passing bank has |Y_b,k·G_k + Y_int,k| ≥ r_k
    /// ([`Evaluator::phase_terms`]), Y_b,k = Σ n_i Y_ik linear in the counts.
    /// Of [`BOUND_DIRECTIONS`] directions θ_m = 2πm/M, the angle of the
    /// total lies within π/M of one, where Re(e^{−jθ_m}·Y_tot) ≥ r_k·cos(π/M):
    /// a disjunction of linear conditions (Balas' disjunctive programming).
    /// For each direction the cheapest counts 0 ≤ n_i ≤ count_max_i are a
    /// fractional knapsack (parts whose projection is negative only hurt),
    /// plus the line cost of the fewest lines that can reach it; the bound
    /// at k is the smallest over the directions and the bound is the
    /// largest over the hardest harmonics. Unlike Σ n_i |Y_ik| ≥ q_k it
    /// does not let parts whose admittances cancel add up.
    pub(super) fn global_bound(&self, max_lines: usize) -> f64 {
        let n = self.harmonics;
        let np = self.parts.len();
        if np == 0 {
            return 0.0;
        }
        let m = BOUND_DIRECTIONS;
        let shrink = (std::f64::consts::PI / m as f64).cos();
        // The hardest harmonics by the magnitude condition's single-part ratio.
        let mut score: Vec<(f64, usize)> = (0..n)
            .filter(|&k| self.required[k] > 0.0)
            .map(|k| {
                let best = (0..np)
                    .map(|i| self.adm_mag[i * n + k] / self.weights[0][i].max(1e-300))
                    .fold(0.0, f64::max);
                (self.required[k] / best.max(1e-300), k)
            })
            .collect();
        score.sort_by(|x, y| y.0.total_cmp(&x.0));
        let mut ks: Vec<usize> = score.iter().take(BOUND_HARMONICS).map(|x| x.1).collect();
        if let Some(&(_, k)) = score.first() {
            if !ks.contains(&k) {
                ks.push(k);
            }
        }
        let mut bound: f64 = 0.0;
        let mut items: Vec<(f64, f64, f64)> = Vec::with_capacity(np);
        let mut tops: Vec<f64> = Vec::with_capacity(np);
        for &k in &ks {
            let (r, g, yi) = self.phase_terms[k];
            let mut best_k = f64::INFINITY;
            for d in 0..m {
                let th = 2.0 * std::f64::consts::PI * d as f64 / m as f64;
                let rot = Complex64::from_polar(1.0, -th);
                let need = r * shrink - (rot * yi).re;
                if need <= 0.0 {
                    best_k = 0.0;
                    break;
                }
                items.clear();
                tops.clear();
                let rg = rot * g;
                for i in 0..np {
                    let v = (rg * self.ev.y(i, k, crate::evaluator::Corner::Worst)).re;
                    if v > 0.0 && self.count_max[i] > 0 {
                        let cap = self.count_max[i] as f64;
                        items.push((self.weights[0][i] / v, v, cap));
                        tops.push(v * cap);
                    }
                }
                // Fewest lines that can reach the need in this direction.
                tops.sort_by(|x, y| y.total_cmp(x));
                let (mut acc, mut lines) = (0.0, 0usize);
                for &x in &tops {
                    if acc >= need {
                        break;
                    }
                    acc += x;
                    lines += 1;
                }
                if acc < need * (1.0 - 1e-9) || lines > max_lines {
                    continue; // this direction cannot hold
                }
                items.sort_by(|x, y| x.0.total_cmp(&y.0));
                let (mut left, mut cost) = (need, 0.0);
                for &(ratio, v, cap) in &items {
                    if left <= 0.0 {
                        break;
                    }
                    let take = cap.min(left / v);
                    cost += take * v * ratio;
                    left -= take * v;
                }
                let here = cost + lines as f64 * self.line_w[0];
                best_k = best_k.min(here);
                if best_k <= bound {
                    break; // this harmonic cannot raise the bound
                }
            }
            bound = bound.max(best_k);
        }
        bound
    }

    /// Take `bank` (catalog indices and counts) as the incumbent when every
    /// part is a candidate here, its counts keep every limit and it passes
    /// the exact checks (a bank from a tighter problem on the same catalog).
    pub(super) fn warm_start(&mut self, bank: &[(usize, u32)]) {
        let mut local = Vec::with_capacity(bank.len());
        for &(c, n) in bank {
            match self.catalog_index.iter().position(|&x| x == c) {
                Some(i) => local.push((i, n)),
                None => return,
            }
        }
        if local.len() > self.lim.max_lines
            || !self
                .required_parts
                .iter()
                .all(|r| local.iter().any(|b| b.0 == *r))
            || local
                .iter()
                .any(|&(i, n)| n < self.count_min[i] || n > self.count_max[i])
        {
            return;
        }
        let set: Vec<usize> = local.iter().map(|b| b.0).collect();
        let counts: Vec<u32> = local.iter().map(|b| b.1).collect();
        if !self.lim.upper_hold(&set, &counts)
            || !self.lim.at_least.iter().all(|r| {
                set.iter()
                    .zip(&counts)
                    .map(|(&i, &n)| n as f64 * r.coef[i])
                    .sum::<f64>()
                    >= r.value
            })
        {
            return;
        }
        self.bank_buf.clear();
        self.bank_buf.extend_from_slice(&local);
        if let Some(r) = self.exact() {
            let key = self.key_of(&set, &counts);
            if self
                .incumbent
                .as_ref()
                .is_none_or(|inc| better(&key, &inc.0))
            {
                self.incumbent = Some((key, local, r));
            }
        }
    }

    /// Check every later candidate at `cut` too.
    pub(super) fn add_cut(&mut self, cut: &super::Cut) {
        match cut {
            super::Cut::Ripple(op, st) => {
                let idx = self.ev.add_op(op);
                self.active.push(crate::region::Active {
                    op: idx,
                    states: st.clone(),
                });
            }
            super::Cut::Step(st) => self.step_cuts.push(st.clone()),
        }
    }

    /// Whether the bank in `bank_buf`, which passed the exact checks, may
    /// become the incumbent: it holds over the whole corner region (with
    /// `verify_region`). A bank that breaks the region adds the point where
    /// it does as a cut (to `active` and to `cuts`), so the search goes on
    /// against it instead of restarting: the incumbent is never a bank the
    /// region refuses, so no line set is ever cut off by one.
    pub(super) fn region_accepts(&mut self) -> bool {
        if !self.verify_region {
            return true;
        }
        let bank = std::mem::take(&mut self.bank_buf);
        let ops = self.ev.ops.len();
        let verdict = super::region_cut(self.problem, self, &bank, self.target);
        self.ev.truncate_ops(ops);
        self.bank_buf = bank;
        match verdict {
            Ok(_) => true,
            Err(cut) => {
                self.keep_cut(cut);
                false
            }
        }
    }

    /// [`Search::add_cut`], recorded in `cuts` as one this search found.
    pub(super) fn keep_cut(&mut self, cut: super::Cut) {
        self.add_cut(&cut);
        self.cuts.push(cut);
    }

    pub(super) fn inc_primary(&self) -> f64 {
        self.incumbent.as_ref().map_or(f64::INFINITY, |i| i.0[0])
    }

    /// Exact check of the bank in `bank_buf` whose admittance is in
    /// `yb_buf`: ripple and ripple currents.
    pub(super) fn exact_from_admittance(&mut self) -> Option<f64> {
        self.evals += 1;
        let r = self
            .ev
            .ripple_check_admittance(&self.yb_buf, &self.bank_buf, self.target);
        if !(r <= self.target) {
            return None;
        }
        self.passes_rest().then_some(r)
    }

    /// Exact check of the bank in `bank_buf`: ripple and ripple currents.
    pub(super) fn exact(&mut self) -> Option<f64> {
        self.evals += 1;
        let r = self.ev.ripple_check(&self.bank_buf, self.target);
        if !(r <= self.target) {
            return None;
        }
        self.passes_rest().then_some(r)
    }

    /// The checks after the worst-corner ripple, for the bank in
    /// `bank_buf`: the typical corner (with `check_typical`), the ripple
    /// currents, and the active points of the corner region.
    pub(super) fn passes_rest(&mut self) -> bool {
        if self.check_typical {
            let Search { ev, bank_buf, .. } = self;
            let r = ev.ripple_pp(
                bank_buf,
                crate::evaluator::Corner::Typical,
                crate::evaluator::Band::Limited,
            );
            if !(r <= self.target) {
                return false;
            }
        }
        if self.check_currents
            && self
                .bank_buf
                .iter()
                .any(|&(i, _)| self.parts[i].rating.is_some())
        {
            self.cur_buf.resize(self.bank_buf.len(), 0.0);
            self.ev
                .part_currents_into(&self.bank_buf, &mut self.cur_buf);
            for (j, &(i, _)) in self.bank_buf.iter().enumerate() {
                if let Some(r) = self.parts[i].rating {
                    if self.cur_buf[j] > r {
                        return false;
                    }
                }
            }
        }
        // The load step: its `low` corner, its cuts and the box's vertices
        // (before the ripple's region: where the step binds most candidates
        // fail it, and behind a filter the region's vertices with their
        // ripple currents cost more; both tests are pure, so the order
        // changes no answer).
        if let Some(m) = self.step.as_mut() {
            let limit = m.spec.max_deviation * (1.0 + crate::transient::ROUNDING);
            let before = m.work;
            let ok = m.screen(
                &self.parts,
                &self.bank_buf,
                limit,
                &self.step_cuts,
                &mut self.step_buf,
            );
            // A deviation evaluates a whole grid of frequencies: charged to
            // the budget as that many ripple evaluations' worth of work, so
            // that a load step that fails every candidate cannot run on
            // without end.
            self.evals += (m.work - before) / self.harmonics.max(1);
            if !ok {
                return false;
            }
        }
        // The rest of the corner region: the active points and the box's vertices.
        if self.target.is_finite() {
            let Search {
                ev,
                bank_buf,
                active,
                ratings,
                target,
                ..
            } = self;
            if !crate::region::screen(ev, bank_buf, *target, active, ratings) {
                return false;
            }
        }
        true
    }

    pub(super) fn key_of(&self, set: &[usize], counts: &[u32]) -> Key {
        let mut k = [0.0; 3];
        for j in 0..3 {
            k[j] = set.len() as f64 * self.line_w[j]
                + set
                    .iter()
                    .zip(counts)
                    .map(|(&i, &n)| n as f64 * self.weights[j][i])
                    .sum::<f64>();
        }
        k
    }

    /// Cheapest counts for `set` that beat the incumbent (updates it).
    pub(super) fn solve_set(&mut self, set: &[usize]) {
        self.sets_solved += 1;
        let m = set.len();
        // rest_ub[d][k] = Σ_{j>d} ub_j a_jk, and rest_ub[d][n + k] =
        // min_{j>d} w_j / a_jk: the least objective per unit of |Y| at k
        // among the parts after d.
        let n = self.harmonics;
        let mut rest_ub = vec![vec![0.0; 2 * n]; m];
        if let Some(last) = rest_ub.last_mut() {
            last[n..].fill(f64::INFINITY);
        }
        for d in (0..m.saturating_sub(1)).rev() {
            let i = set[d + 1];
            let w = self.weights[0][i];
            for k in 0..n {
                let a = self.adm_mag[i * n + k];
                rest_ub[d][k] = rest_ub[d + 1][k] + self.count_max[i] as f64 * a;
                rest_ub[d][n + k] = rest_ub[d + 1][n + k].min(w / a);
            }
        }
        let mut stack = vec![vec![0.0; n]; m + 1];
        let mut cstack = vec![self.ph_a0.clone(); m + 1];
        let mut counts = vec![0u32; m];
        let start = Partial {
            key0: m as f64 * self.line_w[0],
            used_most: [0.0; MAX_SUMS],
            used_least: [0.0; MAX_SUMS],
        };
        self.rec(
            set,
            0,
            start,
            &mut stack,
            &mut cstack,
            &mut counts,
            &rest_ub,
        );
    }

    /// Smallest count c ≥ lo of part i such that, with the other parts'
    /// screen sum `a` fixed (Σ n_j·Y_jk·G_k + Y_int,k, laid out as
    /// [`Search::ph_b`]), every harmonic of the phase screen meets
    /// |Y_tot,k| ≥ r_k exactly (phases kept): |A + c·B|² ≥ r² is a
    /// quadratic in c whose failing set is one open interval. `None` if no
    /// count up to `hi` does. A branch-free pass ([`phase_clear`]) accepts
    /// a count; only a count it refuses is moved harmonic by harmonic.
    pub(super) fn phase_need(&self, i: usize, a: &[f64], lo: f64, hi: f64) -> Option<f64> {
        let p = self.ph_k.len();
        let b = &self.ph_b[2 * i * p..2 * (i + 1) * p];
        phase_need_in(a, b, &self.ph_r2, &self.ph_r2_pass, lo, hi)
    }

    /// Charge one enumeration node; true when the budget is spent (and the
    /// search marked stopped).
    #[inline]
    fn node_spent(&mut self) -> bool {
        self.nodes += 1;
        if self.nodes >= NODES_PER_EVAL {
            self.nodes = 0;
            self.evals += 1;
            if self.evals >= self.budget {
                self.stopped = true;
            }
        }
        self.stopped
    }

    #[allow(clippy::too_many_arguments)]
    pub(super) fn rec(
        &mut self,
        set: &[usize],
        d: usize,
        p: Partial,
        stack: &mut [Vec<f64>],
        cstack: &mut [Vec<f64>],
        counts: &mut [u32],
        rest_ub: &[Vec<f64>],
    ) {
        let m = set.len();
        let i = set[d];
        let w0 = self.weights[0][i];
        // The later parts at their smallest counts.
        let mut rest_key = 0.0;
        for &j in &set[d + 1..] {
            rest_key += self.count_min[j] as f64 * self.weights[0][j];
        }
        let mut hi = self.count_max[i] as f64;
        for (r, row) in self.lim.at_most.iter().enumerate() {
            let coef = row.coef[i];
            if coef <= 0.0 {
                continue;
            }
            let rest: f64 = set[d + 1..]
                .iter()
                .map(|&j| self.count_min[j] as f64 * row.coef[j])
                .sum();
            hi =
                hi.min(((row.value - p.used_most[r] - rest) / coef * (1.0 + 1e-12) + 1e-9).floor());
        }
        let lo = self.count_min[i] as f64;
        if hi < lo {
            return;
        }
        let hi = hi as u32;
        if self.node_spent() {
            return;
        }
        if d + 1 == m {
            let cur = &stack[d];
            // Smallest count the necessary condition allows.
            let row = &self.adm_mag[i * self.harmonics..(i + 1) * self.harmonics];
            // max_k (r_k − cur_k)/|Y_ik|, without branches: a deficit where
            // the part has no admittance gives +∞ (no count is enough),
            // no deficit there gives −∞ or NaN, which the maximum skips.
            let mut top = [f64::NEG_INFINITY; 4];
            let (req, cur) = (&self.required[..row.len()], &cur[..row.len()]);
            let mut k = 0;
            while k + 4 <= row.len() {
                for q in 0..4 {
                    let x = (req[k + q] - cur[k + q]) / row[k + q];
                    top[q] = if x > top[q] { x } else { top[q] };
                }
                k += 4;
            }
            let mut ratio = top[0].max(top[1]).max(top[2]).max(top[3]);
            while k < row.len() {
                let x = (req[k] - cur[k]) / row[k];
                ratio = if x > ratio { x } else { ratio };
                k += 1;
            }
            if ratio == f64::INFINITY {
                return;
            }
            let mut need = lo.max(ratio - 1e-9);
            for (r, row) in self.lim.at_least.iter().enumerate() {
                if row.value > p.used_least[r] && row.coef[i] > 0.0 {
                    need = need.max((row.value - p.used_least[r]) / row.coef[i] - 1e-9);
                }
            }
            let need = need.ceil().max(lo);
            if need > hi as f64 {
                return;
            }
            // Jump over the counts that fail a harmonic outright.
            let Some(mut next_ok) = self.phase_need(i, &cstack[d], need, hi as f64) else {
                return;
            };
            // The fixed parts' admittance, summed before the first exact
            // evaluation (most leaves end on the objective before one).
            let mut base_ready = false;
            for c in next_ok as u32..=hi {
                if (c as f64) < next_ok {
                    continue;
                }
                let key0 = p.key0 + c as f64 * w0;
                let inc0 = self.inc_primary();
                if key0 > inc0 + tol(key0, inc0) {
                    break;
                }
                counts[d] = c;
                self.bank_buf.clear();
                self.bank_buf
                    .extend(set.iter().zip(counts.iter()).map(|(&a, &b)| (a, b)));
                {
                    let cf = c as f64;
                    let n = self.harmonics;
                    let Search {
                        ev,
                        yb_buf,
                        yb_base,
                        ..
                    } = self;
                    if !base_ready {
                        yb_base.fill(Complex64::default());
                        for (&j, &cj) in set[..d].iter().zip(counts.iter()) {
                            let cj = cj as f64;
                            let row = &ev.y_row(j)[..n];
                            for (b, y) in yb_base.iter_mut().zip(row) {
                                *b += y * cj;
                            }
                        }
                        base_ready = true;
                    }
                    let row = &ev.y_row(i)[..n];
                    for ((yb, s0), y) in yb_buf.iter_mut().zip(yb_base.iter()).zip(row) {
                        *yb = s0 + y * cf;
                    }
                }
                if let Some(r) = self.exact_from_admittance() {
                    let key = self.key_of(set, counts);
                    if self
                        .incumbent
                        .as_ref()
                        .is_none_or(|inc| better(&key, &inc.0))
                    {
                        if self.region_accepts() {
                            self.incumbent = Some((key, self.bank_buf.clone(), r));
                            break;
                        }
                        // Refused by the region: the next count may hold.
                    } else {
                        break;
                    }
                }
                if self.evals >= self.budget {
                    self.stopped = true;
                    return;
                }
                match self.phase_need(i, &cstack[d], c as f64 + 1.0, hi as f64) {
                    Some(x) => next_ok = x,
                    None => return,
                }
            }
            return;
        }
        let row_start = i * self.harmonics;
        'outer: for c in lo as u32..=hi {
            let key0 = p.key0 + c as f64 * w0 + rest_key;
            let inc0 = self.inc_primary();
            if key0 > inc0 + tol(key0, inc0) {
                break;
            }
            if self.node_spent() {
                return;
            }
            let cf = c as f64;
            let (head, tail) = stack.split_at_mut(d + 1);
            let (cur, next) = (&head[d], &mut tail[0]);
            let mut bad = false;
            // The later parts must still bring Σ n_j·|Y_jk| ≥ r_k − v_k at
            // every harmonic: at least (r_k − v_k)·min_j w_j/|Y_jk| of the
            // objective (NaN, where no deficit meets an infinite ratio, is
            // skipped by the maximum).
            let mut extra: f64 = 0.0;
            let mag = &self.adm_mag[row_start..row_start + self.harmonics];
            let (ub, ratio) = rest_ub[d].split_at(self.harmonics);
            for (((((nx, &cu), &a), &ru), &thr), (&q, &rr)) in next
                .iter_mut()
                .zip(cur.iter())
                .zip(mag)
                .zip(ub)
                .zip(&self.req_thr)
                .zip(self.required.iter().zip(ratio))
            {
                let v = cu + cf * a;
                *nx = v;
                bad |= v + ru < thr;
                let x = (q - v) * rr;
                extra = if x > extra { x } else { extra };
            }
            if bad {
                continue 'outer;
            }
            let lb = p.key0 + cf * w0 + rest_key.max(extra);
            if lb > inc0 + tol(lb, inc0) {
                continue 'outer;
            }
            {
                let p2 = 2 * self.ph_k.len();
                let (ch, ct) = cstack.split_at_mut(d + 1);
                let brow = &self.ph_b[i * p2..(i + 1) * p2];
                for ((nx, cu), b) in ct[0].iter_mut().zip(&ch[d]).zip(brow) {
                    *nx = cu + cf * b;
                }
            }
            counts[d] = c;
            let mut np = Partial {
                key0: p.key0 + cf * w0,
                ..p
            };
            for (r, row) in self.lim.at_most.iter().enumerate() {
                np.used_most[r] += cf * row.coef[i];
            }
            for (r, row) in self.lim.at_least.iter().enumerate() {
                np.used_least[r] += cf * row.coef[i];
            }
            self.rec(set, d + 1, np, stack, cstack, counts, rest_ub);
        }
    }
}

#[derive(Clone, Copy)]
pub(super) struct Partial {
    /// Primary objective of the counts chosen so far (with line costs).
    pub(super) key0: f64,
    /// Σ coef·n so far of each upper limit (`lim.at_most`, in order).
    pub(super) used_most: [f64; MAX_SUMS],
    /// Σ coef·n so far of each lower limit (`lim.at_least`, in order).
    pub(super) used_least: [f64; MAX_SUMS],
}

/// Drop parts that another candidate dominates.
pub(super) fn prune_dominated(problem: &Problem, cands: &[usize]) -> (Vec<usize>, usize) {
    let models: Vec<PartModel> = cands.iter().map(|&i| problem.part_model(i)).collect();
    let req = &problem.scenario.selection.require;
    let mut keep = vec![true; cands.len()];
    let mut order: Vec<usize> = (0..cands.len()).collect();
    // Group electrically identical parts.
    order.sort_by(|&x, &y| {
        let (a, b) = (&models[x], &models[y]);
        a.c_worst
            .total_cmp(&b.c_worst)
            .then(a.c_typical.total_cmp(&b.c_typical))
            .then(a.esr.total_cmp(&b.esr))
            .then(a.esl.total_cmp(&b.esl))
            .then(x.cmp(&y))
    });
    let same = |a: &PartModel, b: &PartModel| {
        a.c_worst == b.c_worst && a.c_typical == b.c_typical && a.esr == b.esr && a.esl == b.esl
    };
    let mut g = 0;
    while g < order.len() {
        let mut h = g + 1;
        while h < order.len() && same(&models[order[g]], &models[order[h]]) {
            h += 1;
        }
        for x in g..h {
            for y in g..h {
                if x == y || !keep[order[y]] {
                    continue;
                }
                let (a, b) = (&models[order[x]], &models[order[y]]);
                if req.contains_key(&problem.catalog.parts[b.index].id) {
                    continue;
                }
                let rating_ok = match (a.rating, b.rating) {
                    (None, _) => true,
                    (Some(_), None) => false,
                    (Some(ra), Some(rb)) => ra >= rb,
                };
                let no_worse =
                    a.cost <= b.cost && a.area <= b.area && a.c_limit <= b.c_limit && rating_ok;
                let strictly = a.cost < b.cost
                    || a.area < b.area
                    || a.c_limit < b.c_limit
                    || a.rating != b.rating
                    || order[x] < order[y];
                if no_worse && strictly && keep[order[x]] {
                    keep[order[y]] = false;
                }
            }
        }
        g = h;
    }
    let kept: Vec<usize> = cands
        .iter()
        .zip(&keep)
        .filter(|(_, &k)| k)
        .map(|(&c, _)| c)
        .collect();
    let n = cands.len() - kept.len();
    (kept, n)
}

pub(super) fn binomial_sum(n: usize, k: usize) -> usize {
    let mut total: usize = 0;
    let mut c: usize = 1;
    for j in 1..=k.min(n) {
        c = c.saturating_mul(n + 1 - j) / j;
        total = total.saturating_add(c);
    }
    total
}

/// Visit every line set: the required parts plus up to `free` others from
/// `pool`, without storing them.
pub(super) fn each_line_set(
    required: &[usize],
    pool: &[usize],
    free: usize,
    f: &mut dyn FnMut(&[usize]),
) {
    let others: Vec<usize> = pool
        .iter()
        .copied()
        .filter(|i| !required.contains(i))
        .collect();
    let mut cur: Vec<usize> = required.to_vec();
    if !required.is_empty() {
        f(&cur);
    }
    pub(super) fn go(
        others: &[usize],
        start: usize,
        left: usize,
        cur: &mut Vec<usize>,
        f: &mut dyn FnMut(&[usize]),
    ) {
        for j in start..others.len() {
            cur.push(others[j]);
            f(cur);
            if left > 1 {
                go(others, j + 1, left - 1, cur, f);
            }
            cur.pop();
        }
    }
    if free > 0 {
        go(&others, 0, free, &mut cur, f);
    }
}

/// All line sets: the required parts plus up to `free` others from `pool`.
pub(super) fn line_sets(required: &[usize], pool: &[usize], free: usize) -> Vec<Vec<usize>> {
    let others: Vec<usize> = pool
        .iter()
        .copied()
        .filter(|i| !required.contains(i))
        .collect();
    let mut out = Vec::new();
    if !required.is_empty() {
        out.push(required.to_vec());
    }
    let mut cur: Vec<usize> = Vec::new();
    pub(super) fn go(
        others: &[usize],
        start: usize,
        left: usize,
        cur: &mut Vec<usize>,
        req: &[usize],
        out: &mut Vec<Vec<usize>>,
    ) {
        for j in start..others.len() {
            cur.push(others[j]);
            let mut s: Vec<usize> = req.to_vec();
            s.extend_from_slice(cur);
            out.push(s);
            if left > 1 {
                go(others, j + 1, left - 1, cur, req, out);
            }
            cur.pop();
        }
    }
    if free > 0 {
        go(&others, 0, free, &mut cur, required, &mut out);
    }
    out
}

pub(super) fn bar(show: bool, len: usize, msg: &str) -> ProgressBar {
    if !show {
        return ProgressBar::hidden();
    }
    let pb = ProgressBar::new(len as u64);
    pb.set_style(
        ProgressStyle::with_template("{msg} [{bar:30}] {pos}/{len} line sets ({elapsed})")
            .expect("template")
            .progress_chars("=> "),
    );
    pb.set_message(msg.to_string());
    pb
}

pub(super) fn run_sets(s: &mut Search, sets: Vec<Vec<usize>>, settings: &Settings, msg: &str) {
    let bounded: Vec<(f64, Vec<usize>)> = sets
        .into_iter()
        .filter_map(|set| s.set_bound(&set).map(|b| (b, set)))
        .collect();
    solve_bounded(s, bounded, settings, msg);
}

/// As [`run_sets`] over the line sets of exactly `size` lines: the required
/// parts plus others from `pool`; only the sets that pass their bound are
/// stored. Returns the smallest bound of the sets left unsolved that could
/// still beat the incumbent (+∞ when none is left).
pub(super) fn run_sized_sets(
    s: &mut Search,
    pool: &[usize],
    size: usize,
    settings: &Settings,
    msg: &str,
) -> f64 {
    let mut bounded: Vec<(f64, Vec<usize>)> = Vec::new();
    let required = s.required_parts.clone();
    let inc0 = s.inc_primary();
    if size < required.len() {
        return f64::INFINITY;
    }
    let free = size - required.len();
    if free == 0 {
        if !required.is_empty() {
            if let Some(b) = s.set_bound(&required) {
                bounded.push((b, required.clone()));
            }
        }
    } else {
        each_line_set(&required, pool, free, &mut |set| {
            if set.len() != size {
                return;
            }
            if let Some(b) = s.set_bound(set) {
                if b <= inc0 + tol(b, inc0) {
                    bounded.push((b, set.to_vec()));
                }
            }
        });
    }
    solve_bounded(s, bounded, settings, msg)
}

/// Lanes of the line-set search: the sets of a round are dealt to this
/// many copies of the search, each with the incumbent as the round began,
/// which run on their own threads where the machine has the cores. The
/// lanes are fixed, not the machine's core count, so that the answer (and
/// where a budget stops it) does not depend on the number of cores.
pub(super) const LANES: usize = 2;
/// Line sets each lane takes per round (fewer sets in all are solved in
/// one sequence).
pub(super) const ROUND_SETS: usize = 32;

/// Solve the bounded line sets in order of their bound while a set can
/// beat the incumbent; returns the smallest bound of the sets left unsolved
/// when the budget stopped the search (+∞ otherwise). Past
/// `LANES · ROUND_SETS` sets the work goes in rounds over [`LANES`] lanes:
/// each round deals its sets in bound order to the lanes in turn, each lane
/// solves its share against the incumbent of the round's start with half
/// the evaluations left, and the round's best bank (the lanes taken in
/// order, a tie kept by the earlier lane) is the next round's incumbent.
pub(super) fn solve_bounded(
    s: &mut Search,
    mut bounded: Vec<(f64, Vec<usize>)>,
    settings: &Settings,
    msg: &str,
) -> f64 {
    bounded.sort_by(|x, y| x.0.total_cmp(&y.0).then(x.1.len().cmp(&y.1.len())));
    let pb = bar(settings.progress, bounded.len(), msg);
    let open = if bounded.len() <= LANES * ROUND_SETS {
        solve_lane(s, bounded.iter())
    } else {
        solve_rounds(s, &bounded, &pb, settings.thread_count())
    };
    pb.finish_and_clear();
    open
}

/// One lane's sets in order: the bound of the set a stop interrupted, or
/// +∞.
fn solve_lane<'a>(s: &mut Search, sets: impl Iterator<Item = &'a (f64, Vec<usize>)>) -> f64 {
    for (b, set) in sets {
        if s.stopped {
            // Sorted by bound: this one is the smallest left.
            return *b;
        }
        let inc0 = s.inc_primary();
        if *b > inc0 + tol(*b, inc0) {
            break;
        }
        s.solve_set(set);
        if s.stopped {
            // This set may not have been finished.
            return *b;
        }
    }
    f64::INFINITY
}

/// The rounds of [`solve_bounded`] over [`LANES`] copies of `s`.
fn solve_rounds<'p>(
    s: &mut Search<'p>,
    bounded: &[(f64, Vec<usize>)],
    pb: &ProgressBar,
    threads: usize,
) -> f64 {
    // A lane's `cuts` holds only the cuts it adds itself.
    let lane = |s: &Search<'p>| {
        let mut w = s.clone();
        w.cuts.clear();
        w
    };
    let mut lanes: Vec<Search> = (0..LANES).map(|_| lane(s)).collect();
    let mut open = f64::INFINITY;
    let mut next = 0;
    while next < bounded.len() {
        if s.stopped {
            open = open.min(bounded[next].0);
            break;
        }
        let inc0 = s.inc_primary();
        if bounded[next].0 > inc0 + tol(bounded[next].0, inc0) {
            break;
        }
        let end = (next + LANES * ROUND_SETS).min(bounded.len());
        let share = (s.budget.saturating_sub(s.evals) / LANES).max(1);
        for w in lanes.iter_mut() {
            w.incumbent.clone_from(&s.incumbent);
            w.evals = 0;
            w.nodes = 0;
            w.sets_solved = 0;
            w.budget = share;
            w.stopped = false;
        }
        let round = &bounded[next..end];
        let mut opens = [f64::INFINITY; LANES];
        if threads >= 2 {
            std::thread::scope(|scope| {
                let (first, rest) = lanes.split_first_mut().expect("LANES ≥ 1");
                let handles: Vec<_> = rest
                    .iter_mut()
                    .enumerate()
                    .map(|(j, w)| {
                        scope.spawn(move || solve_lane(w, round.iter().skip(j + 1).step_by(LANES)))
                    })
                    .collect();
                opens[0] = solve_lane(first, round.iter().step_by(LANES));
                for (j, h) in handles.into_iter().enumerate() {
                    opens[j + 1] = h.join().expect("a lane does not panic");
                }
            });
        } else {
            for (j, w) in lanes.iter_mut().enumerate() {
                opens[j] = solve_lane(w, round.iter().skip(j).step_by(LANES));
            }
        }
        // The cuts the lanes added to themselves, in lane order, go to the
        // search; the lanes start the next round from it with all of them.
        let mut resync = false;
        for w in lanes.iter_mut() {
            for cut in w.cuts.drain(..) {
                s.keep_cut(cut);
                resync = true;
            }
        }
        for (w, &o) in lanes.iter().zip(&opens) {
            s.evals += w.evals;
            s.sets_solved += w.sets_solved;
            if let Some(inc) = &w.incumbent {
                if s.incumbent
                    .as_ref()
                    .is_none_or(|cur| better(&inc.0, &cur.0))
                {
                    s.incumbent = Some(inc.clone());
                }
            }
            if w.stopped {
                s.stopped = true;
                open = open.min(o);
            }
        }
        if s.evals >= s.budget {
            s.stopped = true;
        }
        next = end;
        pb.set_position(end as u64);
        if resync {
            for w in lanes.iter_mut() {
                *w = lane(s);
            }
        }
    }
    open
}

/// The most promising parts for a large catalog: for each of the hardest
/// harmonics, the parts with the most admittance per unit of objective, and
/// the parts that meet the necessary condition alone most cheaply.
pub(super) fn pool(s: &Search, size: usize) -> Vec<usize> {
    let p = s.parts.len();
    let all: Vec<usize> = (0..p).collect();
    let mut score = vec![0.0_f64; p];
    let ks = milp::hard_harmonics(s, &all, 12);
    let mut idx: Vec<usize> = all.clone();
    for &k in &ks {
        let eff = |x: usize| s.adm_mag[x * s.harmonics + k] / s.weights[0][x].max(1e-12);
        idx.sort_by(|&x, &y| eff(y).total_cmp(&eff(x)));
        for (rank, &i) in idx.iter().take(size).enumerate() {
            score[i] += 1.0 / (1.0 + rank as f64);
        }
    }
    // Cost for one part alone to meet the condition at every harmonic.
    let alone = |i: usize| -> f64 {
        let mut need: f64 = s.count_min[i] as f64;
        for k in 0..s.harmonics {
            if s.required[k] > 0.0 {
                need =
                    need.max((s.required[k] / s.adm_mag[i * s.harmonics + k].max(1e-300)).ceil());
            }
        }
        if need > s.count_max[i] as f64 {
            f64::INFINITY
        } else {
            need * s.weights[0][i]
        }
    };
    let costs: Vec<f64> = all.iter().map(|&i| alone(i)).collect();
    idx.sort_by(|&x, &y| costs[x].total_cmp(&costs[y]));
    for (rank, &i) in idx.iter().take(size).enumerate() {
        if costs[i].is_finite() {
            score[i] += 2.0 / (1.0 + rank as f64);
        }
    }
    let mut order: Vec<usize> = all;
    order.sort_by(|&x, &y| score[y].total_cmp(&score[x]));
    let mut out: Vec<usize> = order.into_iter().take(size).collect();
    for &r in &s.required_parts {
        if !out.contains(&r) {
            out.push(r);
        }
    }
    out
}

/// Swap, add or remove one part of the incumbent's line set while that improves.
pub(super) fn neighbourhood(s: &mut Search, settings: &Settings) {
    loop {
        let Some((key, bank, _)) = s.incumbent.clone() else {
            return;
        };
        let cur: Vec<usize> = bank.iter().map(|b| b.0).collect();
        let mut sets: Vec<Vec<usize>> = Vec::new();
        let p = s.parts.len();
        for (j, &i) in cur.iter().enumerate() {
            if s.required_parts.contains(&i) {
                continue;
            }
            let mut r = cur.clone();
            r.remove(j);
            if !r.is_empty() {
                sets.push(r.clone());
            }
            for x in 0..p {
                if !cur.contains(&x) {
                    let mut t = r.clone();
                    t.push(x);
                    sets.push(t);
                }
            }
        }
        if cur.len() < s.lim.max_lines {
            for x in 0..p {
                if !cur.contains(&x) {
                    let mut t = cur.clone();
                    t.push(x);
                    sets.push(t);
                }
            }
        }
        run_sets(s, sets, settings, "design (neighbourhood)");
        match &s.incumbent {
            Some((k2, _, _)) if better(k2, &key) => continue,
            _ => return,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::rngs::StdRng;
    use rand::{Rng, SeedableRng};

    /// The phase screen's jumps and its branch-free pass against brute
    /// force: the first count from `lo` at which every harmonic meets
    /// |a_k + c·b_k|² ≥ r_k² (to the screen's 1e−9), tried one by one.
    #[test]
    fn phase_need_finds_the_first_count_brute_force_finds() {
        let mut rng = StdRng::seed_from_u64(0x5eed_0001);
        let (mut some, mut none) = (0, 0);
        for case in 0..3000 {
            let p = rng.gen_range(1..40);
            let mut a = vec![0.0; 2 * p];
            let mut b = vec![0.0; 2 * p];
            let mut r2 = vec![0.0; p];
            for k in 0..p {
                let (ma, pa) = (rng.gen_range(0.0..1.0), rng.gen_range(0.0..6.3_f64));
                let (mb, pb) = (rng.gen_range(0.005..0.3), rng.gen_range(0.0..6.3_f64));
                a[k] = ma * pa.cos();
                a[p + k] = ma * pa.sin();
                b[k] = mb * pb.cos();
                b[p + k] = mb * pb.sin();
                r2[k] = rng.gen_range(0.1..2.0_f64).powi(2);
            }
            let pass: Vec<f64> = r2.iter().map(|r| r * (1.0 - 1e-9)).collect();
            let lo = rng.gen_range(0..5) as f64;
            let hi = rng.gen_range(5..150) as f64;
            let meets = |c: f64| {
                (0..p).all(|k| {
                    let (x, y) = (a[k] + c * b[k], a[p + k] + c * b[p + k]);
                    x * x + y * y >= pass[k]
                })
            };
            let mut brute = None;
            let mut c = lo;
            while c <= hi {
                if meets(c) {
                    brute = Some(c);
                    break;
                }
                c += 1.0;
            }
            let fast = phase_need_in(&a, &b, &r2, &pass, lo, hi);
            assert_eq!(fast, brute, "case {case}: p {p}, lo {lo}, hi {hi}");
            if brute.is_some() {
                some += 1;
            } else {
                none += 1;
            }
        }
        assert!(
            some > 300 && none > 300,
            "both outcomes must occur: {some} / {none}"
        );
    }
}
