//! `--out DIR` never loses work (the output-folder rule): a failed run leaves an existing
//! folder exactly as it was, a successful one writes its files and keeps the user's own,
//! and no temporary folder is left beside it.

use assert_cmd::Command;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

fn bin() -> Command {
    let mut c = Command::cargo_bin("ripplebank").expect("binary ripplebank");
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

/// Every file under `dir` (relative path → bytes), folders included as empty entries.
fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Option<Vec<u8>>> {
    fn walk(base: &Path, d: &Path, out: &mut BTreeMap<PathBuf, Option<Vec<u8>>>) {
        for e in std::fs::read_dir(d).unwrap() {
            let p = e.unwrap().path();
            let rel = p.strip_prefix(base).unwrap().to_path_buf();
            if p.is_dir() {
                out.insert(rel, None);
                walk(base, &p, out);
            } else {
                out.insert(rel, Some(std::fs::read(&p).unwrap()));
            }
        }
    }
    let mut out = BTreeMap::new();
    walk(dir, dir, &mut out);
    out
}

fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    v.sort();
    v
}

fn no_leftovers(parent: &Path, name: &str) {
    for n in names(parent) {
        assert!(
            !n.starts_with(&format!(".{name}.tmp-")) && !n.starts_with(&format!(".{name}.old-")),
            "temporary folder {n} left in {}",
            parent.display()
        );
    }
}

fn run(args: &[&str]) -> (Option<i32>, String) {
    let out = bin().args(args).output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
    (out.status.code(), stderr)
}

#[test]
fn failed_runs_leave_the_folder_as_it_was_and_a_good_run_replaces_it() {
    let parent = tempfile::tempdir().unwrap();
    let dir = parent.path().join("out");
    std::fs::create_dir(&dir).unwrap();
    std::fs::write(dir.join("sentinel.txt"), b"earlier work, keep me\n").unwrap();
    std::fs::create_dir(dir.join("notes")).unwrap();
    std::fs::write(dir.join("notes").join("n.txt"), b"more earlier work").unwrap();
    let before = snapshot(&dir);
    let d = dir.to_str().unwrap();

    let failing: &[(&[&str], &str)] = &[
        (
            &["assess", "--bank", "NOSUCHPART=1", "--out", d],
            "NOSUCHPART",
        ),
        (
            &[
                "assess",
                "--bank",
                "CX-A-22U-6V3=2",
                "--scenario",
                "tests/corpus/scn-buck-step-up.toml",
                "--out",
                d,
            ],
            "scn-buck-step-up.toml",
        ),
        (
            &[
                "assess",
                "--bank",
                "CX-A-22U-6V3=2",
                "--scenario",
                "tests/corpus/good-scenario.toml",
                "--catalog",
                "tests/corpus/cat-wrong-unit.csv",
                "--out",
                d,
            ],
            "cat-wrong-unit.csv",
        ),
        (
            &[
                "assess",
                "--bom",
                "tests/corpus/bom-unknown-part.csv",
                "--scenario",
                "tests/corpus/good-scenario.toml",
                "--out",
                d,
            ],
            "bom-unknown-part.csv",
        ),
        // Fails after the inputs are read: a bank of nothing.
        (
            &["assess", "--bank", "RB-C1206-X5R-47U-6V3=0", "--out", d],
            "every count is zero",
        ),
        (
            &[
                "design",
                "--scenario",
                "tests/corpus/scn-zero-fsw.toml",
                "--out",
                d,
            ],
            "scn-zero-fsw.toml",
        ),
    ];
    for (args, says) in failing {
        let (code, stderr) = run(args);
        assert_eq!(code, Some(2), "{args:?}: {stderr}");
        assert!(stderr.contains(says), "{args:?}: {stderr}");
        assert_eq!(snapshot(&dir), before, "{args:?} changed the output folder");
        assert_eq!(names(parent.path()), vec!["out".to_string()], "{args:?}");
    }

    let (code, stderr) = run(&["assess", "--bank", "RB-C1206-X5R-47U-6V3=4", "--out", d]);
    assert!(matches!(code, Some(0 | 1)), "{stderr}");
    let after = names(&dir);
    for f in ["bom.csv", "report.json", "bank.cir", "report.html"] {
        assert!(after.contains(&f.to_string()), "{f} missing: {after:?}");
    }
    // Nothing already on disk is lost: the user's own files stay.
    assert!(
        after.contains(&"sentinel.txt".to_string()) && after.contains(&"notes".to_string()),
        "user files lost: {after:?}"
    );
    no_leftovers(parent.path(), "out");
    assert_eq!(names(parent.path()), vec!["out".to_string()]);
    // The files describe the bank that was asked for.
    let doc: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.join("report.json")).unwrap()).unwrap();
    assert_eq!(doc["bank"][0]["part"], "RB-C1206-X5R-47U-6V3");
    assert_eq!(doc["bank"][0]["count"], 4);
    let bom = std::fs::read_to_string(dir.join("bom.csv")).unwrap();
    assert!(
        bom.lines()
            .nth(1)
            .unwrap()
            .starts_with("RB-C1206-X5R-47U-6V3,4,"),
        "{bom}"
    );

    // A failure after a success keeps the successful run's files.
    let good = snapshot(&dir);
    let (code, _) = run(&["assess", "--bank", "NOSUCHPART=1", "--out", d]);
    assert_eq!(code, Some(2));
    assert_eq!(snapshot(&dir), good);
    no_leftovers(parent.path(), "out");
}

#[test]
fn out_creates_missing_parents_and_refuses_a_file() {
    let parent = tempfile::tempdir().unwrap();
    let deep = parent.path().join("a").join("b").join("run1");
    let (code, stderr) = run(&[
        "assess",
        "--bank",
        "RB-C1206-X5R-47U-6V3=4",
        "--out",
        deep.to_str().unwrap(),
    ]);
    assert!(matches!(code, Some(0 | 1)), "{stderr}");
    assert!(deep.join("report.json").is_file());
    no_leftovers(deep.parent().unwrap(), "run1");

    let file = parent.path().join("report-as-file");
    std::fs::write(&file, b"not a folder").unwrap();
    let (code, stderr) = run(&[
        "assess",
        "--bank",
        "RB-C1206-X5R-47U-6V3=4",
        "--out",
        file.to_str().unwrap(),
    ]);
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("report-as-file"), "{stderr}");
    assert_eq!(std::fs::read(&file).unwrap(), b"not a folder");
    no_leftovers(parent.path(), "report-as-file");
}
