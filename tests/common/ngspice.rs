//! The ngspice harness shared by the simulator tests: finding ngspice,
//! running a netlist in batch mode, and reading `.meas` results and
//! `.print ac` tables. ngspice is the Debian package; without it the tests
//! print a note and pass unless RIPPLEBANK_REQUIRE_NGSPICE=1.
#![allow(dead_code)]

use std::path::Path;
use std::process::Command;

pub fn ngspice_on_path() -> bool {
    let Some(path) = std::env::var_os("PATH") else {
        return false;
    };
    std::env::split_paths(&path).any(|d| {
        let p = d.join("ngspice");
        p.is_file()
            && std::fs::metadata(&p)
                .map(|m| {
                    use std::os::unix::fs::PermissionsExt;
                    m.permissions().mode() & 0o111 != 0
                })
                .unwrap_or(false)
    })
}

/// Whether to run: true with ngspice; false (after a note) without it;
/// a failure without it when RIPPLEBANK_REQUIRE_NGSPICE=1.
pub fn have_ngspice() -> bool {
    if ngspice_on_path() {
        return true;
    }
    if std::env::var("RIPPLEBANK_REQUIRE_NGSPICE").as_deref() == Ok("1") {
        panic!("ngspice not found on PATH and RIPPLEBANK_REQUIRE_NGSPICE=1: install it with `apt-get install ngspice` (Debian package)");
    }
    eprintln!("skipped: ngspice not found; install it with `apt-get install ngspice` (Debian package) or set RIPPLEBANK_REQUIRE_NGSPICE=1 to make this an error");
    false
}

/// Runs `ngspice -b` on a netlist in a fresh temporary folder; its output.
pub fn run_ngspice(netlist: &str) -> String {
    // RIPPLEBANK_NGSPICE_KEEP=DIR keeps a copy of every netlist for inspection.
    if let Some(keep) = std::env::var_os("RIPPLEBANK_NGSPICE_KEEP") {
        let n = netlist.len()
            ^ netlist
                .bytes()
                .fold(0usize, |h, b| h.wrapping_mul(31).wrapping_add(b as usize));
        let _ = std::fs::write(Path::new(&keep).join(format!("net-{n:016x}.cir")), netlist);
    }
    let dir = tempfile::tempdir().expect("temp dir");
    let file = dir.path().join("bank.cir");
    std::fs::write(&file, netlist).expect("write netlist");
    run_ngspice_file(&file)
}

pub fn run_ngspice_file(file: &Path) -> String {
    let out = Command::new("ngspice")
        .arg("-b")
        .arg(file.file_name().unwrap())
        .current_dir(file.parent().unwrap())
        .output()
        .expect("run ngspice");
    let text = format!(
        "{}\n{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(
        out.status.success(),
        "ngspice failed ({}):\n{text}",
        out.status
    );
    let bad = text
        .lines()
        .map(|l| l.trim().to_ascii_lowercase())
        .find(|l| l.starts_with("error") || l.contains("timestep too small"));
    assert!(
        bad.is_none(),
        "ngspice reported a problem ({}):\n{text}",
        bad.unwrap_or_default()
    );
    text
}

/// The value of a `.meas` result such as `pp_full  =  1.234e-03 from= ...`.
pub fn meas(output: &str, name: &str) -> f64 {
    for line in output.lines() {
        let l = line.trim();
        let Some(rest) = l.strip_prefix(name) else {
            continue;
        };
        let rest = rest.trim_start();
        let Some(rest) = rest.strip_prefix('=') else {
            continue;
        };
        if let Some(tok) = rest.split_whitespace().next() {
            if let Ok(v) = tok.parse::<f64>() {
                return v;
            }
        }
    }
    panic!("no result `{name}` in the ngspice output:\n{output}");
}

/// Rows of a `.print ac` table: (frequency, value).
pub fn print_table(output: &str) -> Vec<(f64, f64)> {
    let mut rows = Vec::new();
    for line in output.lines() {
        let t: Vec<&str> = line.split_whitespace().collect();
        if t.len() == 3 && t[0].parse::<usize>().is_ok() {
            if let (Ok(f), Ok(v)) = (t[1].parse::<f64>(), t[2].parse::<f64>()) {
                rows.push((f, v));
            }
        }
    }
    rows
}
