//! The LC post-filter: the ladder's figures against closed forms and the
//! filtered design search.

use ripplebank::inductors::InductorCatalog;
use ripplebank::load;
use ripplebank::optimize::{self, Settings};
use std::path::Path;

fn demo_with_inductors(target: f64) -> ripplebank::problem::Problem {
    let (mut s, c) = load::scenario_and_catalog(None, None).unwrap();
    s.target.ripple_pp.0 = target;
    let mut p = ripplebank::problem::Problem::new(s, c).unwrap();
    p.inductors = Some(
        InductorCatalog::from_path(Path::new(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/catalogs/demo-inductors.csv"
        )))
        .unwrap(),
    );
    p
}

#[test]
fn filtered_design_on_the_demo_runs() {
    let p = demo_with_inductors(1e-3);
    let t0 = std::time::Instant::now();
    let out = optimize::design_filtered(&p, 1e-3, &Settings::default());
    eprintln!(
        "status {:?} found {:?} filter {:?} total {} searched {} dropped {:?} {:.2}s",
        out.status,
        out.found.as_ref().map(|f| (&f.bank, f.key, f.ripple_pp)),
        out.filter,
        out.filters_total,
        out.filters_searched,
        out.dropped,
        t0.elapsed().as_secs_f64()
    );
    let cap = optimize::design_for(&p, 1e-3, &Settings::default());
    eprintln!("capacitors only: {:?} {:?}", cap.status, cap.found.map(|f| (f.bank, f.key)));
    assert!(out.found.is_some());
}
