//! The LC post-filter: what a filtered design is made of.
//!
//! A filtered design adds, after the converter-side bank, a series inductor
//! (one or more equal inductors in parallel), a load-side bank and an
//! optional damping leg (a resistor in series with capacitors from the
//! capacitor catalog) at the load-side node. The ripple is measured at the
//! load-side node. [`crate::network::Ladder`] holds the circuit;
//! this module holds the choices.

/// Whether `design` considers a post-filter (`[filter] use`, `--filter`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum FilterUse {
    /// Capacitors only (the default).
    #[default]
    Off,
    /// Design both a capacitor-only bank and a filtered design; keep the better.
    Auto,
    /// A filtered design only.
    On,
}

/// Which damping the search may use (`[filter] damping`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DampingMode {
    /// No damping leg (the load-side bank's own ESR is the only damping).
    None,
    /// Always an R–C leg.
    Rc,
    /// Whichever is better: none or an R–C leg (the default).
    #[default]
    Auto,
}

/// The damping leg of a filtered design.
#[derive(Debug, Clone, PartialEq)]
pub struct DampingLeg {
    /// The damping resistor, Ω (one resistor in series with the capacitors).
    pub resistance: f64,
    /// Capacitor catalog index of the damping capacitor.
    pub capacitor: usize,
    /// Number of damping capacitors in parallel.
    pub count: u32,
}

/// The filter of a design: the inductor, the load-side bank and the damping.
/// The converter-side bank is the design's ordinary bank.
#[derive(Debug, Clone, PartialEq)]
pub struct FilterDesign {
    /// Inductor catalog index.
    pub inductor: usize,
    /// Equal inductors in parallel (1 in almost every design).
    pub count: u32,
    /// The load-side bank: capacitor catalog indices and counts.
    pub load_bank: Vec<(usize, u32)>,
    /// The damping leg, if any.
    pub damping: Option<DampingLeg>,
}

/// The one place that stops a command needing the filter's evaluator
/// before it is wired in: the inputs were read and checked, the figures
/// cannot be computed yet. `what` names the request.
pub fn not_yet_wired(what: &str) -> anyhow::Error {
    anyhow::anyhow!(
        "{what}: the inputs are valid, but the post-filter's evaluation is not yet wired into this version; \
         nothing was computed and no file was written"
    )
}
