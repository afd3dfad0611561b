//! Solve one study once and print the wall time, solver statistics or the error: for sizes
//! too slow for repeated benchmark samples.
//!
//! ```text
//! cargo run --release --example solve_once -- FILE.yaml [dense|sparse|auto] [rtol] [atol]
//! cargo run --release --example solve_once -- gen:N:R[:SEED] [dense|sparse|auto]
//! REPEAT=50 cargo run --release --example solve_once -- FILE.yaml   # min and median of 50 more
//! ```
//!
//! `gen:N:R` generates the study in memory (rxnet::generate, liquid PFR).

/// The allocator of the `rxnet` binary (src/main.rs), so that the times printed here are
/// those of the command: glibc's malloc gives other times (the packed rate arrays and the
/// exact check both allocate).
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

use std::time::Instant;

use rxnet::generate::{GeneratorSpec, generate_study};
use rxnet::solve::{SolveOptions, ode::LinearAlgebra, simulate};

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(src) = args.first() else {
        eprintln!("usage: solve_once FILE.yaml|gen:N:R[:SEED] [dense|sparse|auto] [rtol] [atol]");
        std::process::exit(2);
    };
    let t0 = Instant::now();
    let text = if let Some(rest) = src.strip_prefix("gen:") {
        let v: Vec<u64> = rest.split(':').filter_map(|s| s.parse().ok()).collect();
        let spec = GeneratorSpec {
            species: v.first().copied().unwrap_or(100) as usize,
            reactions: v.get(1).copied().unwrap_or(300) as usize,
            seed: v.get(2).copied().unwrap_or(1),
            ..GeneratorSpec::default()
        };
        generate_study(&spec).unwrap_or_else(|e| {
            eprintln!("error: {e}");
            std::process::exit(2)
        })
    } else {
        std::fs::read_to_string(src).unwrap_or_else(|e| {
            eprintln!("error: {src}: {e}");
            std::process::exit(2)
        })
    };
    let t_gen = t0.elapsed();
    let t0 = Instant::now();
    let net = rxnet::load_str(&text, src, &[]).unwrap_or_else(|e| {
        eprintln!("error: {e}");
        std::process::exit(2)
    });
    let t_load = t0.elapsed();
    let la = match args.get(1).map(String::as_str) {
        Some("dense") => LinearAlgebra::Dense,
        Some("sparse") => LinearAlgebra::Sparse,
        Some("krylov") => LinearAlgebra::Krylov,
        _ => LinearAlgebra::Auto,
    };
    let opts = SolveOptions {
        rtol: args.get(2).and_then(|s| s.parse().ok()),
        atol: args.get(3).and_then(|s| s.parse().ok()),
        linear_algebra: la,
        ..SolveOptions::default()
    };
    let t0 = Instant::now();
    let res = simulate(&net, &opts);
    let t_sim = t0.elapsed();
    // REPEAT=N solves N more times in this process and prints the minimum and median: the
    // minimum of many in-process repeats is the figure least moved by other load on the machine.
    if let Some(k) = std::env::var("REPEAT")
        .ok()
        .and_then(|s| s.parse::<usize>().ok())
    {
        let mut times: Vec<f64> = (0..k)
            .map(|_| {
                let t = Instant::now();
                let _ = simulate(&net, &opts);
                t.elapsed().as_secs_f64()
            })
            .collect();
        times.sort_by(f64::total_cmp);
        if let (Some(min), Some(med)) = (times.first(), times.get(times.len() / 2)) {
            println!("repeat {k}: min {min:.6} s, median {med:.6} s");
        }
    }
    println!(
        "{src}: {} species, {} reactions; text {:.3} s, load {:.3} s, simulate ({la:?}) {:.4} s",
        net.species.len(),
        net.reactions.len(),
        t_gen.as_secs_f64(),
        t_load.as_secs_f64(),
        t_sim.as_secs_f64()
    );
    match res {
        Ok(s) => println!(
            "ok: {} steps, {} rhs, {} jac, {} LU; {} linear solves, {} GMRES iterations, {} fallbacks; outlet[key] = {:.6e}",
            s.stats.steps,
            s.stats.rhs_evals,
            s.stats.jac_evals,
            s.stats.lu_factorizations,
            s.stats.linear_solves,
            s.stats.krylov_iterations,
            s.stats.krylov_fallbacks,
            s.outlet()[net.key]
        ),
        Err(e) => println!("failed: {e}"),
    }
}
