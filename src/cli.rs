//! Command-line interface: one function per command. Each returns the exit code.

use clap::{Parser, Subcommand, ValueEnum};
use rxnet::{analysis, load_file, report, Override};
use std::io::Write;
use std::path::PathBuf;

/// Exit code: the study file cannot be read or is invalid (also clap's usage errors).
pub const EXIT_INVALID: i32 = 2;
/// Exit code: the analysis found errors, or a computation failed.
pub const EXIT_FINDINGS: i32 = 1;

#[derive(Parser)]
#[command(name = "rxnet", version, about = "Check, simulate, size and screen reactors for multiple-reaction networks")]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Clone, Copy, ValueEnum, PartialEq, Eq)]
enum Format {
    Text,
    Json,
}

#[derive(Subcommand)]
enum Command {
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
fn emit(text: &str) -> bool {
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

fn json<T: serde::Serialize>(v: &T) -> String {
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
    }
}

fn load(file: &std::path::Path, set: &[Override]) -> Result<rxnet::Network, i32> {
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
    if c.has_errors() {
        EXIT_FINDINGS
    } else {
        0
    }
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
