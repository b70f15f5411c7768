//! Inductor catalog (CSV, any column order): the parts a post-filter's
//! inductor is chosen from. It is read with the same reader as the
//! capacitor catalog (units and RKM codes in cells, units in headers,
//! semicolon exports with decimal commas, Latin-1 fallback), and every error
//! names the file, the line and the column.

use crate::catalog::{read_status, Status, Table};
use crate::sheet::{Col, Footprint, Row};
use crate::units::{self, Unit};
use anyhow::Result;

/// One inductor row.
#[derive(Debug, Clone)]
pub struct Inductor {
    /// Unique part id (`part`).
    pub id: String,
    /// Nominal inductance, H.
    pub inductance: f64,
    /// Inductance tolerance as a fraction (default 0.20).
    pub tolerance: f64,
    /// Whether the row gave a tolerance (else 20 % with a warning).
    pub tolerance_given: bool,
    /// DC resistance (maximum), Ω.
    pub dcr: f64,
    /// Thermal (RMS) current rating, A.
    pub rated_current: f64,
    /// Saturation current, A.
    pub saturation_current: f64,
    /// Self-resonant frequency, Hz.
    pub srf: Option<f64>,
    /// Unit cost, in the catalog's currency.
    pub cost: f64,
    /// Case code or size as written (`4040`, `F8x8x5`).
    pub case: Option<String>,
    /// Footprint in mm², from the `area` column or an EIA case code.
    pub area: Option<f64>,
    /// Height above the board, mm.
    pub height: Option<f64>,
    /// Lowest rated temperature, °C.
    pub temp_min: Option<f64>,
    /// Highest rated temperature, °C.
    pub temp_max: Option<f64>,
    /// `active`, `nrnd` or `obsolete`.
    pub status: Status,
    /// Carried to the bill of materials.
    pub manufacturer: Option<String>,
    /// Carried to the bill of materials.
    pub mpn: Option<String>,
    /// Carried to the bill of materials.
    pub description: Option<String>,
    /// Columns beyond the known ones, as (header, value).
    pub extra: Vec<(String, String)>,
    /// Line of the row in its file (1-based, the header is line 1).
    pub line: u64,
}

impl Inductor {
    /// Winding capacitance that resonates with the inductance at the
    /// self-resonant frequency: `C_p = 1 / ((2π·srf)² · L)`.
    pub(crate) fn parallel_capacitance(&self) -> Option<f64> {
        self.srf
            .map(|f| 1.0 / ((2.0 * std::f64::consts::PI * f).powi(2) * self.inductance))
    }

    /// Lowest and highest inductance within the tolerance.
    pub(crate) fn inductance_range(&self) -> (f64, f64) {
        (
            self.inductance * (1.0 - self.tolerance),
            self.inductance * (1.0 + self.tolerance),
        )
    }

    /// DC voltage drop of `count` equal inductors in parallel carrying
    /// `iout` between them, at the catalog's (highest) DCR: `iout · DCR / count`.
    pub fn dc_drop(&self, iout: f64, count: u32) -> f64 {
        iout * self.dcr / count.max(1) as f64
    }

    /// Peak current in one of `count` equal inductors in parallel: its
    /// share of the load plus half its own peak-to-peak ripple current,
    /// `iout / count + ΔI_L / 2` (`ripple_pp` is one inductor's ripple).
    pub(crate) fn peak_current(&self, iout: f64, ripple_pp: f64, count: u32) -> f64 {
        iout / count.max(1) as f64 + ripple_pp / 2.0
    }

    /// Saturation margin, A: `saturation_current − (iout / count + ΔI_L / 2)`;
    /// below zero the inductor saturates at the peak of its ripple.
    pub fn saturation_margin(&self, iout: f64, ripple_pp: f64, count: u32) -> f64 {
        self.saturation_current - self.peak_current(iout, ripple_pp, count)
    }

    /// RMS current in one of `count` inductors with a triangular ripple of
    /// `ripple_pp` on its DC share: `sqrt(I_dc² + ΔI²/12)`.
    pub fn rms_current(&self, iout: f64, ripple_pp: f64, count: u32) -> f64 {
        let i = iout / count.max(1) as f64;
        (i * i + ripple_pp * ripple_pp / 12.0).sqrt()
    }

    #[cfg(test)]
    /// Thermal margin, A: `rated_current − I_rms` (see [`Inductor::rms_current`]).
    pub(crate) fn rated_margin(&self, iout: f64, ripple_pp: f64, count: u32) -> f64 {
        self.rated_current - self.rms_current(iout, ripple_pp, count)
    }

    /// The rated temperature range; a bound not given is `None`.
    pub(crate) fn temperature_range(&self) -> (Option<f64>, Option<f64>) {
        (self.temp_min, self.temp_max)
    }
}

/// A loaded inductor catalog.
pub type InductorCatalog = Table<Inductor>;

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

crate::sheet::sheet_part!(
    Inductor,
    "inductor catalog",
    "inductor(s)",
    KNOWN,
    REQUIRED,
    read_inductor,
);

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
    let tol = row.tolerance(true)?;
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
    use std::path::Path;

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

    fn one(csv: &str) -> Result<InductorCatalog> {
        InductorCatalog::from_bytes(csv.as_bytes(), "l.csv")
    }

    #[test]
    fn spreadsheet_quirks_are_read() {
        // A semicolon export with decimal commas, a byte-order mark, CRLF
        // line ends, headers in another case with spaces and units.
        let csv = "\u{feff}Part ; Inductance (µH);Tolerance (%);DCR (mOhm);Rated Current;Saturation Current;Cost\r\n\
                   L1;2,2;20;12,5;6;7,5;0,20\r\n\r\nL2;0,47;10;4;12;15;0,30\r\n";
        let c = one(csv).unwrap_or_else(|e| panic!("{e:#}"));
        let a = c.get("L1").unwrap();
        assert!((a.inductance - 2.2e-6).abs() < 1e-18);
        assert!((a.tolerance - 0.2).abs() < 1e-15);
        assert!((a.dcr - 12.5e-3).abs() < 1e-15);
        assert_eq!(
            (a.rated_current, a.saturation_current, a.cost),
            (6.0, 7.5, 0.2)
        );
        // The blank line is skipped, and L2 keeps its true line number.
        assert_eq!(c.get("L2").unwrap().line, 4);
        assert!(c.warnings.is_empty(), "{:?}", c.warnings);
        // A Windows-1252 export (° as the single byte 0xB0) is read as Latin-1.
        let mut latin =
            b"part,inductance,dcr,rated_current,saturation_current,cost,temp_max (".to_vec();
        latin.push(0xB0);
        latin.extend_from_slice(b"C)\nL1,1u,5m,3,4,0.1,125\n");
        let c = InductorCatalog::from_bytes(&latin, "l.csv").unwrap_or_else(|e| panic!("{e:#}"));
        assert_eq!(c.parts[0].temp_max, Some(125.0));
        // Extra columns are carried; a near-miss of a known column is warned about.
        let c = one(
            "part,inductance,dcr,rated_current,saturation_current,cost,satus,shield\n\
                     L1,1u,5m,3,4,0.1,obsolete,yes\n",
        )
        .unwrap();
        assert_eq!(
            c.parts[0].extra[1],
            ("shield".to_string(), "yes".to_string())
        );
        assert!(
            c.warnings
                .iter()
                .any(|w| w.contains("did you mean `status`")),
            "{:?}",
            c.warnings
        );
    }

    #[test]
    fn malformed_rows_name_file_line_and_column() {
        const H: &str = "part,inductance,dcr,rated_current,saturation_current,cost";
        for (body, want) in [
            ("L1,2.2uF,5m,3,4,0.1", "line 2, column 2 (inductance)"),
            ("L1,1u,-5m,3,4,0.1", "line 2, column 3 (dcr)"),
            ("L1,1u,5m,3,0,0.1", "line 2, column 5 (saturation_current)"),
            (
                "L1,1u,5m,3,4",
                "line 2, column 6: 5 fields where the header has 6",
            ),
            (
                "L1,1u,5m,3,4,0.1,9",
                "line 2, column 7: 7 fields where the header has 6",
            ),
            (",1u,5m,3,4,0.1", "line 2, column 1 (part)"),
            (
                "L1,1u,5m,3,4,0.1\nL1,2u,5m,3,4,0.1",
                "line 3, column 1 (part): part `L1` already defined on line 2",
            ),
            ("L1,1u,5m,2kA,4,0.1", "line 2, column 4 (rated_current)"),
        ] {
            let e = one(&format!("{H}\n{body}\n")).unwrap_err().to_string();
            assert!(e.starts_with("l.csv: ") && e.contains(want), "{body}: {e}");
        }
        for (head, body, want) in [
            (
                "part,inductance (uF),dcr,rated_current,saturation_current,cost",
                "L1,1,5m,3,4,0.1",
                "line 1, column 2 (inductance): header unit",
            ),
            (
                "part,inductance,dcr,rated_current,saturation_current,cost,status",
                "L1,1u,5m,3,4,0.1,gone",
                "line 2, column 7 (status): unknown status `gone`",
            ),
            (
                "part,inductance,dcr,rated_current,saturation_current,cost,temp_min,temp_max",
                "L1,1u,5m,3,4,0.1,125,-40",
                "line 2, column 8 (temp_max)",
            ),
            (
                "part,inductance,dcr,rated_current,saturation_current,cost,tolerance",
                "L1,1u,5m,3,4,0.1,20",
                "did you mean \"20%\"?",
            ),
            (
                "part,inductance,dcr,rated_current,saturation_current,cost,height",
                "L1,1u,5m,3,4,0.1,0",
                "line 2, column 7 (height)",
            ),
            (
                "part,inductance,inductance,dcr,rated_current,saturation_current,cost",
                "L1,1u,1u,5m,3,4,0.1",
                "line 1, column 3: column `inductance` appears twice",
            ),
            (
                "part,inductance,dcr,rated_current,saturation_current,cost",
                "",
                "line 1: the inductor catalog has a header row but no parts",
            ),
        ] {
            let e = one(&format!("{head}\n{body}\n")).unwrap_err().to_string();
            assert!(
                e.starts_with("l.csv: ") && e.contains(want),
                "{head} / {body}: {e}"
            );
        }
        let e = one("").unwrap_err().to_string();
        assert!(
            e.contains("l.csv: line 1: the inductor catalog is empty"),
            "{e}"
        );
        // A UTF-16 export (byte-order mark FF FE, every ASCII letter followed by NUL).
        let utf16: Vec<u8> = [0xFF, 0xFE]
            .into_iter()
            .chain("part,inductance\n".bytes().flat_map(|b| [b, 0]))
            .collect();
        let e = InductorCatalog::from_bytes(&utf16, "l.csv")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("l.csv: line 1, column ") && e.contains("a NUL byte"),
            "{e}"
        );
        let e = InductorCatalog::from_path(Path::new("/nonexistent/l.csv"))
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("/nonexistent/l.csv: cannot read the inductor catalog"),
            "{e}"
        );
    }

    #[test]
    fn current_and_drop_figures_follow_their_closed_forms() {
        let c =
            one("part,inductance,dcr,rated_current,saturation_current,cost\nL1,1u,8m,5,6,0.1\n")
                .unwrap();
        let l = &c.parts[0];
        // Ohm's law: 4 A through 8 mΩ drops 32 mV; two in parallel share it.
        assert!((l.dc_drop(4.0, 1) - 0.032).abs() < 1e-15);
        assert!((l.dc_drop(4.0, 2) - 0.016).abs() < 1e-15);
        // Peak of a triangle riding on DC: I_dc + ΔI/2.
        assert!((l.peak_current(4.0, 1.0, 1) - 4.5).abs() < 1e-15);
        assert!((l.saturation_margin(4.0, 1.0, 1) - 1.5).abs() < 1e-15);
        assert!((l.saturation_margin(10.0, 1.0, 2) - 0.5).abs() < 1e-15);
        assert!(l.saturation_margin(6.0, 0.2, 1) < 0.0);
        // Erickson & Maksimović, Fundamentals of Power Electronics, appendix A
        // (RMS values of converter waveforms): DC plus a triangle of
        // peak-to-peak ΔI has I_rms = sqrt(I² + ΔI²/12).
        let rms = (16.0f64 + 3.0 * 3.0 / 12.0).sqrt();
        assert!((l.rms_current(4.0, 3.0, 1) - rms).abs() < 1e-12);
        assert!((l.rated_margin(4.0, 3.0, 1) - (5.0 - rms)).abs() < 1e-12);
    }
}
