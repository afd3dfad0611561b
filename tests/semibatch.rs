//! Semibatch operation: a liquid batch with dosing streams and continuous withdrawal.
//!
//! - the closed form of a first-order step dosed at a constant rate (own derivation below);
//! - a parallel scheme against scipy `solve_ivp` (Radau, rtol 1e-11) fixtures written by
//!   tests/reference/semibatch.py (command and scipy version in tests/reference/semibatch.json):
//!   dosing, the same charge all at once, a withdrawal, a cold dosing into a jacketed batch;
//! - the mixing rule of a cold liquid dosed into a batch (own derivation below);
//! - element balances along the profile with what was dosed and withdrawn;
//! - refusals of bad input, and every command (run, sweep, optimize, compare, size) with dosing.
//!
//! All numbers are invented demo values.

mod common;

use common::{TempFile, line_of, network, num, read_csv, run_study, rxnet, temp_out, temp_study};
use rxnet::solve::{Points, SolveOptions, simulate};

fn solve(yaml: &str, points: usize) -> (rxnet::Network, rxnet::solve::Simulation) {
    let net = rxnet::load_str(yaml, "test", &[]).unwrap_or_else(|e| panic!("{e}"));
    let opts = SolveOptions {
        rtol: Some(1e-12),
        points: Points::Even(points),
        ..Default::default()
    };
    let sim = simulate(&net, &opts).unwrap_or_else(|e| panic!("{e}"));
    (net, sim)
}

fn rel(got: f64, want: f64, scale: f64) -> f64 {
    (got - want).abs() / want.abs().max(scale)
}

/// A first-order step A -> B in a tank charged with solvent (and some A), A dosed at a
/// constant rate q with concentration C_Ad over [0, t_d].
///
/// Own derivation: with r = k C_A and C_A = N_A/V, the reaction term is V r = k N_A whatever
/// V(t) is, so dN_A/dt = q C_Ad − k N_A while dosing, a linear ODE with
/// N_A(t) = (q C_Ad/k)(1 − e^{−kt}) + N_A0 e^{−kt}; after the dosing stops,
/// N_A(t) = N_A(t_d) e^{−k(t − t_d)}. N_B = N_A0 + q C_Ad min(t, t_d) − N_A (A's balance), and
/// V(t) = V0 + q min(t, t_d) exactly (volumes add).
#[test]
fn first_order_step_dosed_at_a_constant_rate_matches_the_closed_form() {
    let (k, q, cad, v0) = (1e-3, 1e-4, 2000.0, 0.4);
    for (na0, t_dose, time) in [(0.0, 3600.0, 3600.0), (50.0, 1800.0, 3600.0)] {
        let yaml = format!(
            "name: dosed first order (demo values)\nphase: liquid\nspecies: {{A: {{}}, B: {{}}, S: {{}}}}\nreactions:\n  - {{id: r1, stoich: A -> B, rate: {{k: {k} 1/s}}}}\nfeed:\n  T: 300 K\n  amounts: {{A: {na0} mol, S: 4000 mol}}\nreactor:\n  type: batch\n  volume: {v0} m3\n  time: {time} s\n  dosing: [{{concentrations: {{A: {cad} mol/m3}}, rate: {q} m3/s, to: {t_dose} s}}]\nkey: A\n"
        );
        let (net, sim) = solve(&yaml, 13);
        let n_a = |t: f64| {
            let td = t.min(t_dose);
            let during = q * cad / k * (1.0 - (-k * td).exp()) + na0 * (-k * td).exp();
            during * (-k * (t - td)).exp()
        };
        for (i, &t) in sim.x.iter().enumerate() {
            let dosed = q * cad * t.min(t_dose);
            let want_a = n_a(t);
            let scale = 1e-6 * (na0 + dosed).max(1.0);
            // closed form of the linear ODE (own derivation above), to 1e-9 relative
            assert!(
                rel(sim.states[i][0], want_a, scale) < 1e-9,
                "N_A({t}) = {} vs {want_a}",
                sim.states[i][0]
            );
            let want_b = na0 + dosed - want_a;
            assert!(
                rel(sim.states[i][1], want_b, scale) < 1e-9,
                "N_B({t}) = {} vs {want_b}",
                sim.states[i][1]
            );
            // V(t) = V0 + q min(t, t_d) (volumes add), exact
            let v = rxnet::reactor::liquid_volume(&net, t);
            assert!(
                (v - (v0 + q * t.min(t_dose))).abs() <= 1e-15 * v0 * 4.0,
                "V({t}) = {v}"
            );
            // what was dosed by t, closed form
            let ex = sim
                .exchanged
                .as_ref()
                .expect("a semibatch reports what entered");
            assert!((ex.entered[i][0] - dosed).abs() <= 1e-12 * dosed.max(1.0));
            assert_eq!(ex.left[i], vec![0.0; 3]);
        }
    }
}

fn fixture() -> serde_json::Value {
    let path = format!(
        "{}/tests/reference/semibatch.json",
        env!("CARGO_MANIFEST_DIR")
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("fixture")).expect("JSON")
}

/// The parallel scheme of tests/reference/semibatch.py as a study: A + B -> P first order in
/// B, 2 B -> Q second order in B, A charged; `reactor` holds the vessel's own lines.
fn parallel(extra_species: &str, charge: &str, reactor: &str, heat: bool) -> String {
    let (cp, rate1, rate2) = if heat {
        (
            [
                ", cp: 150 J/(mol*K)",
                ", cp: 110 J/(mol*K)",
                ", cp: 260 J/(mol*K)",
                ", cp: 220 J/(mol*K)",
                ", cp: 80 J/(mol*K)",
            ],
            "{k: 2e-6 m3/(mol*s), Ea: 40 kJ/mol, T_ref: 330 K, dH: -90 kJ/mol}",
            "{k: 2e-6 m3/(mol*s), Ea: 80 kJ/mol, T_ref: 330 K, dH: -70 kJ/mol}",
        )
    } else {
        (
            ["", "", "", "", ""],
            "{k: 2e-6 m3/(mol*s)}",
            "{k: 2e-6 m3/(mol*s)}",
        )
    };
    format!(
        "name: parallel scheme (demo values)\nphase: liquid\nspecies: {{A: {{formula: C2H4{}}}, B: {{formula: Cl2{}}}, P: {{formula: C2H4Cl2{}}}, Q: {{formula: Cl4{}}}, S: {{formula: H2O{}}}{extra_species}}}\nreactions:\n  - {{id: r1, stoich: A + B -> P, rate: {rate1}}}\n  - {{id: r2, stoich: 2 B -> Q, rate: {rate2}}}\nfeed:\n  T: 330 K\n  amounts: {charge}\nreactor:\n  type: batch\n  time: 7200 s\n{reactor}key: A\ndesired: P\n",
        cp[0], cp[1], cp[2], cp[3], cp[4]
    )
}

const DOSED: &str = "  volume: 0.5 m3\n  dosing: [{concentrations: {B: 4000 mol/m3}, rate: 0.125 m3/h, to: 3600 s}]\n";

fn case_study(name: &str) -> String {
    match name {
        "dosed" => parallel("", "{A: 500 mol}", DOSED, false),
        "all_at_once" => parallel(
            "",
            "{A: 500 mol, B: 500 mol}",
            "  volume: 0.625 m3\n",
            false,
        ),
        "withdrawal" => parallel(
            "",
            "{A: 500 mol}",
            "  volume: 0.5 m3\n  dosing: [{concentrations: {B: 4000 mol/m3}, rate: [[0 s, 2e-5 m3/s], [1800 s, 5e-5 m3/s], [3600 s, 1e-5 m3/s]]}]\n  withdrawal: {rate: 2e-5 m3/s, from: 2400 s, to: 6000 s}\n",
            false,
        ),
        "energy" => parallel(
            "",
            "{A: 500 mol, S: 20000 mol}",
            "  volume: 0.5 m3\n  heat: {UA: 800 W/K, coolant: {T: 320 K}}\n  dosing: [{concentrations: {B: 4000 mol/m3, S: 30000 mol/m3}, T: 290 K, rate: 0.125 m3/h, to: 3600 s}]\n",
            true,
        ),
        _ => unreachable!(),
    }
}

/// Profiles of the parallel scheme against scipy solve_ivp (Radau, rtol 1e-11) at the fixture's
/// 13 times (tests/reference/semibatch.py): amounts, withdrawn amounts, V(t) and T, to 1e-7
/// relative (amounts below 1e-6 of the charge compared on that scale).
#[test]
fn parallel_scheme_profiles_match_scipy() {
    let fx = fixture();
    for name in ["dosed", "all_at_once", "withdrawal", "energy"] {
        let c = &fx["cases"][name];
        let (net, sim) = solve(&case_study(name), 13);
        let t: Vec<f64> = c["t"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| num(v, "t"))
            .collect();
        assert_eq!(sim.x.len(), t.len(), "{name}");
        for (i, &ti) in t.iter().enumerate() {
            assert!((sim.x[i] - ti).abs() < 1e-9 * 7200.0, "{name}: t");
            let scale = 1e-6 * 500.0;
            for j in 0..5 {
                // scipy solve_ivp Radau rtol 1e-11 (tests/reference/semibatch.py)
                let want = num(&c["N"][i][j], "N");
                let got = sim.states[i][j];
                assert!(
                    rel(got, want, scale) < 1e-7,
                    "{name} t = {ti}: N[{j}] = {got} vs scipy {want}"
                );
                let want = num(&c["withdrawn"][i][j], "withdrawn");
                let got = sim.exchanged.as_ref().map_or(0.0, |e| e.left[i][j]);
                assert!(
                    rel(got, want, scale) < 1e-7,
                    "{name} t = {ti}: withdrawn[{j}] = {got} vs scipy {want}"
                );
            }
            let v = rxnet::reactor::liquid_volume(&net, ti);
            assert!(rel(v, num(&c["V"][i], "V"), 0.0) < 1e-12, "{name}: V({ti})");
            if let Some(tk) = c.get("T") {
                let temps = sim.temperature.as_ref().expect("energy balance");
                assert!(
                    rel(temps[i], num(&tk[i], "T"), 0.0) < 1e-9,
                    "{name} t = {ti}: T = {} vs scipy {}",
                    temps[i],
                    tk[i]
                );
            }
        }
    }
    // Dosing B keeps it low, which favours the step first order in B: the selectivity P/Q at
    // the end is higher than with all B charged at once (Levenspiel ch. 7, from memory), in
    // the scipy fixture and in rxnet alike.
    let s = |name: &str| {
        let n = &fx["cases"][name]["N"][12];
        num(&n[2], "P") / num(&n[3], "Q")
    };
    assert!(s("dosed") > 2.0 * s("all_at_once"), "fixture selectivities");
    let (_, dosed) = solve(&case_study("dosed"), 2);
    let (_, once) = solve(&case_study("all_at_once"), 2);
    let sel = |y: &[f64]| y[2] / y[3];
    assert!(sel(dosed.outlet()) > 2.0 * sel(once.outlet()));
}

/// A cold liquid dosed into a batch with a mixture heat capacity and no heat of reaction, no
/// wall exchange: c_v V dT/dt = −q c_v (T − T_d), and with dV/dt = q this is
/// d[V (T − T_d)]/dt = 0, so T(t) = T_d + (T0 − T_d) V0 / V(t) (own derivation: the mixing rule
/// of two liquids of equal c_v).
#[test]
fn cold_dosing_with_a_mixture_heat_capacity_follows_the_mixing_rule() {
    let yaml = "name: cold dosing (demo values)\nphase: liquid\nspecies: {A: {}, B: {}, S: {}}\nreactions:\n  - {id: r1, stoich: A -> B, rate: {k: 1e-3 1/s, dH: 0 kJ/mol}}\nfeed:\n  T: 350 K\n  amounts: {A: 100 mol, S: 10000 mol}\nreactor:\n  type: batch\n  volume: 0.2 m3\n  time: 1 h\n  heat: {mixture_cp: 4 kJ/(kg*K), density: 1000 kg/m3}\n  dosing: [{concentrations: {A: 1 mol/L}, T: 290 K, rate: [[0 s, 0 L/s], [1800 s, 0.1 L/s], [2400 s, 0.02 L/s]]}]\n";
    let (net, sim) = solve(yaml, 25);
    let temps = sim.temperature.as_ref().expect("energy balance");
    for (i, &t) in sim.x.iter().enumerate() {
        let want = 290.0 + 60.0 * 0.2 / rxnet::reactor::liquid_volume(&net, t);
        // mixing rule (own derivation above)
        assert!(
            (temps[i] - want).abs() < 1e-8 * want,
            "T({t}) = {} vs {want}",
            temps[i]
        );
    }
}

/// Element balances close at every profile point with what was dosed and what was withdrawn
/// (feed + dosed = contents + withdrawn, per element; common practice), for the withdrawal
/// and the energy cases.
#[test]
fn element_balances_close_with_dosing_and_withdrawal() {
    for name in ["withdrawal", "energy"] {
        let (net, sim) = solve(&case_study(name), 41);
        let ex = sim.exchanged.as_ref().expect("exchanged");
        for (k, y) in sim.states.iter().enumerate() {
            let fed: Vec<f64> = net
                .feed
                .amounts
                .iter()
                .zip(&ex.entered[k])
                .map(|(a, b)| a + b)
                .collect();
            let state: Vec<f64> = y.iter().zip(&ex.left[k]).map(|(a, b)| a + b).collect();
            let closure = rxnet::metrics::element_closure_against(&net, &fed, &state);
            assert_eq!(closure.len(), 4, "C, Cl, H, O");
            for c in closure {
                assert!(
                    c.relative < 1e-9,
                    "{name}: {} at t = {}: {}",
                    c.element,
                    sim.x[k],
                    c.relative
                );
            }
        }
        // Without the withdrawn amounts the balance would not close (they are not zero).
        if name == "withdrawal" {
            assert!(ex.left.last().unwrap()[0] > 1.0);
        }
    }
}

// --- refusals of bad input: exit 2, the field and line named, a hint

fn refused(tag: &str, yaml: &str, words: &[&str]) {
    let run = run_study("check", tag, yaml, "text");
    assert_eq!(run.code, 2, "{tag}: {}\n{}", run.stderr, run.stdout);
    assert!(!run.stderr.contains("panicked"), "{tag}: {}", run.stderr);
    for w in words {
        assert!(
            run.stderr.contains(w),
            "{tag}: lacks `{w}`:\n{}",
            run.stderr
        );
    }
}

fn dosed_with(reactor: &str) -> String {
    parallel("", "{A: 500 mol}", reactor, false)
}

#[test]
fn dosing_a_flow_reactor_is_refused() {
    let y = parallel("", "{A: 500 mol}", "", false)
        .replace("amounts: {A: 500 mol}", "flows: {A: 1 mol/s}\n  volumetric: 1 L/s")
        .replace(
            "  type: batch\n  time: 7200 s\n",
            "  type: pfr\n  volume: 1 m3\n  dosing: [{concentrations: {B: 4 mol/L}, rate: 1 L/s}]\n",
        );
    let line = format!(":{}:", line_of(&y, "dosing:"));
    refused(
        "flow",
        &y,
        &[
            "reactor.dosing",
            "dosing is a batch pattern",
            "side_feeds",
            &line,
        ],
    );
}

#[test]
fn dosing_a_gas_is_refused() {
    let y = "name: gas (demo values)\nphase: gas\nspecies: {A: {}, B: {}}\nreactions:\n  - {id: r1, stoich: A -> B, rate: {k: 0.01 1/s}}\nfeed: {T: 400 K, P: 1 bar, amounts: {A: 30.0695 mol}}\nreactor:\n  type: batch\n  volume: 1 m3\n  time: 10 min\n  dosing: [{concentrations: {A: 0.03 mol/L}, rate: 1 L/s}]\n";
    let line = format!(":{}:", line_of(y, "dosing:"));
    refused("gas", y, &["reactor.dosing", "phase: liquid", &line]);
}

#[test]
fn a_constant_pressure_semibatch_is_refused() {
    let y = dosed_with(&format!("  mode: constant_pressure\n{DOSED}"));
    refused(
        "cp",
        &y,
        &["reactor.mode", "constant_pressure", "drop `mode`"],
    );
}

#[test]
fn a_negative_rate_is_refused() {
    let y = dosed_with(&DOSED.replace("rate: 0.125 m3/h", "rate: -0.125 m3/h"));
    let line = format!(":{}:", line_of(&y, "dosing:"));
    refused(
        "negative",
        &y,
        &["reactor.dosing[0].rate", "zero or positive", &line],
    );
}

#[test]
fn a_window_that_ends_before_it_starts_is_refused() {
    let y = dosed_with(&DOSED.replace("to: 3600 s", "from: 1 h, to: 1800 s"));
    refused(
        "window",
        &y,
        &["reactor.dosing[0].to", "ends before it starts"],
    );
}

#[test]
fn profile_times_out_of_order_are_refused() {
    let y = dosed_with(&DOSED.replace(
        "rate: 0.125 m3/h, to: 3600 s",
        "rate: [[0 s, 1 L/s], [1 h, 2 L/s], [30 min, 1 L/s]]",
    ));
    refused(
        "order",
        &y,
        &["reactor.dosing[0].rate[2]", "ascend", "in order of time"],
    );
}

#[test]
fn an_unknown_dosed_species_is_refused() {
    let y = dosed_with(&DOSED.replace("{B: 4000 mol/m3}", "{BB: 4000 mol/m3}"));
    refused(
        "unknown",
        &y,
        &[
            "reactor.dosing[0].concentrations.BB",
            "unknown species `BB`",
            "did you mean `B`?",
        ],
    );
}

#[test]
fn an_empty_dosed_liquid_is_refused() {
    let y = dosed_with(&DOSED.replace("{B: 4000 mol/m3}", "{B: 0 mol/m3}"));
    refused(
        "empty",
        &y,
        &["reactor.dosing[0].concentrations", "carries nothing"],
    );
    let y = dosed_with(&DOSED.replace("{concentrations: {B: 4000 mol/m3}, ", "{"));
    refused("missing", &y, &["reactor.dosing[0]", "`concentrations`"]);
}

#[test]
fn a_withdrawal_that_empties_the_vessel_is_refused() {
    // V(t) = 0.5 m3 + 0.125 m3/h min(t, 1 h) − q_out (t − 0.5 h): at the end of the 2 h batch
    // 0.625 − 0.75 < 0 with q_out = 0.5 m3/h, and 0.625 − 0.3 = 0.325 m3 with 0.2 m3/h.
    let y = dosed_with(&format!(
        "{DOSED}  withdrawal: {{rate: 0.5 m3/h, from: 30 min}}\n"
    ));
    refused(
        "empties",
        &y,
        &[
            "reactor.withdrawal.rate",
            "empties the vessel",
            "withdraw less",
        ],
    );
    // The same withdrawal at 0.2 m3/h leaves 0.325 m3: accepted.
    let ok = dosed_with(&format!(
        "{DOSED}  withdrawal: {{rate: 0.2 m3/h, from: 30 min}}\n"
    ));
    assert_eq!(run_study("check", "keeps", &ok, "text").code, 0);
}

#[test]
fn a_dosing_that_starts_after_the_batch_is_refused() {
    let y = dosed_with(&DOSED.replace("to: 3600 s", "from: 3 h, to: 4 h"));
    refused("late", &y, &["reactor.dosing[0].from", "never run"]);
}

// --- every command with a semibatch

/// The bundled semibatch study: the report gives V(t) and what was dosed, and its selectivity
/// beats the same total charge all at once (Levenspiel ch. 7, from memory: the unwanted step
/// is of higher order in the dosed reagent).
#[test]
fn bundled_study_run_reports_volume_and_dosing_and_beats_all_at_once() {
    let path = network("semibatch_acrylate_addition.yaml");
    let p = path.to_str().unwrap();
    let j = rxnet(&["run", p, "--format", "json", "--points", "7"]).ok_json();
    // V(t_end) = 1.5 m3 + 0.2 m3/h × 1.5 h (volumes add)
    assert!((num(&j["final_volume"], "V_end") - 1.8).abs() < 1e-12);
    assert!((num(&j["dosed"]["MA"], "dosed MA") - 1500.0).abs() < 1e-9);
    let prof = j["profile"].as_array().unwrap();
    let v_mid = num(&prof[3]["volume"], "V at 1.5 h");
    assert!((v_mid - 1.8).abs() < 1e-12, "{v_mid}");
    let v1 = num(&prof[1]["volume"], "V at 0.5 h");
    assert!((v1 - 1.6).abs() < 1e-12, "{v1}");
    let dosed_s = num(&j["selectivity"]["dimer"], "S");
    // Counted as fed: the conversion of the charged amine and the yield are on it; the
    // dosed acrylate's conversion is judged with everything dosed.
    let text = rxnet(&["run", p]);
    assert_eq!(text.code, 0, "{}", text.stderr);
    assert!(
        text.stdout.contains("V_0 = 1500 L, V_end = 1800 L"),
        "{}",
        text.stdout
    );
    assert!(
        text.stdout
            .contains("dosed over the batch: MA 1500 mol, MeOH 1500 mol"),
        "{}",
        text.stdout
    );
    // The same total charged at t = 0 in the final volume.
    let study = std::fs::read_to_string(&path).unwrap();
    let once = study
        .replace(
            "concentrations: {Et2NH: 1 mol/L, MeOH: 20 mol/L}",
            "amounts: {Et2NH: 1500 mol, MeOH: 31500 mol, MA: 1500 mol}",
        )
        .replace("volume: 1.5 m3", "volume: 1.8 m3");
    let once =
        once.split("  dosing:").next().unwrap().to_string() + "key: Et2NH\ndesired: adduct\n";
    let f = temp_study("once", &once);
    let j = rxnet(&["run", f.p(), "--format", "json"]).ok_json();
    let once_s = num(&j["selectivity"]["dimer"], "S once");
    assert!(
        dosed_s > 1.5 * once_s,
        "dosed {dosed_s} vs all at once {once_s}"
    );
    // The CSV profile has the volume column.
    let csv = temp_out("sbcsv", "csv");
    let r = rxnet(&["run", p, "--points", "3", "--profile", csv.p()]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let (head, rows) = read_csv(&std::fs::read_to_string(csv.p()).unwrap());
    let col = head.iter().position(|h| h == "V [m3]").expect("V column");
    assert!((rows[2][col].unwrap() - 1.8).abs() < 1e-9);
}

fn bundled() -> TempFile {
    let study = std::fs::read_to_string(network("semibatch_acrylate_addition.yaml")).unwrap();
    temp_study("bundled", &study)
}

#[test]
fn sweep_varies_the_end_of_the_dosing() {
    let f = bundled();
    let j = rxnet(&[
        "sweep",
        f.p(),
        "--vary",
        "reactor.dosing.0.to=30 min:180 min:3",
        "--format",
        "json",
    ])
    .ok_json();
    let text = j.to_string();
    // Dosing the same rate for longer doses more: the points differ (the dosing is not
    // ignored); a window past the batch end stops at the end.
    let r = rxnet(&[
        "sweep",
        f.p(),
        "--vary",
        "reactor.dosing.0.to=30 min:180 min:3",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(text.contains("conversion"), "{text}");
    let convs: Vec<f64> = text
        .match_indices("\"conversion\":")
        .map(|(i, _)| {
            text[i + 13..]
                .split([',', '}'])
                .next()
                .unwrap()
                .parse::<f64>()
                .unwrap()
        })
        .collect();
    assert!(convs.len() >= 3, "{text}");
    assert!(convs[1] > convs[0] + 0.05, "{convs:?}");
}

#[test]
fn optimize_over_the_dosing_rate() {
    let f = bundled();
    let r = rxnet(&[
        "optimize",
        f.p(),
        "--maximize",
        "adduct",
        "--over",
        "reactor.dosing.0.rate",
        "--bounds",
        "0.05 m3/h",
        "0.4 m3/h",
        "--format",
        "json",
    ]);
    let j = r.ok_json();
    // More acrylate dosed makes more adduct: the optimum is at the upper bound 0.4 m3/h, so
    // the rate is used, not ignored.
    let best = num(&j["best"]["point"]["reactor.dosing.0.rate"], "best rate");
    assert!((best - 0.4 / 3600.0).abs() < 1e-12, "{best}");
    assert_eq!(j["best"]["on_bound"]["reactor.dosing.0.rate"], "upper");
    assert!((num(&j["run"]["final_volume"], "V_end") - 2.1).abs() < 1e-9);
}

/// A semibatch is a contacting pattern of its own: `compare` screens it once, as itself,
/// whatever reactor types are asked for, and never moves its dosing to a flow reactor.
#[test]
fn compare_refuses_to_move_dosing_to_a_flow_reactor_and_keeps_the_batch() {
    let f = bundled();
    let j = rxnet(&[
        "compare",
        f.p(),
        "--reactors",
        "pfr,cstr,batch",
        "--format",
        "json",
    ])
    .ok_json();
    let rows = j.as_array().expect("rows");
    assert_eq!(rows.len(), 1, "screened once, as itself: {j}");
    assert_eq!(rows[0]["reactor"], "batch+dosing", "{j}");
    assert!(rows[0]["error"].is_null(), "{j}");
    assert!(j.to_string().contains("0.7306"), "{j}");
    // Asked directly to move it, the library refuses with the reason.
    let net = rxnet::load_file(std::path::Path::new(f.p()), &[]).unwrap();
    let e =
        rxnet::studies::compare::as_reactor(&net, rxnet::studies::compare::Kind::Pfr).unwrap_err();
    assert!(e.contains("screened only as itself"), "{e}");
}

/// The time to a conversion integrates the semibatch: at that time the run gives the
/// conversion asked for, and the vessel holds the dosed volume.
#[test]
fn size_integrates_the_semibatch() {
    let f = bundled();
    let r = rxnet(&["size", f.p(), "--conversion", "0.5", "--format", "json"]);
    let j = r.ok_json();
    let text = j.to_string();
    assert!(text.contains("\"conversion\":0.5"), "{text}");
    // A withdrawal is not conversion: the key withdrawn unreacted is not counted as converted.
    let study = std::fs::read_to_string(network("semibatch_acrylate_addition.yaml")).unwrap();
    let w = study.replace(
        "key: Et2NH",
        "  withdrawal: {rate: 0.1 m3/h, from: 0 h, to: 3 h}\nkey: Et2NH",
    );
    let g = temp_study("sizew", &w);
    let r = rxnet(&["size", g.p(), "--conversion", "0.5", "--format", "json"]);
    let t = num(&r.ok_json()["size"], "size");
    let run = rxnet(&[
        "run",
        g.p(),
        "--set",
        &format!("reactor.time={t} s"),
        "--format",
        "json",
    ])
    .ok_json();
    assert!(
        (num(&run["conversion"], "X") - 0.5).abs() < 1e-6,
        "{}",
        run["conversion"]
    );
}

/// An energy balance needs the heat capacity of every dosed species: refused (exit 2) with the
/// species named, not run with its enthalpy left out.
#[test]
fn an_energy_balance_needs_the_heat_capacity_of_a_dosed_species() {
    let y = case_study("energy").replace(", cp: 110 J/(mol*K)", "");
    let r = run_study("run", "nocp", &y, "table");
    assert_eq!(r.code, 2, "{}\n{}", r.stderr, r.stdout);
    assert!(r.stderr.contains("heat capacity of `B`"), "{}", r.stderr);
}

/// The best batch time is not searched along one integration for a semibatch (its targets count
/// what was dosed by each time): refused plainly, pointing to a sweep over the time, where each
/// point is a whole run.
#[test]
fn the_best_batch_time_of_a_semibatch_is_refused_and_a_sweep_over_it_runs() {
    let f = bundled();
    for args in [
        &["optimize", f.p(), "--maximize", "adduct"][..],
        &[
            "optimize",
            f.p(),
            "--maximize",
            "adduct",
            "--over",
            "reactor.time",
            "--bounds",
            "2 h",
            "4 h",
        ][..],
    ] {
        let r = rxnet(args);
        assert_eq!(r.code, 2, "{}", r.stdout);
        assert!(r.stderr.contains("semibatch"), "{}", r.stderr);
        assert!(r.stderr.contains("sweep"), "{}", r.stderr);
    }
    let r = rxnet(&["sweep", f.p(), "--vary", "reactor.time=2 h:4 h:3"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let lines: Vec<Vec<&str>> = r.stdout.lines().map(|l| l.split(',').collect()).collect();
    let col = lines[0]
        .iter()
        .position(|h| *h == "adduct [mol]")
        .expect("adduct");
    let adduct = |k: usize| lines[k][col].parse::<f64>().expect("a number");
    // More time, more adduct (the dosing stops at 1.5 h, the addition goes on).
    assert!(adduct(3) > adduct(1), "{}", r.stdout);
}

/// A dosed exothermic batch says that the heat of dosed reagent accumulated unreacted is not
/// assessed by its cooling-failure figure (common practice of process safety: that
/// accumulation is the hazard of a dosed batch).
#[test]
fn a_dosed_energy_balance_warns_that_accumulation_is_not_assessed() {
    let (_, sim) = solve(&case_study("energy"), 2);
    assert!(
        sim.warnings
            .iter()
            .any(|w| w.contains("semibatch") && w.contains("accumulated unreacted")),
        "{:?}",
        sim.warnings
    );
    let (_, plain) = solve(&case_study("dosed"), 2);
    assert!(plain.warnings.is_empty(), "{:?}", plain.warnings);
}
