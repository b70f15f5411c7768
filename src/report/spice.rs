//! SPICE netlist of a bank and the converter's current (`bank.cir`), for
//! checking the evaluator with an independent circuit simulator. Written for
//! ngspice in batch mode (`ngspice -b bank.cir`); plain SPICE elements only.
//!
//! The circuit: the capacitor current of one vin corner as a periodic
//! piecewise-linear source into the converter's node, the converter's
//! internal capacitance there, the connection inductance to the bank's node,
//! one series R-L-C branch per bank line (worst-corner capacitance), a large
//! resistor that only fixes the DC level, and the measurement-bandwidth
//! filter as first-order RC sections between unity-gain buffers.
//!
//! Measurements (`.meas tran`, volts): `pp_full` at the bank's node and
//! `pp_limited` after the bandwidth filter, over the last
//! [`MEASURE_PERIODS`] periods; `pp_full_prev` and `pp_limited_prev` over the
//! periods just before, so that a reader can see that the run has settled.

use crate::converter::{OperatingPoint, Waveform};
use crate::evaluator::{Band, LineState};
use crate::network::{admittance, Network};
use crate::problem::Problem;
use anyhow::{bail, Result};
use num_complex::Complex64;
use std::f64::consts::PI;
use std::fmt::Write;

/// Periods in each measurement window.
pub const MEASURE_PERIODS: usize = 3;
/// Longest run, in periods of the ripple frequency.
pub const MAX_PERIODS: usize = 200;
/// Settling allowance in multiples of the slowest decay time (e^-12 ≈ 6e-6).
const SETTLE_TAUS: f64 = 12.0;
/// Timepoints per period at most apart (`.tran` TMAX = period / this).
const STEPS_PER_PERIOD: f64 = 2000.0;
/// Resistance of each bandwidth-filter section, Ω.
const FILTER_R: f64 = 1e3;

/// Frequency sweep of an impedance netlist.
#[derive(Debug, Clone, Copy)]
pub enum Sweep {
    /// `points` frequencies evenly spaced from `start` to `stop` (Hz), both included.
    Linear {
        /// Number of frequencies.
        points: usize,
        /// First frequency, Hz.
        start: f64,
        /// Last frequency, Hz.
        stop: f64,
    },
    /// `per_decade` frequencies per decade from `start` to `stop` (Hz).
    Decade {
        /// Frequencies per decade.
        per_decade: usize,
        /// First frequency, Hz.
        start: f64,
        /// Last frequency, Hz.
        stop: f64,
    },
}

/// One series R-L-C branch as written to the netlist.
struct Branch {
    label: String,
    r: f64,
    l: f64,
    c: f64,
}

/// The circuit shared by the transient and the impedance netlists.
struct Circuit {
    /// Branches at the bank's node (one per bank line, counts folded in).
    bank: Vec<Branch>,
    internal: Option<Branch>,
    lc: f64,
    /// The same circuit as the evaluator sees it.
    network: Network,
}

/// Number formatting that every SPICE reads the same way (no SI suffixes,
/// which SPICE reads differently: `m` is milli, `M` too).
fn num(x: f64) -> String {
    format!("{x:.10e}")
}

/// The circuit with every line at the `low` corner, or at the given states
/// (one per line with a count above zero, in order).
fn circuit(
    problem: &Problem,
    bank: &[(usize, u32)],
    states: Option<&[LineState]>,
) -> Result<Circuit> {
    let s = &problem.scenario;
    let mut lines = Vec::new();
    for (j, &(i, n)) in bank.iter().filter(|b| b.1 > 0).enumerate() {
        if i >= problem.catalog.parts.len() {
            bail!("bank.cir: catalog index {i} is out of range");
        }
        let mut m = problem.part_model(i);
        m.esr = m.esr_max;
        if let Some(st) = states.and_then(|s| s.get(j)) {
            m.c_worst = st.c;
            m.esr = st.esr;
        }
        let p = &problem.catalog.parts[i];
        let nf = n as f64;
        lines.push(Branch {
            label: format!(
                "{} x {} ({}): per part C = {} F, ESR = {} ohm (worst point of the corner region found), ESL + mounting = {} H",
                p.id,
                n,
                p.technology.name(),
                num(m.c_worst),
                num(m.esr),
                num(m.esl)
            ),
            r: m.esr / nf,
            l: m.esl / nf,
            c: m.c_worst * nf,
        });
    }
    let network = Network::from_scenario(s);
    let internal = network.internal.map(|b| Branch {
        label: format!(
            "converter's internal capacitance: C = {} F, ESR = {} ohm, ESL = {} H",
            num(b.c),
            num(b.esr),
            num(b.esl)
        ),
        r: b.esr,
        l: b.esl,
        c: b.c,
    });
    if lines.is_empty() && internal.is_none() {
        bail!("bank.cir: the bank is empty and the converter has no internal capacitance");
    }
    Ok(Circuit {
        bank: lines,
        internal,
        lc: network.connection_inductance,
        network,
    })
}

impl Circuit {
    /// Admittance of the whole bank (added and internal) seen from the bank's node.
    fn y_total(&self, f: f64) -> Complex64 {
        let y: Complex64 = self.bank.iter().map(|b| admittance(b.r, b.l, b.c, f)).sum();
        y + self.network.internal_at_bank(f)
    }

    /// Slowest decay time of the bank's own modes (charge moving between
    /// branches), estimated from every series loop of two branches and of
    /// each branch against all the others in parallel. Exact for two
    /// branches; an estimate (hence the generous [`SETTLE_TAUS`]) beyond.
    fn slowest_decay(&self) -> f64 {
        let mut br: Vec<(f64, f64, f64)> = self.bank.iter().map(|b| (b.r, b.l, b.c)).collect();
        if let Some(b) = &self.internal {
            br.push((b.r, b.l + self.lc, b.c));
        }
        let loop_tau = |(r, l, c): (f64, f64, f64)| -> f64 {
            // L s² + R s + 1/C = 0; the slower root.
            if l <= 0.0 {
                return r * c;
            }
            let disc = r * r - 4.0 * l / c;
            if disc < 0.0 {
                if r > 0.0 {
                    2.0 * l / r
                } else {
                    f64::INFINITY
                }
            } else {
                c * (r + disc.sqrt()) / 2.0
            }
        };
        let series = |a: (f64, f64, f64), b: (f64, f64, f64)| {
            (a.0 + b.0, a.1 + b.1, a.2 * b.2 / (a.2 + b.2))
        };
        let mut tau: f64 = 0.0;
        let n = br.len();
        for i in 0..n {
            for j in i + 1..n {
                tau = tau.max(loop_tau(series(br[i], br[j])));
            }
            if n > 2 {
                let others: Vec<_> = (0..n).filter(|&j| j != i).map(|j| br[j]).collect();
                let par = |v: Vec<f64>| -> f64 {
                    if v.iter().any(|&x| x <= 0.0) {
                        0.0
                    } else {
                        1.0 / v.iter().map(|x| 1.0 / x).sum::<f64>()
                    }
                };
                let rest = (
                    par(others.iter().map(|b| b.0).collect()),
                    par(others.iter().map(|b| b.1).collect()),
                    others.iter().map(|b| b.2).sum::<f64>(),
                );
                tau = tau.max(loop_tau(series(br[i], rest)));
            }
        }
        tau
    }

    /// Elements of the circuit between the converter's node `conv` and the
    /// bank's node `bank` (the same node without connection inductance).
    fn write(&self, o: &mut String) -> (&'static str, &'static str) {
        let (conv, bank) = if self.lc > 0.0 {
            ("conv", "bank")
        } else {
            ("bank", "bank")
        };
        let _ = writeln!(
            o,
            "* Each bank line is one series R-L-C branch: n identical parts in parallel are"
        );
        let _ = writeln!(
            o,
            "* exactly one branch with ESR/n, ESL/n and C*n. ESL includes the board's mounting"
        );
        let _ = writeln!(
            o,
            "* inductance. Elements of zero value are left out (their nodes joined)."
        );
        for (j, b) in self.bank.iter().enumerate() {
            let _ = writeln!(o, "* line {}: {}", j + 1, b.label);
            series_rlc(o, &format!("{}", j + 1), bank, b);
        }
        if let Some(b) = &self.internal {
            let _ = writeln!(o, "* {}", b.label);
            series_rlc(o, "int", conv, b);
        }
        if self.lc > 0.0 {
            let _ = writeln!(
                o,
                "* connection inductance between the converter's output and the bank"
            );
            let _ = writeln!(o, "Lconn conv bank {}", num(self.lc));
        } else {
            let _ = writeln!(
                o,
                "* no connection inductance: the converter drives the bank's node directly"
            );
        }
        (conv, bank)
    }
}

/// R, L and C of one branch in series from `node` to ground.
fn series_rlc(o: &mut String, tag: &str, node: &str, b: &Branch) {
    let mut from = node.to_string();
    if b.r > 0.0 {
        let to = format!("n{tag}a");
        let _ = writeln!(o, "R{tag} {from} {to} {}", num(b.r));
        from = to;
    }
    if b.l > 0.0 {
        let to = format!("n{tag}b");
        let _ = writeln!(o, "L{tag} {from} {to} {}", num(b.l));
        from = to;
    }
    let _ = writeln!(o, "C{tag} {from} 0 {}", num(b.c));
}

/// The measurement-bandwidth filter from `bank` to `out`: a unity-gain
/// buffer, then `order` first-order RC sections each followed by a buffer,
/// so that H = (1 + j f / bandwidth)^-order exactly. Returns the output node.
fn write_filter(o: &mut String, bank: &str, bw: f64, order: u32) -> String {
    let cf = 1.0 / (2.0 * PI * FILTER_R * bw);
    let _ = writeln!(
        o,
        "* measurement bandwidth {} Hz, order {order}: first-order RC sections",
        num(bw)
    );
    let _ = writeln!(
        o,
        "* (R = {} ohm, C = 1/(2 pi R bandwidth)) between unity-gain buffers",
        num(FILTER_R)
    );
    let _ = writeln!(o, "Ebuf0 f0 0 {bank} 0 1");
    let mut prev = "f0".to_string();
    for k in 1..=order {
        let _ = writeln!(o, "Rf{k} {prev} f{k}rc {}", num(FILTER_R));
        let _ = writeln!(o, "Cf{k} f{k}rc 0 {}", num(cf));
        let _ = writeln!(o, "Ebuf{k} f{k} 0 f{k}rc 0 1");
        prev = format!("f{k}");
    }
    prev
}

fn header(o: &mut String, problem: &Problem, what: &str) {
    let s = &problem.scenario;
    let name = if s.name.is_empty() {
        s.source.as_str()
    } else {
        s.name.as_str()
    };
    let _ = writeln!(
        o,
        "* {what} - scenario: {}",
        name.replace(['\n', '\r'], " ")
    );
    let _ = writeln!(
        o,
        "* Written by ripplebank {}. Run: ngspice -b bank.cir",
        env!("CARGO_PKG_VERSION")
    );
    let _ = writeln!(o, "* Units: SI base units (F, ohm, H, A, V, s, Hz).");
    let _ = writeln!(
        o,
        "* Capacitances: worst corner C = C_nom (1 - tol) k_bias(vout) (1 - drop_T)."
    );
}

/// The converter's current of one corner prepared for the netlist: jumps
/// made into short ramps, mean removed, and rotated to start at a zero
/// crossing (so the DC operating point at t = 0 is all zero).
fn source_points(w: &Waveform, min_ramp: f64) -> (Vec<(f64, f64)>, f64) {
    let t = w.period;
    let has_jump = w.segments().any(|((ta, _), (tb, _))| tb - ta <= 0.0);
    let w = if has_jump {
        w.with_edges(min_ramp)
    } else {
        w.clone()
    };
    let mean = w.mean();
    let pts: Vec<(f64, f64)> = w.points.iter().map(|&(ti, v)| (ti, v - mean)).collect();
    // Unrolled over [t0, t0 + T] with the closing vertex.
    let n = pts.len();
    let mut un: Vec<(f64, f64)> = pts.clone();
    un.push((pts[0].0 + t, pts[0].1));
    // First zero crossing.
    let mut start = None;
    for i in 0..n {
        let ((ta, va), (tb, vb)) = (un[i], un[i + 1]);
        if va == 0.0 {
            start = Some(ta);
            break;
        }
        if (va < 0.0 && vb >= 0.0) || (va > 0.0 && vb <= 0.0) {
            start = Some(if tb > ta {
                ta + (tb - ta) * (-va) / (vb - va)
            } else {
                tb
            });
            break;
        }
    }
    let t0 = start.unwrap_or(pts[0].0);
    let at = |x: f64| -> f64 {
        let x = pts[0].0 + (x - pts[0].0).rem_euclid(t);
        for i in 0..n {
            let ((ta, va), (tb, vb)) = (un[i], un[i + 1]);
            if x >= ta && x <= tb && tb > ta {
                return va + (vb - va) * (x - ta) / (tb - ta);
            }
        }
        un[0].1
    };
    let v0 = at(t0);
    let mut out = vec![(0.0, v0)];
    let eps = 1e-9 * t;
    for k in 0..2 {
        for &(ti, v) in &pts {
            let tt = ti + k as f64 * t - t0;
            if tt > eps && tt < t - eps {
                out.push((tt, v));
            }
        }
    }
    out.sort_by(|a, b| a.0.total_cmp(&b.0));
    out.push((t, v0));
    // Strictly increasing times (a safety net; ramps already separate jumps).
    for i in 1..out.len() {
        if out[i].0 <= out[i - 1].0 {
            out[i].0 = out[i - 1].0 + eps;
        }
    }
    (out, mean)
}

/// What the transient netlist shows: the worst point of the corner region
/// (target bandwidth) as the evaluator found it, the converter's current
/// there prepared as a source, and the run length.
struct Transient {
    /// The operating point of the worst point.
    op: OperatingPoint,
    /// The evaluator's figures there, V: at the target bandwidth and at full bandwidth.
    limited: f64,
    full: f64,
    /// Harmonics of the two figures.
    n_limited: usize,
    n_full: usize,
    /// The source's vertices over one period and the mean removed, A.
    points: Vec<(f64, f64)>,
    mean: f64,
    /// Length of the ramps that replace current jumps, s.
    min_ramp: f64,
    /// Slowest decay of the bank's own modes (estimate), s.
    tau: f64,
    /// Periods needed to settle, and periods run.
    settle: usize,
    total: usize,
}

impl Transient {
    /// The worst point of the corner region for a bank (zero counts
    /// dropped) and the circuit with every line's capacitance and ESR there.
    fn new(problem: &Problem, bank: &[(usize, u32)]) -> Result<(Transient, Circuit)> {
        let bank: Vec<(usize, u32)> = bank.iter().copied().filter(|b| b.1 > 0).collect();
        let parts: Vec<usize> = bank.iter().map(|b| b.0).collect();
        let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
        let mut ev = problem.evaluator(&parts);
        // The worst point of the corner region (target bandwidth): its input
        // voltage, inductance and each line's capacitance and ESR.
        let w = crate::region::worst(problem, &mut ev, &local, Band::Limited);
        let ckt = circuit(problem, &bank, Some(&w.states))?;
        let full = crate::region::value_at(&mut ev, &local, &w.states, w.op, Band::Full);
        let op = ev.ops[w.op].clone();
        let period = op.waveform.period;
        let f_top = ev.n_full as f64 * ev.f_ripple;
        let min_ramp = (0.1 / f_top).min(1e-3 * period);
        let (points, mean) = source_points(&op.waveform, min_ramp);
        let tau = ckt.slowest_decay();
        let settle = if tau.is_finite() {
            (SETTLE_TAUS * tau / period).ceil() as usize
        } else {
            MAX_PERIODS
        };
        let total = (settle + 2 * MEASURE_PERIODS).clamp(4 * MEASURE_PERIODS, MAX_PERIODS);
        let run = Transient {
            op,
            limited: w.value,
            full,
            n_limited: ev.n_limited,
            n_full: ev.n_full,
            points,
            mean,
            min_ramp,
            tau,
            settle,
            total,
        };
        Ok((run, ckt))
    }

    fn period(&self) -> f64 {
        self.op.waveform.period
    }

    /// Comments on the point shown: input voltage, converter, the evaluator's figures.
    fn write_point(&self, o: &mut String, problem: &Problem) {
        let op = &self.op;
        match op.vin {
            Some(v) => {
                let _ = writeln!(o, "* vin: {} V, inductance {} H (the worst point of the corner region per the evaluator)", v, op.inductance.map_or("-".to_string(), num));
            }
            None => {
                let _ = writeln!(o, "* vin: not given (one corner)");
            }
        }
        let _ = writeln!(
            o,
            "* converter: {}, ripple frequency {} Hz, duty {:.6}{}",
            problem.scenario.converter.topology.name(),
            num(op.f_ripple),
            op.duty,
            if op.mode.is_empty() {
                String::new()
            } else {
                format!(", {}", op.mode)
            }
        );
        let _ = writeln!(
            o,
            "* evaluator at this point: ripple_pp {} V at the target bandwidth, {} V at full bandwidth",
            num(self.limited),
            num(self.full)
        );
        let _ = writeln!(o, "*   ({} and {} harmonics)", self.n_limited, self.n_full);
        let _ = writeln!(o);
    }

    /// The converter's current into node `conv`: a piecewise-linear source
    /// written out over the whole run.
    fn write_source(&self, o: &mut String, conv: &str) {
        let total = self.total;
        let period = self.period();
        let _ = writeln!(o);
        let _ = writeln!(
            o,
            "* Capacitor current of the converter (into the bank > 0), {total} periods written out"
        );
        let _ = writeln!(
            o,
            "* (every corner is then a breakpoint of the simulator; a repeat option is not relied on)."
        );
        let _ = writeln!(
            o,
            "* mean {} A removed (DC does not reach a capacitor bank); starts at a zero crossing.",
            num(self.mean)
        );
        if self
            .op
            .waveform
            .segments()
            .any(|((ta, _), (tb, _))| tb - ta <= 0.0)
        {
            let _ = writeln!(
                o,
                "* current jumps are ramps of {} s (a tenth of the highest harmonic's period).",
                num(self.min_ramp)
            );
        }
        let _ = write!(o, "Idrive 0 {conv} PWL(");
        let mut k = 0usize;
        for p in 0..total {
            for (j, &(t, v)) in self.points.iter().enumerate() {
                if p > 0 && j == 0 {
                    continue;
                }
                if k.is_multiple_of(4) {
                    let _ = write!(o, "\n+ ");
                }
                k += 1;
                let _ = write!(o, "{:.12e} {} ", t + p as f64 * period, num(v));
            }
        }
        let _ = writeln!(o, ")");
    }

    /// The run (`.options`, `.tran`) and the four `.meas` lines: the
    /// peak-to-peak at `bank` and at `filtered` over the last periods and
    /// over the periods before.
    fn write_analyses(&self, o: &mut String, problem: &Problem, bank: &str, filtered: &str) {
        let s = &problem.scenario;
        let (total, period) = (self.total, self.period());
        let t_stop = total as f64 * period;
        let t_meas = (total - MEASURE_PERIODS) as f64 * period;
        let t_prev = (total - 2 * MEASURE_PERIODS) as f64 * period;
        let mut tmax = period / STEPS_PER_PERIOD;
        if s.converter.edge_time.0 > 0.0 {
            tmax = tmax.min(s.converter.edge_time.0 / 10.0);
        }
        if let Some(bw) = s.target.bandwidth {
            tmax = tmax.min(0.05 / bw.0);
        }
        let _ = writeln!(o);
        let _ = writeln!(
            o,
            "* slowest decay of the bank's own modes (estimate): {} s; run {} periods{}",
            num(self.tau),
            total,
            if self.settle + 2 * MEASURE_PERIODS > MAX_PERIODS {
                format!(" (capped at {MAX_PERIODS}: the last periods may not have settled fully)")
            } else {
                String::new()
            }
        );
        let _ = writeln!(
            o,
            "* Gear integration: the trapezoidal rule rings point to point after the current's corners"
        );
        let _ = writeln!(o, ".options method=gear reltol=1e-5 abstol=1e-9 vntol=1e-9");
        let _ = writeln!(
            o,
            ".tran {} {} {} {}",
            num(tmax),
            num(t_stop),
            num(t_prev),
            num(tmax)
        );
        let _ = writeln!(o, "* peak-to-peak ripple over the last {MEASURE_PERIODS} periods (V), and over the {MEASURE_PERIODS} before");
        for (name, node, from, to) in [
            ("pp_full", bank, t_meas, t_stop),
            ("pp_limited", filtered, t_meas, t_stop),
            ("pp_full_prev", bank, t_prev, t_meas),
            ("pp_limited_prev", filtered, t_prev, t_meas),
        ] {
            let _ = writeln!(
                o,
                ".meas tran {name} PP v({node}) from={} to={}",
                num(from),
                num(to)
            );
        }
    }
}

/// The resistor that gives the bank's node a DC path: small enough a
/// conductance to change the ripple by < 1e-6, large enough that the DC
/// offset left by the start drifts by < 1e-5 of the ripple per period.
fn write_dc_path(o: &mut String, ckt: &Circuit, bank: &str, f_ripple: f64) {
    let y1 = ckt.y_total(f_ripple).norm();
    let rdc = (1e6_f64).max(1e6 / y1);
    let _ = writeln!(
        o,
        "* DC path only (no DC operating point without it): |G| <= 1e-6 |Y_bank(f_ripple)|"
    );
    let _ = writeln!(o, "Rdc {bank} 0 {}", num(rdc));
}

/// The node `pp_limited` is measured at: after the measurement-bandwidth
/// filter, or the bank's node itself when the target has no bandwidth.
fn write_measured_node(o: &mut String, problem: &Problem, bank: &str) -> String {
    let t = &problem.scenario.target;
    let _ = writeln!(o);
    match t.bandwidth {
        Some(bw) => write_filter(o, bank, bw.0, t.bandwidth_order.max(1)),
        None => {
            let _ = writeln!(o, "* no measurement bandwidth in the target: pp_limited is measured at the bank's node");
            bank.to_string()
        }
    }
}

/// The transient netlist `bank.cir` for a bank (catalog indices and counts).
pub fn netlist(problem: &Problem, bank: &[(usize, u32)]) -> Result<String> {
    let (run, ckt) = Transient::new(problem, bank)?;
    let mut o = String::new();
    header(
        &mut o,
        problem,
        "Output ripple of a capacitor bank (transient)",
    );
    run.write_point(&mut o, problem);
    let (conv, bnode) = ckt.write(&mut o);
    write_dc_path(&mut o, &ckt, bnode, run.op.f_ripple);
    run.write_source(&mut o, conv);
    let filtered = write_measured_node(&mut o, problem, bnode);
    run.write_analyses(&mut o, problem, bnode, &filtered);
    let _ = writeln!(o, ".end");
    Ok(o)
}

/// An AC netlist of the same bank: a 1 A current into the converter's node,
/// printing `vm(bank)`, the magnitude of the transfer impedance to the bank's
/// node in ohms (what the evaluator calls the transfer impedance).
pub fn impedance_netlist(problem: &Problem, bank: &[(usize, u32)], sweep: Sweep) -> Result<String> {
    let ckt = circuit(problem, bank, None)?;
    let mut o = String::new();
    header(
        &mut o,
        problem,
        "Transfer impedance of a capacitor bank (AC)",
    );
    let _ = writeln!(o);
    let (conv, bnode) = ckt.write(&mut o);
    let _ = writeln!(o, "Idrive 0 {conv} DC 0 AC 1");
    let _ = writeln!(o, "Rdc {bnode} 0 {}", num(1e12));
    let line = match sweep {
        Sweep::Linear {
            points,
            start,
            stop,
        } => format!(".ac lin {} {} {}", points.max(1), num(start), num(stop)),
        Sweep::Decade {
            per_decade,
            start,
            stop,
        } => format!(".ac dec {} {} {}", per_decade.max(1), num(start), num(stop)),
    };
    let _ = writeln!(o, "{line}");
    let _ = writeln!(o, ".options numdgt=10");
    let _ = writeln!(o, ".print ac vm({bnode})");
    let _ = writeln!(o, ".end");
    Ok(o)
}
