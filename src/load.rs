//! Loading a scenario and its catalog, with the bundled demo as default.

use crate::catalog::Catalog;
use crate::problem::Problem;
use crate::run::{Input, Inputs};
use crate::scenario::{Objective, Scenario};
use anyhow::{bail, Result};
use std::path::Path;

/// The bundled demo scenario (invented data) used when no `--scenario` is given.
pub const DEMO_SCENARIO: &str = include_str!("../scenarios/pol-buck-3v3.toml");
/// The bundled demo catalog (invented data).
pub const DEMO_CATALOG: &str = include_str!("../catalogs/demo-parts.csv");
/// The name the bundled demo scenario goes by in messages.
pub const DEMO_SCENARIO_NAME: &str = "scenarios/pol-buck-3v3.toml (bundled demo)";
/// The name the bundled demo catalog goes by in messages.
pub const DEMO_CATALOG_NAME: &str = "catalogs/demo-parts.csv (bundled demo)";
/// The path the bundled demo scenario is reported under in `inputs`.
pub const DEMO_SCENARIO_INPUT: &str = "(bundled) scenarios/pol-buck-3v3.toml";
/// The path the bundled demo catalog is reported under in `inputs`.
pub const DEMO_CATALOG_INPUT: &str = "(bundled) catalogs/demo-parts.csv";

/// Options that adjust a scenario from the command line.
#[derive(Debug, Default, Clone)]
pub struct Overrides {
    /// `--objective`: replaces `selection.objective`.
    pub objective: Option<Objective>,
    /// `--exclude`: added to `selection.exclude`.
    pub exclude: Vec<String>,
}

/// The bytes of a file that has just been read successfully, for its hash.
fn input_of(path: &Path) -> Option<Input> {
    std::fs::read(path)
        .ok()
        .map(|b| Input::new(path.display().to_string(), &b))
}

/// The scenario and its catalog: the files given, or the bundled demo.
pub fn scenario_and_catalog(
    scenario: Option<&Path>,
    catalog: Option<&Path>,
) -> Result<(Scenario, Catalog)> {
    scenario_catalog_inputs(scenario, catalog).map(|(s, c, _)| (s, c))
}

/// As [`scenario_and_catalog`], with the input files' paths and hashes.
pub fn scenario_catalog_inputs(
    scenario: Option<&Path>,
    catalog: Option<&Path>,
) -> Result<(Scenario, Catalog, Inputs)> {
    let mut inputs = Inputs::default();
    let s = match scenario {
        Some(p) => {
            let s = Scenario::from_path(p)?;
            inputs.scenario = input_of(p);
            s
        }
        None => {
            inputs.scenario = Some(Input::new(DEMO_SCENARIO_INPUT, DEMO_SCENARIO.as_bytes()));
            Scenario::from_str(DEMO_SCENARIO, DEMO_SCENARIO_NAME)?
        }
    };
    let c = match (catalog, scenario, s.catalog_path()) {
        (Some(c), _, _) => {
            let cat = Catalog::from_path(c)?;
            inputs.catalog = input_of(c);
            cat
        }
        (None, Some(_), Some(p)) => {
            if !p.is_file() {
                bail!(
                    "{}: key `catalog`: `{}` (that is {}) is not a readable file; fix the path (relative to the scenario) or give --catalog",
                    s.source,
                    s.catalog.as_deref().unwrap_or(""),
                    p.display()
                );
            }
            let cat = Catalog::from_path(&p)?;
            inputs.catalog = input_of(&p);
            cat
        }
        (None, None, _) => {
            inputs.catalog = Some(Input::new(DEMO_CATALOG_INPUT, DEMO_CATALOG.as_bytes()));
            Catalog::from_bytes(DEMO_CATALOG.as_bytes(), DEMO_CATALOG_NAME)?
        }
        (None, Some(_), None) => bail!("{}: no `catalog` key and no --catalog given", s.source),
    };
    Ok((s, c, inputs))
}

/// The problem (scenario, catalog and eligible parts) with the overrides applied.
pub fn problem(scenario: Option<&Path>, catalog: Option<&Path>, o: &Overrides) -> Result<Problem> {
    problem_and_inputs(scenario, catalog, o).map(|(p, _)| p)
}

/// As [`problem`], with the input files' paths and hashes.
pub fn problem_and_inputs(
    scenario: Option<&Path>,
    catalog: Option<&Path>,
    o: &Overrides,
) -> Result<(Problem, Inputs)> {
    let (mut s, c, inputs) = scenario_catalog_inputs(scenario, catalog)?;
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
    Ok((Problem::new(s, c)?, inputs))
}
