//! The closed-form part of the exact ripple waveform.
//!
//! The voltage at the measured node is `v = z * i` (a convolution), with
//! `z` the network's transfer impedance and `i` the converter's
//! piecewise-linear current. At high frequency every transfer impedance of
//! the output network tends to `a0 + jω·a1` (a resistance and an
//! inductance: the parts' ESR and ESL in parallel). Splitting `Z = a0 +
//! jω·a1 + Z_rem` gives
//!
//! `v(t) = H * (a0·i + a1·i')  +  Σ_k Re(H_k · Z_rem,k · I_k · e^{jkωt})`
//!
//! where `H` is the measurement bandwidth's low-pass filter. The first term
//! is computed here exactly in the time domain: `i` is piecewise linear, so
//! `i'` is piecewise constant with jumps (and impulses where `i` jumps), and
//! the periodic response of a cascade of first-order low-pass sections to
//! such an input is the exact solution of a linear ODE on each piece. The
//! remaining series has coefficients that fall at least as `1/k³`, so its
//! truncation is negligible and has no Gibbs overshoot. The ESL steps that
//! a truncated Fourier series rings at are all in the first term. This is
//! the Krylov–Lanczos treatment of a Fourier series with known
//! discontinuities (Lanczos, *Discourse on Fourier Series*, ch. 1).
//!
//! The responses are sampled on the inverse FFT's uniform grid and, at every
//! breakpoint of the current, on both sides of it, so that the peaks of
//! steps are not missed between grid points.

use crate::converter::Waveform;

/// Both sides of one breakpoint of the current.
#[derive(Debug, Clone, PartialEq)]
pub struct Break {
    /// Position in grid samples, `t / T · m`, in `[0, m)`.
    pub pos: f64,
    /// Filtered current just before and just after the breakpoint.
    pub g0: [f64; 2],
    /// Filtered derivative of the current just before and after.
    pub g1: [f64; 2],
}

/// The filtered current `H * i` and its filtered derivative `H * i'` over
/// one period, sampled at `m` uniform instants `t_j = j·T/m` and at the
/// breakpoints.
#[derive(Debug, Clone, PartialEq)]
pub struct Closed {
    /// `(H * i)(t_j)`.
    pub g0: Vec<f64>,
    /// `(H * i')(t_j)`.
    pub g1: Vec<f64>,
    /// Both sides of every breakpoint.
    pub breaks: Vec<Break>,
    /// The current jumps, so that `i'` holds impulses: unbounded without a
    /// filter (`order = 0`).
    pub impulsive: bool,
}

/// A small dense matrix, row-major.
#[derive(Clone)]
struct Mat {
    n: usize,
    a: Vec<f64>,
}

impl Mat {
    fn zeros(n: usize) -> Mat {
        Mat {
            n,
            a: vec![0.0; n * n],
        }
    }
    fn identity(n: usize) -> Mat {
        let mut m = Mat::zeros(n);
        for i in 0..n {
            m.a[i * n + i] = 1.0;
        }
        m
    }
    fn mul(&self, o: &Mat) -> Mat {
        let n = self.n;
        let mut r = Mat::zeros(n);
        for i in 0..n {
            for k in 0..n {
                let x = self.a[i * n + k];
                if x == 0.0 {
                    continue;
                }
                for j in 0..n {
                    r.a[i * n + j] += x * o.a[k * n + j];
                }
            }
        }
        r
    }
    fn apply(&self, v: &[f64], out: &mut [f64]) {
        let n = self.n;
        for i in 0..n {
            out[i] = (0..n).map(|j| self.a[i * n + j] * v[j]).sum();
        }
    }
    /// exp(self · h) by scaling and squaring of a Taylor series.
    fn exp_scaled(&self, h: f64) -> Mat {
        let n = self.n;
        let norm = self.a.iter().map(|x| x.abs()).fold(0.0, f64::max) * n as f64 * h.abs();
        let mut s = 0;
        while norm / f64::powi(2.0, s) > 0.5 {
            s += 1;
        }
        let scale = h / f64::powi(2.0, s);
        let mut x = Mat::zeros(n);
        for (d, a) in x.a.iter_mut().zip(&self.a) {
            *d = a * scale;
        }
        // Taylor to degree 16: error below 0.5^17/17! relative.
        let mut term = Mat::identity(n);
        let mut sum = Mat::identity(n);
        for k in 1..=16 {
            term = term.mul(&x);
            let f = 1.0 / k as f64;
            term.a.iter_mut().for_each(|t| *t *= f);
            for (s_, t) in sum.a.iter_mut().zip(&term.a) {
                *s_ += t;
            }
        }
        for _ in 0..s {
            sum = sum.mul(&sum);
        }
        sum
    }
}

/// Solve `a · x = b` (Gaussian elimination with partial pivoting).
fn solve(mut a: Mat, mut b: Vec<f64>) -> Vec<f64> {
    let n = a.n;
    for c in 0..n {
        let p = (c..n)
            .max_by(|&x, &y| a.a[x * n + c].abs().total_cmp(&a.a[y * n + c].abs()))
            .unwrap_or(c);
        if p != c {
            for j in 0..n {
                a.a.swap(c * n + j, p * n + j);
            }
            b.swap(c, p);
        }
        let d = a.a[c * n + c];
        for r in c + 1..n {
            let f = a.a[r * n + c] / d;
            if f == 0.0 {
                continue;
            }
            for j in c..n {
                a.a[r * n + j] -= f * a.a[c * n + j];
            }
            b[r] -= f * b[c];
        }
    }
    let mut x = vec![0.0; n];
    for r in (0..n).rev() {
        let s: f64 = (r + 1..n).map(|j| a.a[r * n + j] * x[j]).sum();
        x[r] = (b[r] - s) / a.a[r * n + r];
    }
    x
}

/// One piece of the input between two events: `u(t0 + s) = u0 + slope·s`.
#[derive(Clone, Copy)]
struct Piece {
    u0: f64,
    slope: f64,
}

/// The events of one period in the window `[t0, t0 + T)`: grid instants
/// and breakpoints, in time order.
#[derive(Clone, Copy, Debug)]
enum Event {
    Grid(usize),
    /// Vertex `v` of the waveform (a jump is two vertices at one time).
    Vertex(usize),
}

/// The periodic responses of an `order`-section low-pass (time constant
/// `tau`; order 0 means no filter) to `i` and to `i'`, on an `m`-point grid.
pub fn closed(w: &Waveform, order: u32, tau: f64, m: usize) -> Closed {
    let period = w.period;
    let pts = &w.points;
    let nv = pts.len();
    let t0 = pts[0].0;
    // Vertex times unwrapped into [t0, t0 + T).
    let vt: Vec<f64> = pts.iter().map(|p| p.0).collect();
    let seg_end = |v: usize| -> (f64, f64) {
        if v + 1 < nv {
            pts[v + 1]
        } else {
            (t0 + period, pts[0].1)
        }
    };
    // Segment v runs from vertex v to vertex v+1 (or the first, shifted).
    let slope_of = |v: usize| -> f64 {
        let (ta, va) = pts[v];
        let (tb, vb) = seg_end(v);
        if tb > ta {
            (vb - va) / (tb - ta)
        } else {
            0.0
        }
    };
    let prev = |v: usize| (v + nv - 1) % nv;
    // A zero-length segment from v to the next vertex: a jump.
    let jump_after = |v: usize| seg_end(v).0 <= pts[v].0;
    let impulsive = (0..nv).any(|v| jump_after(v) && seg_end(v).1 != pts[v].1);
    // Breakpoints: runs of vertices joined by jumps, as (first, last).
    let mut groups: Vec<(usize, usize)> = Vec::new();
    for v in 0..nv {
        if nv > 1 && jump_after(prev(v)) {
            continue;
        }
        let mut last = v;
        let mut guard = 0;
        while jump_after(last) && guard < nv {
            last = (last + 1) % nv;
            guard += 1;
        }
        groups.push((v, last));
    }
    let mut events: Vec<(f64, Event)> = Vec::with_capacity(m + nv);
    for j in 0..m {
        let t = j as f64 * period / m as f64;
        let tw = t0 + (t - t0).rem_euclid(period);
        events.push((tw, Event::Grid(j)));
    }
    for (v, &t) in vt.iter().enumerate() {
        events.push((t, Event::Vertex(v)));
    }
    // Vertices before grid points at the same instant, so that a grid
    // point on a breakpoint takes the value after it.
    events.sort_by(|a, b| {
        a.0.total_cmp(&b.0).then_with(|| match (a.1, b.1) {
            (Event::Vertex(x), Event::Vertex(y)) => x.cmp(&y),
            (Event::Vertex(_), Event::Grid(_)) => std::cmp::Ordering::Less,
            (Event::Grid(_), Event::Vertex(_)) => std::cmp::Ordering::Greater,
            (Event::Grid(x), Event::Grid(y)) => x.cmp(&y),
        })
    });
    let pos_of = |t: f64| -> f64 { (t.rem_euclid(period) / period * m as f64) % m as f64 };

    // Order 0: the current and its slope themselves.
    if order == 0 {
        let mut g0 = vec![0.0; m];
        let mut g1 = vec![0.0; m];
        for (j, (x0, x1)) in g0.iter_mut().zip(g1.iter_mut()).enumerate() {
            let t = j as f64 * period / m as f64;
            *x0 = w.at(t);
            let tw = t0 + (t - t0).rem_euclid(period);
            // The segment containing tw (the last vertex at or before it).
            let v = vt.iter().rposition(|&x| x <= tw).unwrap_or(0);
            *x1 = slope_of(v);
        }
        let breaks = groups
            .iter()
            .map(|&(first, last)| Break {
                pos: pos_of(pts[first].0),
                g0: [pts[first].1, pts[last].1],
                g1: [slope_of(prev(first)), slope_of(last)],
            })
            .collect();
        return Closed {
            g0,
            g1,
            breaks,
            impulsive,
        };
    }

    // The filter: n first-order sections in cascade, time in units of tau.
    let n = order as usize;
    let dim = n + 2;
    let mut mtx = Mat::zeros(dim);
    for i in 0..n {
        mtx.a[i * dim + i] = -1.0;
        let src = if i == 0 { n } else { i - 1 };
        mtx.a[i * dim + src] = 1.0;
    }
    mtx.a[n * dim + n + 1] = 1.0; // u' = slope (per tau)
    let grid_step = period / m as f64 / tau;
    let e_grid = mtx.exp_scaled(grid_step);
    let mut out = Closed {
        g0: vec![0.0; m],
        g1: vec![0.0; m],
        breaks: Vec::new(),
        impulsive,
    };
    let mut sides = vec![([0.0; 2], [0.0; 2]); nv];
    for which in 0..2 {
        // The input on each segment: i (which = 0) or i' (which = 1).
        let piece = |v: usize, t: f64| -> Piece {
            let s = slope_of(v);
            if which == 0 {
                let (ta, va) = pts[v];
                Piece {
                    u0: va + s * (t - ta),
                    slope: s * tau,
                }
            } else {
                Piece { u0: s, slope: 0.0 }
            }
        };
        let advance = |x: &mut [f64], v: usize, t: f64, h: f64, z: &mut [f64], zn: &mut [f64]| {
            let p = piece(v, t);
            z[..n].copy_from_slice(x);
            z[n] = p.u0;
            z[n + 1] = p.slope;
            if (h - grid_step).abs() <= 1e-9 * grid_step {
                e_grid.apply(z, zn);
            } else {
                mtx.exp_scaled(h).apply(z, zn);
            }
            x.copy_from_slice(&zn[..n]);
        };
        // Run one period from state x0 (the state at t0, before any
        // impulse there), calling `record` at each event.
        let run = |x0: &[f64], record: &mut dyn FnMut(Event, &[f64], &[f64])| -> Vec<f64> {
            let mut x = x0.to_vec();
            let mut z = vec![0.0; dim];
            let mut zn = vec![0.0; dim];
            let mut t = t0;
            let mut v = 0usize;
            for &(te, ev) in &events {
                let h = (te - t) / tau;
                if h > 0.0 {
                    advance(&mut x, v, t, h, &mut z, &mut zn);
                    t = te;
                }
                match ev {
                    Event::Grid(_) => record(ev, &x, &x),
                    Event::Vertex(vv) => {
                        let before = x.clone();
                        let p = prev(vv);
                        if which == 1 && nv > 1 && jump_after(p) {
                            // Far end of a jump: i' holds an impulse of the
                            // jump's size J, which moves the first state by J/τ.
                            x[0] += (pts[vv].1 - pts[p].1) / tau;
                        }
                        v = vv;
                        record(ev, &before, &x);
                    }
                }
            }
            let h = (t0 + period - t) / tau;
            if h > 0.0 {
                advance(&mut x, v, t, h, &mut z, &mut zn);
            }
            x
        };
        // Periodic steady state: x(T) = Φ·x0 + forced = x0.
        let forced = run(&vec![0.0; n], &mut |_, _, _| {});
        let mut a_mat = Mat::zeros(n);
        for i in 0..n {
            for j in 0..n {
                a_mat.a[i * n + j] = mtx.a[i * dim + j];
            }
        }
        let phi = a_mat.exp_scaled(period / tau);
        let mut lhs = Mat::identity(n);
        for (l, p) in lhs.a.iter_mut().zip(&phi.a) {
            *l -= p;
        }
        let x0 = solve(lhs, forced);
        let g = if which == 0 { &mut out.g0 } else { &mut out.g1 };
        run(&x0, &mut |ev, before, after| match ev {
            Event::Grid(j) => g[j] = after[n - 1],
            Event::Vertex(v) => {
                let side = if which == 0 {
                    &mut sides[v].0
                } else {
                    &mut sides[v].1
                };
                *side = [before[n - 1], after[n - 1]];
            }
        });
    }
    out.breaks = groups
        .iter()
        .map(|&(first, last)| Break {
            pos: pos_of(pts[first].0),
            g0: [sides[first].0[0], sides[last].0[1]],
            g1: [sides[first].1[0], sides[last].1[1]],
        })
        .collect();
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spectrum;
    use num_complex::Complex64;
    use std::f64::consts::PI;

    fn tri(d: f64) -> Waveform {
        Waveform {
            period: 1e-6,
            points: vec![(0.0, -0.5), (d * 1e-6, 0.5)],
        }
    }

    /// Direct Fourier sum of H_k · (jω_k)^p · I_k at time t, many harmonics.
    fn fourier(w: &Waveform, order: u32, tau: f64, p: i32, t: f64, n: usize) -> f64 {
        let h = spectrum::harmonics(w, n);
        let w0 = 2.0 * PI / w.period;
        h.iter()
            .enumerate()
            .map(|(k, ik)| {
                let om = w0 * (k + 1) as f64;
                let hk = Complex64::new(1.0, om * tau).powi(-(order as i32));
                let d = Complex64::new(0.0, om).powi(p);
                (ik * hk * d * Complex64::from_polar(1.0, om * t)).re
            })
            .sum()
    }

    #[test]
    fn filtered_triangle_matches_a_long_fourier_sum() {
        // Reference: the Fourier series of the filtered waveform summed to
        // 20,000 harmonics (converges as 1/k³ for H·I and 1/k² for H·jω·I
        // with a first-order filter), against the exact time-domain solution.
        let w = tri(0.3);
        let tau = 1.0 / (2.0 * PI * 20e6);
        for order in [1u32, 2] {
            let c = closed(&w, order, tau, 64);
            let mean = w.mean();
            // Instants away from the breakpoints (t = 0 and 0.3 µs), where the
            // central difference is accurate.
            for j in [7usize, 13, 30, 40, 50, 60] {
                let t = j as f64 * 1e-6 / 64.0;
                let f0 = fourier(&w, order, tau, 0, t, 20_000) + mean;
                // g1 = (H * i)' : a central difference of the reference.
                let dt = 1e-10;
                let f1 = (fourier(&w, order, tau, 0, t + dt, 20_000)
                    - fourier(&w, order, tau, 0, t - dt, 20_000))
                    / (2.0 * dt);
                assert!(
                    (c.g0[j] - f0).abs() < 1e-5,
                    "order {order} j {j}: {} vs {f0}",
                    c.g0[j]
                );
                // i' swings ±1/(0.3 µs) and ±1/(0.7 µs): about 3.3e6 A/s.
                assert!(
                    (c.g1[j] - f1).abs() < 1e-4 * 3.3e6,
                    "order {order} j {j}: {} vs {f1}",
                    c.g1[j]
                );
            }
        }
    }

    #[test]
    fn unfiltered_slope_and_breakpoints() {
        let w = tri(0.25);
        let c = closed(&w, 0, 1.0, 8);
        // Rising 1 A in 0.25 µs, falling in 0.75 µs.
        assert!((c.g1[0] - 4e6).abs() < 1e-3);
        assert!((c.g1[4] + 1e6 / 0.75).abs() < 1e-3);
        assert_eq!(c.breaks.len(), 2);
        assert!((c.breaks[1].pos - 2.0).abs() < 1e-12);
        assert!((c.breaks[1].g1[0] - 4e6).abs() < 1e-3);
        assert!(!c.impulsive);
    }

    #[test]
    fn impulse_of_a_jump_through_one_section() {
        // A square wave ±1 through one RC section: the response of i' is
        // the sum of impulse responses 2/τ·e^{−t/τ} per jump; periodic
        // steady state of the first-order section (closed form).
        let w = Waveform {
            period: 1.0,
            points: vec![(0.0, 1.0), (0.5, 1.0), (0.5, -1.0), (1.0, -1.0)],
        };
        let tau = 0.1;
        let c = closed(&w, 1, tau, 100);
        assert!(c.impulsive);
        // Just after the jump up at t = 0: y = (2/τ)/(1 + e^{−T/2τ}).
        let want = 2.0 / tau / (1.0 + (-0.5 / tau).exp());
        assert!(
            (c.g1[0] - want).abs() < 1e-9 * want,
            "{} vs {want}",
            c.g1[0]
        );
        // The response to i itself: periodic charging, at t = T/2⁻:
        // 1 − 2e^{−T/2τ}/(1 + e^{−T/2τ}).
        let b = c
            .breaks
            .iter()
            .find(|b| (b.pos - 50.0).abs() < 1e-9)
            .unwrap();
        let e = (-0.5 / tau).exp();
        let want0 = 1.0 - 2.0 * e / (1.0 + e);
        assert!((b.g0[0] - want0).abs() < 1e-9, "{} vs {want0}", b.g0[0]);
    }
}
