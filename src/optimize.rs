//! The optimizer: the bank of lowest cost (or area, or count) whose exact
//! worst-corner ripple meets the target under every limit.
//!
//! Method (branch and bound over line sets, the evaluator as sole judge):
//!
//! 1. Parts that another part dominates (electrically identical, no worse
//!    in cost, area, capacitance-limit share, rating) are dropped.
//! 2. Every line set (which parts are used) gets a valid lower bound on its
//!    objective from the linear necessary condition Σ n_i |Y_ik| ≥ q_k of
//!    [`Evaluator::required_admittance`]; sets that cannot reach q_k even
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
//! 5. With no design, the same search minimises the ripple instead
//!    (`best_ripple_pp`), and each limit is relaxed in turn to find the
//!    ones that bind.

use crate::bank::{Evaluator, PartModel};
use crate::problem::Problem;
use crate::scenario::Objective;
use indicatif::{ProgressBar, ProgressStyle};
use num_complex::Complex64;
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

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Status {
    Optimal,
    Feasible,
    Infeasible,
}

impl Status {
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
    pub key: Key,
    pub ripple_pp: f64,
}

/// Result of a design run.
#[derive(Debug, Clone)]
pub struct Outcome {
    pub status: Status,
    pub found: Option<Found>,
    pub best_ripple_pp: Option<f64>,
    pub best_ripple_bank: Option<Vec<(usize, u32)>>,
    pub binding: Vec<String>,
    pub stats: Stats,
}

#[derive(Debug, Clone, Default, Serialize)]
pub struct Stats {
    pub candidates: usize,
    pub dominated: usize,
    pub line_sets_total: usize,
    pub line_sets_solved: usize,
    pub evaluations: usize,
    pub exhaustive: bool,
    /// The search reached its evaluation budget before it finished.
    pub stopped: bool,
    pub lower_bound: Option<f64>,
    pub seconds: f64,
}

/// Knobs of the search.
#[derive(Debug, Clone)]
pub struct Settings {
    pub progress: bool,
    /// Largest number of line sets enumerated exhaustively.
    pub exhaustive_limit: usize,
    /// Pool size for large catalogs.
    pub pool: usize,
    /// With no design: search the lowest ripple and the binding limits.
    pub explain: bool,
    /// Largest candidate list given whole to the mixed-integer model.
    pub milp_parts: usize,
    /// Line sets the mixed-integer model proposes (with no-good cuts).
    pub milp_proposals: usize,
    /// Time limit of one mixed-integer solve, s.
    pub milp_seconds: f64,
    /// Exact evaluations allowed in one search; past it the search stops
    /// and the result is `feasible` at best.
    pub max_evaluations: usize,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            progress: false,
            exhaustive_limit: 1_500_000,
            pool: 36,
            explain: true,
            milp_parts: 120,
            milp_proposals: 2,
            milp_seconds: 2.0,
            max_evaluations: 3_000_000,
        }
    }
}

/// Limits that are linear in the counts.
#[derive(Debug, Clone)]
struct Limits {
    max_cap: f64,
    min_cap: f64,
    max_count: f64,
    max_area: f64,
    max_lines: usize,
}

/// The search over one candidate list.
struct Search {
    ev: Evaluator,
    /// Catalog index of each local part.
    catalog_index: Vec<usize>,
    parts: Vec<PartModel>,
    /// Objective weights per part: w[j][i].
    w: [Vec<f64>; 3],
    line_w: Key,
    lb: Vec<u32>,
    ub: Vec<u32>,
    /// |Y_ik| of each part, n harmonics each.
    a: Vec<f64>,
    q: Vec<f64>,
    /// Complex admittance Y_ik per part (worst corner), n harmonics each.
    y: Vec<Complex64>,
    /// (r_k, G_k, Y_int,k) of [`Evaluator::phase_terms`].
    phase: Vec<(f64, Complex64, Complex64)>,
    n: usize,
    target: f64,
    lim: Limits,
    required: Vec<usize>,
    check_currents: bool,
    inc: Option<(Key, Vec<(usize, u32)>, f64)>,
    evals: usize,
    sets_solved: usize,
    bank_buf: Vec<(usize, u32)>,
    yb_buf: Vec<Complex64>,
    cur_buf: Vec<f64>,
    /// Exact evaluations allowed; past it the search stops (result `feasible`).
    budget: usize,
    stopped: bool,
}

fn weights(obj: Objective, p: &PartModel) -> Key {
    match obj {
        Objective::Cost => [p.cost, p.area, 1.0],
        Objective::Area => [p.area, p.cost, 1.0],
        Objective::Count => [1.0, p.cost, p.area],
    }
}

impl Search {
    fn new(problem: &Problem, candidates: &[usize], target: f64) -> Search {
        let s = &problem.scenario;
        let ev = problem.evaluator(candidates);
        let parts = ev.parts.clone();
        let obj = s.selection.objective;
        let mut w: [Vec<f64>; 3] = [vec![], vec![], vec![]];
        for p in &parts {
            let k = weights(obj, p);
            for j in 0..3 {
                w[j].push(k[j]);
            }
        }
        let lc = s.selection.line_cost.0;
        let line_w = match obj {
            Objective::Cost => [lc, 0.0, 0.0],
            _ => [0.0, lc, 0.0],
        };
        let lim = Limits {
            max_cap: s.converter.max_capacitance.map_or(f64::INFINITY, |c| c.0),
            min_cap: s.converter.min_capacitance.0,
            max_count: s.board.max_count.map_or(f64::INFINITY, |c| c as f64),
            max_area: s.board.max_area.map_or(f64::INFINITY, |a| a.0),
            max_lines: s.max_lines() as usize,
        };
        let mut lb = Vec::new();
        let mut ub = Vec::new();
        let mut required = Vec::new();
        for (j, p) in parts.iter().enumerate() {
            let id = &problem.catalog.parts[p.index].id;
            let req = s.selection.require.get(id).copied().unwrap_or(0);
            if req > 0 {
                required.push(j);
            }
            lb.push(req.max(1));
            let mut u = s.selection.max_per_part as f64;
            if p.c_limit > 0.0 {
                u = u.min((lim.max_cap / p.c_limit * (1.0 + 1e-12)).floor());
            }
            u = u.min(lim.max_count);
            if p.area > 0.0 {
                u = u.min((lim.max_area / p.area * (1.0 + 1e-12)).floor());
            }
            ub.push(u.max(0.0) as u32);
        }
        let q = ev.required_admittance(target);
        let n = q.len();
        let mut a = Vec::with_capacity(parts.len() * n);
        for j in 0..parts.len() {
            a.extend(ev.admittance_magnitudes(j));
        }
        let check_currents = parts.iter().any(|p| p.rating.is_some());
        let mut y = Vec::with_capacity(parts.len() * n);
        for j in 0..parts.len() {
            for k in 0..n {
                y.push(ev.y(j, k, crate::bank::Corner::Worst));
            }
        }
        let phase = ev.phase_terms(target);
        Search {
            y,
            phase,
            catalog_index: candidates.to_vec(),
            ev,
            parts,
            w,
            line_w,
            lb,
            ub,
            a,
            q,
            n,
            target,
            lim,
            required,
            check_currents,
            inc: None,
            evals: 0,
            sets_solved: 0,
            bank_buf: Vec::new(),
            yb_buf: vec![Complex64::default(); n],
            cur_buf: Vec::new(),
            budget: usize::MAX,
            stopped: false,
        }
    }

    /// Valid lower bound on the primary objective of line set `set`, or
    /// `None` if the set cannot meet the necessary condition or the limits.
    fn set_bound(&self, set: &[usize]) -> Option<f64> {
        if set.iter().any(|&i| self.ub[i] < self.lb[i]) {
            return None;
        }
        let (mut cap, mut cnt, mut area, mut base) =
            (0.0, 0.0, 0.0, set.len() as f64 * self.line_w[0]);
        let mut cmin_max = 0.0;
        for &i in set {
            let l = self.lb[i] as f64;
            cap += l * self.parts[i].c_limit;
            cnt += l;
            area += l * self.parts[i].area;
            base += l * self.w[0][i];
            cmin_max += self.ub[i] as f64 * self.parts[i].c_worst;
        }
        if cap > self.lim.max_cap * (1.0 + 1e-12)
            || cnt > self.lim.max_count
            || area > self.lim.max_area * (1.0 + 1e-12)
        {
            return None;
        }
        if cmin_max < self.lim.min_cap {
            return None;
        }
        let mut extra: f64 = 0.0;
        let left = [
            self.lim.max_count - cnt,
            self.lim.max_cap - cap,
            self.lim.max_area - area,
        ];
        let items: Vec<(usize, f64)> = set
            .iter()
            .map(|&i| (i, (self.ub[i] - self.lb[i]) as f64))
            .collect();
        for k in 0..self.n {
            let (mut at_lb, mut best_ratio) = (0.0, f64::INFINITY);
            for &i in set {
                let ai = self.a[i * self.n + k];
                at_lb += self.lb[i] as f64 * ai;
                if ai > 0.0 {
                    best_ratio = best_ratio.min(self.w[0][i] / ai);
                }
            }
            let need = self.q[k];
            if need > at_lb && at_lb + self.capacity(&items, &left, k) < need * (1.0 - 1e-9) {
                return None;
            }
            if need > at_lb {
                extra = extra.max((need - at_lb) * best_ratio);
            }
        }
        Some(base + extra)
    }

    /// Upper bound on Σ a_ik·x_i over 0 ≤ x_i ≤ room_i under each of the
    /// remaining count, capacitance-limit and area budgets `left`: the
    /// smallest of the fractional-knapsack optima, one budget at a time
    /// (each drops the other budgets, so each is a valid upper bound).
    fn capacity(&self, items: &[(usize, f64)], left: &[f64; 3], k: usize) -> f64 {
        let mut best = items
            .iter()
            .map(|&(i, room)| room * self.a[i * self.n + k])
            .sum::<f64>();
        for (r, &budget) in left.iter().enumerate() {
            if !budget.is_finite() {
                continue;
            }
            let weight = |i: usize| match r {
                0 => 1.0,
                1 => self.parts[i].c_limit,
                _ => self.parts[i].area,
            };
            // Items in order of value per unit of this resource.
            let mut order: [(f64, usize, f64); 8] = [(0.0, 0, 0.0); 8];
            let m = items.len().min(8);
            if items.len() > 8 {
                continue;
            }
            for (j, &(i, room)) in items.iter().enumerate() {
                let w = weight(i);
                let v = self.a[i * self.n + k];
                order[j] = (if w > 0.0 { v / w } else { f64::INFINITY }, i, room);
            }
            order[..m].sort_by(|x, y| y.0.partial_cmp(&x.0).unwrap());
            let (mut b, mut total) = (budget.max(0.0), 0.0);
            for &(_, i, room) in &order[..m] {
                let w = weight(i);
                let v = self.a[i * self.n + k];
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

    fn inc_primary(&self) -> f64 {
        self.inc.as_ref().map_or(f64::INFINITY, |i| i.0[0])
    }

    /// Exact check of the bank in `bank_buf` whose admittance is in
    /// `yb_buf`: ripple and ripple currents.
    fn exact_from_admittance(&mut self) -> Option<f64> {
        self.evals += 1;
        let r = self.ev.ripple_check_admittance(&self.yb_buf, self.target);
        if !(r <= self.target) {
            return None;
        }
        self.currents_ok().then_some(r)
    }

    /// Exact check of the bank in `bank_buf`: ripple and ripple currents.
    fn exact(&mut self) -> Option<f64> {
        self.evals += 1;
        let r = self.ev.ripple_check(&self.bank_buf, self.target);
        if !(r <= self.target) {
            return None;
        }
        self.currents_ok().then_some(r)
    }

    fn currents_ok(&mut self) -> bool {
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
        true
    }

    fn key_of(&self, set: &[usize], counts: &[u32]) -> Key {
        let mut k = [0.0; 3];
        for j in 0..3 {
            k[j] = set.len() as f64 * self.line_w[j]
                + set
                    .iter()
                    .zip(counts)
                    .map(|(&i, &n)| n as f64 * self.w[j][i])
                    .sum::<f64>();
        }
        k
    }

    /// Cheapest counts for `set` that beat the incumbent (updates it).
    fn solve_set(&mut self, set: &[usize]) {
        self.sets_solved += 1;
        let m = set.len();
        // rest_ub[d][k] = Σ_{j>d} ub_j a_jk
        let n = self.n;
        let mut rest_ub = vec![vec![0.0; n]; m];
        for d in (0..m.saturating_sub(1)).rev() {
            let i = set[d + 1];
            for k in 0..n {
                rest_ub[d][k] = rest_ub[d + 1][k] + self.ub[i] as f64 * self.a[i * n + k];
            }
        }
        let mut stack = vec![vec![0.0; n]; m + 1];
        let mut cstack = vec![vec![Complex64::default(); n]; m + 1];
        let mut counts = vec![0u32; m];
        let start = Partial {
            key0: m as f64 * self.line_w[0],
            cap: 0.0,
            cnt: 0.0,
            area: 0.0,
            cmin: 0.0,
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
    /// admittance `sum` fixed, every harmonic meets |Y_tot,k| ≥ r_k exactly
    /// (phases kept): |A + c·B|² ≥ r² is a quadratic in c whose failing set
    /// is one open interval. `None` if no count up to `hi` does.
    fn phase_need(&self, i: usize, sum: &[Complex64], lo: f64, hi: f64) -> Option<f64> {
        let n = self.n;
        let row = &self.y[i * n..(i + 1) * n];
        let mut c = lo;
        loop {
            let mut moved = false;
            for k in 0..n {
                let (r, g, yi) = self.phase[k];
                let a_ = sum[k] * g + yi;
                let b_ = row[k] * g;
                let qa = b_.norm_sqr();
                let qb = 2.0 * (a_ * b_.conj()).re;
                let qc = a_.norm_sqr() - r * r;
                let val = (qa * c + qb) * c + qc;
                if val >= -1e-9 * r * r {
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

    #[allow(clippy::too_many_arguments)]
    fn rec(
        &mut self,
        set: &[usize],
        d: usize,
        p: Partial,
        stack: &mut [Vec<f64>],
        cstack: &mut [Vec<Complex64>],
        counts: &mut [u32],
        rest_ub: &[Vec<f64>],
    ) {
        let m = set.len();
        let i = set[d];
        let pm = &self.parts[i];
        let (c_limit, c_worst, area_i, w0) = (pm.c_limit, pm.c_worst, pm.area, self.w[0][i]);
        // The later parts at their lower bounds.
        let (mut rest_key, mut rest_cap, mut rest_cnt, mut rest_area) = (0.0, 0.0, 0.0, 0.0);
        for &j in &set[d + 1..] {
            let l = self.lb[j] as f64;
            rest_key += l * self.w[0][j];
            rest_cap += l * self.parts[j].c_limit;
            rest_cnt += l;
            rest_area += l * self.parts[j].area;
        }
        let mut hi = self.ub[i] as f64;
        if c_limit > 0.0 {
            hi = hi.min(
                ((self.lim.max_cap - p.cap - rest_cap) / c_limit * (1.0 + 1e-12) + 1e-9).floor(),
            );
        }
        hi = hi.min(self.lim.max_count - p.cnt - rest_cnt);
        if area_i > 0.0 {
            hi = hi.min(
                ((self.lim.max_area - p.area - rest_area) / area_i * (1.0 + 1e-12) + 1e-9).floor(),
            );
        }
        let lo = self.lb[i] as f64;
        if hi < lo {
            return;
        }
        let hi = hi as u32;
        if d + 1 == m {
            let cur = &stack[d];
            // Smallest count the necessary condition allows.
            let mut need = lo;
            let row = &self.a[i * self.n..(i + 1) * self.n];
            for k in 0..self.n {
                let deficit = self.q[k] - cur[k];
                if deficit > 0.0 {
                    if row[k] <= 0.0 {
                        return;
                    }
                    need = need.max(deficit / row[k] - 1e-9);
                }
            }
            if self.lim.min_cap > p.cmin && c_worst > 0.0 {
                need = need.max((self.lim.min_cap - p.cmin) / c_worst - 1e-9);
            }
            let need = need.ceil().max(lo);
            if need > hi as f64 {
                return;
            }
            // Jump over the counts that fail a harmonic outright.
            let Some(mut next_ok) = self.phase_need(i, &cstack[d], need, hi as f64) else {
                return;
            };
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
                    let row = &self.y[i * self.n..(i + 1) * self.n];
                    for ((yb, s0), y) in self.yb_buf.iter_mut().zip(&cstack[d]).zip(row) {
                        *yb = s0 + y * cf;
                    }
                }
                if let Some(r) = self.exact_from_admittance() {
                    let key = self.key_of(set, counts);
                    if self.inc.as_ref().is_none_or(|inc| better(&key, &inc.0)) {
                        self.inc = Some((key, self.bank_buf.clone(), r));
                    }
                    break;
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
        let row_start = i * self.n;
        'outer: for c in lo as u32..=hi {
            let key0 = p.key0 + c as f64 * w0 + rest_key;
            let inc0 = self.inc_primary();
            if key0 > inc0 + tol(key0, inc0) {
                break;
            }
            let cf = c as f64;
            let mut ok = true;
            let (head, tail) = stack.split_at_mut(d + 1);
            let (cur, next) = (&head[d], &mut tail[0]);
            {
                let (ch, ct) = cstack.split_at_mut(d + 1);
                let yrow = &self.y[row_start..row_start + self.n];
                for ((nx, cu), y) in ct[0].iter_mut().zip(&ch[d]).zip(yrow) {
                    *nx = cu + y * cf;
                }
            }
            for k in 0..self.n {
                let v = cur[k] + cf * self.a[row_start + k];
                next[k] = v;
                if v + rest_ub[d][k] < self.q[k] * (1.0 - 1e-9) {
                    ok = false;
                }
            }
            if !ok {
                continue 'outer;
            }
            counts[d] = c;
            let np = Partial {
                key0: p.key0 + cf * w0,
                cap: p.cap + cf * c_limit,
                cnt: p.cnt + cf,
                area: p.area + cf * area_i,
                cmin: p.cmin + cf * c_worst,
            };
            self.rec(set, d + 1, np, stack, cstack, counts, rest_ub);
        }
    }
}

#[derive(Clone, Copy)]
struct Partial {
    key0: f64,
    cap: f64,
    cnt: f64,
    area: f64,
    cmin: f64,
}

/// Drop parts that another candidate dominates.
fn prune_dominated(problem: &Problem, cands: &[usize]) -> (Vec<usize>, usize) {
    let models: Vec<PartModel> = cands.iter().map(|&i| problem.part_model(i)).collect();
    let req = &problem.scenario.selection.require;
    let mut keep = vec![true; cands.len()];
    let mut order: Vec<usize> = (0..cands.len()).collect();
    // Group electrically identical parts.
    order.sort_by(|&x, &y| {
        let (a, b) = (&models[x], &models[y]);
        (a.c_worst, a.c_typical, a.esr, a.esl)
            .partial_cmp(&(b.c_worst, b.c_typical, b.esr, b.esl))
            .unwrap()
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

fn binomial_sum(n: usize, k: usize) -> usize {
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
fn each_line_set(required: &[usize], pool: &[usize], free: usize, f: &mut dyn FnMut(&[usize])) {
    let others: Vec<usize> = pool
        .iter()
        .copied()
        .filter(|i| !required.contains(i))
        .collect();
    let mut cur: Vec<usize> = required.to_vec();
    if !required.is_empty() {
        f(&cur);
    }
    fn go(
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
fn line_sets(required: &[usize], pool: &[usize], free: usize) -> Vec<Vec<usize>> {
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
    fn go(
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

fn bar(show: bool, len: usize, msg: &str) -> ProgressBar {
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

/// Find the best bank for the scenario's target.
pub fn design(problem: &Problem, settings: &Settings) -> Outcome {
    design_for(problem, problem.scenario.target.ripple_pp.0, settings)
}

/// Find the best bank for a given ripple target.
pub fn design_for(problem: &Problem, target: f64, settings: &Settings) -> Outcome {
    let t0 = Instant::now();
    let (cands, dominated) = prune_dominated(problem, &problem.eligible);
    let mut stats = Stats {
        candidates: cands.len(),
        dominated,
        ..Default::default()
    };
    let mut found: Option<Found> = None;
    let mut exhaustive = false;
    let mut stopped = false;
    if !cands.is_empty() || problem.scenario.converter.internal_capacitance.is_some() {
        let mut s = Search::new(problem, &cands, target);
        s.budget = settings.max_evaluations;
        // The converter alone (no added parts), when it has capacitance of its own.
        if s.required.is_empty()
            && problem.scenario.converter.internal_capacitance.is_some()
            && s.lim.min_cap <= 0.0
        {
            s.bank_buf.clear();
            if let Some(r) = s.exact() {
                s.inc = Some(([0.0; 3], Vec::new(), r));
            }
        }
        let free = s.lim.max_lines.saturating_sub(s.required.len());
        let all: Vec<usize> = (0..s.parts.len()).collect();
        let total =
            binomial_sum(all.len() - s.required.len(), free) + usize::from(!s.required.is_empty());
        stats.line_sets_total = total;
        if s.required.len() <= s.lim.max_lines {
            if total <= settings.exhaustive_limit {
                run_all_sets(&mut s, &all, free, settings, "design");
                exhaustive = true;
            } else {
                let mut pool = pool(&s, settings.pool);
                // Line sets proposed by the mixed-integer relaxation join the pool;
                // its proven optimum over every candidate is a global lower bound.
                let over = if all.len() <= settings.milp_parts {
                    all.clone()
                } else {
                    self::pool(&s, settings.milp_parts)
                };
                let ks = milp::hard_harmonics(&s, &over, 8);
                let mut cuts: Vec<Vec<usize>> = Vec::new();
                for t in 0..settings.milp_proposals {
                    let Some(prop) = milp::propose(&s, &over, &ks, &cuts, settings.milp_seconds)
                    else {
                        break;
                    };
                    if t == 0 && prop.proven && over.len() == all.len() {
                        stats.lower_bound = Some(prop.bound);
                    }
                    for &i in &prop.set {
                        if !pool.contains(&i) {
                            pool.push(i);
                        }
                    }
                    cuts.push(prop.set);
                }
                run_all_sets(&mut s, &pool, free, settings, "design (pool)");
                neighbourhood(&mut s, settings);
                if let (Some(lb), Some(inc)) = (stats.lower_bound, &s.inc) {
                    exhaustive = inc.0[0] <= lb + tol(lb, inc.0[0]);
                }
            }
        }
        stats.evaluations = s.evals;
        stopped = s.stopped;
        stats.line_sets_solved = s.sets_solved;
        if let Some((key, bank, r)) = s.inc.take() {
            found = Some(Found {
                bank: bank.iter().map(|&(i, n)| (s.catalog_index[i], n)).collect(),
                key,
                ripple_pp: r,
            });
        }
    }
    stats.stopped = stopped;
    stats.exhaustive = exhaustive && !stopped;
    let exhaustive = stats.exhaustive;
    let status = match (&found, exhaustive) {
        (Some(_), true) => Status::Optimal,
        (Some(_), false) => Status::Feasible,
        (None, _) => Status::Infeasible,
    };
    let mut out = Outcome {
        status,
        found,
        best_ripple_pp: None,
        best_ripple_bank: None,
        binding: Vec::new(),
        stats,
    };
    if status == Status::Infeasible && settings.explain {
        let (r, bank) = min_ripple(problem, &cands);
        out.best_ripple_pp = r.is_finite().then_some(r);
        out.best_ripple_bank = bank;
        out.binding = binding(problem, target);
    }
    out.stats.seconds = t0.elapsed().as_secs_f64();
    out
}

fn run_sets(s: &mut Search, sets: Vec<Vec<usize>>, settings: &Settings, msg: &str) {
    let bounded: Vec<(f64, Vec<usize>)> = sets
        .into_iter()
        .filter_map(|set| s.set_bound(&set).map(|b| (b, set)))
        .collect();
    solve_bounded(s, bounded, settings, msg);
}

/// As [`run_sets`] over every line set of the required parts plus up to
/// `free` parts of `pool`; only the sets that pass their bound are stored.
fn run_all_sets(s: &mut Search, pool: &[usize], free: usize, settings: &Settings, msg: &str) {
    let mut bounded: Vec<(f64, Vec<usize>)> = Vec::new();
    let required = s.required.clone();
    let inc0 = s.inc_primary();
    each_line_set(&required, pool, free, &mut |set| {
        if let Some(b) = s.set_bound(set) {
            if b <= inc0 + tol(b, inc0) {
                bounded.push((b, set.to_vec()));
            }
        }
    });
    solve_bounded(s, bounded, settings, msg);
}

fn solve_bounded(
    s: &mut Search,
    mut bounded: Vec<(f64, Vec<usize>)>,
    settings: &Settings,
    msg: &str,
) {
    bounded.sort_by(|x, y| {
        x.0.partial_cmp(&y.0)
            .unwrap()
            .then(x.1.len().cmp(&y.1.len()))
    });
    let pb = bar(settings.progress, bounded.len(), msg);
    for (j, (b, set)) in bounded.iter().enumerate() {
        if s.stopped {
            break;
        }
        let inc0 = s.inc_primary();
        if *b > inc0 + tol(*b, inc0) {
            break;
        }
        s.solve_set(set);
        if j % 64 == 0 {
            pb.set_position(j as u64);
        }
    }
    pb.finish_and_clear();
}

/// The most promising parts for a large catalog: for each of the hardest
/// harmonics, the parts with the most admittance per unit of objective, and
/// the parts that meet the necessary condition alone most cheaply.
fn pool(s: &Search, size: usize) -> Vec<usize> {
    let p = s.parts.len();
    let all: Vec<usize> = (0..p).collect();
    let mut score = vec![0.0_f64; p];
    let ks = milp::hard_harmonics(s, &all, 12);
    let mut idx: Vec<usize> = all.clone();
    for &k in &ks {
        let eff = |x: usize| s.a[x * s.n + k] / s.w[0][x].max(1e-12);
        idx.sort_by(|&x, &y| eff(y).partial_cmp(&eff(x)).unwrap());
        for (rank, &i) in idx.iter().take(size).enumerate() {
            score[i] += 1.0 / (1.0 + rank as f64);
        }
    }
    // Cost for one part alone to meet the condition at every harmonic.
    let alone = |i: usize| -> f64 {
        let mut need: f64 = s.lb[i] as f64;
        for k in 0..s.n {
            if s.q[k] > 0.0 {
                need = need.max((s.q[k] / s.a[i * s.n + k].max(1e-300)).ceil());
            }
        }
        if need > s.ub[i] as f64 {
            f64::INFINITY
        } else {
            need * s.w[0][i]
        }
    };
    let costs: Vec<f64> = all.iter().map(|&i| alone(i)).collect();
    idx.sort_by(|&x, &y| costs[x].partial_cmp(&costs[y]).unwrap());
    for (rank, &i) in idx.iter().take(size).enumerate() {
        if costs[i].is_finite() {
            score[i] += 2.0 / (1.0 + rank as f64);
        }
    }
    let mut order: Vec<usize> = all;
    order.sort_by(|&x, &y| score[y].partial_cmp(&score[x]).unwrap());
    let mut out: Vec<usize> = order.into_iter().take(size).collect();
    for &r in &s.required {
        if !out.contains(&r) {
            out.push(r);
        }
    }
    out
}

/// Swap, add or remove one part of the incumbent's line set while that improves.
fn neighbourhood(s: &mut Search, settings: &Settings) {
    loop {
        let Some((key, bank, _)) = s.inc.clone() else {
            return;
        };
        let cur: Vec<usize> = bank.iter().map(|b| b.0).collect();
        let mut sets: Vec<Vec<usize>> = Vec::new();
        let p = s.parts.len();
        for (j, &i) in cur.iter().enumerate() {
            if s.required.contains(&i) {
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
        match &s.inc {
            Some((k2, _, _)) if better(k2, &key) => continue,
            _ => return,
        }
    }
}

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
            .max_by(|&x, &y| s.q[x].partial_cmp(&s.q[y]).unwrap())
            .unwrap_or(0);
        order.sort_by(|&x, &y| {
            (s.ub[y] as f64 * s.a[y * s.n + k])
                .partial_cmp(&(s.ub[x] as f64 * s.a[x * s.n + k]))
                .unwrap()
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
    floored.sort_by(|x, y| x.0.partial_cmp(&y.0).unwrap());
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
    (best, best_bank)
}

/// Line sets the lowest-ripple search descends from (in floor order).
const MIN_RIPPLE_SETS: usize = 400;

/// Greedy: from the lower bounds, add the part that lowers the ripple most
/// while the limits allow; stop when nothing helps.
fn descend(s: &mut Search, set: &[usize]) -> Option<(f64, Vec<(usize, u32)>)> {
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

/// Relax each limit in turn; those whose removal lets the target be met bind.
pub fn binding(problem: &Problem, target: f64) -> Vec<String> {
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
    if base.converter.min_capacitance.0 > 0.0 {
        tries.push((
            "min_capacitance",
            Box::new(|s: &mut Scenario| s.converter.min_capacitance.0 = 0.0),
        ));
    }
    let mut out = Vec::new();
    let quick = Settings {
        progress: false,
        exhaustive_limit: 20_000,
        pool: 24,
        explain: false,
        milp_proposals: 1,
        milp_seconds: 1.0,
        max_evaluations: 150_000,
        ..Settings::default()
    };
    for (name, relax) in tries {
        let mut sc = base.clone();
        relax(&mut sc);
        let Ok(p) = Problem::new(sc, problem.catalog.clone()) else {
            continue;
        };
        if design_for(&p, target, &quick).found.is_some() {
            out.push(name.to_string());
        }
    }
    // Ripple-current ratings: ignore them.
    let mut p = Problem {
        scenario: base.clone(),
        catalog: problem.catalog.clone(),
        eligible: problem.eligible.clone(),
        excluded: vec![],
        ops: problem.ops.clone(),
        warnings: vec![],
    };
    if p.eligible
        .iter()
        .any(|&i| p.catalog.parts[i].ripple_current.is_some())
    {
        for part in p.catalog.parts.iter_mut() {
            part.ripple_current = None;
        }
        if design_for(&p, target, &quick).found.is_some() {
            out.push("ripple_current".into());
        }
    }
    if out.is_empty() {
        // No single limit stops it: the parts themselves cannot reach the target.
        out.push("catalog".into());
    }
    out
}

/// The mixed-integer relaxation: integer counts n_i ≤ ub_i·z_i, binary
/// line items z_i, every linear limit, and the necessary condition
/// Σ n_i |Y_ik| ≥ q_k at the most demanding harmonics. Every passing bank
/// satisfies it, so its optimum is a lower bound on the true optimum; its
/// line set is a proposal for the exact search. `cuts` exclude line sets
/// already proposed (no-good cuts on the binaries).
mod milp {
    use super::Search;
    use good_lp::{
        constraint, variable, variables, Expression, Solution, SolutionStatus, SolverModel,
        Variable, WithTimeLimit,
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
        d.sort_by(|x, y| y.0.partial_cmp(&x.0).unwrap());
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
            obj += s.w[0][i] * n[j] + s.line_w[0] * z[j];
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
                s.w[0][i] * sol.value(n[j]).round() + s.line_w[0] * sol.value(z[j]).round()
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
}

/// The cheapest bank the other limits allow, whatever its ripple (the
/// loose end of a trade-off), with that ripple.
pub fn smallest_bank(problem: &Problem) -> Option<Found> {
    let settings = Settings {
        explain: false,
        milp_proposals: 0,
        ..Settings::default()
    };
    let out = design_for(problem, f64::MAX, &settings);
    out.found.map(|mut f| {
        let parts: Vec<usize> = f.bank.iter().map(|b| b.0).collect();
        let mut ev = problem.evaluator(&parts);
        let local: Vec<(usize, u32)> = f.bank.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
        f.ripple_pp = ev.ripple_pp(
            &local,
            crate::bank::Corner::Worst,
            crate::bank::Band::Limited,
        );
        f
    })
}

/// The lowest worst-corner ripple found over the eligible parts (dominated
/// parts dropped first), and that bank.
pub fn lowest_ripple(problem: &Problem) -> (f64, Option<Vec<(usize, u32)>>) {
    let (cands, _) = prune_dominated(problem, &problem.eligible);
    min_ripple(problem, &cands)
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

/// Result of a rework: the fewest changed line items, then the objective.
#[derive(Debug, Clone)]
pub struct Rework {
    pub status: Status,
    pub found: Option<Found>,
    /// Changed line items (removed plus added) of `found`.
    pub changes: usize,
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
    let target = problem.scenario.target.ripple_pp.0;
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
fn combinations(items: &[usize], k: usize) -> Vec<Vec<usize>> {
    let mut out = Vec::new();
    let mut cur = Vec::with_capacity(k);
    fn go(
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
