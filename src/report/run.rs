//! The report of one reactor run: outlet, concentrations, conversion, yields, selectivities.

use super::num;
use crate::metrics::{self, Metrics};
use crate::model::Network;
use crate::reactor::Balance;
use crate::solve::{Simulation, SolveStats};
use indexmap::IndexMap;
use serde::Serialize;
use std::fmt::Write;

/// One profile point (JSON).
#[derive(Debug, Clone, Serialize)]
pub struct ProfilePoint {
    pub x: f64,
    pub state: IndexMap<String, f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pressure: Option<f64>,
    /// Instantaneous selectivity R_D/R_U of the desired product over each other product.
    pub instantaneous_selectivity: IndexMap<String, Option<f64>>,
}

/// `rxnet run` as JSON: numbers in SI (mol/s or mol, m3, kg, s, K, Pa).
#[derive(Debug, Clone, Serialize)]
pub struct RunReport {
    pub study: String,
    pub reactor: &'static str,
    pub phase: crate::model::Phase,
    /// Independent variable: V (m3), W (kg) or t (s).
    pub size_variable: &'static str,
    pub size: f64,
    pub temperature: f64,
    pub inlet_pressure: f64,
    pub outlet_pressure: f64,
    /// mol/s (flow reactors) or mol (batch).
    pub state_unit: &'static str,
    pub outlet: IndexMap<String, f64>,
    /// Outlet concentrations, mol/m3.
    pub concentrations: IndexMap<String, f64>,
    pub key: String,
    pub conversion: f64,
    #[serde(rename = "yield")]
    pub yields: IndexMap<String, Option<f64>>,
    pub yield_basis: IndexMap<String, String>,
    /// Null when the product is fed and net consumed.
    pub yield_on_feed: IndexMap<String, Option<f64>>,
    /// Why a yield is null ("not defined"), per product; only the products whose yield is null.
    pub yield_not_defined: IndexMap<String, String>,
    pub desired: Option<String>,
    /// S_D/U for each other product U (null: not defined, see `selectivity_not_defined`).
    pub selectivity: IndexMap<String, Option<f64>>,
    /// Why a selectivity is null, per other product.
    pub selectivity_not_defined: IndexMap<String, String>,
    pub element_closure: IndexMap<String, f64>,
    pub solver: SolveStats,
    /// CSTR: every steady state found (rising conversion), which one this report shows, and
    /// their stability.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub steady_states: Option<SteadyStatesReport>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub profile: Option<Vec<ProfilePoint>>,
}

/// One CSTR steady state in the report (SI: mol/s, 1/s).
#[derive(Debug, Clone, Serialize)]
pub struct SteadyStateEntry {
    /// 1-based, in order of rising conversion of the key.
    pub number: usize,
    pub conversion: f64,
    pub stable: bool,
    /// Largest real part of the eigenvalues of the transient CSTR's Jacobian, 1/s.
    pub max_eigenvalue_real_per_s: f64,
    pub outlet: IndexMap<String, f64>,
}

/// The steady states of a CSTR run.
#[derive(Debug, Clone, Serialize)]
pub struct SteadyStatesReport {
    pub count: usize,
    /// The number (1-based) of the state this report's outlet shows.
    pub shown: usize,
    /// The choice in force: `lowest`, `highest` or a number.
    pub choice: String,
    pub states: Vec<SteadyStateEntry>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub note: Option<String>,
}

fn pressure_ratio(net: &Network, sim: &Simulation, k: usize) -> f64 {
    sim.pressure
        .as_ref()
        .map(|p| p[k] / net.feed.pressure)
        .unwrap_or(1.0)
}

/// Build the report of a run.
pub fn build(
    net: &Network,
    balance: &Balance,
    sim: &Simulation,
    m: &Metrics,
    with_profile: bool,
) -> RunReport {
    let out = sim.outlet();
    let names = |v: &[f64]| -> IndexMap<String, f64> {
        net.species
            .iter()
            .zip(v)
            .map(|(s, x)| (s.name.clone(), *x))
            .collect()
    };
    let last = sim.x.len() - 1;
    let mut y = out.to_vec();
    if balance.has_pressure() {
        y.push(pressure_ratio(net, sim, last));
    }
    let mut c = Vec::new();
    balance.concentrations(&y, &mut c);
    let profile = with_profile.then(|| {
        sim.x
            .iter()
            .enumerate()
            .map(|(k, x)| ProfilePoint {
                x: *x,
                state: names(&sim.states[k]),
                pressure: sim.pressure.as_ref().map(|p| p[k]),
                instantaneous_selectivity: metrics::instantaneous_selectivity(
                    net,
                    balance,
                    &sim.states[k],
                    pressure_ratio(net, sim, k),
                )
                .into_iter()
                .map(|s| (s.over, s.value))
                .collect(),
            })
            .collect()
    });
    RunReport {
        study: net.name.clone(),
        reactor: net.reactor.kind(),
        phase: net.phase,
        size_variable: sim.x_name,
        size: sim.size,
        temperature: net.feed.temperature,
        inlet_pressure: net.feed.pressure,
        outlet_pressure: sim
            .pressure
            .as_ref()
            .map(|p| p[last])
            .unwrap_or(net.feed.pressure),
        state_unit: if net.reactor.is_batch() {
            "mol"
        } else {
            "mol/s"
        },
        outlet: names(out),
        concentrations: names(&c),
        key: m.key.clone(),
        conversion: m.conversion,
        yields: m
            .yields
            .iter()
            .map(|y| (y.species.clone(), y.on_key))
            .collect(),
        yield_basis: m
            .yields
            .iter()
            .map(|y| (y.species.clone(), y.basis.clone()))
            .collect(),
        yield_on_feed: m
            .yields
            .iter()
            .map(|y| (y.species.clone(), y.on_feed))
            .collect(),
        yield_not_defined: m
            .yields
            .iter()
            .filter_map(|y| Some((y.species.clone(), y.not_defined.clone()?)))
            .collect(),
        desired: m.desired.clone(),
        selectivity: m
            .selectivity
            .iter()
            .map(|s| (s.over.clone(), s.value))
            .collect(),
        selectivity_not_defined: m
            .selectivity
            .iter()
            .filter_map(|s| Some((s.over.clone(), s.not_defined.clone()?)))
            .collect(),
        element_closure: m
            .element_closure
            .iter()
            .map(|c| (c.element.clone(), c.relative))
            .collect(),
        solver: sim.stats.clone(),
        steady_states: sim.steady.as_ref().map(|st| SteadyStatesReport {
            count: st.states.len(),
            shown: st.shown + 1,
            choice: st.choice.clone(),
            states: st
                .states
                .iter()
                .enumerate()
                .map(|(k, s)| SteadyStateEntry {
                    number: k + 1,
                    conversion: s.conversion,
                    stable: s.stable,
                    max_eigenvalue_real_per_s: s.max_eigenvalue_real,
                    outlet: names(&s.flows),
                })
                .collect(),
            note: st.note.clone(),
        }),
        profile,
    }
}

fn size_text(r: &RunReport) -> String {
    match r.size_variable {
        "V" => format!("V = {} m3 ({} L)", num(r.size), num(r.size * 1e3)),
        "W" => format!("W = {} kg catalyst", num(r.size)),
        _ => format!("t = {} s ({} h)", num(r.size), num(r.size / 3600.0)),
    }
}

/// The run as a readable table.
pub fn text(r: &RunReport, verbose: bool) -> String {
    let mut o = String::new();
    let _ = writeln!(o, "{}", r.study);
    let _ = writeln!(
        o,
        "{} ({}), {}, T = {} K{}{}",
        r.reactor.to_uppercase(),
        match r.phase {
            crate::model::Phase::Gas => "gas",
            crate::model::Phase::Liquid => "liquid",
        },
        size_text(r),
        num(r.temperature),
        if r.phase == crate::model::Phase::Gas {
            format!(", P_in = {} bar", num(r.inlet_pressure / 1e5))
        } else {
            String::new()
        },
        if (r.outlet_pressure - r.inlet_pressure).abs() > 0.0 {
            format!(", P_out = {} bar", num(r.outlet_pressure / 1e5))
        } else {
            String::new()
        }
    );
    let w = r.outlet.keys().map(|k| k.len()).max().unwrap_or(7).max(7);
    let flow = if r.state_unit == "mol" {
        "N [mol]"
    } else {
        "F [mol/s]"
    };
    let _ = writeln!(
        o,
        "\n  {:<w$}  {:>14}  {:>14}",
        "species", flow, "C [mol/L]"
    );
    for (s, v) in &r.outlet {
        let _ = writeln!(
            o,
            "  {:<w$}  {:>14}  {:>14}",
            s,
            num(*v),
            num(r.concentrations[s] / 1e3)
        );
    }
    if let Some(st) = &r.steady_states
        && st.count > 1
    {
        let _ = writeln!(
            o,
            "\n  {} steady states (conversion of {}; stable when every eigenvalue of the transient has a negative real part):",
            st.count, r.key
        );
        for e in &st.states {
            let _ = writeln!(
                o,
                "    {}. X = {}  {} (largest eigenvalue real part {:.3e} 1/s){}",
                e.number,
                num(e.conversion),
                if e.stable { "stable  " } else { "unstable" },
                e.max_eigenvalue_real_per_s,
                if e.number == st.shown {
                    "  <- shown"
                } else {
                    ""
                }
            );
        }
        let _ = writeln!(
            o,
            "  this report shows steady state {} (choice `{}`; pick another with --steady-state lowest|highest|N or solver.steady_state)",
            st.shown, st.choice
        );
    }
    if let Some(note) = r.steady_states.as_ref().and_then(|s| s.note.as_ref()) {
        let _ = writeln!(o, "\n  note: {note}");
    }
    let _ = writeln!(o, "\n  conversion of {}: {}", r.key, num(r.conversion));
    let not_defined = |why: Option<&String>| match why {
        Some(w) => format!("not defined ({w})"),
        None => "not defined".to_string(),
    };
    for (s, y) in &r.yields {
        let why = r.yield_not_defined.get(s);
        let _ = writeln!(
            o,
            "  yield of {s} on {}: {}; on {} fed: {}",
            r.key,
            match y {
                Some(v) => format!("{} ({})", num(*v), r.yield_basis[s]),
                None => not_defined(why),
            },
            r.key,
            match r.yield_on_feed[s] {
                Some(v) => num(v),
                None => not_defined(why),
            }
        );
    }
    if let Some(d) = &r.desired {
        for (u, s) in &r.selectivity {
            let _ = writeln!(
                o,
                "  selectivity {d}/{u}: {}",
                match s {
                    Some(v) => num(*v),
                    None => not_defined(r.selectivity_not_defined.get(u)),
                }
            );
        }
    }
    if verbose && !r.element_closure.is_empty() {
        let parts: Vec<String> = r
            .element_closure
            .iter()
            .map(|(e, c)| format!("{e} {c:.1e}"))
            .collect();
        let _ = writeln!(
            o,
            "  element balance closure (relative): {}",
            parts.join(", ")
        );
    }
    let s = &r.solver;
    if s.newton_iterations > 0 || s.residual.is_some() {
        let _ = writeln!(
            o,
            "\n{}: {} iterations, {} continuation stages, residual {:.1e} {}, last Newton step {:.1e} {}",
            s.method,
            s.newton_iterations,
            s.continuation_stages,
            s.residual.unwrap_or(0.0),
            r.state_unit,
            s.newton_step.unwrap_or(0.0),
            r.state_unit
        );
    } else {
        let _ = writeln!(
            o,
            "\n{}: {} steps, {} rhs, {} Jacobians, {} LU; rtol {:.0e}, atol {:.1e} {}",
            s.method,
            s.steps,
            s.rhs_evals,
            s.jac_evals,
            s.lu_factorizations,
            s.rtol,
            s.atol,
            r.state_unit
        );
        if s.linear_solves > 0 {
            let _ = writeln!(
                o,
                "  {} GMRES iterations in {} linear solves ({:.1} each), {} fell back to the complete LU",
                s.krylov_iterations,
                s.linear_solves,
                s.krylov_iterations as f64 / s.linear_solves as f64,
                s.krylov_fallbacks
            );
        }
    }
    o
}

/// The profile as CSV: the independent variable, every species, and P where it varies.
pub fn profile_csv(net: &Network, sim: &Simulation) -> String {
    let mut o = String::new();
    let unit = if net.reactor.is_batch() {
        "mol"
    } else {
        "mol/s"
    };
    let _ = write!(o, "{} [{}]", sim.x_name, sim.x_unit);
    for s in &net.species {
        let _ = write!(o, ",{}", csv_field(&format!("{} [{unit}]", s.name)));
    }
    if sim.pressure.is_some() {
        let _ = write!(o, ",P [Pa]");
    }
    o.push('\n');
    for (k, x) in sim.x.iter().enumerate() {
        let _ = write!(o, "{x:.12e}");
        for v in &sim.states[k] {
            let _ = write!(o, ",{v:.12e}");
        }
        if let Some(p) = &sim.pressure {
            let _ = write!(o, ",{:.12e}", p[k]);
        }
        o.push('\n');
    }
    o
}

/// One CSV field, quoted when it holds a comma, a quote or a line break (RFC 4180).
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}
