#![allow(
    clippy::needless_range_loop,
    clippy::neg_cmp_op_on_partial_ord,
    clippy::type_complexity
)]
//! ripplebank: choose and verify output capacitor banks for DC-DC converters.
//!
//! Data flows one way: scenario + catalog → eligible parts → operating
//! corners → current spectra → evaluator → optimizer → reports.

pub mod assessment;
pub mod bank;
pub mod catalog;
pub mod commands;
pub mod converter;
pub mod inductors;
pub mod load;
pub mod optimize;
pub mod problem;
pub mod report;
pub mod scenario;
pub mod sheet;
pub mod spectrum;
pub mod units;
