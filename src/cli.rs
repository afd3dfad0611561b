//! Command-line interface: one function per command. Each returns the exit code.

use clap::{Parser, Subcommand, ValueEnum};
use rxnet::solve::{self, Points, SolveOptions};
use rxnet::{Override, analysis, load_file, metrics, reactor, report};
use std::io::Write;
use std::path::PathBuf;

/// Exit code: the study file cannot be read or is invalid (also clap's usage errors).
pub const EXIT_INVALID: i32 = 2;
/// Exit code: the analysis found errors, or a computation failed.
pub const EXIT_FINDINGS: i32 = 1;

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
enum Format {
    Text,
    Json,
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
enum RunFormat {
    Table,
    Csv,
    Json,
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
enum SweepFormat {
    Csv,
    Json,
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
enum GenReactor {
    Pfr,
    Batch,
}

#[derive(Subcommand)]
enum Command {
    /// Simulate the study's reactor: outlet, conversion, yields, selectivities.
    Run(RunArgs),
    /// Write a generated, atom-consistent mass-action network (for benchmarks) to standard output.
    Generate {
        #[arg(long, default_value_t = 100)]
        species: usize,
        #[arg(long, default_value_t = 300)]
        reactions: usize,
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Reactor of the generated study.
        #[arg(long, value_enum, default_value_t = GenReactor::Pfr)]
        reactor: GenReactor,
    },
    /// Find the reactor size (default) or other inputs that maximise a target.
    Optimize {
        file: PathBuf,
        /// B (outlet amount), yield:B, selectivity:B/C or conversion.
        #[arg(long, value_name = "TARGET")]
        maximize: String,
        /// Input to vary: `size` (default) or a --set path such as feed.T; may repeat, each with --bounds.
        #[arg(long, value_name = "VAR")]
        over: Vec<String>,
        /// Bounds of the matching --over, e.g. --bounds "300 K" "400 K"; for the size, in SI
        /// (m3, kg or s) or with a unit. Default for the size: 0 to the study's size.
        #[arg(long, num_args = 2, value_names = ["LO", "HI"], allow_hyphen_values = true)]
        bounds: Vec<String>,
        /// Only accept points where the key conversion is at least this.
        #[arg(long)]
        min_conversion: Option<f64>,
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
        #[arg(long)]
        rtol: Option<f64>,
        #[arg(long = "set", value_name = "PATH=VALUE")]
        set: Vec<Override>,
    },
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
        #[arg(long)]
        rtol: Option<f64>,
        #[arg(long = "set", value_name = "PATH=VALUE")]
        set: Vec<Override>,
    },
    /// Screen studies and reactor types side by side, ranked by a target.
    Compare {
        #[arg(required = true)]
        files: Vec<PathBuf>,
        /// Reactor types to screen each study in, e.g. pfr,cstr,batch (default: as in each file).
        #[arg(long, value_delimiter = ',')]
        reactors: Vec<String>,
        /// Rank by this target (default: yield of the desired product).
        #[arg(long, value_name = "TARGET")]
        rank_by: Option<String>,
        /// Resize every entry to reach this key conversion first (compare at equal conversion).
        #[arg(long)]
        at_conversion: Option<f64>,
        /// Also find the size (up to the study's) that maximises this target.
        #[arg(long, value_name = "TARGET")]
        optimum: Option<String>,
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
        #[arg(long)]
        rtol: Option<f64>,
    },
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

/// Print to stdout; a closed pipe (`rxnet ... | head`) ends quietly.
pub fn emit(text: &str) -> bool {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => true,
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => false,
        Err(e) => {
            eprintln!("rxnet: cannot write the output: {e}");
            false
        }
    }
}

pub fn json<T: serde::Serialize>(v: &T) -> String {
    let mut s = serde_json::to_string_pretty(v).expect("report types serialize");
    s.push('\n');
    s
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
        Command::Check { file, format, set } => check(&file, format, &set),
        Command::Table { file, format, set } => table(&file, format, &set),
        Command::Run(args) => run(&args),
        Command::Generate {
            species,
            reactions,
            seed,
            reactor,
        } => generate(species, reactions, seed, reactor),
        Command::Optimize {
            file,
            maximize,
            over,
            bounds,
            min_conversion,
            format,
            rtol,
            set,
        } => crate::studies_cli::optimize(
            &file,
            &maximize,
            &over,
            &bounds,
            min_conversion,
            format == Format::Json,
            rtol,
            &set,
        ),
        Command::Sweep {
            file,
            vary,
            out,
            format,
            shard,
            plot,
            plot_target,
            rtol,
            set,
        } => crate::studies_cli::sweep(&crate::studies_cli::SweepArgs {
            file,
            vary,
            out,
            json: format == SweepFormat::Json,
            shard,
            plot,
            plot_target,
            rtol,
            set,
        }),
        Command::Compare {
            files,
            reactors,
            rank_by,
            at_conversion,
            optimum,
            format,
            rtol,
        } => crate::studies_cli::compare(
            &files,
            &reactors,
            rank_by.as_deref(),
            at_conversion,
            optimum.as_deref(),
            format == Format::Json,
            rtol,
        ),
    }
}

pub fn load(file: &std::path::Path, set: &[Override]) -> Result<rxnet::Network, i32> {
    load_file(file, set).map_err(|e| {
        eprintln!("error: {e}");
        EXIT_INVALID
    })
}

/// `rxnet check FILE`: exit 0 when no error finding, 1 with error findings, 2 invalid file.
fn check(file: &std::path::Path, format: Format, set: &[Override]) -> i32 {
    let net = match load(file, set) {
        Ok(n) => n,
        Err(code) => return code,
    };
    let c = analysis::check(&net);
    let text = match format {
        Format::Text => report::check_text(&c),
        Format::Json => json(&c),
    };
    emit(&text);
    if c.has_errors() { EXIT_FINDINGS } else { 0 }
}

/// `rxnet table FILE`.
fn table(file: &std::path::Path, format: Format, set: &[Override]) -> i32 {
    let net = match load(file, set) {
        Ok(n) => n,
        Err(code) => return code,
    };
    let t = analysis::table::build(&net);
    let text = match format {
        Format::Text => report::table_text(&t),
        Format::Json => json(&t),
    };
    emit(&text);
    0
}

/// Arguments of `rxnet run`.
#[derive(clap::Args)]
struct RunArgs {
    file: PathBuf,
    #[arg(long, value_enum, default_value_t = RunFormat::Table)]
    format: RunFormat,
    /// Write the profile along the reactor to this CSV file.
    #[arg(long, value_name = "FILE.csv")]
    profile: Option<PathBuf>,
    /// Number of evenly spaced profile points, inlet and outlet included (default 51 when a profile is asked).
    #[arg(long)]
    points: Option<usize>,
    /// Report every internal step of the integrator instead of even points.
    #[arg(long, conflicts_with = "points")]
    steps: bool,
    /// Relative tolerance of the integration (default 1e-8).
    #[arg(long)]
    rtol: Option<f64>,
    /// Absolute tolerance on the species state, in mol/s (flow) or mol (batch); default 1e-12 of the total feed.
    #[arg(long)]
    atol: Option<f64>,
    /// Also print the element balance closure.
    #[arg(long, short)]
    verbose: bool,
    /// Draw the species profile along the reactor to this SVG file.
    #[arg(long, value_name = "FILE.svg")]
    plot: Option<PathBuf>,
    #[arg(long = "set", value_name = "PATH=VALUE")]
    set: Vec<Override>,
}

/// Write a file atomically: a temporary file beside it, then a rename, so an interrupted run
/// never leaves a half-written file that looks complete.
pub fn write_atomic(path: &std::path::Path, text: &str) -> std::io::Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(std::path::Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    std::fs::write(&tmp, text)?;
    std::fs::rename(&tmp, path).inspect_err(|_| {
        let _ = std::fs::remove_file(&tmp);
    })
}

pub fn check_tolerance(name: &str, v: Option<f64>, upper: f64) -> Result<(), String> {
    match v {
        Some(x) if !(x > 0.0 && x < upper) => Err(format!(
            "--{name} must be a positive number below {upper}, got {x}"
        )),
        _ => Ok(()),
    }
}

/// The solve of `rxnet run`: whether a profile is wanted, the balance and the simulation, or
/// the exit code and the message to print.
fn solve_run(
    net: &rxnet::model::Network,
    a: &RunArgs,
) -> Result<(bool, reactor::Balance, solve::Simulation), (i32, String)> {
    let want_profile = a.profile.is_some()
        || a.plot.is_some()
        || a.format == RunFormat::Csv
        || a.points.is_some()
        || a.steps;
    let points = if a.steps {
        Points::Steps
    } else if want_profile {
        Points::Even(a.points.unwrap_or(if a.plot.is_some() { 201 } else { 51 }))
    } else {
        Points::End
    };
    let opts = SolveOptions {
        rtol: a.rtol,
        atol: a.atol,
        points,
        ..Default::default()
    };
    let balance = match reactor::Balance::new(net) {
        Ok(b) => b,
        Err(m) => return Err((EXIT_INVALID, format!("error: {}: {m}", a.file.display()))),
    };
    let sim = match solve::simulate_with(net, &balance, &opts) {
        Ok(s) => s,
        Err(e) => return Err((EXIT_FINDINGS, format!("error: {}: {e}", a.file.display()))),
    };
    Ok((want_profile, balance, sim))
}

/// `rxnet run FILE`: exit 0 on success, 1 when the solve fails, 2 for invalid input.
fn run(a: &RunArgs) -> i32 {
    if let Err(m) = check_tolerance("rtol", a.rtol, 1.0)
        .and_then(|_| check_tolerance("atol", a.atol, f64::INFINITY))
    {
        eprintln!("error: {m}");
        return EXIT_INVALID;
    }
    if let Some(n) = a.points
        && !(2..=1_000_000).contains(&n)
    {
        eprintln!("error: --points must be between 2 and 1000000, got {n}");
        return EXIT_INVALID;
    }
    let net = match load(&a.file, &a.set) {
        Ok(n) => n,
        Err(code) => return code,
    };
    // The consistency check and the solve do not depend on each other, so the check runs on a
    // second thread while the reactor is solved; its error findings still decide the outcome
    // (a network with error findings gets no result, whatever the solve did).
    let (analysis, solved) = std::thread::scope(|scope| {
        let checking = scope.spawn(|| analysis::check(&net));
        let solved = solve_run(&net, a);
        let analysis = checking
            .join()
            .unwrap_or_else(|p| std::panic::resume_unwind(p));
        (analysis, solved)
    });
    if analysis.has_errors() {
        eprintln!(
            "error: {}: the network has error findings; run `rxnet check` on it:",
            a.file.display()
        );
        for f in analysis
            .findings
            .iter()
            .filter(|f| f.severity == analysis::Severity::Error)
        {
            eprintln!("  {}", f.message);
        }
        return EXIT_FINDINGS;
    }
    let (want_profile, balance, sim) = match solved {
        Ok(s) => s,
        Err((code, message)) => {
            eprintln!("{message}");
            return code;
        }
    };
    let m = metrics::compute(&net, sim.outlet());
    let rep = report::run::build(
        &net,
        &balance,
        &sim,
        &m,
        want_profile && a.format == RunFormat::Json,
    );
    if let Some(path) = &a.profile
        && let Err(e) = write_atomic(path, &report::run::profile_csv(&net, &sim))
    {
        eprintln!("error: cannot write {}: {e}", path.display());
        return EXIT_FINDINGS;
    }
    if let Some(path) = &a.plot {
        let svg = crate::studies_cli::profile_plot(&net, &sim);
        if let Err(e) = svg.and_then(|s| write_atomic(path, &s).map_err(|e| e.to_string())) {
            eprintln!("error: cannot write {}: {e}", path.display());
            return EXIT_FINDINGS;
        }
    }
    let text = match a.format {
        RunFormat::Table => {
            let mut t = report::run::text(&rep, a.verbose);
            if net.reactions.iter().any(|r| r.dh.is_some_and(|h| h < 0.0)) {
                t.push_str("caution: exothermic reactions; this isothermal result assumes the heat is removed. Assess runaway and relief under local codes.\n");
            }
            t
        }
        RunFormat::Csv => report::run::profile_csv(&net, &sim),
        RunFormat::Json => json(&rep),
    };
    emit(&text);
    0
}

/// `rxnet generate`: a generated study on standard output; exit 2 for an impossible request.
fn generate(species: usize, reactions: usize, seed: u64, reactor: GenReactor) -> i32 {
    let spec = rxnet::generate::GeneratorSpec {
        species,
        reactions,
        seed,
        reactor: match reactor {
            GenReactor::Pfr => rxnet::generate::GeneratedReactor::Pfr,
            GenReactor::Batch => rxnet::generate::GeneratedReactor::Batch,
        },
        ..Default::default()
    };
    match rxnet::generate::generate_study(&spec) {
        Ok(text) => {
            emit(&text);
            0
        }
        Err(m) => {
            eprintln!("error: {m}");
            EXIT_INVALID
        }
    }
}
