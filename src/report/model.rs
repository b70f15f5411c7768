//! The structured report: sections of lines, tables and verdicts, built once
//! by each command and rendered to text ([`super::text::render`]) and to HTML
//! ([`super::html::render`]) from the same data.

use crate::assessment::{Assessment, Bound};
use crate::problem::Problem;
use crate::run::Run;
use crate::units::format_si;

/// The answer a report gives, as data (the HTML colours it from this).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verdict {
    /// The bank meets the target and every limit.
    Pass,
    /// The bank misses the target or a limit.
    Fail,
    /// The best bank under the model.
    Optimal,
    /// A verified bank, not proven the best.
    Feasible,
    /// No bank meets the target under every limit.
    Infeasible,
}

impl Verdict {
    /// The word for text reports and the CSS class of the HTML page.
    pub fn name(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Fail => "fail",
            Verdict::Optimal => "optimal",
            Verdict::Feasible => "feasible",
            Verdict::Infeasible => "infeasible",
        }
    }

    /// The verdict of an optimizer status.
    pub(crate) fn of_status(s: crate::optimize::Status) -> Verdict {
        match s {
            crate::optimize::Status::Optimal => Verdict::Optimal,
            crate::optimize::Status::Feasible => Verdict::Feasible,
            crate::optimize::Status::Infeasible => Verdict::Infeasible,
        }
    }
}

/// A table: a header row (empty for none) and rows of cells.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Table {
    /// Column headings; empty when the table has no header row.
    pub head: Vec<String>,
    /// The rows, each a list of cells.
    pub rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these headings and rows.
    pub fn new(head: &[&str], rows: Vec<Vec<String>>) -> Table {
        Table {
            head: head.iter().map(|s| s.to_string()).collect(),
            rows,
        }
    }
}

/// One piece of a section.
#[derive(Debug, Clone, PartialEq)]
pub enum Item {
    /// A line of text (leading spaces are kept in text output).
    Line(String),
    /// A table.
    Table(Table),
    /// A bulleted list.
    List(Vec<String>),
    /// The answer, with the sentence that states it.
    Verdict(Verdict, String),
}

/// What a section is, where it matters to the layout.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum SectionKind {
    /// An ordinary section.
    #[default]
    Normal,
    /// The cautions (the HTML page puts them in a box of their own).
    Cautions,
}

/// A section: an optional heading and its items.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Section {
    /// The heading, if any.
    pub heading: Option<String>,
    /// The layout role.
    pub kind: SectionKind,
    /// The content, in order.
    pub items: Vec<Item>,
}

/// A whole report.
#[derive(Debug, Clone)]
pub struct Report {
    /// The page title (HTML).
    pub title: String,
    /// Version, inputs and date of the run.
    pub run: Option<Run>,
    /// The sections, in order.
    pub sections: Vec<Section>,
}

impl Report {
    /// An empty report.
    pub fn new(title: &str, run: Option<&Run>) -> Report {
        Report {
            title: title.to_string(),
            run: run.cloned(),
            sections: Vec::new(),
        }
    }

    /// Append a section.
    pub fn push(&mut self, s: Section) {
        self.sections.push(s);
    }

    /// Start a section without a heading, holding `line`.
    pub(crate) fn para(&mut self, line: impl Into<String>) {
        self.sections.push(Section {
            items: vec![Item::Line(line.into())],
            ..Default::default()
        });
    }

    /// Start a section with a heading.
    pub fn section(&mut self, heading: impl Into<String>) {
        self.sections.push(Section {
            heading: Some(heading.into()),
            ..Default::default()
        });
    }

    /// Start a section without a heading that states the verdict.
    pub fn verdict(&mut self, v: Verdict, text: impl Into<String>) {
        self.sections.push(Section {
            items: vec![Item::Verdict(v, text.into())],
            ..Default::default()
        });
    }

    fn last(&mut self) -> &mut Section {
        if self.sections.is_empty() {
            self.sections.push(Section::default());
        }
        self.sections.last_mut().expect("one section")
    }

    /// Append a line to the last section.
    pub fn line(&mut self, line: impl Into<String>) {
        self.last().items.push(Item::Line(line.into()));
    }

    /// Append a table to the last section.
    pub fn table(&mut self, t: Table) {
        self.last().items.push(Item::Table(t));
    }

    /// Every verdict in the report, in order.
    pub fn verdicts(&self) -> Vec<(Verdict, &str)> {
        self.sections
            .iter()
            .flat_map(|s| s.items.iter())
            .filter_map(|i| match i {
                Item::Verdict(v, t) => Some((*v, t.as_str())),
                _ => None,
            })
            .collect()
    }
}

/// A voltage with an SI prefix, or "unbounded".
pub fn mv(v: f64) -> String {
    if v.is_finite() {
        format_si(v, "V")
    } else {
        "unbounded".into()
    }
}

/// The converter and the target (a section without a heading).
pub fn header(problem: &Problem) -> Section {
    let s = &problem.scenario;
    let c = &s.converter;
    let mut o = Vec::new();
    if !s.name.is_empty() {
        o.push(format!("Scenario: {}", s.name));
    }
    let vins: Vec<String> = s.vin_corners().iter().map(|v| format!("{v} V")).collect();
    o.push(format!(
        "Converter: {} {} → {} V, {} A, fsw {}{}",
        c.topology.name(),
        if vins.is_empty() {
            "(vin not given)".to_string()
        } else {
            vins.join(" / ")
        },
        c.vout.0,
        c.iout.0,
        format_si(c.fsw.0, "Hz"),
        if c.phases > 1 {
            format!(", {} phases", c.phases)
        } else {
            String::new()
        }
    ));
    if c.phases > 1 {
        o.push(format!(
            "  {} interleaved phases: only harmonics at multiples of {}× fsw remain in the summed current",
            c.phases, c.phases
        ));
    }
    for op in &problem.ops {
        o.push(format!(
            "  corner vin {}: duty {:.3}{}, current into the bank {} p-p at {}",
            op.vin.map_or("—".into(), |v| format!("{v} V")),
            op.duty,
            if op.mode.is_empty() {
                String::new()
            } else {
                format!(" ({})", op.mode)
            },
            format_si(op.current_pp, "A"),
            format_si(op.f_ripple, "Hz")
        ));
    }
    let t = &s.target;
    o.push(format!(
        "Target: {} p-p at the worst corner, {}",
        mv(t.ripple_pp.0),
        match t.bandwidth {
            Some(b) => format!(
                "{} bandwidth (order {})",
                format_si(b.0, "Hz"),
                t.bandwidth_order
            ),
            None => "full bandwidth".into(),
        }
    ));
    if s.selection.margin.0 > 0.0 {
        o.push(format!(
            "  designed to {} (selection.margin {:.0} %)",
            mv(s.design_target()),
            s.selection.margin.0 * 100.0
        ));
    }
    Section {
        items: o.into_iter().map(Item::Line).collect(),
        ..Default::default()
    }
}

/// The bank, the ripple figures, the limits and the warnings. `quiet`
/// leaves out the per-part limit rows.
pub fn assessment(a: &Assessment, quiet: bool) -> Vec<Section> {
    let mut out = Vec::new();
    let rows: Vec<Vec<String>> = a
        .bank
        .iter()
        .map(|l| {
            vec![
                l.part.clone(),
                l.count.to_string(),
                l.technology.clone(),
                l.case.clone().unwrap_or_default(),
                format_si(l.capacitance_nominal, "F"),
                format_si(l.capacitance_worst, "F"),
                format_si(l.esr, "Ω"),
                format_si(l.esl, "H"),
                format!(
                    "{}{}",
                    format_si(l.ripple_current_rms, "A"),
                    l.ripple_current_rating
                        .map_or(String::new(), |r| format!(" / {}", format_si(r, "A")))
                ),
                format!("{:.3}", l.unit_cost),
                format!("{:.3}", l.line_total_cost),
                l.unit_area
                    .map_or("—".into(), |x| format!("{:.2}", x * l.count as f64)),
            ]
        })
        .collect();
    let total = format!(
        "total: {} part{} on {} line{}, cost {:.3}, area {}, C nominal {}, C worst-corner {}",
        a.count,
        if a.count == 1 { "" } else { "s" },
        a.lines,
        if a.lines == 1 { "" } else { "s" },
        a.cost,
        if a.area_known {
            format!("{:.2} mm²", a.area)
        } else {
            "unknown (some parts give none)".into()
        },
        format_si(a.capacitance_nominal_total, "F"),
        format_si(a.capacitance_effective_total, "F")
    );
    out.push(Section {
        heading: Some(if a.filter.is_some() {
            "Bank (converter side of the filter)".into()
        } else {
            "Bank".into()
        }),
        items: vec![
            Item::Table(Table::new(
                &[
                    "part",
                    "n",
                    "technology",
                    "case",
                    "C nominal",
                    "C worst",
                    "ESR",
                    "ESL",
                    "I rms / rating",
                    "unit",
                    "line",
                    "mm²",
                ],
                rows,
            )),
            Item::Line(total),
        ],
        ..Default::default()
    });
    let corner = if a.corner == crate::assessment::NamedCorner::Worst {
        "worst corner".to_string()
    } else {
        format!("{} corner", a.corner.name())
    };
    out.push(Section {
        heading: Some(format!("Ripple ({} harmonics)", a.harmonics)),
        items: vec![Item::Table(Table {
            head: Vec::new(),
            rows: vec![
                vec![
                    corner.clone(),
                    mv(a.ripple_pp),
                    format!(
                        "{} (target {})",
                        if a.meets_target {
                            "meets the target"
                        } else {
                            "MISSES the target"
                        },
                        mv(a.target_ripple_pp)
                    ),
                ],
                vec![
                    "low corner".into(),
                    mv(a.ripple_pp_corners.low),
                    "(every line at its lowest C and highest ESR, nominal L)".into(),
                ],
                vec![
                    "high corner".into(),
                    mv(a.ripple_pp_corners.high),
                    "(every line at its highest C and lowest ESR, nominal L)".into(),
                ],
                vec![
                    "typical corner".into(),
                    mv(a.ripple_pp_typical),
                    "(nominal C under DC bias, catalog ESR)".into(),
                ],
                vec![
                    "full bandwidth".into(),
                    if a.ripple_pp_full_bandwidth.is_finite() {
                        mv(a.ripple_pp_full_bandwidth)
                    } else {
                        "not finite".into()
                    },
                    format!("({corner}, no bandwidth limit)"),
                ],
            ],
        })],
        ..Default::default()
    });
    {
        let w = &a.worst_corner;
        let mut where_ = Vec::new();
        if let Some(v) = w.vin {
            where_.push(format!("vin {}", format_si(v, "V")));
        }
        if let Some(l) = w.inductance {
            where_.push(format!("L {}", format_si(l, "H")));
        }
        let mut rows = Vec::new();
        for l in &w.lines {
            rows.push(vec![
                l.part.clone(),
                format_si(l.capacitance, "F"),
                format_si(l.esr, "Ω"),
            ]);
        }
        out.push(Section {
            heading: Some(format!(
                "Worst point of the corner region{}",
                if where_.is_empty() {
                    String::new()
                } else {
                    format!(" ({})", where_.join(", "))
                }
            )),
            items: vec![Item::Table(Table {
                head: vec!["line".into(), "C there".into(), "ESR there".into()],
                rows,
            })],
            ..Default::default()
        });
    }
    if let Some(f) = &a.filter {
        out.push(filter_section(a, f));
        out.push(filter_cautions());
    }
    if let Some(t) = &a.transient {
        out.push(load_step(a, t));
    }
    let rows: Vec<Vec<String>> = a
        .checks
        .iter()
        .filter(|c| !quiet || c.part.is_none())
        .map(|c| {
            let f = |x: f64| match c.unit.as_str() {
                "V" | "F" | "A" | "Hz" | "Ω" => format_si(x, &c.unit),
                "" => format!("{x}"),
                u => format!("{x:.2} {u}"),
            };
            vec![
                c.name.clone(),
                f(c.value),
                match c.bound {
                    Bound::AtMost => "≤".into(),
                    Bound::AtLeast => "≥".into(),
                },
                f(c.limit),
                if c.ok { "ok".into() } else { "FAIL".into() },
            ]
        })
        .collect();
    let mut rows = rows;
    // The bank's capacitance at the low corner and what it acts as at the
    // ripple frequency (information, not limits).
    rows.push(vec![
        "C added, at the low corner".into(),
        format_si(a.capacitance_effective_total, "F"),
        "—".into(),
        "—".into(),
        "info".into(),
    ]);
    rows.push(vec![
        format!(
            "C_eff at {} (1/(ω·|Im Z|))",
            format_si(a.ripple_frequency, "Hz")
        ),
        a.capacitance_at_ripple_frequency
            .map_or("inductive".into(), |c| format_si(c, "F")),
        "—".into(),
        "—".into(),
        "info".into(),
    ]);
    out.push(Section {
        heading: Some("Limits".into()),
        items: vec![
            Item::Table(Table::new(
                &["check", "value", "must be", "limit", "result"],
                rows,
            )),
            Item::Line(
                "C_eff is the bank's capacitance as the ripple sees it: below self-resonance the ESL cancels part of \
                 the capacitive reactance, so C_eff = C/(1 − ω²·L·C) exceeds C and the ripple can be below the hand \
                 estimate ΔI/(8·f·C)."
                    .into(),
            ),
        ],
        ..Default::default()
    });
    if let Some(w) = warnings(&a.warnings) {
        out.push(w);
    }
    out
}

/// The load step's section: the deviation against its limit, the figures
/// behind it and where it occurs.
fn load_step(a: &Assessment, t: &crate::transient::StepFigures) -> Section {
    let mut rows = vec![
        vec![
            "deviation (worst over the corner region)".into(),
            mv(t.deviation),
            format!(
                "{} (limit {})",
                if t.ok {
                    "meets the limit"
                } else {
                    "MISSES the limit"
                },
                mv(t.max_deviation)
            ),
        ],
        vec![
            "settled value ΔI/(2π·f_c·C_low)".into(),
            mv(t.settled),
            "(the bank's lowest capacitance, the converter's own included)".into(),
        ],
        vec![
            "target impedance max_deviation/load_step".into(),
            format_si(t.z_target, "Ω"),
            String::new(),
        ],
        vec![
            format!(
                "peak |Z| seen by the load, {} … {}",
                format_si(t.loop_crossover, "Hz"),
                format_si(0.35 / t.rise_time, "Hz")
            ),
            format_si(t.z_peak, "Ω"),
            format!(
                "at {}{}",
                format_si(t.z_peak_frequency, "Hz"),
                if t.z_peak > t.z_target {
                    " (above the target impedance)"
                } else {
                    ""
                }
            ),
        ],
    ];
    for (l, st) in a.bank.iter().zip(&t.states) {
        rows.push(vec![
            format!("worst point: {}", l.part),
            format_si(st.c, "F"),
            format_si(st.esr, "Ω"),
        ]);
    }
    Section {
        heading: Some(format!(
            "Load step ({} with a {} rise time, loop crossover {})",
            format_si(t.load_step, "A"),
            format_si(t.rise_time, "s"),
            format_si(t.loop_crossover, "Hz")
        )),
        items: vec![
            Item::Table(Table {
                head: Vec::new(),
                rows,
            }),
            Item::Line(
                "Model: the converter answers the step like a current source with a first-order response at its \
                 loop crossover; the capacitors carry the rest. The converter maker's own transient data and \
                 compensation rules come first; verify the step on hardware."
                    .into(),
            ),
        ],
        ..Default::default()
    }
}

/// The warnings as a section, or `None` when there are none.
pub fn warnings(w: &[String]) -> Option<Section> {
    (!w.is_empty()).then(|| Section {
        heading: Some("Warnings".into()),
        items: vec![Item::List(w.to_vec())],
        ..Default::default()
    })
}

/// The parts not used and why, or `None` when every part may be used.
pub fn excluded(problem: &Problem) -> Option<Section> {
    if problem.excluded.is_empty() {
        return None;
    }
    Some(Section {
        heading: Some(format!(
            "Parts not used ({} of {})",
            problem.excluded.len(),
            problem.catalog.parts.len()
        )),
        items: vec![Item::Table(Table::new(
            &["part", "reason"],
            problem
                .excluded
                .iter()
                .map(|e| vec![e.part.clone(), e.reason.clone()])
                .collect(),
        ))],
        ..Default::default()
    })
}

/// Cautions of a design with an LC post-filter (common practice, no
/// source; the copper coefficient from memory).
pub(crate) const FILTER_CAUTIONS: &[&str] = &[
    "Remote sense stays on the converter side of the filter: a sense point after the inductor puts the filter inside the converter's control loop, where its resonance adds phase lag that can make the loop unstable.",
    "Keep the filter's corner frequency well above the converter's loop crossover and not below the converter maker's guidance (tens of kHz is common practice, no source): a corner near the crossover interacts with the loop.",
    "An LC filter rings: without enough damping its output impedance peaks at the corner frequency and a load step excites a decaying oscillation. The damping here is the damping leg and the load-side capacitors' own ESR; an ESR that falls when hot or with a part change removes damping. Choose the damping resistor's power and pulse rating for its ripple and load-step current.",
    "The inductor's DC drop (iout · DCR) is not regulated: the load sees vout less the drop, more at higher load current and with hot copper (about +0.4 %/°C, from memory).",
    "Verify on hardware: the ripple at the load, the ringing after a load step, and the converter's loop stability with the filter in place.",
];

/// The post-filter: its parts, its figures against their limits and the
/// ripple at both nodes.
pub(crate) fn filter_section(a: &Assessment, f: &crate::filter::FilterAssessment) -> Section {
    let mut items = Vec::new();
    let lim = |name: &str| a.checks.iter().find(|c| c.name == name);
    let limit_text = |name: &str, bound: &str, unit: &str| -> String {
        lim(name).map_or("not set".into(), |c| {
            format!(
                "{bound} {}{}",
                format_si(c.limit, unit),
                if c.ok { "" } else { "  FAIL" }
            )
        })
    };
    let n = f.count.max(1);
    let l_eff = f.inductance / n as f64;
    items.push(Item::Line(format!(
        "Inductor {}{}: L {} ±{:.0} %, DCR {}, rated {} (thermal), saturation {}{}",
        f.inductor,
        if n > 1 {
            format!(" × {n} in parallel")
        } else {
            String::new()
        },
        format_si(f.inductance, "H"),
        f.inductance_tolerance * 100.0,
        format_si(f.dcr, "Ω"),
        format_si(f.rated_current, "A"),
        format_si(f.saturation_current, "A"),
        if n > 1 {
            format!(" (each; together {})", format_si(l_eff, "H"))
        } else {
            String::new()
        }
    )));
    items.push(Item::Table(Table::new(
        &["load-side bank", "n"],
        f.load_bank
            .iter()
            .map(|(p, c)| vec![p.clone(), c.to_string()])
            .collect(),
    )));
    items.push(Item::Line(match &f.damping {
        Some((r, part, cnt)) => format!(
            "Damping: {} ({}) in series with {cnt} × {part}, across the load-side bank",
            format_si(*r, "Ω"),
            crate::units::format_rkm(*r)
        ),
        None => "Damping: none besides the load-side capacitors' own ESR".into(),
    }));
    let r0 = super::characteristic_impedance(f);
    let sat_margin = f.saturation_current - f.inductor_peak_current;
    let rows = vec![
        vec![
            "corner frequency f0 = 1/(2π·sqrt(L·C_load))".into(),
            format_si(f.tail.corner_frequency, "Hz"),
            limit_text("filter corner_frequency", "≥", "Hz"),
        ],
        vec![
            "characteristic impedance R0 = sqrt(L/C_load)".into(),
            format_si(r0, "Ω"),
            "—".into(),
        ],
        vec![
            "peak output impedance |Z_out| (converter side held)".into(),
            format!(
                "{} at {}",
                format_si(f.tail.peak_output_impedance, "Ω"),
                format_si(f.tail.peak_frequency, "Hz")
            ),
            limit_text("filter peak_output_impedance", "≤", "Ω"),
        ],
        vec![
            "DC drop iout · DCR (not regulated)".into(),
            format_si(f.tail.dc_drop, "V"),
            limit_text("filter dc_drop", "≤", "V"),
        ],
        vec![
            "inductor DC current (each)".into(),
            format_si(f.tail.dc_current, "A"),
            limit_text("inductor rated_current", "≤", "A"),
        ],
        vec![
            "inductor ripple current ΔI_L (p-p, each)".into(),
            format_si(f.inductor_ripple_pp, "A"),
            "—".into(),
        ],
        vec![
            "inductor peak current I_dc + ΔI_L/2".into(),
            format!(
                "{} (margin {})",
                format_si(f.inductor_peak_current, "A"),
                format_si(sat_margin, "A")
            ),
            limit_text("inductor saturation_current", "≤", "A"),
        ],
        vec![
            "ripple at the converter-side node".into(),
            format_si(f.ripple_pp_converter_node, "V"),
            "—".into(),
        ],
        vec![
            "ripple at the load node (the target's)".into(),
            format_si(a.ripple_pp, "V"),
            format!("≤ {}", format_si(a.target_ripple_pp, "V")),
        ],
    ];
    items.push(Item::Table(Table::new(&["figure", "value", "limit"], rows)));
    if f.ripple_pp_converter_node.is_finite() && a.ripple_pp > 0.0 {
        items.push(Item::Line(format!(
            "The filter takes the ripple from {} at the converter-side node to {} at the load ({:.1}×, {:.1} dB).",
            format_si(f.ripple_pp_converter_node, "V"),
            format_si(a.ripple_pp, "V"),
            f.ripple_pp_converter_node / a.ripple_pp,
            20.0 * (f.ripple_pp_converter_node / a.ripple_pp).log10()
        )));
    }
    items.push(Item::Line(format!(
        "Filter parts: {}, cost {:.3}, area {:.2} mm² (included in the totals above).",
        f.parts, f.cost, f.area
    )));
    Section {
        heading: Some(
            "Post-filter (converter-side bank → inductor → load-side bank with damping)".into(),
        ),
        items,
        ..Default::default()
    }
}

/// The cautions of a filtered design, in a cautions box of their own.
pub(crate) fn filter_cautions() -> Section {
    Section {
        heading: Some("Filter cautions".into()),
        kind: SectionKind::Cautions,
        items: vec![Item::List(
            FILTER_CAUTIONS.iter().map(|c| c.to_string()).collect(),
        )],
    }
}

/// The cautions printed with every report.
pub fn cautions() -> Section {
    Section {
        heading: Some("Cautions".into()),
        kind: SectionKind::Cautions,
        items: vec![Item::List(
            super::CAUTIONS.iter().map(|c| c.to_string()).collect(),
        )],
    }
}
