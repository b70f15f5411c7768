//! What identifies a run in every report: the tool's version, the exact
//! input files (path and SHA-256) and the date and time of the run (UTC).

use serde::Serialize;
use serde_json::{json, Value};

/// One input file: where it came from and the SHA-256 of its bytes.
#[derive(Debug, Clone, Serialize, PartialEq, Eq)]
pub struct Input {
    /// The path as given, or `(bundled) …` for the built-in demo.
    pub path: String,
    /// SHA-256 of the bytes read, 64 lowercase hexadecimal digits.
    pub sha256: String,
}

impl Input {
    /// An input read from `path` whose bytes are `bytes`.
    pub fn new(path: impl Into<String>, bytes: &[u8]) -> Input {
        Input {
            path: path.into(),
            sha256: crate::sha256::hex(bytes),
        }
    }

    /// The first 12 hexadecimal digits of the hash, for readable reports.
    pub(crate) fn short_hash(&self) -> &str {
        &self.sha256[..12.min(self.sha256.len())]
    }
}

/// The input files of a run; `None` where the run has no such input.
#[derive(Debug, Clone, Default, Serialize, PartialEq, Eq)]
pub struct Inputs {
    /// The scenario (TOML).
    pub scenario: Option<Input>,
    /// The capacitor catalog (CSV).
    pub catalog: Option<Input>,
    /// The inductor catalog (CSV), when one is used.
    pub inductors: Option<Input>,
}

/// Version, inputs and time of one run.
#[derive(Debug, Clone)]
pub struct Run {
    /// The tool's version (`CARGO_PKG_VERSION`).
    pub version: &'static str,
    /// The input files.
    pub inputs: Inputs,
    /// Date and time of the run, UTC, RFC 3339 (`2025-01-31T08:15:00Z`).
    pub date: String,
}

impl Run {
    /// A run starting now with these inputs.
    pub fn now(inputs: Inputs) -> Run {
        let secs = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.as_secs() as i64);
        Run {
            version: env!("CARGO_PKG_VERSION"),
            inputs,
            date: rfc3339(secs),
        }
    }

    /// Add `version`, `inputs` and `date` to a JSON document (an object).
    pub(crate) fn stamp(&self, doc: &mut Value) {
        if let Some(o) = doc.as_object_mut() {
            o.insert("version".into(), json!(self.version));
            o.insert(
                "inputs".into(),
                serde_json::to_value(&self.inputs).expect("serialisable"),
            );
            o.insert("date".into(), json!(self.date));
        }
    }

    /// The run as readable lines: version and date, then each input with a
    /// short hash.
    pub fn lines(&self) -> Vec<String> {
        let mut v = vec![format!("ripplebank {}, run {}", self.version, self.date)];
        for (what, i) in [
            ("scenario", &self.inputs.scenario),
            ("catalog", &self.inputs.catalog),
            ("inductors", &self.inputs.inductors),
        ] {
            if let Some(i) = i {
                v.push(format!(
                    "  {what:<9} {} (sha256 {})",
                    i.path,
                    i.short_hash()
                ));
            }
        }
        v
    }
}

/// Days since 1970-01-01 of a date in the proleptic Gregorian calendar.
/// Howard Hinnant's `days_from_civil` ("chrono-Compatible Low-Level Date
/// Algorithms"): years start on 1 March, so the leap day is the last day of
/// the year; eras are 400-year cycles of 146097 days.
pub fn days_from_civil(y: i64, m: u32, d: u32) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400; // [0, 399]
    let mp = (m as i64 + 9) % 12; // March = 0
    let doy = (153 * mp + 2) / 5 + d as i64 - 1; // [0, 365]
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy; // [0, 146096]
    era * 146097 + doe - 719468
}

/// The date (year, month, day) `z` days after 1970-01-01: the inverse of
/// [`days_from_civil`], Hinnant's `civil_from_days` from the same paper.
pub fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719468;
    let era = z.div_euclid(146097);
    let doe = z - era * 146097; // [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365; // [0, 399]
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // [0, 365]
    let mp = (5 * doy + 2) / 153; // [0, 11]
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m, d)
}

/// Seconds since the Unix epoch as an RFC 3339 UTC time, `YYYY-MM-DDThh:mm:ssZ`.
pub(crate) fn rfc3339(secs: i64) -> String {
    let (days, s) = (secs.div_euclid(86400), secs.rem_euclid(86400));
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        s / 3600,
        s / 60 % 60,
        s % 60
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn civil_round_trip_and_known_days() {
        // Source: the definition of the Unix epoch (POSIX: 1970-01-01 is day 0)
        // and the Gregorian leap rule (2000 is a leap year, 1900 and 2100 are not).
        assert_eq!(days_from_civil(1970, 1, 1), 0);
        assert_eq!(days_from_civil(1970, 1, 2), 1);
        assert_eq!(days_from_civil(1969, 12, 31), -1);
        assert_eq!(
            days_from_civil(2000, 3, 1) - days_from_civil(2000, 2, 28),
            2
        );
        assert_eq!(
            days_from_civil(1900, 3, 1) - days_from_civil(1900, 2, 28),
            1
        );
        assert_eq!(
            days_from_civil(2100, 3, 1) - days_from_civil(2100, 2, 28),
            1
        );
        // 400 Gregorian years are 146097 days.
        assert_eq!(
            days_from_civil(2400, 1, 1) - days_from_civil(2000, 1, 1),
            146097
        );
        for z in -800_000..800_000 {
            let (y, m, d) = civil_from_days(z);
            assert_eq!(days_from_civil(y, m, d), z, "{y}-{m}-{d}");
        }
    }

    /// Against GNU `date -u -d @N` (coreutils), when it is installed.
    #[test]
    fn rfc3339_matches_gnu_date() {
        for secs in [
            0i64,
            951_782_400, // around the 2000 leap day
            951_868_799,
            1_709_164_800, // 2024
            4_107_542_399, // 2100
            -86_401,
        ] {
            let Ok(out) = std::process::Command::new("date")
                .args(["-u", "-d", &format!("@{secs}"), "+%Y-%m-%dT%H:%M:%SZ"])
                .output()
            else {
                eprintln!("skipped: date not found");
                return;
            };
            if !out.status.success() {
                eprintln!("skipped: date does not take -d @N");
                return;
            }
            let theirs = String::from_utf8(out.stdout).unwrap();
            assert_eq!(rfc3339(secs), theirs.trim(), "{secs}");
        }
    }
}
