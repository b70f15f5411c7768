//! Command line of ripplebank: parses arguments, runs a command, prints.

#![forbid(unsafe_code)]

use clap::{Parser, Subcommand, ValueEnum};
use ripplebank::assessment::FilterArgs;
use ripplebank::assessment::{AssessOptions, NamedCorner};
use ripplebank::commands::{self, CommandOutput, Common};
use ripplebank::filter::FilterUse;
use ripplebank::scenario::Objective;
use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

/// `--objective`: what the design minimises.
#[derive(Clone, Copy, ValueEnum)]
enum ObjectiveArg {
    /// Total cost (parts plus line cost)
    Cost,
    /// Total footprint area
    Area,
    /// Number of parts
    Count,
}

impl From<ObjectiveArg> for Objective {
    fn from(o: ObjectiveArg) -> Objective {
        match o {
            ObjectiveArg::Cost => Objective::Cost,
            ObjectiveArg::Area => Objective::Area,
            ObjectiveArg::Count => Objective::Count,
        }
    }
}

/// `--filter`: whether the design may add an LC post-filter.
#[derive(Clone, Copy, ValueEnum)]
enum FilterArg {
    /// Capacitors only
    Off,
    /// Design both, with and without a filter, and keep the better
    Auto,
    /// A design with a filter only
    On,
}

impl From<FilterArg> for FilterUse {
    fn from(f: FilterArg) -> FilterUse {
        match f {
            FilterArg::Off => FilterUse::Off,
            FilterArg::Auto => FilterUse::Auto,
            FilterArg::On => FilterUse::On,
        }
    }
}

#[derive(Parser)]
#[command(
    name = "ripplebank",
    version,
    about = "Choose and verify output capacitor banks for DC-DC converters against a ripple limit",
    long_about = None,
    after_help = "Without --scenario the bundled demo (invented data) is used.\n\
        Exit status: 0 done; 1 the answer is no (no design meets every limit, the bank fails);\n\
        2 invalid input or usage.\n\
        Results are a model: check voltage ratings, polarity and surge rules, the converter maker's\n\
        capacitance limit and loop stability, and verify on hardware."
)]
struct Cli {
    #[command(subcommand)]
    command: Cmd,
}

#[derive(clap::Args, Clone)]
struct Input {
    /// Scenario TOML (default: the bundled demo)
    #[arg(long, value_name = "F")]
    scenario: Option<PathBuf>,
    /// Parts catalog CSV (default: the scenario's `catalog`)
    #[arg(long, value_name = "F")]
    catalog: Option<PathBuf>,
    /// Inductor catalog CSV for a post-filter (default: the scenario's `[filter] inductors`,
    /// else the bundled demo when a filter is considered)
    #[arg(long, value_name = "F")]
    inductors: Option<PathBuf>,
}

#[derive(clap::Args, Clone)]
struct Output {
    /// Write the output files into DIR (bom.csv, report.json, report.html, SVG plots,
    /// bank.cir; tradeoff: tradeoff.csv, cost.svg, area.svg); other files there are kept
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Write one JSON document to stdout
    #[arg(long)]
    json: bool,
    /// Keep the text report to the answer: no unused parts, no per-part limit rows
    #[arg(long)]
    quiet: bool,
}

#[derive(Subcommand)]
enum Cmd {
    /// Find the cheapest (or smallest, or fewest) bank that meets the target
    Design {
        #[command(flatten)]
        input: Input,
        /// What to minimise (default: the scenario's selection.objective)
        #[arg(long, value_enum, ignore_case = true)]
        objective: Option<ObjectiveArg>,
        /// Never use this part or inductor (repeatable)
        #[arg(long, value_name = "PART")]
        exclude: Vec<String>,
        /// Whether to add an LC post-filter (default: the scenario's `[filter] use`, else off)
        #[arg(long, value_enum, ignore_case = true)]
        filter: Option<FilterArg>,
        #[command(flatten)]
        output: Output,
    },
    /// Evaluate a given bank against the target and every limit
    #[command(group(clap::ArgGroup::new("which_bank").required(true).args(["bank", "bom"])))]
    Assess {
        /// The bank as PART=N,PART=N (with a filter: the converter-side bank)
        #[arg(long)]
        bank: Option<String>,
        /// The design as a bill of materials CSV (columns part, count; optional position:
        /// converter, inductor, load, damping, with the damping resistor as a row `R 0R22`)
        #[arg(long, value_name = "F")]
        bom: Option<PathBuf>,
        /// The filter inductor from the inductor catalog; N equal inductors in parallel (default 1)
        #[arg(long, value_name = "PART[=N]")]
        inductor: Option<String>,
        /// The filter's load-side bank as PART=N,PART=N
        #[arg(long, value_name = "PART=N,...")]
        load_bank: Option<String>,
        /// The damping leg across the load-side bank: a resistor (0R22, 220m) in series with
        /// N capacitors PART (default 1)
        #[arg(long, value_name = "R,PART[=N]")]
        damping: Option<String>,
        /// The corner to judge the bank at (worst: the whole corner region)
        #[arg(long, value_enum, ignore_case = true, default_value_t = NamedCorner::Worst)]
        corner: NamedCorner,
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        output: Output,
    },
    /// Cost, area and count against the ripple target
    Tradeoff {
        #[command(flatten)]
        input: Input,
        /// Tightest ripple target, V (default: the lowest reachable)
        #[arg(long, value_name = "V")]
        from: Option<String>,
        /// Loosest ripple target, V (default: the converter alone if it has internal capacitance, else 10x the target)
        #[arg(long, value_name = "V")]
        to: Option<String>,
        /// Number of targets (the scenario's own target is added when it is not one of them)
        #[arg(long, default_value_t = 8)]
        points: usize,
        /// Whether to add an LC post-filter (default: the scenario's `[filter] use`, else off)
        #[arg(long, value_enum, ignore_case = true)]
        filter: Option<FilterArg>,
        #[command(flatten)]
        output: Output,
    },
    /// Replace obsolete or dropped parts in a bill of materials with the fewest changes
    Rework {
        /// The current bill of materials (columns part, count)
        #[arg(long, value_name = "F")]
        bom: PathBuf,
        /// A part to replace (repeatable)
        #[arg(long, value_name = "PART")]
        drop: Vec<String>,
        #[command(flatten)]
        input: Input,
        #[command(flatten)]
        output: Output,
    },
    /// Check a scenario and a catalog; list the usable parts, and every other part with its reason
    Validate {
        #[command(flatten)]
        input: Input,
        /// Write one JSON document to stdout
        #[arg(long)]
        json: bool,
    },
}

fn common(input: Input, output: Output) -> Common {
    Common {
        scenario: input.scenario,
        catalog: input.catalog,
        inductors: input.inductors,
        filter: None,
        out: output.out,
        json: output.json,
        quiet: output.quiet,
    }
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let result = match cli.command {
        Cmd::Design {
            input,
            objective,
            exclude,
            filter,
            output,
        } => commands::design(
            &Common {
                filter: filter.map(FilterUse::from),
                ..common(input, output)
            },
            objective.map(Objective::from),
            &exclude,
        ),
        Cmd::Assess {
            bank,
            bom,
            inductor,
            load_bank,
            damping,
            corner,
            input,
            output,
        } => commands::assess(
            &common(input, output),
            bank.as_deref(),
            bom.as_deref(),
            &AssessOptions { corner },
            &FilterArgs {
                inductor: inductor.as_deref(),
                load_bank: load_bank.as_deref(),
                damping: damping.as_deref(),
            },
        ),
        Cmd::Tradeoff {
            input,
            from,
            to,
            points,
            filter,
            output,
        } => commands::tradeoff(
            &Common {
                filter: filter.map(FilterUse::from),
                ..common(input, output)
            },
            from.as_deref(),
            to.as_deref(),
            points,
        ),
        Cmd::Rework {
            bom,
            drop,
            input,
            output,
        } => commands::rework(&common(input, output), &bom, &drop),
        Cmd::Validate { input, json } => commands::validate(&Common {
            scenario: input.scenario,
            catalog: input.catalog,
            inductors: input.inductors,
            filter: None,
            out: None,
            json,
            quiet: false,
        }),
    };
    match result {
        Ok(CommandOutput { stdout, code }) => {
            // A closed stdout (a pipe into `head`) is not an error.
            let mut out = std::io::stdout().lock();
            match out.write_all(stdout.as_bytes()).and_then(|()| out.flush()) {
                Ok(()) => ExitCode::from(code),
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => ExitCode::from(code),
                Err(e) => {
                    eprintln!("ripplebank: error: cannot write to stdout: {e}");
                    ExitCode::from(2)
                }
            }
        }
        Err(e) => {
            eprintln!("ripplebank: error: {e:#}");
            ExitCode::from(2)
        }
    }
}
