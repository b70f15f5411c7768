//! Evaluator throughput and the cost of a whole assessment, on the bundled
//! (invented) demo. `cargo bench --bench evaluator`; about 3 s per figure.
//!
//! The 2-line bank is the demo design's bank under the corner region
//! (1× 10 µF 0603, 3× 47 µF 1206); a bank is not a result here, only a
//! workload.

use criterion::{black_box, criterion_group, criterion_main, BatchSize, Criterion};
use ripplebank::evaluator::{Band, Corner};
use ripplebank::load;
use ripplebank::problem::Problem;
use std::time::Duration;

const BANK: [(&str, u32); 2] = [("RB-C0603-X5R-10U-6V3", 1), ("RB-C1206-X5R-47U-6V3", 3)];
/// A bank far from the target (one small capacitor per line): the check
/// rejects it from its single-harmonic floor.
const WEAK: [(&str, u32); 3] = [
    ("RB-C0402-X5R-1U-6V3", 1),
    ("RB-C0603-X7R-1U-25V", 1),
    ("RB-C0402-X7R-100N-16V", 1),
];

fn demo_500() -> Problem {
    let (mut s, c) = load::scenario_and_catalog(None, None).expect("bundled demo loads");
    s.target.harmonics = 500;
    Problem::new(s, c).expect("bundled demo is valid")
}

fn indices(p: &Problem, bank: &[(&str, u32)]) -> Vec<(usize, u32)> {
    bank.iter()
        .map(|&(id, n)| {
            (
                p.catalog
                    .position(id)
                    .unwrap_or_else(|| panic!("demo catalog has {id}")),
                n,
            )
        })
        .collect()
}

fn evaluator(c: &mut Criterion) {
    let p = demo_500();
    let target = p.scenario.target.ripple_pp.0;
    let bank = indices(&p, &BANK);
    let weak = indices(&p, &WEAK);
    let parts: Vec<usize> = bank.iter().chain(&weak).map(|&(i, _)| i).collect();
    let mut ev = p.evaluator(&parts);
    let local: Vec<(usize, u32)> = bank.iter().enumerate().map(|(j, &(_, n))| (j, n)).collect();
    let local_weak: Vec<(usize, u32)> = weak
        .iter()
        .enumerate()
        .map(|(j, &(_, n))| (j + BANK.len(), n))
        .collect();
    assert_eq!(ev.n_limited, 500);
    // The workload is what it says: the demo bank passes, the weak one fails.
    assert!(ev.ripple_check(&local, target) <= target);
    assert!(ev.ripple_check(&local_weak, target) > target);

    let mut g = c.benchmark_group("evaluator_500_harmonics");
    g.bench_function("ripple_pp_low_corner_limited_2_lines", |b| {
        b.iter(|| ev.ripple_pp(black_box(&local), Corner::Worst, Band::Limited))
    });
    g.bench_function("ripple_check_passing_2_lines", |b| {
        b.iter(|| ev.ripple_check(black_box(&local), target))
    });
    g.bench_function("ripple_check_failing_3_lines", |b| {
        b.iter(|| ev.ripple_check(black_box(&local_weak), target))
    });
    g.bench_function("region_worst_2_lines", |b| {
        // A fresh evaluator each time: the search adds operating points.
        b.iter_batched(
            || p.evaluator(&parts),
            |mut e| ripplebank::region::worst(&p, &mut e, black_box(&local), Band::Limited).value,
            BatchSize::LargeInput,
        )
    });
    g.finish();
}

fn assess(c: &mut Criterion) {
    let p = load::problem(None, None, &Default::default()).expect("bundled demo is valid");
    let bank = indices(&p, &BANK);
    c.bench_function("assess_demo_bank", |b| {
        b.iter(|| ripplebank::assessment::assess(&p, black_box(&bank)).expect("assessable"))
    });
}

fn config() -> Criterion {
    Criterion::default()
        .sample_size(30)
        .measurement_time(Duration::from_secs(3))
        .warm_up_time(Duration::from_secs(1))
}

criterion_group! { name = benches; config = config(); targets = evaluator, assess }
criterion_main!(benches);
