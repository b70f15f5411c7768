//! SVG plots of one bank (impedance, ripple waveform, harmonic spectrum) and
//! of a trade-off sweep (cost and area against the ripple target).
//!
//! Each plot is built in two steps: a `*_data` function computes the numbers
//! (public, so tests can check them against the model), and a private
//! renderer draws them with plotters' SVG backend. Text is written as SVG
//! `<text>` elements (no font files are needed; the viewer picks a
//! sans-serif font). Every plot has a white background, a title, axis labels
//! with units and a legend drawn below the chart so it never covers data.

use crate::assessment::Assessment;
use crate::evaluator::{Band, Corner, Evaluator, LineState, Node, PartModel};
use crate::network::{admittance, Network};
use crate::problem::Problem;
use crate::units::format_si;
use anyhow::{anyhow, bail, Result};
use num_complex::Complex64;
use plotters::coord::ranged1d::{AsRangedCoord, DefaultFormatting, KeyPointHint, ValueFormatter};
use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use std::ops::Range;

/// One point of a trade-off sweep, as the `tradeoff` command found it.
#[derive(Debug, Clone, PartialEq)]
pub struct TradeoffPoint {
    /// Ripple target, V peak-to-peak.
    pub target: f64,
    /// `optimal`, `feasible` or `infeasible`.
    pub status: String,
    /// Worst-corner ripple the chosen bank reaches, V.
    pub ripple_pp: Option<f64>,
    /// Cost of the chosen bank.
    pub cost: Option<f64>,
    /// mm².
    pub area: Option<f64>,
    /// Number of parts of the chosen bank.
    pub count: Option<u32>,
    /// Identifies the chosen bank (e.g. `A=3,B=2`); equal keys mean the same bank.
    pub bank_key: String,
}

/// How a trade-off names the empty bank (the converter's own capacitance alone).
pub(crate) const EMPTY_BANK: &str = "converter alone (no added capacitors)";

// ---------------------------------------------------------------- data

/// The evaluator over a bank's parts and the vin corner with the largest
/// (bandwidth-limited, worst-capacitance) ripple.
struct Prep {
    ev: Evaluator,
    /// Bank in the evaluator's local indices.
    local: Vec<(usize, u32)>,
    /// Bank in catalog indices (zero counts dropped).
    bank: Vec<(usize, u32)>,
    vin_corner: usize,
    states: Vec<LineState>,
}

fn prep(problem: &Problem, bank: &[(usize, u32)]) -> Result<Prep> {
    let bank: Vec<(usize, u32)> = bank.iter().copied().filter(|&(_, n)| n > 0).collect();
    let parts: Vec<usize> = bank.iter().map(|&(i, _)| i).collect();
    let mut ev = problem.evaluator(&parts);
    let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, &(_, n))| (j, n)).collect();
    if ev.is_empty(&local) {
        bail!("the bank is empty and the converter has no internal capacitance: nothing to plot");
    }
    // The worst point of the corner region: its operating point and states.
    let w = crate::region::worst(problem, &mut ev, &local, Band::Limited);
    let vin_corner = w.op;
    Ok(Prep {
        ev,
        local,
        bank,
        vin_corner,
        states: w.states,
    })
}

fn peak_to_peak(v: &[f64]) -> f64 {
    let (lo, hi) = min_max(v.iter().copied());
    hi - lo
}

fn min_max(v: impl Iterator<Item = f64>) -> (f64, f64) {
    v.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), x| {
        (lo.min(x), hi.max(x))
    })
}

fn vin_text(vin: Option<f64>) -> String {
    match vin {
        Some(v) => format!("vin {v} V"),
        None => "the converter's only corner".into(),
    }
}

/// Everything the impedance plot shows.
#[derive(Debug, Clone)]
pub struct ImpedanceData {
    /// Sweep frequencies, Hz (log-spaced from f_ripple/10 to the highest harmonic of the target figure).
    pub freqs: Vec<f64>,
    /// Per bank line: label (`n × PART`) and |Z| of the n parts in parallel, worst capacitance, Ω.
    pub groups: Vec<(String, Vec<f64>)>,
    /// |Z| of the converter's own output capacitance, when the scenario gives one.
    pub internal: Option<Vec<f64>>,
    /// |Z| the converter's current sees (the whole bank, worst capacitance), Ω.
    pub bank: Vec<f64>,
    /// The same at the region's high corner (every line at its highest
    /// capacitance and lowest ESR): with `bank`, the band the bank's |Z|
    /// spans over the corner region's capacitance box.
    pub bank_high: Vec<f64>,
    /// (f_k, |Z(f_k)|) at each harmonic of the target figure, from the evaluator.
    pub harmonics: Vec<(f64, f64)>,
    /// (f_k, Z_needed): the impedance at which harmonic k alone would make the
    /// target's peak-to-peak at the worst vin corner: target / (2 |I_k H_k|).
    /// Harmonics with no current are left out.
    pub needed: Vec<(f64, f64)>,
    /// Index of the input-voltage corner shown.
    pub vin_corner: usize,
    /// Input voltage of that operating point, V.
    pub vin: Option<f64>,
}

/// |Z| of the whole bank (worst capacitance) at arbitrary frequencies.
pub fn bank_impedance(problem: &Problem, bank: &[(usize, u32)], freqs: &[f64]) -> Vec<f64> {
    bank_impedance_at(problem, bank, freqs, false)
}

/// |Z| of the whole bank at the low corner (`high = false`: worst
/// capacitance) or the high corner (highest capacitance, lowest ESR).
pub(crate) fn bank_impedance_at(
    problem: &Problem,
    bank: &[(usize, u32)],
    freqs: &[f64],
    high: bool,
) -> Vec<f64> {
    let models: Vec<(PartModel, f64)> = bank
        .iter()
        .filter(|b| b.1 > 0)
        .map(|&(i, n)| (problem.part_model(i), n as f64))
        .collect();
    let network = Network::from_scenario(&problem.scenario);
    freqs
        .iter()
        .map(|&f| {
            let yb: Complex64 = models
                .iter()
                .map(|(m, n)| {
                    if high {
                        admittance(m.esr_min, m.esl, m.c_high, f) * *n
                    } else {
                        admittance(m.esr, m.esl, m.c_worst, f) * *n
                    }
                })
                .sum();
            network.transfer(yb, f).norm()
        })
        .collect()
}

/// Log-spaced frequencies from `lo` to `hi`, `per_decade` per decade, both ends included.
fn log_sweep(lo: f64, hi: f64, per_decade: usize) -> Vec<f64> {
    let decades = (hi / lo).log10().max(0.0);
    let n = ((decades * per_decade as f64).ceil() as usize).max(2);
    (0..=n)
        .map(|i| lo * 10f64.powf(decades * i as f64 / n as f64))
        .collect()
}

fn impedance_of(p: &mut Prep, problem: &Problem) -> ImpedanceData {
    let zt = p.ev.transfer_magnitude(&p.local, Corner::Worst);
    let ev = &p.ev;
    let f_lo = ev.f_ripple / 10.0;
    let f_hi = ev.f_ripple * ev.n_limited as f64;
    let freqs = log_sweep(f_lo, f_hi.max(f_lo * 10.0), 200);
    let cat = &problem.catalog;
    let groups = p
        .bank
        .iter()
        .map(|&(i, n)| {
            let m = problem.part_model(i);
            let z: Vec<f64> = freqs
                .iter()
                .map(|&f| {
                    (admittance(m.esr, m.esl, m.c_worst, f) * n as f64)
                        .inv()
                        .norm()
                })
                .collect();
            (format!("{n} × {}", cat.parts[i].id), z)
        })
        .collect();
    let network = &ev.network;
    let internal = network.has_internal().then(|| {
        freqs
            .iter()
            .map(|&f| network.internal_admittance(f).inv().norm())
            .collect()
    });
    let bank = bank_impedance(problem, &p.bank, &freqs);
    let bank_high = bank_impedance_at(problem, &p.bank, &freqs, true);
    let target = problem.scenario.target.ripple_pp.0;
    let nl = ev.n_limited;
    let harmonics = (0..nl).map(|k| (ev.freqs[k], zt[k])).collect();
    let needed = (0..nl)
        .filter_map(|k| {
            let drive = (ev.currents[p.vin_corner][k] * ev.filter[k]).norm();
            (drive > 0.0 && drive.is_finite()).then(|| (ev.freqs[k], target / (2.0 * drive)))
        })
        .collect();
    ImpedanceData {
        freqs,
        groups,
        internal,
        bank,
        bank_high,
        harmonics,
        needed,
        vin_corner: p.vin_corner,
        vin: p.ev.ops[p.vin_corner].vin,
    }
}

/// The data of `impedance.svg`.
pub fn impedance_data(problem: &Problem, bank: &[(usize, u32)]) -> Result<ImpedanceData> {
    let mut p = prep(problem, bank)?;
    Ok(impedance_of(&mut p, problem))
}

/// One period of the output ripple at the worst corner.
#[derive(Debug, Clone)]
pub struct RippleData {
    /// Ripple period, s.
    pub period: f64,
    /// Samples over one period (t = i·period/len), bandwidth-limited, V.
    pub limited: Vec<f64>,
    /// Samples over one period, full bandwidth, V.
    pub full: Vec<f64>,
    /// Target peak-to-peak, V.
    pub target: f64,
    /// Middle of the bandwidth-limited waveform: (max + min) / 2, V.
    pub mid: f64,
    /// Index of the input-voltage corner shown.
    pub vin_corner: usize,
    /// Input voltage of that operating point, V.
    pub vin: Option<f64>,
    /// Behind a post-filter, the same point's ripple at the converter-side
    /// node: (bandwidth-limited, full bandwidth) samples over one period, V.
    pub converter_node: Option<(Vec<f64>, Vec<f64>)>,
}

fn ripple_of(p: &mut Prep, problem: &Problem) -> RippleData {
    let converter_node = (!p.ev.tail().is_empty()).then(|| {
        (
            p.ev.waveform_states(
                &p.local,
                &p.states,
                Band::Limited,
                p.vin_corner,
                Node::Converter,
            ),
            p.ev.waveform_states(
                &p.local,
                &p.states,
                Band::Full,
                p.vin_corner,
                Node::Converter,
            ),
        )
    });
    let limited =
        p.ev.waveform_states(&p.local, &p.states, Band::Limited, p.vin_corner, Node::Load);
    let full =
        p.ev.waveform_states(&p.local, &p.states, Band::Full, p.vin_corner, Node::Load);
    let (lo, hi) = min_max(limited.iter().copied());
    RippleData {
        converter_node,
        period: 1.0 / p.ev.f_ripple,
        limited,
        full,
        target: problem.scenario.target.ripple_pp.0,
        mid: (lo + hi) / 2.0,
        vin_corner: p.vin_corner,
        vin: p.ev.ops[p.vin_corner].vin,
    }
}

/// The data of `ripple.svg`.
pub fn ripple_data(problem: &Problem, bank: &[(usize, u32)]) -> Result<RippleData> {
    let mut p = prep(problem, bank)?;
    Ok(ripple_of(&mut p, problem))
}

/// Harmonic voltages of the target figure at the worst corner.
#[derive(Debug, Clone)]
pub struct SpectrumData {
    /// f_k, Hz.
    pub freqs: Vec<f64>,
    /// Peak amplitude |V_k| (bandwidth-limited), V.
    pub amplitude: Vec<f64>,
    /// Target peak-to-peak, V.
    pub target: f64,
    /// Index of the input-voltage corner shown.
    pub vin_corner: usize,
    /// Input voltage of that operating point, V.
    pub vin: Option<f64>,
}

fn spectrum_of(p: &mut Prep, problem: &Problem) -> SpectrumData {
    let v =
        p.ev.harmonic_voltages_states(&p.local, &p.states, p.vin_corner);
    SpectrumData {
        freqs: p.ev.freqs[..v.len()].to_vec(),
        amplitude: v.iter().map(|x| x.norm()).collect(),
        target: problem.scenario.target.ripple_pp.0,
        vin_corner: p.vin_corner,
        vin: p.ev.ops[p.vin_corner].vin,
    }
}

/// The data of `spectrum.svg`.
pub fn spectrum_data(problem: &Problem, bank: &[(usize, u32)]) -> Result<SpectrumData> {
    let mut p = prep(problem, bank)?;
    Ok(spectrum_of(&mut p, problem))
}

// ---------------------------------------------------------------- drawing helpers

const W: u32 = 960;
const FONT: &str = "sans-serif";
const INK: RGBColor = RGBColor(30, 30, 30);
const MUTED: RGBColor = RGBColor(90, 90, 90);
const GRID_BOLD: RGBColor = RGBColor(200, 200, 200);
const GRID_LIGHT: RGBColor = RGBColor(236, 236, 236);
const ALERT: RGBColor = RGBColor(200, 30, 30);
/// Colour-blind-safe palette (Okabe and Ito) for the part groups.
const PALETTE: [RGBColor; 7] = [
    RGBColor(0, 114, 178),
    RGBColor(230, 159, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(86, 180, 233),
    RGBColor(213, 94, 0),
    RGBColor(170, 160, 40),
];

fn pe<E: std::fmt::Debug>(e: E) -> anyhow::Error {
    anyhow!("drawing a plot: {e:?}")
}

type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// How a legend entry looks.
#[derive(Clone, Copy)]
enum Mark {
    Line(u32),
    Dashed,
    Dotted,
    Dot,
    FilledDot,
    HollowDot,
    Bar,
    Cross,
    Square,
}

struct Entry {
    label: String,
    color: RGBColor,
    mark: Mark,
}

fn entry(label: impl Into<String>, color: RGBColor, mark: Mark) -> Entry {
    Entry {
        label: label.into(),
        color,
        mark,
    }
}

const LEGEND_ROW: i32 = 22;

fn legend_height(n: usize, cols: usize) -> u32 {
    let rows = n.div_ceil(cols.max(1));
    (rows as i32 * LEGEND_ROW + 16) as u32
}

fn draw_mark(area: &Area, mark: Mark, color: RGBColor, x: i32, y: i32) -> Result<()> {
    match mark {
        Mark::Line(w) => area
            .draw(&PathElement::new(
                vec![(x, y), (x + 30, y)],
                color.stroke_width(w),
            ))
            .map_err(pe)?,
        Mark::Dashed => {
            for s in [0, 12, 24] {
                area.draw(&PathElement::new(
                    vec![(x + s, y), (x + s + 7, y)],
                    color.stroke_width(2),
                ))
                .map_err(pe)?;
            }
        }
        Mark::Dotted => {
            for s in [0, 7, 14, 21, 28] {
                area.draw(&PathElement::new(
                    vec![(x + s, y), (x + s + 3, y)],
                    color.stroke_width(2),
                ))
                .map_err(pe)?;
            }
        }
        Mark::Dot => area
            .draw(&Circle::new((x + 15, y), 3, color.filled()))
            .map_err(pe)?,
        Mark::FilledDot => area
            .draw(&Circle::new((x + 15, y), 5, color.filled()))
            .map_err(pe)?,
        Mark::HollowDot => area
            .draw(&Circle::new((x + 15, y), 4, color.stroke_width(2)))
            .map_err(pe)?,
        Mark::Bar => area
            .draw(&PathElement::new(
                vec![(x + 9, y), (x + 21, y)],
                color.stroke_width(3),
            ))
            .map_err(pe)?,
        Mark::Cross => area
            .draw(&Cross::new((x + 15, y), 5, color.stroke_width(2)))
            .map_err(pe)?,
        Mark::Square => area
            .draw(&Rectangle::new(
                [(x + 11, y - 4), (x + 19, y + 4)],
                color.stroke_width(1),
            ))
            .map_err(pe)?,
    }
    Ok(())
}

fn draw_legend(area: &Area, entries: &[Entry], cols: usize, left: i32) -> Result<()> {
    let (w, _) = area.dim_in_pixel();
    let col_w = (w as i32 - left - 20) / cols.max(1) as i32;
    let style = TextStyle::from((FONT, 15).into_font())
        .color(&INK)
        .pos(Pos::new(HPos::Left, VPos::Center));
    for (i, e) in entries.iter().enumerate() {
        let (r, c) = (i / cols, i % cols);
        let x = left + c as i32 * col_w;
        let y = 12 + r as i32 * LEGEND_ROW;
        draw_mark(area, e.mark, e.color, x, y)?;
        area.draw(&Text::new(e.label.clone(), (x + 38, y), style.clone()))
            .map_err(pe)?;
    }
    Ok(())
}

/// Title and subtitle on a strip of the root area; returns the rest.
fn titled<'a>(root: &Area<'a>, title: &str, subtitle: &str) -> Result<Area<'a>> {
    let (top, rest) = root.split_vertically(62);
    let t = TextStyle::from((FONT, 24).into_font().style(FontStyle::Bold)).color(&INK);
    top.draw(&Text::new(title.to_string(), (20, 10), t))
        .map_err(pe)?;
    let s = TextStyle::from((FONT, 16).into_font()).color(&MUTED);
    top.draw(&Text::new(subtitle.to_string(), (20, 38), s))
        .map_err(pe)?;
    Ok(rest)
}

/// Render into an SVG string with a white background and an SVG `<title>`.
fn svg(height: u32, title: &str, draw: impl FnOnce(&Area) -> Result<()>) -> Result<String> {
    let mut s = String::new();
    {
        let root = SVGBackend::with_string(&mut s, (W, height)).into_drawing_area();
        root.fill(&WHITE).map_err(pe)?;
        draw(&root)?;
        root.present().map_err(pe)?;
    }
    // An accessible name for the figure (and for browsers' tooltips).
    if let Some(end) = s.find('>') {
        s.insert_str(end + 1, &format!("\n<title>{}</title>", xml_escape(title)));
    }
    Ok(s)
}

/// The chart area every plot draws into.
type Chart<'a, 'b, X, Y> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<X, Y>>;

/// One axis of a chart: its description, tick labels and labelled ticks.
struct Axis<'f> {
    desc: &'f str,
    /// Tick label of an axis value (the values are f64 on every plot).
    label: &'f dyn Fn(&f64) -> String,
    /// Labelled ticks; `None` keeps plotters' own choice.
    ticks: Option<usize>,
}

/// An axis with plotters' own tick count.
fn axis<'f>(desc: &'f str, label: &'f dyn Fn(&f64) -> String) -> Axis<'f> {
    Axis {
        desc,
        label,
        ticks: None,
    }
}

/// What a chart's frame shows around the data: the title strip, the axes
/// and the legend below the chart.
struct Frame<'f> {
    /// Height of the title strip and the chart together, px (the legend
    /// is added below).
    height: u32,
    title: &'f str,
    subtitle: &'f str,
    x: Axis<'f>,
    y: Axis<'f>,
    /// Light grid lines between labelled ticks; `None` keeps plotters' own.
    max_light_lines: Option<usize>,
    /// The legend entries (one column).
    entries: &'f [Entry],
    /// Height below the entries for what `below_legend` draws, px.
    extra_legend: u32,
}

/// Nothing below the legend.
fn no_key(_: &Area) -> Result<()> {
    Ok(())
}

/// One plot as SVG text: the frame (background, title and subtitle, chart
/// margins, styled mesh with axis labels, legend), `draw` for the data on
/// the chart and `below_legend` for anything under the legend entries.
fn chart_svg<XR, YR>(
    frame: Frame,
    x: XR,
    y: YR,
    draw: impl FnOnce(&mut Chart<XR::CoordDescType, YR::CoordDescType>) -> Result<()>,
    below_legend: impl FnOnce(&Area) -> Result<()>,
) -> Result<String>
where
    XR: AsRangedCoord<Value = f64>,
    YR: AsRangedCoord<Value = f64>,
    XR::CoordDescType: ValueFormatter<f64>,
    YR::CoordDescType: ValueFormatter<f64>,
{
    let cols = 1;
    let lh = legend_height(frame.entries.len(), cols) + frame.extra_legend;
    svg(frame.height + lh, frame.title, |root| {
        let rest = titled(root, frame.title, frame.subtitle)?;
        let (plot, legend) = rest.split_vertically(frame.height - 62);
        let mut chart = ChartBuilder::on(&plot)
            .margin_left(10)
            .margin_right(30)
            .margin_top(10)
            .x_label_area_size(56)
            .y_label_area_size(96)
            .build_cartesian_2d(x, y)
            .map_err(pe)?;
        let mut mesh = chart.configure_mesh();
        mesh.x_desc(frame.x.desc)
            .y_desc(frame.y.desc)
            .x_label_formatter(frame.x.label)
            .y_label_formatter(frame.y.label);
        if let Some(n) = frame.x.ticks {
            mesh.x_labels(n);
        }
        if let Some(n) = frame.y.ticks {
            mesh.y_labels(n);
        }
        if let Some(n) = frame.max_light_lines {
            mesh.max_light_lines(n);
        }
        mesh.label_style((FONT, 15).into_font().color(&INK))
            .axis_desc_style((FONT, 17).into_font().color(&INK))
            .bold_line_style(GRID_BOLD.stroke_width(1))
            .light_line_style(GRID_LIGHT.stroke_width(1))
            .axis_style(INK.stroke_width(1))
            .draw()
            .map_err(pe)?;
        draw(&mut chart)?;
        draw_legend(&legend, frame.entries, cols, 110)?;
        below_legend(&legend)
    })
}

/// A log-log plot of impedances against frequency (`impedance.svg`,
/// `filter.svg`): the frame over `x` Hz and `y` Ω, `draw` for the data.
fn log_log_svg(
    title: &str,
    subtitle: &str,
    entries: &[Entry],
    x: (f64, f64),
    y: (f64, f64),
    draw: impl FnOnce(&mut Chart<LogAxis, LogAxis>) -> Result<()>,
) -> Result<String> {
    let fx = |v: &f64| log_label(*v, "Hz");
    let fy = |v: &f64| log_label(*v, "Ω");
    let frame = Frame {
        height: 600,
        title,
        subtitle,
        x: axis("frequency (Hz)", &fx),
        y: axis("|Z| (Ω)", &fy),
        max_light_lines: None,
        entries,
        extra_legend: 0,
    };
    chart_svg(frame, log_axis(x.0, x.1), log_axis(y.0, y.1), draw, no_key)
}

/// A solid curve `ys` over `xs` on a log-log chart, in runs inside `y`.
fn log_curve(
    chart: &mut Chart<LogAxis, LogAxis>,
    xs: &[f64],
    ys: &[f64],
    y: (f64, f64),
    style: ShapeStyle,
) -> Result<()> {
    for run in log_runs(xs, ys, y.0, y.1) {
        chart.draw_series(LineSeries::new(run, style)).map_err(pe)?;
    }
    Ok(())
}

/// Escape text for XML/HTML content and attribute values.
pub(crate) fn xml_escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '&' => o.push_str("&amp;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' && c != '\r' => {}
            c => o.push(c),
        }
    }
    o
}

/// Tick positions for a log axis, in log10 units: (labelled, grid).
/// Decades are labelled; with less than three decades in view, 2 and 5
/// multiples are labelled too.
fn log_ticks(lo: f64, hi: f64) -> (Vec<f64>, Vec<f64>) {
    let (a, b) = (lo.log10(), hi.log10());
    let mut grid = Vec::new();
    let mut decades = Vec::new();
    let mut twofive = Vec::new();
    for e in (a.floor() as i32 - 1)..=(b.ceil() as i32) {
        for m in 1..10 {
            let v = (m as f64).log10() + e as f64;
            if v >= a - 1e-9 && v <= b + 1e-9 {
                grid.push(v);
                if m == 1 {
                    decades.push(v);
                }
                if m == 1 || m == 2 || m == 5 {
                    twofive.push(v);
                }
            }
        }
    }
    let bold = if decades.len() >= 3 { decades } else { twofive };
    (bold, grid)
}

/// A linear axis over log10 values with our own tick positions (labelled
/// and grid-only), so decades are labelled `1 MHz`, `10 MHz`, ….
struct LogAxis {
    lo: f64,
    hi: f64,
    bold: Vec<f64>,
    light: Vec<f64>,
}

/// The axis for values from `lo` to `hi` (not logarithms).
fn log_axis(lo: f64, hi: f64) -> LogAxis {
    let (bold, light) = log_ticks(lo, hi);
    LogAxis {
        lo: lo.log10(),
        hi: hi.log10(),
        bold,
        light,
    }
}

impl Ranged for LogAxis {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, v: &f64, limit: (i32, i32)) -> i32 {
        let span = self.hi - self.lo;
        if span <= 0.0 {
            return (limit.0 + limit.1) / 2;
        }
        let r = (v - self.lo) / span;
        limit.0 + (r * (limit.1 - limit.0) as f64).round() as i32
    }

    fn key_points<H: KeyPointHint>(&self, hint: H) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            self.light.clone()
        } else {
            self.bold.clone()
        }
    }

    fn range(&self) -> Range<f64> {
        self.lo..self.hi
    }
}

/// Tick label of a log axis value: `1 MHz`, `10 mΩ`.
fn log_label(v: f64, unit: &str) -> String {
    format_si(10f64.powf(v), unit)
}

/// A log range [lo, hi] padded by `pad` (a factor) on both sides.
fn padded(lo: f64, hi: f64, pad: f64) -> (f64, f64) {
    let (lo, hi) = if lo > 0.0 && hi > lo {
        (lo, hi)
    } else if lo > 0.0 {
        (lo / 2.0, lo * 2.0)
    } else {
        (1e-3, 1.0)
    };
    (lo / pad, hi * pad)
}

/// Split a curve into runs of points whose y lies in [lo, hi] (log10 coordinates out).
fn log_runs(xs: &[f64], ys: &[f64], lo: f64, hi: f64) -> Vec<Vec<(f64, f64)>> {
    let mut runs = Vec::new();
    let mut cur = Vec::new();
    for (&x, &y) in xs.iter().zip(ys) {
        if y.is_finite() && y >= lo && y <= hi && x > 0.0 {
            cur.push((x.log10(), y.log10()));
        } else if !cur.is_empty() {
            runs.push(std::mem::take(&mut cur));
        }
    }
    if !cur.is_empty() {
        runs.push(cur);
    }
    runs
}

/// Keep the shape of a long trace with at most about `max` points: the
/// minimum and the maximum of each bucket, in time order.
fn decimate(pts: &[(f64, f64)], max: usize) -> Vec<(f64, f64)> {
    if pts.len() <= max {
        return pts.to_vec();
    }
    let bucket = pts.len().div_ceil(max / 2);
    let mut out = Vec::with_capacity(max + 2);
    for ch in pts.chunks(bucket) {
        let (mut imin, mut imax) = (0, 0);
        for (i, p) in ch.iter().enumerate() {
            if p.1 < ch[imin].1 {
                imin = i;
            }
            if p.1 > ch[imax].1 {
                imax = i;
            }
        }
        let (a, b) = if imin <= imax {
            (imin, imax)
        } else {
            (imax, imin)
        };
        out.push(ch[a]);
        if b != a {
            out.push(ch[b]);
        }
    }
    out
}

fn band_text(problem: &Problem) -> String {
    let t = &problem.scenario.target;
    match t.bandwidth {
        Some(b) => format!("{} bandwidth", format_si(b.0, "Hz")),
        None => "full bandwidth".into(),
    }
}

// ---------------------------------------------------------------- bank plots

/// `impedance.svg`, `ripple.svg` and `spectrum.svg` for one bank: (file name, SVG text).
pub fn bank_plots(
    problem: &Problem,
    bank: &[(usize, u32)],
    a: &Assessment,
) -> Result<Vec<(String, String)>> {
    let mut p = prep(problem, bank)?;
    let imp = impedance_of(&mut p, problem);
    let rip = ripple_of(&mut p, problem);
    let spec = spectrum_of(&mut p, problem);
    let mut out = vec![
        ("impedance.svg".into(), impedance_svg(problem, &imp, a)?),
        ("ripple.svg".into(), ripple_svg(problem, &rip, a)?),
        ("spectrum.svg".into(), spectrum_svg(problem, &spec, a)?),
    ];
    if let Some(t) = &a.transient {
        out.push(("load_step.svg".into(), load_step_svg(t)?));
    }
    if let (Some(f), Some(_)) = (&a.filter, &problem.filter) {
        out.push(("filter.svg".into(), filter_svg(problem, bank, f)?));
    }
    Ok(out)
}

/// The data of `filter.svg` at the typical state of every part: the
/// frequencies, the filter's output impedance |Z_out| (converter side
/// held) and the transfer |V_load/I| from the converter's current to the
/// load node, Ω.
pub(crate) fn filter_data(
    problem: &Problem,
    bank: &[(usize, u32)],
    f0: f64,
) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let parts: Vec<usize> = bank.iter().map(|b| b.0).collect();
    let ev = problem.evaluator(&parts);
    let tail = ev.tail().to_vec();
    let st = crate::evaluator::typical_states(&tail);
    let f_ripple = ev.f_ripple;
    let (lo, hi) = (
        (f0 / 100.0).min(f_ripple / 10.0),
        (f_ripple * 100.0).max(f0 * 100.0),
    );
    let n = 480;
    let freqs: Vec<f64> = (0..=n)
        .map(|i| lo * (hi / lo).powf(i as f64 / n as f64))
        .collect();
    let mut zout = Vec::with_capacity(freqs.len());
    let mut zt = Vec::with_capacity(freqs.len());
    for &f in &freqs {
        zout.push(crate::evaluator::tail_output_impedance(&tail, &st, f).map_or(0.0, |z| z.norm()));
        let mut yb = Complex64::default();
        for &(i, cnt) in bank {
            let p = problem.part_model(i);
            yb += admittance(p.esr, p.esl, p.c_typical, f) * cnt as f64;
        }
        let ((ty, h), _) = crate::evaluator::tail_terms_of(&tail, &st, f);
        let yi = ev.network.internal_admittance(f);
        zt.push(
            ev.network
                .transfer_tail(yb, yi, 2.0 * std::f64::consts::PI * f, ty, h)
                .norm(),
        );
    }
    (freqs, zout, zt)
}

fn filter_svg(
    problem: &Problem,
    bank: &[(usize, u32)],
    fa: &crate::filter::FilterAssessment,
) -> Result<String> {
    let f0 = fa.tail.corner_frequency.max(1.0);
    let (freqs, zout, zt) = filter_data(problem, bank, f0);
    let limit = problem.scenario.filter.max_output_impedance.map(|m| m.0);
    let (clo, chi) = min_max(
        zout.iter()
            .chain(&zt)
            .copied()
            .filter(|x| x.is_finite() && *x > 0.0)
            .chain(limit),
    );
    let (ylo, yhi) = padded(clo.max(chi * 1e-7), chi, 1.6);
    let (xlo, xhi) = (freqs[0], *freqs.last().unwrap_or(&freqs[0]));
    let mut entries = vec![
        entry(
            format!(
                "|Z_out| from the load, converter side held: peak {} at {}",
                format_si(fa.tail.peak_output_impedance, "Ω"),
                format_si(fa.tail.peak_frequency, "Hz")
            ),
            PALETTE[0],
            Mark::Line(3),
        ),
        entry(
            "|V_load / I_converter|: the converter's current to the load node",
            INK,
            Mark::Line(2),
        ),
    ];
    if let Some(m) = limit {
        entries.push(entry(
            format!("max_output_impedance {}", format_si(m, "Ω")),
            ALERT,
            Mark::Dashed,
        ));
    }
    let title = "Post-filter: output impedance and transfer";
    let subtitle = format!(
        "{} × {} into {} — corner {}, typical state of every part",
        fa.count,
        fa.inductor,
        fa.load_bank
            .iter()
            .map(|(id, n)| format!("{n} × {id}"))
            .collect::<Vec<_>>()
            .join(" + "),
        format_si(fa.tail.corner_frequency, "Hz")
    );
    let draw = |chart: &mut Chart<LogAxis, LogAxis>| {
        log_curve(chart, &freqs, &zout, (ylo, yhi), PALETTE[0].stroke_width(3))?;
        log_curve(chart, &freqs, &zt, (ylo, yhi), INK.stroke_width(2))?;
        if let Some(m) = limit {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(xlo.log10(), m.log10()), (xhi.log10(), m.log10())],
                    9,
                    6,
                    ALERT.stroke_width(2),
                ))
                .map_err(pe)?;
        }
        Ok(())
    };
    log_log_svg(title, &subtitle, &entries, (xlo, xhi), (ylo, yhi), draw)
}

fn load_step_svg(t: &crate::transient::StepFigures) -> Result<String> {
    let pts: Vec<(f64, f64)> = decimate(
        &t.response
            .iter()
            .map(|&(x, v)| (x * 1e6, v * 1e3))
            .collect::<Vec<_>>(),
        2400,
    );
    let lim = t.max_deviation * 1e3;
    let (xlo, xhi) = min_max(pts.iter().map(|p| p.0));
    let (vlo, vhi) = min_max(pts.iter().map(|p| p.1).chain([lim, -lim]));
    let pad = (vhi - vlo).max(1e-9) * 0.08;
    let (ylo, yhi) = (vlo - pad, vhi + pad);
    let (xlo, xhi) = if xhi > xlo { (xlo, xhi) } else { (0.0, 1.0) };
    let entries = vec![
        entry(
            format!(
                "output after a {} step: peak {}",
                format_si(t.load_step, "A"),
                format_si(t.deviation, "V")
            ),
            PALETTE[0],
            Mark::Line(3),
        ),
        entry(
            format!("limit ±{}", format_si(t.max_deviation, "V")),
            ALERT,
            Mark::Dashed,
        ),
        entry(
            format!("settled value ΔI/(2π·f_c·C): {}", format_si(t.settled, "V")),
            PALETTE[5],
            Mark::Dotted,
        ),
    ];
    let title = "Load step at the worst point of the corner region";
    let subtitle = format!(
        "{} rise time (10–90 %), first-order converter at {} — {}",
        format_si(t.rise_time, "s"),
        format_si(t.loop_crossover, "Hz"),
        if t.ok {
            "meets the limit"
        } else {
            "MISSES the limit"
        }
    );
    let settled = -t.settled * 1e3;
    let fx = |v: &f64| trim_num(*v);
    let fy = |v: &f64| trim_num(*v);
    let frame = Frame {
        height: 560,
        title,
        subtitle: &subtitle,
        x: Axis {
            ticks: Some(12),
            ..axis("time after the start of the step (µs)", &fx)
        },
        y: Axis {
            ticks: Some(10),
            ..axis("output voltage change (mV)", &fy)
        },
        max_light_lines: Some(4),
        entries: &entries,
        extra_legend: 0,
    };
    let draw = |chart: &mut Chart<RangedCoordf64, RangedCoordf64>| {
        for y in [lim, -lim] {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(xlo, y), (xhi, y)],
                    9,
                    6,
                    ALERT.stroke_width(2),
                ))
                .map_err(pe)?;
        }
        if settled.is_finite() && settled >= ylo {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(xlo, settled), (xhi, settled)],
                    3,
                    4,
                    PALETTE[5].stroke_width(2),
                ))
                .map_err(pe)?;
        }
        chart
            .draw_series(LineSeries::new(pts, PALETTE[0].stroke_width(3)))
            .map_err(pe)?;
        Ok(())
    };
    chart_svg(frame, xlo..xhi, ylo..yhi, draw, no_key)
}

fn impedance_svg(problem: &Problem, d: &ImpedanceData, a: &Assessment) -> Result<String> {
    let mut curves: Vec<&[f64]> = d.groups.iter().map(|g| g.1.as_slice()).collect();
    if let Some(z) = &d.internal {
        curves.push(z);
    }
    curves.push(&d.bank);
    curves.push(&d.bank_high);
    let (clo, chi) = min_max(
        curves
            .iter()
            .flat_map(|c| c.iter().copied())
            .filter(|x| x.is_finite() && *x > 0.0),
    );
    let bank_hi = d
        .bank
        .iter()
        .copied()
        .filter(|x| x.is_finite())
        .fold(0.0, f64::max);
    let need_lo = d.needed.iter().map(|n| n.1).fold(f64::INFINITY, f64::min);
    // Keep the view on the bank: parts far above it (tiny capacitors at low
    // frequency) are cut at 1000 × the bank's highest impedance.
    // The needed impedances rise fast with the harmonic number: show them
    // up to 10 × the top of the curves, enough to see the margins.
    let curves_hi = chi.min(bank_hi * 1e3);
    let need_hi = d
        .needed
        .iter()
        .map(|n| n.1)
        .fold(0.0, f64::max)
        .min(curves_hi * 10.0);
    let hi = curves_hi
        .max(need_hi)
        .max(if need_lo.is_finite() { need_lo } else { 0.0 });
    let lo = clo.min(need_lo);
    // The load step's target impedance is shown too.
    let z_step = a
        .transient
        .as_ref()
        .map(|t| t.z_target)
        .filter(|z| z.is_finite() && *z > 0.0);
    let (lo, hi) = match z_step {
        Some(z) => (lo.min(z), hi.max(z)),
        None => (lo, hi),
    };
    let (ylo, yhi) = padded(lo, hi, 1.6);
    let off_scale = d.needed.iter().any(|n| n.1 > yhi);
    let (xlo, xhi) = (d.freqs[0], *d.freqs.last().unwrap_or(&d.freqs[0]));

    let mut entries = Vec::new();
    for (j, g) in d.groups.iter().enumerate() {
        entries.push(entry(
            format!("{} (one line)", g.0),
            PALETTE[j % PALETTE.len()],
            Mark::Line(2),
        ));
    }
    if d.internal.is_some() {
        entries.push(entry(
            "converter's internal capacitance",
            MUTED,
            Mark::Dashed,
        ));
    }
    entries.push(entry(
        "whole bank, as the converter's current sees it (lowest capacitance)",
        INK,
        Mark::Line(4),
    ));
    entries.push(entry(
        "whole bank at its highest capacitance and lowest ESR (the band between: the corner region)",
        INK,
        Mark::Dashed,
    ));
    entries.push(entry(
        "the bank at each harmonic of the ripple current",
        INK,
        Mark::Dot,
    ));
    entries.push(entry(
        if off_scale {
            "impedance at which that harmonic alone would use the whole budget (higher harmonics: above the scale)"
        } else {
            "impedance at which that harmonic alone would use the whole budget"
        },
        ALERT,
        Mark::Bar,
    ));
    // The load step's target impedance over the band it applies to.
    let step_band = a.transient.as_ref().map(|t| {
        (
            t.z_target,
            t.loop_crossover.max(xlo),
            (0.35 / t.rise_time).min(xhi),
        )
    });
    if let Some((z, _, _)) = step_band {
        entries.push(entry(
            format!(
                "load-step target impedance max_deviation / load_step: {}",
                format_si(z, "Ω")
            ),
            PALETTE[5],
            Mark::Dashed,
        ));
    }
    let title = "Impedance of the bank and its parts";
    let subtitle = format!(
        "worst-case capacitance, harmonics of the worst corner ({}), budget {} p-p at {}",
        vin_text(d.vin),
        format_si(a.target_ripple_pp, "V"),
        band_text(problem)
    );
    let draw = |chart: &mut Chart<LogAxis, LogAxis>| {
        // The bank first and thick, the lines on top and thin: a bank of
        // one line shows both curves, one inside the other.
        log_curve(chart, &d.freqs, &d.bank, (ylo, yhi), INK.stroke_width(4))?;
        // The high corner, dashed: the band between the two is the bank's
        // |Z| over the capacitance box of the corner region.
        for run in log_runs(&d.freqs, &d.bank_high, ylo, yhi) {
            chart
                .draw_series(DashedLineSeries::new(run, 10, 6, INK.stroke_width(2)))
                .map_err(pe)?;
        }
        for (j, g) in d.groups.iter().enumerate() {
            let col = PALETTE[j % PALETTE.len()];
            log_curve(chart, &d.freqs, &g.1, (ylo, yhi), col.stroke_width(2))?;
        }
        if let Some(z) = &d.internal {
            for run in log_runs(&d.freqs, z, ylo, yhi) {
                chart
                    .draw_series(DashedLineSeries::new(run, 7, 5, MUTED.stroke_width(2)))
                    .map_err(pe)?;
            }
        }
        if let Some((z, a, b)) = step_band {
            if b > a && z >= ylo && z <= yhi {
                chart
                    .draw_series(DashedLineSeries::new(
                        vec![(a.log10(), z.log10()), (b.log10(), z.log10())],
                        9,
                        6,
                        PALETTE[5].stroke_width(3),
                    ))
                    .map_err(pe)?;
            }
        }
        let in_view =
            |&(f, z): &(f64, f64)| f >= xlo && f <= xhi && z >= ylo && z <= yhi && z.is_finite();
        chart
            .draw_series(d.needed.iter().filter(|p| in_view(p)).map(|&(f, z)| {
                EmptyElement::at((f.log10(), z.log10()))
                    + PathElement::new(vec![(-6, 0), (6, 0)], ALERT.stroke_width(3))
            }))
            .map_err(pe)?;
        chart
            .draw_series(
                d.harmonics
                    .iter()
                    .filter(|p| in_view(p))
                    .map(|&(f, z)| Circle::new((f.log10(), z.log10()), 3, INK.filled())),
            )
            .map_err(pe)?;
        Ok(())
    };
    log_log_svg(title, &subtitle, &entries, (xlo, xhi), (ylo, yhi), draw)
}

fn ripple_svg(problem: &Problem, d: &RippleData, a: &Assessment) -> Result<String> {
    let verdict = if a.meets_target {
        "meets the target"
    } else {
        "MISSES the target"
    };
    let subtitle = format!(
        "{}, worst-case capacitance, 2 periods of {} — {verdict}",
        vin_text(d.vin),
        format_si(d.period, "s"),
    );
    let Some((clim, cfull)) = &d.converter_node else {
        return ripple_chart(
            problem,
            d,
            (&d.limited, &d.full),
            Some(d.target),
            "Output ripple at the worst corner",
            &subtitle,
            "output ripple (mV)",
        );
    };
    // Behind a post-filter: the load node (the target's) above, the
    // converter-side node below, at the same point and time.
    let title = "Output ripple at the worst corner, at both nodes of the filter";
    let load = ripple_chart(
        problem,
        d,
        (&d.limited, &d.full),
        Some(d.target),
        "Load node (after the filter, where the target applies)",
        &subtitle,
        "ripple at the load (mV)",
    )?;
    let conv_sub = format!(
        "the same point and time; {} p-p here, {} p-p at the load ({:.1}× less)",
        format_si(peak_to_peak(clim), "V"),
        format_si(peak_to_peak(&d.limited), "V"),
        peak_to_peak(clim) / peak_to_peak(&d.limited).max(f64::MIN_POSITIVE)
    );
    let conv = ripple_chart(
        problem,
        d,
        (clim, cfull),
        None,
        "Converter-side node (before the filter)",
        &conv_sub,
        "ripple at the converter (mV)",
    )?;
    Ok(stack_svgs(title, &[load, conv]))
}

/// One ripple chart: two periods of the bandwidth-limited and the
/// full-bandwidth samples `traces`, and the target band around the middle
/// of the bandwidth-limited trace when `target` is given.
fn ripple_chart(
    problem: &Problem,
    d: &RippleData,
    traces: (&[f64], &[f64]),
    target: Option<f64>,
    title: &str,
    subtitle: &str,
    y_desc: &str,
) -> Result<String> {
    let periods = 2;
    let us = d.period * 1e6;
    let trace = |v: &[f64]| -> Vec<(f64, f64)> {
        let m = v.len().max(1);
        let mut pts: Vec<(f64, f64)> = (0..periods * m + 1)
            .map(|i| (i as f64 * us / m as f64, v[i % m] * 1e3))
            .collect();
        pts = decimate(&pts, 2400);
        pts
    };
    let lim = trace(traces.0);
    let full = trace(traces.1);
    let (lo, hi) = min_max(traces.0.iter().copied());
    let mid = (lo + hi) / 2.0;
    let band = target.map(|t| ((mid - t / 2.0) * 1e3, (mid + t / 2.0) * 1e3));
    let (vlo, vhi) = min_max(
        lim.iter()
            .chain(&full)
            .map(|p| p.1)
            .chain(band.iter().flat_map(|&(a, b)| [a, b])),
    );
    let pad = (vhi - vlo).max(1e-9) * 0.08;
    let (ylo, yhi) = (vlo - pad, vhi + pad);
    let xhi = periods as f64 * us;
    let bw = band_text(problem);
    let mut entries = vec![
        entry(
            format!(
                "full bandwidth: {} p-p",
                format_si(peak_to_peak(traces.1), "V")
            ),
            PALETTE[5],
            Mark::Line(1),
        ),
        entry(
            format!("{bw}: {} p-p", format_si(peak_to_peak(traces.0), "V")),
            PALETTE[0],
            Mark::Line(3),
        ),
    ];
    if let Some(t) = target {
        entries.push(entry(
            format!(
                "target band: {} p-p around the middle of the {bw} trace",
                format_si(t, "V")
            ),
            ALERT,
            Mark::Dashed,
        ));
    }
    let fx = |v: &f64| trim_num(*v);
    let fy = |v: &f64| trim_num(*v);
    let frame = Frame {
        height: 560,
        title,
        subtitle,
        x: Axis {
            ticks: Some(12),
            ..axis("time (µs)", &fx)
        },
        y: Axis {
            ticks: Some(10),
            ..axis(y_desc, &fy)
        },
        max_light_lines: Some(4),
        entries: &entries,
        extra_legend: 0,
    };
    let draw = |chart: &mut Chart<RangedCoordf64, RangedCoordf64>| {
        // The thick bandwidth-limited trace first, the thin full-band one on
        // top in a contrasting colour so that both stay visible.
        chart
            .draw_series(LineSeries::new(lim, PALETTE[0].stroke_width(3)))
            .map_err(pe)?;
        chart
            .draw_series(LineSeries::new(full, PALETTE[5].stroke_width(1)))
            .map_err(pe)?;
        if let Some((b_lo, b_hi)) = band {
            for y in [b_lo, b_hi] {
                chart
                    .draw_series(DashedLineSeries::new(
                        vec![(0.0, y), (xhi, y)],
                        9,
                        6,
                        ALERT.stroke_width(2),
                    ))
                    .map_err(pe)?;
            }
        }
        Ok(())
    };
    chart_svg(frame, 0.0..xhi, ylo..yhi, draw, no_key)
}

/// Several plots stacked into one SVG (each a nested `<svg>` at its own
/// height), with `title` as the whole figure's `<title>`.
fn stack_svgs(title: &str, parts: &[String]) -> String {
    let height_of = |s: &str| -> u32 {
        s.split_once("height=\"")
            .and_then(|(_, r)| r.split_once('"'))
            .and_then(|(h, _)| h.parse().ok())
            .unwrap_or(0)
    };
    let total: u32 = parts.iter().map(|p| height_of(p)).sum();
    let mut out = format!(
        "<svg width=\"{W}\" height=\"{total}\" viewBox=\"0 0 {W} {total}\" xmlns=\"http://www.w3.org/2000/svg\">\n<title>{}</title>\n",
        xml_escape(title)
    );
    let mut y = 0;
    for p in parts {
        // The part's root element, placed at its height in the stack.
        let body = p.trim_start();
        let body = body.strip_prefix("<svg ").map_or(body.to_string(), |rest| {
            format!("<svg x=\"0\" y=\"{y}\" {rest}")
        });
        out.push_str(&body);
        out.push('\n');
        y += height_of(p);
    }
    out.push_str("</svg>\n");
    out
}

/// A tick number without float noise: 0.30000000000000004 → 0.3.
fn trim_num(v: f64) -> String {
    let s = format!("{:.6}", v);
    let s = s.trim_end_matches('0').trim_end_matches('.').to_string();
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

fn spectrum_svg(problem: &Problem, d: &SpectrumData, a: &Assessment) -> Result<String> {
    // Each harmonic's own peak-to-peak, 2|V_k|: a sinusoid alone at that
    // level fills the budget when it reaches the target line.
    let vpp: Vec<f64> = d.amplitude.iter().map(|v| 2.0 * v).collect();
    let peak = vpp.iter().copied().fold(0.0, f64::max);
    let top = peak.max(d.target);
    let (ylo, yhi) = padded(top * 1e-5, top, 2.0);
    let (xlo, xhi) = (
        d.freqs[0] / 1.5,
        d.freqs.last().copied().unwrap_or(d.freqs[0]) * 1.5,
    );
    let bw = band_text(problem);
    let bandwidth = problem.scenario.target.bandwidth.map(|b| b.0);
    let mut entries = vec![
        entry(
            format!("peak-to-peak of each harmonic, 2|V_k| ({bw})"),
            PALETTE[0],
            Mark::Dot,
        ),
        entry(
            format!("budget: target {} p-p", format_si(d.target, "V")),
            ALERT,
            Mark::Dashed,
        ),
    ];
    if bandwidth.is_some() {
        entries.push(entry(
            format!(
                "measurement bandwidth, {} (order {})",
                format_si(bandwidth.unwrap_or(0.0), "Hz"),
                problem.scenario.target.bandwidth_order
            ),
            MUTED,
            Mark::Dotted,
        ));
    }
    let title = "Harmonic voltage against the budget";
    let subtitle = format!(
        "worst corner ({}), worst-case capacitance; all harmonics together: {} p-p",
        vin_text(d.vin),
        format_si(a.ripple_pp, "V")
    );
    let fx = |v: &f64| log_label(*v, "Hz");
    let fy = |v: &f64| log_label(*v, "V");
    let frame = Frame {
        height: 560,
        title,
        subtitle: &subtitle,
        x: axis("frequency (Hz)", &fx),
        y: axis("harmonic voltage, peak-to-peak (V)", &fy),
        max_light_lines: None,
        entries: &entries,
        extra_legend: 0,
    };
    let draw = |chart: &mut Chart<LogAxis, LogAxis>| {
        let shown: Vec<(f64, f64)> = d
            .freqs
            .iter()
            .zip(&vpp)
            .filter(|(_, &v)| v >= ylo && v <= yhi)
            .map(|(&f, &v)| (f.log10(), v.log10()))
            .collect();
        chart
            .draw_series(shown.iter().map(|&(x, y)| {
                PathElement::new(
                    vec![(x, ylo.log10()), (x, y)],
                    PALETTE[0].mix(0.45).stroke_width(1),
                )
            }))
            .map_err(pe)?;
        chart
            .draw_series(
                shown
                    .iter()
                    .map(|&p| Circle::new(p, 3, PALETTE[0].filled())),
            )
            .map_err(pe)?;
        chart
            .draw_series(DashedLineSeries::new(
                vec![
                    (xlo.log10(), d.target.log10()),
                    (xhi.log10(), d.target.log10()),
                ],
                9,
                6,
                ALERT.stroke_width(2),
            ))
            .map_err(pe)?;
        if let Some(b) = bandwidth.filter(|b| *b > xlo && *b < xhi) {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(b.log10(), ylo.log10()), (b.log10(), yhi.log10())],
                    3,
                    4,
                    MUTED.stroke_width(2),
                ))
                .map_err(pe)?;
        }
        Ok(())
    };
    chart_svg(frame, log_axis(xlo, xhi), log_axis(ylo, yhi), draw, no_key)
}

// ---------------------------------------------------------------- trade-off plots

/// `cost.svg` and `area.svg` of a trade-off sweep: (file name, SVG text).
/// `scenario_target` (V), when given, is marked as a vertical line.
pub fn tradeoff_plots(
    points: &[TradeoffPoint],
    scenario_target: Option<f64>,
) -> Result<Vec<(String, String)>> {
    let mut pts: Vec<&TradeoffPoint> = points
        .iter()
        .filter(|p| p.target.is_finite() && p.target > 0.0)
        .collect();
    pts.sort_by(|a, b| a.target.total_cmp(&b.target));
    // Number each distinct bank in the order it first appears (loosest target last).
    let mut keys: Vec<String> = Vec::new();
    let mut number = Vec::new();
    let mut changed = Vec::new();
    let mut prev: Option<&str> = None;
    for p in &pts {
        let feasible = p.cost.is_some() || p.area.is_some();
        if !feasible {
            number.push(None);
            changed.push(false);
            continue;
        }
        let n = match keys.iter().position(|k| k == &p.bank_key) {
            Some(i) => i,
            None => {
                keys.push(p.bank_key.clone());
                keys.len() - 1
            }
        };
        changed.push(prev != Some(p.bank_key.as_str()));
        prev = Some(p.bank_key.as_str());
        number.push(Some(n + 1));
    }
    let mut out = Vec::new();
    for (file, what, y_desc, title) in [
        (
            "cost.svg",
            Quantity::Cost,
            "cost (catalog currency)",
            "Cost against ripple target",
        ),
        (
            "area.svg",
            Quantity::Area,
            "board area (mm²)",
            "Board area against ripple target",
        ),
    ] {
        out.push((
            file.to_string(),
            tradeoff_svg(
                &pts,
                &number,
                &changed,
                &keys,
                what,
                y_desc,
                title,
                scenario_target,
            )?,
        ));
    }
    Ok(out)
}

#[derive(Clone, Copy)]
enum Quantity {
    Cost,
    Area,
}

#[allow(clippy::too_many_arguments)]
fn tradeoff_svg(
    pts: &[&TradeoffPoint],
    number: &[Option<usize>],
    changed: &[bool],
    keys: &[String],
    what: Quantity,
    y_desc: &str,
    title: &str,
    scenario_target: Option<f64>,
) -> Result<String> {
    let val = |p: &TradeoffPoint| {
        match what {
            Quantity::Cost => p.cost,
            Quantity::Area => p.area,
        }
        .filter(|v| v.is_finite())
    };
    let xs = pts.iter().map(|p| p.target).chain(
        pts.iter()
            .filter_map(|p| p.ripple_pp)
            .filter(|r| r.is_finite() && *r > 0.0),
    );
    let (xmin, xmax) = min_max(xs.map(|x| x * 1e3));
    let (xlo, xhi) = padded(xmin, xmax, 1.25);
    let ymax = pts.iter().filter_map(|p| val(p)).fold(0.0, f64::max);
    let yhi = if ymax > 0.0 { ymax * 1.18 } else { 1.0 };
    let any_infeasible = pts.iter().any(|p| p.cost.is_none() && p.area.is_none());
    let mut entries = vec![
        entry("chosen bank at each target", PALETTE[0], Mark::HollowDot),
        entry(
            "the chosen bank changes here (number: key below)",
            PALETTE[0],
            Mark::FilledDot,
        ),
        entry(
            "the same bank at the ripple it reaches",
            MUTED,
            Mark::Square,
        ),
    ];
    if any_infeasible {
        entries.push(entry("no bank meets this target", ALERT, Mark::Cross));
    }
    let marked_target = scenario_target
        .map(|t| (t * 1e3).log10())
        .filter(|x| x.is_finite() && (xlo.log10()..=xhi.log10()).contains(x));
    if marked_target.is_some() {
        entries.push(entry("the scenario's own target", ALERT, Mark::Dashed));
    }
    let key_lines: Vec<String> = keys
        .iter()
        .enumerate()
        .map(|(i, k)| {
            if k.is_empty() {
                format!("{}: {EMPTY_BANK}", i + 1)
            } else {
                format!("{}: {}", i + 1, k)
            }
        })
        .collect();
    let extra_legend = (key_lines.len() as u32) * 20 + if key_lines.is_empty() { 0 } else { 14 };
    let subtitle = match what {
        Quantity::Cost => {
            "each point is the bank chosen for that target; tighter targets to the left"
        }
        Quantity::Area => {
            "footprint of the bank chosen for each target; tighter targets to the left"
        }
    };
    let fx = |v: &f64| trim_num(sig3(10f64.powf(*v)));
    let fy = |v: &f64| trim_num(*v);
    let frame = Frame {
        height: 540,
        title,
        subtitle,
        x: axis("ripple target, peak-to-peak (mV)", &fx),
        y: Axis {
            ticks: Some(8),
            ..axis(y_desc, &fy)
        },
        max_light_lines: Some(4),
        entries: &entries,
        extra_legend,
    };
    let draw = |chart: &mut Chart<LogAxis, RangedCoordf64>| {
        let line: Vec<(f64, f64)> = pts
            .iter()
            .filter_map(|p| val(p).map(|v| ((p.target * 1e3).log10(), v)))
            .collect();
        chart
            .draw_series(LineSeries::new(line, PALETTE[0].stroke_width(2)))
            .map_err(pe)?;
        if let Some(x) = marked_target {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(x, 0.0), (x, yhi)],
                    7,
                    5,
                    ALERT.stroke_width(2),
                ))
                .map_err(pe)?;
        }
        // The chosen bank at the ripple it reaches, joined to its target point.
        for p in pts {
            if let (Some(v), Some(r)) = (val(p), p.ripple_pp.filter(|r| r.is_finite() && *r > 0.0))
            {
                let (xr, xt) = ((r * 1e3).log10(), (p.target * 1e3).log10());
                chart
                    .draw_series(std::iter::once(PathElement::new(
                        vec![(xr, v), (xt, v)],
                        MUTED.mix(0.5).stroke_width(1),
                    )))
                    .map_err(pe)?;
                chart
                    .draw_series(std::iter::once(
                        EmptyElement::at((xr, v))
                            + Rectangle::new([(-4, -4), (4, 4)], MUTED.stroke_width(1)),
                    ))
                    .map_err(pe)?;
            }
        }
        let label_style = TextStyle::from((FONT, 15).into_font().style(FontStyle::Bold))
            .color(&INK)
            .pos(Pos::new(HPos::Center, VPos::Bottom));
        for (i, p) in pts.iter().enumerate() {
            let x = (p.target * 1e3).log10();
            match val(p) {
                Some(v) if changed[i] => {
                    chart
                        .draw_series(std::iter::once(Circle::new((x, v), 6, PALETTE[0].filled())))
                        .map_err(pe)?;
                    if let Some(n) = number[i] {
                        chart
                            .draw_series(std::iter::once(
                                EmptyElement::at((x, v))
                                    + Text::new(n.to_string(), (0, -9), label_style.clone()),
                            ))
                            .map_err(pe)?;
                    }
                }
                Some(v) => {
                    chart
                        .draw_series(std::iter::once(Circle::new((x, v), 4, WHITE.filled())))
                        .map_err(pe)?;
                    chart
                        .draw_series(std::iter::once(Circle::new(
                            (x, v),
                            4,
                            PALETTE[0].stroke_width(2),
                        )))
                        .map_err(pe)?;
                }
                None if p.cost.is_none() && p.area.is_none() => {
                    chart
                        .draw_series(std::iter::once(Cross::new(
                            (x, yhi * 0.03),
                            6,
                            ALERT.stroke_width(2),
                        )))
                        .map_err(pe)?;
                }
                None => {}
            }
        }
        if pts.iter().all(|p| val(p).is_none()) {
            let st = TextStyle::from((FONT, 18).into_font())
                .color(&MUTED)
                .pos(Pos::new(HPos::Center, VPos::Center));
            let xm = (xlo.log10() + xhi.log10()) / 2.0;
            chart
                .draw_series(std::iter::once(Text::new(
                    "no bank meets any of these targets",
                    (xm, yhi / 2.0),
                    st,
                )))
                .map_err(pe)?;
        }
        Ok(())
    };
    // The key of the bank numbers, under the legend entries.
    let bank_key = |legend: &Area| {
        if !key_lines.is_empty() {
            let y0 = legend_height(entries.len(), 1) as i32;
            let head = TextStyle::from((FONT, 15).into_font().style(FontStyle::Bold))
                .color(&INK)
                .pos(Pos::new(HPos::Left, VPos::Center));
            let st = TextStyle::from((FONT, 14).into_font())
                .color(&INK)
                .pos(Pos::new(HPos::Left, VPos::Center));
            legend
                .draw(&Text::new("banks:", (110, y0), head))
                .map_err(pe)?;
            for (i, k) in key_lines.iter().enumerate() {
                legend
                    .draw(&Text::new(k.clone(), (180, y0 + i as i32 * 20), st.clone()))
                    .map_err(pe)?;
            }
        }
        Ok(())
    };
    chart_svg(frame, log_axis(xlo, xhi), 0.0..yhi, draw, bank_key)
}

/// Round to three significant digits (tick labels of a log axis).
fn sig3(v: f64) -> f64 {
    if v == 0.0 || !v.is_finite() {
        return v;
    }
    let e = v.abs().log10().floor() as i32 - 2;
    let s = 10f64.powi(e);
    (v / s).round() * s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decimation_keeps_extremes() {
        let pts: Vec<(f64, f64)> = (0..10_000)
            .map(|i| (i as f64, ((i * 7919) % 1013) as f64))
            .collect();
        let d = decimate(&pts, 500);
        assert!(d.len() <= 520);
        let (lo, hi) = min_max(pts.iter().map(|p| p.1));
        let (dlo, dhi) = min_max(d.iter().map(|p| p.1));
        assert_eq!((lo, hi), (dlo, dhi));
        assert!(d.windows(2).all(|w| w[0].0 < w[1].0));
    }

    #[test]
    fn log_ticks_cover_the_range() {
        let (b, g) = log_ticks(6e4, 2e8);
        assert_eq!(b.len(), 4); // 100k, 1M, 10M, 100M
        assert!(g
            .iter()
            .all(|&v| v >= 6e4f64.log10() - 1e-9 && v <= 2e8f64.log10() + 1e-9));
        let (b, _) = log_ticks(3e-3, 2e-2);
        assert!(b.len() >= 3, "{b:?}");
    }
}
