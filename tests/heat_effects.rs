//! Non-isothermal reactors against independent references: the adiabatic energy-balance
//! relations (closed forms) and scipy solutions stored as fixtures.
//!
//! Every number in these studies is a demo value, not data for any real process. The study
//! files are taken from the fixtures themselves (each fixture's `study` was written by the
//! script that computed the expected values from the same numbers), so the two cannot drift.
//! Scripts and fixtures, with the command and the scipy version in each JSON:
//! - tests/reference/heat_adiabatic.py: adiabatic liquid PFR, batch and CSTR with ΔCp = 0; an
//!   adiabatic gas PFR with ΔCp ≠ 0;
//! - tests/reference/heat_cstr_multiplicity.py: a cooled CSTR with three steady states, their
//!   stability and the ignition and extinction temperatures;
//! - tests/reference/heat_cooled_pfr.py: PFRs with a coolant stream (co-current by solve_ivp,
//!   counter-current by solve_bvp checked by shooting) and a cooled series scheme;
//! - tests/reference/heat_batch.py: a jacketed liquid batch (constant and ramped jacket) and
//!   constant-volume gas batches.
//!
//! "Fogler" is H. S. Fogler, Elements of Chemical Reaction Engineering (ch. 11-13);
//! "Levenspiel" is O. Levenspiel, Chemical Reaction Engineering, 3rd ed. (ch. 9); both quoted
//! from memory.
//!
//! The studies set `solver: {rtol: 1e-10}` and scipy ran at rtol 1e-11 (Radau, checked by
//! DOP853 at 1e-13), so profiles are compared at 1e-7 relative; the counter-current tube and
//! the CSTR states at the tolerances given beside them.
//!
//! Run with `--nocapture` to see the worst relative error of each family of checks.

mod common;

use common::{Agreement, num, rel_err, run_args};
use serde_json::Value;

/// Molar gas constant, J/(mol K): CODATA 2018, exact (N_A k_B).
const R: f64 = 8.314_462_618_153_24;

// ---------------------------------------------------------------------------------------
// Where the report puts the temperature figures. These are the names the tests expect in
// `rxnet run --format json` for a reactor with an energy balance; they are gathered here so
// that a rename touches one place.
// ---------------------------------------------------------------------------------------

/// Temperature at one profile point, K.
fn point_t(p: &Value) -> f64 {
    num(&p["temperature"], "profile point `temperature`")
}

/// Coolant temperature at one profile point (coolant stream), K.
fn point_coolant_t(p: &Value) -> f64 {
    num(
        &p["coolant_temperature"],
        "profile point `coolant_temperature`",
    )
}

/// Temperature of one CSTR steady state, K.
fn state_t(s: &Value) -> f64 {
    num(&s["temperature"], "steady state `temperature`")
}

/// The adiabatic temperature rise of the feed, K.
fn reported_dt_ad(j: &Value) -> f64 {
    num(&j["heat"]["adiabatic_rise"], "`heat.adiabatic_rise`")
}

/// The hot spot: (temperature K, where: V m3 or t s).
fn reported_hot_spot(j: &Value) -> (f64, f64) {
    (
        num(
            &j["heat"]["hot_spot"]["temperature"],
            "`heat.hot_spot.temperature`",
        ),
        num(&j["heat"]["hot_spot"]["at"], "`heat.hot_spot.at`"),
    )
}

/// The coolant's outlet temperature of a coolant stream, K (at V = 0 counter-current).
fn reported_coolant_outlet(j: &Value) -> f64 {
    num(&j["heat"]["coolant_outlet"], "`heat.coolant_outlet`")
}

/// Ignition and extinction values of a parameter (`feed_T` or `coolant_T`), K.
fn reported_turning_points(j: &Value, parameter: &str) -> (f64, f64) {
    let tp = &j["steady_states"]["turning_points"][parameter];
    (
        num(
            &tp["ignition"],
            &format!("`steady_states.turning_points.{parameter}.ignition`"),
        ),
        num(
            &tp["extinction"],
            &format!("`steady_states.turning_points.{parameter}.extinction`"),
        ),
    )
}

// ---------------------------------------------------------------------------------------
// Fixtures and runs
// ---------------------------------------------------------------------------------------

fn fixture(name: &str) -> Value {
    let path = format!("{}/tests/reference/{name}.json", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn f(v: &Value, what: &str) -> f64 {
    num(v, what)
}

fn fv(v: &Value, what: &str) -> Vec<f64> {
    v.as_array()
        .unwrap_or_else(|| panic!("{what} is not an array: {v}"))
        .iter()
        .map(|x| num(x, what))
        .collect()
}

fn study(case: &Value) -> &str {
    case["study"]
        .as_str()
        .expect("the fixture carries its study")
}

/// `rxnet run STUDY --format json --points N` (N from the fixture) as JSON; must succeed.
fn run_profile(tag: &str, case: &Value) -> Value {
    let n = case["points"].as_u64().expect("points").to_string();
    run_args(tag, study(case), &["--format", "json", "--points", &n]).ok_json()
}

/// The profile of a run: one entry per point.
fn profile(j: &Value) -> &Vec<Value> {
    j["profile"]
        .as_array()
        .expect("a profile in the JSON report")
}

/// Conversion of the key `A` at each profile point: X = 1 − F_A/F_A0 (or N_A/N_A0).
fn profile_conversion(j: &Value) -> Vec<f64> {
    let p = profile(j);
    let a0 = num(&p[0]["state"]["A"], "A at the inlet");
    p.iter()
        .map(|q| 1.0 - num(&q["state"]["A"], "A") / a0)
        .collect()
}

/// The abscissae of the profile must be the fixture's (evenly spaced, ends included).
fn same_abscissae(j: &Value, case: &Value) {
    let x = fv(&case["x"], "x");
    let p = profile(j);
    assert_eq!(p.len(), x.len(), "profile points");
    for (q, want) in p.iter().zip(&x) {
        let got = num(&q["x"], "x");
        assert!(
            (got - want).abs() <= 1e-12 * x[x.len() - 1],
            "abscissa {got}, fixture {want}"
        );
    }
}

/// Compare the profile's conversion and temperature with the fixture's at `tol` relative.
fn profile_against_fixture(a: &mut Agreement, j: &Value, case: &Value, tol: f64) {
    same_abscissae(j, case);
    let xs = fv(&case["x"], "x");
    let conv = fv(&case["conversion"], "conversion");
    let ts = fv(&case["T"], "T");
    for (k, (q, x)) in profile(j).iter().zip(profile_conversion(j)).enumerate() {
        // scipy solve_ivp Radau rtol 1e-11 (the fixture's script)
        a.check(x, conv[k], tol, &format!("X at {}", xs[k]));
        a.check(point_t(q), ts[k], tol, &format!("T at {}", xs[k]));
    }
}

// ---------------------------------------------------------------------------------------
// 1. Adiabatic, one reaction, ΔCp = 0
// ---------------------------------------------------------------------------------------

/// T − T0 = ΔT_ad X at every profile point (Levenspiel ch. 9 / Fogler ch. 11, from memory),
/// to 1e-8 of ΔT_ad.
fn adiabatic_line(j: &Value, t0: f64, dt_ad: f64, what: &str) {
    let mut worst: f64 = 0.0;
    for (q, x) in profile(j).iter().zip(profile_conversion(j)) {
        let t = point_t(q);
        let e = ((t - t0) - dt_ad * x).abs() / dt_ad;
        assert!(
            e <= 1e-8,
            "{what}: T − T0 = {} but ΔT_ad X = {} at {} (relative {e:.2e})",
            t - t0,
            dt_ad * x,
            q["x"]
        );
        worst = worst.max(e);
    }
    println!("agreement | {what}: T − T0 = ΔT_ad X | max error / ΔT_ad {worst:.2e}");
}

#[test]
fn adiabatic_liquid_pfr_follows_the_adiabatic_line_and_scipy() {
    let fx = fixture("heat_adiabatic");
    let case = &fx["liquid"]["pfr"];
    let dt_ad = f(&fx["liquid"]["dT_ad"], "dT_ad");
    let j = run_profile("adiabatic-pfr", case);
    adiabatic_line(&j, 300.0, dt_ad, "adiabatic liquid PFR");
    let mut a = Agreement::new("adiabatic liquid PFR vs scipy Radau (heat_adiabatic.py)");
    profile_against_fixture(&mut a, &j, case, 1e-7);
    a.report();
}

#[test]
fn adiabatic_liquid_batch_follows_the_adiabatic_line_and_scipy() {
    let fx = fixture("heat_adiabatic");
    let case = &fx["liquid"]["batch"];
    let dt_ad = f(&fx["liquid"]["dT_ad"], "dT_ad");
    let j = run_profile("adiabatic-batch", case);
    adiabatic_line(&j, 300.0, dt_ad, "adiabatic liquid batch");
    let mut a = Agreement::new("adiabatic liquid batch vs scipy Radau (heat_adiabatic.py)");
    profile_against_fixture(&mut a, &j, case, 1e-7);
    a.report();
}

#[test]
fn reports_give_the_adiabatic_rise_and_the_hot_spot() {
    let fx = fixture("heat_adiabatic");
    let dt_ad = f(&fx["liquid"]["dT_ad"], "dT_ad");
    let mut a = Agreement::new("reported ΔT_ad and hot spot vs heat_adiabatic.py");
    for which in ["pfr", "batch"] {
        let case = &fx["liquid"][which];
        let j = run_profile("adiabatic-figures", case);
        // ΔT_ad = (−ΔH) F_A0 / Σ F_j0 cp_j, for a batch with N in place of F (Levenspiel
        // ch. 9, from memory; the script's value)
        a.check(reported_dt_ad(&j), dt_ad, 1e-12, &format!("{which}: ΔT_ad"));
        // T rises with X in an adiabatic exothermic reactor: the hot spot is at the end.
        let (t_hs, at) = reported_hot_spot(&j);
        let ts = fv(&case["T"], "T");
        let xs = fv(&case["x"], "x");
        a.check(
            t_hs,
            ts[ts.len() - 1],
            1e-7,
            &format!("{which}: hot spot T"),
        );
        a.check(
            at,
            xs[xs.len() - 1],
            1e-12,
            &format!("{which}: hot spot at the end"),
        );
    }
    a.report();
}

#[test]
fn adiabatic_liquid_cstr_states_lie_on_the_adiabatic_line() {
    let fx = fixture("heat_adiabatic");
    let case = &fx["liquid"]["cstr"];
    let dt_ad = f(&fx["liquid"]["dT_ad"], "dT_ad");
    let j = run_args("adiabatic-cstr", study(case), &["--format", "json"]).ok_json();
    let got = j["steady_states"]["states"].as_array().expect("states");
    let want = case["states"].as_array().expect("fixture states");
    // every root of T − T0 − ΔT_ad kτ/(1 + kτ) from a 200 001-point scan + brentq
    assert_eq!(got.len(), want.len(), "steady states:\n{j}");
    let mut a = Agreement::new("adiabatic liquid CSTR vs scan + brentq (heat_adiabatic.py)");
    for (g, w) in got.iter().zip(want) {
        let (t, x) = (state_t(g), num(&g["conversion"], "X"));
        // T − T0 = ΔT_ad X (Levenspiel ch. 9 / Fogler ch. 11, from memory)
        assert!(
            ((t - 300.0) - dt_ad * x).abs() <= 1e-8 * dt_ad,
            "T − T0 = {}, ΔT_ad X = {}",
            t - 300.0,
            dt_ad * x
        );
        a.check(t, f(&w["T"], "T"), 1e-9, "T");
        a.check(x, f(&w["conversion"], "X"), 1e-8, "X");
    }
    a.check(reported_dt_ad(&j), dt_ad, 1e-12, "reported ΔT_ad");
    a.report();
}

// ---------------------------------------------------------------------------------------
// 2. Adiabatic with ΔCp ≠ 0 (gas, A -> 2 B with inert)
// ---------------------------------------------------------------------------------------

#[test]
fn adiabatic_gas_pfr_with_heat_capacity_change() {
    let fx = fixture("heat_adiabatic");
    let case = &fx["gas_dcp"];
    let j = run_profile("adiabatic-gas", case);
    let t0 = 400.0;
    let theta_cp = f(&case["theta_cp"], "theta_cp"); // Σ Θ_j cp_j = cp_A + 3 cp_N
    let dcp = f(&case["dCp"], "dCp"); // 2 cp_B − cp_A
    let dh0 = f(&case["dH_at_T0"], "dH_at_T0"); // Kirchhoff from T_ref = 350 K to T0
    // The study's own numbers, so the relation below does not lean on the script alone:
    // ΔCp = 2·80 − 120 J/(mol K); ΔH(400 K) = −42 kJ/mol + ΔCp · 50 K (Kirchhoff).
    assert_eq!(dcp, 40.0);
    assert!(rel_err(dh0, -42e3 + 40.0 * 50.0) < 1e-14);
    assert!(rel_err(theta_cp, 120.0 + 3.0 * 30.0) < 1e-14);
    // X = Σ Θ_j ∫_{T0}^{T} Cp_j dT / (−ΔH(T)) at every point (Fogler ch. 11, Levenspiel
    // ch. 9; from memory), to 1e-8.
    let mut worst: f64 = 0.0;
    for (q, x) in profile(&j).iter().zip(profile_conversion(&j)) {
        let t = point_t(q);
        let want = theta_cp * (t - t0) / (-(dh0 + dcp * (t - t0)));
        let e = (x - want).abs();
        assert!(
            e <= 1e-8,
            "X = {x}, Σ Θ cp ΔT / (−ΔH(T)) = {want} at V = {}",
            q["x"]
        );
        worst = worst.max(e);
    }
    println!("agreement | gas ΔCp ≠ 0: X = Σ Θ_j ∫Cp_j dT / (−ΔH(T)) | max |error| {worst:.2e}");
    let mut a = Agreement::new("adiabatic gas PFR, ΔCp ≠ 0, vs scipy Radau (heat_adiabatic.py)");
    profile_against_fixture(&mut a, &j, case, 1e-7);
    a.report();
}

// ---------------------------------------------------------------------------------------
// 3. A cooled CSTR with three steady states
// ---------------------------------------------------------------------------------------

fn three_states(tag: &str, study_text: &str, fx: &Value) {
    let j = run_args(tag, study_text, &["--format", "json"]).ok_json();
    let got = j["steady_states"]["states"].as_array().expect("states");
    let want = fx["states"].as_array().expect("fixture states");
    // all roots of G(T) = R(T) from a 200 001-point scan + brentq, polished by fsolve
    assert_eq!(got.len(), 3, "{tag}: three steady states expected:\n{j}");
    assert_eq!(got.len(), want.len());
    let mut a = Agreement::new(&format!(
        "{tag}: CSTR steady states vs scan + brentq (heat_cstr_multiplicity.py)"
    ));
    for (k, (g, w)) in got.iter().zip(want).enumerate() {
        a.check(
            state_t(g),
            f(&w["T"], "T"),
            1e-9,
            &format!("T of state {k}"),
        );
        a.check(
            num(&g["conversion"], "X"),
            f(&w["conversion"], "X"),
            1e-8,
            &format!("X of state {k}"),
        );
        for s in ["A", "B", "S"] {
            a.check(
                num(&g["outlet"][s], s),
                f(&w["outlet"][s], s),
                1e-8,
                &format!("F_{s} of state {k}"),
            );
        }
        // Stability from the eigenvalues of the transient CSTR's Jacobian with holdup; the
        // middle state of three is a saddle (van Heerden, Ind. Eng. Chem. 45 (1953) 1242,
        // from memory).
        assert_eq!(
            g["stable"].as_bool(),
            w["stable"].as_bool(),
            "{tag}: stability of state {k}"
        );
        a.check(
            num(&g["max_eigenvalue_real_per_s"], "eigenvalue"),
            f(&w["max_eigenvalue_real"], "eigenvalue"),
            1e-6,
            &format!("largest real part of the eigenvalues, state {k}"),
        );
    }
    let stable: Vec<Option<bool>> = got.iter().map(|g| g["stable"].as_bool()).collect();
    assert_eq!(stable, [Some(true), Some(false), Some(true)]);
    // Turning points of the steady T against the feed and the coolant temperature, from the
    // fold conditions G = R, dG/dT = dR/dT (Fogler ch. 12, from memory; the script's values).
    for p in ["feed_T", "coolant_T"] {
        let (ign, ext) = reported_turning_points(&j, p);
        a.check(
            ign,
            f(&fx["folds"]["ignition"][p], "ignition"),
            1e-6,
            &format!("ignition {p}"),
        );
        a.check(
            ext,
            f(&fx["folds"]["extinction"][p], "extinction"),
            1e-6,
            &format!("extinction {p}"),
        );
    }
    a.report();
}

#[test]
fn cooled_cstr_has_three_steady_states_with_a_saddle_between() {
    let fx = fixture("heat_cstr_multiplicity");
    three_states(
        "cstr-3-species-cp",
        fx["study_species_cp"].as_str().unwrap(),
        &fx,
    );
}

#[test]
fn mixture_heat_capacity_gives_the_same_three_states() {
    // ρ c_p v0 = Σ F_j0 cp_j and ρ c_p V = Σ N_j cp_j by the script's choice of c_p, so the
    // balances and their states are the same (heat_cstr_multiplicity.py).
    let fx = fixture("heat_cstr_multiplicity");
    three_states(
        "cstr-3-mixture-cp",
        fx["study_mixture_cp"].as_str().unwrap(),
        &fx,
    );
}

// ---------------------------------------------------------------------------------------
// 4. PFR with a coolant stream, co- and counter-current
// ---------------------------------------------------------------------------------------

/// The energy of the two streams closes along a tube with a coolant stream, ΔCp = 0:
/// Σ F_j0 cp_j (T − T0) + Q(V) = (−ΔH) F_A0 X, with the heat taken by the coolant up to V
/// Q = ṁ c (T_a(V) − T_a(0)) co-current and ṁ c (T_a(0) − T_a(V)) counter-current
/// (a steady-flow energy balance on the control volume 0..V; Fogler ch. 12, from memory).
fn stream_energy_closes(j: &Value, counter: bool) {
    // case 4's numbers: T0 = 320 K, F_A0 = 2 mol/s, Σ F_j0 cp_j = 2e-3 m3/s × (1000·150 + 40000·75)
    // J/(m3 K), ΔH = −100 kJ/mol, ṁ c = 5 kg/s × 4180 J/(kg K)
    let (fa0, cp_flow, dh, mc) = (
        2.0,
        2e-3 * (1000.0 * 150.0 + 40000.0 * 75.0),
        -100e3,
        5.0 * 4180.0,
    );
    let p = profile(j);
    let ta0 = point_coolant_t(&p[0]);
    let scale = -dh * fa0;
    let mut worst: f64 = 0.0;
    for (q, x) in p.iter().zip(profile_conversion(j)) {
        let (t, ta) = (point_t(q), point_coolant_t(q));
        let q_removed = if counter {
            mc * (ta0 - ta)
        } else {
            mc * (ta - ta0)
        };
        let e = (cp_flow * (t - 320.0) + q_removed - (-dh) * fa0 * x).abs() / scale;
        assert!(
            e <= 1e-8,
            "energy of the two streams off by {e:.2e} of (−ΔH) F_A0 at {}",
            q["x"]
        );
        worst = worst.max(e);
    }
    println!("agreement | coolant stream energy closure | max error / ((−ΔH) F_A0) {worst:.2e}");
}

fn coolant_stream(direction: &str, tol: f64) {
    let fx = fixture("heat_cooled_pfr");
    let case = &fx["coolant_stream"][direction];
    let j = run_profile(direction, case);
    let counter = direction == "counter_current";
    stream_energy_closes(&j, counter);
    let mut a = Agreement::new(&format!(
        "PFR with {direction} coolant vs scipy (heat_cooled_pfr.py)"
    ));
    profile_against_fixture(&mut a, &j, case, tol);
    let ta = fv(&case["coolant_T"], "coolant_T");
    for (k, q) in profile(&j).iter().enumerate() {
        a.check(point_coolant_t(q), ta[k], tol, &format!("T_a at point {k}"));
    }
    a.report();

    // The figures the report gives beside the profile.
    let mut b = Agreement::new(&format!(
        "PFR with {direction} coolant: reported coolant outlet and hot spot (heat_cooled_pfr.py)"
    ));
    // the coolant leaves at V = 0 counter-current, at V co-current (solve_bvp / solve_ivp)
    b.check(
        reported_coolant_outlet(&j),
        f(&case["coolant_outlet_T"], "coolant outlet"),
        tol,
        "coolant outlet T",
    );
    let (t_hs, at) = reported_hot_spot(&j);
    b.check(
        t_hs,
        f(&case["hot_spot"]["T"], "hot spot T"),
        tol,
        "hot spot T",
    );
    hot_spot_position(at, f(&case["hot_spot"]["x"], "hot spot V"), 1.0, direction);
    b.report();
}

/// Hot spot: the maximum of T(V), located in the scripts where dT/dV = 0. Found as a zero of
/// dT/dV (which crosses zero with a nonzero slope at a strict maximum) its position is
/// well-conditioned, so it is compared to 1e-6 of the tube. (Found by comparing T values
/// instead, an error ε in T would move it by about √(2ε/|T''|), far more.)
fn hot_spot_position(at: f64, want: f64, volume: f64, what: &str) {
    println!(
        "agreement | {what}: hot spot position {at} vs scipy {want} | difference / V {:.2e}",
        (at - want).abs() / volume
    );
    assert!(
        (at - want).abs() <= 1e-6 * volume,
        "{what}: hot spot at V = {at}, scipy {want}"
    );
}

#[test]
fn co_current_coolant_stream_matches_scipy() {
    coolant_stream("co_current", 1e-7);
}

#[test]
fn counter_current_coolant_stream_matches_solve_bvp() {
    // solve_bvp at tol 1e-9 agrees with tol 1e-8 to 9e-12 and with shooting on T_a(0) (Radau
    // rtol 1e-12, brentq) to 4e-13; the shooting scan found one solution. rxnet's own
    // boundary-value solve at rtol 1e-10 is held to 1e-6.
    let fx = fixture("heat_cooled_pfr");
    assert_eq!(
        fx["coolant_stream"]["counter_current"]["solutions"], 1,
        "the script found one solution"
    );
    coolant_stream("counter_current", 1e-6);
}

// ---------------------------------------------------------------------------------------
// 5. Series A -> B -> C in a tube cooled at constant T_a
// ---------------------------------------------------------------------------------------

#[test]
fn cooled_series_scheme_trades_yield_against_hot_spot() {
    let fx = fixture("heat_cooled_pfr");
    let cases = fx["series"].as_array().expect("series cases");
    let mut a = Agreement::new("cooled series A -> B -> C vs scipy Radau (heat_cooled_pfr.py)");
    let mut yields = Vec::new();
    let mut runs = Vec::new();
    for case in cases {
        let ta = f(&case["coolant_T"], "coolant T");
        let j = run_profile("series", case);
        same_abscissae(&j, case);
        let last = case["x"].as_array().unwrap().len() - 1;
        for (s, key) in [("A", "F_A"), ("B", "F_B"), ("C", "F_C")] {
            let want = fv(&case[key], key);
            a.check(
                num(&j["outlet"][s], s),
                want[last],
                1e-7,
                &format!("outlet F_{s} at T_a = {ta}"),
            );
            for (k, q) in profile(&j).iter().enumerate() {
                // F_A starts at F_A0; B and C start at 0 (compared absolutely there)
                if want[k] != 0.0 {
                    a.check(
                        num(&q["state"][s], s),
                        want[k],
                        1e-7,
                        &format!("F_{s}[{k}], T_a = {ta}"),
                    );
                } else {
                    assert_eq!(num(&q["state"][s], s), 0.0);
                }
            }
        }
        let ts = fv(&case["T"], "T");
        for (k, q) in profile(&j).iter().enumerate() {
            a.check(point_t(q), ts[k], 1e-7, &format!("T[{k}], T_a = {ta}"));
        }
        let t_max = profile(&j).iter().map(point_t).fold(f64::MIN, f64::max);
        yields.push((ta, num(&j["outlet"]["B"], "B") / 2.0, t_max));
        runs.push(j);
    }
    a.report();
    // The trade the example is about, in the script's numbers: the middle coolant temperature
    // gives the most B (F_A0 = 2 mol/s); the hotter the coolant, the hotter the tube.
    assert!(
        yields[1].1 > yields[0].1 && yields[1].1 > yields[2].1,
        "{yields:?}"
    );
    assert!(
        yields[0].2 < yields[1].2 && yields[1].2 < yields[2].2,
        "{yields:?}"
    );

    // The reported hot spot, against the script's dT/dV = 0 event (or the outlet when T rises
    // all along the tube).
    let mut b = Agreement::new("cooled series: reported hot spot (heat_cooled_pfr.py)");
    for (case, j) in cases.iter().zip(&runs) {
        let ta = f(&case["coolant_T"], "coolant T");
        let (t_hs, at) = reported_hot_spot(j);
        b.check(
            t_hs,
            f(&case["hot_spot"]["T"], "hot spot"),
            1e-7,
            &format!("hot spot T, T_a = {ta}"),
        );
        hot_spot_position(
            at,
            f(&case["hot_spot"]["x"], "hot spot V"),
            1.0,
            &format!("series, T_a = {ta}"),
        );
    }
    b.report();
}

// ---------------------------------------------------------------------------------------
// 6. Batches: a jacketed liquid, and a constant-volume gas (Cv and ΔU)
// ---------------------------------------------------------------------------------------

#[test]
fn jacketed_liquid_batch_matches_scipy() {
    let fx = fixture("heat_batch");
    let case = &fx["liquid_jacket"];
    let j = run_profile("jacket-batch", case);
    let mut a = Agreement::new("jacketed liquid batch vs scipy Radau (heat_batch.py)");
    profile_against_fixture(&mut a, &j, case, 1e-7);
    a.report();
}

#[test]
fn jacketed_batch_reports_its_cooling_failure_temperature() {
    // T + ΔT_ad (1 − X) has the time derivative UA (T_a − T) / Σ N_j cp_j (ΔCp = 0), so its
    // largest value over the batch is where T first reaches the jacket's T_a (heat_batch.py:
    // a solve_ivp event, checked on a 400 001-point grid of the dense output).
    let fx = fixture("heat_batch");
    let case = &fx["liquid_jacket"];
    let j = run_profile("jacket-batch-failure", case);
    let cf = &j["heat"]["cooling_failure"];
    let mut a = Agreement::new("jacketed batch: cooling-failure temperature (heat_batch.py)");
    a.check(
        num(&cf["temperature"], "`heat.cooling_failure.temperature`"),
        f(&case["cooling_failure"]["temperature"], "cooling failure"),
        1e-7,
        "largest cooling-failure temperature",
    );
    // where T crosses T_a; the crossing is transversal (dT/dt ≈ 0.02 K/s there), so an error
    // δ in T moves it by δ / (dT/dt): 1e-5 of the batch time allows δ ≈ 5e-4 K
    let at = num(&cf["at"], "`heat.cooling_failure.at`");
    let want = f(&case["cooling_failure"]["at"], "cooling failure time");
    println!("agreement | cooling-failure maximum at t = {at} s, scipy {want} s");
    assert!(
        (at - want).abs() <= 1e-5 * 2400.0,
        "cooling-failure maximum at t = {at} s, scipy {want} s"
    );
    a.check(
        reported_dt_ad(&j),
        f(&case["dT_ad"], "dT_ad"),
        1e-12,
        "ΔT_ad of the charge",
    );
    a.report();
}

#[test]
fn ramped_jacket_batch_matches_scipy() {
    // T_a(t) = min(T_a,0 + rate t, T_a,final); the script integrates the two pieces apart
    // at the kink (heat_batch.py, Radau rtol 1e-11).
    let fx = fixture("heat_batch");
    let case = &fx["liquid_jacket_ramp"];
    let j = run_profile("ramp-batch", case);
    let mut a = Agreement::new("liquid batch with a ramped jacket vs scipy Radau (heat_batch.py)");
    profile_against_fixture(&mut a, &j, case, 1e-7);
    let ta = fv(&case["coolant_T"], "coolant_T");
    for (k, q) in profile(&j).iter().enumerate() {
        a.check(
            point_coolant_t(q),
            ta[k],
            1e-12,
            &format!("jacket T at point {k}"),
        );
    }
    a.report();
}

#[test]
fn constant_volume_gas_batch_uses_cv_and_internal_energy() {
    let fx = fixture("heat_batch");
    let gas = &fx["gas_constant_volume"];
    let case = &gas["adiabatic"];
    let j = run_profile("gas-batch-adiabatic", case);
    // Closed vessel, adiabatic: Σ N_j U_j(T) is constant, so
    // X = Σ Θ_j Cv_j (T − T0) / (−ΔU(T)), Cv_j = Cp_j − R, ΔU = ΔH − R T Σν (ideal gas, any
    // thermodynamics text, from memory), ΔH(T) = −42 kJ/mol + ΔCp (T − 350 K) (Kirchhoff),
    // ΔCp = 2·80 − 120 = 40 J/(mol K), Σν = 1, Θ_N = 3; to 1e-8.
    let theta_cv = (120.0 - R) + 3.0 * (30.0 - R);
    let mut worst: f64 = 0.0;
    for (q, x) in profile(&j).iter().zip(profile_conversion(&j)) {
        let t = point_t(q);
        let du = -42e3 + 40.0 * (t - 350.0) - R * t;
        let want = theta_cv * (t - 400.0) / (-du);
        let e = (x - want).abs();
        assert!(
            e <= 1e-8,
            "X = {x}, Σ Θ Cv ΔT / (−ΔU) = {want} at t = {}",
            q["x"]
        );
        worst = worst.max(e);
    }
    println!(
        "agreement | constant-volume gas batch: X = Σ Θ_j Cv_j ΔT / (−ΔU(T)) | max |error| {worst:.2e}"
    );
    let mut a = Agreement::new("constant-volume gas batch vs scipy Radau (heat_batch.py)");
    profile_against_fixture(&mut a, &j, case, 1e-7);
    // P = N_T R T / V at each time (ideal gas, common practice)
    let ps = fv(&case["P"], "P");
    for (k, q) in profile(&j).iter().enumerate() {
        a.check(num(&q["pressure"], "P"), ps[k], 1e-7, &format!("P[{k}]"));
    }
    // With Cp and ΔH in place of Cv and ΔU the end temperature would be this far off
    // (the script's `if_cp_and_dH`): the comparison above tells the two apart.
    let t_end = *fv(&case["T"], "T").last().unwrap();
    let t_wrong = *fv(&case["if_cp_and_dH"]["T"], "T").last().unwrap();
    assert!((t_end - t_wrong).abs() > 10.0);
    a.report();

    let case = &gas["jacket"];
    let j = run_profile("gas-batch-jacket", case);
    let mut b =
        Agreement::new("constant-volume gas batch with a jacket vs scipy Radau (heat_batch.py)");
    profile_against_fixture(&mut b, &j, case, 1e-7);
    b.report();
}
