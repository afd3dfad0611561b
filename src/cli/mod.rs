//! Command-line interface: the clap definitions and the dispatch, one file per command
//! (each a documented function that returns the exit code), `input` for what every command
//! reads, `output` for what every command writes and the exit codes.
//!
//! Exit codes: 0 success, 1 the analysis found errors (or a computation failed, or the output
//! could not be written), 2 the input cannot be used (also clap's usage errors, and an output
//! path refused before the work). A reader that quits (`| head`) does not change the code.

mod check;
mod compare;
mod fit;
mod generate;
mod input;
mod merge;
mod optimize;
pub mod output;
mod run;
mod runaway;
mod sensitivity;
mod size;
mod sweep;
mod table;

use clap::{Parser, Subcommand, ValueEnum};
use output::EXIT_INVALID;
use rxnet::Override;
use rxnet::solve::SteadyStateChoice;
use std::path::PathBuf;

#[derive(Parser)]
#[command(
    name = "rxnet",
    version,
    about = "Check, simulate, size and screen reactors for multiple-reaction networks"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
pub enum Format {
    Text,
    Json,
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
enum SweepFormat {
    Csv,
    Json,
}

#[derive(Subcommand)]
enum Command {
    /// Simulate the study's reactor: outlet, conversion, yields, selectivities.
    Run(run::RunArgs),
    /// The reactor size (volume, catalyst mass or batch time) that reaches a key conversion.
    Size(size::SizeArgs),
    /// Write a generated, atom-consistent mass-action network (for benchmarks) to standard output.
    Generate {
        #[arg(long, default_value_t = 100)]
        species: usize,
        #[arg(long, default_value_t = 300)]
        reactions: usize,
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Reactor of the generated study.
        #[arg(long, value_enum, default_value_t = generate::GenReactor::Pfr)]
        reactor: generate::GenReactor,
    },
    /// Find the reactor size (default) or other inputs that maximise a target.
    Optimize {
        file: PathBuf,
        /// B (outlet amount), yield:B, selectivity:B/C (over one product), selectivity:B/all
        /// (over all other products) or conversion.
        #[arg(long, value_name = "TARGET")]
        maximize: String,
        /// Input to vary: `size` (default) or a --set path such as feed.T; may repeat, each with
        /// --bounds (`size` may be combined with other inputs).
        #[arg(long, value_name = "VAR")]
        over: Vec<String>,
        /// Bounds of the matching --over, each with its unit, e.g. --bounds "300 K" "400 K" or
        /// --bounds 0 "50 L" (a bare number is refused for a dimensional input, except 0).
        /// Default for the size alone: 0 to the study's size.
        #[arg(long, num_args = 2, value_names = ["LO", "HI"], allow_hyphen_values = true)]
        bounds: Vec<String>,
        /// Only accept points where the key conversion is at least this (keeps the size away
        /// from zero when a yield or selectivity is best in a vanishing reactor).
        #[arg(long)]
        min_conversion: Option<f64>,
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
        #[command(flatten)]
        solver: SolverFlags,
        #[arg(long = "set", value_name = "PATH=VALUE")]
        set: Vec<Override>,
    },
    /// The runaway boundary over one input: hot spot and its normalised sensitivity.
    Runaway(runaway::RunawayArgs),
    /// How a target (yield, selectivity, conversion, an outlet amount) depends on every
    /// parameter of the study: normalised local sensitivities, ranked.
    Sensitivity(sensitivity::SensitivityArgs),
    /// Run a full grid over one or more inputs (in parallel).
    Sweep {
        file: PathBuf,
        /// PATH=LO:HI:N (or PATH=LO:HI:N:log), e.g. "feed.T=300 K:400 K:11"; may repeat.
        #[arg(long, value_name = "PATH=LO:HI:N", required = true)]
        vary: Vec<String>,
        /// Write the CSV here (atomically) instead of standard output.
        #[arg(long, value_name = "FILE.csv")]
        out: Option<PathBuf>,
        #[arg(long, value_enum, default_value_t = SweepFormat::Csv)]
        format: SweepFormat,
        /// Run only shard K of N (every N-th point from point K−1), for cluster job arrays.
        #[arg(long, value_name = "K/N")]
        shard: Option<String>,
        /// Draw the result to this SVG file: a line for one input, a heat map for two.
        #[arg(long, value_name = "FILE.svg")]
        plot: Option<PathBuf>,
        /// Quantity to plot (default: yield of the desired product, else conversion).
        #[arg(long, value_name = "TARGET")]
        plot_target: Option<String>,
        #[command(flatten)]
        solver: SolverFlags,
        #[arg(long = "set", value_name = "PATH=VALUE")]
        set: Vec<Override>,
    },
    /// Put the shards of a sweep (`sweep --shard K/N`) back into the unsharded file, checked.
    Merge(merge::MergeArgs),
    /// Screen studies and reactor types side by side, ranked by a target.
    Compare {
        #[arg(required = true)]
        files: Vec<PathBuf>,
        /// Reactor types to screen each study in, e.g. pfr,cstr,batch (default: as in each file).
        #[arg(long, value_delimiter = ',')]
        reactors: Vec<String>,
        /// Heat models to screen each study with: isothermal, adiabatic, as-given (default: as
        /// given in each file), e.g. isothermal,adiabatic,as-given
        #[arg(long, value_delimiter = ',', value_name = "MODELS")]
        heat: Vec<String>,
        /// Rank by this target (default: yield of the desired product).
        #[arg(long, value_name = "TARGET")]
        rank_by: Option<String>,
        /// Resize every entry to reach this key conversion first (compare at equal conversion).
        #[arg(long)]
        at_conversion: Option<f64>,
        /// Also find the size (up to the study's) that maximises this target.
        #[arg(long, value_name = "TARGET")]
        optimum: Option<String>,
        /// With --optimum: only sizes where the key conversion is at least this.
        #[arg(long)]
        min_conversion: Option<f64>,
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
        #[command(flatten)]
        solver: SolverFlags,
        /// Change a value of every study, PATH=VALUE (e.g. feed.T="350 K", to screen at one
        /// temperature or size); may repeat.
        #[arg(long = "set", value_name = "PATH=VALUE")]
        set: Vec<Override>,
    },
    /// Estimate values of the study from measured data (several studies: rank the candidates).
    Fit(fit::FitArgs),
    /// Check a network: atom balances, independent reactions, equilibrium consistency, graph.
    Check {
        file: PathBuf,
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
        /// Change a value of the study, PATH=VALUE (e.g. feed.T="350 K"); may repeat.
        #[arg(long = "set", value_name = "PATH=VALUE")]
        set: Vec<Override>,
    },
    /// The stoichiometric table of the feed in extents of reaction.
    Table {
        file: PathBuf,
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
        #[arg(long = "set", value_name = "PATH=VALUE")]
        set: Vec<Override>,
    },
}

/// The solver flags of the design commands (size, optimize, sweep, compare).
#[derive(clap::Args)]
struct SolverFlags {
    /// Relative tolerance of every integration (default: the study's `solver.rtol`, else 1e-8).
    #[arg(long)]
    rtol: Option<f64>,
    /// CSTR with several steady states: which one to use, `lowest` (default) or `highest`
    /// conversion of the key, or a number from 1 (as --set solver.steady_state=WHICH).
    #[arg(long, value_name = "WHICH")]
    steady_state: Option<SteadyStateChoice>,
}

pub fn main() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { EXIT_INVALID } else { 0 };
            let _ = e.print();
            return code;
        }
    };
    match cli.command {
        Command::Check { file, format, set } => check::check(&file, format, &set),
        Command::Table { file, format, set } => table::table(&file, format, &set),
        Command::Run(args) => run::run(&args),
        Command::Merge(args) => merge::merge(&args),
        Command::Fit(args) => fit::fit(&args),
        Command::Size(args) => size::size(&args),
        Command::Runaway(args) => runaway::runaway(&args),
        Command::Sensitivity(args) => sensitivity::run(&args),
        Command::Generate {
            species,
            reactions,
            seed,
            reactor,
        } => generate::generate(species, reactions, seed, reactor),
        Command::Optimize {
            file,
            maximize,
            over,
            bounds,
            min_conversion,
            format,
            solver,
            set,
        } => optimize::optimize(
            &file,
            &maximize,
            &over,
            &bounds,
            min_conversion,
            format == Format::Json,
            solver.rtol,
            &with_steady_state(set, solver.steady_state),
        ),
        Command::Sweep {
            file,
            vary,
            out,
            format,
            shard,
            plot,
            plot_target,
            solver,
            set,
        } => sweep::sweep(&sweep::SweepArgs {
            file,
            vary,
            out,
            json: format == SweepFormat::Json,
            shard,
            plot,
            plot_target,
            rtol: solver.rtol,
            set: with_steady_state(set, solver.steady_state),
        }),
        Command::Compare {
            files,
            reactors,
            heat,
            rank_by,
            at_conversion,
            optimum,
            min_conversion,
            format,
            solver,
            set,
        } => compare::compare(
            &files,
            &set,
            &reactors,
            &heat,
            rank_by.as_deref(),
            at_conversion,
            optimum.as_deref(),
            min_conversion,
            format == Format::Json,
            solver.rtol,
            solver.steady_state,
        ),
    }
}

/// `--steady-state WHICH` as the override `solver.steady_state=WHICH`, so that the study's own
/// check of the key applies and every solve of the study follows it.
fn with_steady_state(mut set: Vec<Override>, choice: Option<SteadyStateChoice>) -> Vec<Override> {
    if let Some(c) = choice {
        set.push(Override {
            path: "solver.steady_state".into(),
            value: c.to_string(),
        });
    }
    set
}
