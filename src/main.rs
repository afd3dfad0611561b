//! The `rxnet` command: parses arguments, runs one library call per command, prints the
//! report, and turns errors into a message and an exit code:
//! 0 success, 1 the analysis found errors (or a run failed), 2 the input cannot be used.

mod cli;
mod studies_cli;

fn main() {
    std::process::exit(cli::main());
}
