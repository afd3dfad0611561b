//! The `rxnet` command: parses arguments, runs one library call per command, prints the
//! report, and turns errors into a message and an exit code:
//! 0 success, 1 the analysis found errors (or a run failed), 2 the input cannot be used.

mod cli;

/// mimalloc instead of the system allocator: a sweep loads and solves thousands of small
/// studies on every core, and glibc's malloc/free took about 14 % of that time (perf), much of
/// it in contention between the threads.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() {
    std::process::exit(cli::output::exit_code_of(cli::main));
}
