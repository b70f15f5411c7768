//! Physical values with SI prefixes and unit symbols.
//!
//! A value is either a plain number in SI base units or a string such as
//! `"4.7uF"`, `"600kHz"`, `"2.5mOhm"` or `"1meg"`. Prefixes are
//! case-sensitive (`m` milli, `M` mega, `meg` mega, `u`/`µ` micro). A unit
//! symbol that does not belong to the field is an error.

use std::fmt;

/// The physical kind of a field; decides which unit symbol is accepted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unit {
    /// Capacitance, F.
    Farad,
    /// Resistance, Ω.
    Ohm,
    /// Inductance, H.
    Henry,
    /// Voltage, V.
    Volt,
    /// Current, A.
    Ampere,
    /// Frequency, Hz.
    Hertz,
    /// Time, s.
    Second,
    /// Plain number or percentage (`"10%"` = 0.10).
    Fraction,
    /// A plain number with no unit symbol (counts, mm², mm, °C).
    Plain,
    /// A cost: a plain number, with a currency symbol (`$0.12`, `0,05 €`)
    /// allowed and ignored.
    Cost,
}

impl Unit {
    /// Accepted unit symbols, longest first so that `Hz` wins over `H`.
    fn symbols(self) -> &'static [&'static str] {
        match self {
            Unit::Farad => &["F"],
            Unit::Ohm => &["Ohm", "ohm", "OHM", "Ω", "R"],
            Unit::Henry => &["H"],
            Unit::Volt => &["V"],
            Unit::Ampere => &["A"],
            Unit::Hertz => &["Hz", "hz", "HZ"],
            Unit::Second => &["s"],
            Unit::Fraction | Unit::Plain | Unit::Cost => &[],
        }
    }

    /// The unit's name, for messages.
    pub fn name(self) -> &'static str {
        match self {
            Unit::Farad => "capacitance (F)",
            Unit::Ohm => "resistance (Ohm)",
            Unit::Henry => "inductance (H)",
            Unit::Volt => "voltage (V)",
            Unit::Ampere => "current (A)",
            Unit::Hertz => "frequency (Hz)",
            Unit::Second => "time (s)",
            Unit::Fraction => "fraction or percentage",
            Unit::Plain => "plain number",
            Unit::Cost => "cost",
        }
    }
}

/// Why a value could not be read.
#[derive(Debug, Clone, PartialEq)]
pub struct ValueError(pub String);

impl fmt::Display for ValueError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for ValueError {}

const PREFIXES: &[(&str, f64)] = &[
    ("meg", 1e6),
    ("f", 1e-15),
    ("p", 1e-12),
    ("n", 1e-9),
    ("u", 1e-6),
    ("µ", 1e-6),
    ("μ", 1e-6),
    ("m", 1e-3),
    ("k", 1e3),
    ("K", 1e3),
    ("M", 1e6),
    ("G", 1e9),
];

/// Every unit symbol we know, to give a precise message when one is used in
/// the wrong field ("10uH" in a capacitance).
const ALL_UNITS: &[(&str, Unit)] = &[
    ("Ohm", Unit::Ohm),
    ("ohm", Unit::Ohm),
    ("Ω", Unit::Ohm),
    ("Hz", Unit::Hertz),
    ("F", Unit::Farad),
    ("H", Unit::Henry),
    ("V", Unit::Volt),
    ("A", Unit::Ampere),
    ("s", Unit::Second),
];

/// Currency symbols accepted before or after a cost. `\u{80}` is the euro
/// sign of Windows-1252 as the Latin-1 fallback of the catalog reader
/// decodes it.
const CURRENCY: &[char] = &['$', '€', '£', '¥', '\u{80}'];

/// A cost without its currency symbol (`"$0.12"` → `"0.12"`).
pub(crate) fn strip_currency(text: &str) -> &str {
    let t = text.trim();
    let t = t.strip_prefix(CURRENCY).unwrap_or(t).trim_start();
    let t = t.strip_suffix(CURRENCY).unwrap_or(t).trim_end();
    t
}

/// The RKM code of IEC 60062: a prefix letter (or `R` for the unit) stands
/// at the decimal point (`4u7` = 4.7u, `4R7` = 4.7, `0R005` = 0.005,
/// `1M5` = 1.5M). Rewritten to the decimal form with the prefix after the
/// number; `None` when the text is not in that form.
fn rkm(s: &str) -> Option<String> {
    let (sign, body) = match s.strip_prefix(['+', '-']) {
        Some(rest) => (&s[..1], rest),
        None => ("", s),
    };
    let lead = body.find(|c: char| !c.is_ascii_digit())?;
    if lead == 0 {
        return None;
    }
    let letter = body[lead..].chars().next()?;
    if !matches!(
        letter,
        'p' | 'n' | 'u' | 'µ' | 'μ' | 'm' | 'k' | 'K' | 'M' | 'G' | 'R'
    ) {
        return None;
    }
    let after = &body[lead + letter.len_utf8()..];
    let digits = after
        .find(|c: char| !c.is_ascii_digit())
        .unwrap_or(after.len());
    if digits == 0 {
        return None;
    }
    let (frac, unit) = after.split_at(digits);
    let prefix = if letter == 'R' {
        String::new()
    } else {
        letter.to_string()
    };
    Some(format!("{sign}{}.{frac}{prefix}{unit}", &body[..lead]))
}

/// Parse a textual value such as `"4.7uF"` into SI base units. An `Ok`
/// value is always finite.
pub fn parse(text: &str, unit: Unit) -> Result<f64, ValueError> {
    let v = match (unit, rkm(text.trim())) {
        (Unit::Fraction | Unit::Plain | Unit::Cost, _) | (_, None) => parse_value(text, unit)?,
        (_, Some(decimal)) => parse_value(&decimal, unit).map_err(|e| {
            ValueError(format!(
                "`{}` (RKM code, read as `{decimal}`): {e}",
                text.trim()
            ))
        })?,
    };
    if !v.is_finite() {
        // e.g. "1e300G": the number is finite, the scaled value is not.
        return Err(ValueError(format!(
            "`{}` is out of range (not a finite number)",
            text.trim()
        )));
    }
    Ok(v)
}

/// "a capacitance", "an inductance".
fn article(name: &str) -> &'static str {
    if name.starts_with(['a', 'e', 'i', 'o', 'u']) {
        "an"
    } else {
        "a"
    }
}

fn parse_value(text: &str, unit: Unit) -> Result<f64, ValueError> {
    let s = text.trim();
    let s = match unit {
        Unit::Cost => strip_currency(s),
        // "±10%": a tolerance is symmetric; the sign says nothing more.
        Unit::Fraction => s
            .strip_prefix('±')
            .or_else(|| s.strip_prefix("+/-"))
            .or_else(|| s.strip_prefix("+-"))
            .map_or(s, str::trim_start),
        _ => s,
    };
    if s.is_empty() {
        return Err(ValueError("empty value".into()));
    }
    let bare = s.trim_start_matches(['+', '-']).to_ascii_lowercase();
    if bare.starts_with("inf") || bare.starts_with("nan") {
        return Err(ValueError(format!("`{s}` is not a finite number")));
    }
    // Split the numeric head from the suffix.
    let bytes = s.as_bytes();
    let mut end = 0;
    let mut seen_e = false;
    while end < bytes.len() {
        let c = bytes[end] as char;
        let ok = c.is_ascii_digit()
            || c == '.'
            || ((c == '+' || c == '-') && (end == 0 || matches!(bytes[end - 1], b'e' | b'E')))
            || ((c == 'e' || c == 'E')
                && !seen_e
                && end > 0
                && end + 1 < bytes.len()
                && (bytes[end + 1].is_ascii_digit() || matches!(bytes[end + 1], b'+' | b'-')));
        if !ok {
            break;
        }
        if c == 'e' || c == 'E' {
            seen_e = true;
        }
        end += 1;
    }
    let (head, tail) = s.split_at(end);
    let tail = tail.trim();
    if head.is_empty() {
        return Err(ValueError(format!("`{s}` does not start with a number")));
    }
    let number: f64 = head
        .parse()
        .map_err(|_| ValueError(format!("`{s}` is not a number")))?;
    if !number.is_finite() {
        return Err(ValueError(format!("`{s}` is not a finite number")));
    }
    if unit == Unit::Fraction {
        return match tail {
            "" => Ok(number),
            "%" => Ok(number / 100.0),
            _ => Err(ValueError(format!(
                "`{s}`: expected a fraction (0.1) or a percentage (10%)"
            ))),
        };
    }
    if tail.is_empty() {
        return Ok(number);
    }
    if unit == Unit::Plain {
        return Err(ValueError(format!("`{s}`: expected a plain number")));
    }
    if unit == Unit::Cost {
        return Err(ValueError(format!(
            "`{s}`: expected a cost (a number, optionally with a currency symbol such as $ or €)"
        )));
    }
    // Try: [prefix][symbol], then [symbol], then [prefix].
    for &(p, scale) in PREFIXES {
        if let Some(rest) = tail.strip_prefix(p) {
            if rest.is_empty() || unit.symbols().contains(&rest) {
                return Ok(number * scale);
            }
        }
    }
    if unit.symbols().contains(&tail) {
        return Ok(number);
    }
    // Name the wrong unit if we recognise it.
    for &(p, _) in PREFIXES.iter().chain(std::iter::once(&("", 1.0))) {
        if let Some(rest) = tail.strip_prefix(p) {
            if let Some(&(_, other)) = ALL_UNITS.iter().find(|(sym, _)| *sym == rest) {
                if other != unit {
                    return Err(ValueError(format!(
                        "`{s}` is {} {}, but this field is {} {}",
                        article(other.name()),
                        other.name(),
                        article(unit.name()),
                        unit.name()
                    )));
                }
            }
        }
    }
    Err(ValueError(format!(
        "`{s}`: unknown prefix or unit `{tail}` for a {} (use e.g. p n u m k M meg)",
        unit.name()
    )))
}

/// A resistance in the RKM code of IEC 60062, the form printed on
/// resistors and used in bills of materials: the multiplier letter (`R` for
/// ohms, `k`, `M`) stands at the decimal point: 0.22 Ω = `0R22`, 4.7 Ω =
/// `4R7`, 22 Ω = `22R`, 2.2 kΩ = `2k2`. Up to six significant digits;
/// `parse` reads it back.
pub(crate) fn format_rkm(ohms: f64) -> String {
    if !(ohms > 0.0) || !ohms.is_finite() {
        return format!("{ohms}R");
    }
    let (letter, scale) = if ohms < 1e3 {
        ('R', 1.0)
    } else if ohms < 1e6 {
        ('k', 1e3)
    } else {
        ('M', 1e6)
    };
    let v = ohms / scale;
    let decimals = (5 - v.log10().floor() as i32).max(0) as usize;
    let mut t = format!("{v:.decimals$}");
    if t.contains('.') {
        t = t.trim_end_matches('0').trim_end_matches('.').to_string();
    }
    match t.split_once('.') {
        Some((int, frac)) => format!("{int}{letter}{frac}"),
        None => format!("{t}{letter}"),
    }
}

/// Format a value with an engineering prefix: `format_si(4.7e-6, "F")` = `4.7 µF`.
pub fn format_si(value: f64, symbol: &str) -> String {
    if value == 0.0 {
        return format!("0 {symbol}");
    }
    if !value.is_finite() {
        return format!("— {symbol}");
    }
    const STEPS: &[(f64, &str)] = &[
        (1e9, "G"),
        (1e6, "M"),
        (1e3, "k"),
        (1.0, ""),
        (1e-3, "m"),
        (1e-6, "µ"),
        (1e-9, "n"),
        (1e-12, "p"),
        (1e-15, "f"),
    ];
    let a = value.abs();
    let (scale, p) = STEPS
        .iter()
        .copied()
        .find(|(s, _)| a >= *s * 0.9995)
        .unwrap_or((1e-15, "f"));
    let v = value / scale;
    let digits = if v.abs() >= 100.0 {
        0
    } else if v.abs() >= 10.0 {
        1
    } else {
        2
    };
    let mut t = format!("{v:.digits$}");
    if t.contains('.') {
        while t.ends_with('0') {
            t.pop();
        }
        if t.ends_with('.') {
            t.pop();
        }
    }
    format!("{t} {p}{symbol}")
}

/// A value with an SI prefix and no space or unit, as the catalog reader
/// accepts it back (`4.7u`, `450p`, `3m`): for bills of materials.
pub(crate) fn format_compact(value: f64) -> String {
    format_si(value, "").replace(' ', "").replace('µ', "u")
}

/// The number at the start of a value as written (`"4.7uF"` → `"4.7"`).
pub(crate) fn mantissa(text: &str) -> &str {
    let t = text.trim();
    let end = t
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == ',' || c == '+' || c == '-'))
        .unwrap_or(t.len());
    &t[..end]
}

/// A likely intended value for a misread one: the digits of `value` as the
/// reader shows them, with `prefix` in place of its own prefix
/// (`suggest(8e6, "m")` = `"8m"`, `suggest(600.0, "k")` = `"600k"`).
pub fn suggest(value: f64, prefix: &str) -> String {
    let t = format_compact(value);
    let digits = t.trim_end_matches(|c: char| c.is_alphabetic());
    format!("{digits}{prefix}")
}

/// As [`suggest`], from the text as written: its leading number with
/// `prefix` after it (`"4.7"` → `"4.7u"`, `"22000"` → `"22000u"`).
pub(crate) fn suggest_text(text: &str, prefix: &str) -> String {
    let m = mantissa(text);
    if m.is_empty() {
        return prefix.to_string();
    }
    format!("{m}{prefix}")
}

/// True when the text is a bare number (no prefix, no unit symbol).
pub(crate) fn is_bare(text: &str) -> bool {
    text.trim().parse::<f64>().is_ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-30)
    }

    #[test]
    fn spec_examples() {
        // The examples of the value forms the tool accepts.
        assert!(close(parse("4.7u", Unit::Farad).unwrap(), 4.7e-6));
        assert!(close(parse("4.7uF", Unit::Farad).unwrap(), 4.7e-6));
        assert!(close(parse("4.7µF", Unit::Farad).unwrap(), 4.7e-6));
        assert!(close(parse("600k", Unit::Hertz).unwrap(), 600e3));
        assert!(close(parse("600kHz", Unit::Hertz).unwrap(), 600e3));
        assert!(close(parse("8mV", Unit::Volt).unwrap(), 8e-3));
        assert!(close(parse("0.3nH", Unit::Henry).unwrap(), 0.3e-9));
        assert!(close(parse("3m", Unit::Ohm).unwrap(), 3e-3));
        assert!(close(parse("2.5mOhm", Unit::Ohm).unwrap(), 2.5e-3));
        assert!(close(parse("1meg", Unit::Hertz).unwrap(), 1e6));
        assert!(close(parse("20M", Unit::Hertz).unwrap(), 20e6));
        assert!(close(parse("10%", Unit::Fraction).unwrap(), 0.10));
        assert!(close(parse("0.1", Unit::Fraction).unwrap(), 0.10));
        assert!(close(parse("1e-6", Unit::Farad).unwrap(), 1e-6));
        assert!(close(parse("12", Unit::Volt).unwrap(), 12.0));
        assert!(close(parse("12V", Unit::Volt).unwrap(), 12.0));
    }

    #[test]
    fn rkm_code_of_iec_60062() {
        // IEC 60062 (RKM code): the multiplier letter, or R for the unit,
        // takes the place of the decimal point.
        assert!(close(parse("4u7", Unit::Farad).unwrap(), 4.7e-6));
        assert!(close(parse("2n2", Unit::Farad).unwrap(), 2.2e-9));
        assert!(close(parse("4p7", Unit::Farad).unwrap(), 4.7e-12));
        assert!(close(parse("1k5", Unit::Ohm).unwrap(), 1.5e3));
        assert!(close(parse("4R7", Unit::Ohm).unwrap(), 4.7));
        assert!(close(parse("0R005", Unit::Ohm).unwrap(), 5e-3));
        assert!(close(parse("0R22", Unit::Ohm).unwrap(), 0.22));
        assert!(close(parse("1M5", Unit::Ohm).unwrap(), 1.5e6));
        assert!(close(parse("2m5", Unit::Ohm).unwrap(), 2.5e-3));
        assert!(close(parse("3n3", Unit::Henry).unwrap(), 3.3e-9));
        assert!(close(parse("4µ7", Unit::Farad).unwrap(), 4.7e-6));
        // With the unit symbol after it.
        assert!(close(parse("4u7F", Unit::Farad).unwrap(), 4.7e-6));
        assert!(close(parse("2u2H", Unit::Henry).unwrap(), 2.2e-6));
        // R alone after a number is still the ohm symbol; "1e5" an exponent.
        assert!(close(parse("10R", Unit::Ohm).unwrap(), 10.0));
        assert!(close(parse("1e5", Unit::Hertz).unwrap(), 1e5));
        // A wrong unit after an RKM code is named.
        let e = parse("4u7H", Unit::Farad).unwrap_err();
        assert!(e.0.contains("inductance") && e.0.contains("RKM"), "{e}");
        assert!(parse("4x7", Unit::Farad).is_err());
    }

    #[test]
    fn resistances_written_in_the_rkm_code_of_iec_60062() {
        // IEC 60062: the letter R, k or M at the decimal point.
        for (r, want) in [
            (0.22, "0R22"),
            (4.7, "4R7"),
            (22.0, "22R"),
            (220.0, "220R"),
            (2200.0, "2k2"),
            (0.0047, "0R0047"),
            (4.99, "4R99"),
            (1.0, "1R"),
            (1.5e6, "1M5"),
            (0.1, "0R1"),
        ] {
            assert_eq!(format_rkm(r), want, "{r}");
        }
        // Every IEC 60063 E96 value from 10 mΩ to 1 MΩ reads back exactly.
        for v in crate::eseries::values(crate::eseries::ESeries::E96, 0.01, 1e6) {
            let t = format_rkm(v);
            assert!(close(parse(&t, Unit::Ohm).unwrap(), v), "{v} → {t}");
        }
    }

    #[test]
    fn percentages_and_costs() {
        assert!(close(parse("±10%", Unit::Fraction).unwrap(), 0.10));
        assert!(close(parse("± 5 %", Unit::Fraction).unwrap(), 0.05));
        assert!(close(parse("+/-20%", Unit::Fraction).unwrap(), 0.20));
        assert!(close(parse("$0.12", Unit::Cost).unwrap(), 0.12));
        assert!(close(parse("€0.05", Unit::Cost).unwrap(), 0.05));
        assert!(close(parse("0.05 €", Unit::Cost).unwrap(), 0.05));
        assert!(close(parse("£1", Unit::Cost).unwrap(), 1.0));
        assert!(close(parse("0.3", Unit::Cost).unwrap(), 0.3));
        assert!(parse("$", Unit::Cost).is_err());
        assert!(parse("0.1k", Unit::Cost).is_err());
        assert!(parse("$0.1", Unit::Plain).is_err());
    }

    #[test]
    fn case_sensitive_prefixes() {
        assert!(close(parse("1m", Unit::Hertz).unwrap(), 1e-3));
        assert!(close(parse("1M", Unit::Hertz).unwrap(), 1e6));
    }

    #[test]
    fn wrong_unit_is_an_error() {
        let e = parse("10uH", Unit::Farad).unwrap_err();
        assert!(e.0.contains("inductance"), "{e}");
        assert!(parse("3x", Unit::Ohm).is_err());
        assert!(parse("abc", Unit::Ohm).is_err());
        assert!(parse("", Unit::Ohm).is_err());
        assert!(parse("nan", Unit::Ohm).is_err());
        assert!(parse("inf", Unit::Ohm).is_err());
        assert!(parse("5mm", Unit::Plain).is_err());
        // Finite number, infinite value once scaled.
        assert!(parse("1e300G", Unit::Hertz).is_err());
        assert!(parse("-inf", Unit::Volt).unwrap_err().0.contains("finite"));
    }

    #[test]
    fn compact_round_trip() {
        for v in [
            9.999999999999999e-6,
            4.5000000000000005e-10,
            3e-3,
            22e-6,
            1.0,
            0.0,
        ] {
            let t = format_compact(v);
            let back = parse(&t, Unit::Farad).unwrap();
            assert!((back - v).abs() <= 1e-3 * v.abs(), "{v} -> {t} -> {back}");
        }
        assert_eq!(format_compact(10e-6), "10u");
        assert_eq!(format_compact(4.5e-10), "450p");
    }

    #[test]
    fn suggestions_keep_the_digits() {
        assert_eq!(suggest(8e6, "m"), "8m");
        assert_eq!(suggest(600.0, "k"), "600k");
        assert_eq!(suggest(20.0, "M"), "20M");
        assert_eq!(suggest(2.2, "u"), "2.2u");
        assert_eq!(suggest_text("4.7", "u"), "4.7u");
        assert_eq!(suggest_text("5k", "m"), "5m");
        assert!(is_bare("4.7") && !is_bare("4.7u"));
    }

    #[test]
    fn formatting() {
        assert_eq!(format_si(4.7e-6, "F"), "4.7 µF");
        assert_eq!(format_si(600e3, "Hz"), "600 kHz");
        assert_eq!(format_si(0.0081, "V"), "8.1 mV");
    }
}
