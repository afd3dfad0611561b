//! Solver benchmarks (criterion). Run with
//!
//! ```text
//! cargo bench --bench solve                 # everything (a few minutes on 2 cores)
//! cargo bench --bench solve -- rhs          # one group
//! ```
//!
//! Groups:
//! - `bundled/NAME`: whole `simulate()` of each networks/*.yaml without error findings;
//! - `generated/NxR`: whole `simulate()` of generated liquid PFR studies (rxnet::generate,
//!   seed 1) at 100/300, 1000/3000 and 3000/10000, default options (Auto linear algebra:
//!   dense LU up to 150 states, Krylov above);
//! - `linear_algebra/NxR/{dense,sparse,krylov}`: the same solve with the linear algebra forced
//!   (100/300 and 300/900; 1000/3000 dense is measured once with examples/solve_once.rs);
//! - `rhs/NxR/...`: one evaluation of `Balance::rhs` against a plain loop over flat arrays
//!   doing the same mass-action rates and the same multiply-adds over the ν non-zeros, the
//!   scatter alone with the rates given, and one `Balance::jacobian`;
//! - `small_pfr/...`: throughput of many solves of a small liquid PFR (the bundled diene
//!   hydrogenation, 5 species, 2 reactions), single thread, with and without re-building the
//!   balance, and on two threads (std::thread::scope; rayon is not a dependency of rxnet).
//!
//! Sample sizes and measurement times are kept small: the machine is shared.

use std::hint::black_box;
use std::time::Duration;

use criterion::{BenchmarkId, Criterion, Throughput, criterion_group, criterion_main};
use rxnet::generate::{GeneratorSpec, generate_study};
use rxnet::reactor::Balance;
use rxnet::solve::{SolveOptions, ode::LinearAlgebra, simulate, simulate_with};
use rxnet::{Network, load_str};

fn generated(n: usize, r: usize) -> Network {
    let spec = GeneratorSpec {
        species: n,
        reactions: r,
        seed: 1,
        ..GeneratorSpec::default()
    };
    let text = generate_study(&spec).expect("valid spec");
    load_str(&text, &format!("gen_{n}x{r}"), &[]).expect("generated study loads")
}

fn bundled() -> Vec<(String, Network)> {
    let dir = concat!(env!("CARGO_MANIFEST_DIR"), "/networks");
    let mut paths: Vec<_> = std::fs::read_dir(dir)
        .expect("networks/")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    paths.sort();
    paths
        .into_iter()
        .filter_map(|p| {
            let text = std::fs::read_to_string(&p).ok()?;
            let name = p.file_stem()?.to_string_lossy().into_owned();
            let net = load_str(&text, &name, &[]).ok()?;
            (!rxnet::analysis::check(&net).has_errors()).then_some((name, net))
        })
        .collect()
}

fn bench_bundled(c: &mut Criterion) {
    let mut g = c.benchmark_group("bundled");
    g.sample_size(20)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(1));
    for (name, net) in bundled() {
        let opts = SolveOptions::default();
        simulate(&net, &opts).expect("bundled study solves");
        g.bench_function(&name, |b| {
            b.iter(|| simulate(black_box(&net), &opts).unwrap())
        });
    }
    g.finish();
}

fn bench_generated(c: &mut Criterion) {
    let mut g = c.benchmark_group("generated");
    g.sample_size(10)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(3));
    for (n, r) in [(100, 300), (1000, 3000), (3000, 10000)] {
        let net = generated(n, r);
        let opts = SolveOptions::default();
        if let Err(e) = simulate(&net, &opts) {
            eprintln!("generated/{n}x{r}: not benchmarked, the solve fails: {e}");
            continue;
        }
        g.bench_function(format!("{n}x{r}"), |b| {
            b.iter(|| simulate(black_box(&net), &opts).unwrap())
        });
    }
    g.finish();
}

fn bench_linear_algebra(c: &mut Criterion) {
    let mut g = c.benchmark_group("linear_algebra");
    g.sample_size(10)
        .warm_up_time(Duration::from_millis(200))
        .measurement_time(Duration::from_secs(3));
    // 1000/3000 dense takes ~18 s per solve here: measured once with
    // `cargo run --release --example solve_once -- gen:1000:3000 dense` instead.
    for (n, r) in [(100, 300), (300, 900)] {
        let net = generated(n, r);
        for (label, la) in [
            ("dense", LinearAlgebra::Dense),
            ("sparse", LinearAlgebra::Sparse),
            ("krylov", LinearAlgebra::Krylov),
        ] {
            let opts = SolveOptions {
                linear_algebra: la,
                ..SolveOptions::default()
            };
            if let Err(e) = simulate(&net, &opts) {
                eprintln!("linear_algebra/{n}x{r}/{label}: not benchmarked, the solve fails: {e}");
                continue;
            }
            g.bench_function(BenchmarkId::new(format!("{n}x{r}"), label), |b| {
                b.iter(|| simulate(black_box(&net), &opts).unwrap())
            });
        }
    }
    g.finish();
}

/// Mass-action rates of `net` in flat arrays: the plain loop the balance is compared with.
struct Flat {
    k: Vec<f64>,
    k_rev: Vec<f64>,
    /// Per reaction, a range into `f_species`/`f_exp` (forward) and `b_species`/`b_exp`.
    f_start: Vec<usize>,
    f_species: Vec<usize>,
    f_exp: Vec<i32>,
    b_start: Vec<usize>,
    b_species: Vec<usize>,
    b_exp: Vec<i32>,
    /// ν non-zeros per reaction: range into `nu_species`/`nu_value`.
    nu_start: Vec<usize>,
    nu_species: Vec<usize>,
    nu_value: Vec<f64>,
    kappa: f64,
}

impl Flat {
    /// For liquid flow studies with integer orders (the generated ones): C = y/v0, σ = 1.
    fn new(net: &Network) -> Flat {
        let mut f = Flat {
            k: vec![],
            k_rev: vec![],
            f_start: vec![0],
            f_species: vec![],
            f_exp: vec![],
            b_start: vec![0],
            b_species: vec![],
            b_exp: vec![],
            nu_start: vec![0],
            nu_species: vec![],
            nu_value: vec![],
            kappa: 1.0 / net.feed.volumetric,
        };
        for r in &net.reactions {
            f.k.push(r.rate.k_ref);
            for &(j, a) in &r.rate.orders {
                f.f_species.push(j);
                f.f_exp.push(a as i32);
            }
            f.f_start.push(f.f_species.len());
            match &r.rate.equilibrium {
                Some(eq) => {
                    f.k_rev.push(r.rate.k_ref / eq.k_ref);
                    let mut ex: Vec<(usize, f64)> = r.rate.orders.clone();
                    for &(j, nu) in &r.net {
                        match ex.iter_mut().find(|(s, _)| *s == j) {
                            Some(e) => e.1 += nu,
                            None => ex.push((j, nu)),
                        }
                    }
                    for (j, e) in ex.into_iter().filter(|(_, e)| *e != 0.0) {
                        f.b_species.push(j);
                        f.b_exp.push(e as i32);
                    }
                }
                None => f.k_rev.push(0.0),
            }
            f.b_start.push(f.b_species.len());
            for &(j, v) in &r.net {
                f.nu_species.push(j);
                f.nu_value.push(v);
            }
            f.nu_start.push(f.nu_species.len());
        }
        f
    }

    fn rhs(&self, y: &[f64], c: &mut [f64], dydx: &mut [f64]) {
        for (cj, yj) in c.iter_mut().zip(y) {
            *cj = self.kappa * yj;
        }
        dydx.fill(0.0);
        for i in 0..self.k.len() {
            let mut pf = 1.0;
            for m in self.f_start[i]..self.f_start[i + 1] {
                pf *= c[self.f_species[m]].powi(self.f_exp[m]);
            }
            let mut pb = 1.0;
            for m in self.b_start[i]..self.b_start[i + 1] {
                pb *= c[self.b_species[m]].powi(self.b_exp[m]);
            }
            let r = self.k[i] * pf - self.k_rev[i] * pb;
            for m in self.nu_start[i]..self.nu_start[i + 1] {
                dydx[self.nu_species[m]] += self.nu_value[m] * r;
            }
        }
    }

    /// The multiply-adds over the ν non-zeros alone, rates given.
    fn scatter(&self, r: &[f64], dydx: &mut [f64]) {
        dydx.fill(0.0);
        for (i, ri) in r.iter().enumerate() {
            for m in self.nu_start[i]..self.nu_start[i + 1] {
                dydx[self.nu_species[m]] += self.nu_value[m] * ri;
            }
        }
    }
}

fn bench_rhs(c: &mut Criterion) {
    let mut g = c.benchmark_group("rhs");
    g.sample_size(20)
        .warm_up_time(Duration::from_millis(200))
        .measurement_time(Duration::from_secs(1));
    for (n, r) in [(100, 300), (1000, 3000), (3000, 10000)] {
        let net = generated(n, r);
        let bal = Balance::new(&net).expect("balance");
        let flat = Flat::new(&net);
        // A state with every species present: the feed plus 1e-3 of F_T0 of each species.
        let total = net.feed.total();
        let y: Vec<f64> = net.feed.amounts.iter().map(|a| a + 1e-3 * total).collect();
        let mut d1 = vec![0.0; n];
        let mut d2 = vec![0.0; n];
        let mut cbuf = vec![0.0; n];
        bal.rhs(&y, &mut d1);
        flat.rhs(&y, &mut cbuf, &mut d2);
        for (a, b) in d1.iter().zip(&d2) {
            assert!(
                (a - b).abs() <= 1e-9 * a.abs().max(b.abs()) + 1e-300,
                "plain loop disagrees with Balance::rhs: {a} vs {b}"
            );
        }
        let mut rates = Vec::new();
        bal.reaction_rates(0.0, &y, &mut rates);
        let id = format!("{n}x{r}");
        g.bench_function(BenchmarkId::new(&id, "Balance::rhs"), |b| {
            b.iter(|| bal.rhs(black_box(&y), &mut d1))
        });
        g.bench_function(BenchmarkId::new(&id, "plain_loop"), |b| {
            b.iter(|| flat.rhs(black_box(&y), &mut cbuf, &mut d2))
        });
        g.bench_function(BenchmarkId::new(&id, "scatter_only"), |b| {
            b.iter(|| flat.scatter(black_box(&rates), &mut d2))
        });
        let mut trip = Vec::new();
        g.bench_function(BenchmarkId::new(&id, "Balance::jacobian"), |b| {
            b.iter(|| {
                trip.clear();
                bal.jacobian(black_box(&y), &mut trip)
            })
        });
        // The same network with an energy balance (adiabatic, species Cp, ΔH per reaction):
        // k(T), K(T) per evaluation and the T row and column of the Jacobian.
        let hot = with_energy_balance(&net);
        let hbal = Balance::new(&hot).expect("balance");
        let mut yh = y.clone();
        yh.push(1.02 * hot.feed.temperature);
        let mut dh = vec![0.0; yh.len()];
        g.bench_function(
            BenchmarkId::new(&id, "Balance::rhs (energy balance)"),
            |b| b.iter(|| hbal.rhs(black_box(&yh), &mut dh)),
        );
        g.bench_function(
            BenchmarkId::new(&id, "Balance::jacobian (energy balance)"),
            |b| {
                b.iter(|| {
                    trip.clear();
                    hbal.jacobian(black_box(&yh), &mut trip)
                })
            },
        );
    }
    g.finish();
}

/// The network with an adiabatic energy balance: every species Cp = 80..120 J/(mol K), every
/// reaction ΔH = −20..+10 kJ/mol (demo values), so that temperature is a state.
fn with_energy_balance(net: &Network) -> Network {
    let mut hot = net.clone();
    for (j, s) in hot.species.iter_mut().enumerate() {
        s.thermo.cp = Some(rxnet::thermo::HeatCapacity::Constant(
            80.0 + (j % 41) as f64,
        ));
    }
    for (i, r) in hot.reactions.iter_mut().enumerate() {
        r.dh = Some(-20e3 + 1e3 * (i % 31) as f64);
    }
    hot.heat = rxnet::model::Heat::Balance(rxnet::model::EnergyBalance {
        exchange: None,
        mixture_cp: None,
    });
    hot
}

fn small_pfr() -> Network {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/networks/diene_hydrogenation.yaml"
    );
    let text = std::fs::read_to_string(path).expect("networks/diene_hydrogenation.yaml");
    load_str(&text, "diene_hydrogenation", &[]).expect("loads")
}

fn bench_small_pfr(c: &mut Criterion) {
    let net = small_pfr();
    let opts = SolveOptions::default();
    let bal = Balance::new(&net).expect("balance");
    const BATCH: u64 = 200;
    let mut g = c.benchmark_group("small_pfr");
    g.sample_size(10)
        .warm_up_time(Duration::from_millis(300))
        .measurement_time(Duration::from_secs(2))
        .throughput(Throughput::Elements(BATCH));
    g.bench_function("simulate_1_thread", |b| {
        b.iter(|| {
            for _ in 0..BATCH {
                black_box(simulate(black_box(&net), &opts).unwrap());
            }
        })
    });
    g.bench_function("simulate_with_1_thread", |b| {
        b.iter(|| {
            for _ in 0..BATCH {
                black_box(simulate_with(black_box(&net), &bal, &opts).unwrap());
            }
        })
    });
    g.throughput(Throughput::Elements(2 * BATCH));
    g.bench_function("simulate_2_threads", |b| {
        b.iter(|| {
            std::thread::scope(|s| {
                for _ in 0..2 {
                    s.spawn(|| {
                        for _ in 0..BATCH {
                            black_box(simulate(black_box(&net), &opts).unwrap());
                        }
                    });
                }
            })
        })
    });
    g.finish();
}

criterion_group!(
    benches,
    bench_bundled,
    bench_small_pfr,
    bench_rhs,
    bench_generated,
    bench_linear_algebra
);
criterion_main!(benches);
