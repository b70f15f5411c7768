//! Capacitor current waveforms of each topology.
//!
//! A waveform is one period of a piecewise-linear current, given by its
//! vertices. Two vertices at the same time are a jump. The DC part is kept
//! here (it is dropped by the spectrum).

use crate::scenario::{Scenario, Topology};

/// One period of a piecewise-linear periodic waveform.
#[derive(Debug, Clone, PartialEq)]
pub struct Waveform {
    /// Period, s.
    pub period: f64,
    /// Vertices (t, value), t non-decreasing within [0, period]. The waveform
    /// closes from the last vertex to the first vertex shifted by one period.
    pub points: Vec<(f64, f64)>,
}

/// Operating point of one input-voltage corner, for the report.
#[derive(Debug, Clone, PartialEq)]
pub struct OperatingPoint {
    /// Input voltage, V (`None` for a module given without one).
    pub vin: Option<f64>,
    /// The converter inductance of this point, H (`None` for a module).
    pub inductance: Option<f64>,
    /// Duty cycle of the switch (for a module, 0).
    pub duty: f64,
    /// Ripple frequency (fsw, or 2·fsw for a bridge), Hz.
    pub f_ripple: f64,
    /// Peak-to-peak ripple of the current into the bank, A.
    pub current_pp: f64,
    /// `CCM`, `DCM` or empty.
    pub mode: &'static str,
    /// One period of the current into the bank, A.
    pub waveform: Waveform,
}

impl Waveform {
    /// Segments between consecutive vertices, the closing one included.
    pub fn segments(&self) -> impl Iterator<Item = ((f64, f64), (f64, f64))> + '_ {
        let n = self.points.len();
        (0..n).map(move |i| {
            let a = self.points[i];
            let b = if i + 1 < n {
                self.points[i + 1]
            } else {
                (self.points[0].0 + self.period, self.points[0].1)
            };
            (a, b)
        })
    }

    /// Value at time t (any real t; periodic). At a jump, the value after it.
    pub fn at(&self, t: f64) -> f64 {
        let t0 = self.points[0].0;
        let t = t0 + (t - t0).rem_euclid(self.period);
        let mut val = self.points[0].1;
        for ((ta, va), (tb, vb)) in self.segments() {
            if t >= ta && t < tb {
                return va + (vb - va) * (t - ta) / (tb - ta);
            }
            if t >= ta {
                val = vb;
            }
        }
        val
    }

    /// Mean value over one period.
    pub fn mean(&self) -> f64 {
        self.segments()
            .map(|((ta, va), (tb, vb))| 0.5 * (va + vb) * (tb - ta))
            .sum::<f64>()
            / self.period
    }

    /// Lowest and highest value over the period.
    pub(crate) fn min_max(&self) -> (f64, f64) {
        self.points
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &(_, v)| {
                (lo.min(v), hi.max(v))
            })
    }

    /// Sum of `n` copies shifted by `period / n` (interleaved phases). Exact
    /// for continuous waveforms: the breakpoints of every copy are kept.
    pub(crate) fn interleave(&self, n: u32) -> Waveform {
        if n <= 1 {
            return self.clone();
        }
        let shift = self.period / n as f64;
        let mut times: Vec<f64> = Vec::new();
        for p in 0..n {
            for &(t, _) in &self.points {
                times.push((t + p as f64 * shift).rem_euclid(self.period));
            }
        }
        times.sort_by(|a, b| a.total_cmp(b));
        times.dedup_by(|a, b| (*a - *b).abs() < 1e-15 * self.period);
        let points = times
            .iter()
            .map(|&t| (t, (0..n).map(|p| self.at(t - p as f64 * shift)).sum()))
            .collect();
        Waveform {
            period: self.period,
            points,
        }
    }

    /// Replace every jump by a linear ramp of `edge` seconds centred on it;
    /// the ramp's ends take the ideal waveform's values there. A
    /// ramp is shortened to half of a neighbouring segment if it would not fit.
    pub(crate) fn with_edges(&self, edge: f64) -> Waveform {
        if edge <= 0.0 {
            return self.clone();
        }
        let n = self.points.len();
        let p = &self.points;
        let seg_len = |i: usize| -> f64 {
            // Duration of the segment starting at vertex i.
            let a = p[i].0;
            let b = if i + 1 < n {
                p[i + 1].0
            } else {
                p[0].0 + self.period
            };
            b - a
        };
        let mut out = p.clone();
        for i in 0..n {
            let j = (i + 1) % n;
            if seg_len(i) > 0.0 {
                continue;
            }
            // Jump from vertex i to vertex j. Move i back along the segment
            // ending at i, and j forward along the segment starting at j.
            let prev = (i + n - 1) % n;
            let back = (0.5 * edge).min(0.5 * seg_len(prev));
            let fwd = (0.5 * edge).min(0.5 * seg_len(j));
            let (tp, vp) = p[prev];
            let (ti, vi) = p[i];
            let lp = seg_len(prev);
            if lp > 0.0 {
                let t = ti - back;
                out[i] = (t, vi + (vp - vi) * back / lp);
                let _ = tp;
            }
            let lj = seg_len(j);
            if lj > 0.0 {
                let k = (j + 1) % n;
                let (_, vk) = p[k];
                let (tj, vj) = p[j];
                out[j] = (tj + fwd, vj + (vk - vj) * fwd / lj);
            }
        }
        // A vertex moved back before 0 or forward past the period wraps.
        let mut pts: Vec<(f64, f64)> = out
            .into_iter()
            .map(|(t, v)| (t.rem_euclid(self.period), v))
            .collect();
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        Waveform {
            period: self.period,
            points: pts,
        }
    }
}

/// Capacitor current for each input-voltage corner of the scenario, at the
/// nominal inductance (the named corners of the reports).
///
/// For a module the triangle has unit peak-to-peak amplitude; the caller
/// scales it to the measured standalone ripple.
pub(crate) fn operating_points(s: &Scenario) -> Vec<OperatingPoint> {
    let mut corners: Vec<Option<f64>> = s.vin_corners().into_iter().map(Some).collect();
    if corners.is_empty() {
        corners.push(None);
    }
    let l = s.converter.inductance.map(|l| l.0);
    corners
        .into_iter()
        .map(|vin| operating_point_at(s, vin, l))
        .collect()
}

/// The converter inductances the corner region needs: for the buck family
/// the current scales exactly as 1/L, so the lowest inductance is the worst
/// for every figure; a flyback or boost changes shape (CCM/DCM) with L, so
/// the low end, the nominal and the high end are all searched.
pub fn region_inductances(s: &Scenario) -> Vec<Option<f64>> {
    let c = &s.converter;
    let Some(l) = c.inductance.map(|l| l.0) else {
        return vec![None];
    };
    let tol = s.converter.inductance_tolerance();
    let mut v = match c.topology {
        Topology::Flyback | Topology::Boost => vec![l * (1.0 - tol), l, l * (1.0 + tol)],
        _ => vec![l * (1.0 - tol)],
    };
    v.dedup();
    v.into_iter().map(Some).collect()
}

/// The input voltages the corner region's search starts from: the ends and
/// the nominal, and for interleaved phases a fine sweep (their ripple
/// peaks inside the range, where the phases cancel least).
pub fn region_vins(s: &Scenario) -> Vec<Option<f64>> {
    let v = s.vin_corners();
    if v.is_empty() {
        return vec![None];
    }
    let (lo, hi) = (v[0], v[v.len() - 1]);
    let mut out = v.clone();
    if hi > lo {
        let n = if s.converter.phases > 1 {
            8 * s.converter.phases as usize
        } else {
            4
        };
        for j in 1..n {
            out.push(lo + (hi - lo) * j as f64 / n as f64);
        }
    }
    out.sort_by(|a, b| a.total_cmp(b));
    out.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * b.abs());
    out.into_iter().map(Some).collect()
}

/// The operating point at one input voltage and one converter inductance,
/// with the scenario's edge time applied.
pub(crate) fn operating_point_at(s: &Scenario, vin: Option<f64>, l: Option<f64>) -> OperatingPoint {
    let mut op = operating_point(s, vin, l.unwrap_or(0.0));
    op.inductance = l;
    op.waveform = op.waveform.with_edges(s.converter.edge_time.0);
    op
}

/// The rectifier current of a flyback or boost: zero while the switch is
/// on, then a jump to `ipk` and a linear ramp down.
enum Pulse {
    /// Ramps down to `imin` at the end of the period.
    Continuous { t_on: f64, ipk: f64, imin: f64 },
    /// Ramps down to zero after `t_d`, then stays at zero.
    Discontinuous { t_on: f64, ipk: f64, t_d: f64 },
}

impl Pulse {
    /// The capacitor current (rectifier current − iout) over one period `t`.
    fn operating_point(&self, vin: f64, t: f64, iout: f64) -> OperatingPoint {
        let (points, mode, ipk, t_on) = match *self {
            Pulse::Continuous { t_on, ipk, imin } => (
                vec![
                    (0.0, -iout),
                    (t_on, -iout),
                    (t_on, ipk - iout),
                    (t, imin - iout),
                ],
                "CCM",
                ipk,
                t_on,
            ),
            Pulse::Discontinuous { t_on, ipk, t_d } => (
                vec![
                    (0.0, -iout),
                    (t_on, -iout),
                    (t_on, ipk - iout),
                    (t_on + t_d, -iout),
                ],
                "DCM",
                ipk,
                t_on,
            ),
        };
        OperatingPoint {
            vin: Some(vin),
            inductance: None,
            duty: t_on / t,
            f_ripple: 1.0 / t,
            current_pp: ipk,
            mode,
            waveform: Waveform { period: t, points },
        }
    }
}

fn triangle(period: f64, duty: f64, pp: f64) -> Waveform {
    Waveform {
        period,
        points: vec![(0.0, -0.5 * pp), (duty * period, 0.5 * pp)],
    }
}

fn operating_point(s: &Scenario, vin: Option<f64>, l: f64) -> OperatingPoint {
    let c = &s.converter;
    let fsw = c.fsw.0;
    let vout = c.vout.0;
    let iout = c.iout.0;
    let n = c.turns_ratio.map_or(1.0, |n| n.0);
    match c.topology {
        Topology::Buck | Topology::Forward | Topology::Bridge => {
            let vin = vin.expect("checked: vin present");
            let f = if c.topology == Topology::Bridge {
                2.0 * fsw
            } else {
                fsw
            };
            let ratio = if c.topology == Topology::Buck { 1.0 } else { n };
            // A half bridge puts vin/2 on the primary.
            let d = vout / (c.primary_voltage(vin) * ratio);
            let di = vout * (1.0 - d) / (l * f);
            let w = triangle(1.0 / f, d, di).interleave(c.phases);
            let (lo, hi) = w.min_max();
            OperatingPoint {
                vin: Some(vin),
                inductance: None,
                duty: d,
                f_ripple: f,
                current_pp: hi - lo,
                mode: "",
                waveform: w,
            }
        }
        Topology::Flyback => {
            let vin = vin.expect("checked: vin present");
            let t = 1.0 / fsw;
            let ls = l * n * n;
            let d = vout / (vout + n * vin);
            let dis = vout * (1.0 - d) * t / ls;
            let mid = iout / (1.0 - d);
            let pulse = if mid > dis / 2.0 {
                Pulse::Continuous {
                    t_on: d * t,
                    ipk: mid + dis / 2.0,
                    imin: mid - dis / 2.0,
                }
            } else {
                let ipk_p = (2.0 * vout * iout / (l * fsw)).sqrt();
                let t_on = ipk_p * l / vin;
                let ipk = ipk_p / n;
                Pulse::Discontinuous {
                    t_on,
                    ipk,
                    t_d: (ipk * ls / vout).min(t - t_on),
                }
            };
            pulse.operating_point(vin, t, iout)
        }
        Topology::Boost => {
            let vin = vin.expect("checked: vin present");
            let t = 1.0 / fsw;
            let d = 1.0 - vin / vout;
            let di = vin * d / (l * fsw);
            let mid = iout / (1.0 - d);
            let pulse = if mid >= di / 2.0 {
                Pulse::Continuous {
                    t_on: d * t,
                    ipk: mid + di / 2.0,
                    imin: mid - di / 2.0,
                }
            } else {
                let ipk = (2.0 * iout * (vout - vin) / (l * fsw)).sqrt();
                let t_on = ipk * l / vin;
                Pulse::Discontinuous {
                    t_on,
                    ipk,
                    t_d: (ipk * l / (vout - vin)).min(t - t_on),
                }
            };
            pulse.operating_point(vin, t, iout)
        }
        Topology::Module => {
            let d = vin.map_or(0.5, |v| vout / v);
            let w = triangle(1.0 / fsw, d, 1.0);
            OperatingPoint {
                vin,
                inductance: None,
                duty: d,
                f_ripple: fsw,
                current_pp: 1.0,
                mode: "",
                waveform: w,
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn buck(extra: &str) -> Scenario {
        let t = format!(
            "[converter]\ntopology = \"buck\"\nvin = 12\nvout = 3.3\niout = 6\nfsw = \"600k\"\ninductance = \"2.2u\"\n{extra}\n[target]\nripple_pp = \"8m\"\n"
        );
        Scenario::from_str(&t, "t").unwrap()
    }

    #[test]
    fn buck_ripple_current() {
        // Erickson & Maksimović, Fundamentals of Power Electronics, ch. 2:
        // ΔI = Vout (1 − D) / (L f).
        let op = &operating_points(&buck(""))[0];
        let want = 3.3 * (1.0 - 3.3 / 12.0) / (2.2e-6 * 600e3);
        assert!((op.current_pp - want).abs() < 1e-12);
        assert!(op.waveform.mean().abs() < 1e-12);
    }

    fn bridge(kind: &str) -> Scenario {
        let t = format!(
            "[converter]\ntopology = \"bridge\"\nbridge = \"{kind}\"\nvin = 48\nvout = 5\niout = 10\nfsw = \"200k\"\ninductance = \"4.7u\"\nturns_ratio = 0.25\n[target]\nripple_pp = \"20m\"\n"
        );
        Scenario::from_str(&t, "t").unwrap()
    }

    #[test]
    fn half_bridge_has_half_the_primary_voltage() {
        // Erickson & Maksimović, Fundamentals of Power Electronics, ch. 6
        // (transformer-isolated converters): full bridge and push-pull
        // V = n·D·Vg, half bridge V = 0.5·n·D·Vg, with the output inductor
        // switched at 2·fsw. So D = vout/(n·vin) or vout/(n·vin/2).
        let (vin, vout, n, l, fsw) = (48.0, 5.0, 0.25, 4.7e-6, 200e3);
        for (kind, v_pri) in [("full", vin), ("push-pull", vin), ("half", vin / 2.0)] {
            let op = &operating_points(&bridge(kind))[0];
            let d = vout / (n * v_pri);
            assert!((op.duty - d).abs() < 1e-12, "{kind}: D {} vs {d}", op.duty);
            // Inductor ripple ΔI = vout (1 − D) / (L · 2 fsw) (same chapter).
            let di = vout * (1.0 - d) / (l * 2.0 * fsw);
            assert!((op.current_pp - di).abs() < 1e-9 * di, "{kind}");
            assert_eq!(op.f_ripple, 2.0 * fsw);
        }
        // The half bridge needs twice the duty of the full bridge.
        let full = operating_points(&bridge("Full"))[0].duty;
        let half = operating_points(&bridge("HALF"))[0].duty;
        assert!((half - 2.0 * full).abs() < 1e-12);
    }

    #[test]
    fn half_bridge_that_cannot_make_vout_names_the_key() {
        // n·vin/2 = 0.4·24/2 = 4.8 V < 5 V: no duty cycle makes 5 V.
        let t = "[converter]\ntopology = \"bridge\"\nbridge = \"half\"\nvin = 24\nvout = 5\niout = 10\nfsw = \"200k\"\ninductance = \"4.7u\"\nturns_ratio = 0.4\n[target]\nripple_pp = \"20m\"\n";
        let e = Scenario::from_str(t, "t").unwrap_err().to_string();
        assert!(
            e.contains("converter.vout") && e.contains("half bridge"),
            "{e}"
        );
    }

    #[test]
    fn two_phases_cancel_ripple_at_half_duty() {
        // Two interleaved phases at D = 0.5 cancel exactly (common practice, no source:
        // the classic interleaving cancellation at D = k/N).
        let mut s = buck("phases = 2");
        s.converter.vout.0 = 6.0;
        let op = &operating_points(&s)[0];
        assert!(op.current_pp < 1e-9, "{}", op.current_pp);
    }

    #[test]
    fn interleaved_ripple_follows_the_n_phase_closed_form() {
        // N phases shifted by T/N: with D in [k/N, (k+1)/N], k+1 phases
        // conduct for (N·D − k)·T/N of each T/N and the summed current rises
        // by ((k+1)·vin − N·vout)/L over that time (the inductor law, Erickson
        // & Maksimović, ch. 2, summed over the phases), so
        // ΔI_N = vin·T·(N·D − k)·(k + 1 − N·D)/(N·L): zero at D = k/N (the
        // cancellation points) and largest half-way between them.
        for phases in [2u32, 3, 4] {
            for &vout in &[1.0, 2.5, 3.3, 4.0, 6.0, 7.9, 9.0] {
                let mut s = buck(&format!("phases = {phases}"));
                s.converter.vout.0 = vout;
                let op = &operating_points(&s)[0];
                let (vin, l, t) = (12.0, 2.2e-6, 1.0 / 600e3);
                let n = phases as f64;
                let d = vout / vin;
                let k = (n * d).floor();
                let want = vin * t * (n * d - k) * (k + 1.0 - n * d) / (n * l);
                assert!(
                    (op.current_pp - want).abs() < 1e-9 + 1e-9 * want,
                    "N={phases} D={d}: {} vs {want}",
                    op.current_pp
                );
            }
        }
    }

    #[test]
    fn flyback_mean_is_zero_and_edges_keep_it_near_zero() {
        let t = "[converter]\ntopology = \"flyback\"\nvin = 48\nvout = 12\niout = 2\nfsw = \"250k\"\ninductance = \"60u\"\nturns_ratio = 0.5\nedge_time = \"30n\"\n[target]\nripple_pp = \"50m\"\n";
        let s = Scenario::from_str(t, "t").unwrap();
        let op = &operating_points(&s)[0];
        // Charge balance: the capacitor current averages to zero.
        assert!(op.waveform.mean().abs() < 1e-2, "{}", op.waveform.mean());
    }
}
