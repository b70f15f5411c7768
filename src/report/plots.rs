//! SVG plots (placeholder, being written).

use crate::assessment::Assessment;
use crate::problem::Problem;
use anyhow::Result;

pub fn bank_plots(_problem: &Problem, _bank: &[(usize, u32)], _a: &Assessment) -> Result<Vec<(String, String)>> {
    Ok(Vec::new())
}
