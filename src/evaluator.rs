//! The evaluator: bank impedance at every harmonic, the output ripple in
//! the time domain, and the ripple current of each part. The circuit around
//! the bank (internal capacitance, connection inductance) is
//! [`crate::network`]'s.
//!
//! Everything that depends only on the scenario and the parts is tabulated
//! once; evaluating a bank then costs one multiply-add per part and
//! harmonic plus one inverse FFT per input-voltage corner, and allocates
//! nothing.

use crate::converter::OperatingPoint;
use crate::network::Network;
pub use crate::network::{admittance, OMEGA_ASYMPTOTE};
use crate::scenario::Scenario;
use crate::spectrum;
use crate::timedomain::{self, Closed};
use num_complex::Complex64;
use rustfft::{Fft, FftPlanner};
use std::f64::consts::PI;
use std::sync::Arc;

/// One part as the evaluator and the optimizer see it.
#[derive(Debug, Clone, PartialEq)]
pub struct PartModel {
    /// Index into the catalog.
    pub index: usize,
    /// Worst-corner capacitance, F.
    pub c_worst: f64,
    /// Typical-corner capacitance, F.
    pub c_typical: f64,
    /// Highest capacitance of the corner region, F.
    pub c_high: f64,
    /// Lowest ESR of the corner region (hot), Ω.
    pub esr_min: f64,
    /// Highest ESR of the corner region (cold), Ω; the `low` corner's.
    pub esr_max: f64,
    /// Nominal capacitance, F.
    pub c_nominal: f64,
    /// Contribution to the added-capacitance limit, F.
    pub c_limit: f64,
    /// ESR as the catalog gives it (the typical corner's), Ω.
    pub esr: f64,
    /// ESL plus the board's mounting inductance, H.
    pub esl: f64,
    /// Cost of one part.
    pub cost: f64,
    /// mm² (0 when unknown and not needed).
    pub area: f64,
    /// RMS ripple-current rating, A.
    pub rating: Option<f64>,
}

impl PartModel {
    /// The corner region along coordinate `coord`: 0 is capacitance
    /// (`c_worst` … `c_high`), 1 is ESR (`esr_min` … `esr_max`).
    pub(crate) fn range(&self, coord: usize) -> (f64, f64) {
        if coord == 0 {
            (self.c_worst, self.c_high)
        } else {
            (self.esr_min, self.esr_max)
        }
    }
}

/// Which node of the output network a waveform is taken at.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Node {
    /// The measured (load) node: behind the post-filter when there is one.
    Load,
    /// The converter-side node of a post-filter (the load node without one).
    Converter,
}

/// Which capacitance corner.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Corner {
    /// Every part at its lowest capacitance and highest ESR (the `low` corner).
    Worst,
    /// Nominal capacitance under DC bias, the catalog ESR.
    Typical,
}

/// Measured with the target's bandwidth limit, or at full bandwidth.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Band {
    /// Through the target's measurement bandwidth (the target figure).
    Limited,
    /// Every harmonic, unfiltered.
    Full,
}

/// One bank line's capacitance and ESR at a point of the corner region.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineState {
    /// Capacitance of each part of the line, F.
    pub c: f64,
    /// ESR of each part of the line, Ω.
    pub esr: f64,
}

/// A bank: (local part index, count) pairs.
pub type Bank = [(usize, u32)];

/// Where a part of a post-filter sits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TailRole {
    /// A capacitor of the load-side bank.
    Load,
    /// A damping capacitor: the line's capacitors in parallel, in series
    /// with one resistor (Ω).
    Damping {
        /// The damping resistor, Ω.
        resistance: f64,
    },
    /// The filter inductor (the line's inductors in parallel): its model's
    /// `c_*` fields hold the inductance range, its `esr*` fields the DCR,
    /// and this its winding capacitance, F.
    Inductor {
        /// Parallel (winding) capacitance of one inductor, F.
        cp: f64,
    },
}

/// One line of a post-filter: a part model, its count and its place.
#[derive(Debug, Clone, PartialEq)]
pub struct TailLine {
    /// The part (for an inductor: inductance in `c_*`, DCR in `esr*`).
    pub model: PartModel,
    /// Parts in parallel.
    pub count: u32,
    /// Where it sits.
    pub role: TailRole,
}

/// Every tail line at its typical corner (nominal capacitance under DC
/// bias, the catalog ESR).
pub(crate) fn typical_states(tail: &[TailLine]) -> Vec<LineState> {
    tail.iter()
        .map(|t| LineState {
            c: t.model.c_typical,
            esr: t.model.esr,
        })
        .collect()
}

impl TailLine {
    /// Add this line's share at `f` to the load-side admittance `y_load`
    /// and the inductor's impedance `zs`, with the line at `st`.
    #[inline]
    fn add_at(&self, st: &LineState, f: f64, y_load: &mut Complex64, zs: &mut Complex64) {
        self.add_with(
            st,
            |esr, esl, c| admittance(esr, esl, c, f),
            |ind| ind.impedance(f),
            y_load,
            zs,
        );
    }

    /// As [`TailLine::add_at`] at the complex frequency `s`.
    #[inline]
    fn add_at_s(&self, st: &LineState, s: Complex64, y_load: &mut Complex64, zs: &mut Complex64) {
        self.add_with(
            st,
            |esr, esl, c| crate::network::admittance_s(esr, esl, c, s),
            |ind| ind.impedance_s(s),
            y_load,
            zs,
        );
    }

    /// Add this line's share with a capacitor's admittance `y(esr, esl, c)`
    /// and an inductor's impedance `z(inductor)` at one frequency.
    #[inline]
    fn add_with(
        &self,
        st: &LineState,
        y: impl Fn(f64, f64, f64) -> Complex64,
        z: impl Fn(crate::network::SeriesInductor) -> Complex64,
        y_load: &mut Complex64,
        zs: &mut Complex64,
    ) {
        let n = self.count as f64;
        match self.role {
            TailRole::Load => *y_load += y(st.esr, self.model.esl, st.c) * n,
            TailRole::Damping { resistance } => {
                // One resistor in series with n capacitors in parallel.
                let zc = y(st.esr, self.model.esl, st.c).inv() / n;
                *y_load += (Complex64::new(resistance, 0.0) + zc).inv();
            }
            TailRole::Inductor { cp } => {
                let zi = z(crate::network::SeriesInductor {
                    l: st.c,
                    dcr: st.esr,
                    cp,
                });
                *zs += zi / n;
            }
        }
    }
}

/// A post-filter's `(ty, h)` of [`crate::network::tail_terms`] at `f` with
/// its lines at `states`, and the load node's total admittance there.
#[inline]
pub(crate) fn tail_terms_of(
    tail: &[TailLine],
    states: &[LineState],
    f: f64,
) -> ((Complex64, Complex64), Complex64) {
    let (mut y_load, mut zs) = (Complex64::default(), Complex64::default());
    for (t, st) in tail.iter().zip(states) {
        t.add_at(st, f, &mut y_load, &mut zs);
    }
    (crate::network::tail_terms(y_load, zs), y_load)
}

/// A post-filter's load-node admittance (load-side bank and damping) and
/// its inductor's series impedance at the complex frequency `s`, `(Y_load, Z_s)`, with its lines
/// at `states`.
#[inline]
pub(crate) fn tail_load_and_series(
    tail: &[TailLine],
    states: &[LineState],
    s: Complex64,
) -> (Complex64, Complex64) {
    let (mut y_load, mut zs) = (Complex64::default(), Complex64::default());
    for (t, st) in tail.iter().zip(states) {
        t.add_at_s(st, s, &mut y_load, &mut zs);
    }
    (y_load, zs)
}

/// The output impedance of a post-filter at `f` with its lines at
/// `states`: the load node's impedance with the bank's node held at a fixed
/// voltage, `1 / (Y_load + 1/Z_s)` (None without lines).
pub fn tail_output_impedance(tail: &[TailLine], states: &[LineState], f: f64) -> Option<Complex64> {
    if tail.is_empty() {
        return None;
    }
    let (mut y_load, mut zs) = (Complex64::default(), Complex64::default());
    for (t, st) in tail.iter().zip(states) {
        t.add_at(st, f, &mut y_load, &mut zs);
    }
    Some((y_load + zs.inv()).inv())
}

/// A post-filter's terms `(ty, h)` of [`crate::network::tail_terms`] at
/// every harmonic and at the asymptote, for one state of its lines.
#[derive(Debug, Clone, Default)]
struct TailTable {
    ty: Vec<Complex64>,
    h: Vec<Complex64>,
    ty_big: Complex64,
    h_big: Complex64,
}

/// A real-output inverse transform of `m` samples (`m` even), computed as
/// a complex inverse FFT of `m/2` points: the packed sequence
/// `z_j = x_{2j} + j·x_{2j+1}` has the spectrum
/// `Z_k = Xe_k + j·W^k·Xo_k` with `Xe_k = X_k + X_{k+m/2}`,
/// `Xo_k = X_k − X_{k+m/2}` and `W = e^{j2π/m}` (the even and odd samples'
/// spectra; e.g. Oppenheim & Schafer, *Discrete-Time Signal Processing*,
/// the FFT of real sequences). A real signal's spectrum `X` is known from
/// its one-sided coefficients (`X_h = c_h/2`, `X_{m−h} = conj(c_h)/2`), so
/// each spectral bin `K` lands in `Z_{K mod m/2}` with the weight
/// `(1 + j·W^K)` ([`Plan::put`]).
#[derive(Clone)]
struct Plan {
    /// Real samples per period.
    m: usize,
    /// Complex inverse FFT of `m/2` points.
    fft: Arc<dyn Fft<f64>>,
    /// `(1 + j·W^K)/2` for K in 0..m.
    pk: Arc<[Complex64]>,
}

impl Plan {
    fn new(m: usize, planner: &mut FftPlanner<f64>) -> Plan {
        debug_assert!(m % 2 == 0);
        let pk: Vec<Complex64> = (0..m)
            .map(|k| {
                let w = Complex64::from_polar(1.0, 2.0 * PI * k as f64 / m as f64);
                (Complex64::new(1.0, 0.0) + Complex64::new(0.0, 1.0) * w) * 0.5
            })
            .collect();
        Plan {
            m,
            fft: planner.plan_fft_inverse(m / 2),
            pk: pk.into(),
        }
    }

    /// Add harmonic `h` (1 ≤ h < m/2) of one-sided coefficient `c` (the
    /// signal holds Re(c·e^{j2πht/T})) to the packed spectrum `z` (m/2 long).
    #[inline(always)]
    fn put(&self, z: &mut [Complex64], h: usize, c: Complex64) {
        let half = self.m / 2;
        z[h] += c * self.pk[h];
        z[half - h] += c.conj() * self.pk[self.m - h];
    }

    /// Inverse transform of the packed spectrum in `z` (m/2 long), in place:
    /// afterwards sample `j` is [`sample`]`(z, j)`.
    #[inline]
    fn run(&self, z: &mut [Complex64], scratch: &mut [Complex64]) {
        self.fft.process_with_scratch(&mut z[..self.m / 2], scratch);
    }
}

/// Sample `j` of a packed real sequence ([`Plan`]).
#[inline(always)]
fn sample(z: &[Complex64], j: usize) -> f64 {
    let c = z[j / 2];
    if j % 2 == 0 {
        c.re
    } else {
        c.im
    }
}

/// Evaluates banks built from a fixed list of parts.
#[derive(Clone)]
pub struct Evaluator {
    /// The parts banks are built from (local indices into this list).
    pub parts: Vec<PartModel>,
    /// Fundamental of the current into the bank, Hz.
    pub f_ripple: f64,
    /// Harmonics used for the target figure.
    pub n_limited: usize,
    /// Harmonics used for the full-bandwidth figure and ripple currents.
    pub n_full: usize,
    /// Harmonic frequencies k·f_ripple, Hz, n_full long.
    pub freqs: Vec<f64>,
    /// Per vin corner: I_k (peak phasor, A), n_full long.
    pub currents: Vec<Vec<Complex64>>,
    /// Per vin corner: I_k · H_k, n_limited long.
    drive_limited: Vec<Vec<Complex64>>,
    /// Per vin corner: |I_k · H_k|², n_limited long (the cascade's floors).
    drive_n2: Vec<Vec<f64>>,
    /// Bandwidth filter H_k, n_full long.
    pub filter: Vec<Complex64>,
    /// What stands between the converter's current and the measured node.
    pub network: Network,
    /// The network's internal admittance at every harmonic, n_full long.
    y_int: Vec<Complex64>,
    /// Per harmonic: jω·Lc·Y_int (the network's coupling term less one),
    /// n_full long.
    zs_yi: Vec<Complex64>,
    /// Per harmonic: ω_k = 2π·k·f_ripple, n_full long.
    omega: Vec<f64>,
    /// Per part and harmonic (`tab_n` each): admittance at the worst and at
    /// the typical corner (the typical one empty unless `tab_typical`).
    /// Shared, not copied, by a clone of the evaluator (the search's
    /// lanes). A harmonic or corner not tabulated is computed when asked.
    y_worst: Arc<Vec<Complex64>>,
    y_typical: Arc<Vec<Complex64>>,
    /// Harmonics tabulated per part: `n_full`, or `n_limited` for the
    /// search's compact tables ([`Evaluator::with_top`]).
    tab_n: usize,
    /// Whether the typical corner is tabulated.
    tab_typical: bool,
    /// Per part: admittance at [`OMEGA_ASYMPTOTE`], worst and typical corner.
    y_big_worst: Vec<Complex64>,
    y_big_typical: Vec<Complex64>,
    /// Per vin corner: the closed-form part of the target figure's waveform
    /// (on `plan_limited`'s grid) and of the full-bandwidth one (`plan_full`).
    closed_limited: Vec<Grid>,
    closed_full: Vec<Option<Grid>>,
    /// Operating points of the named corners (nominal inductance).
    pub ops_named: Vec<usize>,
    /// Operating points the region search starts from (and the optimizer's
    /// pass/fail cascade runs over).
    pub ops_region: Vec<usize>,
    /// Every operating point, in the order of the tables.
    pub ops: Vec<OperatingPoint>,
    order_lim: u32,
    tau: f64,
    /// High-frequency asymptote `a0 + jω·a1` of the last transfer filled.
    asym: (f64, f64),
    plan_limited: Plan,
    plan_full: Plan,
    /// Coarse inverse FFT: every `m / SUB` th sample of the target figure.
    plan_sub: Arc<dyn Fft<f64>>,
    plan_first: Arc<dyn Fft<f64>>,
    /// The post-filter behind the bank, if any (fixed for this evaluator).
    tail: Vec<TailLine>,
    /// The filter's terms with its lines at `low` and at `typical`.
    tail_low: TailTable,
    tail_typical: TailTable,
    /// Per harmonic of the last transfer filled: the voltage ratio from the
    /// bank's node to the measured node (1 without a filter) and the load
    /// node's total admittance (0 without one).
    hk: Vec<Complex64>,
    yl: Vec<Complex64>,
    /// The bank's and the filter's terms at the asymptote, last filled.
    big: (Complex64, Complex64, Complex64),
    // Scratch, reused by every call.
    zt: Vec<Complex64>,
    buf: Vec<Complex64>,
    fft_scratch: Vec<Complex64>,
}

/// Peak-to-peak of the sampled ripple over the largest harmonic amplitude,
/// at least. With c the mid-range value, |V_k| = |(2/M) Σ_m (v_m − c)
/// e^{−j2πkm/M}| ≤ pp · max_φ (1/M) Σ_m |cos(2πkm/M + φ)|. With M a power of
/// two and k ≤ M/8, the samples cover each cycle of harmonic k in L ≥ 8
/// equally spaced points (L a power of two), where that maximum is largest
/// at L = 8: 0.65328, computed (0.64073 at L = 16, 2/π = 0.63662 as L → ∞;
/// the square wave attains 2/π, the classic bound). So
/// pp ≥ |V_k| / 0.65328 = 1.53073·|V_k|; rounded down to 1.53.
pub const HARMONIC_FLOOR: f64 = 1.53;

/// Samples per period of the coarse pass in [`Evaluator::ripple_check`].
const SUB: usize = 512;
/// Samples per period of the first, cheapest pass.
const SUB_FIRST: usize = 64;

/// The closed-form part of one operating point's waveform
/// ([`timedomain::closed`]) and its grid samples packed two to a complex
/// number, as [`Plan`] packs the series' samples.
#[derive(Clone)]
struct Grid {
    closed: Closed,
    /// `(g0_{2j}, g0_{2j+1})`.
    g0: Vec<Complex64>,
    /// `(g1_{2j}, g1_{2j+1})`.
    g1: Vec<Complex64>,
}

impl Grid {
    fn new(closed: Closed) -> Grid {
        let pack = |g: &[f64]| -> Vec<Complex64> {
            g.chunks_exact(2)
                .map(|p| Complex64::new(p[0], p[1]))
                .collect()
        };
        Grid {
            g0: pack(&closed.g0),
            g1: pack(&closed.g1),
            closed,
        }
    }
}

/// Lowest and highest of `x_j + a0·g0_j + a1·g1_j` over the samples of
/// the packed real sequence `z` ([`Plan`]), `g0` and `g1` packed the same
/// way ([`Grid`]). A NaN sample is skipped (as `f64::min` would). Four
/// running extremes of each kind, written as `v < lo ? v : lo` (one
/// `minpd` per pair of lanes on x86-64; the highest as the lowest of −v),
/// so that the loop vectorises and the compares do not chain.
#[inline]
fn scan(z: &[Complex64], g0: &[Complex64], g1: &[Complex64], a0: f64, a1: f64) -> (f64, f64) {
    let len = z.len().min(g0.len()).min(g1.len());
    let (z, g0, g1) = (&z[..len], &g0[..len], &g1[..len]);
    let mut lo = [Complex64::new(f64::INFINITY, f64::INFINITY); 4];
    let mut nhi = lo;
    let blocks = len / 4;
    for ((z, g0), g1) in z
        .chunks_exact(4)
        .zip(g0.chunks_exact(4))
        .zip(g1.chunks_exact(4))
    {
        for q in 0..4 {
            let v = z[q] + g0[q] * a0 + g1[q] * a1;
            let l = &mut lo[q];
            l.re = if v.re < l.re { v.re } else { l.re };
            l.im = if v.im < l.im { v.im } else { l.im };
            let h = &mut nhi[q];
            h.re = if -v.re < h.re { -v.re } else { h.re };
            h.im = if -v.im < h.im { -v.im } else { h.im };
        }
    }
    let (mut lo, mut hi) = (
        lo.iter().fold(f64::INFINITY, |a, b| a.min(b.re).min(b.im)),
        -nhi.iter().fold(f64::INFINITY, |a, b| a.min(b.re).min(b.im)),
    );
    for j in 4 * blocks..len {
        let v = z[j] + g0[j] * a0 + g1[j] * a1;
        lo = lo.min(v.re).min(v.im);
        hi = hi.max(v.re).max(v.im);
    }
    (lo, hi)
}

/// `(max_k, Σ_k)` of |d_k|²·|z_k|² over the harmonics (`dn2` holds
/// |d_k|²): four lanes without branches, so that it vectorises.
#[inline]
fn floor_terms(dn2: &[f64], z: &[Complex64]) -> (f64, f64) {
    let len = dn2.len().min(z.len());
    let (dn2, z) = (&dn2[..len], &z[..len]);
    let (mut peak, mut sum) = ([0.0_f64; 4], [0.0_f64; 4]);
    for (d, z) in dn2.chunks_exact(4).zip(z.chunks_exact(4)) {
        for q in 0..4 {
            let v = d[q] * (z[q].re * z[q].re + z[q].im * z[q].im);
            peak[q] = if v > peak[q] { v } else { peak[q] };
            sum[q] += v;
        }
    }
    let (mut p, mut s) = (
        peak[0].max(peak[1]).max(peak[2]).max(peak[3]),
        (sum[0] + sum[1]) + (sum[2] + sum[3]),
    );
    for k in 4 * (len / 4)..len {
        let v = dn2[k] * z[k].norm_sqr();
        p = p.max(v);
        s += v;
    }
    (p, s)
}

/// [`Evaluator::ripple_floor_for`] from its terms
/// ([`Evaluator::floor_terms`]).
pub(crate) fn ripple_floor_with(terms: &[[f64; 3]], sum_a: &[f64]) -> f64 {
    let mut best: f64 = 0.0;
    for (&[d, g, offset], &a) in terms.iter().zip(sum_a) {
        let y = a * g + offset;
        best = best.max(if y > 0.0 { d / y } else { f64::INFINITY });
    }
    best
}

/// How far past the bound on the winding-capacitance resonance the
/// full-bandwidth sum reaches ([`full_band_top`]).
pub const TOP_PER_RESONANCE: f64 = 2.0;

/// The most harmonics a full-bandwidth sum extended by [`full_band_top`]
/// takes.
pub const MAX_HARMONICS_FULL: usize = 1 << 16;

/// How far a full-bandwidth sum must reach behind the post-filter `tail`,
/// Hz, or `None` when the usual 500 MHz serve. An inductor's winding
/// capacitance C_p couples the two nodes above its self-resonance and, in
/// series with the load side's high-frequency inductance, resonates far above
/// the usual harmonics: the load side's lines alone (ESL over count, in
/// parallel) give the loop's least inductance L, so 1/(2π·sqrt(C_p·L)) bounds
/// that resonance from above. The sum reaches [`TOP_PER_RESONANCE`] times
/// it: past the resonance the transfer approaches its high-frequency
/// asymptote (the divider 1/(1 − 1/(ω²C_pL)), second order in f_r/f), and
/// the current's harmonics there are small. Against ngspice the load-node
/// figure is within 0.3 % with 1.5, 2, 3, 5 or 10 times
/// (tests/filter.rs, `winding_capacitance_at_full_bandwidth_matches_ngspice`).
pub fn full_band_top(tail: &[TailLine]) -> Option<f64> {
    let mut cp = 0.0;
    let mut inv_l = 0.0;
    for t in tail {
        let n = t.count as f64;
        match t.role {
            TailRole::Inductor { cp: c } => cp += c * n,
            TailRole::Load => {
                if t.model.esl > 0.0 {
                    inv_l += n / t.model.esl;
                }
            }
            TailRole::Damping { .. } => {
                if t.model.esl > 0.0 {
                    // The leg's capacitors in parallel: ESL/n, in series with R.
                    inv_l += n / t.model.esl;
                }
            }
        }
    }
    if cp <= 0.0 || inv_l <= 0.0 {
        return None;
    }
    let f_r = 1.0 / (2.0 * PI * (cp / inv_l).sqrt());
    let top = TOP_PER_RESONANCE * f_r;
    (top > 500e6).then_some(top)
}

fn samples_for(n: usize) -> usize {
    (8 * n).max(4096).next_power_of_two()
}

impl Evaluator {
    /// Tabulate everything a bank's evaluation needs: the harmonics of every
    /// operating point, the bandwidth filter, the network and every part's
    /// admittance at every harmonic (see "The evaluator's hot path" in
    /// DEVELOPERS.md).
    pub fn new(s: &Scenario, ops: &[OperatingPoint], parts: Vec<PartModel>) -> Evaluator {
        Evaluator::with_top(s, ops, parts, None, false)
    }

    /// As [`Evaluator::new`], the full-bandwidth sum reaching at least `top`
    /// Hz (see [`full_band_top`]) when the harmonic count is automatic. At
    /// full bandwidth the target figure then sums as far. `compact`
    /// tabulates only the worst corner at the target figure's harmonics (the
    /// search's hot path; the rest is computed when asked, and a large
    /// catalog's tables take a fraction of the memory).
    pub(crate) fn with_top(
        s: &Scenario,
        ops: &[OperatingPoint],
        parts: Vec<PartModel>,
        top: Option<f64>,
        compact: bool,
    ) -> Evaluator {
        let f_ripple = ops[0].f_ripple;
        let bw = s.target.bandwidth.map(|b| b.0);
        let auto = s.target.harmonics == 0;
        let n_top = match top {
            Some(t) if auto => ((t / f_ripple).ceil() as usize).min(MAX_HARMONICS_FULL),
            _ => 0,
        };
        let n_limited = if !auto {
            s.target.harmonics
        } else if bw.is_none() {
            spectrum::auto_count(f_ripple, None).max(n_top)
        } else {
            spectrum::auto_count(f_ripple, bw)
        };
        let n_full = n_limited
            .max(spectrum::auto_count(f_ripple, None))
            .max(n_top);
        let freqs: Vec<f64> = (1..=n_full).map(|k| k as f64 * f_ripple).collect();
        let order = s.target.bandwidth_order as i32;
        let filt = |f: f64, b: Option<f64>| -> Complex64 {
            match b {
                Some(b) => Complex64::new(1.0, f / b).powi(-order),
                None => Complex64::new(1.0, 0.0),
            }
        };
        let filter: Vec<Complex64> = freqs.iter().map(|&f| filt(f, bw)).collect();
        let network = Network::from_scenario(s);
        let y_int: Vec<Complex64> = freqs
            .iter()
            .map(|&f| network.internal_admittance(f))
            .collect();
        let omega: Vec<f64> = freqs.iter().map(|&f| 2.0 * PI * f).collect();
        let zs_yi: Vec<Complex64> = omega
            .iter()
            .zip(&y_int)
            .map(|(&w, &yi)| Complex64::new(0.0, w * network.connection_inductance) * yi)
            .collect();
        let currents: Vec<Vec<Complex64>> = ops
            .iter()
            .map(|op| spectrum::harmonics(&op.waveform, n_full))
            .collect();
        let mut planner = FftPlanner::new();
        let plan_limited = Plan::new(samples_for(n_limited), &mut planner);
        let plan_full = Plan::new(samples_for(n_full), &mut planner);
        let plan_sub = planner.plan_fft_inverse(SUB);
        let plan_first = planner.plan_fft_inverse(SUB_FIRST);
        let scratch_len = plan_limited
            .fft
            .get_inplace_scratch_len()
            .max(plan_full.fft.get_inplace_scratch_len())
            .max(plan_sub.get_inplace_scratch_len())
            .max(plan_first.get_inplace_scratch_len());
        let tau = bw.map_or(0.0, |b| 1.0 / (2.0 * PI * b));
        let order_lim = if bw.is_some() { order as u32 } else { 0 };
        let closed_limited: Vec<Grid> = ops
            .iter()
            .map(|op| {
                Grid::new(timedomain::closed(
                    &op.waveform,
                    order_lim,
                    tau,
                    plan_limited.m,
                ))
            })
            .collect();
        // Full-bandwidth grids are made when a full-bandwidth figure first
        // asks for one ([`Evaluator::full_grid`]).
        let closed_full: Vec<Option<Grid>> = ops.iter().map(|_| None).collect();
        let mut ev = Evaluator {
            parts: Vec::new(),
            f_ripple,
            n_limited,
            n_full,
            freqs,
            currents: Vec::new(),
            drive_limited: Vec::new(),
            drive_n2: Vec::new(),
            filter,
            network,
            y_int,
            zs_yi,
            omega,
            y_worst: Arc::new(Vec::new()),
            y_typical: Arc::new(Vec::new()),
            tab_n: if compact { n_limited } else { n_full },
            tab_typical: !compact,
            y_big_worst: Vec::new(),
            y_big_typical: Vec::new(),
            closed_limited,
            closed_full,
            ops_named: (0..ops.len()).collect(),
            ops_region: (0..ops.len()).collect(),
            ops: ops.to_vec(),
            order_lim,
            tau,
            asym: (0.0, 0.0),
            tail: Vec::new(),
            tail_low: TailTable::default(),
            tail_typical: TailTable::default(),
            hk: vec![Complex64::new(1.0, 0.0); n_full],
            yl: vec![Complex64::default(); n_full],
            big: (
                Complex64::default(),
                Complex64::default(),
                Complex64::new(1.0, 0.0),
            ),
            zt: vec![Complex64::default(); n_full],
            buf: vec![Complex64::default(); plan_full.m.max(plan_limited.m)],
            fft_scratch: vec![Complex64::default(); scratch_len],
            plan_limited,
            plan_full,
            plan_sub,
            plan_first,
        };
        ev.drive_limited = currents
            .iter()
            .map(|cur| {
                cur[..n_limited]
                    .iter()
                    .zip(&ev.filter)
                    .map(|(i, h)| i * h)
                    .collect()
            })
            .collect();
        ev.drive_n2 = ev
            .drive_limited
            .iter()
            .map(|d| d.iter().map(|x| x.norm_sqr()).collect())
            .collect();
        ev.currents = currents;
        ev.set_parts(parts);
        ev
    }

    /// Replace the part list (tables are rebuilt).
    pub(crate) fn set_parts(&mut self, parts: Vec<PartModel>) {
        let n = self.tab_n;
        let mut y_worst = Vec::with_capacity(parts.len() * n);
        let mut y_typical = Vec::with_capacity(if self.tab_typical { parts.len() * n } else { 0 });
        let f_big = OMEGA_ASYMPTOTE / (2.0 * PI);
        self.y_big_worst = parts
            .iter()
            .map(|p| admittance(p.esr_max, p.esl, p.c_worst, f_big))
            .collect();
        self.y_big_typical = parts
            .iter()
            .map(|p| admittance(p.esr, p.esl, p.c_typical, f_big))
            .collect();
        for p in &parts {
            for &f in &self.freqs[..n] {
                y_worst.push(admittance(p.esr_max, p.esl, p.c_worst, f));
                if self.tab_typical {
                    y_typical.push(admittance(p.esr, p.esl, p.c_typical, f));
                }
            }
        }
        self.y_worst = Arc::new(y_worst);
        self.y_typical = Arc::new(y_typical);
        self.parts = parts;
    }

    /// Admittance of one capacitor of local part `i` at harmonic `k` (0-based).
    #[inline]
    pub fn y(&self, i: usize, k: usize, corner: Corner) -> Complex64 {
        if k < self.tab_n {
            match corner {
                Corner::Worst => return self.y_worst[i * self.tab_n + k],
                Corner::Typical if self.tab_typical => return self.y_typical[i * self.tab_n + k],
                Corner::Typical => {}
            }
        }
        self.y_computed(i, k, corner)
    }

    /// [`Evaluator::y`] from the part's values (a harmonic or corner the
    /// tables leave out).
    fn y_computed(&self, i: usize, k: usize, corner: Corner) -> Complex64 {
        let p = &self.parts[i];
        match corner {
            Corner::Worst => admittance(p.esr_max, p.esl, p.c_worst, self.freqs[k]),
            Corner::Typical => admittance(p.esr, p.esl, p.c_typical, self.freqs[k]),
        }
    }

    /// Worst-corner admittances of one capacitor of local part `i` at the
    /// tabulated harmonics (at least the target figure's `n_limited`).
    #[inline]
    pub(crate) fn y_row(&self, i: usize) -> &[Complex64] {
        &self.y_worst[i * self.tab_n..(i + 1) * self.tab_n]
    }

    /// Number of input-voltage corners.
    pub fn vin_corners(&self) -> usize {
        self.currents.len()
    }

    /// Transfer impedance at harmonic `k` for the added bank's admittance
    /// `yb` there (the network's, with its tabulated internal admittance).
    /// With a post-filter, the voltage at the load node, its lines at the
    /// named state of `corner`.
    #[inline]
    fn transfer_of(&self, yb: Complex64, k: usize, corner: Corner) -> Complex64 {
        let yi = self.y_int[k];
        if self.tail.is_empty() {
            // Network::transfer_with, its jωLc·Y_int tabulated.
            return (yb + yi + self.zs_yi[k] * yb).inv();
        }
        let t = self.tail_table(corner);
        // Network::transfer_tail, its coupling 1 + jωLc·Y_int tabulated.
        let g = Complex64::new(1.0, 0.0) + self.zs_yi[k];
        t.h[k] * (g * (yb + t.ty[k]) + yi).inv()
    }

    fn tail_table(&self, corner: Corner) -> &TailTable {
        match corner {
            Corner::Worst => &self.tail_low,
            Corner::Typical => &self.tail_typical,
        }
    }

    /// Record the network's high-frequency asymptote `a0 + jω·a1` for the
    /// bank admittance `yb_big` at [`OMEGA_ASYMPTOTE`], the filter's lines
    /// at the named state of `corner`.
    fn set_asymptote(&mut self, yb_big: Complex64, corner: Corner) {
        let (ty, h) = if self.tail.is_empty() {
            (Complex64::default(), Complex64::new(1.0, 0.0))
        } else {
            let t = self.tail_table(corner);
            (t.ty_big, t.h_big)
        };
        self.set_asymptote_tail(yb_big, ty, h);
    }

    fn set_asymptote_tail(&mut self, yb_big: Complex64, ty: Complex64, h: Complex64) {
        self.big = (yb_big, ty, h);
        self.asym = self.network.asymptote_tail(yb_big, ty, h);
    }

    /// Whether the bank has any capacitance at all (added, internal or
    /// behind a post-filter).
    pub fn is_empty(&self, bank: &Bank) -> bool {
        !self.network.has_internal() && self.tail.is_empty() && bank.iter().all(|&(_, n)| n == 0)
    }

    /// Put a post-filter behind the bank: every figure is then taken at the
    /// load node, with the bank on the converter's side of the inductor.
    /// Allocates: once per evaluator.
    pub(crate) fn set_tail(&mut self, tail: Vec<TailLine>) {
        self.tail = tail;
        let low: Vec<LineState> = self
            .tail
            .iter()
            .map(|t| LineState {
                c: t.model.c_worst,
                esr: t.model.esr_max,
            })
            .collect();
        let typical: Vec<LineState> = self
            .tail
            .iter()
            .map(|t| LineState {
                c: t.model.c_typical,
                esr: t.model.esr,
            })
            .collect();
        self.tail_low = self.tail_table_at(&low);
        self.tail_typical = self.tail_table_at(&typical);
    }

    /// The post-filter's lines (empty without one).
    pub fn tail(&self) -> &[TailLine] {
        &self.tail
    }

    /// Lines of `bank` and of the post-filter behind it: the length of a
    /// full set of line states.
    pub fn line_count(&self, bank: &Bank) -> usize {
        bank.len() + self.tail.len()
    }

    /// The model of line `j` of `bank` followed by the filter's lines.
    pub fn line_model<'a>(&'a self, bank: &Bank, j: usize) -> &'a PartModel {
        if j < bank.len() {
            &self.parts[bank[j].0]
        } else {
            &self.tail[j - bank.len()].model
        }
    }

    fn tail_table_at(&self, states: &[LineState]) -> TailTable {
        let mut t = TailTable {
            ty: Vec::with_capacity(self.n_full),
            h: Vec::with_capacity(self.n_full),
            ..Default::default()
        };
        for &f in &self.freqs {
            let (ty, h) = self.tail_terms_at(states, f).0;
            t.ty.push(ty);
            t.h.push(h);
        }
        let ((ty, h), _) = self.tail_terms_at(states, OMEGA_ASYMPTOTE / (2.0 * PI));
        t.ty_big = ty;
        t.h_big = h;
        t
    }

    /// The filter's `(ty, h)` at `f` with its lines at `states`, and the
    /// load node's total admittance there.
    #[inline]
    fn tail_terms_at(&self, states: &[LineState], f: f64) -> ((Complex64, Complex64), Complex64) {
        tail_terms_of(&self.tail, states, f)
    }

    /// A lower bound on the target figure with the post-filter `tail` (its
    /// lines at `low`) behind any bank whose admittance at harmonic k is at
    /// most `ymax[k]` in magnitude: max_k 1.53·|D_k·h_k| / (ymax_k·|G_k| +
    /// |Y_int + G_k·ty_k|) (the argument of [`Evaluator::required_admittance`]).
    /// Used to drop filters no allowed bank can make pass.
    pub(crate) fn tail_ripple_floor(&self, tail: &[TailLine], ymax: &[f64]) -> f64 {
        let mut best: f64 = 0.0;
        for k in 0..self.n_limited.min(ymax.len()) {
            let f = self.freqs[k];
            let (mut y_load, mut zs) = (Complex64::default(), Complex64::default());
            for t in tail {
                let st = LineState {
                    c: t.model.c_worst,
                    esr: t.model.esr_max,
                };
                t.add_at(&st, f, &mut y_load, &mut zs);
            }
            let (ty, h) = crate::network::tail_terms(y_load, zs);
            let w = 2.0 * PI * f;
            let yi = self.y_int[k];
            let g = self.network.coupling_with(yi, w);
            let y = ymax[k] * g.norm() + (yi + g * ty).norm();
            let d = self.peak_drive(k) * h.norm();
            best = best.max(if y > 0.0 {
                HARMONIC_FLOOR * d / y
            } else {
                f64::INFINITY
            });
        }
        best
    }

    fn fill_transfer(&mut self, bank: &Bank, corner: Corner, n: usize) {
        let nt = self.tab_n;
        let (table, big) = match corner {
            Corner::Worst => (&self.y_worst, &self.y_big_worst),
            Corner::Typical => (&self.y_typical, &self.y_big_typical),
        };
        let tabulated = n <= nt && (corner == Corner::Worst || self.tab_typical);
        for k in 0..n {
            self.zt[k] = Complex64::default();
        }
        let mut yb_big = Complex64::default();
        for &(i, cnt) in bank {
            if cnt == 0 {
                continue;
            }
            let c = cnt as f64;
            yb_big += big[i] * c;
            if tabulated {
                let row = &table[i * nt..i * nt + n];
                for (z, y) in self.zt[..n].iter_mut().zip(row) {
                    *z += y * c;
                }
            } else {
                for k in 0..n {
                    let y = self.y(i, k, corner);
                    self.zt[k] += y * c;
                }
            }
        }
        self.transfer_in_place(n, corner);
        if !self.tail.is_empty() {
            let t = match corner {
                Corner::Worst => &self.tail_low,
                Corner::Typical => &self.tail_typical,
            };
            self.hk[..n].copy_from_slice(&t.h[..n]);
        }
        self.set_asymptote(yb_big, corner);
    }

    /// The transfer impedance in `zt[..n]` from the bank's admittance
    /// there, in place (the named state of `corner` for a post-filter).
    fn transfer_in_place(&mut self, n: usize, corner: Corner) {
        if self.tail.is_empty() {
            // Network::transfer_with, its jωLc·Y_int tabulated: the hot loop.
            for ((z, &yi), &zy) in self.zt[..n].iter_mut().zip(&self.y_int).zip(&self.zs_yi) {
                *z = (*z + yi + zy * *z).inv();
            }
            return;
        }
        for k in 0..n {
            self.zt[k] = self.transfer_of(self.zt[k], k, corner);
        }
    }

    /// Write the remaining series `D_k · (Z_k − a0 − jω_k·a1)` of vin
    /// corner `c`, harmonics 1..=n, into `buf` as the packed spectrum of
    /// the band's real-output transform ([`Plan`]; the asymptote's share is
    /// in the closed-form tables).
    fn load_remainder(&mut self, c: usize, band: Band, n: usize) {
        let (a0, a1) = self.asym;
        let (plan, drive) = match band {
            Band::Limited => (&self.plan_limited, &self.drive_limited[c][..n]),
            Band::Full => (&self.plan_full, &self.currents[c][..n]),
        };
        let z = &mut self.buf[..plan.m / 2];
        z.fill(Complex64::default());
        for (k, ((d, zt), &w)) in drive.iter().zip(&self.zt[..n]).zip(&self.omega).enumerate() {
            plan.put(z, k + 1, d * (zt - Complex64::new(a0, w * a1)));
        }
    }

    /// Peak-to-peak of the exact waveform of vin corner `c` whose remaining
    /// series is packed in `buf` ([`Evaluator::load_remainder`]): inverse
    /// FFT of the series plus the closed-form part, on the grid and on both
    /// sides of every breakpoint.
    fn pp_from_buf(&mut self, n: usize, band: Band, c: usize) -> f64 {
        let full = band == Band::Full;
        if full {
            self.full_grid(c);
        }
        let plan = if full {
            &self.plan_full
        } else {
            &self.plan_limited
        };
        let m = plan.m;
        debug_assert!(n < m / 2);
        let (a0, a1) = self.asym;
        let closed = if full {
            self.closed_full[c].as_ref().expect("made above")
        } else {
            &self.closed_limited[c]
        };
        if full && closed.closed.impulsive && a1 != 0.0 {
            // A current step through ESL: an impulse of voltage.
            return f64::INFINITY;
        }
        let buf = &mut self.buf[..m / 2];
        // The inverse FFT sums the series times e^{+j2πkm/M}.
        plan.run(buf, &mut self.fft_scratch);
        let (mut lo, mut hi) = scan(buf, &closed.g0, &closed.g1, a0, a1);
        for b in &closed.closed.breaks {
            // The series is smooth: interpolate it between grid samples.
            let j = b.pos.floor() as usize % m;
            let f = b.pos - b.pos.floor();
            let r = sample(buf, j) * (1.0 - f) + sample(buf, (j + 1) % m) * f;
            for side in 0..2 {
                let v = r + a0 * b.g0[side] + a1 * b.g1[side];
                lo = lo.min(v);
                hi = hi.max(v);
            }
        }
        let pp = hi - lo;
        // Overflowing values (absurd inputs) fail rather than pass.
        if pp.is_nan() || pp < 0.0 {
            f64::INFINITY
        } else {
            pp
        }
    }

    /// Peak-to-peak ripple, the worst over the vin corners. Infinite for an
    /// empty bank on a converter with no capacitance of its own.
    pub fn ripple_pp(&mut self, bank: &Bank, corner: Corner, band: Band) -> f64 {
        if self.is_empty(bank) {
            return f64::INFINITY;
        }
        let n = match band {
            Band::Limited => self.n_limited,
            Band::Full => self.n_full,
        };
        self.fill_transfer(bank, corner, n);
        let mut worst: f64 = 0.0;
        for j in 0..self.ops_named.len() {
            let c = self.ops_named[j];
            self.load_remainder(c, band, n);
            worst = worst.max(self.pp_from_buf(n, band, c));
        }
        worst
    }

    /// Worst-corner ripple of the target figure, stopping early once it is
    /// known to exceed `limit`: then the value returned is a lower bound
    /// above `limit` (the largest harmonic, or the first corner over it).
    /// Used by the optimizer, which only needs to know pass or fail.
    pub fn ripple_check(&mut self, bank: &Bank, limit: f64) -> f64 {
        if self.is_empty(bank) {
            return f64::INFINITY;
        }
        let n = self.n_limited;
        self.fill_transfer(bank, Corner::Worst, n);
        self.check_filled(limit)
    }

    /// As [`Evaluator::ripple_check`], from the added bank's admittance per
    /// harmonic (worst corner, `n_limited` values) instead of a bank; `bank`
    /// is the same bank, for its high-frequency asymptote.
    pub(crate) fn ripple_check_admittance(
        &mut self,
        yb: &[Complex64],
        bank: &Bank,
        limit: f64,
    ) -> f64 {
        let n = self.n_limited;
        if self.is_empty(bank) {
            return f64::INFINITY;
        }
        self.zt[..n].copy_from_slice(&yb[..n]);
        self.transfer_in_place(n, Corner::Worst);
        if !self.tail.is_empty() {
            self.hk[..n].copy_from_slice(&self.tail_low.h[..n]);
        }
        let mut yb_big = Complex64::default();
        for &(i, cnt) in bank {
            yb_big += self.y_big_worst[i] * cnt as f64;
        }
        self.set_asymptote(yb_big, Corner::Worst);
        self.check_filled(limit)
    }

    /// The pass/fail cascade on the transfer impedance in `zt`: each stage
    /// is a lower bound of the next, so a stage above `limit` ends it.
    fn check_filled(&mut self, limit: f64) -> f64 {
        let n = self.n_limited;
        // Two bounds from the harmonics alone, per vin corner (module docs of
        // HARMONIC_FLOOR): pp ≥ HARMONIC_FLOOR·max_k |V_k| and, since the
        // waveform's RMS about its mean is at most half its range,
        // pp ≥ 2·rms ≥ sqrt(2·Σ|V_k|²) (Parseval).
        let mut floor: f64 = 0.0;
        for &c in &self.ops_region {
            let (peak, sum) = floor_terms(&self.drive_n2[c][..n], &self.zt[..n]);
            floor = floor
                .max(HARMONIC_FLOOR * peak.sqrt())
                .max((2.0 * sum).sqrt());
        }
        if floor > limit {
            return floor;
        }
        // Coarse passes: the samples at every (M/S)-th instant are the inverse
        // FFT of size S of the series folded modulo S (plus the closed-form
        // part there), and a subset of the samples has a peak-to-peak no
        // larger than all of them.
        let (a0, a1) = self.asym;
        let m = self.plan_limited.m;
        let mut worst: f64 = floor;
        for pass in 0..2 {
            for j in 0..self.ops_region.len() {
                let c = self.ops_region[j];
                let (size, plan) = if pass == 0 {
                    (SUB_FIRST, &self.plan_first)
                } else {
                    (SUB, &self.plan_sub)
                };
                let sub = &mut self.buf[..size];
                sub.iter_mut().for_each(|x| *x = Complex64::default());
                for k in 0..n {
                    let w = self.omega[k];
                    sub[(k + 1) % size] +=
                        self.drive_limited[c][k] * (self.zt[k] - Complex64::new(a0, w * a1));
                }
                plan.process_with_scratch(sub, &mut self.fft_scratch);
                let closed = &self.closed_limited[c].closed;
                let stride = m / size;
                let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
                for (j, x) in sub.iter().enumerate() {
                    let v = x.re + a0 * closed.g0[j * stride] + a1 * closed.g1[j * stride];
                    lo = lo.min(v);
                    hi = hi.max(v);
                }
                worst = worst.max(hi - lo);
                if worst > limit {
                    return worst;
                }
            }
        }
        for j in 0..self.ops_region.len() {
            let c = self.ops_region[j];
            self.load_remainder(c, Band::Limited, n);
            worst = worst.max(self.pp_from_buf(n, Band::Limited, c));
            if worst > limit {
                return worst;
            }
        }
        worst
    }

    /// |I_k·H_k| at harmonic k, the largest over the vin corners.
    fn peak_drive(&self, k: usize) -> f64 {
        self.ops_region
            .iter()
            .map(|&c| self.drive_limited[c][k].norm())
            .fold(0.0, f64::max)
    }

    /// Linear necessary condition for the target (used by the optimizer's
    /// bounds): any bank meeting `target` has Σ n_i |Y_ik| ≥ q_k at every
    /// harmonic k of the target figure. From pp ≥ 1.53·|V_k| ([`HARMONIC_FLOOR`]), |V_k| = |D_k| / |Y_tot,k|
    /// and |Y_tot| ≤ |Y_b|·|1 + jωLc·Y_int| + |Y_int|, |Y_b| ≤ Σ n_i |Y_ik|.
    pub fn required_admittance(&self, target: f64) -> Vec<f64> {
        (0..self.n_limited)
            .map(|k| {
                let (g, offset, h) = self.offset_terms(k);
                let d = self.peak_drive(k) * h.norm();
                ((HARMONIC_FLOOR * d / target - offset.norm()) / g.norm()).max(0.0)
            })
            .collect()
    }

    /// Lower bound on the target figure's ripple of any bank whose
    /// Σ n_i |Y_ik| is at most `sum_a[k]` (same argument as above).
    pub fn ripple_floor_for(&self, sum_a: &[f64]) -> f64 {
        ripple_floor_with(&self.floor_terms(), sum_a)
    }

    /// Per harmonic of the target figure, the terms of
    /// [`Evaluator::ripple_floor_for`]: `(1.53·|D_k|·|h_k|, |G_k|, |offset_k|)`
    /// (for [`ripple_floor_with`], when many sums are floored).
    pub(crate) fn floor_terms(&self) -> Vec<[f64; 3]> {
        (0..self.n_limited)
            .map(|k| {
                let (g, offset, h) = self.offset_terms(k);
                let d = self.peak_drive(k) * h.norm();
                [HARMONIC_FLOOR * d, g.norm(), offset.norm()]
            })
            .collect()
    }

    /// Per harmonic of the target figure: r_k = max over corners of
    /// |D_k|·|h_k| / target (the total admittance a passing bank must have
    /// at k), G_k = 1 + jωLc·Y_int and the offset Y_int + G_k·ty_k, so that
    /// the measured voltage is D_k·h_k / (Y_b·G_k + offset). Without a
    /// post-filter h = 1 and ty = 0; with one, its lines at `low` (a
    /// necessary condition there is one for the whole region).
    pub fn phase_terms(&self, target: f64) -> Vec<(f64, Complex64, Complex64)> {
        (0..self.n_limited)
            .map(|k| {
                let (g, offset, h) = self.offset_terms(k);
                let d = self.peak_drive(k) * h.norm();
                (HARMONIC_FLOOR * d / target, g, offset)
            })
            .collect()
    }

    /// `(G_k, Y_int + G_k·ty_k, h_k)` at harmonic k, the filter at `low`.
    fn offset_terms(&self, k: usize) -> (Complex64, Complex64, Complex64) {
        let w = 2.0 * PI * self.freqs[k];
        let yi = self.y_int[k];
        let g = self.network.coupling_with(yi, w);
        if self.tail.is_empty() {
            (g, yi, Complex64::new(1.0, 0.0))
        } else {
            (g, yi + g * self.tail_low.ty[k], self.tail_low.h[k])
        }
    }

    /// |Y_ik| of one capacitor at the worst corner, for the target's harmonics.
    pub(crate) fn admittance_magnitudes(&self, i: usize) -> Vec<f64> {
        (0..self.n_limited)
            .map(|k| self.y(i, k, Corner::Worst).norm())
            .collect()
    }

    /// Samples of one period of the exact ripple at one vin corner, on the
    /// inverse FFT's grid (empty for an empty bank; not finite for a current
    /// step through ESL at full bandwidth).
    pub fn waveform(
        &mut self,
        bank: &Bank,
        corner: Corner,
        band: Band,
        vin_corner: usize,
    ) -> Vec<f64> {
        if self.is_empty(bank) {
            return Vec::new();
        }
        let n = match band {
            Band::Limited => self.n_limited,
            Band::Full => self.n_full,
        };
        self.fill_transfer(bank, corner, n);
        self.samples_filled(band, vin_corner)
    }

    /// The grid samples of the exact waveform at operating point `op` for
    /// the transfer last filled (empty when the figure is not finite).
    fn samples_filled(&mut self, band: Band, op: usize) -> Vec<f64> {
        let n = self.harmonics_of(band);
        self.load_remainder(op, band, n);
        if !self.pp_from_buf(n, band, op).is_finite() {
            return Vec::new();
        }
        if band == Band::Full {
            self.full_grid(op);
        }
        let (m, closed) = if band == Band::Full {
            (
                self.plan_full.m,
                &self.closed_full[op].as_ref().expect("made above").closed,
            )
        } else {
            (self.plan_limited.m, &self.closed_limited[op].closed)
        };
        let (a0, a1) = self.asym;
        let buf = &self.buf[..m / 2];
        (0..m)
            .map(|j| sample(buf, j) + a0 * closed.g0[j] + a1 * closed.g1[j])
            .collect()
    }

    /// Harmonic voltage phasors V_k of the target figure at one vin corner.
    pub(crate) fn harmonic_voltages(
        &mut self,
        bank: &Bank,
        corner: Corner,
        vin_corner: usize,
    ) -> Vec<Complex64> {
        self.limited_voltages(bank, vin_corner, |ev, n| ev.fill_transfer(bank, corner, n))
    }

    /// V_k = drive_k · Z_t,k over the limited harmonics for the drive of vin
    /// corner (operating point) `op`, `zt` filled by `fill` (zeros for an
    /// empty bank).
    fn limited_voltages(
        &mut self,
        bank: &Bank,
        op: usize,
        fill: impl FnOnce(&mut Self, usize),
    ) -> Vec<Complex64> {
        let n = self.n_limited;
        if self.is_empty(bank) {
            return vec![Complex64::default(); n];
        }
        fill(self, n);
        (0..n)
            .map(|k| self.drive_limited[op][k] * self.zt[k])
            .collect()
    }

    /// |Z| seen by the converter's current at every harmonic (full set).
    pub fn transfer_magnitude(&mut self, bank: &Bank, corner: Corner) -> Vec<f64> {
        let n = self.n_full;
        self.fill_transfer(bank, corner, n);
        self.zt[..n].iter().map(|z| z.norm()).collect()
    }

    /// RMS ripple current of one capacitor of each bank line:
    /// sqrt(Σ_k |I_k · Z_t · Y_i|² / 2), the largest over the vin corners
    /// and both capacitance corners (full bandwidth: a physical current).
    pub fn part_currents(&mut self, bank: &Bank) -> Vec<f64> {
        let mut out = vec![0.0_f64; bank.len()];
        self.part_currents_into(bank, &mut out);
        out
    }

    /// As [`Evaluator::part_currents`], into `out` (one value per bank line),
    /// allocating nothing.
    pub(crate) fn part_currents_into(&mut self, bank: &Bank, out: &mut [f64]) {
        out.iter_mut().for_each(|x| *x = 0.0);
        if self.is_empty(bank) {
            return;
        }
        let n = self.n_full;
        for corner in [Corner::Worst, Corner::Typical] {
            self.fill_transfer(bank, corner, n);
            for oi in 0..self.ops_region.len() {
                let c = self.ops_region[oi];
                for (j, &(i, _)) in bank.iter().enumerate() {
                    let mut sum = 0.0;
                    for k in 0..n {
                        let y = self.y(i, k, corner);
                        let z = self.zt[k] / self.hk[k];
                        sum += Network::part_current(self.currents[c][k], z, y).norm_sqr();
                    }
                    out[j] = out[j].max((sum / 2.0).sqrt());
                }
            }
        }
    }

    /// Add an operating point (another input voltage or inductance of the
    /// corner region); returns its index. Allocates: not for the hot path.
    pub fn add_op(&mut self, op: &OperatingPoint) -> usize {
        let cur = spectrum::harmonics(&op.waveform, self.n_full);
        let drive: Vec<Complex64> = cur[..self.n_limited]
            .iter()
            .zip(&self.filter)
            .map(|(i, h)| i * h)
            .collect();
        self.closed_limited.push(Grid::new(timedomain::closed(
            &op.waveform,
            self.order_lim,
            self.tau,
            self.plan_limited.m,
        )));
        self.closed_full.push(None);
        self.currents.push(cur);
        self.drive_n2
            .push(drive.iter().map(|x| x.norm_sqr()).collect());
        self.drive_limited.push(drive);
        self.ops.push(op.clone());
        self.ops.len() - 1
    }

    /// Make the full-bandwidth closed-form grid of operating point `op`
    /// when it is not made yet.
    fn full_grid(&mut self, op: usize) {
        if self.closed_full[op].is_none() {
            self.closed_full[op] = Some(Grid::new(timedomain::closed(
                &self.ops[op].waveform,
                0,
                1.0,
                self.plan_full.m,
            )));
        }
    }

    /// Forget the operating points added after the first `n` (those a
    /// whole-region check made along the way), so that a long search that
    /// checks many banks does not grow with them.
    pub fn truncate_ops(&mut self, n: usize) {
        let kept = self.ops_region.iter().chain(&self.ops_named);
        let n = n.max(kept.map(|&c| c + 1).max().unwrap_or(0));
        self.closed_limited.truncate(n);
        self.closed_full.truncate(n);
        self.currents.truncate(n);
        self.drive_n2.truncate(n);
        self.drive_limited.truncate(n);
        self.ops.truncate(n);
    }

    /// Fill the transfer impedance (first `n` harmonics) and its asymptote
    /// for the bank with each line at its own capacitance and ESR.
    pub fn fill_states(&mut self, bank: &Bank, states: &[LineState], n: usize) {
        for z in self.zt[..n].iter_mut() {
            *z = Complex64::default();
        }
        let mut yb_big = Complex64::default();
        let f_big = OMEGA_ASYMPTOTE / (2.0 * PI);
        for (&(i, cnt), st) in bank.iter().zip(states) {
            if cnt == 0 {
                continue;
            }
            let c = cnt as f64;
            let esl = self.parts[i].esl;
            yb_big += admittance(st.esr, esl, st.c, f_big) * c;
            for (z, &f) in self.zt[..n].iter_mut().zip(&self.freqs) {
                *z += admittance(st.esr, esl, st.c, f) * c;
            }
        }
        if self.tail.is_empty() {
            self.transfer_in_place(n, Corner::Worst);
            self.set_asymptote(yb_big, Corner::Worst);
            return;
        }
        // The filter's lines at their own states (after the bank's; at
        // `low` when only the bank's are given).
        let nb = bank.len();
        let low: [LineState; 0] = [];
        let tail_states: &[LineState] = if states.len() >= nb + self.tail.len() {
            &states[nb..nb + self.tail.len()]
        } else {
            &low
        };
        for k in 0..n {
            let f = self.freqs[k];
            let ((ty, h), yl) = if tail_states.is_empty() {
                (
                    (self.tail_low.ty[k], self.tail_low.h[k]),
                    Complex64::default(),
                )
            } else {
                self.tail_terms_at(tail_states, f)
            };
            let w = 2.0 * PI * f;
            self.zt[k] = self
                .network
                .transfer_tail(self.zt[k], self.y_int[k], w, ty, h);
            self.hk[k] = h;
            self.yl[k] = yl;
        }
        let ((ty, h), _) = if tail_states.is_empty() {
            (
                (self.tail_low.ty_big, self.tail_low.h_big),
                Complex64::default(),
            )
        } else {
            self.tail_terms_at(tail_states, f_big)
        };
        self.set_asymptote_tail(yb_big, ty, h);
    }

    /// Peak-to-peak at operating point `op` of the transfer last filled by
    /// [`Evaluator::fill_states`] (with at least the band's harmonics).
    pub fn pp_filled(&mut self, op: usize, band: Band) -> f64 {
        let n = match band {
            Band::Limited => self.n_limited,
            Band::Full => self.n_full,
        };
        self.load_remainder(op, band, n);
        self.pp_from_buf(n, band, op)
    }

    /// As [`Evaluator::pp_filled`] from only the first `n` harmonics of the
    /// remaining series (to judge its convergence).
    pub(crate) fn pp_filled_n(&mut self, op: usize, band: Band, n: usize) -> f64 {
        let n = n.min(self.harmonics_of(band));
        self.load_remainder(op, band, n);
        self.pp_from_buf(n, band, op)
    }

    /// Samples of one period of the exact ripple with each line at its own
    /// state, at operating point `op`, at `node` (empty for an empty bank or
    /// a non-finite figure).
    pub(crate) fn waveform_states(
        &mut self,
        bank: &Bank,
        states: &[LineState],
        band: Band,
        op: usize,
        node: Node,
    ) -> Vec<f64> {
        if self.is_empty(bank) {
            return Vec::new();
        }
        let n = self.harmonics_of(band);
        self.fill_states(bank, states, n);
        if node == Node::Converter {
            self.to_converter_node(n);
        }
        self.samples_filled(band, op)
    }

    /// Harmonic voltage phasors V_k of the target figure with each line at
    /// its own state, at operating point `op`.
    pub(crate) fn harmonic_voltages_states(
        &mut self,
        bank: &Bank,
        states: &[LineState],
        op: usize,
    ) -> Vec<Complex64> {
        self.limited_voltages(bank, op, |ev, n| ev.fill_states(bank, states, n))
    }

    /// Harmonic count of a band.
    pub(crate) fn harmonics_of(&self, band: Band) -> usize {
        match band {
            Band::Limited => self.n_limited,
            Band::Full => self.n_full,
        }
    }

    /// RMS ripple current of one capacitor of each line at operating point
    /// `op` for the transfer last filled by [`Evaluator::fill_states`] with
    /// the full harmonic set; `out[j]` is raised to it where larger.
    pub fn currents_filled(&self, bank: &Bank, states: &[LineState], op: usize, out: &mut [f64]) {
        let n = self.n_full;
        for (j, (&(i, _), st)) in bank.iter().zip(states).enumerate() {
            let esl = self.parts[i].esl;
            let mut sum = 0.0;
            for k in 0..n {
                let y = admittance(st.esr, esl, st.c, self.freqs[k]);
                // The bank's node: the measured voltage over the filter's ratio.
                let z = self.zt[k] / self.hk[k];
                sum += Network::part_current(self.currents[op][k], z, y).norm_sqr();
            }
            out[j] = out[j].max((sum / 2.0).sqrt());
        }
        // The filter's lines, when states and room for them are given.
        let nb = bank.len();
        let nt = self.tail.len();
        if nt == 0 || states.len() < nb + nt || out.len() < nb + nt {
            return;
        }
        for (t, (line, st)) in self.tail.iter().zip(&states[nb..nb + nt]).enumerate() {
            let mut sum = 0.0;
            for k in 0..n {
                let i = self.tail_part_current(line, st, k) * self.currents[op][k];
                sum += i.norm_sqr();
            }
            out[nb + t] = out[nb + t].max((sum / 2.0).sqrt());
        }
    }

    /// Current in one part of a filter line per ampere of converter current
    /// at harmonic `k`, for the transfer last filled by
    /// [`Evaluator::fill_states`] (its load-node admittance included).
    #[inline]
    fn tail_part_current(&self, line: &TailLine, st: &LineState, k: usize) -> Complex64 {
        let f = self.freqs[k];
        let v = self.zt[k];
        let n = line.count as f64;
        match line.role {
            TailRole::Load => v * admittance(st.esr, line.model.esl, st.c, f),
            TailRole::Damping { resistance } => {
                let zc = admittance(st.esr, line.model.esl, st.c, f).inv() / n;
                v * (Complex64::new(resistance, 0.0) + zc).inv() / n
            }
            TailRole::Inductor { .. } => v * self.yl[k] / n,
        }
    }

    /// Peak-to-peak ripple current of one filter inductor at operating point
    /// `op` for the transfer last filled by [`Evaluator::fill_states`] with
    /// the full harmonic set (0 without a filter). The inductor's current is
    /// smooth (the filter has removed the converter's steps), so its
    /// series converges fast; it is summed on the full grid.
    pub(crate) fn inductor_ripple_filled(
        &mut self,
        states: &[LineState],
        op: usize,
        bank_len: usize,
    ) -> f64 {
        let nt = self.tail.len();
        let Some(t) = self
            .tail
            .iter()
            .position(|l| matches!(l.role, TailRole::Inductor { .. }))
        else {
            return 0.0;
        };
        if states.len() < bank_len + nt {
            return 0.0;
        }
        let n = self.n_full;
        let half = self.plan_full.m / 2;
        let line = self.tail[t].clone();
        let st = states[bank_len + t];
        self.buf[..half].fill(Complex64::default());
        for k in 0..n {
            let v = self.tail_part_current(&line, &st, k) * self.currents[op][k];
            self.plan_full.put(&mut self.buf[..half], k + 1, v);
        }
        let buf = &mut self.buf[..half];
        self.plan_full.run(buf, &mut self.fft_scratch);
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for x in buf.iter() {
            lo = lo.min(x.re).min(x.im);
            hi = hi.max(x.re).max(x.im);
        }
        (hi - lo).max(0.0)
    }

    /// The transfer impedance last filled by [`Evaluator::fill_states`]
    /// (volts at the measured node per ampere of converter current) at the
    /// first `n` harmonics; after [`Evaluator::to_converter_node`], at the
    /// converter-side node.
    pub fn transfer_filled(&self, n: usize) -> &[Complex64] {
        &self.zt[..n.min(self.n_full)]
    }

    /// Switch the transfer last filled to the bank's (converter-side) node:
    /// afterwards [`Evaluator::pp_filled`] gives the ripple there. Without
    /// a filter nothing changes.
    pub fn to_converter_node(&mut self, n: usize) {
        if self.tail.is_empty() {
            return;
        }
        for k in 0..n.min(self.n_full) {
            self.zt[k] /= self.hk[k];
            self.hk[k] = Complex64::new(1.0, 0.0);
        }
        let (yb, ty, _) = self.big;
        self.set_asymptote_tail(yb, ty, Complex64::new(1.0, 0.0));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compact_tables_give_the_full_tables_answers() {
        // The naive reference is the full tables (every harmonic, both
        // corners); a search's compact tables compute the rest when asked
        // and must give the same figures, bit for bit where the same
        // admittance is taken.
        let (s, c) = crate::load::scenario_and_catalog(None, None).unwrap();
        let p = crate::problem::Problem::new(s, c).unwrap();
        let mut full = p.evaluator(&p.eligible);
        let mut compact = p.search_evaluator(&p.eligible);
        assert!(compact.tab_n < full.tab_n && !compact.tab_typical);
        let np = full.parts.len();
        for i in 0..np {
            for k in (0..full.n_full).step_by(7) {
                for corner in [Corner::Worst, Corner::Typical] {
                    assert_eq!(
                        full.y(i, k, corner),
                        compact.y(i, k, corner),
                        "part {i} k {k}"
                    );
                }
            }
        }
        let mut checked = 0;
        for a in 0..np {
            let b = (a * 7 + 3) % np;
            let bank: Vec<(usize, u32)> = if a == b {
                vec![(a, 3)]
            } else {
                vec![(a, 2), (b, 5)]
            };
            for corner in [Corner::Worst, Corner::Typical] {
                for band in [Band::Limited, Band::Full] {
                    let x = full.ripple_pp(&bank, corner, band);
                    let y = compact.ripple_pp(&bank, corner, band);
                    assert!(
                        (x - y).abs() <= 1e-12 * x.abs(),
                        "{bank:?} {corner:?} {band:?}: {x} vs {y}"
                    );
                }
            }
            let (x, y) = (full.part_currents(&bank), compact.part_currents(&bank));
            for (u, v) in x.iter().zip(&y) {
                assert!((u - v).abs() <= 1e-12 * u.abs(), "{bank:?}: {x:?} vs {y:?}");
            }
            checked += 1;
        }
        assert!(checked >= 10);
    }

    fn line(esl: f64, count: u32, role: TailRole) -> TailLine {
        TailLine {
            model: PartModel {
                index: 0,
                c_worst: 22e-6,
                c_typical: 22e-6,
                c_high: 22e-6,
                esr_min: 3e-3,
                esr_max: 3e-3,
                c_nominal: 22e-6,
                c_limit: 22e-6,
                esr: 3e-3,
                esl,
                cost: 0.0,
                area: 0.0,
                rating: None,
            },
            count,
            role,
        }
    }

    #[test]
    fn full_band_top_bounds_the_winding_resonance() {
        // Series resonance of C_p with the load side's inductance (any
        // circuits textbook, e.g. Hayt & Kemmerly, Engineering Circuit
        // Analysis, frequency-response chapter, from memory: f =
        // 1/(2π·sqrt(LC))); two 1.8 nH lines in
        // parallel give 0.9 nH, two inductors' 2.5 pF in parallel 5 pF.
        let tail = vec![
            line(1.8e-9, 2, TailRole::Load),
            line(0.0, 2, TailRole::Inductor { cp: 2.5e-12 }),
        ];
        let f_r = 1.0 / (2.0 * PI * (5e-12f64 * 0.9e-9).sqrt());
        let top = full_band_top(&tail).expect("a top above 500 MHz");
        assert!(
            (top / (TOP_PER_RESONANCE * f_r) - 1.0).abs() < 1e-12,
            "{top} vs {f_r}"
        );
        // Without winding capacitance, or with a resonance low enough for
        // the usual 500 MHz, nothing changes.
        let plain = vec![
            line(1.8e-9, 2, TailRole::Load),
            line(0.0, 1, TailRole::Inductor { cp: 0.0 }),
        ];
        assert_eq!(full_band_top(&plain), None);
        let slow = vec![
            line(100e-9, 1, TailRole::Load),
            line(0.0, 1, TailRole::Inductor { cp: 100e-12 }),
        ];
        assert_eq!(
            full_band_top(&slow),
            None,
            "{:?}",
            1.0 / (2.0 * PI * (1e-17f64).sqrt())
        );
    }

    #[test]
    fn harmonic_floor_holds_on_sampled_signals() {
        // Brute force: the two lower bounds of `check_filled` on many
        // signals summed directly (no FFT) at M = 8N samples, including the
        // square-wave-like worst cases for one harmonic.
        let n = 8usize;
        let m = 8 * n;
        let mut seed = 0x1234_5678_u64;
        let mut rnd = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        for case in 0..4000 {
            let v: Vec<Complex64> = (1..=n)
                .map(|k| {
                    if case % 2 == 0 {
                        Complex64::new(rnd(), rnd())
                    } else if k % 2 == 1 {
                        // Square-wave harmonics with a random phase step.
                        Complex64::from_polar(4.0 / (PI * k as f64), rnd() * 0.01 * k as f64)
                    } else {
                        Complex64::default()
                    }
                })
                .collect();
            let samples: Vec<f64> = (0..m)
                .map(|j| {
                    (1..=n)
                        .map(|k| {
                            (v[k - 1]
                                * Complex64::from_polar(1.0, 2.0 * PI * (k * j) as f64 / m as f64))
                            .re
                        })
                        .sum()
                })
                .collect();
            let pp = samples.iter().cloned().fold(f64::NEG_INFINITY, f64::max)
                - samples.iter().cloned().fold(f64::INFINITY, f64::min);
            let peak = v.iter().map(|x| x.norm()).fold(0.0, f64::max);
            let energy: f64 = v.iter().map(|x| x.norm_sqr()).sum();
            assert!(
                pp >= HARMONIC_FLOOR * peak * (1.0 - 1e-12),
                "case {case}: pp {pp} < 1.53·{peak}"
            );
            assert!(
                pp >= (2.0 * energy).sqrt() * (1.0 - 1e-12),
                "case {case}: rms bound"
            );
        }
    }

    #[test]
    fn harmonic_floor_constant_at_eight_samples_per_cycle() {
        // max over φ of (1/8) Σ_l |cos(2πl/8 + φ)| = 0.65328 (brute force over φ),
        // so 1/0.65328 = 1.5307 ≥ HARMONIC_FLOOR.
        let best = (0..100_000)
            .map(|i| {
                let phi = i as f64 / 100_000.0 * PI / 4.0;
                (0..8)
                    .map(|l| (2.0 * PI * l as f64 / 8.0 + phi).cos().abs())
                    .sum::<f64>()
                    / 8.0
            })
            .fold(0.0, f64::max);
        assert!((best - 0.653281).abs() < 1e-5, "{best}");
        assert!(1.0 / best >= HARMONIC_FLOOR);
    }

    #[test]
    fn series_rlc_minimum_is_esr_at_resonance() {
        // Series RLC: |Z| is smallest, and equals R, at f0 = 1/(2π√(LC))
        // (any circuits text, e.g. Hayt & Kemmerly, Engineering Circuit
        // Analysis, series resonance).
        let (r, l, c): (f64, f64, f64) = (5e-3, 0.8e-9, 22e-6);
        let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
        let z0 = admittance(r, l, c, f0).inv();
        assert!((z0.norm() - r).abs() < 1e-9 * r);
        for fac in [0.9, 0.99, 1.01, 1.1] {
            assert!(admittance(r, l, c, f0 * fac).inv().norm() > r);
        }
    }
}
