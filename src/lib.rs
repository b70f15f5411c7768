//! ripplebank: choose and verify output capacitor banks for DC-DC converters.
//!
//! Data flows one way: scenario + catalog → eligible parts → operating
//! corners → current spectra → evaluator → optimizer → reports.

pub mod bank;
pub mod catalog;
pub mod converter;
pub mod problem;
pub mod scenario;
pub mod spectrum;
pub mod units;
pub mod assessment;
pub mod commands;
pub mod load;
pub mod optimize;
pub mod report;
