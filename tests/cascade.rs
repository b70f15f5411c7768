//! The evaluator's fast pass/fail path against its full figure (property
//! test, proptest). `Evaluator::ripple_check(bank, limit)` runs a cascade of
//! lower bounds over the operating points the region search starts from
//! (`ops_region`), every line at the `low` corner, and stops at the first
//! stage above the limit. The reference is computed independently of that
//! cascade: the exact waveform's peak-to-peak (`region::value_at`) at the
//! `low` states, the largest over the same operating points, one point at a
//! time (brute-force enumeration of the points).
//!
//! Checked for random small banks of the bundled demo catalog (invented
//! data), with the limit drawn around the full figure so that both answers
//! occur:
//! - `ripple_check(b, limit) <= limit` exactly when the full figure is;
//! - above the limit, the value returned is a lower bound of the full figure.
//!
//! Within 1e-9 of the limit the two sides may round differently (the coarse
//! passes sum a folded series in another order), so the "iff" is asserted
//! only where the full figure is farther from the limit than that.

use proptest::prelude::*;
use proptest::test_runner::Config;
use ripplebank::evaluator::Band;
use ripplebank::problem::Problem;
use ripplebank::region::{named_states, value_at, Named};
use std::sync::OnceLock;

fn demo() -> &'static Problem {
    static P: OnceLock<Problem> = OnceLock::new();
    P.get_or_init(|| ripplebank::load::problem(None, None, &Default::default()).unwrap())
}

fn cfg() -> Config {
    let cases = std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(256);
    Config {
        cases,
        ..Config::default()
    }
}

/// Up to three distinct eligible parts (indices into `eligible`, reduced
/// modulo its length) with counts 1 to 8.
fn small_bank() -> impl Strategy<Value = Vec<(usize, u32)>> {
    prop::collection::vec((0usize..1000, 1u32..=8), 1..=3)
}

proptest! {
    #![proptest_config(cfg())]

    #[test]
    fn ripple_check_agrees_with_the_full_figure(raw in small_bank(), factor in 0.3f64..3.0) {
        let p = demo();
        let elig = &p.eligible;
        prop_assume!(!elig.is_empty());
        let mut parts: Vec<usize> = Vec::new();
        let mut counts: Vec<u32> = Vec::new();
        for (i, n) in raw {
            let part = elig[i % elig.len()];
            if !parts.contains(&part) {
                parts.push(part);
                counts.push(n);
            }
        }
        let mut ev = p.evaluator(&parts);
        let bank: Vec<(usize, u32)> = counts.iter().enumerate().map(|(j, &n)| (j, n)).collect();
        let states = named_states(&ev, &bank, Named::Low);
        let ops = ev.ops_region.clone();
        prop_assert!(!ops.is_empty());
        let full = ops
            .iter()
            .map(|&op| value_at(&mut ev, &bank, &states, op, Band::Limited))
            .fold(0.0_f64, f64::max);
        prop_assert!(full.is_finite() && full > 0.0, "full figure {full}");
        let limit = full * factor;
        let r = ev.ripple_check(&bank, limit);
        if (full - limit).abs() > 1e-9 * full {
            prop_assert_eq!(
                r <= limit,
                full <= limit,
                "bank {:?}: ripple_check {} vs full {} at limit {}",
                bank, r, full, limit
            );
        }
        if r > limit {
            prop_assert!(
                r <= full * (1.0 + 1e-9),
                "bank {:?}: returned {} is above the full figure {}",
                bank, r, full
            );
        } else {
            // A pass returns the figure itself (every stage is at most it).
            prop_assert!((r - full).abs() <= 1e-9 * full, "pass value {r} vs full {full}");
        }
    }
}
