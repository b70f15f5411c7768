//! What stands between the converter's current and the measured node: the
//! one place that knows the circuit around the bank.
//!
//! Today's shape ([`Network`]): the converter's current source drives the
//! converter's node, where its internal capacitance sits (a series R-L-C
//! branch, when the scenario gives one); the board's connection inductance
//! `Lc` leads to the bank's node, where every added capacitor sits and where
//! the ripple is measured. With `Y_b` the added bank's admittance and
//! `Y_int` the internal branch's, the voltage at the bank's node per ampere
//! of converter current is
//!
//! `Z_t = 1 / (Y_b + Y_int + jωLc·Y_int·Y_b)`
//!
//! (node analysis of the two nodes; with `Lc = 0` it is plain `1/(Y_b + Y_int)`).
//!
//! Ready for an LC post-filter ([`Ladder`]): the converter-side bank on the
//! bank's node above, a series inductor (inductance, DCR and its parallel
//! capacitance), and the load-side node with the load-side bank and an
//! optional R-C damping leg. It is not wired into a command yet.
//!
//! Everything here is plain arithmetic on admittances; the evaluator
//! tabulates what it needs once and calls the `*_with` forms in its hot path,
//! so nothing here allocates.

use crate::scenario::Scenario;
use num_complex::Complex64;
use std::f64::consts::PI;

/// Angular frequency, rad/s, at which the network's transfer impedance is
/// taken as its high-frequency asymptote `a0 + jω·a1` (far above every
/// self-resonance: the next term is smaller by (ω_res/Ω)²).
pub const OMEGA_ASYMPTOTE: f64 = 2.0 * PI * 1e13;

/// Admittance of one capacitor: 1 / (ESR + jωL + 1/(jωC)).
#[inline]
pub fn admittance(esr: f64, esl: f64, c: f64, f: f64) -> Complex64 {
    let w = 2.0 * PI * f;
    Complex64::new(esr, w * esl - 1.0 / (w * c)).inv()
}

/// Admittance of one capacitor at the complex frequency `s`:
/// 1 / (ESR + sL + 1/(sC)) (the load step's shifted contour).
#[inline]
pub fn admittance_s(esr: f64, esl: f64, c: f64, s: Complex64) -> Complex64 {
    (Complex64::new(esr, 0.0) + s * esl + (s * c).inv()).inv()
}

/// One series R-L-C branch to ground.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Branch {
    /// Series resistance, Ω.
    pub esr: f64,
    /// Series inductance, H.
    pub esl: f64,
    /// Capacitance, F.
    pub c: f64,
}

impl Branch {
    /// The branch's admittance at frequency `f`, Hz.
    #[inline]
    pub fn admittance(&self, f: f64) -> Complex64 {
        admittance(self.esr, self.esl, self.c, f)
    }

    /// The branch's admittance at the complex frequency `s`.
    #[inline]
    pub fn admittance_s(&self, s: Complex64) -> Complex64 {
        admittance_s(self.esr, self.esl, self.c, s)
    }
}

/// Today's network: the converter's node with its internal capacitance, the
/// connection inductance, and the bank's (measured) node.
#[derive(Debug, Clone, PartialEq)]
pub struct Network {
    /// The converter's internal capacitance, when the scenario gives one.
    pub internal: Option<Branch>,
    /// Inductance between the converter's node and the bank's node, H.
    pub connection_inductance: f64,
    /// The internal admittance at [`OMEGA_ASYMPTOTE`].
    internal_big: Complex64,
}

impl Network {
    /// The network a scenario describes (`converter.internal_*`,
    /// `board.connection_inductance`).
    pub fn from_scenario(s: &Scenario) -> Network {
        let c = &s.converter;
        Network::new(
            c.internal_capacitance.map(|ci| Branch {
                esr: c.internal_esr.0,
                esl: c.internal_esl.0,
                c: ci.0,
            }),
            s.board.connection_inductance.0,
        )
    }

    /// A network from its parts.
    pub fn new(internal: Option<Branch>, connection_inductance: f64) -> Network {
        let mut n = Network {
            internal,
            connection_inductance,
            internal_big: Complex64::default(),
        };
        n.internal_big = n.internal_admittance(OMEGA_ASYMPTOTE / (2.0 * PI));
        n
    }

    /// Whether the converter has capacitance of its own.
    pub(crate) fn has_internal(&self) -> bool {
        self.internal.is_some()
    }

    /// Admittance of the internal branch at `f` (0 without one).
    #[inline]
    pub(crate) fn internal_admittance(&self, f: f64) -> Complex64 {
        match &self.internal {
            Some(b) => b.admittance(f),
            None => Complex64::new(0.0, 0.0),
        }
    }

    /// Admittance of the internal branch at the complex frequency `s`.
    #[inline]
    pub(crate) fn internal_admittance_s(&self, s: Complex64) -> Complex64 {
        match &self.internal {
            Some(b) => b.admittance_s(s),
            None => Complex64::new(0.0, 0.0),
        }
    }

    /// `G = 1 + jωLc·Y_int` for the internal admittance `yi` at angular
    /// frequency `w`, so that the total admittance the current sees is
    /// `1/Z_t = Y_b·G + Y_int` (linear in the bank's admittance).
    #[inline]
    pub(crate) fn coupling_with(&self, yi: Complex64, w: f64) -> Complex64 {
        self.coupling_s(yi, Complex64::new(0.0, w))
    }

    /// `G = 1 + s·Lc·Y_int` at the complex frequency `s`.
    #[inline]
    pub(crate) fn coupling_s(&self, yi: Complex64, s: Complex64) -> Complex64 {
        Complex64::new(1.0, 0.0) + s * self.connection_inductance * yi
    }

    /// Transfer impedance (V at the bank's node per A of converter current)
    /// for the added bank's admittance `yb` and the internal admittance `yi`,
    /// both at angular frequency `w`: `1 / (Y_b + Y_int + jωLc·Y_int·Y_b)`.
    #[inline]
    pub fn transfer_with(&self, yb: Complex64, yi: Complex64, w: f64) -> Complex64 {
        two_node_transfer(yi, Complex64::new(0.0, w * self.connection_inductance), yb)
    }

    /// Transfer impedance to the measured node with a post-filter behind
    /// the bank's node: the filter adds the admittance `ty` at the bank's
    /// node and divides its voltage by `1/h` on the way to the load node
    /// ([`tail_terms`]), so `Z = h / (G·(Y_b + ty) + Y_int)`. With `ty = 0`
    /// and `h = 1` it is [`Network::transfer_with`].
    #[inline]
    pub fn transfer_tail(
        &self,
        yb: Complex64,
        yi: Complex64,
        w: f64,
        ty: Complex64,
        h: Complex64,
    ) -> Complex64 {
        h * (self.coupling_with(yi, w) * (yb + ty) + yi).inv()
    }

    /// Transfer impedance for the added bank's admittance `yb` at `f`, Hz.
    pub fn transfer(&self, yb: Complex64, f: f64) -> Complex64 {
        self.transfer_with(yb, self.internal_admittance(f), 2.0 * PI * f)
    }

    /// Admittance the internal branch adds at the bank's node with the
    /// converter's current source open (through the connection inductance):
    /// `Y_int / (1 + jωLc·Y_int)`. With the bank's own admittance added it
    /// is what an impedance meter at the bank's node sees.
    pub(crate) fn internal_at_bank(&self, f: f64) -> Complex64 {
        let yi = self.internal_admittance(f);
        yi / self.coupling_with(yi, 2.0 * PI * f)
    }

    /// Current phasor in one capacitor of admittance `y_part` for the
    /// converter's current phasor `current` when the transfer impedance is
    /// `z_t`: the part's share `Y_i / Y_total` with `Y_total = 1/Z_t`.
    #[inline]
    pub(crate) fn part_current(current: Complex64, z_t: Complex64, y_part: Complex64) -> Complex64 {
        current * z_t * y_part
    }

    /// Impedance seen at the bank's node with the converter's current source
    /// open, for the added bank's admittance `yb` and the internal admittance
    /// `yi` at angular frequency `w`: `1 / (Y_b + Y_int/(1 + jωLc·Y_int))`
    /// (what the load sees; the load-step response's own path).
    #[inline]
    pub fn open_impedance_with(&self, yb: Complex64, yi: Complex64, w: f64) -> Complex64 {
        (yb + yi / self.coupling_with(yi, w)).inv()
    }

    /// The two impedances of a load step at the bank's node, `(Z_t, Z_open)`:
    /// the voltage there per ampere of converter current
    /// ([`Network::transfer_with`]) and per ampere drawn by a load there with
    /// the converter open ([`Network::open_impedance_with`]).
    #[inline]
    pub fn step_impedances_with(
        &self,
        yb: Complex64,
        yi: Complex64,
        s: Complex64,
    ) -> (Complex64, Complex64) {
        (
            two_node_transfer(yi, s * self.connection_inductance, yb),
            (yb + yi / self.coupling_s(yi, s)).inv(),
        )
    }

    /// As [`Network::step_impedances_with`] at the load node of a post-filter
    /// behind the bank's node: the load node's own admittance `y_load` (the
    /// load-side bank and the damping leg) and the filter inductor's series
    /// impedance `zs`, all at angular frequency `w`. The bank's node seen
    /// by the converter's current is the Norton source `I/G` with
    /// admittance `Y1 = Y_b + Y_int/G`; the filter loads it with
    /// `Y_load/(1 + Zs·Y_load)` and divides its voltage by `1 + Zs·Y_load`
    /// on the way to the load node. Seen from the load node with the
    /// converter open: `Y_load` in parallel with `Zs + 1/Y1`.
    #[inline]
    pub(crate) fn step_impedances_tail(
        &self,
        yb: Complex64,
        yi: Complex64,
        s: Complex64,
        y_load: Complex64,
        zs: Complex64,
    ) -> (Complex64, Complex64) {
        let g = self.coupling_s(yi, s);
        let y1 = yb + yi / g;
        let div = Complex64::new(1.0, 0.0) + zs * y_load;
        let z_conv = (g * (y1 + y_load / div)).inv();
        // Nothing at the bank's node: the inductor leads nowhere.
        let through = if y1 == Complex64::default() {
            Complex64::default()
        } else {
            (zs + y1.inv()).inv()
        };
        let z_open = (y_load + through).inv();
        (z_conv / div, z_open)
    }

    /// The high-frequency asymptote `(a0, a1)` of the transfer impedance,
    /// `Z_t → a0 + jω·a1`, for the added bank's admittance `yb_big` at
    /// [`OMEGA_ASYMPTOTE`]: a resistance and an inductance. (0, 0) when the
    /// network has nothing at all.
    pub fn asymptote(&self, yb_big: Complex64) -> (f64, f64) {
        self.asymptote_tail(yb_big, Complex64::default(), Complex64::new(1.0, 0.0))
    }

    /// As [`Network::asymptote`] with a post-filter's terms `(ty, h)` at
    /// [`OMEGA_ASYMPTOTE`] ([`Network::transfer_tail`]).
    pub(crate) fn asymptote_tail(
        &self,
        yb_big: Complex64,
        ty: Complex64,
        h: Complex64,
    ) -> (f64, f64) {
        let z = self.transfer_tail(yb_big, self.internal_big, OMEGA_ASYMPTOTE, ty, h);
        if z.is_finite() {
            let a1 = z.im / OMEGA_ASYMPTOTE;
            // Below a femtohenry the slope is a capacitor's −1/(Ω²C) tail,
            // not an inductance: no ESL at all.
            (z.re, if a1.abs() < 1e-15 { 0.0 } else { a1 })
        } else {
            (0.0, 0.0)
        }
    }
}

/// What a post-filter stage does to the bank's node, for the load-side
/// node's total admittance `y_load` (load-side bank and damping) and the
/// series impedance `zs` of the filter inductor: the admittance it adds at
/// the bank's node, `Y_load / (1 + Zs·Y_load)`, and the voltage ratio from
/// the bank's node to the load node, `1 / (1 + Zs·Y_load)` (a series
/// impedance into a shunt admittance: a voltage divider).
#[inline]
pub fn tail_terms(y_load: Complex64, zs: Complex64) -> (Complex64, Complex64) {
    let h = (Complex64::new(1.0, 0.0) + zs * y_load).inv();
    (y_load * h, h)
}

/// Voltage at node 2 per ampere injected at node 1, for node 1's admittance
/// to ground `y1`, node 2's `y2` and a series impedance `zs` between them:
/// `1 / (Y1 + Y2 + Y1·Zs·Y2)` (two-node analysis).
#[inline]
fn two_node_transfer(y1: Complex64, zs: Complex64, y2: Complex64) -> Complex64 {
    (y2 + y1 + zs * y1 * y2).inv()
}

/// The filter inductor of a post-filter stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SeriesInductor {
    /// Inductance, H.
    pub l: f64,
    /// DC resistance, Ω.
    pub dcr: f64,
    /// Parallel (winding) capacitance, F; 0 when the self-resonance is unknown.
    pub cp: f64,
}

impl SeriesInductor {
    /// `(DCR + jωL) ∥ 1/(jωC_p)` at `f`, Hz.
    pub fn impedance(&self, f: f64) -> Complex64 {
        let w = 2.0 * PI * f;
        let zl = Complex64::new(self.dcr, w * self.l);
        if zl == Complex64::default() {
            return zl;
        }
        (zl.inv() + Complex64::new(0.0, w * self.cp)).inv()
    }

    /// `(DCR + sL) ∥ 1/(sC_p)` at the complex frequency `s`.
    pub fn impedance_s(&self, s: Complex64) -> Complex64 {
        let zl = Complex64::new(self.dcr, 0.0) + s * self.l;
        if zl == Complex64::default() {
            return zl;
        }
        (zl.inv() + s * self.cp).inv()
    }
}

/// A damping leg at the load-side node: a resistor in series with a capacitor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Damping {
    /// The damping resistor, Ω.
    pub r: f64,
    /// The damping capacitor (its own ESR and ESL included).
    pub cap: Branch,
}

impl Damping {
    /// The leg's admittance at `f`, Hz.
    pub fn admittance(&self, f: f64) -> Complex64 {
        admittance(self.r + self.cap.esr, self.cap.esl, self.cap.c, f)
    }
}

/// A two-node ladder for an LC post-filter: today's [`Network`] up to the
/// converter-side bank, then the filter inductor to the load-side node with
/// the load-side bank and an optional damping leg. Not wired yet.
#[derive(Debug, Clone, PartialEq)]
pub struct Ladder {
    /// The converter's node, connection inductance and converter-side node.
    pub front: Network,
    /// The filter inductor between the converter-side and load-side nodes.
    pub inductor: SeriesInductor,
    /// The optional R-C damping leg at the load-side node.
    pub damping: Option<Damping>,
}

impl Ladder {
    /// Voltages per ampere of converter current at the converter-side node
    /// and at the load-side node, `(Z_conv, Z_load)`, for the converter-side
    /// bank's admittance `y_conv` and the load-side bank's `y_load` at `f`.
    ///
    /// The front seen from the converter-side node is a Norton source
    /// `I/(1 + jωLc·Y_int)` with admittance `Y_int/(1 + jωLc·Y_int)`; the
    /// inductor and the load side load that node with `Y2/(1 + Zs·Y2)`, and
    /// the load node divides its voltage by `1 + Zs·Y2`.
    pub fn transfer(&self, y_conv: Complex64, y_load: Complex64, f: f64) -> (Complex64, Complex64) {
        let w = 2.0 * PI * f;
        let yi = self.front.internal_admittance(f);
        let g = self.front.coupling_with(yi, w);
        let zs = self.inductor.impedance(f);
        let y2 = y_load
            + self
                .damping
                .map_or(Complex64::default(), |d| d.admittance(f));
        let div = Complex64::new(1.0, 0.0) + zs * y2;
        let y_node = y_conv + yi / g + y2 / div;
        let z_conv = (g * y_node).inv();
        (z_conv, z_conv / div)
    }

    /// Impedance seen at the load-side node with the converter's current
    /// source open, for the converter-side bank's admittance `y_conv` and the
    /// load-side bank's `y_load` at `f`: the load-side admittance (bank and
    /// damping) in parallel with the inductor in series with everything at
    /// the converter-side node.
    pub fn open_impedance_at_load(
        &self,
        y_conv: Complex64,
        y_load: Complex64,
        f: f64,
    ) -> Complex64 {
        self.step_impedances(y_conv, y_load, f).1
    }

    /// The two impedances of a load step at the load-side node,
    /// `(Z_t, Z_open)`: the voltage there per ampere of converter current
    /// ([`Ladder::transfer`]'s second value) and per ampere drawn by a load
    /// there with the converter open ([`Ladder::open_impedance_at_load`]).
    pub fn step_impedances(
        &self,
        y_conv: Complex64,
        y_load: Complex64,
        f: f64,
    ) -> (Complex64, Complex64) {
        let w = 2.0 * PI * f;
        let y2 = y_load
            + self
                .damping
                .map_or(Complex64::default(), |d| d.admittance(f));
        self.front.step_impedances_tail(
            y_conv,
            self.front.internal_admittance(f),
            Complex64::new(0.0, w),
            y2,
            self.inductor.impedance(f),
        )
    }

    #[cfg(test)]
    /// The load node's transfer impedance alone (the measured figure).
    pub(crate) fn transfer_to_load(
        &self,
        y_conv: Complex64,
        y_load: Complex64,
        f: f64,
    ) -> Complex64 {
        self.transfer(y_conv, y_load, f).1
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An internal 10 µF branch (5 mΩ, 1 nH) behind `line` H of line.
    fn ten_microfarad_branch(line: f64) -> Network {
        Network::new(
            Some(Branch {
                esr: 5e-3,
                esl: 1e-9,
                c: 10e-6,
            }),
            line,
        )
    }

    fn close(a: Complex64, b: Complex64, rel: f64) -> bool {
        (a - b).norm() <= rel * b.norm().max(1e-300)
    }

    #[test]
    fn transfer_matches_direct_node_analysis() {
        // Two-node circuit solved by hand (any circuits text, e.g. Hayt &
        // Kemmerly, Engineering Circuit Analysis, nodal analysis): the
        // current I into node 1 splits into Y_int and the path jωLc + 1/Y_b;
        // V_b = V_1 · (1/Y_b) / (jωLc + 1/Y_b).
        let net = ten_microfarad_branch(2e-9);
        for f in [1e4, 3e5, 1e6, 7e6, 5e7] {
            let yb = admittance(3e-3, 0.5e-9, 47e-6, f) * 3.0;
            let w = 2.0 * PI * f;
            let yi = net.internal_admittance(f);
            let zl = Complex64::new(0.0, w * 2e-9);
            let v1 = (yi + (zl + yb.inv()).inv()).inv();
            let vb = v1 * yb.inv() / (zl + yb.inv());
            assert!(close(net.transfer(yb, f), vb, 1e-9), "f = {f}");
        }
    }

    #[test]
    fn without_connection_inductance_the_admittances_add() {
        // Parallel admittances add (Kirchhoff's current law).
        let net = Network::new(
            Some(Branch {
                esr: 2e-3,
                esl: 0.0,
                c: 22e-6,
            }),
            0.0,
        );
        let f = 4e5;
        let yb = admittance(1e-3, 1e-9, 100e-6, f);
        let z = net.transfer(yb, f);
        assert!(close(z, (yb + net.internal_admittance(f)).inv(), 1e-12));
    }

    #[test]
    fn ideal_lc_ladder_attenuates_as_second_order() {
        // Ideal L into ideal C: V_load / V_conv = 1 / (1 − (f/f0)²),
        // f0 = 1/(2π√(LC)) (second-order LC low-pass; Hayt & Kemmerly,
        // Engineering Circuit Analysis, frequency response).
        let (l, c): (f64, f64) = (1e-6, 10e-6);
        let f0 = 1.0 / (2.0 * PI * (l * c).sqrt());
        let ladder = Ladder {
            front: Network::new(None, 0.0),
            inductor: SeriesInductor {
                l,
                dcr: 0.0,
                cp: 0.0,
            },
            damping: None,
        };
        for r in [0.1, 0.5, 0.9, 1.1, 2.0, 10.0, 100.0] {
            let f = r * f0;
            let y_conv = admittance(0.0, 0.0, 22e-6, f);
            let y_load = admittance(0.0, 0.0, c, f);
            let (zc, zl) = ladder.transfer(y_conv, y_load, f);
            let att = (zl / zc).norm();
            let want = 1.0 / (1.0 - r * r).abs();
            assert!(
                (att - want).abs() <= 1e-9 * want,
                "f/f0 = {r}: {att} vs {want}"
            );
        }
    }

    #[test]
    fn ladder_with_a_short_inductor_is_the_front_network() {
        // A zero inductor joins the two nodes: the banks are in parallel.
        let front = ten_microfarad_branch(1e-9);
        let ladder = Ladder {
            front: front.clone(),
            inductor: SeriesInductor {
                l: 0.0,
                dcr: 0.0,
                cp: 0.0,
            },
            damping: Some(Damping {
                r: 0.2,
                cap: Branch {
                    esr: 1e-3,
                    esl: 0.0,
                    c: 100e-6,
                },
            }),
        };
        let f = 6e5;
        let ya = admittance(3e-3, 0.4e-9, 22e-6, f);
        let yl = admittance(3e-3, 0.4e-9, 47e-6, f);
        let yd = admittance(0.2 + 1e-3, 0.0, 100e-6, f);
        let (zc, zl) = ladder.transfer(ya, yl, f);
        let want = front.transfer(ya + yl + yd, f);
        assert!(close(zc, want, 1e-12) && close(zl, want, 1e-12));
    }

    #[test]
    fn open_impedance_is_the_node_impedance_without_the_source() {
        // Nodal analysis with the current source removed (Hayt & Kemmerly,
        // Engineering Circuit Analysis, nodal analysis): the bank's node sees
        // Y_b in parallel with jωLc in series with the internal branch.
        let net = ten_microfarad_branch(2e-9);
        for f in [1e3, 5e4, 1e6, 3e7] {
            let w = 2.0 * PI * f;
            let yb = admittance(3e-3, 0.5e-9, 47e-6, f) * 2.0;
            let yi = net.internal_admittance(f);
            let want = (yb + (Complex64::new(0.0, w * 2e-9) + yi.inv()).inv()).inv();
            let (zt, zo) = net.step_impedances_with(yb, yi, Complex64::new(0.0, w));
            assert!(close(zo, want, 1e-9), "f = {f}");
            assert!(close(zt, net.transfer(yb, f), 1e-12));
        }
        // Without a connection inductance both are the parallel impedance.
        let flat = Network::new(net.internal, 0.0);
        let f = 2e5;
        let yb = admittance(3e-3, 0.5e-9, 47e-6, f);
        let (zt, zo) = flat.step_impedances_with(
            yb,
            flat.internal_admittance(f),
            Complex64::new(0.0, 2.0 * PI * f),
        );
        assert!(close(zt, zo, 1e-12));
    }

    #[test]
    fn ladder_open_impedance_by_nodal_analysis() {
        // The load node with the source removed: Y_load ∥ (Zs + 1/Y_front),
        // Y_front the converter-side bank plus Lc and the internal branch in
        // series (Hayt & Kemmerly, nodal analysis); the transfer to the load
        // is the one of `transfer`. A zero inductor gives the front network's
        // open impedance with both banks in parallel.
        let front = ten_microfarad_branch(1e-9);
        let ind = SeriesInductor {
            l: 0.47e-6,
            dcr: 4e-3,
            cp: 3e-12,
        };
        let ladder = Ladder {
            front: front.clone(),
            inductor: ind,
            damping: None,
        };
        for f in [2e3, 1e5, 2e6, 4e7] {
            let w = 2.0 * PI * f;
            let yc = admittance(3e-3, 0.4e-9, 22e-6, f) * 2.0;
            let yl = admittance(2e-3, 0.3e-9, 47e-6, f) * 3.0;
            let yi = front.internal_admittance(f);
            let yfront = yc + (Complex64::new(0.0, w * 1e-9) + yi.inv()).inv();
            let want = (yl + (ind.impedance(f) + yfront.inv()).inv()).inv();
            let (zt, zo) = ladder.step_impedances(yc, yl, f);
            assert!(close(zo, want, 1e-9), "f = {f}");
            assert!(close(zt, ladder.transfer_to_load(yc, yl, f), 1e-12));
        }
        let short = Ladder {
            front: front.clone(),
            inductor: SeriesInductor {
                l: 0.0,
                dcr: 0.0,
                cp: 0.0,
            },
            damping: None,
        };
        let f = 3e5;
        let yc = admittance(3e-3, 0.4e-9, 22e-6, f);
        let yl = admittance(2e-3, 0.3e-9, 47e-6, f);
        let w = 2.0 * PI * f;
        let want = front.open_impedance_with(yc + yl, front.internal_admittance(f), w);
        assert!(close(short.open_impedance_at_load(yc, yl, f), want, 1e-12));
    }

    #[test]
    fn complex_frequency_forms_agree_with_the_real_ones_on_the_axis() {
        // The load step's contour forms at s = j·2πf are the impedances of
        // the ripple path, which the nodal-analysis checks above hold.
        for f in [1e3, 2e5, 3e7] {
            let s = Complex64::new(0.0, 2.0 * PI * f);
            let a = admittance(3e-3, 0.5e-9, 47e-6, f);
            assert!(close(admittance_s(3e-3, 0.5e-9, 47e-6, s), a, 1e-12));
            let ind = SeriesInductor {
                l: 0.47e-6,
                dcr: 4e-3,
                cp: 3e-12,
            };
            assert!(close(ind.impedance_s(s), ind.impedance(f), 1e-12));
        }
    }

    #[test]
    fn asymptote_is_the_esr_and_esl_in_parallel() {
        // Far above resonance each capacitor is R + jωL; two equal ones in
        // parallel are R/2 + jωL/2 (series-parallel reduction).
        let net = Network::new(None, 0.0);
        let f_big = OMEGA_ASYMPTOTE / (2.0 * PI);
        let yb = admittance(4e-3, 1e-9, 10e-6, f_big) * 2.0;
        let (a0, a1) = net.asymptote(yb);
        assert!((a0 - 2e-3).abs() < 1e-9 && (a1 - 0.5e-9).abs() < 1e-15);
    }
}
