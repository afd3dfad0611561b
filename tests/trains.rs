//! Trains of vessels, side feeds along a tube, bypasses, joins and recycle, against closed forms
//! and scipy reference solutions.
//!
//! Every rate constant, feed and size below is an invented test value, not data for any real
//! process. Each numeric check names the outside source of its expected value. The book cited
//! as "Levenspiel" is O. Levenspiel, Chemical Reaction Engineering, 3rd ed., Wiley 1999; its
//! equations are quoted from memory.

mod common;

use common::{rxnet, temp_study};
use rxnet::solve::{Points, SolveOptions};
use rxnet::studies::evaluate::{Evaluation, evaluate};
use rxnet::{Network, load_str};
use serde_json::Value;

fn load(yaml: &str) -> Network {
    load_str(yaml, "test", &[]).unwrap_or_else(|e| panic!("test study does not load: {e}\n{yaml}"))
}

fn tight(points: Points) -> SolveOptions {
    SolveOptions {
        rtol: Some(1e-11),
        points,
        ..Default::default()
    }
}

fn eval(yaml: &str, points: Points) -> (Network, Evaluation) {
    let net = load(yaml);
    let ev = evaluate(&net, &tight(points), false)
        .unwrap_or_else(|e| panic!("evaluation failed: {e}\n{yaml}"));
    (net, ev)
}

const K: f64 = 0.01; // 1/s, test value
const V0: f64 = 1e-3; // m3/s
const CA0: f64 = 1000.0; // mol/m3

/// A first-order A -> B in liquid, fed at 1 L/s with 1 mol/L of A, through `vessels` (YAML of
/// a `reactor:` or `train:` entry).
fn first_order(vessels: &str) -> String {
    format!(
        "name: first order (test values)
phase: liquid
species: {{A: {{formula: C2H4O}}, B: {{formula: C2H4O}}}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {K} 1/s}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L}}}}
{vessels}
"
    )
}

fn cascade(n: usize, total: f64) -> String {
    let units: Vec<String> = (1..=n)
        .map(|k| {
            format!(
                "  - {{id: R{k}, type: cstr, volume: {} m3}}",
                total / n as f64
            )
        })
        .collect();
    first_order(&format!("train:\n{}", units.join("\n")))
}

fn conversion(ev: &Evaluation) -> f64 {
    ev.metrics.conversion
}

/// N equal CSTRs in series, first order: X = 1 − (1 + kτ/N)^−N with τ the total space time
/// (Levenspiel ch. 6, eq. for tanks in series).
#[test]
fn a_cascade_of_equal_tanks_matches_the_closed_form() {
    let total = 0.3; // m3, τ = 300 s, kτ = 3
    let tau = total / V0;
    for n in [1usize, 2, 3, 5, 10] {
        let (_, ev) = eval(&cascade(n, total), Points::End);
        let exact = 1.0 - (1.0 + K * tau / n as f64).powi(-(n as i32));
        let x = conversion(&ev);
        assert!(
            (x - exact).abs() <= 1e-9 * exact,
            "N = {n}: X = {x}, closed form {exact}"
        );
        // Each unit's own conversion is kτ_i/(1 + kτ_i) on what it was given.
        let t = ev.train.as_ref().expect("a train");
        assert_eq!(t.units.len(), n);
        let ti = tau / n as f64;
        for u in &t.units {
            let xi = (u.fed[0] - u.left[0]) / u.fed[0];
            assert!((xi - K * ti / (1.0 + K * ti)).abs() < 1e-9, "unit {}", u.id);
        }
    }
}

/// As N grows the cascade approaches the PFR, X_PFR = 1 − e^{−kτ} (Levenspiel ch. 6), from
/// below, with X_PFR − X_N = e^{−a} a²/(2N) + O(1/N²), a = kτ (expansion of
/// (1 + a/N)^{−N} = e^{−a}(1 + a²/(2N) + ...), from memory).
#[test]
fn fifty_tanks_approach_the_plug_flow_tube_at_the_expected_order() {
    let total = 0.3;
    let a = K * total / V0;
    let x_pfr = 1.0 - (-a).exp();
    let (_, tube) = eval(
        &first_order(&format!("reactor: {{type: pfr, volume: {total} m3}}")),
        Points::End,
    );
    assert!((conversion(&tube) - x_pfr).abs() < 1e-9);
    let (_, ev) = eval(&cascade(50, total), Points::End);
    let gap = x_pfr - conversion(&ev);
    let leading = (-a).exp() * a * a / (2.0 * 50.0);
    assert!(gap > 0.0, "the cascade stays below the tube");
    assert!(
        (gap - leading).abs() < 0.1 * leading,
        "gap {gap} against the leading term {leading}"
    );
}

/// Recycle PFR, first order, liquid: kτ/(R+1) = ln[(C_A0 + R C_Af)/((R+1) C_Af)] with τ = V/v0 of
/// the fresh feed (Levenspiel ch. 6, recycle reactor); R → 0 is the PFR and R → ∞ the CSTR.
#[test]
fn a_recycle_tube_matches_the_closed_form_and_its_limits() {
    let volume = 0.2; // m3
    let tau = volume / V0;
    let solve_closed = |r: f64| -> f64 {
        // Bisection on the closed form in C_Af (monotone), to 1e-15 relative.
        let g = |c: f64| ((CA0 + r * c) / ((r + 1.0) * c)).ln() - K * tau / (r + 1.0);
        let (mut lo, mut hi) = (1e-9 * CA0, CA0);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if g(mid) > 0.0 { lo = mid } else { hi = mid }
        }
        0.5 * (lo + hi)
    };
    for r in [0.5, 3.0, 20.0] {
        let (_, ev) = eval(
            &first_order(&format!(
                "reactor: {{type: pfr, volume: {volume} m3, recycle: {r}}}"
            )),
            Points::End,
        );
        let ca = ev.left[0] / V0;
        let exact = solve_closed(r);
        assert!(
            (ca - exact).abs() <= 1e-8 * exact,
            "R = {r}: C_Af = {ca}, closed form {exact}"
        );
        let rec = ev.train.as_ref().unwrap().units[0]
            .recycle
            .as_ref()
            .unwrap();
        assert!(rec.change <= 1e-10, "converged: {}", rec.change);
    }
    // R = 0: the plug-flow tube; R large: the CSTR, X = kτ/(1 + kτ) (Levenspiel ch. 5).
    let (_, ev) = eval(
        &first_order(&format!(
            "reactor: {{type: pfr, volume: {volume} m3, recycle: 0}}"
        )),
        Points::End,
    );
    assert!((conversion(&ev) - (1.0 - (-K * tau).exp())).abs() < 1e-9);
    let (_, ev) = eval(
        &first_order(&format!(
            "reactor: {{type: pfr, volume: {volume} m3, recycle: 1000}}"
        )),
        Points::End,
    );
    let x_cstr = K * tau / (1.0 + K * tau);
    assert!(
        (conversion(&ev) - x_cstr).abs() < 1e-3,
        "{} vs {x_cstr}",
        conversion(&ev)
    );
}

/// A bypass around a tank and a stream joining before it, first order, liquid:
/// the tank sees (1 − b)(v + v_j) at τ' = V/((1 − b)(v + v_j)), X' = kτ'/(1 + kτ'), and the
/// outlet is (1 − b) F_in (1 − X') + b F_in (mixing and splitting of streams, common practice;
/// the tank by Levenspiel ch. 5).
#[test]
fn a_bypass_and_a_join_follow_the_stream_balances() {
    let (b, v2) = (0.2, 0.1); // bypass fraction, m3
    let yaml = first_order(&format!(
        "train:
  - {{id: R1, type: cstr, volume: 0.1 m3}}
  - {{id: R2, type: cstr, volume: {v2} m3, bypass: {b}, join: {{concentrations: {{A: 0.5 mol/L}}, volumetric: 0.5 L/s}}}}"
    ));
    let (_, ev) = eval(&yaml, Points::End);
    let x1 = K * 100.0 / (1.0 + K * 100.0);
    let fa_in = CA0 * V0 * (1.0 - x1) + 500.0 * 0.5e-3;
    let v_in = V0 + 0.5e-3;
    let tau = v2 / ((1.0 - b) * v_in);
    let x2 = K * tau / (1.0 + K * tau);
    let expect = (1.0 - b) * fa_in * (1.0 - x2) + b * fa_in;
    assert!(
        (ev.left[0] - expect).abs() < 1e-10 * expect,
        "{} vs {expect}",
        ev.left[0]
    );
    // Everything fed counts: the feed and the join.
    assert!((ev.fed[0] - (CA0 * V0 + 250.0 * 1e-3)).abs() < 1e-12);
    let x = (ev.fed[0] - ev.left[0]) / ev.fed[0];
    assert!((ev.metrics.conversion - x).abs() < 1e-12);
    let t = ev.train.as_ref().unwrap();
    assert!((t.outlet.volumetric - v_in).abs() < 1e-15);
}

fn fixture() -> Value {
    serde_json::from_str(include_str!("reference/side_feeds.json")).expect("fixture parses")
}

/// Side feeds along a tube against scipy solve_ivp (Radau, rtol 1e-11), stretch by stretch:
/// tests/reference/side_feeds.py. The element balance closes at every profile point once the
/// side feeds that entered before it are counted (atom conservation, common practice).
#[test]
fn side_feeds_match_the_scipy_reference_and_close_the_element_balance() {
    for case in fixture()["cases"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let (net, ev) = eval(case["study"].as_str().unwrap(), Points::Even(11));
        let expect: Vec<f64> = case["outlet"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let n = net.species.len();
        let out = ev.sim.outlet();
        for j in 0..n {
            let scale = expect[..n].iter().fold(0.0f64, |m, v| m.max(v.abs()));
            assert!(
                (out[j] - expect[j]).abs() <= 1e-8 * scale,
                "{name}: {} = {} vs scipy {}",
                net.species[j].name,
                out[j],
                expect[j]
            );
        }
        if expect.len() > n {
            let t = ev
                .heat
                .as_ref()
                .expect("an energy balance")
                .outlet_temperature;
            assert!(
                (t - expect[n]).abs() < 1e-7,
                "{name}: T = {t} vs scipy {}",
                expect[n]
            );
        }
        // Element closure at every point of the profile with the side feeds counted.
        if net.species.iter().all(|s| s.formula.is_some()) {
            let ex = ev.sim.exchanged.as_ref().expect("side routes recorded");
            for (k, y) in ev.sim.states.iter().enumerate() {
                let fed: Vec<f64> = net
                    .feed
                    .amounts
                    .iter()
                    .zip(&ex.entered[k])
                    .map(|(f, e)| f + e)
                    .collect();
                for c in rxnet::metrics::element_closure_against(&net, &fed, y) {
                    assert!(
                        c.relative < 1e-9,
                        "{name}: point {k}, {} off by {}",
                        c.element,
                        c.relative
                    );
                }
            }
        }
    }
}

/// Splitting B between the inlet and side feeds keeps it low along the tube and raises the
/// yield of the intermediate R of A + B -> R -> (with B) S over feeding all B at the inlet
/// (the selectivity argument for series-parallel reactions, Levenspiel ch. 8).
#[test]
fn side_feeding_the_second_reactant_raises_the_intermediate_yield() {
    let case = &fixture()["cases"][0];
    let study = case["study"].as_str().unwrap();
    let (net, split) = eval(study, Points::End);
    // The same total B at the inlet: 0.4 + 3 × 0.4 mol/s in 1 + 3 × 0.4 L/s.
    let lumped = study
        .replace(
            "concentrations: {A: 1000.0 mol/m3, B: 400.0 mol/m3}",
            "concentrations: {A: 454.54545454545456 mol/m3, B: 727.2727272727273 mol/m3}",
        )
        .replace("volumetric: 0.001 m3/s", "volumetric: 0.0022 m3/s");
    let lumped = lumped.split("  side_feeds").next().unwrap().to_string();
    let (_, all_in) = eval(&lumped, Points::End);
    assert!((all_in.fed[1] - split.fed[1]).abs() < 1e-9, "same B fed");
    let r = net.species_index("R").unwrap();
    let y = |ev: &Evaluation| ev.left[r] / ev.fed[0];
    assert!(
        y(&split) > y(&all_in),
        "split {} vs all at the inlet {}",
        y(&split),
        y(&all_in)
    );
}

/// The profile runs along the train with a unit column, the run report lists every unit, and
/// JSON carries them.
#[test]
fn run_reports_every_unit_and_a_labelled_profile() {
    let file = temp_study("trains", &cascade(3, 0.3));
    let p = file.p();
    let r = rxnet(&["run", p]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stdout
            .contains("3 units in series (R1 cstr -> R2 cstr -> R3 cstr)"),
        "{}",
        r.stdout
    );
    for id in ["R1", "R2", "R3"] {
        assert!(
            r.stdout.lines().any(|l| l.trim_start().starts_with(id)),
            "{}",
            r.stdout
        );
    }
    let j = rxnet(&["run", p, "--format", "json"]).ok_json();
    let units = j["units"].as_array().unwrap();
    assert_eq!(units.len(), 3);
    assert!((units[1]["conversion"].as_f64().unwrap() - 0.5).abs() < 1e-9);
    let csv = rxnet(&["run", p, "--format", "csv"]).stdout;
    let lines: Vec<&str> = csv.lines().collect();
    assert_eq!(lines[0], "unit,V [m3],A [mol/s],B [mol/s]");
    assert!(lines[1].starts_with("feed,0"));
    assert!(lines[4].starts_with("R3,3.0"), "{csv}");
}

fn split_fixture() -> Value {
    serde_json::from_str(include_str!("reference/cascade_split.json")).expect("fixture parses")
}

/// A series A -> B -> C (first order) through three tanks: the test values of
/// tests/reference/cascade_split.py.
fn series_cascade(each: f64) -> String {
    let f = split_fixture();
    format!(
        "name: series cascade (test values)
phase: liquid
species: {{A: null, B: null, C: null}}
reactions:
  - {{id: r1, stoich: A -> B, rate: {{k: {} 1/s}}}}
  - {{id: r2, stoich: B -> C, rate: {{k: {} 1/s}}}}
feed: {{T: 300 K, volumetric: {} m3/s, concentrations: {{A: {} mol/m3}}}}
desired: B
train:
  - {{id: R1, type: cstr, volume: {each} m3}}
  - {{id: R2, type: cstr, volume: {each} m3}}
  - {{id: R3, type: cstr, volume: {each} m3}}
",
        f["k1"], f["k2"], f["v0"], f["ca0"]
    )
}

/// `optimize --over split`: the division of the total volume between three tanks that
/// maximises the intermediate B, against scipy's optimum of the tanks-in-series algebra
/// (tests/reference/cascade_split.py).
#[test]
fn the_best_split_of_a_cascade_matches_scipy() {
    let f = split_fixture();
    let file = temp_study("split", &series_cascade(0.1));
    let j = rxnet(&[
        "optimize",
        file.p(),
        "--maximize",
        "B",
        "--over",
        "split",
        "--format",
        "json",
    ])
    .ok_json();
    let best = &j["best"];
    let want = f["split"]["outlet_b"].as_f64().unwrap();
    let got = best["value"].as_f64().unwrap();
    assert!(
        (got - want).abs() <= 1e-7 * want,
        "B = {got} vs scipy {want}"
    );
    assert!(got >= f["split"]["grid_best"].as_f64().unwrap() - 1e-9);
    let sizes: Vec<f64> = ["R1", "R2", "R3"]
        .iter()
        .map(|id| {
            best["point"][format!("train.{id}.volume")]
                .as_f64()
                .unwrap()
        })
        .collect();
    assert!(
        (sizes.iter().sum::<f64>() - 0.3).abs() < 1e-12,
        "total held: {sizes:?}"
    );
    // The optimum is flat in the two small tanks' split; the big first tank is sharp.
    let v1 = f["split"]["volumes"][0].as_f64().unwrap();
    assert!((sizes[0] - v1).abs() < 1e-3 * v1, "{sizes:?}");
    assert_eq!(j["run"]["units"].as_array().unwrap().len(), 3);
}

/// `optimize` over the size of a train: the total of three equal tanks (held equal) that
/// maximises B, against scipy's bounded scalar minimisation of the same algebra.
#[test]
fn the_best_total_size_of_a_cascade_matches_scipy() {
    let f = split_fixture();
    let file = temp_study("total", &series_cascade(0.1));
    let j = rxnet(&["optimize", file.p(), "--maximize", "B", "--format", "json"]).ok_json();
    let want = f["equal_tanks"]["total"].as_f64().unwrap();
    let size = j["best"]["size"].as_f64().unwrap();
    assert!(
        (size - want).abs() < 1e-6 * want,
        "total {size} vs scipy {want}"
    );
    let b = j["best"]["value"].as_f64().unwrap();
    let bw = f["equal_tanks"]["outlet_b"].as_f64().unwrap();
    assert!((b - bw).abs() < 1e-9 * bw);
    for u in j["run"]["units"].as_array().unwrap() {
        assert!((u["size"].as_f64().unwrap() - want / 3.0).abs() < 1e-6 * want);
    }
}

/// `size` of a cascade for a conversion: every tank scaled in proportion, the total from
/// X = 1 − (1 + kτ/N)^−N, τ = N((1 − X)^(−1/N) − 1)/k (Levenspiel ch. 6).
#[test]
fn the_size_of_a_cascade_for_a_conversion_matches_the_closed_form() {
    let file = temp_study("size", &cascade(3, 0.3));
    let j = rxnet(&["size", file.p(), "--conversion", "0.95", "--format", "json"]).ok_json();
    let tau = 3.0 * ((0.05f64).powf(-1.0 / 3.0) - 1.0) / K;
    let v = j["size"].as_f64().unwrap();
    assert!(
        (v - tau * V0).abs() < 1e-9 * tau * V0,
        "{v} vs {}",
        tau * V0
    );
    assert!((j["run"]["conversion"].as_f64().unwrap() - 0.95).abs() < 1e-9);
}

/// `compare --reactors cascade:N` screens N equal tanks of the study's volume beside the
/// single vessels; each conversion against its closed form (Levenspiel ch. 5–6).
#[test]
fn compare_screens_cascades_beside_single_vessels() {
    let file = temp_study("cmp", &first_order("reactor: {type: cstr, volume: 0.3 m3}"));
    let j = rxnet(&[
        "compare",
        file.p(),
        "--reactors",
        "pfr,cstr,cascade:3,cascade:10",
        "--format",
        "json",
    ]);
    let rows = j.ok_json();
    let a = K * 0.3 / V0;
    let want = |label: &str| match label {
        "pfr" => 1.0 - (-a).exp(),
        "cstr" => a / (1.0 + a),
        "cascade:3" => 1.0 - (1.0 + a / 3.0).powi(-3),
        "cascade:10" => 1.0 - (1.0 + a / 10.0).powi(-10),
        other => panic!("unexpected row {other}"),
    };
    let rows = rows.as_array().unwrap();
    assert_eq!(rows.len(), 4);
    for r in rows {
        let label = r["reactor"].as_str().unwrap();
        let x = r["conversion"].as_f64().unwrap();
        assert!(
            (x - want(label)).abs() < 1e-9,
            "{label}: {x} vs {}",
            want(label)
        );
    }
    // Ranked by conversion: the tube, then more tanks before fewer.
    let order: Vec<&str> = rows
        .iter()
        .map(|r| r["reactor"].as_str().unwrap())
        .collect();
    assert_eq!(order, ["pfr", "cascade:10", "cascade:3", "cstr"]);
    // At equal conversion every entry is resized (a cascade by scaling its tanks).
    let eq = rxnet(&[
        "compare",
        file.p(),
        "--reactors",
        "cstr,cascade:3",
        "--at-conversion",
        "0.9",
        "--format",
        "json",
    ])
    .ok_json();
    for r in eq.as_array().unwrap() {
        assert!(
            (r["conversion"].as_f64().unwrap() - 0.9).abs() < 1e-9,
            "{r}"
        );
    }
}

/// A sweep over one unit's volume through `--vary train.R2.volume=...`: every point is the
/// two-tank cascade's closed form X = 1 − 1/((1 + kτ1)(1 + kτ2)) (Levenspiel ch. 6).
#[test]
fn a_sweep_over_one_unit_matches_the_closed_form() {
    let file = temp_study(
        "sweep",
        &first_order(
            "train:\n  - {id: R1, type: cstr, volume: 0.1 m3}\n  - {id: R2, type: cstr, volume: 0.1 m3}",
        ),
    );
    let r = rxnet(&[
        "sweep",
        file.p(),
        "--vary",
        "train.R2.volume=0.05 m3:0.25 m3:5",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let mut lines = r.stdout.lines();
    let head: Vec<&str> = lines.next().unwrap().split(',').collect();
    let xc = head
        .iter()
        .position(|h| *h == "conversion")
        .expect("a conversion column");
    let vc = head
        .iter()
        .position(|h| h.starts_with("train.R2.volume"))
        .expect("the input column");
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), 5);
    for row in rows {
        let v2: f64 = row[vc].parse().unwrap();
        let x: f64 = row[xc].parse().unwrap();
        let want = 1.0 - 1.0 / ((1.0 + K * 100.0) * (1.0 + K * v2 / V0));
        assert!((x - want).abs() < 1e-9, "V2 = {v2}: {x} vs {want}");
    }
}

/// The runaway study follows one vessel's hot spot: a train is refused with exit 2.
#[test]
fn the_runaway_study_refuses_a_train() {
    let file = temp_study("runaway", &cascade(2, 0.2));
    let r = rxnet(&[
        "runaway",
        file.p(),
        "--input",
        "feed.T",
        "--from",
        "300 K",
        "--to",
        "320 K",
    ]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(r.stderr.contains("train"), "{}", r.stderr);
}

/// Bad trains, side feeds and recycles: refused with exit 2, naming the file's field.
#[test]
fn bad_trains_are_refused_naming_the_field() {
    let base = first_order(
        "train:\n  - {id: R1, type: cstr, volume: 0.1 m3}\n  - {id: R2, type: pfr, volume: 0.1 m3}",
    );
    let cases: Vec<(String, &[&str])> = vec![
        (base.replace("{id: R2, ", "{"), &["train[1]", "needs an `id`"]),
        (base.replace("id: R2", "id: R1"), &["train[1].id", "duplicate unit id `R1`"]),
        (
            base.replace("{id: R1, type: cstr, volume: 0.1 m3}", "{id: R1, type: cstr, volume: 0.1 m3, join: {flows: {A: 1 mol/s}, volumetric: 1 L/s}}"),
            &["train[0].join", "first unit"],
        ),
        (base.replace("{id: R2, type: pfr, volume: 0.1 m3}", "{id: R2, type: pfr, volume: 0.1 m3, bypass: 1.2}"), &["train[1].bypass", "[0, 1)"]),
        (base.replace("type: pfr", "type: batch, time: 1 h"), &["train[1].type", "batch"]),
        (base.replace("type: pfr, volume: 0.1 m3", "type: pbr, catalyst: 10 kg"), &["train[1].type", "per catalyst mass"]),
        (base.replace("{id: R1, type: cstr, volume: 0.1 m3}", "{id: R1, type: cstr, volume: 0.1 m3, recycle: 2}"), &["train[0].recycle", "tube"]),
        (base.replace("volume: 0.1 m3}\n  - {id: R2, type: pfr, volume: 0.1 m3}", "volume: 0.1 m3}\n  - {id: R2, type: pfr, volume: 0.1 m3, recycle: -1}"), &["train[1].recycle", "zero or positive"]),
        (base.replace("{id: R2, type: pfr, volume: 0.1 m3}", "{id: R2, type: pfr, volume: 0.1 m3, side_feeds: [{at: 0.2 m3, flows: {A: 1 mol/s}, volumetric: 1 L/s}]}"), &["train[1].side_feeds[0].at", "strictly inside"]),
        (base.replace("{id: R2, type: pfr, volume: 0.1 m3}", "{id: R2, type: pfr, volume: 0.1 m3, side_feeds: [{at: 0.05 m3, flows: {A: 1 mol/s}}]}"), &["train[1].side_feeds[0]", "volumetric"]),
        (base.replace("{id: R1, type: cstr, volume: 0.1 m3}", "{id: R1, type: cstr, volume: 0.1 m3, side_feeds: [{at: 0.05 m3, flows: {A: 1 mol/s}, volumetric: 1 L/s}]}"), &["train[0].side_feeds", "tube"]),
        (first_order("reactor: {type: pfr, volume: 1 m3, id: R1}"), &["reactor.id", "train"]),
        (format!("{}reactor: {{type: pfr, volume: 1 m3}}\n", base), &["train", "not both"]),
        (first_order("train: []"), &["train", "at least one unit"]),
    ];
    for (k, (yaml, words)) in cases.iter().enumerate() {
        let file = temp_study("bad-train", yaml);
        let r = rxnet(&["check", file.p()]);
        assert_eq!(r.code, 2, "case {k}: exit {}; {}", r.code, r.stderr);
        assert!(!r.stderr.contains("panicked"), "case {k}: {}", r.stderr);
        assert!(
            r.stderr.contains(file.p()),
            "case {k} names the file: {}",
            r.stderr
        );
        for w in *words {
            assert!(
                r.stderr.contains(w),
                "case {k}: stderr lacks `{w}`:\n{}",
                r.stderr
            );
        }
    }
}

/// Streams at different temperatures meeting where no heat capacity is known: the mixture's
/// temperature is unknown, so the run is refused (exit 2) naming the species, not guessed.
#[test]
fn a_join_at_another_temperature_without_heat_capacities_is_refused() {
    let yaml = first_order(
        "train:\n  - {id: R1, type: cstr, volume: 0.1 m3}\n  - {id: R2, type: cstr, volume: 0.1 m3, join: {T: 350 K, concentrations: {A: 1 mol/L}, volumetric: 1 L/s}}",
    );
    let file = temp_study("join-t", &yaml);
    let r = rxnet(&["run", file.p()]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(
        r.stderr.contains("unit `R2`") && r.stderr.contains("`cp`"),
        "{}",
        r.stderr
    );
}

/// An adiabatic liquid train (tank, tube, tank) with a cold stream joining before the tube:
/// with constant species cp the enthalpy balance of the whole train closes,
/// Σ_out F_j cp_j (T_out − T_r) = Σ_in F_j cp_j (T_in − T_r) + (−ΔH) ξ, ξ = F_A,fed − F_A,out
/// (first law for a steady adiabatic flow system, common practice), and each unit's outlet
/// lies on its adiabatic line.
#[test]
fn an_adiabatic_train_closes_its_enthalpy_balance() {
    let yaml = "name: adiabatic train (test values)
phase: liquid
species: {A: {cp: 150 J/(mol*K)}, B: {cp: 150 J/(mol*K)}, W: {cp: 75 J/(mol*K)}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 2e-3 1/s, Ea: 70 kJ/mol, T_ref: 320 K, dH: -60 kJ/mol}}
feed: {T: 320 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L, W: 40 mol/L}}
train:
  - {id: R1, type: cstr, volume: 0.2 m3, heat: adiabatic}
  - {id: R2, type: pfr, volume: 0.2 m3, heat: adiabatic, join: {T: 290 K, concentrations: {A: 1 mol/L, W: 40 mol/L}, volumetric: 0.5 L/s}}
  - {id: R3, type: cstr, volume: 0.1 m3, heat: adiabatic}
";
    let (net, ev) = eval(yaml, Points::Even(5));
    let t = ev.train.as_ref().unwrap();
    let cp = [150.0, 150.0, 75.0];
    let capacity = |f: &[f64]| -> f64 { f.iter().zip(cp).map(|(f, c)| f * c).sum() };
    let tr = 300.0;
    let feed = &net.feed;
    let join = t.units[1]
        .inlet
        .amounts
        .iter()
        .zip(&t.units[0].outlet.amounts)
        .map(|(i, o)| i - o)
        .collect::<Vec<_>>();
    let h_in = capacity(&feed.amounts) * (feed.temperature - tr) + capacity(&join) * (290.0 - tr);
    let xi = ev.fed[0] - ev.left[0];
    let h_out = capacity(&t.outlet.amounts) * (t.outlet.temperature - tr);
    let scale = capacity(&t.outlet.amounts) * 100.0;
    assert!(
        ((h_out - h_in - 60e3 * xi) / scale).abs() < 1e-9,
        "closure {}",
        (h_out - h_in - 60e3 * xi) / scale
    );
    // The join cools the stream: R2's inlet lies between 290 K and R1's outlet.
    assert!(t.units[1].inlet.temperature < t.units[0].outlet.temperature);
    assert!(t.units[1].inlet.temperature > 290.0);
    // Each unit on its own adiabatic line: T_out − T_in = ΔT_ad of its inlet × its conversion.
    for u in &t.units {
        let rise = 60e3 * u.inlet.amounts[0] / capacity(&u.inlet.amounts);
        let x = (u.fed[0] - u.left[0]) / u.fed[0];
        assert!(
            (u.outlet.temperature - u.inlet.temperature - rise * x).abs() < 1e-7,
            "unit {}",
            u.id
        );
    }
    // The hot spot is the hottest point of any unit, on the train's coordinate.
    let h = ev.heat.as_ref().unwrap();
    assert!(
        h.hot_spot.temperature
            >= t.units
                .iter()
                .map(|u| u.outlet.temperature)
                .fold(0.0, f64::max)
                - 1e-9
    );
}

/// The bundled split-feed cascade: feeding the substrate A to each tank in portions keeps it
/// low, so the first-order coupling beats the second-order dimerisation by far more than with
/// all of A at the inlet of the same three tanks (same A, B and total volume) or of one tank
/// (parallel reactions of different order, Levenspiel ch. 7: a low concentration of the
/// reactant favours the lower-order step).
#[test]
fn the_bundled_split_feed_cascade_beats_feeding_everything_at_the_inlet() {
    let text = std::fs::read_to_string(common::network("split_feed_cascade.yaml")).unwrap();
    let all_in = text
        .replace(
            "volumetric: 20 L/min\n  concentrations: {A: 1.2 mol/L, B: 4.5 mol/L, solvent: 6 mol/L}",
            "volumetric: 40 L/min\n  concentrations: {A: 1.8 mol/L, B: 2.25 mol/L, solvent: 5.5 mol/L}",
        )
        .replace(
            "    join: {volumetric: 10 L/min, concentrations: {A: 2.4 mol/L, solvent: 5 mol/L}}\n",
            "",
        );
    assert_ne!(all_in, text);
    let (net, split) = eval(&text, Points::End);
    let (_, lumped) = eval(&all_in, Points::End);
    for j in 0..net.species.len() {
        assert!(
            (split.fed[j] - lumped.fed[j]).abs() < 1e-12,
            "the same amounts fed"
        );
    }
    let (r, d) = (
        net.species_index("R").unwrap(),
        net.species_index("D").unwrap(),
    );
    let s = |ev: &Evaluation| ev.left[r] / ev.left[d];
    assert!(
        s(&split) > 2.0 * s(&lumped),
        "S_R/D {} vs {}",
        s(&split),
        s(&lumped)
    );
    // `run` on the bundled file works and lists its three tanks.
    let out = rxnet(&[
        "run",
        common::network("split_feed_cascade.yaml").to_str().unwrap(),
    ]);
    assert_eq!(out.code, 0, "{}", out.stderr);
    assert!(out.stdout.contains("T1 cstr -> T2 cstr -> T3 cstr"));
}

/// An autocatalytic A + R -> 2 R in a recycle tube: the recycle's residual is not monotone
/// (more R recycled speeds the reaction up), where an accelerated substitution can overshoot;
/// the loop must still settle on the operating point, against the closed-form tube and scipy's
/// brentq on the fixed point (tests/reference/recycle_autocatalytic.py). Conversion rises
/// above the tank's at a moderate ratio and falls back towards it (Levenspiel ch. 6).
#[test]
fn an_autocatalytic_recycle_tube_settles_on_its_operating_point() {
    let f: Value =
        serde_json::from_str(include_str!("reference/recycle_autocatalytic.json")).unwrap();
    for case in f["cases"].as_array().unwrap() {
        let r = case["recycle"].as_f64().unwrap();
        let yaml = format!(
            "name: autocatalytic recycle (test values)
phase: liquid
species: {{A: null, R: null}}
reactions:
  - {{id: auto, stoich: A + R -> 2 R, rate: {{k: 1e-3 L/(mol*s)}}}}
feed: {{T: 300 K, volumetric: 1 L/s, concentrations: {{A: 1 mol/L, R: 0.01 mol/L}}}}
key: A
reactor: {{type: pfr, volume: 2000 L, recycle: {r}}}
"
        );
        let (_, ev) = eval(&yaml, Points::End);
        let want = case["conversion"].as_f64().unwrap();
        assert!(
            (ev.metrics.conversion - want).abs() < 1e-8,
            "R = {r}: X = {} vs {want}",
            ev.metrics.conversion
        );
    }
}

/// A split whose best is degenerate says which units sit on a bound: maximising S_R/D of the
/// bundled split-feed cascade puts (nearly) the whole volume into the first tank, whose
/// backmixing keeps A lowest (parallel steps of different order, Levenspiel ch. 7): the first
/// tank on its upper bound, the others on their lower bound, the total held.
#[test]
fn a_degenerate_split_names_the_units_on_their_bounds() {
    let p = common::network("split_feed_cascade.yaml");
    let j = rxnet(&[
        "optimize",
        p.to_str().unwrap(),
        "--maximize",
        "selectivity:R/D",
        "--over",
        "split",
        "--format",
        "json",
    ])
    .ok_json();
    let b = &j["best"]["on_bound"];
    assert_eq!(b["train.T1.volume"], "upper", "{j}");
    assert_eq!(b["train.T2.volume"], "lower", "{j}");
    assert_eq!(b["train.T3.volume"], "lower", "{j}");
    let total: f64 = ["T1", "T2", "T3"]
        .iter()
        .map(|id| {
            j["best"]["point"][format!("train.{id}.volume")]
                .as_f64()
                .unwrap()
        })
        .sum();
    assert!((total - 2.4).abs() < 1e-12, "{total}");
}

/// The stoichiometric table is the feed's: for a study where species also enter later (joins
/// between units) it says so, in text and JSON; a study with one feed has no such note.
#[test]
fn the_table_names_the_streams_that_join_later() {
    let p = common::network("split_feed_cascade.yaml");
    let t = rxnet(&["table", p.to_str().unwrap()]);
    assert_eq!(t.code, 0, "{}", t.stderr);
    assert!(t.stdout.contains("joins between units"), "{}", t.stdout);
    let j = rxnet(&["table", p.to_str().unwrap(), "--format", "json"]).ok_json();
    assert!(
        j["other_streams"].as_str().unwrap().contains("joins"),
        "{j}"
    );
    let plain = common::network("dimerization_cstr.yaml");
    let j = rxnet(&["table", plain.to_str().unwrap(), "--format", "json"]).ok_json();
    assert!(j.get("other_streams").is_none(), "{j}");
}
