//! SPICE netlist of a bank and its current source (placeholder, being written).

use crate::problem::Problem;
use anyhow::Result;

pub fn netlist(_problem: &Problem, _bank: &[(usize, u32)]) -> Result<String> {
    Ok(String::from("* ripplebank netlist: not written yet\n.end\n"))
}
