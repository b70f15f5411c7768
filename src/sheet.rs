//! The CSV reader shared by the capacitor and inductor catalogs: text
//! decoding (UTF-8 with or without a byte-order mark, Latin-1 fallback),
//! comma or semicolon delimiters with decimal commas, header names in any
//! case with spaces or hyphens, units in the header (`Capacitance (uF)`,
//! `ESR [mOhm]`), true line numbers, and cell readers whose errors name the
//! file, the line and the column.

use crate::catalog::{text_position, LineCounter};
use crate::units::{self, Unit};
use anyhow::{bail, Result};
use std::collections::HashMap;
use std::fmt;

/// What a known column holds, which decides the units its header may carry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Col {
    /// Text, codes and curves: a unit in the header is ignored.
    Text,
    /// A physical value: the header unit (`uF`, `mOhm`, `%`, a currency for
    /// a cost) scales bare numbers.
    Value(Unit),
    /// Footprint in mm² (`mm²`, `mm2`, `mm^2`, `sq mm` accepted).
    Area,
    /// A length in mm (`mm` accepted).
    Millimetre,
    /// A temperature in °C (`°C`, `C`, `degC` accepted).
    Celsius,
}

/// A catalog-like CSV table, read and checked at the header.
pub struct Sheet {
    /// Where the table came from (path or bundled name), for messages.
    pub source: String,
    /// Column index of each known column present.
    pub col: HashMap<&'static str, usize>,
    /// Multiplier for bare numbers of a column whose header gave a unit.
    pub scale: HashMap<&'static str, f64>,
    /// Columns that are not known: (index, normalised header).
    pub extra: Vec<(usize, String)>,
    /// Semicolon-separated (decimal commas are then read as points).
    pub semicolon: bool,
    /// Warnings about the header (unknown columns close to a known one).
    pub warnings: Vec<String>,
    /// (line, record) for every row that is not blank.
    pub records: Vec<(u64, csv::StringRecord)>,
}

/// Levenshtein distance between two short names.
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
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

/// Header name in the form the known columns are spelled.
pub(crate) fn normalise_header(h: &str) -> String {
    h.trim()
        .trim_start_matches('\u{feff}')
        .to_ascii_lowercase()
        .replace([' ', '-'], "_")
}

/// Split `Capacitance (uF)` / `ESR [mOhm]` into the normalised name and
/// the unit as written (case kept: `m` and `M` differ).
pub(crate) fn split_header(h: &str) -> (String, Option<String>) {
    let t = h.trim().trim_start_matches('\u{feff}').trim();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if let Some(body) = t.strip_suffix(close) {
            if let Some(at) = body.rfind(open) {
                let name = &body[..at];
                let unit = body[at + open.len_utf8()..].trim();
                if !name.trim().is_empty() {
                    return (normalise_header(name), Some(unit.to_string()));
                }
            }
        }
    }
    (normalise_header(t), None)
}

/// Multiplier for bare numbers of a column of kind `kind` whose header
/// gives `unit`; an error message when the unit does not fit.
fn header_scale(kind: Col, unit: &str) -> std::result::Result<f64, String> {
    let u = unit.trim();
    match kind {
        Col::Text => Ok(1.0),
        Col::Value(Unit::Cost) => Ok(1.0),
        Col::Value(Unit::Fraction) => match u {
            "%" => Ok(0.01),
            "" | "fraction" | "1" => Ok(1.0),
            _ => Err(format!(
                "`{u}` is not a unit for a fraction (use % or none)"
            )),
        },
        Col::Value(Unit::Plain) => Ok(1.0),
        Col::Value(unit) => {
            if u.is_empty() {
                return Ok(1.0);
            }
            units::parse(&format!("1{u}"), unit).map_err(|e| {
                format!(
                    "`{u}` is not a unit for {} ({})",
                    unit.name(),
                    e.0.replace("`1", "`")
                )
            })
        }
        Col::Area => match u {
            "mm²" | "mm2" | "mm^2" | "sq mm" | "sq. mm" | "" => Ok(1.0),
            _ => Err(format!(
                "`{u}`: an area is read in mm² (write `(mm²)` or none)"
            )),
        },
        Col::Millimetre => match u {
            "mm" | "" => Ok(1.0),
            _ => Err(format!(
                "`{u}`: a height is read in mm (write `(mm)` or none)"
            )),
        },
        Col::Celsius => match u {
            "°C" | "ºC" | "C" | "degC" | "deg C" | "" => Ok(1.0),
            // Latin-1 fallback of a Windows-1252 "°C": ° is 0xB0 either way.
            _ => Err(format!("`{u}`: temperatures are read in °C")),
        },
    }
}

impl Sheet {
    /// Read the text and the header. `what` names the file's kind in
    /// messages ("catalog"); `known` lists every known column and its kind.
    pub fn read(
        bytes: &[u8],
        source: &str,
        what: &str,
        known: &[(&'static str, Col)],
        required: &[&str],
    ) -> Result<Sheet> {
        let text = match std::str::from_utf8(bytes) {
            Ok(t) => t.to_string(),
            Err(_) => {
                if let Some(at) = bytes.iter().position(|&b| b == 0) {
                    let (line, column) = text_position(bytes, at);
                    bail!("{source}: line {line}, column {column}: a NUL byte: this is not a text file; a {what} is CSV text");
                }
                // Spreadsheet exports are often Windows-1252/Latin-1: decode
                // those byte for byte rather than refuse them.
                bytes.iter().map(|&b| b as char).collect()
            }
        };
        let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
        if text.trim().is_empty() {
            bail!("{source}: line 1: the {what} is empty (it needs a header row and at least one row below it)");
        }
        let first_line = text.lines().next().unwrap_or("");
        let semicolon = first_line.matches(';').count() > first_line.matches(',').count();
        let mut rdr = csv::ReaderBuilder::new()
            .delimiter(if semicolon { b';' } else { b',' })
            .flexible(false)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes());
        let raw_headers: Vec<(String, Option<String>)> = rdr
            .headers()
            .map_err(|e| anyhow::anyhow!("{source}: line 1: cannot read the header row: {e}"))?
            .iter()
            .map(split_header)
            .collect();
        let headers: Vec<String> = raw_headers.iter().map(|(h, _)| h.clone()).collect();
        let mut col: HashMap<&'static str, usize> = HashMap::new();
        let mut scale: HashMap<&'static str, f64> = HashMap::new();
        let mut extra = Vec::new();
        for (i, (h, unit)) in raw_headers.iter().enumerate() {
            if h.is_empty() {
                bail!("{source}: line 1, column {}: empty column name", i + 1);
            }
            if let Some(&(k, kind)) = known.iter().find(|(k, _)| k == h) {
                if col.insert(k, i).is_some() {
                    bail!(
                        "{source}: line 1, column {}: column `{h}` appears twice",
                        i + 1
                    );
                }
                if let Some(u) = unit {
                    let s = header_scale(kind, u).map_err(|e| {
                        anyhow::anyhow!("{source}: line 1, column {} ({k}): header unit {e}", i + 1)
                    })?;
                    if s != 1.0 {
                        scale.insert(k, s);
                    }
                }
            } else {
                extra.push((i, h.clone()));
            }
        }
        for r in required {
            if !col.contains_key(r) {
                bail!(
                    "{source}: line 1: required column `{r}` is missing (have: {})",
                    headers.join(", ")
                );
            }
        }
        let mut warnings = Vec::new();
        // An extra column whose name is close to a known one is most likely a
        // typo that would silently drop data (a misspelled `status` makes an
        // obsolete part usable): say so.
        for (i, h) in &extra {
            if let Some((k, _)) = known
                .iter()
                .find(|(k, _)| edit_distance(h, k) <= 2 && h.len() >= 3)
            {
                warnings.push(format!(
                    "{source}: line 1, column {} `{h}` is not a known column; did you mean `{k}`? \
                     It is only carried to the bill of materials",
                    i + 1
                ));
            }
        }
        let mut records = Vec::new();
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
            records.push((line, rec));
        }
        Ok(Sheet {
            source: source.to_string(),
            col,
            scale,
            extra,
            semicolon,
            warnings,
            records,
        })
    }

    /// The rows, in file order.
    pub fn rows(&self) -> impl Iterator<Item = Row<'_>> {
        self.records.iter().map(move |(line, rec)| Row {
            rec,
            sheet: self,
            line: *line,
        })
    }
}

/// One row of a [`Sheet`], with readers whose errors name line and column.
pub struct Row<'a> {
    /// The row's cells as read.
    pub rec: &'a csv::StringRecord,
    sheet: &'a Sheet,
    /// Line of the row in its file (1-based, the header is line 1).
    pub line: u64,
}

impl Row<'_> {
    /// The trimmed cell of a known column, `None` when absent or empty.
    pub fn raw(&self, name: &str) -> Option<(usize, &str)> {
        let &i = self.sheet.col.get(name)?;
        let v = self.rec.get(i)?.trim();
        (!v.is_empty()).then_some((i, v))
    }

    /// The cell's text as written, "" when absent.
    pub fn cell(&self, name: &str) -> &str {
        self.raw(name).map_or("", |(_, v)| v)
    }

    /// 1-based column of a known column (0 when absent).
    pub fn column(&self, name: &str) -> usize {
        self.sheet.col.get(name).map_or(0, |i| i + 1)
    }

    /// An error naming the file, the row's line and the column.
    pub fn err(&self, name: &str, msg: impl fmt::Display) -> anyhow::Error {
        anyhow::anyhow!(
            "{}: line {}, column {} ({name}): {msg}",
            self.sheet.source,
            self.line,
            self.column(name)
        )
    }

    /// The trimmed text of a cell, `None` when absent or empty.
    pub fn text(&self, name: &str) -> Option<String> {
        self.raw(name).map(|(_, v)| v.to_string())
    }

    /// Text with decimal commas turned into points in a semicolon file
    /// (for curves and other compound cells).
    pub(crate) fn decimal_text(&self, name: &str) -> Option<String> {
        let t = self.text(name)?;
        Some(if self.sheet.semicolon {
            t.replace(',', ".")
        } else {
            t
        })
    }

    /// A value; a bare number is scaled by the header's unit, a value with
    /// its own prefix or unit is read as written.
    pub fn num(&self, name: &str, unit: Unit) -> Result<Option<f64>> {
        let Some((_, v)) = self.raw(name) else {
            return Ok(None);
        };
        let owned;
        let v = if self.sheet.semicolon && v.contains(',') {
            owned = v.replace(',', ".");
            owned.as_str()
        } else {
            v
        };
        let x = units::parse(v, unit).map_err(|e| self.err(name, e))?;
        match self.sheet.scale.get(name) {
            Some(&k) if units::is_bare(v) => {
                let y = x * k;
                if !y.is_finite() {
                    return Err(self.err(name, format!("`{v}` is out of range")));
                }
                Ok(Some(y))
            }
            _ => Ok(Some(x)),
        }
    }

    /// A value that must be given: [`Row::num`], empty is an error.
    pub(crate) fn req(&self, name: &str, unit: Unit) -> Result<f64> {
        self.num(name, unit)?
            .ok_or_else(|| self.err(name, "required value is empty"))
    }

    /// `v` (read from column `name`) must be above zero, or zero or more
    /// with `allow_zero`.
    pub fn positive(&self, name: &str, v: f64, allow_zero: bool) -> Result<()> {
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

    /// The extra columns of this row, as (header, value).
    pub fn extra(&self) -> Vec<(String, String)> {
        self.sheet
            .extra
            .iter()
            .map(|(i, h)| (h.clone(), self.rec.get(*i).unwrap_or("").to_string()))
            .collect()
    }

    // The columns both catalogs share, read the same way.

    /// The likely intended value of an implausible cell: "bare numbers are
    /// `what` — did you mean X?" for a bare number, else "did you mean X?".
    pub fn hint(&self, name: &str, what: &str, prefix: &str) -> String {
        let t = self.cell(name);
        format!(
            "{} {}?",
            if units::is_bare(t) {
                format!("bare numbers are {what} — did you mean")
            } else {
                "did you mean".to_string()
            },
            units::suggest_text(t, prefix)
        )
    }

    /// The `part` column: the part's id, never empty.
    pub(crate) fn part_id(&self) -> Result<String> {
        self.text("part")
            .ok_or_else(|| self.err("part", "part id is empty"))
    }

    /// The `tolerance` column, from 0 to below 1 (`None` when empty).
    /// With `percent_hint`, a bare number from 1 to 100 is met with "did
    /// you mean N%?".
    pub fn tolerance(&self, percent_hint: bool) -> Result<Option<f64>> {
        let tol = self.num("tolerance", Unit::Fraction)?;
        if let Some(t) = tol {
            if !(0.0..1.0).contains(&t) {
                return Err(self.err(
                    "tolerance",
                    format!(
                        "{t} must be at least 0 and below 1 (100 %){}",
                        if percent_hint
                            && (1.0..=100.0).contains(&t)
                            && units::is_bare(self.cell("tolerance"))
                        {
                            format!(
                                "; bare numbers are fractions — did you mean \"{}%\"?",
                                self.cell("tolerance")
                            )
                        } else {
                            String::new()
                        }
                    ),
                ));
            }
        }
        Ok(tol)
    }

    /// The `case`, `area` (mm², from the EIA case code when empty) and
    /// `height` (mm) columns.
    pub fn footprint(&self) -> Result<Footprint> {
        let case = self.text("case");
        let area = match self.num("area", Unit::Plain)? {
            Some(a) => {
                self.positive("area", a, false)?;
                Some(a)
            }
            None => case.as_deref().and_then(crate::catalog::eia_case_area),
        };
        let height = self.num("height", Unit::Plain)?;
        if let Some(h) = height {
            self.positive("height", h, false)?;
        }
        Ok(Footprint { case, area, height })
    }

    /// The `temp_min` and `temp_max` columns, °C; `temp_max` above `temp_min`.
    pub(crate) fn temperature_range(&self) -> Result<(Option<f64>, Option<f64>)> {
        let temp_min = self.num("temp_min", Unit::Plain)?;
        let temp_max = self.num("temp_max", Unit::Plain)?;
        if let (Some(a), Some(b)) = (temp_min, temp_max) {
            if a >= b {
                return Err(self.err("temp_max", format!("{b} °C is not above temp_min {a} °C")));
            }
        }
        Ok((temp_min, temp_max))
    }
}

/// A part's footprint as a catalog gives it.
pub struct Footprint {
    /// Case code, if given.
    pub case: Option<String>,
    /// mm², given or from the EIA case code.
    pub area: Option<f64>,
    /// mm, if given.
    pub height: Option<f64>,
}

/// A kind of catalog row (a capacitor, an inductor) and how its catalog
/// sheet is read; [`crate::catalog::Table`] reads any of them the same way.
pub trait SheetPart: Sized {
    /// What the sheet is called in messages ("catalog", "inductor catalog").
    const WHAT: &'static str;
    /// The parts counted in the missing-tolerance warning ("part(s)").
    const NOUN: &'static str;
    /// The sheet's columns and what each holds.
    const KNOWN: &'static [(&'static str, Col)];
    /// The columns every sheet of this kind must have.
    const REQUIRED: &'static [&'static str];
    /// Read one row; errors name the line and column.
    fn read(row: &Row) -> Result<Self>;
    /// The part's id.
    fn id(&self) -> &str;
    /// Line of the part's row in its file.
    fn line(&self) -> u64;
    /// Whether the row gave a tolerance.
    fn tolerance_given(&self) -> bool;
    /// Warnings about the parts as a whole (pushed after the sheet's own),
    /// given the sheet's column positions; none by default.
    fn notes(
        _parts: &[Self],
        _col: &HashMap<&'static str, usize>,
        _source: &str,
        _out: &mut Vec<String>,
    ) {
    }
}

/// `impl SheetPart` for a row type with `id`, `line` and `tolerance_given`
/// fields: (type, what, noun, known, required, row reader, then any other
/// items of the impl, such as `notes`).
macro_rules! sheet_part {
    ($t:ty, $what:expr, $noun:expr, $known:expr, $required:expr, $read:path, $($more:item)*) => {
        impl $crate::sheet::SheetPart for $t {
            const WHAT: &'static str = $what;
            const NOUN: &'static str = $noun;
            const KNOWN: &'static [(&'static str, $crate::sheet::Col)] = $known;
            const REQUIRED: &'static [&'static str] = $required;
            fn read(row: &$crate::sheet::Row) -> anyhow::Result<$t> {
                $read(row)
            }
            fn id(&self) -> &str {
                &self.id
            }
            fn line(&self) -> u64 {
                self.line
            }
            fn tolerance_given(&self) -> bool {
                self.tolerance_given
            }
            $($more)*
        }
    };
}
pub(crate) use sheet_part;

/// The parts of a sheet read by [`read_parts`], with their warnings.
pub struct Parts<T> {
    /// In file order.
    pub parts: Vec<T>,
    /// Part id to its index in `parts`.
    pub index: HashMap<String, usize>,
    /// Headers of the extra columns, in file order.
    pub extra_columns: Vec<String>,
    /// The sheet's warnings, then the kind's notes, then the one about
    /// parts without a tolerance.
    pub warnings: Vec<String>,
}

/// Read every row of a `T` sheet. A repeated id is an error naming both
/// lines; a sheet without rows is an error; parts without a tolerance get
/// one warning naming the first few.
pub fn read_parts<T: SheetPart>(bytes: &[u8], source: &str) -> Result<Parts<T>> {
    let sheet = Sheet::read(bytes, source, T::WHAT, T::KNOWN, T::REQUIRED)?;
    let mut parts: Vec<T> = Vec::new();
    let mut index: HashMap<String, usize> = HashMap::new();
    let mut no_tolerance = Vec::new();
    for row in sheet.rows() {
        let part = T::read(&row)?;
        let id = part.id();
        if !part.tolerance_given() {
            no_tolerance.push(id.to_string());
        }
        if let Some(&prev) = index.get(id) {
            bail!(
                "{}: line {}, column {} (part): part `{id}` already defined on line {}",
                sheet.source,
                row.line,
                row.column("part"),
                parts[prev].line()
            );
        }
        index.insert(id.to_string(), parts.len());
        parts.push(part);
    }
    if parts.is_empty() {
        bail!(
            "{}: line 1: the {} has a header row but no parts below it",
            sheet.source,
            T::WHAT
        );
    }
    let mut warnings = sheet.warnings.clone();
    T::notes(&parts, &sheet.col, source, &mut warnings);
    if !no_tolerance.is_empty() {
        warnings.push(format!(
            "{source}: {} {} {}: {}",
            no_tolerance.len(),
            T::NOUN,
            crate::catalog::NO_TOLERANCE,
            name_list(&no_tolerance)
        ));
    }
    Ok(Parts {
        parts,
        index,
        extra_columns: sheet.extra.iter().map(|(_, h)| h.clone()).collect(),
        warnings,
    })
}

/// The first eight names, then ", …" when there are more.
pub(crate) fn name_list(names: &[String]) -> String {
    let mut list = names.iter().take(8).cloned().collect::<Vec<_>>().join(", ");
    if names.len() > 8 {
        list.push_str(", …");
    }
    list
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn header_units_split_and_scale() {
        assert_eq!(
            split_header("Capacitance (uF)"),
            ("capacitance".into(), Some("uF".into()))
        );
        assert_eq!(
            split_header(" ESR [mOhm] "),
            ("esr".into(), Some("mOhm".into()))
        );
        assert_eq!(
            split_header("Rated Voltage"),
            ("rated_voltage".into(), None)
        );
        assert_eq!(header_scale(Col::Value(Unit::Farad), "uF"), Ok(1e-6));
        assert_eq!(header_scale(Col::Value(Unit::Ohm), "mOhm"), Ok(1e-3));
        assert_eq!(header_scale(Col::Value(Unit::Henry), "nH"), Ok(1e-9));
        assert_eq!(header_scale(Col::Value(Unit::Fraction), "%"), Ok(0.01));
        assert_eq!(header_scale(Col::Value(Unit::Cost), "$"), Ok(1.0));
        assert!(header_scale(Col::Value(Unit::Ohm), "uF").is_err());
        assert!(header_scale(Col::Millimetre, "in").is_err());
    }
}
