#![forbid(unsafe_code)]
#![deny(missing_docs)]
#![allow(
    clippy::needless_range_loop,
    clippy::neg_cmp_op_on_partial_ord,
    clippy::type_complexity
)]
//! ripplebank: choose and verify output capacitor banks for DC-DC converters.
//!
//! Data flows one way: scenario + catalog → eligible parts → operating
//! corners → current spectra → evaluator → optimizer → reports.
//!
//! # Example
//!
//! Load the bundled demo (an invented 12 V → 3.3 V buck and catalog), build
//! the problem, and assess a bank of two 47 µF ceramics and two 10 µF ones:
//!
//! ```
//! use ripplebank::{assessment, load};
//!
//! let (scenario, catalog) = load::scenario_and_catalog(None, None)?;
//! let problem = ripplebank::problem::Problem::new(scenario, catalog)?;
//! let bank = assessment::parse_bank_arg(&problem, "RB-C1206-X5R-47U-6V3=2,RB-C0603-X5R-10U-6V3=2")?;
//! let a = assessment::assess(&problem, &bank)?;
//! println!("worst-corner ripple: {:.2} mV", a.ripple_pp * 1e3);
//! assert!(a.ripple_pp > 0.0 && a.ripple_pp.is_finite());
//! # Ok::<(), anyhow::Error>(())
//! ```

pub mod assessment;
pub mod catalog;
pub mod commands;
pub mod converter;
pub mod eseries;
pub mod evaluator;
pub mod filter;
pub mod inductors;
pub mod limits;
pub mod load;
pub mod network;
pub mod optimize;
pub mod problem;
pub mod region;
pub mod report;
pub mod run;
pub mod scenario;
pub mod sha256;
pub(crate) mod sheet;
pub mod spectrum;
pub(crate) mod timedomain;
pub mod transient;
pub mod units;
