//! The load-step limit: how far the output moves when the load current
//! steps, before the converter's loop catches up.
//!
//! # Model (common practice)
//!
//! The load at the measured node draws a current that steps by `ΔI`
//! (`load_step`) with a linear ramp whose 10–90 % time is `rise_time`
//! (the ramp runs from 0 to 100 % in `rise_time / 0.8`). The converter
//! answers like a current source with a first-order response at its loop
//! crossover `f_c`: its current is the load current through the low-pass
//! `ω_c / (s + ω_c)`, `ω_c = 2π·f_c` — for an ideal step
//! `i_conv = ΔI·(1 − e^{−ω_c t})`. The capacitors (and, with a post-filter,
//! the filter) carry the difference. The voltage at the load node is
//!
//! `V(s) = I_load(s) · [Z_t(s)·ω_c/(s + ω_c) − Z_open(s)]`
//!
//! with `Z_t` the voltage at the load node per ampere of converter current
//! and `Z_open` the impedance seen from the load node with the converter
//! open ([`crate::network::Network::step_impedances_with`],
//! [`crate::network::Ladder::step_impedances`]). The deviation is the peak of
//! `|v(t)|` after the step, the largest over the corner region (each line's
//! capacitance and ESR range; the input voltage and the converter inductance
//! do not enter). For a pure capacitance `C` it is `ΔI / (ω_c·C)`, the
//! settled value; no bank can do better than that with its lowest
//! capacitance, which is the linear necessary condition the optimizer uses.
//!
//! # Method (exact for the network)
//!
//! One edge of the load current (a linear ramp of `ΔI`,
//! `I(s) = ΔI·(1 − e^{−s·ramp})/(ramp·s²)`) is inverted on a shifted
//! contour (the FFT form of the Fourier-series inversion of the Laplace
//! transform; Dubner & Abate, J. ACM 1968, and Crump, J. ACM 1976): the
//! transform is taken at `s_k = σ + j·k·2π/T` and one inverse FFT gives
//! `e^{−σt}·Σ_n v(t + nT)·e^{−σnT}`, so that multiplying by `e^{σt}`
//! leaves `v(t)` plus the later periods' wrap-around, each weighted by
//! `e^{−σT}` ([`WRAP`] = 1e−8, at every time, whatever the response does
//! after the window). Only the first half of the period is used, where
//! `e^{σt}` stays below `1/√WRAP`. The window is the ramp plus
//! [`SETTLE`] of the longest time constant that matters for the peak:
//! `1/ω_c`, each branch loop's `ESR·C` and overdamped decay, and for a
//! ringing loop the shorter of its decay and [`RINGS`] of its periods —
//! the ring's envelope only shrinks once the step is over, so a lightly
//! damped filter does not need a window as long as its whole decay. As
//! for the ripple, the network's high-frequency asymptote `b0 + s·b1` of
//! the bracket above is taken out and added back in closed form
//! (`b0·i_load + b1·di_load/dt`, exact on both sides of the ramp's
//! corners); the remaining transform decays as `1/|s|³` and is summed on a
//! grid of 32 samples per ramp whose corners fall on samples. The peak
//! between samples is refined by a parabola through the three samples
//! around each local maximum. Every table (contour, load transform, the
//! converter's response, gains, FFT plans, scratch) is built once per part
//! list; evaluating a bank allocates nothing.

use crate::evaluator::{tail_load_and_series, Bank, LineState, PartModel, TailLine, TailRole};
use crate::network::{admittance_s, Network, OMEGA_ASYMPTOTE};
use crate::region::{ascend_lines, golden, named_of_models, vertices_of_models, Named};
use crate::scenario::Scenario;
use num_complex::Complex64;
use rustfft::{Fft, FftPlanner};
use serde::Serialize;
use std::f64::consts::PI;
use std::sync::Arc;

/// Samples of the grid per load ramp (the ramp's corners fall on samples).
pub(crate) const RAMP_SAMPLES: usize = 32;
/// The window is the ramp plus this many of the longest time constant that
/// matters for the peak (e^−16 ≈ 1e−7 of a mode is left at its end).
pub const SETTLE: f64 = 16.0;
/// Largest grid (points per period; the window is half of it).
pub const MAX_POINTS: usize = 1 << 19;
/// 10–90 % of a linear ramp is 0.8 of its length.
pub(crate) const RAMP_PER_RISE: f64 = 1.0 / 0.8;

/// The scenario's `[transient]` in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spec {
    /// The step of load current, A.
    pub load_step: f64,
    /// The largest allowed excursion, V.
    pub max_deviation: f64,
    /// The converter's loop crossover, Hz.
    pub crossover: f64,
    /// 10–90 % time of the step, s.
    pub rise_time: f64,
}

impl Spec {
    /// The scenario's load step, if it states one.
    pub fn of(s: &Scenario) -> Option<Spec> {
        s.transient.as_ref().map(|t| Spec {
            load_step: t.load_step.0,
            max_deviation: t.max_deviation.0,
            crossover: t.loop_crossover.0,
            rise_time: t.rise_time.0,
        })
    }

    /// Length of the linear ramp (0 to 100 %), s.
    pub fn ramp(&self) -> f64 {
        self.rise_time * RAMP_PER_RISE
    }

    /// ω_c = 2π·f_c, rad/s.
    pub(crate) fn omega_c(&self) -> f64 {
        2.0 * PI * self.crossover
    }

    /// The target impedance `max_deviation / load_step`, Ω.
    pub fn z_target(&self) -> f64 {
        self.max_deviation / self.load_step
    }

    /// The settled deviation of a capacitance `c`: `ΔI / (ω_c·C)`, V.
    pub fn settled(&self, c: f64) -> f64 {
        self.load_step / (self.omega_c() * c)
    }

    /// The least total capacitance (at its lowest) any bank meeting the
    /// limit has: `ΔI / (ω_c·max_deviation)`, F.
    pub(crate) fn capacitance_floor(&self) -> f64 {
        self.load_step / (self.omega_c() * self.max_deviation)
    }

    /// The band of the impedance peak, `f_c … 0.35 / rise_time`, Hz.
    pub(crate) fn z_band(&self) -> (f64, f64) {
        (self.crossover, (0.35 / self.rise_time).max(self.crossover))
    }
}

/// Weight with which the response comes back from each later period on
/// the shifted contour: `e^{−σT}` (the wrap-around error is at most this
/// fraction of the response's largest value, at every time).
pub(crate) const WRAP: f64 = 1e-8;

/// One grid of the shifted contour: `points` samples of `dt` over the
/// period `T = points·dt`, of which the first half is the window used.
#[derive(Clone)]
struct Grid {
    points: usize,
    /// `s_k = σ + j·k·2π/T` of k = 0 … points/2 − 1.
    s: Vec<Complex64>,
    /// The load current's transform `I(s_k)` (the k = 0 term halved).
    drive: Vec<Complex64>,
    /// The converter's response ω_c / (s_k + ω_c).
    conv: Vec<Complex64>,
    /// `(2/T)·e^{σ·t_m}` of the window's samples m = 0 … points/2.
    gain: Vec<f64>,
    fft: Arc<dyn Fft<f64>>,
}

impl Grid {
    fn half(&self) -> usize {
        self.points / 2
    }
}

/// `(1 − e^{−x}) / x`, accurate for small |x|.
fn ramp_factor(x: Complex64) -> Complex64 {
    if x.norm() < 1e-2 {
        // Taylor series; the next term is x⁴/120 < 1e−10.
        Complex64::new(1.0, 0.0) - x / 2.0 + x * x / 6.0 - x * x * x / 24.0
    } else {
        (Complex64::new(1.0, 0.0) - (-x).exp()) / x
    }
}

/// The grids, the scratch and the last response of the load-step model.
struct Core {
    spec: Spec,
    dt: f64,
    grids: Vec<Grid>,
    planner: FftPlanner<f64>,
    buf: Vec<Complex64>,
    scratch: Vec<Complex64>,
    /// Grid of the last fill.
    last: usize,
    /// High-frequency asymptote of the last fill.
    asym: (f64, f64),
}

impl Clone for Core {
    /// A copy with its own scratch and a planner of its own (a planner
    /// cannot be copied; the grids' transforms are shared).
    fn clone(&self) -> Core {
        Core {
            spec: self.spec,
            dt: self.dt,
            grids: self.grids.clone(),
            planner: FftPlanner::new(),
            buf: self.buf.clone(),
            scratch: self.scratch.clone(),
            last: self.last,
            asym: self.asym,
        }
    }
}

impl Core {
    fn new(spec: Spec, tau_max: f64) -> Core {
        let ramp = spec.ramp();
        let dt = ramp / RAMP_SAMPLES as f64;
        let mut core = Core {
            spec,
            dt,
            grids: Vec::new(),
            planner: FftPlanner::new(),
            buf: Vec::new(),
            scratch: Vec::new(),
            last: 0,
            asym: (0.0, 0.0),
        };
        let first = core.points_for(1.0 / spec.omega_c());
        core.push_grid(first);
        core.grid_for(tau_max);
        core
    }

    /// Grid points whose window covers time constant `tau`.
    fn points_for(&self, tau: f64) -> usize {
        let half = ((self.spec.ramp() + SETTLE * tau) / self.dt).ceil();
        let half = if half.is_finite() {
            half.min(MAX_POINTS as f64) as usize
        } else {
            MAX_POINTS
        };
        (2 * half).max(1024).next_power_of_two().min(MAX_POINTS)
    }

    /// Build the grid of `n` points (its contour, drive, response and plan).
    fn push_grid(&mut self, n: usize) {
        let spec = self.spec;
        let ramp = spec.ramp();
        let period = n as f64 * self.dt;
        let sigma = (1.0 / WRAP).ln() / period;
        let w0 = 2.0 * PI / period;
        let s: Vec<Complex64> = (0..n / 2)
            .map(|k| Complex64::new(sigma, k as f64 * w0))
            .collect();
        // A ramp of ΔI over `ramp`: I(s) = ΔI·(1 − e^{−s·ramp}) / (ramp·s²).
        let drive = s
            .iter()
            .enumerate()
            .map(|(k, &sk)| {
                let d = spec.load_step * ramp_factor(sk * ramp) / sk;
                if k == 0 {
                    d / 2.0
                } else {
                    d
                }
            })
            .collect();
        let wc = spec.omega_c();
        let conv = s
            .iter()
            .map(|&sk| Complex64::new(wc, 0.0) / (sk + wc))
            .collect();
        let gain = (0..=n / 2)
            .map(|m| 2.0 / period * (sigma * m as f64 * self.dt).exp())
            .collect();
        let fft = self.planner.plan_fft_inverse(n);
        let scratch = fft.get_inplace_scratch_len();
        if self.scratch.len() < scratch {
            self.scratch.resize(scratch, Complex64::default());
        }
        if self.buf.len() < n {
            self.buf.resize(n, Complex64::default());
        }
        self.grids.push(Grid {
            points: n,
            s,
            drive,
            conv,
            gain,
            fft,
        });
    }

    /// The smallest grid whose window covers time constant `tau` (grids
    /// double from the first; past [`MAX_POINTS`] the largest).
    fn grid_for(&mut self, tau: f64) -> usize {
        let ramp = self.spec.ramp();
        let tau = tau.max(1.0 / self.spec.omega_c());
        if let Some(g) = self
            .grids
            .iter()
            .position(|g| g.half() as f64 * self.dt >= ramp + SETTLE * tau)
        {
            return g;
        }
        let need = self.points_for(tau);
        while self.grids.last().map_or(0, |g| g.points) < need {
            let n = self.grids.last().map_or(need, |g| g.points * 2);
            self.push_grid(n);
        }
        self.grids.len() - 1
    }

    /// Fill the remaining transform of the response on grid `g` for the
    /// network's impedances `z(s) = (Z_t, Z_open)` and take its inverse
    /// FFT. False when the response is not finite.
    fn fill(&mut self, g: usize, mut z: impl FnMut(Complex64) -> (Complex64, Complex64)) -> bool {
        let wc = self.spec.omega_c();
        let bracket = |zt: Complex64, zo: Complex64, conv: Complex64| zt * conv - zo;
        let big = Complex64::new(0.0, OMEGA_ASYMPTOTE);
        let (zt, zo) = z(big);
        let h = bracket(zt, zo, Complex64::new(wc, 0.0) / (big + wc));
        if !h.is_finite() {
            return false;
        }
        let b1 = h.im / OMEGA_ASYMPTOTE;
        // Below a femtohenry the slope is a capacitor's tail, not an inductance.
        let b1 = if b1.abs() < 1e-15 { 0.0 } else { b1 };
        let b0 = h.re;
        self.asym = (b0, b1);
        self.last = g;
        let grid = &self.grids[g];
        let n = grid.points;
        let buf = &mut self.buf[..n];
        let mut finite = true;
        for (k, ((&sk, &d), &c)) in grid.s.iter().zip(&grid.drive).zip(&grid.conv).enumerate() {
            let (zt, zo) = z(sk);
            let v = d * (bracket(zt, zo, c) - (sk * b1 + b0));
            finite &= v.is_finite();
            buf[k] = v;
        }
        for x in buf[grid.s.len()..].iter_mut() {
            *x = Complex64::default();
        }
        if !finite {
            return false;
        }
        grid.fft.process_with_scratch(buf, &mut self.scratch);
        true
    }

    /// The load current and its slope (left or right of a corner) at sample `m`.
    fn load_at(&self, m: usize, right: bool) -> (f64, f64) {
        let r = RAMP_SAMPLES;
        let di = self.spec.load_step;
        let slope = di / self.spec.ramp();
        if m < r {
            (
                di * m as f64 / r as f64,
                if m > 0 || right { slope } else { 0.0 },
            )
        } else if m == r {
            (di, if right { 0.0 } else { slope })
        } else {
            (di, 0.0)
        }
    }

    /// The step response at sample `m` of the last fill (left or right of
    /// a corner of the load current), V from the level before the step.
    fn v(&self, m: usize, right: bool) -> f64 {
        let (i, di) = self.load_at(m, right);
        let gain = self.grids[self.last].gain[m];
        gain * self.buf[m].re + self.asym.0 * i + self.asym.1 * di
    }

    /// Peak |v| over the window of the last fill.
    fn peak(&self) -> f64 {
        let half = self.grids[self.last].half();
        let mut best: f64 = 0.0;
        // Two smooth pieces: the ramp [0, R] and the flat top [R, half].
        for (a, b) in [(0usize, RAMP_SAMPLES), (RAMP_SAMPLES, half)] {
            let at = |m: usize| -> f64 { self.v(m, m == a) };
            let mut prev = at(a);
            best = best.max(prev.abs());
            let mut cur = at(a + 1);
            for m in a + 1..b {
                let next = at(m + 1);
                let s = cur.signum();
                let (u0, u1, u2) = (s * prev, s * cur, s * next);
                if u1 >= u0 && u1 >= u2 {
                    let d = u0 - 2.0 * u1 + u2;
                    let p = if d < 0.0 {
                        u1 - (u0 - u2) * (u0 - u2) / (8.0 * d)
                    } else {
                        u1
                    };
                    best = best.max(p);
                }
                best = best.max(cur.abs());
                prev = cur;
                cur = next;
            }
            best = best.max(cur.abs());
        }
        if best.is_finite() {
            best
        } else {
            f64::INFINITY
        }
    }

    /// Samples `(t, v)` of the last fill's step response from a tenth of
    /// the shown span before the step to where it has settled.
    fn samples(&self) -> Vec<(f64, f64)> {
        let half = self.grids[self.last].half();
        let ys: Vec<f64> = (0..=half)
            .map(|m| self.v(m, m == RAMP_SAMPLES || m == 0))
            .collect();
        let peak = ys.iter().fold(0.0_f64, |a, y| a.max(y.abs()));
        let fin = ys[half];
        let settled = ys
            .iter()
            .rposition(|y| (y - fin).abs() > 0.002 * peak.max(1e-300))
            .unwrap_or(RAMP_SAMPLES);
        let end = ((settled as f64 * 1.5) as usize).clamp(4 * RAMP_SAMPLES, half);
        let step = (end / 1500).max(1);
        let dt = self.dt;
        let pre = (end / 10).max(1);
        let mut out = vec![(-(pre as f64) * dt, 0.0), (0.0, 0.0)];
        let mut m = 0;
        while m <= end {
            out.push((m as f64 * dt, ys[m]));
            if m < RAMP_SAMPLES + 2 {
                m += 1;
            } else {
                m += step;
            }
        }
        out
    }
}

/// The load-step model over one part list: every table built once;
/// evaluating a bank allocates nothing.
#[derive(Clone)]
pub struct StepModel {
    /// The scenario's load step.
    pub spec: Spec,
    network: Network,
    /// ESL (with mounting) of each local part, H.
    esl: Vec<f64>,
    core: Core,
    /// A post-filter behind the bank (empty without one): the deviation
    /// is then the load node's, and a full set of line states holds the
    /// bank's lines followed by these.
    tail: Vec<TailLine>,
    /// Deviations computed (for reports of the search's work).
    pub evaluations: usize,
    /// Frequencies evaluated for them (each deviation costs its grid's
    /// half): the search charges this work to its evaluation budget.
    pub work: usize,
    /// How far the window reaches ([`Horizon::Peak`]; the tests compare it
    /// with the whole decay).
    horizon: Horizon,
    /// The filter's terms on the last grid for the last filter states.
    tail_cache: TailCache,
}

/// A post-filter's terms at every frequency of one step grid, for one
/// state of its lines: the search tests many banks behind the same filter
/// state (its `low` corner and its cuts), and the filter's terms are most of
/// each frequency's arithmetic. Holds exactly what [`step_z`] computes.
#[derive(Debug, Clone, Default)]
struct TailCache {
    /// The grid, `usize::MAX` when empty.
    grid: usize,
    /// The filter's line states.
    states: Vec<LineState>,
    /// The complex frequencies in the order [`Core::fill`] asks for them
    /// (the asymptote, then the grid's contour).
    s: Vec<Complex64>,
    /// (load-side admittance, series impedance, internal admittance) there.
    terms: Vec<(Complex64, Complex64, Complex64)>,
}

/// Slowest time constant of one branch (`ESR·C`, `2·L/ESR`), s: an upper
/// bound of every loop it forms with other branches (see [`slowest_loop`]).
fn branch_tau(esr_max: f64, esr_min: f64, l: f64, c: f64) -> f64 {
    let rc = esr_max * c;
    let lr = if esr_min > 0.0 {
        2.0 * l / esr_min
    } else {
        0.0
    };
    rc.max(lr)
}

/// What a loop's time constant is asked for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Horizon {
    /// Until its mode has died away ([`SETTLE`] of these).
    Settle,
    /// Until the peak of the step response is past: a ringing loop's
    /// envelope only shrinks once the step is over, so [`SETTLE`] of these
    /// cover [`RINGS`] of its periods rather than its whole decay.
    Peak,
}

/// Periods of a ringing loop the load-step window covers (common practice,
/// no source: the envelope of a ring shrinks from its first swings on; the
/// converter's own recovery, `SETTLE/ω_c`, is always covered).
pub(crate) const RINGS: f64 = 8.0;

/// The time constant of a series R-L-C loop (`L s² + R s + 1/C = 0`) for
/// `horizon`, s: the slower decay, or for [`Horizon::Peak`] of a ringing
/// loop the shorter of its decay and [`RINGS`] periods over [`SETTLE`].
fn loop_time(r: f64, l: f64, c: f64, horizon: Horizon) -> f64 {
    if l <= 0.0 {
        return r * c;
    }
    let disc = r * r - 4.0 * l / c;
    if disc < 0.0 {
        let decay = if r > 0.0 { 2.0 * l / r } else { f64::INFINITY };
        match horizon {
            Horizon::Settle => decay,
            Horizon::Peak => {
                let period = 2.0 * PI / (-disc).sqrt() * 2.0 * l;
                decay.min(RINGS * period / SETTLE)
            }
        }
    } else {
        c * (r + disc.sqrt()) / 2.0
    }
}

/// Slowest decay of the modes of branches `(R, L, C)` in parallel (charge
/// moving between them): every loop of two branches, and of each branch
/// against all the others in parallel. Exact for two branches, an estimate
/// beyond (hence [`SETTLE`]); a single branch has no loop (0). Allocates
/// nothing.
pub fn slowest_loop<I>(branches: impl Fn() -> I) -> f64
where
    I: Iterator<Item = (f64, f64, f64)>,
{
    slowest_loop_for(branches, Horizon::Settle)
}

/// As [`slowest_loop`] for `horizon`.
pub(crate) fn slowest_loop_for<I>(branches: impl Fn() -> I, horizon: Horizon) -> f64
where
    I: Iterator<Item = (f64, f64, f64)>,
{
    let series = |a: (f64, f64, f64), b: (f64, f64, f64)| {
        loop_time(a.0 + b.0, a.1 + b.1, a.2 * b.2 / (a.2 + b.2), horizon)
    };
    let (mut n, mut g, mut gl, mut ctot) = (0usize, 0.0, 0.0, 0.0);
    let (mut r_zero, mut l_zero) = (0usize, 0usize);
    for (r, l, c) in branches() {
        n += 1;
        ctot += c;
        if r > 0.0 {
            g += 1.0 / r;
        } else {
            r_zero += 1;
        }
        if l > 0.0 {
            gl += 1.0 / l;
        } else {
            l_zero += 1;
        }
    }
    let mut tau: f64 = 0.0;
    for (i, a) in branches().enumerate() {
        for b in branches().skip(i + 1) {
            tau = tau.max(series(a, b));
        }
        if n > 2 {
            // The others in parallel: 1/Σ(1/R), 1/Σ(1/L), ΣC.
            let par = |sum: f64, zeros: usize, own: f64| -> f64 {
                let zeros = zeros - usize::from(own <= 0.0);
                if zeros > 0 {
                    0.0
                } else {
                    let rest = sum - if own > 0.0 { 1.0 / own } else { 0.0 };
                    if rest > 0.0 {
                        1.0 / rest
                    } else {
                        0.0
                    }
                }
            };
            let rest = (par(g, r_zero, a.0), par(gl, l_zero, a.1), ctot - a.2);
            tau = tau.max(series(a, rest));
        }
    }
    tau
}

/// `(Z_t, Z_open)` at the measured node at the complex frequency `s` for `bank` (ESLs `esl` by
/// local part) behind `network`, with the post-filter `tail` (may be
/// empty), every line at `states` (the bank's, then the filter's).
#[inline]
fn step_z(
    network: &Network,
    esl: &[f64],
    tail: &[TailLine],
    bank: &Bank,
    states: &[LineState],
    s: Complex64,
) -> (Complex64, Complex64) {
    let yb = bank_admittance(esl, bank, states, s);
    let yi = network.internal_admittance_s(s);
    if tail.is_empty() {
        return network.step_impedances_with(yb, yi, s);
    }
    let ts = states.get(bank.len()..).unwrap_or(&[]);
    let (y_load, zs) = tail_load_and_series(tail, ts, s);
    network.step_impedances_tail(yb, yi, s, y_load, zs)
}

/// The bank's admittance at the complex frequency `s` with its lines at `states`.
#[inline]
fn bank_admittance(esl: &[f64], bank: &Bank, states: &[LineState], s: Complex64) -> Complex64 {
    let mut yb = Complex64::default();
    for (&(i, n), st) in bank.iter().zip(states) {
        if n > 0 {
            yb += admittance_s(st.esr, esl[i], st.c, s) * n as f64;
        }
    }
    yb
}

/// Slowest decay of a two-node ladder's modes: the loops among the bank
/// node's branches `front`, among the load node's branches `load`, and the
/// filter's loop (each side lumped, through the inductor `l` with its DC
/// resistance `dcr`). Branches are `(R, L, C)`. The lumped resistances are
/// the branches' parallel values, the least damping: a generous estimate
/// (hence [`SETTLE`]). Allocates nothing.
pub fn ladder_tau<I, J>(front: impl Fn() -> I, load: impl Fn() -> J, l: f64, dcr: f64) -> f64
where
    I: Iterator<Item = (f64, f64, f64)>,
    J: Iterator<Item = (f64, f64, f64)>,
{
    ladder_tau_for(front, load, l, dcr, Horizon::Settle)
}

/// As [`ladder_tau`] for `horizon`.
pub(crate) fn ladder_tau_for<I, J>(
    front: impl Fn() -> I,
    load: impl Fn() -> J,
    l: f64,
    dcr: f64,
    horizon: Horizon,
) -> f64
where
    I: Iterator<Item = (f64, f64, f64)>,
    J: Iterator<Item = (f64, f64, f64)>,
{
    let own = slowest_loop_for(&front, horizon).max(slowest_loop_for(&load, horizon));
    let lump = |it: &mut dyn Iterator<Item = (f64, f64, f64)>| {
        let (mut g, mut gl, mut c, mut r0, mut l0) = (0.0, 0.0, 0.0, false, false);
        for (r, l, cc) in it {
            if r > 0.0 {
                g += 1.0 / r
            } else {
                r0 = true
            }
            if l > 0.0 {
                gl += 1.0 / l
            } else {
                l0 = true
            }
            c += cc;
        }
        let r = if r0 || g == 0.0 { 0.0 } else { 1.0 / g };
        let l = if l0 || gl == 0.0 { 0.0 } else { 1.0 / gl };
        (r, l, c)
    };
    let (rb, lb, cb) = lump(&mut front());
    let (rl, ll, cl) = lump(&mut load());
    let filter = if cb > 0.0 && cl > 0.0 {
        loop_time(rb + dcr + rl, lb + l + ll, cb * cl / (cb + cl), horizon)
    } else if rl + dcr > 0.0 {
        // No capacitance on the bank side: the current source drives the
        // inductor; the load node's RL decay.
        (l + ll) / (rl + dcr)
    } else {
        f64::INFINITY
    };
    own.max(filter)
}

impl StepModel {
    /// The model for the scenario's `[transient]` over `parts` (`None`
    /// without one).
    pub fn new(s: &Scenario, parts: &[PartModel]) -> Option<StepModel> {
        let spec = Spec::of(s)?;
        Some(StepModel::with_network(
            spec,
            Network::from_scenario(s),
            parts,
        ))
    }

    /// The model for `spec` and a network over `parts`.
    pub(crate) fn with_network(spec: Spec, network: Network, parts: &[PartModel]) -> StepModel {
        let lc = network.connection_inductance;
        let mut tau = network
            .internal
            .map_or(0.0, |b| branch_tau(b.esr, b.esr, b.esl + lc, b.c));
        for p in parts {
            tau = tau.max(branch_tau(p.esr_max, p.esr_min, p.esl + lc, p.c_high));
        }
        StepModel {
            spec,
            esl: parts.iter().map(|p| p.esl).collect(),
            core: Core::new(spec, tau),
            network,
            tail: Vec::new(),
            evaluations: 0,
            work: 0,
            horizon: Horizon::Peak,
            tail_cache: TailCache {
                grid: usize::MAX,
                ..TailCache::default()
            },
        }
    }

    /// The same model with the post-filter `tail` behind the bank (the
    /// evaluator's lines of [`crate::problem::Problem::tail_lines`]): the
    /// deviation at the load node, with the filter's lines in the region.
    pub(crate) fn with_tail(mut self, tail: Vec<TailLine>) -> StepModel {
        self.tail = tail;
        self
    }

    /// The post-filter's lines (empty without one).
    pub fn tail(&self) -> &[TailLine] {
        &self.tail
    }

    /// The network the step sees.
    pub fn network(&self) -> &Network {
        &self.network
    }

    /// Slowest decay of the network's own modes at `states`: the bank's
    /// loops (with the converter's internal branch behind the connection
    /// inductance) and, behind a filter, the load node's own loops and the
    /// filter's loop ([`ladder_tau`]).
    fn tau_of(&self, bank: &Bank, states: &[LineState]) -> f64 {
        let lc = self.network.connection_inductance;
        let internal = self.network.internal.map(|b| (b.esr, b.esl + lc, b.c));
        let esl = &self.esl;
        let front = || {
            bank.iter()
                .zip(states)
                .filter(|(b, _)| b.1 > 0)
                .map(|(&(i, n), st)| {
                    let nf = n as f64;
                    (st.esr / nf, esl[i] / nf, st.c * nf)
                })
                .chain(internal)
        };
        if self.tail.is_empty() {
            return slowest_loop_for(front, self.horizon);
        }
        let ts = states.get(bank.len()..).unwrap_or(&[]);
        let (mut l, mut g_dcr, mut g_l) = (0.0, 0.0, 0.0);
        for (t, st) in self.tail.iter().zip(ts) {
            if let TailRole::Inductor { .. } = t.role {
                let n = t.count as f64;
                g_l += if st.c > 0.0 { n / st.c } else { f64::INFINITY };
                g_dcr += if st.esr > 0.0 {
                    n / st.esr
                } else {
                    f64::INFINITY
                };
            }
        }
        if g_l > 0.0 {
            l = 1.0 / g_l;
        }
        let dcr = if g_dcr > 0.0 { 1.0 / g_dcr } else { 0.0 };
        let load = || {
            self.tail
                .iter()
                .zip(ts)
                .filter(|(t, _)| t.count > 0)
                .filter_map(|(t, st)| {
                    let n = t.count as f64;
                    match t.role {
                        TailRole::Load => Some((st.esr / n, t.model.esl / n, st.c * n)),
                        TailRole::Damping { resistance } => {
                            Some((resistance + st.esr / n, t.model.esl / n, st.c * n))
                        }
                        TailRole::Inductor { .. } => None,
                    }
                })
        };
        ladder_tau_for(front, load, l, dcr, self.horizon)
    }

    fn has_capacitance(&self, bank: &Bank) -> bool {
        self.network.has_internal()
            || bank.iter().any(|&(_, n)| n > 0)
            || self
                .tail
                .iter()
                .any(|t| t.count > 0 && !matches!(t.role, TailRole::Inductor { .. }))
    }

    /// `(Z_t, Z_open)` at the measured node at `f`, Hz (see the module notes).
    #[inline]
    fn impedances(&self, bank: &Bank, states: &[LineState], f: f64) -> (Complex64, Complex64) {
        let s = Complex64::new(0.0, 2.0 * PI * f);
        step_z(&self.network, &self.esl, &self.tail, bank, states, s)
    }

    fn fill(&mut self, bank: &Bank, states: &[LineState]) -> bool {
        if !self.has_capacitance(bank) {
            return false;
        }
        self.evaluations += 1;
        let tau = self.tau_of(bank, states);
        let g = self.core.grid_for(tau);
        self.work += self.core.grids[g].half();
        let StepModel {
            network,
            esl,
            core,
            tail,
            tail_cache,
            ..
        } = self;
        if tail.is_empty() {
            return core.fill(g, |s| step_z(network, esl, tail, bank, states, s));
        }
        let ts = states.get(bank.len()..).unwrap_or(&[]);
        if tail_cache.grid != g || tail_cache.states != ts {
            tail_cache.grid = g;
            tail_cache.states = ts.to_vec();
            tail_cache.s.clear();
            tail_cache.s.push(Complex64::new(0.0, OMEGA_ASYMPTOTE));
            tail_cache.s.extend_from_slice(&core.grids[g].s);
            tail_cache.terms.clear();
            for &s in &tail_cache.s {
                let (y_load, zs) = tail_load_and_series(tail, ts, s);
                tail_cache
                    .terms
                    .push((y_load, zs, network.internal_admittance_s(s)));
            }
        }
        let cache = &*tail_cache;
        let mut at = 0usize;
        core.fill(g, |s| {
            let j = at;
            at += 1;
            // The cache follows Core::fill's order; any other frequency is
            // computed afresh.
            if cache.s.get(j) != Some(&s) {
                return step_z(network, esl, tail, bank, states, s);
            }
            let (y_load, zs, yi) = cache.terms[j];
            let yb = bank_admittance(esl, bank, states, s);
            network.step_impedances_tail(yb, yi, s, y_load, zs)
        })
    }

    /// The deviation of `bank` (local indices) with each line at its state,
    /// V (infinite without any capacitance).
    pub fn deviation(&mut self, bank: &Bank, states: &[LineState]) -> f64 {
        if self.fill(bank, states) {
            self.core.peak()
        } else {
            f64::INFINITY
        }
    }

    /// The step response `(t, v)` of `bank` at `states` (v from the level
    /// before the step, V; t from the start of the ramp, s), from before
    /// the step to where it settles. Empty without any capacitance.
    pub fn response(&mut self, bank: &Bank, states: &[LineState]) -> Vec<(f64, f64)> {
        if self.fill(bank, states) {
            self.core.samples()
        } else {
            Vec::new()
        }
    }

    /// |Z_open| at `f` for `bank` at `states`, Ω.
    pub(crate) fn open_impedance(&self, bank: &Bank, states: &[LineState], f: f64) -> f64 {
        self.impedances(bank, states, f).1.norm()
    }

    /// The peak of |Z_open| from `f_c` to `0.35 / rise_time` and its
    /// frequency: a sweep of 100 points per decade, refined by a golden
    /// section around the largest.
    pub fn z_peak(&self, bank: &Bank, states: &[LineState]) -> (f64, f64) {
        let (a, b) = self.spec.z_band();
        let decades = (b / a).log10().max(0.0);
        let n = ((decades * 100.0).ceil() as usize).max(2);
        let at = |k: usize| a * (b / a).powf(k as f64 / n as f64);
        let mut best = (0usize, f64::NEG_INFINITY);
        for k in 0..=n {
            let z = self.open_impedance(bank, states, at(k));
            if z > best.1 {
                best = (k, z);
            }
        }
        let lo = at(best.0.saturating_sub(1)).ln();
        let hi = at((best.0 + 1).min(n)).ln();
        let (x, z) = golden(lo, hi, 30, |x| self.open_impedance(bank, states, x.exp()));
        if z > best.1 {
            (z, x.exp())
        } else {
            (best.1, at(best.0))
        }
    }

    /// The models of the bank's lines, then the filter's.
    fn line_models(&self, parts: &[PartModel], bank: &Bank) -> Vec<PartModel> {
        bank.iter()
            .map(|&(i, _)| parts[i].clone())
            .chain(self.tail.iter().map(|t| t.model.clone()))
            .collect()
    }

    /// The largest deviation over the corner region: the named corners,
    /// every vertex of the lines' box (C low/high × ESR low/high; past 256
    /// vertices the named corners' single-line flips), then from the worst
    /// a golden-section search along each line's capacitance and ESR, two
    /// rounds.
    pub fn worst(&mut self, parts: &[PartModel], bank: &Bank) -> StepWorst {
        let models = self.line_models(parts, bank);
        let refs: Vec<&PartModel> = models.iter().collect();
        let mut sets = vertices_of_models(&refs);
        sets.push(named_of_models(&refs, Named::Typical));
        let mut best = StepWorst {
            deviation: f64::NEG_INFINITY,
            states: named_of_models(&refs, Named::Low),
        };
        for st in sets {
            let d = self.deviation(bank, &st);
            if d > best.deviation {
                best = StepWorst {
                    deviation: d,
                    states: st,
                };
            }
        }
        if !best.deviation.is_finite() {
            return best;
        }
        let ranges: Vec<[(f64, f64); 2]> =
            models.iter().map(|p| [p.range(0), p.range(1)]).collect();
        for _round in 0..2 {
            let before = best.deviation;
            ascend_lines(&ranges, &mut best.states, &mut best.deviation, |st| {
                self.deviation(bank, st)
            });
            if best.deviation <= before * (1.0 + 1e-4) {
                break;
            }
        }
        best
    }

    /// The optimizer's test: the `low` corner, then the cut points (per
    /// local part, its state there), then every vertex of the bank's box,
    /// stopping at the first deviation above `limit`. True when all pass.
    pub fn screen(
        &mut self,
        parts: &[PartModel],
        bank: &Bank,
        limit: f64,
        cuts: &[Vec<LineState>],
        scratch: &mut Vec<LineState>,
    ) -> bool {
        let low = |m: &PartModel| LineState {
            c: m.c_worst,
            esr: m.esr_max,
        };
        scratch.clear();
        scratch.extend(bank.iter().map(|&(i, _)| low(&parts[i])));
        scratch.extend(self.tail.iter().map(|t| low(&t.model)));
        if !(self.deviation(bank, scratch) <= limit) {
            return false;
        }
        for cut in cuts {
            scratch.clear();
            scratch.extend(bank.iter().map(|&(i, _)| cut[i]));
            // A cut holds every local part's state, then the filter's.
            let rest = cut.get(parts.len()..).unwrap_or(&[]);
            for (j, t) in self.tail.iter().enumerate() {
                scratch.push(rest.get(j).copied().unwrap_or_else(|| low(&t.model)));
            }
            if !(self.deviation(bank, scratch) <= limit) {
                return false;
            }
        }
        // Behind a filter each deviation is a long grid (the filter rings
        // slowly): the `low` corner and the cuts only; the region is
        // verified on the bank the search would return.
        if !self.tail.is_empty() {
            return true;
        }
        let models = self.line_models(parts, bank);
        let refs: Vec<&PartModel> = models.iter().collect();
        for v in vertices_of_models(&refs) {
            if !(self.deviation(bank, &v) <= limit) {
                return false;
            }
        }
        true
    }
}

/// The worst point of the corner region for the load step.
#[derive(Debug, Clone, PartialEq)]
pub struct StepWorst {
    /// The deviation there, V.
    pub deviation: f64,
    /// Each bank line's capacitance and ESR there.
    pub states: Vec<LineState>,
}

/// Everything the reports say about a bank's load step (JSON `transient`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StepFigures {
    /// The step of load current, A.
    pub load_step: f64,
    /// The limit, V.
    pub max_deviation: f64,
    /// The largest deviation over the corner region, V.
    pub deviation: f64,
    /// The target impedance `max_deviation / load_step`, Ω.
    pub z_target: f64,
    /// The peak |Z| seen from the load node with the converter open, from
    /// `loop_crossover` to `0.35 / rise_time`, at the worst point, Ω.
    pub z_peak: f64,
    /// Its frequency, Hz.
    pub z_peak_frequency: f64,
    /// The deviation keeps the limit.
    pub ok: bool,
    /// The loop crossover the model used, Hz.
    pub loop_crossover: f64,
    /// The 10–90 % rise time of the step, s.
    pub rise_time: f64,
    /// The settled deviation `ΔI/(2π·f_c·C)` of the bank's lowest total
    /// capacitance (the converter's own included), V.
    pub settled: f64,
    /// Where the worst deviation occurs: each line's capacitance and ESR.
    #[serde(skip)]
    pub states: Vec<LineState>,
    /// The step response there, `(t, v)` (s, V from the level before).
    #[serde(skip)]
    pub response: Vec<(f64, f64)>,
}

/// Relative rounding the load-step check allows (the optimizer's region
/// verification and the assessment agree on it).
pub(crate) const ROUNDING: f64 = 1e-9;

/// The load step's deviation at a post-filter's load node with the
/// bank's node held still (an ideal, lossless, unbounded capacitance
/// there), every filter line at its `low` corner, V. A screen of filters
/// for the filtered design's search, not a proof: a real bank behind the
/// filter is usually worse, rarely a little better (see the search).
pub(crate) fn held_node_deviation(spec: Spec, tail: &[TailLine]) -> f64 {
    let ideal = PartModel {
        index: 0,
        c_worst: 1.0,
        c_typical: 1.0,
        c_high: 1.0,
        esr_min: 0.0,
        esr_max: 0.0,
        c_nominal: 1.0,
        c_limit: 1.0,
        esr: 0.0,
        esl: 0.0,
        cost: 0.0,
        area: 0.0,
        rating: None,
    };
    let mut m =
        StepModel::with_network(spec, Network::new(None, 0.0), &[ideal]).with_tail(tail.to_vec());
    let mut states = vec![LineState { c: 1.0, esr: 0.0 }];
    states.extend(tail.iter().map(|t| LineState {
        c: t.model.c_worst,
        esr: t.model.esr_max,
    }));
    m.deviation(&[(0, 1)], &states)
}

/// The load-step figures of `bank` (local indices over `parts`) with the
/// post-filter `tail` behind it (empty without one; then at the bank's
/// node, else at the load node), when the scenario states a load step.
pub fn figures(
    s: &Scenario,
    parts: &[PartModel],
    bank: &Bank,
    tail: &[TailLine],
) -> Option<StepFigures> {
    let mut m = StepModel::new(s, parts)?.with_tail(tail.to_vec());
    let w = m.worst(parts, bank);
    let (z_peak, z_f) = m.z_peak(bank, &w.states);
    let response = m.response(bank, &w.states);
    let sp = m.spec;
    let c_low: f64 = bank
        .iter()
        .map(|&(i, n)| n as f64 * parts[i].c_worst)
        .sum::<f64>()
        + m.network.internal.map_or(0.0, |b| b.c)
        + tail
            .iter()
            .filter(|t| !matches!(t.role, TailRole::Inductor { .. }))
            .map(|t| t.count as f64 * t.model.c_worst)
            .sum::<f64>();
    Some(StepFigures {
        load_step: sp.load_step,
        max_deviation: sp.max_deviation,
        ok: w.deviation <= sp.max_deviation * (1.0 + ROUNDING),
        deviation: w.deviation,
        z_target: sp.z_target(),
        z_peak,
        z_peak_frequency: z_f,
        loop_crossover: sp.crossover,
        rise_time: sp.rise_time,
        settled: if c_low > 0.0 {
            sp.settled(c_low)
        } else {
            f64::INFINITY
        },
        states: w.states,
        response,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::network::Branch;

    fn spec(rise: f64) -> Spec {
        Spec {
            load_step: 5.0,
            max_deviation: 0.05,
            crossover: 50e3,
            rise_time: rise,
        }
    }

    fn part(c: f64, esr: f64, esl: f64) -> PartModel {
        PartModel {
            index: 0,
            c_worst: c,
            c_typical: c,
            c_high: c,
            esr_min: esr,
            esr_max: esr,
            c_nominal: c,
            c_limit: c,
            esr,
            esl,
            cost: 1.0,
            area: 1.0,
            rating: None,
        }
    }

    fn one(c: f64, esr: f64, esl: f64, sp: Spec) -> f64 {
        let parts = [part(c, esr, esl)];
        let mut m = StepModel::with_network(sp, Network::new(None, 0.0), &parts);
        m.deviation(&[(0, 1)], &[LineState { c, esr }])
    }

    /// A lightly damped post-filter: the window that covers [`RINGS`]
    /// periods of the ring gives the same deviation as the one that
    /// covers its whole decay (the periodic reference of the same
    /// transform, wrap-around below 1e−7), and both grids differ in size.
    #[test]
    fn the_peak_window_matches_the_whole_decay_behind_a_ringing_filter() {
        let sp = Spec {
            load_step: 0.5,
            max_deviation: 0.02,
            crossover: 20e3,
            rise_time: 1e-6,
        };
        let inductor = |l: f64, dcr: f64| TailLine {
            model: part(l, dcr, 0.0),
            count: 1,
            role: TailRole::Inductor { cp: 2e-12 },
        };
        let cap = |c: f64, esr: f64, esl: f64, n: u32, role: TailRole| TailLine {
            model: part(c, esr, esl),
            count: n,
            role,
        };
        for (l, dcr, r_damp) in [
            (1e-6, 5e-3, 0.5),
            (2.2e-6, 10e-3, 2.0),
            (0.47e-6, 2e-3, 0.2),
        ] {
            let tail = vec![
                inductor(l, dcr),
                cap(10e-6, 3e-3, 0.4e-9, 4, TailRole::Load),
                cap(
                    47e-6,
                    30e-3,
                    1e-9,
                    1,
                    TailRole::Damping { resistance: r_damp },
                ),
            ];
            let parts = [part(22e-6, 3e-3, 0.5e-9), part(100e-6, 25e-3, 1.5e-9)];
            let bank = [(0usize, 3u32), (1, 1)];
            let states: Vec<LineState> = parts
                .iter()
                .map(|p| LineState {
                    c: p.c_worst,
                    esr: p.esr_max,
                })
                .chain(tail.iter().map(|t| LineState {
                    c: t.model.c_worst,
                    esr: t.model.esr_max,
                }))
                .collect();
            let mk = || {
                StepModel::with_network(sp, Network::new(None, 1e-9), &parts)
                    .with_tail(tail.clone())
            };
            let mut fast = mk();
            let d_fast = fast.deviation(&bank, &states);
            let mut slow = mk();
            slow.horizon = Horizon::Settle;
            let d_slow = slow.deviation(&bank, &states);
            let (n_fast, n_slow) = (fast.work, slow.work);
            eprintln!("L {l:e}: peak window {d_fast:.6e} V ({n_fast} points), whole decay {d_slow:.6e} V ({n_slow} points)");
            assert!(n_slow > n_fast, "the whole decay is the longer window");
            assert!(
                (d_fast - d_slow).abs() <= 1e-5 * d_slow,
                "{d_fast} vs {d_slow}"
            );
        }
    }

    #[test]
    fn pure_capacitance_is_the_closed_form() {
        // Closed form of the model: I_load(s) = ΔI/s (ideal step), the
        // converter delivers ΔI·ω_c/(s+ω_c), the capacitor carries the
        // rest, so V(s) = −ΔI/s · (1/(sC)) · s/(s+ω_c) = −ΔI/(C·s·(s+ω_c))
        // and v(t) = −ΔI/(ω_c·C) · (1 − e^{−ω_c t}) (inverse Laplace
        // transform, any circuits text, e.g. Hayt & Kemmerly, Engineering
        // Circuit Analysis, the Laplace transform). It is monotone, so the
        // peak is the settled value ΔI/(2π f_c C). A ramped step only delays
        // it (the final-value theorem gives the same limit), so the closed
        // form holds for every rise time.
        for (c, rise) in [(100e-6, 1e-6), (1e-3, 0.2e-6), (22e-6, 5e-6)] {
            let sp = spec(rise);
            let d = one(c, 0.0, 0.0, sp);
            let want = sp.load_step / (2.0 * PI * sp.crossover * c);
            assert!(
                (d - want).abs() <= 0.005 * want,
                "C = {c}: {d} vs {want} ({:+.4} %)",
                (d / want - 1.0) * 100.0
            );
            eprintln!("pure C {c:e}: error {:+.5} %", (d / want - 1.0) * 100.0);
        }
    }

    #[test]
    fn resistor_and_capacitor_peak_is_the_closed_form() {
        // Series R-C under the model (closed form by the Laplace transform,
        // Hayt & Kemmerly, Engineering Circuit Analysis): with a linear
        // ramp of length r, the converter's low-pass of it leaves the
        // capacitor branch i(t) = ΔI/(r·ω_c)·(1 − e^{−ω_c t}) during the
        // ramp, so at the ramp's end v = R·i(r) + (1/C)·∫_0^r i dt with
        // ∫_0^r i = ΔI/(r·ω_c)·(r − (1 − e^{−ω_c r})/ω_c). Afterwards the
        // R term decays (as e^{−ω_c t}) and the C term rises to ΔI/(ω_c C):
        // for the two cases below the peak is the larger of the two.
        let sp = spec(100e-9);
        let c = 470e-6;
        let (w, r) = (sp.omega_c(), sp.ramp());
        for esr in [1e-3, 20e-3] {
            let d = one(c, esr, 0.0, sp);
            let i_end = sp.load_step / (r * w) * (1.0 - (-w * r).exp());
            let q_end = sp.load_step / (r * w) * (r - (1.0 - (-w * r).exp()) / w);
            let want = (esr * i_end + q_end / c).max(sp.settled(c));
            assert!((d - want).abs() <= 0.002 * want, "ESR {esr}: {d} vs {want}");
        }
    }

    #[test]
    fn esl_adds_its_ramp_voltage_to_the_esr_step() {
        // The capacitor branch carries i(t) = ΔI/(r·ω_c)·(1 − e^{−ω_c t})
        // during a ramp of length r (the load ramp less the converter's
        // low-pass of it). An ESL L adds L·di/dt = L·ΔI/r·e^{−ω_c t} on top of
        // R·i and the capacitor's charge (Kirchhoff's voltage law); with a
        // large capacitance the peak is at the ramp's end, where the ESL
        // term drops.
        let sp = Spec {
            crossover: 2e3,
            ..spec(1e-6)
        };
        let (c, r, l) = (0.05, 2e-3, 2e-9);
        let d = one(c, r, l, sp);
        let (w, ramp, di) = (sp.omega_c(), sp.ramp(), sp.load_step);
        let e = (-w * ramp).exp();
        let i_end = di / (ramp * w) * (1.0 - e);
        let q_end = di / (ramp * w) * (ramp - (1.0 - e) / w);
        let want = r * i_end + l * di / ramp * e + q_end / c;
        assert!((d - want).abs() <= 0.002 * want, "{d} vs {want}");
    }

    #[test]
    fn internal_capacitance_counts_and_the_settled_value_is_reached() {
        // With the converter's own capacitance and a connection inductance
        // the settled value is ΔI/(ω_c·C_total) (at DC every capacitor is in
        // parallel; final-value theorem).
        let sp = spec(1e-6);
        let parts = [part(100e-6, 2e-3, 0.5e-9)];
        let net = Network::new(
            Some(Branch {
                esr: 5e-3,
                esl: 1e-9,
                c: 200e-6,
            }),
            1e-9,
        );
        let mut m = StepModel::with_network(sp, net, &parts);
        let st = [LineState {
            c: 100e-6,
            esr: 2e-3,
        }];
        let r = m.response(&[(0, 2)], &st);
        let last = r.last().unwrap().1;
        let want = -sp.settled(400e-6);
        assert!(
            (last - want).abs() <= 0.003 * want.abs(),
            "{last} vs {want}"
        );
        let d = m.deviation(&[(0, 2)], &st);
        assert!(d >= want.abs() * 0.999);
    }

    #[test]
    fn evaluating_allocates_no_new_grid() {
        // The grids are built once; a bank of a part in the list uses one of them.
        let sp = spec(1e-6);
        let parts = [part(100e-6, 2e-3, 0.5e-9), part(10e-6, 5e-3, 0.3e-9)];
        let mut m = StepModel::with_network(sp, Network::new(None, 0.0), &parts);
        let grids = m.core.grids.len();
        let st = [
            LineState {
                c: 100e-6,
                esr: 2e-3,
            },
            LineState {
                c: 10e-6,
                esr: 5e-3,
            },
        ];
        let a = m.deviation(&[(0, 3), (1, 4)], &st);
        assert!(a.is_finite() && a > 0.0);
        assert_eq!(m.core.grids.len(), grids);
    }
}
