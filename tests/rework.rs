//! `rework` against brute-force enumeration (source: brute-force
//! enumeration of every bank of ≤ 3 lines with counts ≤ 8): the rework
//! changes no more line items than the fewest possible, and costs no more
//! than the cheapest bank with that many changes.

mod common;

use assert_cmd::Command;
use common::{all_banks, random_catalog, random_converter, MAX_COUNT};
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};
use ripplebank::catalog::Catalog;
use ripplebank::optimize::{self, Settings};
use ripplebank::problem::Problem;
use ripplebank::scenario::Scenario;

/// Kept lines whose count changed.
fn count_changes(old: &[(usize, u32)], new: &[(usize, u32)]) -> usize {
    old.iter()
        .filter(|o| new.iter().any(|n| n.0 == o.0 && n.1 != o.1))
        .count()
}

/// Added lines in the case (footprint) of a removed line.
fn same_case(cat: &Catalog, old: &[(usize, u32)], new: &[(usize, u32)]) -> usize {
    let removed: Vec<&str> = old
        .iter()
        .filter(|o| !new.iter().any(|n| n.0 == o.0))
        .filter_map(|o| cat.parts[o.0].case.as_deref())
        .collect();
    new.iter()
        .filter(|n| !old.iter().any(|o| o.0 == n.0))
        .filter(|n| {
            cat.parts[n.0]
                .case
                .as_deref()
                .is_some_and(|c| removed.contains(&c))
        })
        .count()
}

/// Changed line items between two banks: lines removed plus lines added.
fn changes(old: &[(usize, u32)], new: &[(usize, u32)]) -> usize {
    old.iter()
        .filter(|o| !new.iter().any(|n| n.0 == o.0))
        .count()
        + new
            .iter()
            .filter(|n| !old.iter().any(|o| o.0 == n.0))
            .count()
}

#[test]
fn rework_matches_brute_force() {
    let mut rng = StdRng::seed_from_u64(0x2e_0012);
    let mut compared = 0;
    let mut count_rule_mattered = 0;
    for case in 0..40 {
        let nparts = rng.gen_range(3..=6);
        let cat_text = random_catalog(&mut rng, nparts);
        let conv = random_converter(&mut rng);
        let scen = format!(
            "[converter]\n{conv}max_capacitance = \"{}u\"\n[target]\nripple_pp = \"{}m\"\nbandwidth = \"20M\"\nharmonics = 80\n[board]\nmounting_inductance = \"0.3n\"\nmax_count = 16\nmax_lines = 3\n[selection]\nmax_per_part = {MAX_COUNT}\n",
            rng.gen_range(300..2000),
            rng.gen_range(5..80),
        );
        let catalog = Catalog::from_bytes(cat_text.as_bytes(), "random.csv").unwrap();
        let scenario = Scenario::from_str(&scen, "random.toml").unwrap();
        let p = Problem::new(scenario, catalog).unwrap();
        if p.eligible.len() < 3 {
            continue;
        }
        let e = p.eligible.clone();
        let target = p.scenario.target.ripple_pp.0;
        let mut ev = p.evaluator(&e);
        let cat = &p.catalog;
        // Every allowed bank that meets the target, by the evaluator.
        let max_cap = p.scenario.converter.max_capacitance.unwrap().0;
        let mut good: Vec<(Vec<(usize, u32)>, f64, Vec<(usize, u32)>)> = Vec::new();
        for b in all_banks(e.len()) {
            let cap: f64 = b
                .iter()
                .map(|&(i, n)| n as f64 * cat.parts[e[i]].c_nominal_max())
                .sum();
            let count: u32 = b.iter().map(|x| x.1).sum();
            if cap > max_cap || count > 16 {
                continue;
            }
            // The low corner first (a quick necessary test); the independent
            // dense search of the corner region runs later, only on the banks
            // the rule reaches (it is costly).
            if ev.ripple_check(&b, target) > target {
                continue;
            }
            let cost = b
                .iter()
                .map(|&(i, n)| n as f64 * cat.parts[e[i]].cost)
                .sum();
            good.push((b.iter().map(|&(i, n)| (e[i], n)).collect(), cost, b.clone()));
        }
        // A released bank of two or three lines; one of its parts goes.
        let k = rng.gen_range(2..=3usize.min(e.len()));
        let mut idx: Vec<usize> = (0..e.len()).collect();
        for j in 0..k {
            let r = rng.gen_range(j..idx.len());
            idx.swap(j, r);
        }
        let current: Vec<(usize, u32)> = idx[..k]
            .iter()
            .map(|&i| (e[i], rng.gen_range(1..=4)))
            .collect();
        let forced = vec![current[0].0];
        let allowed: Vec<&(Vec<(usize, u32)>, f64, Vec<(usize, u32)>)> = good
            .iter()
            .filter(|(b, _, _)| !b.iter().any(|x| x.0 == forced[0]))
            .collect();
        // Whether a bank holds over the dense region search (ripple and
        // ripple currents), memoised.
        let mut memo: std::collections::HashMap<usize, bool> = std::collections::HashMap::new();
        let mut holds = |j: usize| -> bool {
            *memo.entry(j).or_insert_with(|| {
                let b = &allowed[j].2;
                let (r, cur) = common::dense_region(&p, &mut ev, b);
                r <= target
                    && b.iter()
                        .zip(&cur)
                        .all(|(&(i, _), &c)| cat.parts[e[i]].ripple_current.is_none_or(|r| c <= r))
            })
        };
        // The rule: fewest changed lines, then fewest changed counts, then
        // cost, then the most same-footprint additions.
        let key = |j: usize| {
            let (b, c, _) = allowed[j];
            (
                changes(&current, b),
                count_changes(&current, b),
                *c,
                same_case(cat, &current, b),
            )
        };
        let mut order: Vec<usize> = (0..allowed.len()).collect();
        order.sort_by(|&x, &y| {
            let (x, y) = (key(x), key(y));
            x.0.cmp(&y.0)
                .then(x.1.cmp(&y.1))
                .then(x.2.partial_cmp(&y.2).unwrap())
                .then(y.3.cmp(&x.3))
        });
        let best = order.iter().copied().find(|&j| holds(j)).map(key);
        // The rule without counts (lines, then cost): where it differs, the
        // count rule changed the answer.
        order.sort_by(|&x, &y| {
            let (x, y) = (key(x), key(y));
            x.0.cmp(&y.0).then(x.2.partial_cmp(&y.2).unwrap())
        });
        let lines_then_cost = order.iter().copied().find(|&j| holds(j)).map(|j| {
            let k = key(j);
            (k.0, k.2, k.1)
        });
        if let (Some(b), Some(l)) = (best, lines_then_cost) {
            if l.2 > b.1 {
                count_rule_mattered += 1;
            }
        }
        let r = optimize::rework(
            &p,
            &current,
            &forced,
            &Settings {
                ..Default::default()
            },
        );
        match (best, &r.found) {
            (None, None) => {}
            (Some(b), None) => panic!("case {case}: rework found nothing, brute force {b:?}"),
            (None, Some(f)) => {
                // Counts above 8 lie outside the brute force's space.
                assert!(
                    f.bank.iter().any(|x| x.1 > MAX_COUNT),
                    "case {case}: rework found {:?}, brute force nothing",
                    f.bank
                );
            }
            (Some((ch, cch, cost, _)), Some(f)) => {
                compared += 1;
                assert!(
                    !f.bank.iter().any(|x| x.0 == forced[0]),
                    "case {case}: the dropped part stayed"
                );
                let got = changes(&current, &f.bank);
                assert_eq!(got, ch, "case {case}: {got} changes, fewest possible {ch}");
                assert_eq!(r.changes, ch, "case {case}: reported changes");
                let tool_cost: f64 = f
                    .bank
                    .iter()
                    .map(|&(i, n)| n as f64 * cat.parts[i].cost)
                    .sum();
                let got_c = count_changes(&current, &f.bank);
                assert_eq!(
                    got_c, cch,
                    "case {case}: {got_c} changed counts, fewest possible {cch}"
                );
                assert_eq!(r.count_changes, cch, "case {case}: reported count changes");
                assert!(
                    (tool_cost - cost).abs() <= 1e-9 * cost.max(1e-12),
                    "case {case}: cost {tool_cost}, brute force {cost}"
                );
            }
        }
    }
    eprintln!("rework: {compared} cases compared with brute force; the count rule changed the answer in {count_rule_mattered}");
    assert!(
        count_rule_mattered >= 1,
        "no case where counting count changes changes the answer"
    );
    assert!(compared >= 12, "too few comparable cases: {compared}");
}

#[test]
fn bank_with_nothing_obsolete_is_still_good() {
    // The demo design's bank (over the whole corner region, inductor
    // tolerance included) meets the target with active parts only (checked
    // here with `assess` first, the same evaluator).
    let dir = tempfile::tempdir().unwrap();
    let bom = dir.path().join("bom.csv");
    std::fs::write(
        &bom,
        "part,count\nRB-C0603-X5R-10U-6V3,1\nRB-C1206-X5R-47U-6V3,3\n",
    )
    .unwrap();
    Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["assess", "--bom"])
        .arg(&bom)
        .assert()
        .code(0);
    let out = Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["rework", "--json", "--bom"])
        .arg(&bom)
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["still_good"], true);
    assert_eq!(v["removed"].as_array().unwrap().len(), 0);
    assert_eq!(v["added"].as_array().unwrap().len(), 0);
    assert_eq!(v["kept"].as_array().unwrap().len(), 2);
    for k in v["kept"].as_array().unwrap() {
        assert_eq!(k["count_before"], k["count_after"]);
    }
}

#[test]
fn obsolete_part_is_replaced_with_one_change() {
    // RB-C0805-X5R-22U-10V is obsolete in the demo catalog.
    let dir = tempfile::tempdir().unwrap();
    let bom = dir.path().join("bom.csv");
    std::fs::write(
        &bom,
        "part,count\nRB-C0805-X5R-22U-10V,3\nRB-C1206-X5R-47U-6V3,2\n",
    )
    .unwrap();
    let out = Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["rework", "--json", "--bom"])
        .arg(&bom)
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    let removed = v["removed"].as_array().unwrap();
    assert!(removed
        .iter()
        .any(|r| r["part"] == "RB-C0805-X5R-22U-10V" && r["reason"] == "obsolete"));
    assert!(v["ripple_pp"].as_f64().unwrap() <= v["target_ripple_pp"].as_f64().unwrap());
    assert!(!v["bank"]
        .as_array()
        .unwrap()
        .iter()
        .any(|b| b["part"] == "RB-C0805-X5R-22U-10V"));
}

#[test]
fn part_missing_from_the_catalog_is_replaced() {
    // A line whose part is not in the catalog any more must go (counted as
    // one removed line item); the demo's 47 µF part alone can carry the
    // target with more of it, so one change is the fewest possible.
    let dir = tempfile::tempdir().unwrap();
    let bom = dir.path().join("bom.csv");
    std::fs::write(&bom, "part,count\nNO-SUCH-PART,2\nRB-C1206-X5R-47U-6V3,2\n").unwrap();
    let out = Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["rework", "--json", "--bom"])
        .arg(&bom)
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["changes"], 1);
    assert!(v["removed"]
        .as_array()
        .unwrap()
        .iter()
        .any(|r| r["part"] == "NO-SUCH-PART" && r["reason"] == "not in the catalog"));
    assert_eq!(v["before"]["complete"], false);
}

/// Where two replacements tie on changed lines, changed counts and cost, the
/// one in the dropped part's footprint (case) wins. The catalog (invented)
/// holds two electrically identical parts of equal cost, C in 1206 with the
/// smaller stated area (so it dominates in area and the plain search keeps
/// it) and B in 0805, the case of the dropped part A. Brute force over every
/// count of the replacement confirms the tie; the rule picks B.
#[test]
fn same_footprint_replacement_wins_a_tie() {
    let cat_text = "part,technology,capacitance,rated_voltage,esr,esl,cost,tolerance,dielectric,case,area,height\n\
        K,ceramic,1u,10,8m,0.35n,0.015,10%,X5R,0402,,0.5\n\
        C,ceramic,22u,10,4m,0.5n,0.06,10%,X5R,1206,1.5,1.0\n\
        A,ceramic,22u,10,4m,0.5n,0.05,10%,X5R,0805,,1.0\n\
        B,ceramic,22u,10,4m,0.5n,0.06,10%,X5R,0805,2.5,1.0\n";
    let scen = |target: f64| {
        format!(
            "[converter]\ntopology = \"buck\"\nvin = 12\nvout = 3.3\niout = 6\nfsw = \"600k\"\ninductance = \"2.2u\"\n\
             [target]\nripple_pp = {target}\nbandwidth = \"20M\"\nharmonics = 80\n\
             [board]\nmounting_inductance = \"0.3n\"\nmax_lines = 3\n[selection]\nmax_per_part = {MAX_COUNT}\n"
        )
    };
    let problem = |target: f64| {
        let c = Catalog::from_bytes(cat_text.as_bytes(), "tie.csv").unwrap();
        Problem::new(Scenario::from_str(&scen(target), "tie.toml").unwrap(), c).unwrap()
    };
    let p0 = problem(1.0);
    let id = |p: &Problem, s: &str| p.catalog.position(s).unwrap();
    let (k, a, b, c) = (id(&p0, "K"), id(&p0, "A"), id(&p0, "B"), id(&p0, "C"));
    let current = vec![(k, 1), (a, 4)];
    let r_current = ripplebank::assessment::assess(&p0, &current)
        .unwrap()
        .ripple_pp;
    let target = r_current * 1.001;
    let p = problem(target);
    let r_k = ripplebank::assessment::assess(&p, &[(k, MAX_COUNT)])
        .unwrap()
        .ripple_pp;
    assert!(
        r_k > target,
        "K alone, even {MAX_COUNT} of it, must not meet the target"
    );
    // Brute force: the cheapest count of each replacement with K kept at 1.
    let cheapest = |x: usize| {
        (1..=MAX_COUNT)
            .find(|&n| {
                let a = ripplebank::assessment::assess(&p, &[(k, 1), (x, n)]).unwrap();
                a.all_ok
            })
            .map(|n| (n, n as f64 * p.catalog.parts[x].cost))
    };
    let (nb, cb) = cheapest(b).expect("B replaces A");
    let (nc, cc) = cheapest(c).expect("C replaces A");
    assert_eq!(nb, nc);
    assert!((cb - cc).abs() < 1e-12, "a true tie: {cb} vs {cc}");
    let r = optimize::rework(
        &p,
        &current,
        &[a],
        &Settings {
            ..Default::default()
        },
    );
    let f = r.found.expect("a rework");
    assert_eq!(r.changes, 2, "remove A, add one line");
    assert_eq!(r.count_changes, 0, "K keeps its count");
    assert!(f.bank.contains(&(k, 1)), "{:?}", f.bank);
    assert!(
        f.bank.contains(&(b, nb)),
        "same-footprint B expected: {:?}",
        f.bank
    );
    // Without the footprint rule the answer differs: the plain search keeps C.
    let mut sc = p.scenario.clone();
    sc.selection.exclude.push("A".into());
    sc.selection.require.insert("K".into(), 1);
    sc.board.max_lines = Some(2);
    let plain = Problem::new(sc, p.catalog.clone()).unwrap();
    let d = optimize::design(
        &plain,
        &Settings {
            ..Default::default()
        },
    );
    let db = d.found.expect("a plain design").bank;
    assert!(
        !db.iter().any(|x| x.0 == b),
        "plain design {db:?} would already pick B"
    );
}

/// A rework that cannot hold the load step says the lowest deviation any
/// bank meeting the other limits reaches, as `design` does: the bundled
/// core rail with its limit cut to a fifth (well below what its count and
/// area limits allow: the settled value of the most capacitance is the
/// floor, closed form of the step model), from its own design's BOM.
#[test]
fn infeasible_rework_gives_the_lowest_deviation() {
    let root = env!("CARGO_MANIFEST_DIR");
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("d");
    let scen = format!("{root}/scenarios/fpga-core-step.toml");
    Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["design", "--scenario", &scen, "--out"])
        .arg(&out)
        .assert()
        .code(0);
    let tight = std::fs::read_to_string(&scen)
        .unwrap()
        .replace("../catalogs", &format!("{root}/catalogs"))
        .replace("max_deviation = \"27m\"", "max_deviation = \"5m\"");
    assert!(tight.contains("\"5m\""));
    let sp = dir.path().join("tight.toml");
    std::fs::write(&sp, tight).unwrap();
    let run = Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["rework", "--json", "--scenario"])
        .arg(&sp)
        .arg("--bom")
        .arg(out.join("bom.csv"))
        .output()
        .unwrap();
    assert_eq!(run.status.code(), Some(1));
    let doc: serde_json::Value = serde_json::from_slice(&run.stdout).unwrap();
    let best = doc["best_deviation"].as_f64().expect("best_deviation");
    assert!(best > 5e-3 && best < 0.027, "lowest deviation {best}");
}

#[test]
fn dropping_a_filter_part_says_how_to_replace_it() {
    // A filtered design's bill of materials (the bundled filter demo's
    // parts, invented): rework keeps the filter, so dropping one of its
    // parts is refused with the position named and the command that does
    // replace it, and nothing is written.
    let (_dir, bom) = filtered_demo_bom();
    let scen = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/adc-rail-5v.toml");
    let out = Command::cargo_bin("ripplebank")
        .unwrap()
        .args([
            "rework",
            "--scenario",
            scen,
            "--drop",
            "RB-PT-3528-21-100U-6V3",
            "--bom",
        ])
        .arg(&bom)
        .assert()
        .code(2)
        .get_output()
        .stderr
        .clone();
    let msg = String::from_utf8(out).unwrap();
    assert!(msg.contains("position `damping`"), "{msg}");
    assert!(msg.contains("line 5"), "{msg}");
    assert!(
        msg.contains("design --filter on --exclude RB-PT-3528-21-100U-6V3"),
        "{msg}"
    );
    // The same bill of materials with nothing dropped is reworked (the
    // filter kept): still good.
    let ok = Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["rework", "--json", "--scenario", scen, "--bom"])
        .arg(&bom)
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&ok).unwrap();
    assert_eq!(v["still_good"], true, "{v}");
}

#[test]
fn an_obsolete_filter_part_is_warned_about() {
    // The bundled filter demo's parts with the damping polymer marked
    // obsolete in a copy of the demo catalog (invented data): rework keeps
    // the filter, and says in the text and in JSON `warnings` that the
    // filter must be redesigned.
    let (dir, bom) = filtered_demo_bom();
    let demo = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/catalogs/demo-parts.csv"
    ))
    .unwrap();
    let cat: String = demo
        .lines()
        .map(|l| {
            if l.starts_with("RB-PT-3528-21-100U-6V3,") {
                l.replace(",active,", ",obsolete,")
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    assert!(cat.contains("RB-PT-3528-21-100U-6V3,") && cat != demo);
    let catalog = dir.path().join("parts.csv");
    std::fs::write(&catalog, cat).unwrap();
    let scen = concat!(env!("CARGO_MANIFEST_DIR"), "/scenarios/adc-rail-5v.toml");
    let out = Command::cargo_bin("ripplebank")
        .unwrap()
        .args(["rework", "--json", "--scenario", scen, "--catalog"])
        .arg(&catalog)
        .arg("--bom")
        .arg(&bom)
        .assert()
        .code(0)
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    let warned = v["warnings"].as_array().unwrap().iter().any(|w| {
        w.as_str()
            .unwrap()
            .contains("RB-PT-3528-21-100U-6V3` is obsolete")
    });
    assert!(warned, "{}", v["warnings"]);
}

/// The bundled filter demo's design as a bill of materials with a
/// `position` column (invented parts), in a fresh folder.
fn filtered_demo_bom() -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let bom = dir.path().join("bom.csv");
    std::fs::write(
        &bom,
        "part,count,position\n\
         RB-L2520-0U47,1,inductor\n\
         RB-C1206-X5R-47U-6V3,1,load\n\
         R 0R056,1,damping\n\
         RB-PT-3528-21-100U-6V3,2,damping\n",
    )
    .unwrap();
    (dir, bom)
}
