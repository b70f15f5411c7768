//! Parts catalog (SPEC §2): CSV with a header row, any column order.
//!
//! Every error names the file, the line and the column. Extra columns are
//! kept and carried through to the bill of materials.

use crate::units::{self, Unit};
use anyhow::{bail, Result};
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

    /// Default voltage derating (SPEC §4, common practice, no source):
    /// 0.5 for MnO2 tantalum, 0.8 for every other technology.
    pub fn default_derating(self) -> f64 {
        match self {
            Technology::Tantalum => 0.5,
            _ => 0.8,
        }
    }

    /// Polarised parts: reverse voltage and surge cautions apply.
    pub fn polarised(self) -> bool {
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

impl Status {
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
    /// Class I (temperature-stable, no DC-bias loss) or class II.
    pub class1: bool,
}

/// Decode an EIA-198 dielectric code: class II `[XYZ][2-9][PRSTUV]`
/// (e.g. X7R: −55…125 °C, ±15 %) or class I `C0G`/`NP0` (−55…125 °C, 0).
pub fn decode_dielectric(code: &str) -> Option<Dielectric> {
    let c = code.trim().to_ascii_uppercase();
    if matches!(c.as_str(), "C0G" | "COG" | "NP0" | "NPO") {
        return Some(Dielectric {
            temp_min: -55.0,
            temp_max: 125.0,
            drop: 0.0,
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
    let drop = match b[2] {
        b'P' => 0.10,
        b'R' => 0.15,
        b'S' => 0.22,
        b'T' => 0.33,
        b'U' => 0.56,
        b'V' => 0.82,
        _ => return None,
    };
    Some(Dielectric {
        temp_min,
        temp_max,
        drop,
        class1: false,
    })
}

/// Footprint (body length × width, mm²) of an imperial EIA case code.
pub fn eia_case_area(case: &str) -> Option<f64> {
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
        let mut points = Vec::new();
        for (i, item) in text.split(';').enumerate() {
            let item = item.trim();
            if item.is_empty() {
                continue;
            }
            let Some((v, k)) = item.split_once(':') else {
                return Err(format!(
                    "point {} `{item}` is not of the form V:fraction",
                    i + 1
                ));
            };
            let v = units::parse(v, Unit::Volt).map_err(|e| format!("point {}: {e}", i + 1))?;
            let k = units::parse(k, Unit::Fraction).map_err(|e| format!("point {}: {e}", i + 1))?;
            if v < 0.0 {
                return Err(format!("point {}: negative voltage {v}", i + 1));
            }
            if !(k > 0.0 && k <= 1.5) {
                return Err(format!(
                    "point {}: retained fraction {k} must be above 0 and at most 1.5",
                    i + 1
                ));
            }
            if let Some(&(pv, _)) = points.last() {
                if v <= pv {
                    return Err(format!(
                        "point {}: voltages must rise strictly ({v} V after {pv} V)",
                        i + 1
                    ));
                }
            }
            points.push((v, k));
        }
        if points.is_empty() {
            return Err("no points".into());
        }
        Ok(BiasCurve { points })
    }

    /// Retained fraction at DC voltage `v`.
    pub fn at(&self, v: f64) -> f64 {
        let p = &self.points;
        if v <= p[0].0 {
            return p[0].1;
        }
        for w in p.windows(2) {
            let ((v0, k0), (v1, k1)) = (w[0], w[1]);
            if v <= v1 {
                return k0 + (k1 - k0) * (v - v0) / (v1 - v0);
            }
        }
        p[p.len() - 1].1
    }
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
    /// Maximum ESR at room temperature, Ω.
    pub esr: f64,
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
    /// Life-cycle status.
    pub status: Status,
    /// Maker, carried to the bill of materials.
    pub manufacturer: Option<String>,
    /// Maker's part number, carried to the bill of materials.
    pub mpn: Option<String>,
    /// Free description, carried to the bill of materials.
    pub description: Option<String>,
    /// Columns the catalog has beyond SPEC §2, as (header, value).
    pub extra: Vec<(String, String)>,
    /// Line of the row in its file (1-based, header is line 1).
    pub line: u64,
}

impl Part {
    /// Worst-case fractional capacitance loss over temperature.
    pub fn temperature_drop(&self) -> f64 {
        self.temp_drop
            .or(self.dielectric.as_ref().map(|(_, d)| d.drop))
            .unwrap_or(0.0)
    }

    /// Retained fraction under DC bias `v` (1 without a curve).
    pub fn bias_factor(&self, v: f64) -> f64 {
        self.dc_bias.as_ref().map_or(1.0, |c| c.at(v))
    }

    /// Rated temperature range, from the columns or else the EIA code.
    pub fn temperature_range(&self) -> (Option<f64>, Option<f64>) {
        let d = self.dielectric.as_ref().map(|(_, d)| *d);
        (
            self.temp_min.or(d.map(|d| d.temp_min)),
            self.temp_max.or(d.map(|d| d.temp_max)),
        )
    }

    /// Worst corner: `C_nom · (1 − tol) · k_bias(vdc) · (1 − drop_T)` (SPEC §4).
    pub fn c_worst(&self, vdc: f64) -> f64 {
        self.capacitance
            * (1.0 - self.tolerance)
            * self.bias_factor(vdc)
            * (1.0 - self.temperature_drop())
    }

    /// Typical corner: `C_nom · k_bias(vdc)` (SPEC §4).
    pub fn c_typical(&self, vdc: f64) -> f64 {
        self.capacitance * self.bias_factor(vdc)
    }

    /// Largest capacitance at near-zero bias: `C_nom · (1 + tol)`.
    pub fn c_nominal_max(&self) -> f64 {
        self.capacitance * (1.0 + self.tolerance)
    }
}

/// A loaded catalog.
#[derive(Debug, Clone, Default)]
pub struct Catalog {
    /// Where the catalog came from (path or bundled name), for messages.
    pub source: String,
    /// The parts in file order.
    pub parts: Vec<Part>,
    /// Headers of the extra columns, in file order.
    pub extra_columns: Vec<String>,
    /// Warnings found while reading.
    pub warnings: Vec<String>,
    index: HashMap<String, usize>,
}

const KNOWN: &[&str] = &[
    "part",
    "technology",
    "capacitance",
    "rated_voltage",
    "esr",
    "esl",
    "cost",
    "tolerance",
    "dielectric",
    "dc_bias",
    "case",
    "area",
    "height",
    "ripple_current",
    "temp_min",
    "temp_max",
    "temp_drop",
    "status",
    "manufacturer",
    "mpn",
    "description",
];
const REQUIRED: &[&str] = &[
    "part",
    "technology",
    "capacitance",
    "rated_voltage",
    "esr",
    "esl",
    "cost",
];

/// Levenshtein distance between two short names.
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, &cb) in b.iter().enumerate() {
            cur[j + 1] = (prev[j] + usize::from(ca != cb))
                .min(prev[j + 1] + 1)
                .min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

fn normalise_header(h: &str) -> String {
    h.trim()
        .trim_start_matches('\u{feff}')
        .to_ascii_lowercase()
        .replace([' ', '-'], "_")
}

impl Catalog {
    /// Read a catalog file; errors name the file, line and column.
    pub fn from_path(path: &Path) -> Result<Catalog> {
        let bytes = std::fs::read(path)
            .map_err(|e| anyhow::anyhow!("{}: cannot read the catalog: {e}", path.display()))?;
        Catalog::from_bytes(&bytes, &path.display().to_string())
    }

    /// The part with this id.
    pub fn get(&self, id: &str) -> Option<&Part> {
        self.index.get(id).map(|&i| &self.parts[i])
    }

    /// The index in `parts` of the part with this id.
    pub fn position(&self, id: &str) -> Option<usize> {
        self.index.get(id).copied()
    }

    /// Parse catalog text; `source` names it in messages.
    pub fn from_bytes(bytes: &[u8], source: &str) -> Result<Catalog> {
        let text = match std::str::from_utf8(bytes) {
            Ok(t) => t.to_string(),
            Err(e) => {
                if let Some(at) = bytes.iter().position(|&b| b == 0) {
                    let (line, column) = text_position(bytes, at);
                    bail!("{source}: line {line}, column {column}: a NUL byte: this is not a text file; a catalog is CSV text");
                }
                // Spreadsheet exports are often Windows-1252/Latin-1: decode
                // those byte for byte rather than refuse them.
                let _ = e;
                bytes.iter().map(|&b| b as char).collect()
            }
        };
        let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
        if text.trim().is_empty() {
            bail!("{source}: line 1: the catalog is empty (it needs a header row and at least one part)");
        }
        let first_line = text.lines().next().unwrap_or("");
        let semicolon = first_line.matches(';').count() > first_line.matches(',').count();
        let mut rdr = csv::ReaderBuilder::new()
            .delimiter(if semicolon { b';' } else { b',' })
            .flexible(false)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes());
        let headers: Vec<String> = rdr
            .headers()
            .map_err(|e| anyhow::anyhow!("{source}: line 1: cannot read the header row: {e}"))?
            .iter()
            .map(normalise_header)
            .collect();
        let mut col: HashMap<&str, usize> = HashMap::new();
        let mut extra = Vec::new();
        for (i, h) in headers.iter().enumerate() {
            if h.is_empty() {
                bail!("{source}: line 1, column {}: empty column name", i + 1);
            }
            if let Some(k) = KNOWN.iter().find(|k| **k == h) {
                if col.insert(k, i).is_some() {
                    bail!(
                        "{source}: line 1, column {}: column `{h}` appears twice",
                        i + 1
                    );
                }
            } else {
                extra.push((i, h.clone()));
            }
        }
        for r in REQUIRED {
            if !col.contains_key(r) {
                bail!(
                    "{source}: line 1: required column `{r}` is missing (have: {})",
                    headers.join(", ")
                );
            }
        }
        let mut cat = Catalog {
            source: source.to_string(),
            extra_columns: extra.iter().map(|(_, h)| h.clone()).collect(),
            ..Default::default()
        };
        // An extra column whose name is close to a known one is most likely a
        // typo that would silently drop data (a misspelled `status` makes an
        // obsolete part usable): say so.
        for (i, h) in &extra {
            if let Some(k) = KNOWN
                .iter()
                .find(|k| edit_distance(h, k) <= 2 && h.len() >= 3)
            {
                cat.warnings.push(format!(
                    "{source}: line 1, column {} `{h}` is not a known column; did you mean `{k}`? \
                     It is only carried to the bill of materials",
                    i + 1
                ));
            }
        }
        let mut warned_tol = 0usize;
        let mut lines = LineCounter::new(text.as_bytes());
        for rec in rdr.records() {
            let rec = rec.map_err(|e| {
                let line = lines.line(e.position());
                match e.kind() {
                    csv::ErrorKind::UnequalLengths { expected_len, len, .. } => {
                        let (len, expected_len) = (*len as usize, *expected_len as usize);
                        let what = if len > expected_len {
                            format!("{len} fields where the header has {expected_len}; a comma inside a value needs double quotes")
                        } else {
                            format!(
                                "{len} fields where the header has {expected_len}: `{}` and later columns are missing",
                                headers.get(len).map_or("", String::as_str)
                            )
                        };
                        anyhow::anyhow!("{source}: line {line}, column {}: {what}", len.min(expected_len) + 1)
                    }
                    _ => anyhow::anyhow!("{source}: line {line}: {e}"),
                }
            })?;
            let line = lines.line(rec.position());
            if rec.iter().all(|f| f.is_empty()) {
                continue;
            }
            let row = Row {
                rec: &rec,
                col: &col,
                source,
                line,
                semicolon,
            };
            let part = row.part(&extra)?;
            if part.tolerance_given {
            } else {
                warned_tol += 1;
            }
            if let Some(&prev) = cat.index.get(&part.id) {
                bail!(
                    "{source}: line {line}, column {} (part): part `{}` already defined on line {}",
                    col["part"] + 1,
                    part.id,
                    cat.parts[prev].line
                );
            }
            cat.index.insert(part.id.clone(), cat.parts.len());
            cat.parts.push(part);
        }
        if cat.parts.is_empty() {
            bail!("{source}: line 1: the catalog has a header row but no parts below it");
        }
        if warned_tol > 0 {
            cat.warnings.push(format!(
                "{source}: {warned_tol} part(s) give no tolerance; 20 % assumed"
            ));
        }
        Ok(cat)
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

struct Row<'a> {
    rec: &'a csv::StringRecord,
    col: &'a HashMap<&'static str, usize>,
    source: &'a str,
    line: u64,
    semicolon: bool,
}

impl Row<'_> {
    fn raw(&self, name: &str) -> Option<(usize, &str)> {
        let &i = self.col.get(name)?;
        let v = self.rec.get(i)?.trim();
        (!v.is_empty()).then_some((i, v))
    }

    fn err(&self, name: &str, msg: impl fmt::Display) -> anyhow::Error {
        let c = self.col.get(name).map_or(0, |i| i + 1);
        anyhow::anyhow!(
            "{}: line {}, column {c} ({name}): {msg}",
            self.source,
            self.line
        )
    }

    fn text(&self, name: &str) -> Option<String> {
        self.raw(name).map(|(_, v)| v.to_string())
    }

    fn num(&self, name: &str, unit: Unit) -> Result<Option<f64>> {
        let Some((_, v)) = self.raw(name) else {
            return Ok(None);
        };
        let owned;
        let v = if self.semicolon && v.contains(',') {
            owned = v.replace(',', ".");
            owned.as_str()
        } else {
            v
        };
        units::parse(v, unit)
            .map(Some)
            .map_err(|e| self.err(name, e))
    }

    fn req(&self, name: &str, unit: Unit) -> Result<f64> {
        self.num(name, unit)?
            .ok_or_else(|| self.err(name, "required value is empty"))
    }

    fn positive(&self, name: &str, v: f64, allow_zero: bool) -> Result<()> {
        if v < 0.0 || (!allow_zero && v == 0.0) {
            return Err(self.err(
                name,
                format!(
                    "{v} must be {}",
                    if allow_zero {
                        "zero or more"
                    } else {
                        "above zero"
                    }
                ),
            ));
        }
        Ok(())
    }

    fn part(&self, extra: &[(usize, String)]) -> Result<Part> {
        let id = self
            .text("part")
            .ok_or_else(|| self.err("part", "part id is empty"))?;
        let tech_text = self
            .text("technology")
            .ok_or_else(|| self.err("technology", "required value is empty"))?;
        let technology = Technology::parse(&tech_text).ok_or_else(|| {
            self.err(
                "technology",
                format!(
                    "unknown technology `{tech_text}` (one of: {})",
                    Technology::ALL.map(|t| t.name()).join(", ")
                ),
            )
        })?;
        let capacitance = self.req("capacitance", Unit::Farad)?;
        self.positive("capacitance", capacitance, false)?;
        if capacitance > 100.0 {
            return Err(self.err(
                "capacitance",
                format!(
                    "{capacitance} F is beyond any output capacitor (did a prefix go missing?)"
                ),
            ));
        }
        let rated_voltage = self.req("rated_voltage", Unit::Volt)?;
        self.positive("rated_voltage", rated_voltage, false)?;
        let esr = self.req("esr", Unit::Ohm)?;
        self.positive("esr", esr, true)?;
        if esr > 1000.0 {
            return Err(self.err("esr", format!("{esr} Ohm is not a plausible ESR")));
        }
        let esl = self.req("esl", Unit::Henry)?;
        self.positive("esl", esl, true)?;
        if esl > 1e-3 {
            return Err(self.err("esl", format!("{esl} H is not a plausible ESL")));
        }
        let cost = self.req("cost", Unit::Plain)?;
        self.positive("cost", cost, true)?;
        let tol = self.num("tolerance", Unit::Fraction)?;
        if let Some(t) = tol {
            if !(0.0..1.0).contains(&t) {
                return Err(self.err(
                    "tolerance",
                    format!("{t} must be at least 0 and below 1 (100 %)"),
                ));
            }
        }
        let dielectric = match self.text("dielectric") {
            None => None,
            Some(code) => match decode_dielectric(&code) {
                Some(d) => Some((code.to_ascii_uppercase(), d)),
                None => {
                    return Err(self.err(
                        "dielectric",
                        format!("`{code}` is not an EIA-198 code this tool knows (X7R, X5R, X6S, C0G, …); leave it empty and give temp_min, temp_max, temp_drop"),
                    ))
                }
            },
        };
        let dc_bias = match self.text("dc_bias") {
            None => None,
            Some(t) => {
                let t = if self.semicolon {
                    t.replace(',', ".")
                } else {
                    t
                };
                Some(BiasCurve::parse(&t).map_err(|e| self.err("dc_bias", e))?)
            }
        };
        let case = self.text("case");
        let area = match self.num("area", Unit::Plain)? {
            Some(a) => {
                self.positive("area", a, false)?;
                Some(a)
            }
            None => case.as_deref().and_then(eia_case_area),
        };
        let height = self.num("height", Unit::Plain)?;
        if let Some(h) = height {
            self.positive("height", h, false)?;
        }
        let ripple_current = self.num("ripple_current", Unit::Ampere)?;
        if let Some(r) = ripple_current {
            self.positive("ripple_current", r, false)?;
        }
        let temp_min = self.num("temp_min", Unit::Plain)?;
        let temp_max = self.num("temp_max", Unit::Plain)?;
        if let (Some(a), Some(b)) = (temp_min, temp_max) {
            if a >= b {
                return Err(self.err("temp_max", format!("{b} °C is not above temp_min {a} °C")));
            }
        }
        let temp_drop = self.num("temp_drop", Unit::Fraction)?;
        if let Some(d) = temp_drop {
            if !(0.0..1.0).contains(&d) {
                return Err(self.err("temp_drop", format!("{d} must be at least 0 and below 1")));
            }
        }
        let status = match self.text("status").map(|s| s.to_ascii_lowercase()) {
            None => Status::Active,
            Some(s) => match s.as_str() {
                "active" => Status::Active,
                "nrnd" => Status::Nrnd,
                "obsolete" => Status::Obsolete,
                _ => {
                    return Err(self.err(
                        "status",
                        format!("unknown status `{s}` (active, nrnd, obsolete)"),
                    ))
                }
            },
        };
        Ok(Part {
            id,
            technology,
            capacitance,
            rated_voltage,
            esr,
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
            status,
            manufacturer: self.text("manufacturer"),
            mpn: self.text("mpn"),
            description: self.text("description"),
            extra: extra
                .iter()
                .map(|(i, h)| (h.clone(), self.rec.get(*i).unwrap_or("").to_string()))
                .collect(),
            line: self.line,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

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
        let drops = [
            ('P', 0.10),
            ('R', 0.15),
            ('S', 0.22),
            ('T', 0.33),
            ('U', 0.56),
            ('V', 0.82),
        ];
        for (l, tl) in lows {
            for (h, th) in highs {
                for (d, dd) in drops {
                    let code = format!("{l}{h}{d}");
                    let x = decode_dielectric(&code).unwrap();
                    assert_eq!((x.temp_min, x.temp_max, x.drop), (tl, th, dd), "{code}");
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
        assert!(c0g.class1 && c0g.drop == 0.0);
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
    fn semicolon_export_with_decimal_commas() {
        let csv = "\u{feff}Part ; Technology;Capacitance;Rated Voltage;ESR;ESL;Cost\r\nA;ceramic;4,7u;6,3;3m;0,4n;0,05\r\n";
        let c = Catalog::from_bytes(csv.as_bytes(), "t.csv").unwrap();
        assert!((c.parts[0].capacitance - 4.7e-6).abs() < 1e-18);
        assert!((c.parts[0].rated_voltage - 6.3).abs() < 1e-12);
    }
}
