//! Parts catalog: CSV with a header row, any column order.
//!
//! Every error names the file, the line and the column. Extra columns are
//! kept and carried through to the bill of materials.

use crate::sheet::{name_list, read_parts, Col, Footprint, Row, SheetPart};
use crate::units::{self, Unit};
use anyhow::Result;
use std::collections::HashMap;
use std::fmt;
use std::path::Path;

/// Capacitor technology, as spelled in the `technology` column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Technology {
    /// Multilayer ceramic (class I or II by its `dielectric`).
    Ceramic,
    /// Polymer aluminum.
    PolymerAluminum,
    /// Polymer tantalum.
    PolymerTantalum,
    /// Manganese-dioxide tantalum.
    Tantalum,
    /// Wet aluminum electrolytic.
    AluminumElectrolytic,
    /// Film.
    Film,
}

impl Technology {
    /// Every technology, in the order the reports list them.
    pub const ALL: [Technology; 6] = [
        Technology::Ceramic,
        Technology::PolymerAluminum,
        Technology::PolymerTantalum,
        Technology::Tantalum,
        Technology::AluminumElectrolytic,
        Technology::Film,
    ];

    /// The name in the `technology` column and in `[selection.voltage_derating]`.
    pub fn name(self) -> &'static str {
        match self {
            Technology::Ceramic => "ceramic",
            Technology::PolymerAluminum => "polymer-aluminum",
            Technology::PolymerTantalum => "polymer-tantalum",
            Technology::Tantalum => "tantalum",
            Technology::AluminumElectrolytic => "aluminum-electrolytic",
            Technology::Film => "film",
        }
    }

    /// Read a `technology` cell; `None` if it is not one of [`Technology::ALL`].
    pub fn parse(s: &str) -> Option<Technology> {
        let s = s.trim().to_ascii_lowercase().replace(['_', ' '], "-");
        Technology::ALL.into_iter().find(|t| t.name() == s)
    }

    /// Default voltage derating (common practice, no source):
    /// 0.5 for MnO2 tantalum, 0.8 for every other technology.
    pub(crate) fn default_derating(self) -> f64 {
        match self {
            Technology::Tantalum => 0.5,
            _ => 0.8,
        }
    }

    /// Polarised parts: reverse voltage and surge cautions apply.
    pub(crate) fn polarised(self) -> bool {
        !matches!(self, Technology::Ceramic | Technology::Film)
    }
}

impl fmt::Display for Technology {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Lifecycle status of a part.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// In production (the default).
    Active,
    /// Not recommended for new designs.
    Nrnd,
    /// No longer made.
    Obsolete,
}

/// The `status` column (`active` when empty), in any letter case.
pub(crate) fn read_status(row: &Row) -> Result<Status> {
    match row.text("status") {
        None => Ok(Status::Active),
        Some(s) => Status::parse(&s).ok_or_else(|| {
            row.err(
                "status",
                format!("unknown status `{s}` (active, nrnd, obsolete)"),
            )
        }),
    }
}

impl Status {
    /// Case-insensitive.
    pub fn parse(s: &str) -> Option<Status> {
        match s.trim().to_ascii_lowercase().as_str() {
            "active" => Some(Status::Active),
            "nrnd" => Some(Status::Nrnd),
            "obsolete" => Some(Status::Obsolete),
            _ => None,
        }
    }

    /// The name in the `status` column.
    pub fn name(self) -> &'static str {
        match self {
            Status::Active => "active",
            Status::Nrnd => "nrnd",
            Status::Obsolete => "obsolete",
        }
    }
}

/// A decoded EIA-198 dielectric code.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dielectric {
    /// Rated minimum temperature, °C.
    pub temp_min: f64,
    /// Rated maximum temperature, °C.
    pub temp_max: f64,
    /// Worst-case fractional capacitance loss over the rated range.
    pub drop: f64,
    /// Worst-case fractional capacitance gain over the rated range.
    pub rise: f64,
    /// Class I (temperature-stable, no DC-bias loss) or class II.
    pub class1: bool,
}

/// Decode an EIA-198 dielectric code: class II `[XYZ][2-9][PRSTUV]`
/// (e.g. X7R: −55…125 °C, ±15 %; Y5V: −30…85 °C, +22/−82 %) or class I
/// `C0G`/`NP0` (−55…125 °C, 0).
pub(crate) fn decode_dielectric(code: &str) -> Option<Dielectric> {
    let c = code.trim().to_ascii_uppercase();
    if matches!(c.as_str(), "C0G" | "COG" | "NP0" | "NPO") {
        return Some(Dielectric {
            temp_min: -55.0,
            temp_max: 125.0,
            drop: 0.0,
            rise: 0.0,
            class1: true,
        });
    }
    let b = c.as_bytes();
    if b.len() != 3 {
        return None;
    }
    let temp_min = match b[0] {
        b'X' => -55.0,
        b'Y' => -30.0,
        b'Z' => 10.0,
        _ => return None,
    };
    let temp_max = match b[1] {
        b'2' => 45.0,
        b'4' => 65.0,
        b'5' => 85.0,
        b'6' => 105.0,
        b'7' => 125.0,
        b'8' => 150.0,
        b'9' => 200.0,
        _ => return None,
    };
    // EIA-198: P ±10 %, R ±15 %, S ±22 %, T +22/−33 %, U +22/−56 %, V +22/−82 %.
    let (rise, drop) = match b[2] {
        b'P' => (0.10, 0.10),
        b'R' => (0.15, 0.15),
        b'S' => (0.22, 0.22),
        b'T' => (0.22, 0.33),
        b'U' => (0.22, 0.56),
        b'V' => (0.22, 0.82),
        _ => return None,
    };
    Some(Dielectric {
        temp_min,
        temp_max,
        drop,
        rise,
        class1: false,
    })
}

/// Footprint (body length × width, mm²) of an imperial EIA case code.
pub(crate) fn eia_case_area(case: &str) -> Option<f64> {
    if let Some(a) = imperial_case_area(case.trim()) {
        return Some(a);
    }
    // Extension: metric EIA codes (length and width in tenths of a mm), as
    // tantalum and polymer chips are named, with an optional height suffix
    // ("7343-31"). None of them collides with an imperial code.
    let code = case.trim().split('-').next().unwrap_or("");
    let (l, w) = match code {
        "1005" => (1.0, 0.5),
        "1608" => (1.6, 0.8),
        "2012" => (2.0, 1.25),
        "3216" => (3.2, 1.6),
        "3225" => (3.2, 2.5),
        "3528" => (3.5, 2.8),
        "4532" => (4.5, 3.2),
        "5750" => (5.7, 5.0),
        "6032" => (6.0, 3.2),
        "7343" => (7.3, 4.3),
        "7360" => (7.3, 6.0),
        _ => return None,
    };
    Some(l * w)
}

fn imperial_case_area(case: &str) -> Option<f64> {
    let (l, w) = match case {
        "01005" => (0.4, 0.2),
        "0201" => (0.6, 0.3),
        "0402" => (1.0, 0.5),
        "0603" => (1.6, 0.8),
        "0805" => (2.0, 1.25),
        "1206" => (3.2, 1.6),
        "1210" => (3.2, 2.5),
        "1808" => (4.5, 2.0),
        "1812" => (4.5, 3.2),
        "1825" => (4.5, 6.4),
        "2010" => (5.0, 2.5),
        "2220" => (5.7, 5.0),
        "2225" => (5.7, 6.4),
        // Reverse-geometry (low-inductance) cases.
        "0204" => (0.5, 1.0),
        "0306" => (0.8, 1.6),
        "0508" => (1.25, 2.0),
        "0612" => (1.6, 3.2),
        _ => return None,
    };
    Some(l * w)
}

/// Points `x:y` joined by `;`, linear between points, flat beyond the ends.
fn interpolate(p: &[(f64, f64)], x: f64) -> f64 {
    if x <= p[0].0 {
        return p[0].1;
    }
    for w in p.windows(2) {
        let ((x0, y0), (x1, y1)) = (w[0], w[1]);
        if x <= x1 {
            return y0 + (y1 - y0) * (x - x0) / (x1 - x0);
        }
    }
    p[p.len() - 1].1
}

/// Read `x:y;x:y;…`: `x` rises strictly, each pair checked by `check`.
fn parse_points(
    text: &str,
    form: &str,
    x_of: impl Fn(&str) -> std::result::Result<f64, String>,
    y_of: impl Fn(&str) -> std::result::Result<f64, String>,
    x_name: &str,
) -> std::result::Result<Vec<(f64, f64)>, String> {
    let mut points: Vec<(f64, f64)> = Vec::new();
    for (i, item) in text.split(';').enumerate() {
        let item = item.trim();
        if item.is_empty() {
            continue;
        }
        let Some((x, y)) = item.split_once(':') else {
            return Err(format!(
                "point {} `{item}` is not of the form {form}",
                i + 1
            ));
        };
        let x = x_of(x.trim()).map_err(|e| format!("point {}: {e}", i + 1))?;
        let y = y_of(y.trim()).map_err(|e| format!("point {}: {e}", i + 1))?;
        if let Some(&(px, _)) = points.last() {
            if x <= px {
                return Err(format!(
                    "point {}: {x_name} must rise strictly ({x} after {px})",
                    i + 1
                ));
            }
        }
        points.push((x, y));
    }
    if points.is_empty() {
        return Err("no points".into());
    }
    Ok(points)
}

/// Capacitance retained under DC bias: `V:fraction` points, linear between
/// points, flat beyond the ends.
#[derive(Debug, Clone, PartialEq)]
pub struct BiasCurve {
    /// `(volts, fraction retained)`, in increasing voltage.
    pub points: Vec<(f64, f64)>,
}

impl BiasCurve {
    /// Read `V:fraction` points joined by `;`; the error says which point is wrong.
    pub fn parse(text: &str) -> std::result::Result<BiasCurve, String> {
        let points = parse_points(
            text,
            "V:fraction",
            |v| {
                let v = units::parse(v, Unit::Volt).map_err(|e| e.to_string())?;
                if v < 0.0 {
                    return Err(format!("negative voltage {v}"));
                }
                Ok(v)
            },
            |k| {
                let k = units::parse(k, Unit::Fraction).map_err(|e| e.to_string())?;
                if !(k > 0.0 && k <= 1.5) {
                    return Err(format!(
                        "retained fraction {k} must be above 0 and at most 1.5"
                    ));
                }
                Ok(k)
            },
            "voltages",
        )?;
        Ok(BiasCurve { points })
    }

    /// Retained fraction at DC voltage `v`.
    pub fn at(&self, v: f64) -> f64 {
        interpolate(&self.points, v)
    }
}

/// ESR multiplier against temperature (`esr_temp`): `°C:factor` points,
/// linear between points, flat beyond the ends.
#[derive(Debug, Clone, PartialEq)]
pub struct TempCurve {
    /// `(°C, factor)` points, temperatures increasing.
    pub points: Vec<(f64, f64)>,
}

impl TempCurve {
    /// Largest factor accepted (an electrolytic at −55 °C may reach tens).
    pub(crate) const MAX_FACTOR: f64 = 100.0;

    /// Read `°C:factor` points joined by `;`.
    pub fn parse(text: &str) -> std::result::Result<TempCurve, String> {
        let points = parse_points(
            text,
            "°C:factor",
            |t| {
                let t = t.trim_end_matches("°C").trim_end_matches('C').trim();
                let t = units::parse(t, Unit::Plain).map_err(|e| e.to_string())?;
                if !(-273.15..=500.0).contains(&t) {
                    return Err(format!("temperature {t} °C is outside −273 … 500 °C"));
                }
                Ok(t)
            },
            |k| {
                let k = units::parse(k, Unit::Plain).map_err(|e| e.to_string())?;
                if !(k > 0.0 && k <= TempCurve::MAX_FACTOR) {
                    return Err(format!(
                        "ESR factor {k} must be above 0 and at most {}",
                        TempCurve::MAX_FACTOR
                    ));
                }
                Ok(k)
            },
            "temperatures",
        )?;
        Ok(TempCurve { points })
    }

    /// ESR factor at temperature `t` (°C).
    pub fn at(&self, t: f64) -> f64 {
        interpolate(&self.points, t)
    }

    /// Lowest and highest factor over `[t_lo, t_hi]` (the ends and every
    /// point between them: the curve is linear in between).
    pub fn range(&self, t_lo: f64, t_hi: f64) -> (f64, f64) {
        let mut lo = self.at(t_lo).min(self.at(t_hi));
        let mut hi = self.at(t_lo).max(self.at(t_hi));
        for &(t, k) in &self.points {
            if t > t_lo && t < t_hi {
                lo = lo.min(k);
                hi = hi.max(k);
            }
        }
        (lo, hi)
    }
}

/// Read an `aging` cell: percent per decade of hours, `2.5` or `"2.5%"`
/// (also `"2.5%/decade"`).
pub(crate) fn parse_aging(text: &str) -> std::result::Result<f64, String> {
    let t = text.trim();
    let t = t
        .strip_suffix("/decade")
        .or_else(|| t.strip_suffix("/dec"))
        .unwrap_or(t)
        .trim();
    let t = t.strip_suffix('%').unwrap_or(t).trim();
    let v = units::parse(t, Unit::Plain).map_err(|_| {
        format!("`{text}` is not an aging rate (percent per decade, e.g. 2.5 or 2.5%)")
    })?;
    if !(0.0..=25.0).contains(&v) {
        return Err(format!(
            "{v} %/decade must be from 0 to 25 (class II ceramics lose about 1 to 7 % per decade)"
        ));
    }
    Ok(v)
}

/// One catalog row.
#[derive(Debug, Clone)]
pub struct Part {
    /// Unique part id (`part` column).
    pub id: String,
    /// Technology.
    pub technology: Technology,
    /// Nominal capacitance, F.
    pub capacitance: f64,
    /// Rated DC voltage, V.
    pub rated_voltage: f64,
    /// Highest ESR at room temperature (the catalog's `esr`).
    pub esr: f64,
    /// Lowest ESR at room temperature (`esr_min`; equals `esr` when absent).
    pub esr_min: f64,
    /// ESR multiplier against temperature (`esr_temp`); none = 1.
    pub esr_temp: Option<TempCurve>,
    /// ESL of the part itself, H.
    pub esl: f64,
    /// Unit cost.
    pub cost: f64,
    /// Capacitance tolerance as a fraction.
    pub tolerance: f64,
    /// True when the catalog gave the tolerance (else 20 % is assumed).
    pub tolerance_given: bool,
    /// EIA dielectric code as written and decoded.
    pub dielectric: Option<(String, Dielectric)>,
    /// DC-bias curve, if given.
    pub dc_bias: Option<BiasCurve>,
    /// Case code, if given.
    pub case: Option<String>,
    /// Footprint in mm², from the `area` column or the EIA case code.
    pub area: Option<f64>,
    /// Height, mm.
    pub height: Option<f64>,
    /// RMS ripple-current rating, A.
    pub ripple_current: Option<f64>,
    /// Lowest rated temperature, °C (`temp_min` column).
    pub temp_min: Option<f64>,
    /// Highest rated temperature, °C (`temp_max` column).
    pub temp_max: Option<f64>,
    /// Worst-case fractional capacitance loss over temperature (`temp_drop` column).
    pub temp_drop: Option<f64>,
    /// Worst-case fractional capacitance gain over temperature (`temp_rise`).
    pub temp_rise: Option<f64>,
    /// Capacitance loss, percent per decade of hours (`aging`; 0 when absent).
    pub aging: f64,
    /// Life-cycle status.
    pub status: Status,
    /// Maker, carried to the bill of materials.
    pub manufacturer: Option<String>,
    /// Maker's part number, carried to the bill of materials.
    pub mpn: Option<String>,
    /// Free description, carried to the bill of materials.
    pub description: Option<String>,
    /// Columns the catalog has beyond the known ones, as (header, value).
    pub extra: Vec<(String, String)>,
    /// Line of the row in its file (1-based, header is line 1).
    pub line: u64,
}

impl Part {
    /// Worst-case fractional capacitance loss over temperature.
    pub(crate) fn temperature_drop(&self) -> f64 {
        self.temp_drop
            .or(self.dielectric.as_ref().map(|(_, d)| d.drop))
            .unwrap_or(0.0)
    }

    /// Worst-case fractional capacitance gain over temperature: the
    /// `temp_rise` column, else the EIA-198 letter, else 0.
    pub(crate) fn temperature_rise(&self) -> f64 {
        self.temp_rise
            .or(self.dielectric.as_ref().map(|(_, d)| d.rise))
            .unwrap_or(0.0)
    }

    /// Fraction of capacitance lost to aging after `service_hours`:
    /// `(aging % / 100) · log10(service_hours / 1000)` beyond the 1000 h
    /// referee time, else 0 (capped below 1).
    pub(crate) fn aging_loss(&self, service_hours: f64) -> f64 {
        if self.aging > 0.0 && service_hours > 1000.0 {
            (self.aging / 100.0 * (service_hours / 1000.0).log10()).min(0.99)
        } else {
            0.0
        }
    }

    #[cfg(test)]
    /// ESR factor at temperature `t` °C (1 without an `esr_temp` curve).
    pub(crate) fn esr_factor(&self, t: f64) -> f64 {
        self.esr_temp.as_ref().map_or(1.0, |c| c.at(t))
    }

    /// Lowest and highest ESR over the environment `[temp_min, temp_max]`:
    /// `(esr_min · k_T(temp_max), esr · k_T(temp_min))` for an ESR that
    /// falls with temperature. A curve that is not monotonic in the range
    /// gives its lowest and highest factor there instead, so the range
    /// always covers every temperature in between.
    pub(crate) fn esr_range(&self, temp_min: f64, temp_max: f64) -> (f64, f64) {
        let (lo, hi) = if temp_min <= temp_max {
            (temp_min, temp_max)
        } else {
            (temp_max, temp_min)
        };
        let (k_lo, k_hi) = self
            .esr_temp
            .as_ref()
            .map_or((1.0, 1.0), |c| c.range(lo, hi));
        (self.esr_min * k_lo, self.esr * k_hi)
    }

    /// Retained fraction under DC bias `v` (1 without a curve).
    pub fn bias_factor(&self, v: f64) -> f64 {
        self.dc_bias.as_ref().map_or(1.0, |c| c.at(v))
    }

    /// Rated temperature range, from the columns or else the EIA code.
    pub(crate) fn temperature_range(&self) -> (Option<f64>, Option<f64>) {
        let d = self.dielectric.as_ref().map(|(_, d)| *d);
        (
            self.temp_min.or(d.map(|d| d.temp_min)),
            self.temp_max.or(d.map(|d| d.temp_max)),
        )
    }

    /// Lowest capacitance: `C_nom · (1 − tol) · k_bias(vdc) · (1 − drop_T) ·
    /// (1 − aging)`, aging after `service_hours` (0 = none).
    pub fn c_low(&self, vdc: f64, service_hours: f64) -> f64 {
        self.capacitance
            * (1.0 - self.tolerance)
            * self.bias_factor(vdc)
            * (1.0 - self.temperature_drop())
            * (1.0 - self.aging_loss(service_hours))
    }

    /// Highest capacitance: `C_nom · (1 + tol) · k_bias(vdc) · (1 + rise_T)`.
    pub fn c_high(&self, vdc: f64) -> f64 {
        self.capacitance
            * (1.0 + self.tolerance)
            * self.bias_factor(vdc)
            * (1.0 + self.temperature_rise())
    }

    /// The low corner without aging: `c_low(vdc, 0)`.
    pub fn c_worst(&self, vdc: f64) -> f64 {
        self.c_low(vdc, 0.0)
    }

    /// Typical corner: `C_nom · k_bias(vdc)`.
    pub fn c_typical(&self, vdc: f64) -> f64 {
        self.capacitance * self.bias_factor(vdc)
    }

    /// Largest capacitance at near-zero bias: `C_nom · (1 + tol)`.
    pub fn c_nominal_max(&self) -> f64 {
        self.capacitance * (1.0 + self.tolerance)
    }
}

/// The catalog-wide note about parts without a tolerance (an assessment
/// replaces it with one note per part of its bank).
pub(crate) const NO_TOLERANCE: &str = "give no tolerance; 20 % assumed";

/// A loaded catalog of `T` rows: capacitors ([`Catalog`]) or inductors
/// ([`InductorCatalog`](crate::inductors::InductorCatalog)).
#[derive(Debug, Clone)]
pub struct Table<T> {
    /// Where the catalog came from (path or bundled name), for messages.
    pub source: String,
    /// The parts in file order.
    pub parts: Vec<T>,
    /// Headers of the extra columns, in file order.
    pub extra_columns: Vec<String>,
    /// Warnings found while reading (missing tolerances, misspelled
    /// columns, unusual values).
    pub warnings: Vec<String>,
    index: HashMap<String, usize>,
}

impl<T> Default for Table<T> {
    fn default() -> Self {
        Table {
            source: String::new(),
            parts: Vec::new(),
            extra_columns: Vec::new(),
            warnings: Vec::new(),
            index: HashMap::new(),
        }
    }
}

/// A loaded capacitor catalog.
pub type Catalog = Table<Part>;

/// The catalog's columns and what each holds.
pub(crate) const KNOWN: &[(&str, Col)] = &[
    ("part", Col::Text),
    ("technology", Col::Text),
    ("capacitance", Col::Value(Unit::Farad)),
    ("rated_voltage", Col::Value(Unit::Volt)),
    ("esr", Col::Value(Unit::Ohm)),
    ("esl", Col::Value(Unit::Henry)),
    ("cost", Col::Value(Unit::Cost)),
    ("tolerance", Col::Value(Unit::Fraction)),
    ("dielectric", Col::Text),
    ("dc_bias", Col::Text),
    ("esr_min", Col::Value(Unit::Ohm)),
    ("esr_temp", Col::Text),
    ("aging", Col::Text),
    ("case", Col::Text),
    ("area", Col::Area),
    ("height", Col::Millimetre),
    ("ripple_current", Col::Value(Unit::Ampere)),
    ("temp_min", Col::Celsius),
    ("temp_max", Col::Celsius),
    ("temp_drop", Col::Value(Unit::Fraction)),
    ("temp_rise", Col::Value(Unit::Fraction)),
    ("status", Col::Text),
    ("manufacturer", Col::Text),
    ("mpn", Col::Text),
    ("description", Col::Text),
];
/// The columns every catalog must have.
pub(crate) const REQUIRED: &[&str] = &[
    "part",
    "technology",
    "capacitance",
    "rated_voltage",
    "esr",
    "esl",
    "cost",
];

impl<T: SheetPart> Table<T> {
    /// Read a catalog file; errors name the file, line and column.
    pub fn from_path(path: &Path) -> Result<Table<T>> {
        let bytes = std::fs::read(path)
            .map_err(|e| anyhow::anyhow!("{}: cannot read the {}: {e}", path.display(), T::WHAT))?;
        Table::from_bytes(&bytes, &path.display().to_string())
    }

    /// The part with this id.
    pub fn get(&self, id: &str) -> Option<&T> {
        self.index.get(id).map(|&i| &self.parts[i])
    }

    /// The index in `parts` of the part with this id.
    pub fn position(&self, id: &str) -> Option<usize> {
        self.index.get(id).copied()
    }

    /// Parse catalog text; `source` names it in messages.
    pub fn from_bytes(bytes: &[u8], source: &str) -> Result<Table<T>> {
        let read = read_parts::<T>(bytes, source)?;
        Ok(Table {
            source: source.to_string(),
            parts: read.parts,
            extra_columns: read.extra_columns,
            warnings: read.warnings,
            index: read.index,
        })
    }
}

crate::sheet::sheet_part!(
    Part,
    "catalog",
    "part(s)",
    KNOWN,
    REQUIRED,
    read_part,
    fn notes(
        parts: &[Part],
        col: &HashMap<&'static str, usize>,
        source: &str,
        out: &mut Vec<String>,
    ) {
        let mut unusual = Unusual::default();
        for p in parts {
            unusual.note(p, col, p.line);
        }
        unusual.into_warnings(source, out);
    }
);

/// Values that are possible but unusual enough to be a slip of the unit:
/// one warning per kind, listing the parts with their line and column.
#[derive(Default)]
struct Unusual {
    /// (what, column, entries "PART (line N)").
    kinds: Vec<(&'static str, &'static str, Vec<String>)>,
}

impl Unusual {
    /// Thresholds are common practice, no source: a capacitor's ESL is
    /// below a few nH for chips and below about 20 nH for leaded cans; a
    /// ceramic's ESR is milliohms.
    const ESL_WARN: f64 = 50e-9;
    const CERAMIC_ESR_WARN: f64 = 1.0;

    fn push(&mut self, what: &'static str, column: &'static str, entry: String) {
        match self.kinds.iter_mut().find(|k| k.0 == what) {
            Some(k) => k.2.push(entry),
            None => self.kinds.push((what, column, vec![entry])),
        }
    }

    fn note(&mut self, p: &Part, col: &HashMap<&'static str, usize>, line: u64) {
        let at = |c: &str| {
            format!(
                "{} (line {line}, column {})",
                p.id,
                col.get(c).map_or(0, |i| i + 1)
            )
        };
        if p.esl > Self::ESL_WARN {
            self.push(
                "ESL above 50 nH (unusual for a capacitor; check the prefix)",
                "esl",
                at("esl"),
            );
        }
        if p.technology == Technology::Ceramic && p.esr > Self::CERAMIC_ESR_WARN {
            self.push(
                "ESR above 1 Ω on a ceramic (ceramics have milliohms; check the prefix)",
                "esr",
                at("esr"),
            );
        }
    }

    fn into_warnings(self, source: &str, out: &mut Vec<String>) {
        for (what, column, entries) in self.kinds {
            out.push(format!(
                "{source}: column `{column}`: {what}: {}",
                name_list(&entries)
            ));
        }
    }
}

/// 1-based line and column (in characters, bytes past ASCII counted one
/// each) of byte offset `at`.
pub(crate) fn text_position(bytes: &[u8], at: usize) -> (usize, usize) {
    let before = &bytes[..at.min(bytes.len())];
    let line = before.iter().filter(|&&b| b == b'\n').count() + 1;
    let start = before
        .iter()
        .rposition(|&b| b == b'\n')
        .map_or(0, |i| i + 1);
    (line, at - start + 1)
}

/// True 1-based line numbers of CSV records. The `csv` crate's own
/// `Position::line` miscounts after CRLF line ends and blank lines (its byte
/// offset points at the end of the previous record), so the line is counted
/// here from the byte offset, skipping the line ends and blank lines before
/// the record. Offsets must be asked in rising order (one pass over the text).
pub(crate) struct LineCounter<'a> {
    text: &'a [u8],
    at: usize,
    line: u64,
}

impl<'a> LineCounter<'a> {
    pub(crate) fn new(text: &'a [u8]) -> Self {
        LineCounter {
            text,
            at: 0,
            line: 1,
        }
    }

    /// Line on which the record at `pos` starts (0 when unknown).
    pub(crate) fn line(&mut self, pos: Option<&csv::Position>) -> u64 {
        let Some(pos) = pos else { return 0 };
        let mut start = (pos.byte() as usize).min(self.text.len());
        while start < self.text.len() && matches!(self.text[start], b'\r' | b'\n') {
            start += 1;
        }
        if start < self.at {
            // Not expected; count again from the beginning.
            self.at = 0;
            self.line = 1;
        }
        self.line += self.text[self.at..start]
            .iter()
            .filter(|&&b| b == b'\n')
            .count() as u64;
        self.at = start;
        self.line
    }
}

/// An ESR above 10 Ω is no output capacitor's: an error with the
/// likely value (milliohms).
fn plausible_esr(row: &Row, name: &str, esr: f64) -> Result<()> {
    if esr > 10.0 {
        return Err(row.err(
            name,
            format!(
                "{} is not a plausible ESR (above 10 Ω); {}",
                units::format_si(esr, "Ω"),
                row.hint(name, "ohms", "m")
            ),
        ));
    }
    Ok(())
}

fn read_part(row: &Row) -> Result<Part> {
    let id = row.part_id()?;
    let tech_text = row
        .text("technology")
        .ok_or_else(|| row.err("technology", "required value is empty"))?;
    let technology = Technology::parse(&tech_text).ok_or_else(|| {
        row.err(
            "technology",
            format!(
                "unknown technology `{tech_text}` (one of: {})",
                Technology::ALL.map(|t| t.name()).join(", ")
            ),
        )
    })?;
    let capacitance = row.req("capacitance", Unit::Farad)?;
    row.positive("capacitance", capacitance, false)?;
    if capacitance > 100.0 {
        return Err(row.err(
            "capacitance",
            format!(
                "{} is beyond any output capacitor (did a prefix go missing? {})",
                units::format_si(capacitance, "F"),
                row.hint("capacitance", "farads", "u")
            ),
        ));
    }
    if technology == Technology::Ceramic && capacitance > 1e-3 {
        return Err(row.err(
            "capacitance",
            format!(
                "{} for a ceramic (no ceramic capacitor reaches 1 mF); {}",
                units::format_si(capacitance, "F"),
                row.hint("capacitance", "farads", "u")
            ),
        ));
    }
    let rated_voltage = row.req("rated_voltage", Unit::Volt)?;
    row.positive("rated_voltage", rated_voltage, false)?;
    let esr = row.req("esr", Unit::Ohm)?;
    row.positive("esr", esr, true)?;
    plausible_esr(row, "esr", esr)?;
    let esr_min = match row.num("esr_min", Unit::Ohm)? {
        None => esr,
        Some(m) => {
            row.positive("esr_min", m, true)?;
            plausible_esr(row, "esr_min", m)?;
            if m > esr {
                return Err(row.err(
                    "esr_min",
                    format!("{m} Ohm is above the part's esr {esr} Ohm (esr is the highest, esr_min the lowest)"),
                ));
            }
            m
        }
    };
    let esr_temp = match row.decimal_text("esr_temp") {
        None => None,
        Some(t) => Some(TempCurve::parse(&t).map_err(|e| row.err("esr_temp", e))?),
    };
    let aging = match row.decimal_text("aging") {
        None => 0.0,
        Some(t) => parse_aging(&t).map_err(|e| row.err("aging", e))?,
    };
    let esl = row.req("esl", Unit::Henry)?;
    row.positive("esl", esl, true)?;
    if esl > 1e-6 {
        return Err(row.err(
            "esl",
            format!(
                "{} is not a plausible ESL (above 1 µH; a capacitor's own inductance is a few nH); {}",
                units::format_si(esl, "H"),
                row.hint("esl", "henries", "n")
            ),
        ));
    }
    let cost = row.req("cost", Unit::Cost)?;
    row.positive("cost", cost, true)?;
    let tol = row.tolerance(false)?;
    let dielectric = match row.text("dielectric") {
        None => None,
        Some(code) => match decode_dielectric(&code) {
            Some(d) => Some((code.to_ascii_uppercase(), d)),
            None => {
                return Err(row.err(
                    "dielectric",
                    format!("`{code}` is not an EIA-198 code this tool knows (X7R, X5R, X6S, C0G, …); leave it empty and give temp_min, temp_max, temp_drop"),
                ))
            }
        },
    };
    let dc_bias = match row.decimal_text("dc_bias") {
        None => None,
        Some(t) => Some(BiasCurve::parse(&t).map_err(|e| row.err("dc_bias", e))?),
    };
    let Footprint { case, area, height } = row.footprint()?;
    let ripple_current = row.num("ripple_current", Unit::Ampere)?;
    if let Some(r) = ripple_current {
        row.positive("ripple_current", r, false)?;
    }
    let (temp_min, temp_max) = row.temperature_range()?;
    let temp_drop = row.num("temp_drop", Unit::Fraction)?;
    if let Some(d) = temp_drop {
        if !(0.0..1.0).contains(&d) {
            return Err(row.err("temp_drop", format!("{d} must be at least 0 and below 1")));
        }
    }
    let temp_rise = row.num("temp_rise", Unit::Fraction)?;
    if let Some(d) = temp_rise {
        if !(0.0..=1.0).contains(&d) {
            return Err(row.err("temp_rise", format!("{d} must be from 0 to 1 (100 %)")));
        }
    }
    let status = read_status(row)?;
    Ok(Part {
        id,
        technology,
        capacitance,
        rated_voltage,
        esr,
        esr_min,
        esr_temp,
        esl,
        cost,
        tolerance: tol.unwrap_or(0.20),
        tolerance_given: tol.is_some(),
        dielectric,
        dc_bias,
        case,
        area,
        height,
        ripple_current,
        temp_min,
        temp_max,
        temp_drop,
        temp_rise,
        aging,
        status,
        manufacturer: row.text("manufacturer"),
        mpn: row.text("mpn"),
        description: row.text("description"),
        extra: row.extra(),
        line: row.line,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sheet::edit_distance;

    fn one_part(extra_head: &str, extra_cells: &str) -> Part {
        let csv = format!(
            "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance{extra_head}\n\
             A,ceramic,10u,16,10m,0.4n,0.05,10%{extra_cells}\n"
        );
        Catalog::from_bytes(csv.as_bytes(), "t.csv")
            .unwrap_or_else(|e| panic!("{e:#}"))
            .parts
            .remove(0)
    }

    #[test]
    fn aging_loses_two_decades_times_the_rate() {
        // Class II aging law as manufacturers publish it (common practice,
        // no single source; IEC 60384-9 style 1000 h referee time):
        // C(t) = C(t0) · (1 − k/100 · log10(t / t0)). 2.5 %/decade from
        // 1000 h to 100 000 h is two decades: 5 % lost.
        for cell in ["2.5", "2.5%", "2.5 %/decade"] {
            let p = one_part(",dielectric,aging", &format!(",X7R,\"{cell}\""));
            assert_eq!(p.aging, 2.5, "{cell}");
            let c0 = p.c_low(0.0, 1000.0);
            let c = p.c_low(0.0, 100_000.0);
            assert!((c / c0 - 0.95).abs() < 1e-12, "{cell}: {}", c / c0);
        }
        let p = one_part(",dielectric,aging", ",X7R,2.5");
        // No aging at or before the referee time, nor with service_hours 0.
        assert_eq!(p.c_low(0.0, 0.0), p.c_low(0.0, 1000.0));
        assert_eq!(p.c_low(0.0, 500.0), p.c_worst(0.0));
        // X7R: C_low = 10 µ · 0.9 · 0.85, C_high = 10 µ · 1.1 · 1.15 (EIA-198 R = ±15 %).
        assert!((p.c_worst(0.0) - 10e-6 * 0.9 * 0.85).abs() < 1e-18);
        assert!((p.c_high(0.0) - 10e-6 * 1.1 * 1.15).abs() < 1e-18);
        assert!(parse_aging("30").is_err());
        assert!(parse_aging("fast").is_err());
    }

    #[test]
    fn high_corner_uses_the_rise_and_temp_rise_column() {
        // Y5V (EIA-198 V: +22/−82 %) and a non-EIA part with temp_rise 5 %.
        let y5v = one_part(",dielectric", ",Y5V");
        assert!((y5v.c_high(0.0) - 10e-6 * 1.1 * 1.22).abs() < 1e-18);
        assert!((y5v.c_worst(0.0) - 10e-6 * 0.9 * 0.18).abs() < 1e-18);
        let p = one_part(",temp_drop,temp_rise", ",10%,5%");
        assert!((p.c_high(0.0) - 10e-6 * 1.1 * 1.05).abs() < 1e-18);
        let none = one_part("", "");
        assert_eq!(none.temperature_rise(), 0.0);
    }

    #[test]
    fn esr_range_follows_the_temperature_curve() {
        // Hand-interpolated from the curve below (linear between points):
        // at −40 °C the factor is 8, at 85 °C 1 + (0.6 − 1)·65/85.
        let p = one_part(",esr_min,esr_temp", ",6m,-40:8;-25:4;0:1.8;20:1;105:0.6");
        assert_eq!(p.esr_min, 6e-3);
        let (lo, hi) = p.esr_range(-40.0, 85.0);
        let k85 = 1.0 + (0.6 - 1.0) * 65.0 / 85.0;
        assert!((lo - 6e-3 * k85).abs() < 1e-15, "{lo}");
        assert!((hi - 10e-3 * 8.0).abs() < 1e-15, "{hi}");
        // Flat beyond the ends; between −25 and 0: 4 + (1.8 − 4)·0.5.
        assert_eq!(p.esr_factor(-55.0), 8.0);
        assert_eq!(p.esr_factor(150.0), 0.6);
        assert!((p.esr_factor(-12.5) - 2.9).abs() < 1e-12);
        // Without a curve or esr_min: the catalog ESR at both ends.
        let q = one_part("", "");
        assert_eq!(q.esr_range(-40.0, 85.0), (10e-3, 10e-3));
        // A curve with a minimum inside the range still covers it.
        let r = one_part(",esr_temp", ",-40:3;25:1;125:2");
        assert_eq!(r.esr_range(-40.0, 125.0), (10e-3, 30e-3));
    }

    #[test]
    fn esr_temp_and_esr_min_errors_name_line_and_column() {
        let bad = [
            (
                ",esr_temp",
                ",-40:8;-50:4",
                "column 9 (esr_temp)",
                "rise strictly",
            ),
            (",esr_temp", ",-40 8", "column 9 (esr_temp)", "°C:factor"),
            (",esr_temp", ",-40:0", "column 9 (esr_temp)", "above 0"),
            (
                ",esr_min",
                ",20m",
                "column 9 (esr_min)",
                "above the part's esr",
            ),
            (",temp_rise", ",150%", "column 9 (temp_rise)", "from 0 to 1"),
            (",aging", ",40%", "column 9 (aging)", "from 0 to 25"),
        ];
        for (h, c, want1, want2) in bad {
            let csv = format!(
                "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance{h}\n\
                 A,ceramic,10u,16,10m,0.4n,0.05,10%{c}\n"
            );
            let e = Catalog::from_bytes(csv.as_bytes(), "t.csv")
                .unwrap_err()
                .to_string();
            assert!(
                e.contains(&format!("line 2, {want1}")) && e.contains(want2),
                "{e}"
            );
        }
    }

    #[test]
    fn eia198_class2_table() {
        // EIA-198 (EIA/IS-198) class II codes: first letter = low temperature,
        // digit = high temperature, last letter = maximum capacitance change.
        let lows = [('X', -55.0), ('Y', -30.0), ('Z', 10.0)];
        let highs = [
            ('2', 45.0),
            ('4', 65.0),
            ('5', 85.0),
            ('6', 105.0),
            ('7', 125.0),
            ('8', 150.0),
            ('9', 200.0),
        ];
        // EIA-198 letter: (rise, drop): P ±10 %, R ±15 %, S ±22 %,
        // T +22/−33 %, U +22/−56 %, V +22/−82 %.
        let drops = [
            ('P', 0.10, 0.10),
            ('R', 0.15, 0.15),
            ('S', 0.22, 0.22),
            ('T', 0.22, 0.33),
            ('U', 0.22, 0.56),
            ('V', 0.22, 0.82),
        ];
        for (l, tl) in lows {
            for (h, th) in highs {
                for (d, rr, dd) in drops {
                    let code = format!("{l}{h}{d}");
                    let x = decode_dielectric(&code).unwrap();
                    assert_eq!(
                        (x.temp_min, x.temp_max, x.rise, x.drop),
                        (tl, th, rr, dd),
                        "{code}"
                    );
                    assert!(!x.class1);
                }
            }
        }
        // Familiar codes, from memory of data sheets.
        let x7r = decode_dielectric("X7R").unwrap();
        assert_eq!((x7r.temp_min, x7r.temp_max, x7r.drop), (-55.0, 125.0, 0.15));
        let y5v = decode_dielectric("y5v").unwrap();
        assert_eq!((y5v.temp_min, y5v.temp_max, y5v.drop), (-30.0, 85.0, 0.82));
        let c0g = decode_dielectric("C0G").unwrap();
        assert!(c0g.class1 && c0g.drop == 0.0 && c0g.rise == 0.0);
        assert!(decode_dielectric("X7Q").is_none());
        assert!(decode_dielectric("W7R").is_none());
        assert!(decode_dielectric("X1R").is_none());
    }

    #[test]
    fn eia_case_areas() {
        // EIA imperial case code = length and width in hundredths of an inch;
        // metric body sizes 1.6 x 0.8 mm (0603), 3.2 x 2.5 mm (1210).
        assert!((eia_case_area("0603").unwrap() - 1.28).abs() < 1e-12);
        assert!((eia_case_area("1210").unwrap() - 8.0).abs() < 1e-12);
        assert!(eia_case_area("D6.3x5.8").is_none());
        // Metric codes: 7343 = 7.3 x 4.3 mm (tantalum "D" case), with a height suffix.
        assert!((eia_case_area("7343-31").unwrap() - 31.39).abs() < 1e-9);
        assert!((eia_case_area("3528").unwrap() - 9.8).abs() < 1e-9);
    }

    #[test]
    fn bias_curve_interpolates_and_is_flat_beyond_ends() {
        let c = BiasCurve::parse("0:1;1.8:0.82;3.3:0.61;5:0.45").unwrap();
        assert_eq!(c.at(0.0), 1.0);
        assert!((c.at(0.9) - 0.91).abs() < 1e-12);
        assert_eq!(c.at(3.3), 0.61);
        assert_eq!(c.at(12.0), 0.45);
        assert!(BiasCurve::parse("0:1;0:0.5").is_err());
        assert!(BiasCurve::parse("0:1;2:-0.5").is_err());
        assert!(BiasCurve::parse("0=1").is_err());
    }

    #[test]
    fn reads_rows_and_names_line_and_column() {
        let csv = "part,technology,capacitance,rated_voltage,esr,esl,cost,case,vendor_code\n\
                   A,ceramic,22u,6.3,3m,0.4n,0.05,0805,x1\n\
                   B,ceramic,10uH,6.3,3m,0.4n,0.05,0603,x2\n";
        let e = Catalog::from_bytes(csv.as_bytes(), "t.csv")
            .unwrap_err()
            .to_string();
        assert!(e.contains("t.csv: line 3, column 3 (capacitance)"), "{e}");
        let ok = "part,technology,capacitance,rated_voltage,esr,esl,cost,case,vendor_code\n\
                  A,ceramic,22u,6.3,3m,0.4n,0.05,0805,x1\n";
        let c = Catalog::from_bytes(ok.as_bytes(), "t.csv").unwrap();
        assert_eq!(c.parts[0].area, Some(2.5));
        assert_eq!(
            c.parts[0].extra,
            vec![("vendor_code".to_string(), "x1".to_string())]
        );
        assert_eq!(c.parts[0].tolerance, 0.2);
    }

    #[test]
    fn misspelled_column_is_warned_about() {
        let csv = "part,technology,capacitance,rated_voltage,esr,esl,cost,statu,vendor_code\n\
                   A,ceramic,22u,6.3,3m,0.4n,0.05,obsolete,x1\n";
        let c = Catalog::from_bytes(csv.as_bytes(), "t.csv").unwrap();
        assert!(
            c.warnings
                .iter()
                .any(|w| w.contains("did you mean `status`")),
            "{:?}",
            c.warnings
        );
        assert!(!c.warnings.iter().any(|w| w.contains("vendor_code")));
        assert_eq!(edit_distance("ripple_curent", "ripple_current"), 1);
    }

    #[test]
    fn header_units_scale_bare_numbers_only() {
        let csv = "Part,Technology,Capacitance (uF),Rated Voltage (V),ESR [mOhm],ESL (nH),Cost ($),Tolerance (%),Height (mm),Temp Min (°C)\n\
                   A,ceramic,22,6.3,3,0.4,0.05,10,1.25,-55\n\
                   B,ceramic,100n,16,0R005,450p,$0.02,±5%,0.5,-55\n";
        let c = Catalog::from_bytes(csv.as_bytes(), "t.csv").unwrap_or_else(|e| panic!("{e:#}"));
        let a = &c.parts[0];
        assert!((a.capacitance - 22e-6).abs() < 1e-18);
        assert!((a.esr - 3e-3).abs() < 1e-15);
        assert!((a.esl - 0.4e-9).abs() < 1e-21);
        assert!((a.tolerance - 0.10).abs() < 1e-15);
        assert_eq!(
            (a.cost, a.height, a.temp_min),
            (0.05, Some(1.25), Some(-55.0))
        );
        // Cells with their own prefix or unit are read as written.
        let b = &c.parts[1];
        assert!((b.capacitance - 100e-9).abs() < 1e-21);
        assert!((b.esr - 5e-3).abs() < 1e-15);
        assert!((b.esl - 450e-12).abs() < 1e-21);
        assert!((b.tolerance - 0.05).abs() < 1e-15);
        assert_eq!(b.cost, 0.02);
        // A header unit that does not fit the column is refused at line 1.
        let bad = "part,technology,capacitance (uH),rated_voltage,esr,esl,cost\nA,ceramic,22,6.3,3m,0.4n,0.05\n";
        let e = Catalog::from_bytes(bad.as_bytes(), "t.csv")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("line 1, column 3 (capacitance)") && e.contains("uH"),
            "{e}"
        );
    }

    #[test]
    fn semicolon_export_with_decimal_commas() {
        let csv = "\u{feff}Part ; Technology;Capacitance;Rated Voltage;ESR;ESL;Cost\r\nA;ceramic;4,7u;6,3;3m;0,4n;0,05\r\n";
        let c = Catalog::from_bytes(csv.as_bytes(), "t.csv").unwrap();
        assert!((c.parts[0].capacitance - 4.7e-6).abs() < 1e-18);
        assert!((c.parts[0].rated_voltage - 6.3).abs() < 1e-12);
    }
}
