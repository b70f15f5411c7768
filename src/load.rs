//! Loading a scenario and its catalog, with the bundled demo as default.

use crate::catalog::Catalog;
use crate::problem::Problem;
use crate::scenario::{Objective, Scenario};
use anyhow::{bail, Result};
use std::path::Path;

/// The bundled demo scenario (invented data) used when no `--scenario` is given.
pub const DEMO_SCENARIO: &str = include_str!("../scenarios/pol-buck-3v3.toml");
/// The bundled demo catalog (invented data).
pub const DEMO_CATALOG: &str = include_str!("../catalogs/demo-parts.csv");
pub const DEMO_SCENARIO_NAME: &str = "scenarios/pol-buck-3v3.toml (bundled demo)";
pub const DEMO_CATALOG_NAME: &str = "catalogs/demo-parts.csv (bundled demo)";

/// Options that adjust a scenario from the command line.
#[derive(Debug, Default, Clone)]
pub struct Overrides {
    pub objective: Option<Objective>,
    pub exclude: Vec<String>,
}

pub fn scenario_and_catalog(
    scenario: Option<&Path>,
    catalog: Option<&Path>,
) -> Result<(Scenario, Catalog)> {
    let s = match scenario {
        Some(p) => Scenario::from_path(p)?,
        None => Scenario::from_str(DEMO_SCENARIO, DEMO_SCENARIO_NAME)?,
    };
    let c = match (catalog, scenario, s.catalog_path()) {
        (Some(c), _, _) => Catalog::from_path(c)?,
        (None, Some(_), Some(p)) => {
            if !p.is_file() {
                bail!(
                    "{}: key `catalog`: `{}` (that is {}) is not a readable file; fix the path (relative to the scenario) or give --catalog",
                    s.source,
                    s.catalog.as_deref().unwrap_or(""),
                    p.display()
                );
            }
            Catalog::from_path(&p)?
        }
        (None, None, _) => Catalog::from_bytes(DEMO_CATALOG.as_bytes(), DEMO_CATALOG_NAME)?,
        (None, Some(_), None) => bail!("{}: no `catalog` key and no --catalog given", s.source),
    };
    Ok((s, c))
}

pub fn problem(scenario: Option<&Path>, catalog: Option<&Path>, o: &Overrides) -> Result<Problem> {
    let (mut s, c) = scenario_and_catalog(scenario, catalog)?;
    if let Some(obj) = o.objective {
        s.selection.objective = obj;
    }
    for e in &o.exclude {
        if c.get(e).is_none() {
            bail!("--exclude: part `{e}` is not in the catalog {}", c.source);
        }
        if !s.selection.exclude.contains(e) {
            s.selection.exclude.push(e.clone());
        }
    }
    Problem::new(s, c)
}
