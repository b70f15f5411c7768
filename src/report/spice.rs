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
//!
//! With an LC post-filter the circuit goes on past the bank's node: the
//! filter inductor (`L/N` in series with `DCR/N`, with `N·C_p` across it
//! when the catalog gives a self-resonant frequency) to the load node
//! `load`, the load-side bank there as series R-L-C branches, and the
//! damping leg (its resistor in series with the damping capacitors' branch).
//! Every figure is then measured at `load`, and `pp_conv_full`,
//! `pp_conv_limited` give the ripple at the converter-side node `bank`.
//!
//! With a load step in the scenario (`[transient]`) the same netlist also
//! holds a second copy of the circuit (nodes prefixed `s`) at the load
//! step's worst point: a load that draws the step as a linear ramp, and the
//! converter as a behavioural current source (`B`) fed by the load current
//! through a first-order RC low-pass at the loop crossover. Its `.meas`
//! lines give `step_min`, `step_max` and `deviation` (V, the largest
//! change of the load node from its level before the step).

use crate::converter::Waveform;
use crate::evaluator::{Band, LineState, TailLine, TailRole};
use crate::network::{admittance, Network};
use crate::problem::Problem;
use anyhow::{bail, Result};
use num_complex::Complex64;
use std::f64::consts::PI;
use std::fmt::Write;

/// Periods in each measurement window.
pub const MEASURE_PERIODS: usize = 3;
/// Longest run, in periods of the ripple frequency.
pub(crate) const MAX_PERIODS: usize = 200;
/// Longest run behind a post-filter, in periods: a lightly damped filter's
/// resonance decays over many periods of the ripple.
pub(crate) const MAX_PERIODS_FILTER: usize = 1000;
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

impl Branch {
    /// A bank line of `count` parts (at least one) of `p` in parallel, each
    /// of capacitance `c`, ESR `esr` and ESL `esl`: one branch with ESR/n,
    /// ESL/n and C·n. `note` follows the ESR in the comment line.
    fn line(
        p: &crate::catalog::Part,
        count: u32,
        c: f64,
        esr: f64,
        esl: f64,
        note: &str,
    ) -> Branch {
        let n = count.max(1) as f64;
        Branch {
            label: format!(
                "{} x {count} ({}): per part C = {} F, ESR = {} ohm{note}, ESL + mounting = {} H",
                p.id,
                p.technology.name(),
                num(c),
                num(esr),
                num(esl)
            ),
            r: esr / n,
            l: esl / n,
            c: c * n,
        }
    }
}

/// Each branch from `node` to ground with its comment line
/// `* {comment} {k}: label`, its elements tagged `{tag}{k}` (k from 1).
fn write_branches(o: &mut String, branches: &[Branch], comment: &str, tag: &str, node: &str) {
    for (j, b) in branches.iter().enumerate() {
        let _ = writeln!(o, "* {comment} {}: {}", j + 1, b.label);
        series_rlc(o, &format!("{tag}{}", j + 1), node, b);
    }
}

/// The circuit shared by the transient and the impedance netlists.
struct Circuit {
    /// Branches at the bank's node (one per bank line, counts folded in).
    bank: Vec<Branch>,
    internal: Option<Branch>,
    lc: f64,
    /// The same circuit as the evaluator sees it.
    network: Network,
    /// The post-filter behind the bank, if any.
    tail: Option<Tail>,
}

/// A post-filter as written to the netlist: the inductor between the
/// bank's node and the load node, the load-side branches and the damping
/// leg at the load node.
struct Tail {
    /// The inductor's comment line.
    label: String,
    /// Inductance of the parallel inductors, H.
    l: f64,
    /// Their DC resistance, Ω.
    dcr: f64,
    /// Their winding capacitance, F (0: none given).
    cp: f64,
    /// Load-side bank branches (counts folded in).
    load: Vec<Branch>,
    /// The damping resistor (Ω) and the damping capacitors' branch.
    damping: Option<(f64, Branch)>,
}

impl Tail {
    /// The post-filter's lines at `states` (the load node's worst point;
    /// its `low` corner without states), from the evaluator's own lines.
    fn of(problem: &Problem, tail: &[TailLine], states: Option<&[LineState]>) -> Option<Tail> {
        if tail.is_empty() {
            return None;
        }
        let cat = &problem.catalog.parts;
        let mut t = Tail {
            label: String::new(),
            l: 0.0,
            dcr: 0.0,
            cp: 0.0,
            load: Vec::new(),
            damping: None,
        };
        for (j, line) in tail.iter().enumerate() {
            let m = &line.model;
            let (c, esr) = states
                .and_then(|s| s.get(j))
                .map_or((m.c_worst, m.esr_max), |st| (st.c, st.esr));
            let n = line.count.max(1) as f64;
            match line.role {
                TailRole::Inductor { cp } => {
                    let id = problem
                        .inductors
                        .as_ref()
                        .and_then(|lc| lc.parts.get(m.index))
                        .map_or("inductor", |l| l.id.as_str());
                    t.label = format!(
                        "filter inductor {id} x {} in parallel: per part L = {} H, DCR = {} ohm, C_p = {} F",
                        line.count,
                        num(c),
                        num(esr),
                        num(cp)
                    );
                    t.l = c / n;
                    t.dcr = esr / n;
                    t.cp = cp * n;
                }
                TailRole::Load | TailRole::Damping { .. } => {
                    let b = Branch::line(&cat[m.index], line.count, c, esr, m.esl, "");
                    match line.role {
                        TailRole::Damping { resistance } => t.damping = Some((resistance, b)),
                        _ => t.load.push(b),
                    }
                }
            }
        }
        Some(t)
    }

    /// The load node's branches as `(R, L, C)`: the load-side bank and the
    /// damping leg (its resistor in series with its capacitors).
    fn branches(&self) -> impl Iterator<Item = (f64, f64, f64)> + '_ {
        self.load
            .iter()
            .map(|b| (b.r, b.l, b.c))
            .chain(self.damping.iter().map(|(r, b)| (r + b.r, b.l, b.c)))
    }

    /// Write the filter from the bank's node `bank` to the load node
    /// `load`; `pre` prefixes every name.
    fn write(&self, o: &mut String, pre: &str, bank: &str, load: &str) {
        let _ = writeln!(o, "* ---- post-filter: {}", self.label);
        let mid = format!("n{pre}lfa");
        let _ = writeln!(o, "L{pre}f {bank} {mid} {}", num(self.l));
        if self.dcr > 0.0 {
            let _ = writeln!(o, "R{pre}fdcr {mid} {load} {}", num(self.dcr));
        } else {
            let _ = writeln!(o, "V{pre}fdcr {mid} {load} 0");
        }
        if self.cp > 0.0 {
            let _ = writeln!(o, "C{pre}fp {bank} {load} {}", num(self.cp));
        }
        write_branches(o, &self.load, "load-side line", &format!("{pre}ld"), load);
        if let Some((r, b)) = &self.damping {
            let _ = writeln!(
                o,
                "* damping leg: {} ohm in series with {}",
                num(*r),
                b.label
            );
            let nd = format!("n{pre}dmp");
            let _ = writeln!(o, "R{pre}dmp {load} {nd} {}", num(*r));
            series_rlc(o, &format!("{pre}dmpc"), &nd, b);
        }
    }
}

/// Number formatting that every SPICE reads the same way (no SI suffixes,
/// which SPICE reads differently: `m` is milli, `M` too).
fn num(x: f64) -> String {
    format!("{x:.10e}")
}

/// The circuit with every line at the `low` corner, or at the given states
/// (one per line with a count above zero, in order), and the post-filter
/// `tail` behind the bank (its lines at the states after the bank's, or at
/// `low`).
fn circuit_with(
    problem: &Problem,
    bank: &[(usize, u32)],
    states: Option<&[LineState]>,
    tail: Option<&[TailLine]>,
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
        lines.push(Branch::line(
            &problem.catalog.parts[i],
            n,
            m.c_worst,
            m.esr,
            m.esl,
            " (worst point of the corner region found)",
        ));
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
    let nb = lines.len();
    let tail = tail.and_then(|t| Tail::of(problem, t, states.and_then(|s| s.get(nb..))));
    if lines.is_empty() && internal.is_none() && tail.is_none() {
        bail!("bank.cir: the bank is empty and the converter has no internal capacitance");
    }
    Ok(Circuit {
        bank: lines,
        internal,
        lc: network.connection_inductance,
        network,
        tail,
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
        let internal = self.internal.as_ref().map(|b| (b.r, b.l + self.lc, b.c));
        let front = || self.bank.iter().map(|b| (b.r, b.l, b.c)).chain(internal);
        let Some(t) = &self.tail else {
            return crate::transient::slowest_loop(front);
        };
        // Behind a filter: the load node's own loops, and the filter's loop
        // (the bank side and the load side, each lumped, through the
        // inductor).
        crate::transient::ladder_tau(front, || t.branches(), t.l, t.dcr)
    }

    /// Elements of the circuit between the converter's node `conv` and the
    /// bank's node `bank` (the same node without connection inductance),
    /// and the post-filter from there to the load node: returns `(conv,
    /// bank, out)` with `out` the measured node (`load` behind a filter,
    /// else `bank`).
    fn write(&self, o: &mut String) -> (String, String, String) {
        self.write_with(o, "")
    }

    /// As [`Circuit::write`], with every node and element name prefixed by
    /// `pre` (a second copy of the circuit in the same netlist).
    fn write_with(&self, o: &mut String, pre: &str) -> (String, String, String) {
        let (conv, bank) = if self.lc > 0.0 {
            (format!("{pre}conv"), format!("{pre}bank"))
        } else {
            (format!("{pre}bank"), format!("{pre}bank"))
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
        write_branches(o, &self.bank, "line", pre, &bank);
        if let Some(b) = &self.internal {
            let _ = writeln!(o, "* {}", b.label);
            series_rlc(o, &format!("{pre}int"), &conv, b);
        }
        if self.lc > 0.0 {
            let _ = writeln!(
                o,
                "* connection inductance between the converter's output and the bank"
            );
            let _ = writeln!(o, "L{pre}conn {conv} {bank} {}", num(self.lc));
        } else {
            let _ = writeln!(
                o,
                "* no connection inductance: the converter drives the bank's node directly"
            );
        }
        let out = match &self.tail {
            Some(t) => {
                let load = format!("{pre}load");
                t.write(o, pre, &bank, &load);
                load
            }
            None => bank.clone(),
        };
        (conv, bank, out)
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
    write_filter_tagged(o, bank, bw, order, "")
}

/// As [`write_filter`], with `tag` in every name (a second measurement
/// filter in the same netlist).
fn write_filter_tagged(o: &mut String, bank: &str, bw: f64, order: u32, tag: &str) -> String {
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
    let _ = writeln!(o, "E{tag}buf0 {tag}f0 0 {bank} 0 1");
    let mut prev = format!("{tag}f0");
    for k in 1..=order {
        let _ = writeln!(o, "R{tag}f{k} {prev} {tag}f{k}rc {}", num(FILTER_R));
        let _ = writeln!(o, "C{tag}f{k} {tag}f{k}rc 0 {}", num(cf));
        let _ = writeln!(o, "E{tag}buf{k} {tag}f{k} 0 {tag}f{k}rc 0 1");
        prev = format!("{tag}f{k}");
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

/// The transient netlist `bank.cir` for a bank (catalog indices and counts).
pub fn netlist(problem: &Problem, bank: &[(usize, u32)]) -> Result<String> {
    let s = &problem.scenario;
    let bank: Vec<(usize, u32)> = bank.iter().copied().filter(|b| b.1 > 0).collect();
    let parts: Vec<usize> = bank.iter().map(|b| b.0).collect();
    let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, b)| (j, b.1)).collect();
    let mut ev = problem.evaluator(&parts);
    // The worst point of the corner region (target bandwidth): its input
    // voltage, inductance and each line's capacitance and ESR.
    let w = crate::region::worst(problem, &mut ev, &local, Band::Limited);
    let tail = ev.tail().to_vec();
    let tail = (!tail.is_empty()).then_some(&tail[..]);
    let ckt = circuit_with(problem, &bank, Some(&w.states), tail)?;
    let point = point_figures(&mut ev, &local, &w, tail.is_some());
    let op = &ev.ops[w.op].clone();
    let period = op.waveform.period;
    let f_top = ev.n_full as f64 * ev.f_ripple;
    let min_ramp = (0.1 / f_top).min(1e-3 * period);

    let mut o = String::new();
    write_point(&mut o, problem, &ev, op, &point);
    let (conv, bank_node, bnode) = ckt.write(&mut o);
    let rdc = write_dc_path(&mut o, &ckt, op.f_ripple, &bnode);
    let run = RunLength::of(&ckt, period, tail.is_some());
    write_source(&mut o, op, &run, min_ramp, &conv);
    let (filtered, conv_filtered) = write_bandwidths(&mut o, s, &bnode, &bank_node, tail.is_some());

    let t_stop = run.total as f64 * period;
    // The run goes a quarter period past the measurements: the simulator's
    // last time points (where it shortens its step to land on the stop
    // time) are not measured.
    let mut t_run = t_stop + period / 4.0;
    let t_meas = (run.total - MEASURE_PERIODS) as f64 * period;
    let t_prev = (run.total - 2 * MEASURE_PERIODS) as f64 * period;
    // The load step, when the scenario has one: a second copy of the
    // circuit at the load step's worst point, stepped from the start of the
    // saved output.
    let step = match crate::transient::figures(s, &ev.parts, &local, ev.tail()) {
        Some(f) => Some(write_step(&mut o, problem, &bank, tail, &f, t_prev, rdc)?),
        None => None,
    };
    let mut tmax = period / STEPS_PER_PERIOD;
    if let Some((end, step_tmax, _)) = &step {
        let (end, step_tmax) = (*end, *step_tmax);
        t_run = t_stop.max(end);
        tmax = tmax.min(step_tmax);
    }
    if s.converter.edge_time.0 > 0.0 {
        tmax = tmax.min(s.converter.edge_time.0 / 10.0);
    }
    if let Some(bw) = s.target.bandwidth {
        tmax = tmax.min(0.05 / bw.0);
    }
    write_tran(&mut o, &run, tmax, t_run, t_prev);
    let _ = writeln!(o, "* peak-to-peak ripple over the last {MEASURE_PERIODS} periods (V), and over the {MEASURE_PERIODS} before");
    let (meas, stop, prev) = (num(t_meas), num(t_stop), num(t_prev));
    write_meas(&mut o, "pp_full PP", &bnode, &meas, &stop);
    write_meas(&mut o, "pp_limited PP", &filtered, &meas, &stop);
    write_meas(&mut o, "pp_full_prev PP", &bnode, &prev, &meas);
    write_meas(&mut o, "pp_limited_prev PP", &filtered, &prev, &meas);
    if let Some(cf) = &conv_filtered {
        let _ = writeln!(
            o,
            "* the ripple at the converter-side node (before the post-filter), same windows"
        );
        write_meas(&mut o, "pp_conv_full PP", &bank_node, &meas, &stop);
        write_meas(&mut o, "pp_conv_limited PP", cf, &meas, &stop);
    }
    if let Some((_, _, snode)) = &step {
        let _ = writeln!(
            o,
            "* load step: the lowest and highest output change after it (V), and the deviation"
        );
        let run_end = num(t_run);
        write_meas(&mut o, "step_min MIN", snode, &prev, &run_end);
        write_meas(&mut o, "step_max MAX", snode, &prev, &run_end);
        let _ = writeln!(
            o,
            ".meas tran deviation param='max(abs(step_min),abs(step_max))'"
        );
    }
    let _ = writeln!(o, ".end");
    Ok(o)
}

/// The evaluator's figures at the worst point, for the netlist's header.
struct PointFigures {
    /// Ripple at the target bandwidth and at full bandwidth, V.
    limited: f64,
    full: f64,
    /// Behind a filter: the same at the converter-side node, V.
    converter_node: Option<(f64, f64)>,
}

fn point_figures(
    ev: &mut crate::evaluator::Evaluator,
    local: &[(usize, u32)],
    w: &crate::region::Worst,
    filtered: bool,
) -> PointFigures {
    let full = crate::region::value_at(ev, local, &w.states, w.op, Band::Full);
    // Behind a filter: the evaluator's ripple at the converter-side node
    // at the same point.
    let converter_node = filtered.then(|| {
        let n = ev.n_full;
        ev.fill_states(local, &w.states, n);
        ev.to_converter_node(n);
        (
            ev.pp_filled(w.op, Band::Limited),
            ev.pp_filled(w.op, Band::Full),
        )
    });
    PointFigures {
        limited: w.value,
        full,
        converter_node,
    }
}

/// The netlist's header: the scenario, the operating point and the
/// evaluator's figures there.
fn write_point(
    o: &mut String,
    problem: &Problem,
    ev: &crate::evaluator::Evaluator,
    op: &crate::converter::OperatingPoint,
    point: &PointFigures,
) {
    header(o, problem, "Output ripple of a capacitor bank (transient)");
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
        num(point.limited),
        num(point.full)
    );
    let _ = writeln!(o, "*   ({} and {} harmonics)", ev.n_limited, ev.n_full);
    if let Some((lim, full)) = point.converter_node {
        let _ = writeln!(
            o,
            "* (at the load node, behind the post-filter); at the converter-side node: {} V and {} V",
            num(lim),
            num(full)
        );
    }
    let _ = writeln!(o);
}

/// The DC-level resistor at the measured node `node`: small enough a
/// conductance to change the ripple by < 1e-6, large enough that the DC
/// offset left by the start drifts by < 1e-5 of the ripple per period.
/// Returns its resistance, Ω.
fn write_dc_path(o: &mut String, ckt: &Circuit, f_ripple: f64, node: &str) -> f64 {
    let y1 = ckt.y_total(f_ripple).norm();
    let rdc = (1e6_f64).max(1e6 / y1);
    let _ = writeln!(
        o,
        "* DC path only (no DC operating point without it): |G| <= 1e-6 |Y_bank(f_ripple)|"
    );
    let _ = writeln!(o, "Rdc {node} 0 {}", num(rdc));
    rdc
}

/// How long the transient run is, in periods of the ripple.
struct RunLength {
    /// Slowest decay time of the circuit's own modes (estimate), s.
    tau: f64,
    /// Periods needed to settle.
    settle: usize,
    /// The cap on the run, periods.
    max_periods: usize,
    /// Periods run (settling and both measurement windows, within the cap).
    total: usize,
}

impl RunLength {
    fn of(ckt: &Circuit, period: f64, filtered: bool) -> RunLength {
        let tau = ckt.slowest_decay();
        let max_periods = if filtered {
            MAX_PERIODS_FILTER
        } else {
            MAX_PERIODS
        };
        let settle = if tau.is_finite() {
            (SETTLE_TAUS * tau / period).ceil() as usize
        } else {
            max_periods
        };
        let total = (settle + 2 * MEASURE_PERIODS).clamp(4 * MEASURE_PERIODS, max_periods);
        RunLength {
            tau,
            settle,
            max_periods,
            total,
        }
    }
}

/// The converter's current into node `conv`: the operating point's
/// waveform written out over the whole run and one period past it.
fn write_source(
    o: &mut String,
    op: &crate::converter::OperatingPoint,
    run: &RunLength,
    min_ramp: f64,
    conv: &str,
) {
    let period = op.waveform.period;
    let total = run.total;
    let (pts, mean) = source_points(&op.waveform, min_ramp);
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "* Capacitor current of the converter (into the bank > 0), {} periods written out",
        total + 1
    );
    let _ = writeln!(
        o,
        "* (one past the run: where a PWL source ends its slope drops to zero, a step through ESL)"
    );
    let _ = writeln!(
        o,
        "* (every corner is then a breakpoint of the simulator; a repeat option is not relied on)."
    );
    let _ = writeln!(
        o,
        "* mean {} A removed (DC does not reach a capacitor bank); starts at a zero crossing.",
        num(mean)
    );
    if op
        .waveform
        .segments()
        .any(|((ta, _), (tb, _))| tb - ta <= 0.0)
    {
        let _ = writeln!(
            o,
            "* current jumps are ramps of {} s (a tenth of the highest harmonic's period).",
            num(min_ramp)
        );
    }
    let _ = write!(o, "Idrive 0 {conv} PWL(");
    let mut k = 0usize;
    for p in 0..=total {
        for (j, &(t, v)) in pts.iter().enumerate() {
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

/// The measurement-bandwidth filters: at the measured node `out`, and
/// behind a post-filter at the converter-side node `bank` too. Returns the
/// nodes to measure the band-limited figures at.
fn write_bandwidths(
    o: &mut String,
    s: &crate::scenario::Scenario,
    out: &str,
    bank: &str,
    filtered: bool,
) -> (String, Option<String>) {
    let _ = writeln!(o);
    let order = s.target.bandwidth_order.max(1);
    let at_out = match s.target.bandwidth {
        Some(bw) => write_filter(o, out, bw.0, order),
        None => {
            let _ = writeln!(o, "* no measurement bandwidth in the target: pp_limited is measured at the bank's node");
            out.to_string()
        }
    };
    let at_bank = match (filtered, s.target.bandwidth) {
        (false, _) => None,
        (true, Some(bw)) => {
            let _ = writeln!(o, "* the same measurement at the converter-side node");
            Some(write_filter_tagged(o, bank, bw.0, order, "c"))
        }
        (true, None) => Some(bank.to_string()),
    };
    (at_out, at_bank)
}

/// The run's options and `.tran` line, saving from `t_save`.
fn write_tran(o: &mut String, run: &RunLength, tmax: f64, t_run: f64, t_save: f64) {
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "* slowest decay of the bank's own modes (estimate): {} s; run {} periods{}",
        num(run.tau),
        run.total,
        if run.settle + 2 * MEASURE_PERIODS > run.max_periods {
            format!(
                " (capped at {}: the last periods may not have settled fully)",
                run.max_periods
            )
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
        num(t_run),
        num(t_save),
        num(tmax)
    );
}

/// One `.meas tran` line: `what` (the name and the measure, `pp_full PP`)
/// of `v(node)` from `from` to `to` (written numbers).
fn write_meas(o: &mut String, what: &str, node: &str, from: &str, to: &str) {
    let _ = writeln!(o, ".meas tran {what} v({node}) from={from} to={to}");
}

/// The load-step run of `bank.cir`: the circuit at the load step's worst
/// point (nodes prefixed `s`, its measured node `sbank`, or `sload` behind
/// a post-filter `tail`; the load current as a voltage at `sistep`), a load that draws the
/// step (a linear ramp from `t0`, 10–90 % in the rise time) and the
/// converter as a behavioural current source: the load current through a
/// first-order RC low-pass at the loop crossover. Returns the end of the
/// run, the time step it needs and the measured node.
fn write_step(
    o: &mut String,
    problem: &Problem,
    bank: &[(usize, u32)],
    tail: Option<&[TailLine]>,
    f: &crate::transient::StepFigures,
    t0: f64,
    rdc: f64,
) -> Result<(f64, f64, String)> {
    let ckt = circuit_with(problem, bank, Some(&f.states), tail)?;
    let ramp = f.rise_time * crate::transient::RAMP_PER_RISE;
    let wc = 2.0 * PI * f.loop_crossover;
    let tau = ckt.slowest_decay().min(1.0).max(1.0 / wc);
    let end = t0 + ramp + crate::transient::SETTLE * tau;
    let _ = writeln!(o);
    let _ = writeln!(
        o,
        "* ---- Load step: {} A, rise time {} s (10-90 %, a linear ramp of {} s), loop crossover {} Hz",
        num(f.load_step),
        num(f.rise_time),
        num(ramp),
        num(f.loop_crossover)
    );
    let _ = writeln!(
        o,
        "* The same circuit again at the load step's worst point of the corner region; the evaluator's"
    );
    let _ = writeln!(o, "* deviation there: {} V.", num(f.deviation));
    let (conv, _, node) = ckt.write_with(o, "s");
    let _ = writeln!(o, "Rsdc {node} 0 {}", num(rdc));
    let _ = writeln!(
        o,
        "* the load current as a voltage (1 V per A) at node sistep, starting at {} s",
        num(t0)
    );
    let _ = writeln!(
        o,
        "Vsistep sistep 0 PWL(0 0 {} 0 {} {})",
        num(t0),
        num(t0 + ramp),
        num(f.load_step)
    );
    let _ = writeln!(
        o,
        "* the converter: the load current through a first-order low-pass at the loop crossover"
    );
    let rl = 1e3;
    let _ = writeln!(o, "Rslp sistep sconvi {}", num(rl));
    let _ = writeln!(o, "Cslp sconvi 0 {}", num(1.0 / (wc * rl)));
    let _ = writeln!(o, "Bsconv 0 {conv} I=V(sconvi)");
    let _ = writeln!(o, "Bsload {node} 0 I=V(sistep)");
    Ok((end, (ramp / 50.0).min(tau / 200.0), node))
}

/// An AC netlist of the same bank: a 1 A current into the converter's node,
/// printing `vm(bank)`, the magnitude of the transfer impedance to the bank's
/// node in ohms (what the evaluator calls the transfer impedance).
pub fn impedance_netlist(problem: &Problem, bank: &[(usize, u32)], sweep: Sweep) -> Result<String> {
    let tail = problem.filter.as_ref().map(|f| problem.tail_lines(f));
    let ckt = circuit_with(problem, bank, None, tail.as_deref())?;
    let mut o = String::new();
    header(
        &mut o,
        problem,
        "Transfer impedance of a capacitor bank (AC)",
    );
    let _ = writeln!(o);
    let (conv, _, bnode) = ckt.write(&mut o);
    let _ = writeln!(o, "Idrive 0 {conv} DC 0 AC 1");
    let _ = writeln!(o, "Rdc {bnode} 0 {}", num(1e12));
    let _ = writeln!(o, "{}", ac_line(sweep));
    let _ = writeln!(o, ".options numdgt=10");
    let _ = writeln!(o, ".print ac vm({bnode})");
    let _ = writeln!(o, ".end");
    Ok(o)
}

/// The `.ac` line of a sweep.
fn ac_line(sweep: Sweep) -> String {
    match sweep {
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
    }
}

/// An AC netlist of the post-filter's output impedance (`problem.filter`
/// set): the converter-side node held by the converter (shorted to
/// ground), a 1 A current into the load node, printing `vm(load)`, |Z_out|
/// in ohms. The filter's lines at `states` (in the evaluator's order of
/// [`Problem::tail_lines`]), or at the `low` corner.
pub fn output_impedance_netlist(
    problem: &Problem,
    states: Option<&[LineState]>,
    sweep: Sweep,
) -> Result<String> {
    let Some(f) = &problem.filter else {
        bail!("output impedance: the design has no post-filter");
    };
    let lines = problem.tail_lines(f);
    let Some(t) = Tail::of(problem, &lines, states) else {
        bail!("output impedance: the post-filter has no lines");
    };
    let mut o = String::new();
    header(
        &mut o,
        problem,
        "Output impedance of a post-filter, converter side held (AC)",
    );
    let _ = writeln!(
        o,
        "* The converter holds its output node: the bank's node is ground here."
    );
    t.write(&mut o, "", "0", "load");
    let _ = writeln!(o, "Idrive 0 load DC 0 AC 1");
    let _ = writeln!(o, "Rdc load 0 {}", num(1e12));
    let _ = writeln!(o, "{}", ac_line(sweep));
    let _ = writeln!(o, ".options numdgt=10");
    let _ = writeln!(o, ".print ac vm(load)");
    let _ = writeln!(o, ".end");
    Ok(o)
}
