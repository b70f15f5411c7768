//! Preferred numbers of IEC 60063 (the E-series of resistor and capacitor
//! values): the damping resistor of a post-filter is taken from one of them.
//!
//! The tables are the standard's own lists. E48 and E96 equal
//! `10^(i/n)` rounded to three significant digits; E6, E12 and E24 are older
//! and differ from the two-digit rounding of that formula at eight values
//! (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2), so no formula stands in for
//! the lists.

use serde::Serialize;

/// One of the IEC 60063 series a resistor value is taken from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub enum ESeries {
    /// 6 values per decade (±20 %).
    E6,
    /// 12 values per decade (±10 %).
    E12,
    /// 24 values per decade (±5 %), the default.
    #[default]
    E24,
    /// 48 values per decade (±2 %).
    E48,
    /// 96 values per decade (±1 %).
    E96,
}

/// E24, in units of 0.1 (10 = 1.0); E12 and E6 are every second and every
/// fourth of it.
const E24: [u16; 24] = [
    10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
];
const E12: [u16; 12] = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];
const E6: [u16; 6] = [10, 15, 22, 33, 47, 68];

/// E96, in units of 0.01 (100 = 1.00); E48 is every second of it.
const E96: [u16; 96] = [
    100, 102, 105, 107, 110, 113, 115, 118, 121, 124, 127, 130, 133, 137, 140, 143, 147, 150, 154,
    158, 162, 165, 169, 174, 178, 182, 187, 191, 196, 200, 205, 210, 215, 221, 226, 232, 237, 243,
    249, 255, 261, 267, 274, 280, 287, 294, 301, 309, 316, 324, 332, 340, 348, 357, 365, 374, 383,
    392, 402, 412, 422, 432, 442, 453, 464, 475, 487, 499, 511, 523, 536, 549, 562, 576, 590, 604,
    619, 634, 649, 665, 681, 698, 715, 732, 750, 768, 787, 806, 825, 845, 866, 887, 909, 931, 953,
    976,
];
const E48: [u16; 48] = [
    100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205, 215, 226, 237,
    249, 261, 274, 287, 301, 316, 332, 348, 365, 383, 402, 422, 442, 464, 487, 511, 536, 562, 590,
    619, 649, 681, 715, 750, 787, 825, 866, 909, 953,
];

impl ESeries {
    /// Every series, coarsest first.
    pub const ALL: [ESeries; 5] = [
        ESeries::E6,
        ESeries::E12,
        ESeries::E24,
        ESeries::E48,
        ESeries::E96,
    ];

    /// Every allowed spelling, in lower case.
    pub const NAMES: &'static [&'static str] = &["e6", "e12", "e24", "e48", "e96"];

    /// The series' name as written in the standard (`E24`).
    pub fn label(self) -> &'static str {
        match self {
            ESeries::E6 => "E6",
            ESeries::E12 => "E12",
            ESeries::E24 => "E24",
            ESeries::E48 => "E48",
            ESeries::E96 => "E96",
        }
    }

    /// The series' name in lower case (`e24`).
    pub fn name(self) -> &'static str {
        Self::NAMES[Self::ALL.iter().position(|&s| s == self).unwrap_or(0)]
    }

    /// Case-insensitive (`E24`, `e24`).
    pub fn parse(s: &str) -> Option<ESeries> {
        let s = s.trim().to_ascii_lowercase();
        Self::NAMES
            .iter()
            .position(|&n| n == s)
            .map(|i| Self::ALL[i])
    }

    /// Values per decade.
    pub fn per_decade(self) -> usize {
        self.table().0.len()
    }

    /// The standard's table: the significant digits, and the power of ten
    /// that makes the first of them 1 (`[10, 11, …]` with -1 for E24).
    fn table(self) -> (&'static [u16], i32) {
        match self {
            ESeries::E6 => (&E6, -1),
            ESeries::E12 => (&E12, -1),
            ESeries::E24 => (&E24, -1),
            ESeries::E48 => (&E48, -2),
            ESeries::E96 => (&E96, -2),
        }
    }

    /// The values of one decade, from 1 up to (not including) 10.
    pub fn decade(self) -> Vec<f64> {
        let (digits, e) = self.table();
        digits.iter().map(|&d| scaled(d, e)).collect()
    }
}

/// `d · 10^e`, rounded once (a division by an exact power of ten for
/// negative `e`, so 22 · 10⁻³ is the double nearest 0.022).
fn scaled(d: u16, e: i32) -> f64 {
    if e < 0 {
        d as f64 / 10f64.powi(-e)
    } else {
        d as f64 * 10f64.powi(e)
    }
}

/// Every value of `series` from `lo` to `hi` (both included, within a
/// rounding of one part in 10⁹), over as many decades as that spans, in
/// increasing order. Empty when `lo > hi` or either end is not a positive
/// finite number.
pub fn values(series: ESeries, lo: f64, hi: f64) -> Vec<f64> {
    if !(lo > 0.0 && hi >= lo && hi.is_finite()) {
        return Vec::new();
    }
    let (digits, e0) = series.table();
    let slack = 1e-9;
    let first = lo.log10().floor() as i32 - 1;
    let last = hi.log10().floor() as i32 + 1;
    let mut out = Vec::new();
    for k in first..=last {
        for &d in digits {
            let v = scaled(d, e0 + k);
            if v >= lo * (1.0 - slack) && v <= hi * (1.0 + slack) {
                out.push(v);
            }
        }
    }
    out
}

/// The value of `series` nearest to `r` on a logarithmic scale (`r` > 0).
pub fn nearest(series: ESeries, r: f64) -> Option<f64> {
    if !(r > 0.0 && r.is_finite()) {
        return None;
    }
    values(series, r / 10.0, r * 10.0)
        .into_iter()
        .min_by(|a, b| (a / r).ln().abs().total_cmp(&(b / r).ln().abs()))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Round to `sig` significant digits, as the standard's formula does.
    fn round_sig(x: f64, sig: i32) -> f64 {
        let p = 10f64.powi(sig - 1 - x.log10().floor() as i32);
        (x * p).round() / p
    }

    #[test]
    fn each_series_has_its_count_and_rises() {
        // IEC 60063: En has n values per decade, increasing, from 1.0 up to below 10.
        for s in ESeries::ALL {
            let d = s.decade();
            let n: usize = s.label()[1..].parse().unwrap();
            assert_eq!(d.len(), n, "{}", s.label());
            assert_eq!(d[0], 1.0);
            assert!(d.windows(2).all(|w| w[1] > w[0]) && *d.last().unwrap() < 10.0);
        }
    }

    #[test]
    fn coarser_series_are_every_second_value_of_the_finer() {
        // IEC 60063: E12 is every second value of E24, E6 every second of
        // E12, E48 every second of E96.
        for (fine, coarse) in [
            (ESeries::E24, ESeries::E12),
            (ESeries::E12, ESeries::E6),
            (ESeries::E96, ESeries::E48),
        ] {
            let f: Vec<f64> = fine.decade().into_iter().step_by(2).collect();
            assert_eq!(f, coarse.decade(), "{}", coarse.label());
        }
    }

    #[test]
    fn e48_and_e96_follow_the_standard_formula() {
        // IEC 60063: the E48 and E96 values are 10^(i/n) rounded to three
        // significant digits, with no exceptions in these two series.
        for s in [ESeries::E48, ESeries::E96] {
            let n = s.per_decade();
            for (i, v) in s.decade().into_iter().enumerate() {
                let f = round_sig(10f64.powf(i as f64 / n as f64), 3);
                assert!((v - f).abs() < 1e-12, "{} #{i}: {v} vs {f}", s.label());
            }
        }
    }

    #[test]
    fn e24_keeps_its_historic_values_where_the_formula_differs() {
        // IEC 60063: E24 predates the formula; rounding 10^(i/24) to two
        // digits would give 2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6 and 8.3 where
        // the standard lists 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2.
        let d = ESeries::E24.decade();
        let mut differ = Vec::new();
        for (i, &v) in d.iter().enumerate() {
            let f = round_sig(10f64.powf(i as f64 / 24.0), 2);
            if (v - f).abs() > 1e-12 {
                differ.push((v, f));
            }
        }
        let want = [
            (2.7, 2.6),
            (3.0, 2.9),
            (3.3, 3.2),
            (3.6, 3.5),
            (3.9, 3.8),
            (4.3, 4.2),
            (4.7, 4.6),
            (8.2, 8.3),
        ];
        assert_eq!(differ.len(), want.len(), "{differ:?}");
        for ((v, f), (wv, wf)) in differ.iter().zip(want) {
            assert!(
                (v - wv).abs() < 1e-12 && (f - wf).abs() < 1e-12,
                "{differ:?}"
            );
        }
    }

    #[test]
    fn values_span_decades_with_both_ends_included() {
        // IEC 60063 values repeat in every decade: E6 from 22 mΩ to 4.7 Ω.
        let v = values(ESeries::E6, 0.022, 4.7);
        let want = [
            0.022, 0.033, 0.047, 0.068, 0.1, 0.15, 0.22, 0.33, 0.47, 0.68, 1.0, 1.5, 2.2, 3.3, 4.7,
        ];
        assert_eq!(v.len(), want.len(), "{v:?}");
        for (a, b) in v.iter().zip(want) {
            assert!((a - b).abs() <= 1e-15 * b, "{a} vs {b}");
        }
        // 0.022 is the double nearest 22 mΩ exactly, so RKM text round-trips.
        assert_eq!(v[0], 0.022);
        assert_eq!(values(ESeries::E24, 0.1, 1.0).len(), 25);
        assert_eq!(values(ESeries::E96, 1.0, 100.0).len(), 193);
        assert!(values(ESeries::E12, 2.0, 1.0).is_empty());
        assert!(values(ESeries::E12, 0.0, 1.0).is_empty());
        // 4.99 Ω is an E96 value and not an E48 one.
        assert!(values(ESeries::E96, 4.9, 5.0).contains(&4.99));
        assert!(!values(ESeries::E48, 4.9, 5.0).contains(&4.99));
    }

    #[test]
    fn nearest_on_a_log_scale() {
        // E12 around 0.25 Ω: 0.22 and 0.27; ln(0.25/0.22) = 0.128 > ln(0.27/0.25) = 0.077.
        assert_eq!(nearest(ESeries::E12, 0.25), Some(0.27));
        assert_eq!(nearest(ESeries::E24, 0.0), None);
        assert_eq!(ESeries::parse(" E96 "), Some(ESeries::E96));
        assert_eq!(ESeries::parse("e5"), None);
        assert_eq!(ESeries::E48.name(), "e48");
    }
}
