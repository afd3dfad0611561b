//! A tube with a counter-current coolant stream (a two-point boundary-value problem solved by
//! shooting on the coolant's outlet temperature) against scipy's collocation solver.
//!
//! Reference: tests/reference/heat_cooled_pfr.py (case 4, counter-current; demo values),
//! `python3 tests/reference/heat_cooled_pfr.py > tests/reference/heat_cooled_pfr.json`, scipy
//! 1.17.1: `scipy.integrate.solve_bvp` at tol 1e-9 (agreeing with tol 1e-8 to 9e-12) and
//! checked there by an independent shooting with Radau at rtol 1e-12 and brentq (4e-13 apart).
//! The study sets rtol 1e-10; rxnet is held to 1e-6 relative on every compared value.

mod common;

use common::{Agreement, num};
use rxnet::solve::{Points, SolveOptions, simulate};
use serde_json::Value;

fn fixture() -> Value {
    let path = format!(
        "{}/tests/reference/heat_cooled_pfr.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

fn list(v: &Value, what: &str) -> Vec<f64> {
    v.as_array()
        .unwrap_or_else(|| panic!("{what} is not an array"))
        .iter()
        .map(|x| num(x, what))
        .collect()
}

#[test]
fn counter_current_tube_matches_solve_bvp() {
    let fx = fixture();
    let case = &fx["coolant_stream"]["counter_current"];
    let study = case["study"].as_str().expect("study text");
    let net = rxnet::load_str(study, "counter_current.yaml", &[]).unwrap_or_else(|e| panic!("{e}"));
    let points = case["points"].as_u64().expect("points") as usize;
    let sim = simulate(
        &net,
        &SolveOptions {
            points: Points::Even(points),
            ..Default::default()
        },
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let cc = sim
        .counter_current
        .as_ref()
        .expect("a counter-current run reports its solutions");
    // the script's own shooting scan (81 trial values) found one solution; so must ours
    assert_eq!(case["solutions"], 1);
    assert_eq!(cc.solutions.len(), 1, "{cc:?}");
    let mut a = Agreement::new("counter-current PFR vs scipy solve_bvp (heat_cooled_pfr.py)");
    let tol = 1e-6;
    let x = list(&case["conversion"], "conversion");
    let t = list(&case["T"], "T");
    let ta = list(&case["coolant_T"], "coolant_T");
    let fa0 = net.feed.amounts[net.key];
    let temps = sim.temperature.as_ref().expect("T profile");
    let coolant = sim.coolant.as_ref().expect("T_a profile");
    for k in 0..points {
        let conv = (fa0 - sim.states[k][net.key]) / fa0;
        if x[k] > 0.0 {
            a.check(conv, x[k], tol, &format!("conversion at point {k}"));
        }
        a.check(temps[k], t[k], tol, &format!("T at point {k}"));
        a.check(coolant[k], ta[k], tol, &format!("T_a at point {k}"));
    }
    // the coolant leaves at the reactor inlet, V = 0
    let outlet = num(&case["coolant_outlet_T"], "coolant_outlet_T");
    a.check(coolant[0], outlet, tol, "coolant outlet T (profile)");
    let s = &cc.solutions[0];
    a.check(
        s.coolant_outlet_temperature,
        outlet,
        tol,
        "coolant outlet T",
    );
    a.check(
        s.conversion,
        *x.last().expect("outlet"),
        tol,
        "outlet conversion",
    );
    a.check(
        s.hot_spot.temperature,
        num(&case["hot_spot"]["T"], "hot spot T"),
        tol,
        "hot spot T",
    );
    // Its position is ill-conditioned at a flat maximum (an error ε in T moves it by about
    // √(2ε/|T''|)): 1e-3 of the tube.
    let at = num(&case["hot_spot"]["x"], "hot spot V");
    assert!(
        (s.hot_spot.at - at).abs() <= 1e-3,
        "hot spot at V = {}, scipy {at}",
        s.hot_spot.at
    );
    // the coolant returns at its inlet temperature at the reactor outlet (the boundary condition)
    a.check(
        *coolant.last().expect("outlet"),
        300.0,
        1e-9,
        "T_a(L) = T_in",
    );
    a.report();
}

fn counter_current_study() -> String {
    fixture()["coolant_stream"]["counter_current"]["study"]
        .as_str()
        .expect("study text")
        .to_string()
}

#[test]
fn run_reports_the_solutions_and_the_one_shown() {
    let study = common::temp_study("cc-run", &counter_current_study());
    let text = common::rxnet(&["run", study.p()]);
    assert_eq!(text.code, 0, "{}", text.stderr);
    assert!(
        text.stdout.contains("counter-current coolant: 1 solution"),
        "{}",
        text.stdout
    );
    let j = common::rxnet(&["run", study.p(), "--format", "json"]).ok_json();
    let cc = &j["coolant_solutions"];
    assert_eq!(cc["count"], 1);
    assert_eq!(cc["shown"], 1);
    assert_eq!(cc["choice"], "lowest hot spot");
    // the solve_bvp coolant outlet temperature (heat_cooled_pfr.py), to 1e-6
    let want = num(
        &fixture()["coolant_stream"]["counter_current"]["coolant_outlet_T"],
        "coolant_outlet_T",
    );
    let got = num(
        &cc["solutions"][0]["coolant_outlet_temperature"],
        "coolant_outlet_temperature",
    );
    assert!((got - want).abs() <= 1e-6 * want, "{got} vs {want}");
}

#[test]
fn size_studies_refuse_a_counter_current_coolant() {
    // Each size of a counter-current tube is its own boundary-value problem: the size for a
    // conversion and the best size are not found by one integration from the inlet.
    let study = common::temp_study("cc-size", &counter_current_study());
    let size = common::rxnet(&["size", study.p(), "--conversion", "0.5"]);
    assert_eq!(size.code, 2, "{}\n{}", size.stdout, size.stderr);
    assert!(size.stderr.contains("counter-current"), "{}", size.stderr);
    let opt = common::rxnet(&["optimize", study.p(), "--maximize", "B"]);
    assert_eq!(opt.code, 2, "{}\n{}", opt.stdout, opt.stderr);
    assert!(opt.stderr.contains("counter-current"), "{}", opt.stderr);
}

/// A tube whose boundary-value problem has three solutions (tests/reference/
/// countercurrent_multiple.py, scipy 1.17.1: shooting on T_a(0) over 101 trial values refined by
/// brentq with LSODA at rtol 1e-12, each solution also solved by solve_bvp at tol 1e-6 started
/// from it where that converges; `python3 tests/reference/countercurrent_multiple.py >
/// tests/reference/countercurrent_multiple.json`). rxnet must find all three, each with its
/// coolant outlet temperature, outlet conversion and hot spot to 1e-6, and show the one of
/// lowest hot spot.
#[test]
fn every_solution_of_a_tube_with_three_is_found() {
    let path = format!(
        "{}/tests/reference/countercurrent_multiple.json",
        env!("CARGO_MANIFEST_DIR")
    );
    let text = std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{path}: {e}"));
    let fx: Value = serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"));
    let net = rxnet::load_str(fx["study"].as_str().expect("study"), "three.yaml", &[])
        .unwrap_or_else(|e| panic!("{e}"));
    let sim = simulate(&net, &SolveOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    let cc = sim.counter_current.as_ref().expect("solutions");
    let want = fx["solutions"].as_array().expect("solutions");
    assert_eq!(want.len(), 3, "the script found three solutions");
    assert_eq!(cc.solutions.len(), 3, "{cc:?}");
    let mut a = Agreement::new("three-solution counter-current tube vs scipy");
    for (got, w) in cc.solutions.iter().zip(want) {
        // where solve_bvp converged, the script's two methods agree within its tolerance
        if let Some(d) = w["agreement"]["coolant_outlet_T"].as_f64() {
            assert!(d < 1e-5, "shooting and solve_bvp differ by {d}");
        }
        a.check(
            got.coolant_outlet_temperature,
            num(&w["coolant_outlet_T"], "coolant_outlet_T"),
            1e-6,
            "coolant outlet T",
        );
        a.check(
            got.conversion,
            num(&w["conversion"], "conversion"),
            1e-6,
            "outlet conversion",
        );
        a.check(
            got.hot_spot.temperature,
            num(&w["hot_spot"]["T"], "hot spot"),
            1e-6,
            "hot spot T",
        );
    }
    // the one shown: the lowest hot spot (docs/methods.md), and the profile is that solution's
    let lowest = (0..3)
        .min_by(|&i, &j| {
            num(&want[i]["hot_spot"]["T"], "T").total_cmp(&num(&want[j]["hot_spot"]["T"], "T"))
        })
        .expect("three");
    assert_eq!(cc.shown, lowest);
    let fa0 = net.feed.amounts[net.key];
    a.check(
        (fa0 - sim.outlet()[net.key]) / fa0,
        num(&want[lowest]["conversion"], "conversion"),
        1e-6,
        "conversion of the solution shown",
    );
    a.report();
}
