//! Loading a scenario and its catalog, with the bundled demo as default.

use crate::catalog::Catalog;
use crate::filter::FilterUse;
use crate::inductors::InductorCatalog;
use crate::problem::Problem;
use crate::run::{Input, Inputs};
use crate::scenario::{Objective, Scenario};
use anyhow::{bail, Result};
use std::path::{Path, PathBuf};

/// The bundled demo scenario (invented data) used when no `--scenario` is given.
pub const DEMO_SCENARIO: &str = include_str!("../scenarios/pol-buck-3v3.toml");
/// The bundled demo catalog (invented data).
pub const DEMO_CATALOG: &str = include_str!("../catalogs/demo-parts.csv");
/// The name the bundled demo scenario goes by in messages.
pub(crate) const DEMO_SCENARIO_NAME: &str = "scenarios/pol-buck-3v3.toml (bundled demo)";
/// The name the bundled demo catalog goes by in messages.
pub const DEMO_CATALOG_NAME: &str = "catalogs/demo-parts.csv (bundled demo)";
/// The path the bundled demo scenario is reported under in `inputs`.
pub(crate) const DEMO_SCENARIO_INPUT: &str = "(bundled) scenarios/pol-buck-3v3.toml";
/// The path the bundled demo catalog is reported under in `inputs`.
pub(crate) const DEMO_CATALOG_INPUT: &str = "(bundled) catalogs/demo-parts.csv";
/// The bundled demo inductor catalog (invented data), used when a filter is
/// considered and neither `[filter] inductors` nor `--inductors` names one.
pub(crate) const DEMO_INDUCTORS: &str = include_str!("../catalogs/demo-inductors.csv");
/// The name the bundled demo inductor catalog goes by in messages.
pub(crate) const DEMO_INDUCTORS_NAME: &str = "catalogs/demo-inductors.csv (bundled demo)";
/// The path the bundled demo inductor catalog is reported under in `inputs`.
pub(crate) const DEMO_INDUCTORS_INPUT: &str = "(bundled) catalogs/demo-inductors.csv";

/// Options that adjust a scenario from the command line.
#[derive(Debug, Default, Clone)]
pub struct Overrides {
    /// `--objective`: replaces `selection.objective`.
    pub objective: Option<Objective>,
    /// `--exclude`: added to `selection.exclude` (capacitors or inductors).
    pub exclude: Vec<String>,
    /// `--filter`: replaces `[filter] use`.
    pub filter: Option<FilterUse>,
    /// `--inductors`: the inductor catalog, instead of `[filter] inductors`.
    pub inductors: Option<PathBuf>,
    /// The command needs an inductor catalog whatever `[filter] use` says
    /// (`assess` of a filtered design).
    pub need_inductors: bool,
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
pub(crate) fn scenario_catalog_inputs(
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
pub(crate) fn problem_and_inputs(
    scenario: Option<&Path>,
    catalog: Option<&Path>,
    o: &Overrides,
) -> Result<(Problem, Inputs)> {
    let (mut s, c, mut inputs) = scenario_catalog_inputs(scenario, catalog)?;
    if let Some(obj) = o.objective {
        s.selection.objective = obj;
    }
    if let Some(f) = o.filter {
        s.filter.usage = f;
    }
    let (inductors, input, demo_note) = inductor_catalog(&s, scenario.is_some(), o)?;
    inputs.inductors = input;
    for e in &o.exclude {
        if c.get(e).is_none() && inductors.as_ref().is_none_or(|l| l.get(e).is_none()) {
            bail!(
                "--exclude: part `{e}` is not in the catalog {}{}",
                c.source,
                inductors.as_ref().map_or(String::new(), |l| format!(
                    " nor in the inductor catalog {}",
                    l.source
                ))
            );
        }
        if !s.selection.exclude.contains(e) {
            s.selection.exclude.push(e.clone());
        }
    }
    let mut p = Problem::with_inductors(s, c, inductors)?;
    if let Some(n) = demo_note {
        p.warnings.push(n);
    }
    Ok((p, inputs))
}

/// The inductor catalog of a run: `--inductors`, else `[filter] inductors`
/// (relative to the scenario), else the bundled demo when a filter is
/// considered (`use` auto or on) or the command needs one; else none. With
/// the input's path and hash, and a note when a scenario file of the user's
/// gets the bundled demo inductors.
pub(crate) fn inductor_catalog(
    s: &Scenario,
    user_scenario: bool,
    o: &Overrides,
) -> Result<(Option<InductorCatalog>, Option<Input>, Option<String>)> {
    if let Some(p) = &o.inductors {
        let l = InductorCatalog::from_path(p)?;
        return Ok((Some(l), input_of(p), None));
    }
    if let Some(p) = s.inductors_path() {
        if !p.is_file() {
            bail!(
                "{}: key `filter.inductors`: `{}` (that is {}) is not a readable file; fix the path (relative to the \
                 scenario) or give --inductors",
                s.source,
                s.filter.inductors.as_deref().unwrap_or(""),
                p.display()
            );
        }
        let l = InductorCatalog::from_path(&p)?;
        return Ok((Some(l), input_of(&p), None));
    }
    if s.filter.usage == FilterUse::Off && !o.need_inductors {
        return Ok((None, None, None));
    }
    let l = InductorCatalog::from_bytes(DEMO_INDUCTORS.as_bytes(), DEMO_INDUCTORS_NAME)?;
    let note = user_scenario.then(|| {
        "no inductor catalog given (filter.inductors or --inductors): the bundled demo inductor catalog of \
         invented parts is used; give your own before building hardware"
            .to_string()
    });
    Ok((
        Some(l),
        Some(Input::new(DEMO_INDUCTORS_INPUT, DEMO_INDUCTORS.as_bytes())),
        note,
    ))
}
