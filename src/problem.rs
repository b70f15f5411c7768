//! From a scenario and a catalog to the question the evaluator answers:
//! which parts may be used (and why the others may not), the operating
//! corners and the current spectra.

use crate::catalog::{Catalog, Part, Status, Technology};
use crate::converter::{self, OperatingPoint};
use crate::evaluator::{Band, Corner, Evaluator, PartModel, TailLine, TailRole};
use crate::filter::FilterUse;
use crate::inductors::{Inductor, InductorCatalog};
use crate::limits::{self, LimitId};
use crate::scenario::{CapBasis, Objective, Scenario, Topology};
use anyhow::{bail, Result};
use serde::Serialize;

/// A part that may not be used, and why.
#[derive(Debug, Clone, Serialize)]
pub struct Excluded {
    /// Catalog part id.
    pub part: String,
    /// Why it may not be used.
    pub reason: String,
}

/// Everything the evaluator and the optimizer need, prepared once.
#[derive(Clone)]
pub struct Problem {
    /// The scenario, with command-line overrides applied.
    pub scenario: Scenario,
    /// The parts catalog.
    pub catalog: Catalog,
    /// Catalog indices of the parts that may be used.
    pub eligible: Vec<usize>,
    /// Every part that may not be used, with its reason.
    pub excluded: Vec<Excluded>,
    /// The inductor catalog, when a post-filter may be designed or assessed
    /// (`[filter] inductors`, `--inductors`, or the bundled demo catalog).
    pub inductors: Option<InductorCatalog>,
    /// Inductor catalog indices of the inductors that may be used.
    pub inductors_eligible: Vec<usize>,
    /// Every inductor that may not be used, with its reason.
    pub inductors_excluded: Vec<Excluded>,
    /// The converter's operating points (one per input-voltage corner).
    pub ops: Vec<OperatingPoint>,
    /// The operating points the corner region's search starts from: the
    /// input-voltage sweep at each region inductance.
    pub region_ops: Vec<OperatingPoint>,
    /// Warnings about the inputs.
    pub warnings: Vec<String>,
    /// A post-filter fixed behind every bank this problem evaluates (the
    /// filter search sets it; `None`: capacitors only).
    pub filter: Option<crate::filter::FilterDesign>,
    /// An evaluator built once over a part list, cloned by
    /// [`Problem::evaluator`] for that same list (the filter search runs one
    /// search per filter over the same candidates).
    pub(crate) template: Option<std::sync::Arc<(Vec<usize>, Evaluator)>>,
}

/// Why a part or inductor rated from `tmin` to `tmax` °C may not be used
/// in the scenario's environment, or `None`.
fn temperature_reason(s: &Scenario, tmin: Option<f64>, tmax: Option<f64>) -> Option<String> {
    let env = &s.environment;
    if let Some(t) = tmin {
        if t > env.temperature_min {
            return Some(format!(
                "rated down to {t} °C only; the environment reaches {} °C",
                env.temperature_min
            ));
        }
    }
    if let Some(t) = tmax {
        if t < env.temperature_max {
            return Some(format!(
                "rated up to {t} °C only; the environment reaches {} °C",
                env.temperature_max
            ));
        }
    }
    None
}

/// Why a part or inductor of this status may not be used, or `None`.
fn status_reason(s: &Scenario, status: Status) -> Option<String> {
    match status {
        Status::Obsolete => Some("status obsolete".into()),
        Status::Nrnd if !s.selection.allow_nrnd => {
            Some("status nrnd (not recommended for new designs; set selection.allow_nrnd)".into())
        }
        _ => None,
    }
}

/// Why a part or inductor of this height (mm) and id may not be used:
/// above or without a height under `board.max_height`, or excluded.
fn height_or_exclusion(s: &Scenario, height: Option<f64>, id: &str) -> Option<String> {
    if let Some(h) = s.board.max_height {
        match height {
            Some(ph) if ph > h.0 => {
                return Some(format!(
                    "height {ph} mm is above board.max_height {} mm",
                    h.0
                ))
            }
            None => {
                return Some(format!(
                    "no height given, and board.max_height is {} mm",
                    h.0
                ))
            }
            _ => {}
        }
    }
    if s.selection.exclude.iter().any(|e| e == id) {
        return Some("excluded by the scenario or the command line".into());
    }
    None
}

/// Why a part may not be used in this scenario, or `None` if it may.
pub(crate) fn ineligibility(s: &Scenario, p: &Part, objective: Objective) -> Option<String> {
    let vout = s.converter.vout.0;
    let der = s.derating(p.technology);
    if p.rated_voltage * der < vout {
        return Some(format!(
            "rated {} V × derating {} = {:.2} V is below vout {} V",
            p.rated_voltage,
            der,
            p.rated_voltage * der,
            vout
        ));
    }
    let (tmin, tmax) = p.temperature_range();
    if let Some(r) = temperature_reason(s, tmin, tmax) {
        return Some(r);
    }
    if let Some(r) = status_reason(s, p.status) {
        return Some(r);
    }
    if let Some(r) = height_or_exclusion(s, p.height, &p.id) {
        return Some(r);
    }
    if let Some(r) = limits::ineligible(s, p, LimitId::MaxCapacitance) {
        return Some(r);
    }
    // Last, so that it only speaks for parts otherwise allowed (with
    // objective `area` it is an input error).
    if let Some(r) = limits::ineligible(s, p, LimitId::MaxArea) {
        return Some(r);
    }
    if p.area.is_none() && objective == Objective::Area {
        return Some(NO_AREA.into());
    }
    None
}

/// Why an inductor may not be used as the post-filter's inductor in this
/// scenario, or `None` if it may. The current checks take the most
/// inductors the scenario allows in parallel (`filter.max_inductor_count`,
/// sharing the load equally); the saturation check with the inductor's own
/// ripple current needs a design and is the evaluator's
/// ([`Inductor::saturation_margin`]).
pub(crate) fn inductor_ineligibility(
    s: &Scenario,
    l: &Inductor,
    objective: Objective,
) -> Option<String> {
    let iout = s.converter.iout.0;
    let n = s.filter.max_inductor_count.max(1);
    let in_parallel = if n > 1 {
        format!(" ({n} in parallel, filter.max_inductor_count)")
    } else {
        String::new()
    };
    if let Some(r) = status_reason(s, l.status) {
        return Some(r);
    }
    if let Some(r) = temperature_reason(s, l.temp_min, l.temp_max) {
        return Some(r);
    }
    if let Some(r) = height_or_exclusion(s, l.height, &l.id) {
        return Some(r);
    }
    let fmt_a = |i: f64| crate::units::format_si(i, "A");
    if l.rated_current * (n as f64) < iout {
        return Some(format!(
            "rated current {} is below iout {}{in_parallel}",
            fmt_a(l.rated_current),
            fmt_a(iout)
        ));
    }
    if l.saturation_current * (n as f64) < iout {
        return Some(format!(
            "saturation current {} is below iout {}{in_parallel}, before any ripple",
            fmt_a(l.saturation_current),
            fmt_a(iout)
        ));
    }
    if let Some(v) = s.filter.max_dc_drop {
        let drop = l.dc_drop(iout, n);
        if drop > v.0 {
            return Some(format!(
                "DC drop iout · DCR = {} · {} = {}{in_parallel} is above filter.max_dc_drop {}",
                fmt_a(iout),
                crate::units::format_si(l.dcr / n as f64, "Ω"),
                crate::units::format_si(drop, "V"),
                crate::units::format_si(v.0, "V")
            ));
        }
    }
    if let Some(f) = l.srf {
        let fr = s.ripple_frequency();
        if f <= fr {
            return Some(format!(
                "self-resonant frequency {} is at or below the ripple frequency {}: the inductor is capacitive \
                 there and does not filter",
                crate::units::format_si(f, "Hz"),
                crate::units::format_si(fr, "Hz")
            ));
        }
    }
    if let (Some(max), Some(a)) = (s.board.max_area, l.area) {
        if a > max.0 {
            return Some(format!(
                "area {a} mm² alone is above board.max_area {} mm²",
                max.0
            ));
        }
    }
    if l.area.is_none() && objective == Objective::Area {
        return Some(NO_AREA.into());
    }
    None
}

/// Reason for a part with no footprint where one is needed.
pub(crate) const NO_AREA: &str = "no area and no EIA case code to derive it from";

/// A part's contribution to the added-capacitance limit on the scenario's basis.
pub(crate) fn cap_limit_value(s: &Scenario, p: &Part) -> f64 {
    match s.selection.max_capacitance_basis {
        CapBasis::Nominal => p.c_nominal_max(),
        CapBasis::Effective => p.c_nominal_max() * p.bias_factor(s.converter.vout.0),
    }
}

/// Scale a module's unit-amplitude current so that its internal bank alone
/// shows the measured `standalone_ripple_pp` at the standalone bandwidth
/// (typical corner), one input-voltage corner at a time.
fn calibrate_module(s: &Scenario, ops: &mut [OperatingPoint]) {
    let c = &s.converter;
    let Some(target) = c.standalone_ripple_pp else {
        return;
    };
    let mut alone = s.clone();
    alone.target.bandwidth = c.standalone_bandwidth.or(s.target.bandwidth);
    alone.target.bandwidth_order = s.standalone_bandwidth_order();
    for op in ops.iter_mut() {
        let mut ev = Evaluator::new(&alone, std::slice::from_ref(op), Vec::new());
        let pp = ev.ripple_pp(&[], Corner::Typical, Band::Limited);
        let scale = if pp > 0.0 && pp.is_finite() {
            target.0 / pp
        } else {
            0.0
        };
        op.waveform.points.iter_mut().for_each(|p| p.1 *= scale);
        op.current_pp *= scale;
    }
}

impl Problem {
    /// Check the scenario against the catalog, sort the parts into eligible and excluded, and compute the operating points.
    pub fn new(scenario: Scenario, catalog: Catalog) -> Result<Problem> {
        Problem::with_inductors(scenario, catalog, None)
    }

    /// As [`Problem::new`], with the inductor catalog a post-filter's
    /// inductor is chosen from; its inductors are sorted into eligible and
    /// excluded like the capacitors.
    pub fn with_inductors(
        scenario: Scenario,
        catalog: Catalog,
        inductors: Option<InductorCatalog>,
    ) -> Result<Problem> {
        scenario.check_against_parts(&catalog, inductors.as_ref())?;
        let objective = scenario.selection.objective;
        {
            // An ideal current step through any ESL is a voltage impulse: with
            // no bandwidth there is no finite figure to judge.
            let c = &scenario.converter;
            let any_esl = scenario.board.mounting_inductance.0 > 0.0
                || c.internal_esl.0 > 0.0
                || catalog.parts.iter().any(|p| p.esl > 0.0);
            if matches!(c.topology, Topology::Flyback | Topology::Boost)
                && c.edge_time.0 == 0.0
                && scenario.target.bandwidth.is_none()
                && any_esl
            {
                bail!(
                    "{}: key `converter.edge_time`: is 0 and the target has no bandwidth: an ideal current step \
                     through the parts' ESL is a voltage impulse, so the full-bandwidth ripple is not finite; give \
                     the commutation time (typically 10-50 ns, e.g. edge_time = \"20n\") or a target.bandwidth",
                    scenario.source
                );
            }
        }
        let mut eligible = Vec::new();
        let mut excluded = Vec::new();
        for (i, p) in catalog.parts.iter().enumerate() {
            let why = ineligibility(&scenario, p, objective);
            if objective == Objective::Area && why.as_deref() == Some(NO_AREA) {
                bail!(
                    "{}: line {}, column `area`: part `{}` has no area and no EIA case code to derive it from, \
                     which objective `area` needs; give its area or exclude it",
                    catalog.source,
                    p.line,
                    p.id
                );
            }
            match why {
                None => eligible.push(i),
                Some(reason) => excluded.push(Excluded {
                    part: p.id.clone(),
                    reason,
                }),
            }
        }
        for (id, n) in &scenario.selection.require {
            if *n > 0 {
                if let Some(e) = excluded.iter().find(|e| &e.part == id) {
                    bail!(
                        "{}: key `selection.require.{id}`: the part is required but may not be used: {}",
                        scenario.source,
                        e.reason
                    );
                }
            }
        }
        let mut warnings = catalog.warnings.clone();
        let warnings_pre: Vec<String> = Vec::new();
        let no_temp: Vec<&str> = eligible
            .iter()
            .map(|&i| &catalog.parts[i])
            .filter(|p| p.temperature_range() == (None, None))
            .map(|p| p.id.as_str())
            .collect();
        if !no_temp.is_empty() {
            warnings.push(format!(
                "{} usable part(s) give no temperature range (no EIA code, no temp_min/temp_max) and are assumed to \
                 cover the environment: {}",
                no_temp.len(),
                no_temp.iter().take(5).copied().collect::<Vec<_>>().join(", ") + if no_temp.len() > 5 { ", …" } else { "" }
            ));
        }
        let mut ops = converter::operating_points(&scenario);
        let mut region_ops: Vec<OperatingPoint> = Vec::new();
        for l in converter::region_inductances(&scenario) {
            for vin in converter::region_vins(&scenario) {
                region_ops.push(converter::operating_point_at(&scenario, vin, l));
            }
        }
        if scenario.converter.topology == Topology::Module {
            calibrate_module(&scenario, &mut ops);
            calibrate_module(&scenario, &mut region_ops);
        }
        for op in &ops {
            if op.mode == "DCM" {
                warnings.push(format!(
                    "at vin = {} V the {} runs in discontinuous conduction",
                    op.vin.unwrap_or(0.0),
                    scenario.converter.topology.name()
                ));
            }
        }
        let conv = &scenario.converter;
        if conv.topology == Topology::Buck {
            if conv.edge_time.0 > 0.0 || conv.turns_ratio.is_some() {
                warnings.push(
                    "converter.edge_time and turns_ratio do not apply to a buck and are ignored"
                        .into(),
                );
            }
            for op in &ops {
                // Each phase's inductor current dips below zero when its ripple
                // exceeds twice its share of the load (common practice, no source).
                let per_phase = conv.iout.0 / conv.phases as f64;
                let vin = op.vin.unwrap_or(0.0);
                let d = conv.vout.0 / vin;
                let di = conv.vout.0 * (1.0 - d)
                    / (conv.inductance.map_or(f64::INFINITY, |l| l.0) * conv.fsw.0);
                if di / 2.0 > per_phase {
                    warnings.push(format!(
                        "at vin = {vin} V the inductor ripple ({di:.3} A p-p) exceeds twice the load per phase: a real \
                         buck would enter discontinuous conduction or run forced-continuous; the model assumes \
                         forced-continuous conduction"
                    ));
                }
            }
        }
        if conv.fsw.0 > 20e6 {
            warnings.push(format!(
                "converter.fsw is {}: above 20 MHz is unusual for a power converter; check the prefix",
                crate::units::format_si(conv.fsw.0, "Hz")
            ));
        }
        if conv.topology != Topology::Module && conv.inductance_tolerance.is_none() {
            warnings.push(
                "converter.inductance_tolerance not given: the nominal inductance only is used (0 %); \
                 power inductors are commonly ±20 %"
                    .into(),
            );
        }
        if conv.bridge.is_some() && conv.topology != Topology::Bridge {
            warnings.push(format!(
                "converter.bridge applies to topology bridge only and is ignored for a {}",
                conv.topology.name()
            ));
        }
        let listed = |ids: &[&str]| -> String {
            let mut t = ids.iter().take(8).copied().collect::<Vec<_>>().join(", ");
            if ids.len() > 8 {
                t.push_str(", …");
            }
            t
        };
        let usable = || eligible.iter().map(|&i| &catalog.parts[i]);
        if scenario.environment.temperature_min < 0.0 {
            let cold: Vec<&str> = usable()
                .filter(|p| {
                    p.technology == Technology::AluminumElectrolytic && p.esr_temp.is_none()
                })
                .map(|p| p.id.as_str())
                .collect();
            if !cold.is_empty() {
                warnings.push(format!(
                    "{} aluminum electrolytic part(s) give no esr_temp curve, and the environment reaches {} °C: \
                     their ESR rises several-fold in the cold, which the room-temperature ESR used here misses: {}",
                    cold.len(),
                    scenario.environment.temperature_min,
                    listed(&cold)
                ));
            }
        }
        let no_bias: Vec<&str> = usable()
            .filter(|p| {
                p.technology == Technology::Ceramic
                    && p.dc_bias.is_none()
                    && p.dielectric.as_ref().is_some_and(|(_, d)| !d.class1)
            })
            .map(|p| p.id.as_str())
            .collect();
        if !no_bias.is_empty() {
            warnings.push(format!(
                "{} class II ceramic part(s) give no dc_bias curve and are taken at their nominal capacitance: \
                 at {} V the capacitance may be a fraction of nominal: {}",
                no_bias.len(),
                scenario.converter.vout.0,
                listed(&no_bias)
            ));
        }
        if scenario.converter.max_capacitance.is_none() {
            warnings.push(
                "converter.max_capacitance not given: the converter maker's limit on added output \
                 capacitance is not checked (too much capacitance can destabilise the converter)"
                    .into(),
            );
        }
        if matches!(
            scenario.converter.topology,
            Topology::Flyback | Topology::Boost
        ) && scenario.converter.edge_time.0 == 0.0
        {
            warnings.push(format!(
                "converter.edge_time is 0: the {}'s current jumps are ideal steps, which the parts' ESL turns into \
                 voltage impulses, so the full-bandwidth ripple is not finite (reported as null); give the commutation \
                 time (typically 10-50 ns)",
                scenario.converter.topology.name()
            ));
        }
        if scenario.converter.topology == Topology::Module
            && scenario.converter.standalone_bandwidth.is_none()
            && scenario.target.bandwidth.is_some()
        {
            warnings.push("converter.standalone_bandwidth not given: the standalone ripple is taken at the target's bandwidth".into());
        }
        warnings.extend(warnings_pre);
        let mut inductors_eligible = Vec::new();
        let mut inductors_excluded = Vec::new();
        if let Some(lc) = &inductors {
            for (i, l) in lc.parts.iter().enumerate() {
                if objective == Objective::Area
                    && l.area.is_none()
                    && scenario.filter.usage != FilterUse::Off
                {
                    bail!(
                        "{}: line {}, column `area`: inductor `{}` has no area and no EIA case code to derive it \
                         from, which objective `area` needs; give its area or exclude it",
                        lc.source,
                        l.line,
                        l.id
                    );
                }
                match inductor_ineligibility(&scenario, l, objective) {
                    None => inductors_eligible.push(i),
                    Some(reason) => inductors_excluded.push(Excluded {
                        part: l.id.clone(),
                        reason,
                    }),
                }
            }
            warnings.extend(filter_warnings(&scenario, lc, &inductors_eligible));
        }
        Ok(Problem {
            scenario,
            catalog,
            eligible,
            excluded,
            inductors,
            inductors_eligible,
            inductors_excluded,
            ops,
            region_ops,
            warnings,
            filter: None,
            template: None,
        })
    }

    /// Electrical and physical model of catalog part `i` in this scenario.
    pub fn part_model(&self, i: usize) -> PartModel {
        let s = &self.scenario;
        let p = &self.catalog.parts[i];
        let vout = s.converter.vout.0;
        let (esr_lo, esr_hi) =
            p.esr_range(s.environment.temperature_min, s.environment.temperature_max);
        PartModel {
            index: i,
            c_worst: p.c_low(vout, s.environment.service_hours),
            c_typical: p.c_typical(vout),
            c_high: p.c_high(vout),
            esr_min: esr_lo,
            esr_max: esr_hi,
            c_nominal: p.capacitance,
            c_limit: cap_limit_value(s, p),
            esr: p.esr,
            esl: p.esl + s.board.mounting_inductance.0,
            cost: p.cost,
            area: p.area.unwrap_or(0.0),
            rating: p.ripple_current,
        }
    }

    /// An evaluator over the given catalog indices (its local part order).
    pub fn evaluator(&self, parts: &[usize]) -> Evaluator {
        self.evaluator_reaching(parts, true, false)
    }

    /// As [`Problem::evaluator`] for the optimizer, which needs the target
    /// figure only: the full-bandwidth sum is extended behind a winding
    /// capacitance ([`crate::evaluator::full_band_top`]) only when the target
    /// itself is at full bandwidth. The ripple currents do not need it (the
    /// harmonics above 500 MHz carry a negligible share of the RMS current).
    pub(crate) fn search_evaluator(&self, parts: &[usize]) -> Evaluator {
        self.evaluator_reaching(parts, self.scenario.target.bandwidth.is_none(), true)
    }

    /// Harmonics of the target figure a search's tables hold per part.
    pub(crate) fn search_harmonics(&self) -> usize {
        let f = self.ops.first().map_or(1.0, |op| op.f_ripple);
        let t = &self.scenario.target;
        if t.harmonics > 0 {
            t.harmonics
        } else {
            crate::spectrum::auto_count(f, t.bandwidth.map(|b| b.0))
        }
    }

    /// An evaluator over `parts` (catalog indices), its full-bandwidth sum
    /// extended past a filter's resonance when `extend`, its tables compact
    /// ([`Evaluator::with_top`]) when `compact`.
    fn evaluator_reaching(&self, parts: &[usize], extend: bool, compact: bool) -> Evaluator {
        let tail = self.filter.as_ref().map(|f| self.tail_lines(f));
        let top = if extend {
            tail.as_deref().and_then(crate::evaluator::full_band_top)
        } else {
            None
        };
        if let Some(t) = &self.template {
            if t.0 == parts && top.is_none() {
                let mut ev = t.1.clone();
                if let Some(tail) = tail {
                    ev.set_tail(tail);
                }
                return ev;
            }
        }
        let models: Vec<PartModel> = parts.iter().map(|&i| self.part_model(i)).collect();
        let mut all = self.ops.clone();
        all.extend(self.region_ops.iter().cloned());
        let mut ev = Evaluator::with_top(&self.scenario, &all, models, top, compact);
        ev.ops_named = (0..self.ops.len()).collect();
        ev.ops_region = (self.ops.len()..all.len()).collect();
        if let Some(tail) = tail {
            ev.set_tail(tail);
        }
        ev
    }

    /// Keep an evaluator over `parts` (no filter) for [`Problem::evaluator`]
    /// to clone.
    pub fn keep_evaluator(&mut self, parts: &[usize]) {
        let mut p = self.clone();
        p.filter = None;
        p.template = None;
        self.template = Some(std::sync::Arc::new((parts.to_vec(), p.evaluator(parts))));
    }

    /// The same problem with a post-filter fixed behind the bank.
    pub fn with_filter(&self, filter: crate::filter::FilterDesign) -> Problem {
        let mut p = self.clone();
        p.filter = Some(filter);
        p
    }

    /// The evaluator's lines of a post-filter: the load-side bank, the
    /// damping leg and the inductor, in that order.
    pub fn tail_lines(&self, f: &crate::filter::FilterDesign) -> Vec<TailLine> {
        let mut out = Vec::new();
        for &(i, n) in &f.load_bank {
            out.push(TailLine {
                model: self.part_model_kept(i),
                count: n,
                role: TailRole::Load,
            });
        }
        if let Some(d) = &f.damping {
            out.push(TailLine {
                model: self.part_model_kept(d.capacitor),
                count: d.count,
                role: TailRole::Damping {
                    resistance: d.resistance,
                },
            });
        }
        if let Some(ind) = self
            .inductors
            .as_ref()
            .and_then(|c| c.parts.get(f.inductor))
        {
            out.push(TailLine {
                model: inductor_model(ind, f.inductor),
                count: f.count.max(1),
                role: TailRole::Inductor {
                    cp: ind.parallel_capacitance().unwrap_or(0.0),
                },
            });
        }
        out
    }

    /// [`Problem::part_model`], from the kept evaluator when it holds the part.
    fn part_model_kept(&self, i: usize) -> PartModel {
        if let Some(t) = &self.template {
            if let Some(j) = t.0.iter().position(|&x| x == i) {
                return t.1.parts[j].clone();
            }
        }
        self.part_model(i)
    }

    /// The operating point at one input voltage and converter inductance
    /// (a module's current calibrated like the others).
    pub fn operating_point(&self, vin: Option<f64>, l: Option<f64>) -> OperatingPoint {
        let mut op = vec![converter::operating_point_at(&self.scenario, vin, l)];
        if self.scenario.converter.topology == Topology::Module {
            calibrate_module(&self.scenario, &mut op);
        }
        op.remove(0)
    }

    /// The inductor of inductor catalog index `i` (panics without a catalog:
    /// a filter design only exists with one).
    pub fn inductor(&self, i: usize) -> &Inductor {
        &self.inductors.as_ref().expect("an inductor catalog").parts[i]
    }

    /// The technology of catalog part `i`.
    pub fn technology(&self, i: usize) -> Technology {
        self.catalog.parts[i].technology
    }
}

/// Warnings about a filter's inputs: the inductor catalog's own, inductors
/// with no temperature range, and filter limits not given.
fn filter_warnings(s: &Scenario, lc: &InductorCatalog, eligible: &[usize]) -> Vec<String> {
    let mut w = lc.warnings.clone();
    let no_temp: Vec<&str> = eligible
        .iter()
        .map(|&i| &lc.parts[i])
        .filter(|l| l.temperature_range() == (None, None))
        .map(|l| l.id.as_str())
        .collect();
    if !no_temp.is_empty() {
        w.push(format!(
            "{} usable inductor(s) give no temperature range (no temp_min/temp_max) and are assumed to cover the \
             environment: {}",
            no_temp.len(),
            no_temp.iter().take(5).copied().collect::<Vec<_>>().join(", ")
                + if no_temp.len() > 5 { ", …" } else { "" }
        ));
    }
    let f = &s.filter;
    if f.usage == FilterUse::Off {
        return w;
    }
    if f.min_corner_frequency.is_none() {
        w.push(
            "filter.min_corner_frequency not given: the filter's corner is not kept above the converter's loop \
             crossover (a corner well above it, tens of kHz, is common practice, no source; follow the converter \
             maker's guidance)"
                .into(),
        );
    }
    if f.max_output_impedance.is_none() {
        w.push(
            "filter.max_output_impedance not given: the filter's resonance peak in output impedance is not bounded, \
             and an underdamped filter rings on load steps"
                .into(),
        );
    }
    if f.max_dc_drop.is_none() {
        w.push(
            "filter.max_dc_drop not given: the inductor's DC drop (iout · DCR) is outside the converter's \
             regulation and is not bounded"
                .into(),
        );
    }
    if s.converter.iout.0 <= 0.0 {
        w.push(
            "converter.iout is 0: the filter inductor's current ratings and DC drop are not checked; give the \
             load current"
                .into(),
        );
    }
    w
}

/// The evaluator's model of a filter inductor: the inductance range in the
/// capacitance fields (`low` is the lowest inductance, the least
/// attenuation), the DCR (the catalog's maximum) in the ESR fields.
pub(crate) fn inductor_model(ind: &crate::inductors::Inductor, index: usize) -> PartModel {
    let (lo, hi) = ind.inductance_range();
    PartModel {
        index,
        c_worst: lo,
        c_typical: ind.inductance,
        c_high: hi,
        esr_min: ind.dcr,
        esr_max: ind.dcr,
        c_nominal: ind.inductance,
        c_limit: 0.0,
        esr: ind.dcr,
        esl: 0.0,
        cost: ind.cost,
        area: ind.area.unwrap_or(0.0),
        rating: None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const SCEN: &str = r#"
        catalog = "x.csv"
        [converter]
        topology = "buck"
        vin = 12
        vout = 3.3
        iout = 6
        fsw = "600k"
        inductance = "2.2u"
        inductance_tolerance = "20%"
        [target]
        ripple_pp = "8m"
        bandwidth = "20M"
        [environment]
        temperature_min = -40
        temperature_max = 85
        [board]
        max_height = 3
        max_area = 60
        [selection]
        exclude = ["EXCL"]
        [filter]
        max_dc_drop = "30m"
    "#;

    const INDUCTORS: &str = "part,inductance,tolerance,dcr,rated_current,saturation_current,srf,cost,area,height,temp_min,temp_max,status\n\
        OK1,1u,20%,4m,10,12,80M,0.2,16,2,-55,125,active\n\
        OBS,1u,20%,4m,10,12,80M,0.2,16,2,-55,125,obsolete\n\
        NRND,1u,20%,4m,10,12,80M,0.2,16,2,-55,125,nrnd\n\
        HOT,1u,20%,4m,10,12,80M,0.2,16,2,-55,70,active\n\
        COLD,1u,20%,4m,10,12,80M,0.2,16,2,-20,125,active\n\
        TALL,1u,20%,4m,10,12,80M,0.2,16,4,-55,125,active\n\
        NOH,1u,20%,4m,10,12,80M,0.2,16,,-55,125,active\n\
        LOWI,1u,20%,4m,5,12,80M,0.2,16,2,-55,125,active\n\
        SAT,1u,20%,4m,10,5,80M,0.2,16,2,-55,125,active\n\
        DROP,1u,20%,6m,10,12,80M,0.2,16,2,-55,125,active\n\
        SRF,1u,20%,4m,10,12,500k,0.2,16,2,-55,125,active\n\
        BIG,1u,20%,4m,10,12,80M,0.2,70,2,-55,125,active\n\
        EXCL,1u,20%,4m,10,12,80M,0.2,16,2,-55,125,active\n";

    fn problem(extra: &str) -> Problem {
        let scen = SCEN.replace("[filter]\n", &format!("[filter]\n{extra}\n"));
        let s = Scenario::from_str(&scen, "t.toml").unwrap();
        let cat =
            crate::catalog::Catalog::from_bytes(crate::load::DEMO_CATALOG.as_bytes(), "c.csv")
                .unwrap();
        let l = InductorCatalog::from_bytes(INDUCTORS.as_bytes(), "l.csv").unwrap();
        Problem::with_inductors(s, cat, Some(l)).unwrap()
    }

    fn reason<'a>(p: &'a Problem, id: &str) -> Option<&'a str> {
        p.inductors_excluded
            .iter()
            .find(|e| e.part == id)
            .map(|e| e.reason.as_str())
    }

    #[test]
    fn each_inductor_rule_excludes_with_its_reason() {
        // The eligibility rules of the inductor (README, "The LC post-filter"):
        // status, rated temperature against the environment, height, the
        // scenario's exclusions, rated and saturation current against iout,
        // the DC drop iout · DCR (Ohm's law), the self-resonance, the area.
        let p = problem("");
        let lc = p.inductors.as_ref().unwrap();
        let ok: Vec<&str> = p
            .inductors_eligible
            .iter()
            .map(|&i| lc.parts[i].id.as_str())
            .collect();
        assert_eq!(ok, vec!["OK1"]);
        for (id, want) in [
            ("OBS", "status obsolete"),
            ("NRND", "status nrnd"),
            (
                "HOT",
                "rated up to 70 °C only; the environment reaches 85 °C",
            ),
            (
                "COLD",
                "rated down to -20 °C only; the environment reaches -40 °C",
            ),
            ("TALL", "height 4 mm is above board.max_height 3 mm"),
            ("NOH", "no height given, and board.max_height is 3 mm"),
            ("LOWI", "rated current 5 A is below iout 6 A"),
            ("SAT", "saturation current 5 A is below iout 6 A"),
            // 6 A · 6 mΩ = 36 mV.
            (
                "DROP",
                "DC drop iout · DCR = 6 A · 6 mΩ = 36 mV is above filter.max_dc_drop 30 mV",
            ),
            (
                "SRF",
                "self-resonant frequency 500 kHz is at or below the ripple frequency 600 kHz",
            ),
            ("BIG", "area 70 mm² alone is above board.max_area 60 mm²"),
            ("EXCL", "excluded by the scenario"),
        ] {
            let r = reason(&p, id).unwrap_or_else(|| panic!("{id} not excluded"));
            assert!(r.contains(want), "{id}: {r}");
        }
        assert_eq!(p.inductors_excluded.len(), 12);
    }

    #[test]
    fn parallel_inductors_share_the_current_and_nrnd_can_be_allowed() {
        // Two equal inductors in parallel carry 3 A each: 5 A ratings pass,
        // and the drop halves (6 A · 3 mΩ = 18 mV).
        let p = problem("max_inductor_count = 2");
        assert_eq!(reason(&p, "LOWI"), None);
        assert_eq!(reason(&p, "SAT"), None);
        assert_eq!(reason(&p, "DROP"), None);
        assert!(reason(&p, "HOT").is_some());
        let scen = SCEN.replace("[selection]\n", "[selection]\nallow_nrnd = true\n");
        let s = Scenario::from_str(&scen, "t.toml").unwrap();
        let cat =
            crate::catalog::Catalog::from_bytes(crate::load::DEMO_CATALOG.as_bytes(), "c.csv")
                .unwrap();
        let l = InductorCatalog::from_bytes(INDUCTORS.as_bytes(), "l.csv").unwrap();
        let p = Problem::with_inductors(s, cat, Some(l)).unwrap();
        assert_eq!(reason(&p, "NRND"), None);
    }

    #[test]
    fn filter_limits_not_given_are_warned_about_when_a_filter_is_considered() {
        let p = problem("");
        assert!(!p
            .warnings
            .iter()
            .any(|w| w.contains("min_corner_frequency")));
        let p = problem("use = \"auto\"");
        for key in ["filter.min_corner_frequency", "filter.max_output_impedance"] {
            assert!(
                p.warnings.iter().any(|w| w.contains(key)),
                "{key}: {:?}",
                p.warnings
            );
        }
        assert!(!p.warnings.iter().any(|w| w.contains("filter.max_dc_drop")));
        // The scenario's exclusions may name an inductor; an unknown name is an error.
        let scen = SCEN.replace("[\"EXCL\"]", "[\"NOPE\"]");
        let s = Scenario::from_str(&scen, "t.toml").unwrap();
        let cat =
            crate::catalog::Catalog::from_bytes(crate::load::DEMO_CATALOG.as_bytes(), "c.csv")
                .unwrap();
        let l = InductorCatalog::from_bytes(INDUCTORS.as_bytes(), "l.csv").unwrap();
        let e = Problem::with_inductors(s, cat, Some(l))
            .err()
            .unwrap()
            .to_string();
        assert!(e.contains("selection.exclude") && e.contains("NOPE"), "{e}");
    }
}
