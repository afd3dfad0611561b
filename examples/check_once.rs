//! Times the consistency check of one study, without the process start-up and the YAML load:
//! `cargo run --release --example check_once -- STUDY.yaml [REPEATS]`.
//!
//! Prints the wall time of `analysis::findings` (what `run` pays before it reports) and of
//! `analysis::check` (what `rxnet check` builds), the best of REPEATS (default 3) each.

/// The allocator of the `rxnet` binary (src/main.rs), so that the times printed here are
/// those of the command: glibc's malloc gives other times (the packed rate arrays and the
/// exact check both allocate).
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

use std::time::Instant;

fn main() {
    let mut args = std::env::args().skip(1);
    let Some(path) = args.next() else {
        eprintln!("usage: check_once STUDY.yaml [REPEATS]");
        std::process::exit(2);
    };
    let repeats: usize = args.next().and_then(|s| s.parse().ok()).unwrap_or(3);
    let net = match rxnet::load_file(std::path::Path::new(&path), &[]) {
        Ok(n) => n,
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(2);
        }
    };
    let best = |f: &dyn Fn() -> usize| {
        (0..repeats.max(1))
            .map(|_| {
                let t = Instant::now();
                let n = f();
                (t.elapsed().as_secs_f64(), n)
            })
            .fold((f64::INFINITY, 0), |a, b| if b.0 < a.0 { b } else { a })
    };
    let (t, n) = best(&|| rxnet::analysis::findings(&net).len());
    println!("findings {t:.4} s ({n} findings)");
    let (t, n) = best(&|| rxnet::analysis::check(&net).dependent.len());
    println!("check    {t:.4} s ({n} dependent reactions)");
}
