//! Reactor solutions against closed forms and an independent stiff reference.
//!
//! Every rate constant, feed and size below is an invented test value, not data for any real
//! process. Each numeric check names the outside source of its expected value. The book cited
//! as "Levenspiel" is O. Levenspiel, Chemical Reaction Engineering, 3rd ed., Wiley 1999; its
//! equations are quoted from memory.
//!
//! Run with `--nocapture` to see the worst relative error of each family of checks.

mod common;

use common::{Agreement, num, rel_err, run_args, rxnet};
use rxnet::solve::{Points, SolveError, SolveOptions, simulate};
use rxnet::{Network, load_str};
use serde_json::Value;

/// Molar gas constant, J/(mol K): CODATA 2018, exact (N_A k_B).
const R: f64 = 8.314_462_618_153_24;

/// Tight tolerances for comparisons with closed forms.
fn tight(points: Points) -> SolveOptions {
    SolveOptions {
        rtol: Some(1e-10),
        points,
        ..Default::default()
    }
}

fn load(yaml: &str) -> Network {
    load_str(yaml, "test", &[]).unwrap_or_else(|e| panic!("test study does not load: {e}\n{yaml}"))
}

fn solve(yaml: &str, points: Points) -> (Network, rxnet::solve::Simulation) {
    let net = load(yaml);
    let sim =
        simulate(&net, &tight(points)).unwrap_or_else(|e| panic!("solve failed: {e}\n{yaml}"));
    (net, sim)
}

fn idx(net: &Network, name: &str) -> usize {
    net.species_index(name)
        .unwrap_or_else(|| panic!("no species {name}"))
}

// ---------------------------------------------------------------------------------------
// Series reactions A -> B -> C, first order, liquid
// ---------------------------------------------------------------------------------------

const K1: f64 = 0.25; // 1/s, test value
const K2: f64 = 0.1; // 1/s, test value

fn series(feed: &str, reactor: &str) -> String {
    format!(
        "name: series test (test values)
phase: liquid
species: {{A: null, B: null, C: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {K1} 1/s}}}}
  - {{id: r2, stoich: B -> C, rate: {{k: {K2} 1/s}}}}
feed: {feed}
reactor: {reactor}
"
    )
}

/// Levenspiel ch. 8 (from memory), first-order reactions in series in a plug flow or batch
/// reactor: C_A/C_A0 = e^(−k1τ), C_B/C_A0 = k1/(k2−k1)(e^(−k1τ) − e^(−k2τ)),
/// C_C/C_A0 = 1 − C_A/C_A0 − C_B/C_A0 (Bateman's solution).
fn bateman(tau: f64) -> [f64; 3] {
    let a = (-K1 * tau).exp();
    let b = K1 / (K2 - K1) * ((-K1 * tau).exp() - (-K2 * tau).exp());
    let c = (K2 * (-K1 * tau).exp() - K1 * (-K2 * tau).exp()) / (K1 - K2) + 1.0;
    [a, b, c]
}

#[test]
fn series_pfr_and_batch_follow_bateman() {
    // PFR: v0 = 2 L/s, V = 10 L, τ = V/v0 = 5 s at the outlet (test values).
    let (net, sim) = solve(
        &series(
            "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
            "{type: pfr, volume: 10 L}",
        ),
        Points::Even(11),
    );
    let v0 = 2e-3;
    let f_a0 = 1.0;
    let mut pfr = Agreement::new("series A->B->C, PFR vs Bateman (Levenspiel ch. 8)");
    for (x, y) in sim.x.iter().zip(&sim.states).skip(1) {
        let want = bateman(x / v0);
        for (k, name) in ["A", "B", "C"].iter().enumerate() {
            pfr.check(
                y[idx(&net, name)] / f_a0,
                want[k],
                1e-6,
                &format!("F_{name}/F_A0 at V = {x}"),
            );
        }
    }
    pfr.report();

    // Batch: 3 mol A in 2 L for 20 s; N_j/N_A0 follows the same functions of t (test values).
    let (net, sim) = solve(
        &series(
            "{T: 300 K, amounts: {A: 3 mol}}",
            "{type: batch, volume: 2 L, time: 20 s}",
        ),
        Points::Even(11),
    );
    let mut batch = Agreement::new("series A->B->C, batch vs Bateman (Levenspiel ch. 8)");
    for (t, y) in sim.x.iter().zip(&sim.states).skip(1) {
        let want = bateman(*t);
        for (k, name) in ["A", "B", "C"].iter().enumerate() {
            batch.check(
                y[idx(&net, name)] / 3.0,
                want[k],
                1e-6,
                &format!("N_{name}/N_A0 at t = {t}"),
            );
        }
    }
    batch.report();
}

#[test]
fn series_through_the_binary_matches_bateman() {
    // The same PFR through the command line, --rtol 1e-10, outlet at τ = 5 s.
    let run = run_args(
        "series-bin",
        &series(
            "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
            "{type: pfr, volume: 10 L}",
        ),
        &["--format", "json", "--rtol", "1e-10"],
    );
    let v = run.ok_json();
    let want = bateman(5.0); // Levenspiel ch. 8 (from memory)
    let mut a = Agreement::new("series A->B->C, binary PFR outlet vs Bateman (Levenspiel ch. 8)");
    for (k, name) in ["A", "B", "C"].iter().enumerate() {
        a.check(num(&v["outlet"][name], name), want[k], 1e-6, name);
    }
    // C_j = F_j / v0 for a liquid (common practice).
    a.check(
        num(&v["concentrations"]["B"], "C_B"),
        want[1] / 2e-3,
        1e-6,
        "C_B",
    );
    a.check(
        num(&v["conversion"], "X"),
        1.0 - want[0],
        1e-6,
        "conversion",
    );
    a.report();
}

#[test]
fn series_cstr_matches_closed_form() {
    // CSTR with τ = 5 s (test values). Levenspiel ch. 8 (from memory), series first-order
    // reactions in a mixed flow reactor: C_A/C_A0 = 1/(1 + k1τ),
    // C_B/C_A0 = k1τ / ((1 + k1τ)(1 + k2τ)).
    let (net, sim) = solve(
        &series(
            "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
            "{type: cstr, volume: 10 L}",
        ),
        Points::End,
    );
    let tau = 5.0;
    let y = sim.outlet();
    let want_a = 1.0 / (1.0 + K1 * tau);
    let want_b = K1 * tau / ((1.0 + K1 * tau) * (1.0 + K2 * tau));
    let mut a = Agreement::new("series A->B->C, CSTR vs closed form (Levenspiel ch. 8)");
    a.check(y[idx(&net, "A")], want_a, 1e-9, "F_A/F_A0");
    a.check(y[idx(&net, "B")], want_b, 1e-9, "F_B/F_A0");
    a.check(y[idx(&net, "C")], 1.0 - want_a - want_b, 1e-9, "F_C/F_A0");
    a.report();
}

// ---------------------------------------------------------------------------------------
// Parallel reactions of equal order
// ---------------------------------------------------------------------------------------

fn parallel(order: u32, feed: &str, reactor: &str) -> String {
    // First order: k1 = 0.2, k2 = 0.05 1/s; second order: k1 = 2e-4, k2 = 5e-5 m3/(mol s)
    // (test values, k1/k2 = 4 in both).
    let (k1, k2) = if order == 1 {
        ("0.2 1/s", "0.05 1/s")
    } else {
        ("2.0e-4 m3/(mol*s)", "5.0e-5 m3/(mol*s)")
    };
    format!(
        "name: parallel test (test values)
phase: liquid
species: {{A: null, B: null, C: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {k1}, orders: {{A: {order}}}}}}}
  - {{id: r2, stoich: A -> C, rate: {{k: {k2}, orders: {{A: {order}}}}}}}
feed: {feed}
reactor: {reactor}
key: A
desired: B
"
    )
}

#[test]
fn parallel_equal_orders_keep_the_ratio_of_rate_constants() {
    // Levenspiel ch. 7 (from memory): for parallel reactions of equal order the product
    // distribution is fixed by k1/k2 alone, F_B/F_C = k1/k2 in every reactor and at every
    // point of a plug flow reactor.
    let ratio = 4.0;
    let flow = "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}";
    let charge = "{T: 300 K, amounts: {A: 1 mol}}";
    let mut a = Agreement::new("parallel equal order, F_B/F_C = k1/k2 (Levenspiel ch. 7)");
    for order in [1, 2] {
        for (feed, reactor, points) in [
            (flow, "{type: pfr, volume: 10 L}", Points::Even(11)),
            (flow, "{type: cstr, volume: 10 L}", Points::End),
            (
                charge,
                "{type: batch, volume: 2 L, time: 5 s}",
                Points::Even(11),
            ),
        ] {
            let (net, sim) = solve(&parallel(order, feed, reactor), points);
            let (b, c) = (idx(&net, "B"), idx(&net, "C"));
            for (x, y) in sim.x.iter().zip(&sim.states) {
                if *x == 0.0 {
                    continue;
                }
                a.check(
                    y[b] / y[c],
                    ratio,
                    1e-8,
                    &format!("order {order}, {reactor}, x = {x}"),
                );
            }
            // The overall selectivity of the metrics says the same.
            let m = rxnet::metrics::compute(&net, sim.outlet());
            let s = m.selectivity[0].value.expect("C is formed");
            a.check(
                s,
                ratio,
                1e-8,
                &format!("order {order}, {reactor}: selectivity B/C"),
            );
        }
    }
    a.report();
}

#[test]
fn parallel_first_order_pfr_matches_closed_form() {
    // Levenspiel ch. 7 (from memory): A -> B, A -> C first order in plug flow,
    // F_A = F_A0 e^(−(k1+k2)τ), F_B = k1/(k1+k2)(F_A0 − F_A).
    let (net, sim) = solve(
        &parallel(
            1,
            "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
            "{type: pfr, volume: 10 L}",
        ),
        Points::Even(11),
    );
    let mut a = Agreement::new("parallel first order, PFR vs closed form (Levenspiel ch. 7)");
    for (x, y) in sim.x.iter().zip(&sim.states).skip(1) {
        let tau = x / 2e-3;
        let fa = (-0.25 * tau).exp(); // k1 + k2 = 0.25 1/s, F_A0 = 1 mol/s
        a.check(y[idx(&net, "A")], fa, 1e-6, &format!("F_A at V = {x}"));
        a.check(
            y[idx(&net, "B")],
            0.2 / 0.25 * (1.0 - fa),
            1e-6,
            &format!("F_B at V = {x}"),
        );
    }
    a.report();
}

#[test]
fn parallel_second_order_profile_through_the_binary() {
    // Levenspiel ch. 7 (from memory): equal orders, so F_B/F_C = k1/k2 = 4 along the whole
    // profile, and the instantaneous selectivity R_B/R_C = 4 as well.
    let run = run_args(
        "parallel-bin",
        &parallel(
            2,
            "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
            "{type: pfr, volume: 10 L}",
        ),
        &["--format", "json", "--points", "11", "--rtol", "1e-10"],
    );
    let v = run.ok_json();
    let profile = v["profile"].as_array().expect("a profile");
    assert_eq!(profile.len(), 11);
    let mut a =
        Agreement::new("parallel second order, binary PFR profile F_B/F_C (Levenspiel ch. 7)");
    for p in &profile[1..] {
        let b = num(&p["state"]["B"], "F_B");
        let c = num(&p["state"]["C"], "F_C");
        a.check(b / c, 4.0, 1e-8, &format!("V = {}", p["x"]));
        let inst = num(&p["instantaneous_selectivity"]["C"], "R_B/R_C");
        a.check(inst, 4.0, 1e-12, &format!("instantaneous, V = {}", p["x"]));
    }
    a.report();
}

// ---------------------------------------------------------------------------------------
// Gas phase, first order with mole change, isothermal isobaric PFR
// ---------------------------------------------------------------------------------------

#[test]
fn gas_pfr_with_expansion_matches_levenspiel() {
    // A -> 2 B with an equal flow of inert: y_A0 = 0.5, δ = 1, ε = y_A0 δ = 0.5.
    // Levenspiel ch. 5 (from memory), first order with variable density in plug flow:
    // kτ = (1 + ε) ln(1/(1 − X)) − εX, τ = V/v0, v0 = F_T0 R T0 / P0 (ideal gas).
    let (k, t0, p0, f_t0, eps) = (0.05, 400.0, 2.0e5, 2.0, 0.5); // test values
    let v0 = f_t0 * R * t0 / p0;
    let tau_of = |x: f64| ((1.0 + eps) * (1.0 / (1.0 - x)).ln() - eps * x) / k;
    let x_target = 0.6;
    let volume = tau_of(x_target) * v0;
    let yaml = format!(
        "name: gas expansion test (test values)
phase: gas
species: {{A: null, B: null, I: null}}
reactions:
  - {{id: r1, stoich: A -> 2 B, rate: {{k: {k} 1/s}}}}
feed: {{T: {t0} K, P: {p0} Pa, flows: {{A: 1 mol/s, I: 1 mol/s}}}}
reactor: {{type: pfr, volume: {volume:.17e} m3}}
key: A
"
    );
    let (net, sim) = solve(&yaml, Points::Even(21));
    let a_i = idx(&net, "A");
    let mut a =
        Agreement::new("gas A->2B with inert, PFR vs (1+ε)ln(1/(1−X)) − εX (Levenspiel ch. 5)");
    let m = rxnet::metrics::compute(&net, sim.outlet());
    a.check(m.conversion, x_target, 1e-6, "outlet conversion");
    for (x, y) in sim.x.iter().zip(&sim.states).skip(1) {
        let conv = 1.0 - y[a_i]; // F_A0 = 1 mol/s
        a.check(
            k * tau_of(conv),
            k * x / v0,
            1e-6,
            &format!("kτ at V = {x}"),
        );
        // Stoichiometry of A -> 2 B: F_B = 2 (F_A0 − F_A) (common practice).
        a.check(
            y[idx(&net, "B")],
            2.0 * conv,
            1e-9,
            &format!("F_B at V = {x}"),
        );
    }
    a.report();

    // Through the binary: the outlet conversion, and C_A = C_T0 F_A/F_T at P0, T0 (ideal gas,
    // common practice).
    let v = (run_args("gas-bin", &yaml, &["--format", "json", "--rtol", "1e-10"])).ok_json();
    let mut b = Agreement::new("gas A->2B, binary outlet (Levenspiel ch. 5)");
    b.check(num(&v["conversion"], "X"), x_target, 1e-6, "conversion");
    let f_a = 1.0 - x_target;
    let f_t = f_t0 + eps * 2.0 * x_target; // F_T = F_T0 (1 + ε X)
    b.check(
        num(&v["concentrations"]["A"], "C_A"),
        p0 / (R * t0) * f_a / f_t,
        1e-6,
        "C_A",
    );
    b.report();
}

// ---------------------------------------------------------------------------------------
// Second-order CSTR
// ---------------------------------------------------------------------------------------

/// The root in (0, 1) of a(1 − X)² = X, a = kτC_A0: X = ((2a + 1) − √(4a + 1)) / (2a).
fn second_order_cstr_x(a: f64) -> f64 {
    ((2.0 * a + 1.0) - (4.0 * a + 1.0).sqrt()) / (2.0 * a)
}

#[test]
fn second_order_cstr_matches_closed_form() {
    // Levenspiel ch. 5 (from memory), second order in a mixed flow reactor:
    // kτC_A0 = X/(1 − X)², with k the rate constant of the disappearance of A.
    let cases = [
        // A -> P with orders {A: 2}: −r_A = k C_A², k = 1e-3 m3/(mol s), C_A0 = 1000 mol/m3,
        // τ = 2 s, kτC_A0 = 2 (test values).
        (
            "A -> P, orders {A: 2}",
            "{id: r1, stoich: A -> P, rate: {k: 1.0e-3 m3/(mol*s), orders: {A: 2}}}",
            "{A: 1 mol/s}",
            "2 L",
            2.0,
        ),
        // A + B -> P, equal feeds, orders {A: 1, B: 1}: C_B = C_A throughout, −r_A = k C_A²;
        // k = 5e-4, C_A0 = 800 mol/m3, τ = 10 s, kτC_A0 = 4 (test values).
        (
            "A + B -> P, equal feeds",
            "{id: r1, stoich: A + B -> P, rate: {k: 5.0e-4 m3/(mol*s)}}",
            "{A: 0.8 mol/s, B: 0.8 mol/s}",
            "10 L",
            4.0,
        ),
        // 2 A -> P with a rate of reaction r = k C_A²: A disappears at 2r (per unit of
        // extent), so the k of the closed form is 2k; 2 · 5e-4 · 2 s · 1000 mol/m3 = 2.
        (
            "2 A -> P, A consumed at 2r",
            "{id: r1, stoich: 2 A -> P, rate: {k: 5.0e-4 m3/(mol*s)}}",
            "{A: 1 mol/s}",
            "2 L",
            2.0,
        ),
    ];
    let mut agree = Agreement::new("second-order CSTR vs kτC_A0 = X/(1−X)² (Levenspiel ch. 5)");
    for (what, reaction, flows, volume, a) in cases {
        let yaml = format!(
            "name: second order cstr (test values)
phase: liquid
species: {{A: null, B: null, P: null}}
reactions:
  - {reaction}
feed: {{T: 300 K, volumetric: 1 L/s, flows: {flows}}}
reactor: {{type: cstr, volume: {volume}}}
key: A
"
        );
        let (net, sim) = solve(&yaml, Points::End);
        let m = rxnet::metrics::compute(&net, sim.outlet());
        let want = second_order_cstr_x(a);
        agree.check(m.conversion, want, 1e-9, what);
        // The closed form itself: X/(1 − X)² = kτC_A0 at the computed X.
        let x = m.conversion;
        agree.check(
            x / ((1.0 - x) * (1.0 - x)),
            a,
            1e-8,
            &format!("{what}: X/(1−X)²"),
        );
    }
    assert!(
        (second_order_cstr_x(2.0) - 0.5).abs() < 1e-15,
        "a = 2 gives X = 1/2 exactly"
    );
    agree.report();
}

// ---------------------------------------------------------------------------------------
// Reversible first-order reaction
// ---------------------------------------------------------------------------------------

#[test]
fn reversible_first_order_reaches_equilibrium() {
    // A <=> B, r = k (C_A − C_B/K), k = 0.5 1/s, K = 3, pure A (test values).
    // Levenspiel ch. 9 (from memory): X_eq = K/(1 + K) = 0.75, and on the way
    // X = X_eq (1 − e^(−k(1 + 1/K) t)) (batch; τ for plug flow).
    let (k, kk) = (0.5, 3.0);
    let x_eq = kk / (1.0 + kk);
    let closed = |t: f64| x_eq * (1.0 - (-k * (1.0 + 1.0 / kk) * t).exp());
    let body = |feed: &str, reactor: &str| {
        format!(
            "name: reversible test (test values)
phase: liquid
species: {{A: null, B: null}}
reactions:
  - {{id: r1, stoich: A <=> B, rate: {{k: {k} 1/s, K_eq: {kk}}}}}
feed: {feed}
reactor: {reactor}
key: A
"
        )
    };
    let mut a =
        Agreement::new("reversible A<=>B vs X_eq = K/(1+K) and its approach (Levenspiel ch. 9)");
    // Batch, 2 mol in 1 L, 60 s: k(1 + 1/K) t = 40, so e^(−40) ≈ 4e-18 is left.
    let (net, sim) = solve(
        &body(
            "{T: 300 K, amounts: {A: 2 mol}}",
            "{type: batch, volume: 1 L, time: 60 s}",
        ),
        Points::Even(13),
    );
    for (t, y) in sim.x.iter().zip(&sim.states).skip(1) {
        a.check(
            1.0 - y[idx(&net, "A")] / 2.0,
            closed(*t),
            1e-6,
            &format!("batch X at t = {t}"),
        );
    }
    a.check(
        rxnet::metrics::compute(&net, sim.outlet()).conversion,
        x_eq,
        1e-8,
        "batch X_eq",
    );
    // Long PFR, v0 = 1 L/s, V = 60 L, τ = 60 s.
    let (net, sim) = solve(
        &body(
            "{T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s}}",
            "{type: pfr, volume: 60 L}",
        ),
        Points::Even(13),
    );
    for (x, y) in sim.x.iter().zip(&sim.states).skip(1) {
        let tau = x / 1e-3;
        a.check(
            1.0 - y[idx(&net, "A")],
            closed(tau),
            1e-6,
            &format!("PFR X at V = {x}"),
        );
    }
    a.check(
        rxnet::metrics::compute(&net, sim.outlet()).conversion,
        x_eq,
        1e-8,
        "PFR X_eq",
    );
    a.report();
}

// ---------------------------------------------------------------------------------------
// Packed bed with pressure drop
// ---------------------------------------------------------------------------------------

/// A -> B over a catalyst (no mole change), 20 % A in nitrogen, α = 0.01 1/kg (test values).
fn bed(catalyst: &str) -> String {
    format!(
        "name: packed bed test (test values)
phase: gas
species: {{A: null, B: null, N2: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: 1.0e-4 m3/(kg*s)}}}}
feed: {{T: 500 K, P: 10 bar, flows: {{A: 0.2 mol/s, N2: 0.8 mol/s}}}}
reactor: {{type: pbr, catalyst: {catalyst}, pressure_drop: {{alpha: 0.01 1/kg}}}}
key: A
"
    )
}

#[test]
fn packed_bed_pressure_follows_square_root_law() {
    // Common practice (from memory): isothermal bed without mole change, lumped α:
    // dy/dW = −α/(2y) gives P/P0 = (1 − αW)^(1/2). With r' = k' C_A, C_A = C_T0 y F_A/F_T0,
    // ln(F_A0/F_A) = (k' C_T0 / F_T0) · (2/(3α)) (1 − (1 − αW)^(3/2)).
    let (alpha, p0, t0, kp, f_t0) = (0.01, 1.0e6, 500.0, 1.0e-4, 1.0);
    let c_t0 = p0 / (R * t0);
    let v = (run_args(
        "bed",
        &bed("60 kg"),
        &["--format", "json", "--points", "21", "--rtol", "1e-10"],
    ))
    .ok_json();
    let profile = v["profile"].as_array().expect("a profile");
    assert_eq!(profile.len(), 21);
    let mut p = Agreement::new("packed bed P/P0 = (1 − αW)^(1/2) (common practice)");
    let mut f = Agreement::new("packed bed F_A with pressure drop (common practice)");
    for pt in profile {
        let w = num(&pt["x"], "W");
        let y = num(&pt["pressure"], "P") / p0;
        p.check(y, (1.0 - alpha * w).sqrt(), 1e-6, &format!("W = {w}"));
        let integral = 2.0 / (3.0 * alpha) * (1.0 - (1.0 - alpha * w).powf(1.5));
        let want = 0.2 * (-kp * c_t0 / f_t0 * integral).exp();
        f.check(
            num(&pt["state"]["A"], "F_A"),
            want,
            1e-6,
            &format!("W = {w}"),
        );
    }
    p.check(
        num(&v["outlet_pressure"], "P_out") / p0,
        0.4_f64.sqrt(),
        1e-6,
        "outlet_pressure",
    );
    p.report();
    f.report();
}

#[test]
fn packed_bed_that_runs_out_of_pressure_is_an_error() {
    // αW = 1.5 > 1: P/P0 = (1 − αW)^(1/2) reaches zero at W = 1/α = 100 kg (common practice),
    // inside the bed. The run must fail (exit 1) with a message, and print no numbers.
    let run = run_args("bed-collapse", &bed("150 kg"), &["--format", "json"]);
    assert_eq!(
        run.code, 1,
        "stdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    assert!(
        run.stdout.is_empty(),
        "no results on stdout: {}",
        run.stdout
    );
    assert!(
        run.stderr.contains("pressure") && run.stderr.contains("W ="),
        "{}",
        run.stderr
    );
    // The library says where: at or before W = 1/α, past the half-way point.
    let net = load(&bed("150 kg"));
    match simulate(&net, &SolveOptions::default()) {
        Err(SolveError::PressureCollapse { w }) => {
            assert!(
                w > 50.0 && w <= 100.0 * (1.0 + 1e-6),
                "collapse at W = {w}, expected near 1/α = 100 kg"
            );
        }
        other => panic!("expected a pressure collapse, got {other:?}"),
    }
    // Just inside the limit (αW = 0.99) the bed still solves, with P/P0 = 0.1.
    let v = (run_args(
        "bed-edge",
        &bed("99 kg"),
        &["--format", "json", "--rtol", "1e-10"],
    ))
    .ok_json();
    let mut a = Agreement::new("packed bed near collapse, P/P0 = (1 − αW)^(1/2) (common practice)");
    a.check(
        num(&v["outlet_pressure"], "P_out") / 1e6,
        0.01_f64.sqrt(),
        1e-5,
        "αW = 0.99",
    );
    a.report();
}

// ---------------------------------------------------------------------------------------
// Stiff network against an independent implicit integrator
// ---------------------------------------------------------------------------------------

const STIFF_JSON: &str = include_str!("reference/stiff_reference.json");

#[test]
fn stiff_batch_matches_scipy_radau() {
    // Reference: scipy.integrate.solve_ivp, Radau, rtol 1e-11 (tests/reference/stiff_reference.py).
    let r: Value = serde_json::from_str(STIFF_JSON).expect("the reference JSON parses");
    // The reference was computed for exactly these parameters (test values).
    let p = &r["parameters"];
    assert_eq!(num(&p["volume_m3"], "V"), 1.0e-3);
    assert_eq!(num(&p["kf_per_s"], "kf"), 1.0e6);
    assert_eq!(num(&p["K_eq"], "K"), 1.0e-3);
    assert_eq!(num(&p["k2_m3_per_mol_s"], "k2"), 1.0e-2);
    assert_eq!(num(&p["k3_m3_per_mol_s"], "k3"), 1.0e-6);
    assert_eq!(num(&p["N0_mol"]["A"], "A0"), 1.0);
    assert_eq!(num(&p["N0_mol"]["B"], "B0"), 0.8);
    assert!(r["scipy_version"].is_string() && r["command"].is_string());
    let yaml = "name: stiff pre-equilibrium batch (test values)
phase: liquid
species: {A: null, I: null, B: null, P: null, D: null}
reactions:
  - {id: pre, stoich: A <=> I, rate: {k: 1.0e6 1/s, K_eq: 1.0e-3}}
  - {id: main, stoich: I + B -> P, rate: {k: 1.0e-2 m3/(mol*s)}}
  - {id: side, stoich: 2 A -> D, rate: {k: 1.0e-6 m3/(mol*s)}}
feed: {T: 300 K, amounts: {A: 1 mol, B: 0.8 mol}}
reactor: {type: batch, volume: 1 L, time: 600 s}
key: A
desired: P
";
    let times: Vec<f64> = r["times_s"]
        .as_array()
        .expect("times")
        .iter()
        .map(|t| num(t, "t"))
        .collect();
    let net = load(yaml);
    let opts = SolveOptions {
        rtol: Some(1e-10),
        // 1e-14 mol: 1e-10 of the smallest species (I, ~1e-4 mol); an atol below the round-off of
        // the 1 mol charge (1e-16) is refused as too tight.
        atol: Some(1e-14),
        points: Points::Even(times.len()),
        ..Default::default()
    };
    let sim = simulate(&net, &opts).unwrap_or_else(|e| panic!("stiff solve failed: {e}"));
    assert_eq!(sim.x.len(), times.len());
    let mut a = Agreement::new("stiff batch vs scipy Radau rtol 1e-11");
    for (k, t) in times.iter().enumerate() {
        assert!(
            (sim.x[k] - t).abs() <= 1e-12 * 600.0,
            "output time {} vs {t}",
            sim.x[k]
        );
        for name in ["A", "I", "B", "P", "D"] {
            let want = num(&r["amounts_mol"][k][name], name);
            let got = sim.states[k][idx(&net, name)];
            if want == 0.0 {
                assert!(got.abs() <= 1e-14, "{name} at t = {t}: {got}, expected 0");
            } else {
                a.check(got, want, 1e-6, &format!("N_{name} at t = {t}"));
            }
        }
    }
    a.report();
}

// ---------------------------------------------------------------------------------------
// Element balances along the bundled networks
// ---------------------------------------------------------------------------------------

#[test]
fn element_balances_hold_along_every_bundled_network() {
    // Common practice: reactions conserve atoms, so Σ_j a_ej F_j is constant along any reactor
    // that integrates balanced reactions.
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("networks");
    let mut files: Vec<_> = std::fs::read_dir(&dir)
        .expect("networks/ exists")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    files.sort();
    let mut a = Agreement::new("element totals along bundled networks' profiles (common practice)");
    let mut checked = 0;
    for path in &files {
        let p = path.to_str().expect("UTF-8 path");
        let check = rxnet(&["check", p]);
        if check.code != 0 {
            // A network with error findings is refused by `run` too.
            let run = rxnet(&["run", p, "--format", "json"]);
            assert_eq!(
                run.code, 1,
                "{p}: a network with error findings must not run:\n{}",
                run.stdout
            );
            continue;
        }
        let run = rxnet(&["run", p, "--format", "json", "--points", "21"]);
        let v = run.ok_json();
        let net = rxnet::load_file(path, &[]).expect("the bundled network loads");
        let profile = v["profile"].as_array().expect("a profile");
        if v["reactor"] == "train" {
            // Vessels in series with streams joining: the outlet's closure counts every
            // stream fed (checked above with the others); the closure along the profile,
            // with what joined before each point, is tests/trains.rs's.
            let closure = v["element_closure"].as_object().expect("element_closure");
            for (e, c) in closure {
                assert!(num(c, e) <= 1e-9, "{p}: reported closure of {e} is {c}");
            }
            assert!(
                profile.iter().all(|pt| pt["unit"].is_string()),
                "{p}: labelled profile"
            );
            continue;
        }
        if v["reactor"] == "cstr" {
            assert_eq!(profile.len(), 1, "{p}: a CSTR has only the outlet");
        } else {
            assert_eq!(profile.len(), 21, "{p}: --points 21");
        }
        let closure = v["element_closure"].as_object().expect("element_closure");
        let all_formulas = net.species.iter().all(|s| s.formula.is_some());
        assert_eq!(
            closure.is_empty(),
            !all_formulas,
            "{p}: closure reported iff all species have formulas"
        );
        for (e, c) in closure {
            let c = num(c, e);
            assert!(c <= 1e-9, "{p}: reported closure of {e} is {c:e}");
        }
        if !all_formulas {
            continue;
        }
        let mut elements: Vec<String> = net
            .species
            .iter()
            .flat_map(|s| s.formula.as_ref().expect("checked").atoms().keys().cloned())
            .collect();
        elements.sort();
        elements.dedup();
        for e in &elements {
            let atoms = |state: &dyn Fn(usize) -> f64| -> f64 {
                net.species
                    .iter()
                    .enumerate()
                    .map(|(j, s)| {
                        s.formula
                            .as_ref()
                            .expect("checked")
                            .atoms()
                            .get(e)
                            .copied()
                            .unwrap_or(0.0)
                            * state(j)
                    })
                    .sum()
            };
            let inlet = atoms(&|j| net.feed.amounts[j]);
            // The total of all atoms fed sets the scale where an element is not fed.
            let scale_all: f64 = elements
                .iter()
                .map(|el| {
                    net.species
                        .iter()
                        .enumerate()
                        .map(|(j, s)| {
                            s.formula
                                .as_ref()
                                .expect("checked")
                                .atoms()
                                .get(el)
                                .copied()
                                .unwrap_or(0.0)
                                * net.feed.amounts[j]
                        })
                        .sum::<f64>()
                })
                .sum();
            for pt in profile {
                let here = atoms(&|j| num(&pt["state"][&net.species[j].name], "state"));
                let at = format!("{p}: element {e} at x = {}", pt["x"]);
                // What a semibatch has dosed by then entered too (the bundled semibatch
                // withdraws nothing).
                let dosed = rxnet::reactor::dosed_by(&net, num(&pt["x"], "x"));
                let fed = atoms(&|j| net.feed.amounts[j] + dosed[j]);
                if inlet > 0.0 {
                    a.check(here, fed, 1e-9, &at);
                } else {
                    assert!(
                        here.abs() <= 1e-9 * scale_all,
                        "{at}: {here:e} of an element not fed"
                    );
                }
            }
        }
        checked += 1;
    }
    assert!(
        checked >= 2,
        "at least two bundled networks were balanced-checked, got {checked}"
    );
    println!("element balances: {checked} networks checked");
    a.report();
}

// ---------------------------------------------------------------------------------------
// Bad numerics, solver residual, profile CSV
// ---------------------------------------------------------------------------------------

#[test]
fn bad_numerics_are_errors_that_say_where() {
    // A rate of second order in B alone while B is made: dC_B/dτ = k C_B^2 blows up at
    // τ = 1/(k C_B0) = 1 s, V = 1e-3 m3 (closed form of the quadratic ODE, common practice), so
    // the integration cannot pass that point. The run must fail with exit 1 and say where
    // (V = ...), not print numbers.
    let frac = "name: blow-up (test values)
phase: liquid
species: {A: null, B: null}
reactions:
  - {id: r1, stoich: A + B -> 2 B, rate: {k: 1.0e-3 m3/(mol*s), orders: {B: 2}}}
feed: {T: 300 K, volumetric: 1 L/s, flows: {A: 1 mol/s, B: 1 mol/s}}
reactor: {type: pfr, volume: 1 m3}
";
    let run = run_args("blow-up", frac, &["--format", "json"]);
    assert_eq!(
        run.code, 1,
        "stdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    assert!(
        run.stdout.is_empty(),
        "no numbers on failure: {}",
        run.stdout
    );
    assert!(
        run.stderr.contains("V =") && run.stderr.contains("PFR"),
        "{}",
        run.stderr
    );

    // An order of −1 on the product B, which starts at zero: the rate is infinite at t = 0
    // (C_B^−1 of zero). A batch must refuse it and say t = ....
    let inf = "name: infinite rate (test values)
phase: liquid
species: {A: null, B: null}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 1.0 mol/(m3*s), orders: {A: 1, B: -1}}}
feed: {T: 300 K, amounts: {A: 1 mol}}
reactor: {type: batch, volume: 1 L, time: 10 s}
";
    let run = run_args("inf-rate", inf, &["--format", "json"]);
    assert_eq!(
        run.code, 1,
        "stdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    assert!(
        run.stdout.is_empty(),
        "no numbers on failure: {}",
        run.stdout
    );
    assert!(
        run.stderr.contains("t =") && run.stderr.contains("non-finite"),
        "{}",
        run.stderr
    );
    // The library gives the same as an error value that carries the place.
    match simulate(&load(inf), &SolveOptions::default()) {
        Err(SolveError::Integration { x_name, x, .. }) => {
            assert_eq!(x_name, "t");
            assert_eq!(x, 0.0);
        }
        other => panic!("expected an integration error, got {other:?}"),
    }
}

#[test]
fn cstr_reports_a_small_newton_residual() {
    // The steady state F_0 − F + V Σ ν r = 0 (CSTR design equation, Levenspiel ch. 5, from
    // memory) must hold to below 1e-9 of the total feed, and the report must say so.
    let studies = [
        series(
            "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
            "{type: cstr, volume: 10 L}",
        ),
        parallel(
            2,
            "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
            "{type: cstr, volume: 10 L}",
        ),
    ];
    let mut worst: f64 = 0.0;
    for yaml in &studies {
        let v = (run_args("cstr-res", yaml, &["--format", "json"])).ok_json();
        let res = num(&v["solver"]["residual"], "solver.residual");
        let total: f64 = 1.0; // F_T0 = 1 mol/s
        assert!(res >= 0.0 && res < 1e-9 * total, "residual {res:e} mol/s");
        worst = worst.max(res / total);
        // Recompute the residual from the reported outlet for the series case.
        if yaml.contains("B -> C") {
            let (fa, fb, fc) = (
                num(&v["outlet"]["A"], "A"),
                num(&v["outlet"]["B"], "B"),
                num(&v["outlet"]["C"], "C"),
            );
            let (v0, vol) = (2e-3, 1e-2);
            let r1 = K1 * fa / v0;
            let r2 = K2 * fb / v0;
            let g = [
                1.0 - fa + vol * (-r1),
                -fb + vol * (r1 - r2),
                -fc + vol * r2,
            ];
            for (k, gk) in g.iter().enumerate() {
                assert!(
                    gk.abs() < 1e-9,
                    "residual of species {k} from the outlet: {gk:e}"
                );
                worst = worst.max(gk.abs());
            }
        }
    }
    println!("agreement | CSTR Newton residual / F_T0 | max {worst:.2e}");
}

/// CSV text to (header, rows) where every cell is a number.
fn read_csv(text: &str) -> (Vec<String>, Vec<Vec<f64>>) {
    let (header, rows) = common::read_csv(text);
    let rows = rows
        .into_iter()
        .map(|r| r.into_iter().map(|c| c.expect("no empty cell")).collect())
        .collect();
    (header, rows)
}

#[test]
fn profile_csv_has_units_and_the_asked_rows() {
    // PFR: --profile FILE --points 7.
    let csv = std::env::temp_dir().join(format!("rxnet-test-{}-profile.csv", std::process::id()));
    let yaml = series(
        "{T: 300 K, volumetric: 2 L/s, flows: {A: 1 mol/s}}",
        "{type: pfr, volume: 10 L}",
    );
    let run = run_args(
        "csv-pfr",
        &yaml,
        &[
            "--profile",
            csv.to_str().expect("UTF-8"),
            "--points",
            "7",
            "--rtol",
            "1e-10",
        ],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let text = std::fs::read_to_string(&csv).expect("the profile file was written");
    let _ = std::fs::remove_file(&csv);
    let (header, rows) = read_csv(&text);
    assert_eq!(header, ["V [m3]", "A [mol/s]", "B [mol/s]", "C [mol/s]"]);
    assert_eq!(rows.len(), 7);
    assert!(rows.iter().all(|r| r.len() == 4));
    assert_eq!(rows[0][0], 0.0);
    assert!(rel_err(rows[6][0], 0.01) < 1e-12, "last V = {}", rows[6][0]);
    // The rows are the solution: Bateman at τ = V/v0 (Levenspiel ch. 8, from memory).
    let mut a = Agreement::new("profile CSV rows vs Bateman (Levenspiel ch. 8)");
    for r in &rows[1..] {
        let want = bateman(r[0] / 2e-3);
        for (k, w) in want.iter().enumerate() {
            a.check(
                r[k + 1],
                *w,
                1e-6,
                &format!("column {} at V = {}", header[k + 1], r[0]),
            );
        }
    }
    a.report();

    // Packed bed with pressure drop: --format csv to stdout, P [Pa] after the species, then
    // the gas volumetric flow (its values are checked in tests/report_fields.rs).
    let run = run_args(
        "csv-bed",
        &bed("60 kg"),
        &["--format", "csv", "--points", "5"],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let (header, rows) = read_csv(&run.stdout);
    assert_eq!(
        header,
        [
            "W [kg]",
            "A [mol/s]",
            "B [mol/s]",
            "N2 [mol/s]",
            "P [Pa]",
            "v [m3/s]"
        ]
    );
    assert_eq!(rows.len(), 5);
    assert_eq!(rows[0][4], 1.0e6, "P at the inlet is P0");
    // P/P0 = (1 − αW)^(1/2) at W = 60 kg (common practice, from memory).
    assert!(
        rel_err(rows[4][4], 1.0e6 * 0.4_f64.sqrt()) < 1e-6,
        "outlet P = {}",
        rows[4][4]
    );

    // Batch: amounts in mol against t [s].
    let run = run_args(
        "csv-batch",
        &series(
            "{T: 300 K, amounts: {A: 3 mol}}",
            "{type: batch, volume: 2 L, time: 20 s}",
        ),
        &["--format", "csv", "--points", "3"],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let (header, rows) = read_csv(&run.stdout);
    assert_eq!(header, ["t [s]", "A [mol]", "B [mol]", "C [mol]"]);
    assert_eq!(rows.len(), 3);
    assert_eq!(rows[2][0], 20.0);
}

#[test]
fn a_bed_failure_far_from_collapse_is_not_called_a_pressure_collapse() {
    // A -> B with order −1 in A (r' = k'/C_A): the rate blows up as A runs out near
    // W ≈ 73 kg, where the pressure is still P/P0 = (1 − αW)^(1/2) ≈ 0.52 (no mole change,
    // α = 0.01 1/kg; common practice). The run must fail (exit 1) and say where, but it must
    // not say that the pressure fell to zero.
    let yaml = "name: rate blow-up in a bed (test values)
phase: gas
species: {A: null, B: null, N2: null}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.05 mol2/(m3*kg*s), orders: {A: -1}}}
feed: {T: 500 K, P: 10 bar, flows: {A: 0.2 mol/s, N2: 0.8 mol/s}}
reactor: {type: pbr, catalyst: 90 kg, pressure_drop: {alpha: 0.01 1/kg}}
key: A
";
    let run = run_args("bed-blowup", yaml, &["--format", "json"]);
    assert_eq!(
        run.code, 1,
        "stdout:\n{}\nstderr:\n{}",
        run.stdout, run.stderr
    );
    assert!(run.stderr.contains("W ="), "{}", run.stderr);
    match simulate(&load(yaml), &SolveOptions::default()) {
        Err(SolveError::PressureCollapse { w }) => {
            let y = (1.0 - 0.01 * w).sqrt();
            panic!("reported as a pressure collapse at W = {w} kg, where P/P0 = {y:.3} (not zero)");
        }
        Err(_) => {}
        Ok(_) => panic!("the rate blows up inside the bed; the solve must fail"),
    }
}

#[test]
fn gas_cstr_with_expansion_matches_levenspiel() {
    // Levenspiel ch. 5 (from memory), first order with variable density in mixed flow:
    // kτ = X(1 + εX)/(1 − X), τ = V/v0, v0 = F_T0 R T0 / P0. A -> 2 B with an equal flow of
    // inert, ε = 0.5; for X = 0.4, kτ = 0.8 (test values).
    let (k, t0, p0, eps, x_target) = (0.05, 400.0, 2.0e5, 0.5, 0.4);
    let v0 = 2.0 * R * t0 / p0;
    let volume = x_target * (1.0 + eps * x_target) / (1.0 - x_target) / k * v0;
    let yaml = format!(
        "name: gas cstr test (test values)
phase: gas
species: {{A: null, B: null, I: null}}
reactions:
  - {{id: r1, stoich: A -> 2 B, rate: {{k: {k} 1/s}}}}
feed: {{T: {t0} K, P: {p0} Pa, flows: {{A: 1 mol/s, I: 1 mol/s}}}}
reactor: {{type: cstr, volume: {volume:.17e} m3}}
key: A
"
    );
    let v = (run_args("gas-cstr", &yaml, &["--format", "json"])).ok_json();
    let mut a = Agreement::new("gas A->2B, CSTR vs kτ = X(1+εX)/(1−X) (Levenspiel ch. 5)");
    a.check(num(&v["conversion"], "X"), x_target, 1e-9, "conversion");
    a.report();
}

#[test]
fn constant_pressure_gas_batch_first_order() {
    // Levenspiel ch. 3 (from memory): a first-order reaction in a batch of changing volume
    // still gives N_A = N_A0 e^(−kt) (the rate per volume times the volume is k N_A), and the
    // volume follows V = V0 (1 + ε X) at constant pressure. A -> 2 B, 1 mol A + 1 mol inert,
    // ε = 0.5, k = 0.05 1/s, t = 20 s (test values).
    let yaml = "name: constant pressure batch (test values)
phase: gas
species: {A: null, B: null, I: null}
reactions:
  - {id: r1, stoich: A -> 2 B, rate: {k: 0.05 1/s}}
feed: {T: 400 K, P: 2e5 Pa, amounts: {A: 1 mol, I: 1 mol}}
reactor: {type: batch, time: 20 s, mode: constant_pressure}
key: A
";
    let (net, sim) = solve(yaml, Points::Even(11));
    let mut a =
        Agreement::new("constant-pressure gas batch, N_A = N_A0 e^(−kt) (Levenspiel ch. 3)");
    for (t, y) in sim.x.iter().zip(&sim.states).skip(1) {
        a.check(
            y[idx(&net, "A")],
            (-0.05 * t).exp(),
            1e-6,
            &format!("N_A at t = {t}"),
        );
    }
    let v = (run_args("cp-batch", yaml, &["--format", "json", "--rtol", "1e-10"])).ok_json();
    let x = 1.0 - (-1.0_f64).exp();
    let v0 = 2.0 * R * 400.0 / 2e5;
    let vol = v0 * (1.0 + 0.5 * x);
    a.check(
        num(&v["concentrations"]["A"], "C_A"),
        (1.0 - x) / vol,
        1e-6,
        "C_A = N_A / (V0 (1 + εX))",
    );
    a.report();
}

/// Split one CSV line by RFC 4180: commas separate fields, a field in double quotes may hold
/// commas, and "" inside quotes is one quote.
fn csv_fields(line: &str) -> Vec<String> {
    let mut fields = vec![String::new()];
    let mut quoted = false;
    let mut chars = line.chars().peekable();
    while let Some(c) = chars.next() {
        match (c, quoted) {
            ('"', true) if chars.peek() == Some(&'"') => {
                chars.next();
                fields.last_mut().expect("a field").push('"');
            }
            ('"', _) => quoted = !quoted,
            (',', false) => fields.push(String::new()),
            (c, _) => fields.last_mut().expect("a field").push(c),
        }
    }
    fields
}

#[test]
fn profile_csv_keeps_a_species_name_with_a_comma_in_one_column() {
    // Species names may contain `,` (docs/network-format.md). A CSV reader (RFC 4180, common
    // practice) must then see as many header fields as row fields, and the name whole.
    let yaml = "name: comma in a name (test values)
phase: liquid
species:
  \"A(1,2)\": null
  B: null
reactions:
  - id: r1
    stoich: \"A(1,2) -> B\"
    rate: {k: 0.1 1/s}
feed:
  T: 300 K
  volumetric: 1 L/s
  flows:
    \"A(1,2)\": 1 mol/s
reactor: {type: pfr, volume: 1 L}
";
    let run = run_args("csv-comma", yaml, &["--format", "csv", "--points", "3"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let mut lines = run.stdout.lines();
    let header = csv_fields(lines.next().expect("a header"));
    assert_eq!(
        header,
        ["V [m3]", "A(1,2) [mol/s]", "B [mol/s]"],
        "CSV:\n{}",
        run.stdout
    );
    for l in lines {
        assert_eq!(csv_fields(l).len(), header.len(), "row `{l}`");
    }
}

#[test]
fn krylov_solve_of_a_large_network_matches_dense_lu_and_conserves_atoms() {
    // 300 species, 900 steps, rate constants over ten decades (rxnet::generate, demo values).
    let spec = rxnet::generate::GeneratorSpec {
        species: 300,
        reactions: 900,
        seed: 5,
        ..Default::default()
    };
    let text = rxnet::generate::generate_study(&spec).unwrap();
    let net = load(&text);
    let auto = simulate(&net, &SolveOptions::default()).unwrap();
    assert!(auto.stats.method.contains("GMRES"), "{}", auto.stats.method);
    assert!(auto.stats.linear_solves > 0 && auto.stats.krylov_iterations > 0);
    let dense = simulate(
        &net,
        &SolveOptions {
            linear_algebra: rxnet::solve::ode::LinearAlgebra::Dense,
            ..Default::default()
        },
    )
    .unwrap();
    assert!(dense.stats.method.contains("dense LU"));
    let feed = balance_feed(&net);
    let total: f64 = feed.iter().sum();
    // Both solve to rtol 1e-8, atol 1e-12 F_T0: agreement well inside 1e-5 of each value,
    // on the scale 1e-6 F_T0 for trace species (the comparison of docs/bench_scipy.py).
    for (j, (a, d)) in auto.outlet().iter().zip(dense.outlet()).enumerate() {
        let scale = d.abs().max(1e-6 * total);
        assert!(
            (a - d).abs() <= 1e-5 * scale,
            "{}: {a} against {d}",
            net.species[j].name
        );
    }
    // Every step conserves C and H (the generator balances atoms; conservation of elements,
    // common practice): the outlet holds the feed's atoms to the integration tolerance.
    let (c0, h0) = common::carbon_hydrogen(&net, &feed);
    let (c1, h1) = common::carbon_hydrogen(&net, auto.outlet());
    assert!(((c1 - c0) / c0).abs() <= 1e-7, "C {c0} -> {c1}");
    assert!(((h1 - h0) / h0).abs() <= 1e-7, "H {h0} -> {h1}");
}

/// Feed flows per species, in the order of `net.species`.
fn balance_feed(net: &Network) -> Vec<f64> {
    rxnet::reactor::Balance::new(net)
        .unwrap()
        .initial_state(net)[..net.species.len()]
        .to_vec()
}
