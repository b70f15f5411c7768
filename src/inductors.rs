//! Inductor catalog (CSV, any column order): the parts a post-filter's
//! inductor is chosen from. It is read with the same reader as the
//! capacitor catalog (units and RKM codes in cells, units in headers,
//! semicolon exports with decimal commas, Latin-1 fallback), and every error
//! names the file, the line and the column.

use crate::catalog::{read_status, Status};
use crate::sheet::{read_parts, Col, Footprint, Row, Sheet};
use crate::units::{self, Unit};
use anyhow::Result;
use std::collections::HashMap;
use std::path::Path;

/// One inductor row.
#[derive(Debug, Clone)]
pub struct Inductor {
    /// Part id (the `part` column).
    pub id: String,
    /// Nominal inductance, H.
    pub inductance: f64,
    /// Inductance tolerance, a fraction (20 % when not given).
    pub tolerance: f64,
    /// The catalog gave the tolerance.
    pub tolerance_given: bool,
    /// DC resistance (maximum), Ω.
    pub dcr: f64,
    /// Thermal (RMS) current rating, A.
    pub rated_current: f64,
    /// Saturation current, A.
    pub saturation_current: f64,
    /// Self-resonant frequency, Hz.
    pub srf: Option<f64>,
    /// Cost of one part.
    pub cost: f64,
    /// Case code, if given.
    pub case: Option<String>,
    /// Footprint in mm², from the `area` column or an EIA case code.
    pub area: Option<f64>,
    /// Height, mm, if given.
    pub height: Option<f64>,
    /// Lowest rated temperature, °C, if given.
    pub temp_min: Option<f64>,
    /// Highest rated temperature, °C, if given.
    pub temp_max: Option<f64>,
    /// Life-cycle status.
    pub status: Status,
    /// Maker, as written (not used by the model).
    pub manufacturer: Option<String>,
    /// Maker's part number, as written (not used by the model).
    pub mpn: Option<String>,
    /// Free text, as written.
    pub description: Option<String>,
    /// Columns beyond the known ones, as (header, value).
    pub extra: Vec<(String, String)>,
    /// Line of the row in its file (1-based, the header is line 1).
    pub line: u64,
}

impl Inductor {
    /// Winding capacitance that resonates with the inductance at the
    /// self-resonant frequency: `C_p = 1 / ((2π·srf)² · L)`.
    pub fn parallel_capacitance(&self) -> Option<f64> {
        self.srf
            .map(|f| 1.0 / ((2.0 * std::f64::consts::PI * f).powi(2) * self.inductance))
    }

    /// Lowest and highest inductance within the tolerance.
    pub fn inductance_range(&self) -> (f64, f64) {
        (
            self.inductance * (1.0 - self.tolerance),
            self.inductance * (1.0 + self.tolerance),
        )
    }
}

/// A loaded inductor catalog.
#[derive(Debug, Clone, Default)]
pub struct InductorCatalog {
    /// Where the catalog came from (path or bundled name), for messages.
    pub source: String,
    /// The inductors in file order.
    pub parts: Vec<Inductor>,
    /// Headers of the extra columns, in file order.
    pub extra_columns: Vec<String>,
    /// Warnings found while reading.
    pub warnings: Vec<String>,
    index: HashMap<String, usize>,
}

/// The inductor catalog's columns and what each holds.
pub(crate) const KNOWN: &[(&str, Col)] = &[
    ("part", Col::Text),
    ("inductance", Col::Value(Unit::Henry)),
    ("tolerance", Col::Value(Unit::Fraction)),
    ("dcr", Col::Value(Unit::Ohm)),
    ("rated_current", Col::Value(Unit::Ampere)),
    ("saturation_current", Col::Value(Unit::Ampere)),
    ("srf", Col::Value(Unit::Hertz)),
    ("cost", Col::Value(Unit::Cost)),
    ("case", Col::Text),
    ("area", Col::Area),
    ("height", Col::Millimetre),
    ("temp_min", Col::Celsius),
    ("temp_max", Col::Celsius),
    ("status", Col::Text),
    ("manufacturer", Col::Text),
    ("mpn", Col::Text),
    ("description", Col::Text),
];

/// The columns every inductor catalog must have.
pub(crate) const REQUIRED: &[&str] = &[
    "part",
    "inductance",
    "dcr",
    "rated_current",
    "saturation_current",
    "cost",
];

impl InductorCatalog {
    /// Read an inductor catalog file; errors name the file, line and column.
    pub fn from_path(path: &Path) -> Result<InductorCatalog> {
        let bytes = std::fs::read(path).map_err(|e| {
            anyhow::anyhow!("{}: cannot read the inductor catalog: {e}", path.display())
        })?;
        InductorCatalog::from_bytes(&bytes, &path.display().to_string())
    }

    /// The inductor with this id.
    pub fn get(&self, id: &str) -> Option<&Inductor> {
        self.index.get(id).map(|&i| &self.parts[i])
    }

    /// The index in `parts` of the inductor with this id.
    pub fn position(&self, id: &str) -> Option<usize> {
        self.index.get(id).copied()
    }

    /// Parse inductor-catalog text; `source` names it in messages.
    pub fn from_bytes(bytes: &[u8], source: &str) -> Result<InductorCatalog> {
        let sheet = Sheet::read(bytes, source, "inductor catalog", KNOWN, REQUIRED)?;
        let mut cat = InductorCatalog {
            source: source.to_string(),
            extra_columns: sheet.extra.iter().map(|(_, h)| h.clone()).collect(),
            warnings: sheet.warnings.clone(),
            ..Default::default()
        };
        let read = read_parts(&sheet, "inductor catalog", read_inductor, |p: &Inductor| {
            (p.id.as_str(), p.line, p.tolerance_given)
        })?;
        let no_tolerance = read.no_tolerance_note(source, "inductor(s)");
        cat.parts = read.parts;
        cat.index = read.index;
        cat.warnings.extend(no_tolerance);
        Ok(cat)
    }
}

fn read_inductor(row: &Row) -> Result<Inductor> {
    let id = row.part_id()?;
    let inductance = row.req("inductance", Unit::Henry)?;
    row.positive("inductance", inductance, false)?;
    if !(1e-9..=10e-3).contains(&inductance) {
        return Err(row.err(
            "inductance",
            format!(
                "{} is outside 1 nH … 10 mH, where a filter or power inductor lies; {}",
                units::format_si(inductance, "H"),
                row.hint("inductance", "henries", "u")
            ),
        ));
    }
    let tol = row.tolerance()?;
    let dcr = row.req("dcr", Unit::Ohm)?;
    row.positive("dcr", dcr, true)?;
    if dcr > 10.0 {
        return Err(row.err(
            "dcr",
            format!(
                "{} is not a plausible DC resistance for a power inductor (above 10 Ω); {}",
                units::format_si(dcr, "Ω"),
                row.hint("dcr", "ohms", "m")
            ),
        ));
    }
    let current = |name: &str| -> Result<f64> {
        let i = row.req(name, Unit::Ampere)?;
        row.positive(name, i, false)?;
        if i > 1000.0 {
            return Err(row.err(
                name,
                format!(
                    "{} is beyond any board-mounted inductor (above 1 kA); {}",
                    units::format_si(i, "A"),
                    row.hint(name, "amperes", "")
                ),
            ));
        }
        Ok(i)
    };
    let rated_current = current("rated_current")?;
    let saturation_current = current("saturation_current")?;
    let srf = row.num("srf", Unit::Hertz)?;
    if let Some(f) = srf {
        row.positive("srf", f, false)?;
        if f < 1e3 {
            return Err(row.err(
                "srf",
                format!(
                    "{} is below 1 kHz, no power inductor resonates that low; {}",
                    units::format_si(f, "Hz"),
                    row.hint("srf", "hertz", "M")
                ),
            ));
        }
    }
    let cost = row.req("cost", Unit::Cost)?;
    row.positive("cost", cost, true)?;
    let Footprint { case, area, height } = row.footprint()?;
    let (temp_min, temp_max) = row.temperature_range()?;
    Ok(Inductor {
        id,
        inductance,
        tolerance: tol.unwrap_or(0.20),
        tolerance_given: tol.is_some(),
        dcr,
        rated_current,
        saturation_current,
        srf,
        cost,
        case,
        area,
        height,
        temp_min,
        temp_max,
        status: read_status(row)?,
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

    const HEAD: &str =
        "part,inductance,tolerance,dcr,rated_current,saturation_current,srf,cost,case,area,height";

    #[test]
    fn reads_rows_with_units_and_rkm() {
        let csv = format!(
            "{HEAD}\nL1,2u2,20%,12m,6,7.5,60M,$0.20,,16,2\nL2,470n,±10%,0R004,12.5,15,,0.3,,,\n"
        );
        let c = InductorCatalog::from_bytes(csv.as_bytes(), "l.csv").unwrap();
        let a = c.get("L1").unwrap();
        assert!((a.inductance - 2.2e-6).abs() < 1e-18);
        assert!((a.dcr - 12e-3).abs() < 1e-15);
        assert_eq!((a.rated_current, a.saturation_current), (6.0, 7.5));
        assert_eq!((a.cost, a.area, a.height), (0.2, Some(16.0), Some(2.0)));
        // C_p = 1/((2π·srf)²·L), the LC resonance formula.
        let cp = 1.0 / ((2.0 * std::f64::consts::PI * 60e6).powi(2) * 2.2e-6);
        assert!((a.parallel_capacitance().unwrap() - cp).abs() < 1e-9 * cp);
        let (lo, hi) = a.inductance_range();
        assert!((lo - 1.76e-6).abs() < 1e-18 && (hi - 2.64e-6).abs() < 1e-18);
        let b = c.get("L2").unwrap();
        assert!((b.dcr - 4e-3).abs() < 1e-15);
        assert!((b.tolerance - 0.10).abs() < 1e-15);
        assert_eq!(b.parallel_capacitance(), None);
    }

    #[test]
    fn demo_inductor_catalog_reads() {
        let text = include_str!("../catalogs/demo-inductors.csv");
        let c = InductorCatalog::from_bytes(text.as_bytes(), "demo-inductors.csv").unwrap();
        assert!((25..=35).contains(&c.parts.len()), "{}", c.parts.len());
        assert!(c.warnings.is_empty(), "{:?}", c.warnings);
        for p in &c.parts {
            assert!((0.1e-6..=10e-6).contains(&p.inductance), "{}", p.id);
            assert!(
                p.area.is_some() && p.height.is_some() && p.srf.is_some(),
                "{}",
                p.id
            );
            assert!(
                p.description.as_deref().unwrap_or("").contains("INVENTED"),
                "{}",
                p.id
            );
        }
    }

    #[test]
    fn header_units_apply_to_bare_numbers() {
        let csv = "Part,Inductance (uH),DCR [mOhm],Rated Current (A),Saturation Current (A),SRF (MHz),Cost ($)\n\
                   L1,2.2,12,6,7.5,60,0.2\n";
        let c = InductorCatalog::from_bytes(csv.as_bytes(), "l.csv").unwrap();
        let a = &c.parts[0];
        assert!((a.inductance - 2.2e-6).abs() < 1e-18);
        assert!((a.dcr - 12e-3).abs() < 1e-15);
        assert!((a.srf.unwrap() - 60e6).abs() < 1e-3);
        // No tolerance given: 20 % with one warning naming the part.
        assert_eq!(a.tolerance, 0.2);
        assert!(
            c.warnings.iter().any(|w| w.contains("L1")),
            "{:?}",
            c.warnings
        );
    }

    #[test]
    fn implausible_values_name_line_column_and_suggest() {
        for (cells, want) in [
            ("L1,2.2,20%,12m,6,7.5,,0.2,,,", "column 2 (inductance)"),
            ("L1,2.2u,20%,12,6,7.5,,0.2,,,", "did you mean 12m?"),
            ("L1,2.2u,20%,12m,6,7.5,60,0.2,,,", "did you mean 60M?"),
            ("L1,2.2u,20%,12m,,7.5,,0.2,,,", "column 5 (rated_current)"),
            ("L1,2.2u,20%,12m,6,7.5,,cheap,,,", "column 8 (cost)"),
        ] {
            let csv = format!("{HEAD}\n{cells}\n");
            let e = InductorCatalog::from_bytes(csv.as_bytes(), "l.csv")
                .unwrap_err()
                .to_string();
            assert!(e.contains("l.csv: line 2, ") && e.contains(want), "{e}");
        }
        let e = InductorCatalog::from_bytes(b"part,inductance,cost\nL1,1u,0.1\n", "l.csv")
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 1") && e.contains("`dcr`"), "{e}");
    }
}
