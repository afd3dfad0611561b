//! Write the benchmark studies and, for each, the balance equations as JSON for the SciPy
//! comparison (docs/bench_scipy.py), with rxnet's own outlet and timings.
//!
//! ```text
//! cargo run --release --example export_ode -- OUTDIR [--big] [FILE.yaml ...]
//! ```
//!
//! Without files it takes networks/*.yaml plus generated studies 100/300 and 1000/3000 (and
//! 3000/10000 with `--big`), all seed 1, written to OUTDIR/gen_NxR.yaml. For every study
//! without error findings that is integrated (PFR, packed bed, constant-volume or flow gas;
//! not a CSTR, which is a Newton solve) it writes OUTDIR/NAME.json holding
//!
//! - the state equations dy/dx = σ Σ_i ν_ij r_i(C), C = κ y (the table of src/reactor),
//!   as `mixture` (fixed volume with σ, or ideal gas flow with C_T0), the bed constant α,
//!   y0, x_end;
//! - each rate r_i = k_i Π C^e (forward factors) − (k_i/K_i) Π C^e' (reverse factors
//!   e' = a + ν), with k and K already at the feed temperature (Arrhenius, van't Hoff);
//! - rxnet's tolerances, outlet, solver statistics and wall times of load, check and
//!   simulate (the best of a few repeats for fast cases).

use std::time::Instant;

use rxnet::generate::{GeneratorSpec, generate_study};
use rxnet::model::{BatchMode, Phase, RateForm, Reactor};
use rxnet::solve::{SolveOptions, simulate, tolerances};
use rxnet::units::GAS_CONSTANT;
use serde_json::{Value, json};

fn arrhenius(k_ref: f64, e: f64, t_ref: f64, t: f64) -> f64 {
    k_ref * (-e / GAS_CONSTANT * (1.0 / t - 1.0 / t_ref)).exp()
}

fn export(path: &std::path::Path) -> Result<Value, String> {
    let text = std::fs::read_to_string(path).map_err(|e| e.to_string())?;
    let t0 = Instant::now();
    let net =
        rxnet::load_str(&text, &path.display().to_string(), &[]).map_err(|e| e.to_string())?;
    let load_s = t0.elapsed().as_secs_f64();
    let t0 = Instant::now();
    let chk = rxnet::analysis::check(&net);
    let check_s = t0.elapsed().as_secs_f64();
    if chk.has_errors() {
        return Err("has error findings".into());
    }
    let t = net.feed.temperature;
    let c_tot = net.feed.pressure / (GAS_CONSTANT * t);
    let gas = net.phase == Phase::Gas;
    let (mixture, alpha, x_end) = match &net.reactor {
        Reactor::Cstr { .. } => return Err("a CSTR is a Newton solve, not an ODE".into()),
        Reactor::Batch {
            mode: BatchMode::ConstantPressure,
            ..
        } if gas => return Err("constant-pressure batch is not exported".into()),
        Reactor::Batch { time, .. } => (
            json!({"kind": "fixed", "volume": net.feed.volumetric, "sigma": net.feed.volumetric}),
            None,
            *time,
        ),
        Reactor::Pfr { volume } => (
            if gas {
                json!({"kind": "gasflow", "c_tot": c_tot})
            } else {
                json!({"kind": "fixed", "volume": net.feed.volumetric, "sigma": 1.0})
            },
            None,
            *volume,
        ),
        Reactor::Pbr {
            catalyst,
            pressure_drop,
        } => (
            if gas {
                json!({"kind": "gasflow", "c_tot": c_tot})
            } else {
                json!({"kind": "fixed", "volume": net.feed.volumetric, "sigma": 1.0})
            },
            match pressure_drop {
                None => None,
                Some(pd) => {
                    Some(rxnet::reactor::ergun_alpha(&net, pd).ok_or("no molar mass for Ergun")?)
                }
            },
            *catalyst,
        ),
    };
    let mut reactions = Vec::new();
    for r in &net.reactions {
        if !matches!(r.rate.form, RateForm::Power) {
            return Err(format!("`{}` is not a power law", r.id));
        }
        let k = arrhenius(r.rate.k_ref, r.rate.ea, r.rate.t_ref, t);
        let (k_eq, rev) = match &r.rate.equilibrium {
            None => (Value::Null, Vec::new()),
            Some(eq) => {
                // Reverse exponents a_j + ν_j over the species of the orders and the equation.
                let mut ex: Vec<(usize, f64)> = r.rate.orders.clone();
                for &(j, nu) in &r.net {
                    match ex.iter_mut().find(|(s, _)| *s == j) {
                        Some(e) => e.1 += nu,
                        None => ex.push((j, nu)),
                    }
                }
                ex.retain(|(_, e)| e.abs() > 1e-14);
                (
                    json!(arrhenius(eq.k_ref, r.dh.unwrap_or(0.0), r.rate.t_ref, t)),
                    ex,
                )
            }
        };
        reactions.push(json!({
            "id": r.id, "nu": r.net, "k": k, "fwd": r.rate.orders, "K": k_eq, "rev": rev,
        }));
    }
    let opts = SolveOptions::default();
    let (rtol, atol) = tolerances(&net, &opts);
    let mut best = f64::INFINITY;
    let mut sim = None;
    let mut total = 0.0;
    let mut runs = 0;
    while runs < 20 && (runs == 0 || total < 1.0) {
        let t0 = Instant::now();
        let s = simulate(&net, &opts).map_err(|e| e.to_string())?;
        let dt = t0.elapsed().as_secs_f64();
        best = best.min(dt);
        total += dt;
        runs += 1;
        sim = Some(s);
    }
    let sim = sim.expect("at least one run");
    let mut y0 = net.feed.amounts.clone();
    if alpha.is_some() {
        y0.push(1.0);
    }
    Ok(json!({
        "name": net.name,
        "file": path.display().to_string(),
        "species": net.species.iter().map(|s| s.name.clone()).collect::<Vec<_>>(),
        "reactor": net.reactor.kind(),
        "mixture": mixture,
        "alpha": alpha,
        "total0": net.feed.total(),
        "x_end": x_end,
        "y0": y0,
        "rtol": rtol,
        "atol": atol,
        "reactions": reactions,
        "rxnet": {
            "outlet": sim.outlet(),
            "load_s": load_s,
            "check_s": check_s,
            "simulate_best_s": best,
            "simulate_runs": runs,
            "steps": sim.stats.steps,
            "rhs_evals": sim.stats.rhs_evals,
            "jac_evals": sim.stats.jac_evals,
            "lu_factorizations": sim.stats.lu_factorizations,
        },
    }))
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some(out) = args.first() else {
        eprintln!("usage: export_ode OUTDIR [--big] [FILE.yaml ...]");
        std::process::exit(2);
    };
    let out = std::path::PathBuf::from(out);
    if let Err(e) = std::fs::create_dir_all(&out) {
        eprintln!("error: cannot create {}: {e}", out.display());
        std::process::exit(2);
    }
    let big = args.iter().any(|a| a == "--big");
    let mut files: Vec<std::path::PathBuf> = args[1..]
        .iter()
        .filter(|a| !a.starts_with("--"))
        .map(Into::into)
        .collect();
    if files.is_empty() {
        let mut bundled: Vec<_> = std::fs::read_dir("networks")
            .map(|d| {
                d.filter_map(|e| e.ok().map(|e| e.path()))
                    .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
                    .collect()
            })
            .unwrap_or_default();
        bundled.sort();
        files.extend(bundled);
        let mut sizes = vec![(100, 300), (1000, 3000)];
        if big {
            sizes.push((3000, 10000));
        }
        for (n, r) in sizes {
            let spec = GeneratorSpec {
                species: n,
                reactions: r,
                seed: 1,
                ..GeneratorSpec::default()
            };
            let text = generate_study(&spec).expect("valid spec");
            let p = out.join(format!("gen_{n}x{r}.yaml"));
            std::fs::write(&p, text).expect("write generated study");
            files.push(p);
        }
    }
    for f in files {
        let stem = f.file_stem().map(|s| s.to_string_lossy().into_owned());
        let stem = stem.unwrap_or_else(|| "study".into());
        match export(&f) {
            Ok(v) => {
                let r = &v["rxnet"];
                println!(
                    "{stem}: load {:.4} s, check {:.4} s, simulate {:.6} s (best of {}), {} steps, {} rhs, {} jac, {} LU",
                    r["load_s"].as_f64().unwrap_or(0.0),
                    r["check_s"].as_f64().unwrap_or(0.0),
                    r["simulate_best_s"].as_f64().unwrap_or(0.0),
                    r["simulate_runs"],
                    r["steps"],
                    r["rhs_evals"],
                    r["jac_evals"],
                    r["lu_factorizations"]
                );
                let p = out.join(format!("{stem}.json"));
                std::fs::write(&p, v.to_string()).expect("write json");
            }
            Err(e) => println!("{stem}: skipped ({e})"),
        }
    }
}
