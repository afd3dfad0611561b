//! A tube's walls through the commands: every refusal of a bad `distributed_feeds` or
//! `membrane` (exit 2, the file, line and field named, no panic), and every command that runs
//! a study (`run`, `sweep`, `optimize`, `compare`, `size`) either takes the walls into account
//! or refuses them clearly, never dropping them silently.

mod common;

use common::{Run, line_of, run_args, run_study, rxnet, temp_study};

/// A valid liquid tube with a distributed feed and a membrane (demo values).
const TUBE: &str = "name: walls (demo values)
phase: liquid
species:
  A: {formula: C2H4}
  B: {formula: Br2}
  R: {formula: C2H4Br2}
  S: {formula: Br4}
reactions:
  - {id: r1, stoich: A + B -> R, rate: {k: 1.0e-5 m3/(mol*s)}}
  - {id: r2, stoich: 2 B -> S, rate: {k: 2.0e-5 m3/(mol*s)}}
feed:
  T: 320 K
  volumetric: 1 L/s
  flows: {A: 1 mol/s}
reactor:
  type: pfr
  volume: 1 m3
  distributed_feeds:
    - from: 0 m3
      to: 1 m3
      flows: {B: 1 mol/s}
      volumetric: 1 L/s
      shape: [[0 m3, 1], [0.3 m3, 3], [1 m3, 0.5]]
  membrane:
    - species: S
      coefficient: 0.01 1/s
      sweep: 0 mol/m3
desired: R
";

/// `base` with `from` replaced by `to`; `from` must occur exactly once.
fn with(base: &str, from: &str, to: &str) -> String {
    assert_eq!(base.matches(from).count(), 1, "`{from}` must occur once");
    base.replace(from, to)
}

/// `check` must refuse the study with exit 2, no panic, no report, and a message naming the
/// file with the line of `line_text`, and every word of `words`.
fn refused(tag: &str, yaml: &str, line_text: &str, words: &[&str]) -> Run {
    let run = run_study("check", tag, yaml, "text");
    assert_eq!(run.code, 2, "{tag}: exit code; stderr:\n{}", run.stderr);
    assert!(!run.stderr.contains("panicked"), "{tag}: {}", run.stderr);
    assert!(run.stdout.is_empty(), "{tag}: {}", run.stdout);
    assert!(run.stderr.starts_with("error: "), "{tag}: {}", run.stderr);
    let line = format!(":{}:", line_of(yaml, line_text));
    assert!(
        run.stderr.contains(&line),
        "{tag}: no line {line}:\n{}",
        run.stderr
    );
    assert!(
        run.stderr.contains(tag) && run.stderr.contains(".yaml"),
        "{tag}: the file is named:\n{}",
        run.stderr
    );
    for w in words {
        assert!(
            run.stderr.contains(w),
            "{tag}: stderr lacks `{w}`:\n{}",
            run.stderr
        );
    }
    run
}

#[test]
fn the_tube_with_walls_is_valid() {
    let run = run_study("check", "walls-valid", TUBE, "text");
    assert_eq!(run.code, 0, "{}", run.stderr);
    // B and S come only by the side: the check must not call them unreachable.
    assert!(
        !run.stdout.contains("can never") && !run.stderr.contains("can never"),
        "{}{}",
        run.stdout,
        run.stderr
    );
}

// --- the vessel

#[test]
fn distributed_feed_on_a_tank_is_refused() {
    let y = with(TUBE, "  type: pfr\n", "  type: cstr\n");
    refused(
        "walls-cstr",
        &y,
        "distributed_feeds:",
        &["reactor.distributed_feeds", "tube", "join"],
    );
}

#[test]
fn distributed_feed_on_a_batch_is_refused() {
    let y = with(
        TUBE,
        "  type: pfr\n  volume: 1 m3\n",
        "  type: batch\n  volume: 1 m3\n  time: 1 h\n",
    )
    .replace(
        "  volumetric: 1 L/s\n  flows: {A: 1 mol/s}\n",
        "  amounts: {A: 1 mol}\n",
    );
    refused(
        "walls-batch",
        &y,
        "distributed_feeds:",
        &["reactor.distributed_feeds", "tube", "dosing"],
    );
}

#[test]
fn membrane_on_a_tank_is_refused() {
    let y = with(TUBE, "  type: pfr\n", "  type: cstr\n");
    let y = y.replace(
        "  distributed_feeds:\n    - from: 0 m3\n      to: 1 m3\n      flows: {B: 1 mol/s}\n      volumetric: 1 L/s\n      shape: [[0 m3, 1], [0.3 m3, 3], [1 m3, 0.5]]\n",
        "",
    );
    refused(
        "walls-membrane-cstr",
        &y,
        "membrane:",
        &["reactor.membrane", "tube"],
    );
}

#[test]
fn distributed_feed_on_a_bed_with_pressure_drop_is_refused() {
    let y = "name: bed (demo values)
phase: gas
species: {A: {}, B: {}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.01 m3/(kg*s)}}
feed: {T: 500 K, P: 5 bar, flows: {A: 1 mol/s}}
reactor:
  type: pbr
  catalyst: 10 kg
  pressure_drop: {alpha: 0.01 1/kg}
  distributed_feeds: [{flows: {A: 1 mol/s}}]
";
    refused(
        "walls-pbr-dp",
        y,
        "distributed_feeds:",
        &["reactor.distributed_feeds", "pressure_drop"],
    );
}

// --- the stretch and the shape

#[test]
fn a_stretch_starting_outside_the_tube_is_refused() {
    let y = with(TUBE, "    - from: 0 m3\n", "    - from: 1.5 m3\n");
    refused(
        "walls-from",
        &y,
        "from: 1.5 m3",
        &["reactor.distributed_feeds[0].from", "inside the tube"],
    );
}

#[test]
fn a_stretch_ending_before_it_starts_is_refused() {
    let y = with(TUBE, "      to: 1 m3\n", "      to: 2 m3\n");
    refused(
        "walls-to",
        &y,
        "to: 2 m3",
        &["reactor.distributed_feeds[0].to", "within the tube"],
    );
}

#[test]
fn a_stretch_in_the_wrong_unit_is_refused() {
    let y = with(TUBE, "    - from: 0 m3\n", "    - from: 0 kg\n");
    refused(
        "walls-from-unit",
        &y,
        "from: 0 kg",
        &["reactor.distributed_feeds[0].from", "dimensions"],
    );
}

#[test]
fn a_shape_of_one_point_is_refused() {
    let y = with(
        TUBE,
        "shape: [[0 m3, 1], [0.3 m3, 3], [1 m3, 0.5]]",
        "shape: [[0 m3, 1]]",
    );
    refused(
        "walls-shape-one",
        &y,
        "shape:",
        &["reactor.distributed_feeds[0].shape", "two points"],
    );
}

#[test]
fn a_shape_point_outside_the_stretch_is_refused() {
    let y = with(TUBE, "[1 m3, 0.5]]", "[1.2 m3, 0.5]]");
    refused(
        "walls-shape-out",
        &y,
        "shape:",
        &[
            "reactor.distributed_feeds[0].shape[2][0]",
            "within the stretch",
        ],
    );
}

#[test]
fn a_shape_not_ascending_is_refused() {
    let y = with(TUBE, "[0.3 m3, 3]", "[0 m3, 3]");
    refused(
        "walls-shape-order",
        &y,
        "shape:",
        &["reactor.distributed_feeds[0].shape[1][0]", "ascending"],
    );
}

#[test]
fn a_negative_shape_weight_is_refused() {
    let y = with(TUBE, "[0.3 m3, 3]", "[0.3 m3, -3]");
    refused(
        "walls-shape-weight",
        &y,
        "shape:",
        &[
            "reactor.distributed_feeds[0].shape[1][1]",
            "zero or positive",
        ],
    );
}

#[test]
fn a_shape_of_zero_weights_is_refused() {
    let y = with(
        TUBE,
        "shape: [[0 m3, 1], [0.3 m3, 3], [1 m3, 0.5]]",
        "shape: [[0 m3, 0], [1 m3, 0]]",
    );
    refused(
        "walls-shape-zero",
        &y,
        "shape:",
        &["reactor.distributed_feeds[0].shape", "all zero"],
    );
}

#[test]
fn a_distributed_stream_without_flows_is_refused() {
    let y = with(TUBE, "      flows: {B: 1 mol/s}\n", "");
    refused(
        "walls-stream",
        &y,
        "- from: 0 m3",
        &["reactor.distributed_feeds[0]", "flows"],
    );
}

// --- the membrane

#[test]
fn an_unknown_membrane_species_is_refused() {
    let y = with(TUBE, "    - species: S\n", "    - species: X\n");
    refused(
        "walls-species",
        &y,
        "species: X",
        &["reactor.membrane[0].species", "unknown species `X`"],
    );
}

#[test]
fn a_membrane_species_listed_twice_is_refused() {
    let y = with(
        TUBE,
        "      sweep: 0 mol/m3\n",
        "      sweep: 0 mol/m3\n    - {species: S, coefficient: 0.02 1/s}\n",
    );
    refused(
        "walls-twice",
        &y,
        "{species: S, coefficient: 0.02 1/s}",
        &["reactor.membrane[1].species", "twice"],
    );
}

#[test]
fn a_membrane_coefficient_per_mass_in_a_tube_is_refused() {
    let y = with(TUBE, "coefficient: 0.01 1/s", "coefficient: 0.01 m3/(kg*s)");
    refused(
        "walls-coefficient-unit",
        &y,
        "coefficient:",
        &["reactor.membrane[0].coefficient", "per tube volume"],
    );
}

#[test]
fn a_negative_membrane_coefficient_is_refused() {
    let y = with(TUBE, "coefficient: 0.01 1/s", "coefficient: -0.01 1/s");
    refused(
        "walls-coefficient-sign",
        &y,
        "coefficient:",
        &["reactor.membrane[0].coefficient", "zero or positive"],
    );
}

#[test]
fn a_negative_sweep_concentration_is_refused() {
    let y = with(TUBE, "sweep: 0 mol/m3", "sweep: -5 mol/m3");
    refused(
        "walls-sweep",
        &y,
        "sweep:",
        &["reactor.membrane[0].sweep", "zero or positive"],
    );
}

#[test]
fn a_sweep_that_is_not_a_concentration_is_refused() {
    let y = with(TUBE, "sweep: 0 mol/m3", "sweep: 2 bar");
    refused(
        "walls-sweep-unit",
        &y,
        "sweep:",
        &["reactor.membrane[0].sweep", "dimensions"],
    );
}

// --- the commands

/// `run`: the report names what was fed along the tube and what crossed the wall, the
/// liquid's outlet flow includes the distributed stream, the CSV profile has a permeate
/// column, and the element balance closes over everything fed and everything that left.
#[test]
fn run_reports_the_walls() {
    let j = run_args("walls-run", TUBE, &["--format", "json", "--points", "5"]).ok_json();
    assert_eq!(j["distributed_feed"]["B"].as_f64(), Some(1.0));
    let q = j["permeate"]["S"].as_f64().expect("permeate of S");
    assert!(q > 0.0, "{q}");
    // v_out = v0 + q_side (constant density; the membrane's S is dilute).
    let v = j["outlet_volumetric_flow"].as_f64().unwrap();
    assert!((v - 2e-3).abs() < 1e-15, "{v}");
    for (e, c) in j["element_closure"].as_object().unwrap() {
        assert!(c.as_f64().unwrap() < 1e-8, "{e}: {c}");
    }
    let p = j["profile"].as_array().unwrap();
    assert_eq!(p[0]["permeate"]["S"].as_f64(), Some(0.0));
    assert!((p[4]["permeate"]["S"].as_f64().unwrap() - q).abs() <= 1e-15 * q.max(1.0));
    let csv = temp_study("walls-csv-out", "");
    let run = run_args(
        "walls-run-csv",
        TUBE,
        &["--profile", csv.p(), "--points", "5"],
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let text = std::fs::read_to_string(&csv.path).unwrap();
    let header = text.lines().next().unwrap();
    assert!(header.contains("permeate S [mol/s]"), "{header}");
    assert!(header.contains("v [m3/s]"), "{header}");
    let t = run_args("walls-run-text", TUBE, &[]);
    assert_eq!(t.code, 0, "{}", t.stderr);
    assert!(
        t.stdout.contains("fed along the tube: B 1 mol/s"),
        "{}",
        t.stdout
    );
    assert!(t.stdout.contains("through the wall"), "{}", t.stdout);
}

/// `sweep` over the membrane coefficient: more S leaves by the wall as the coefficient grows
/// (the wall flux k_m C_S rises with k_m at every point; from the balance).
#[test]
fn sweep_varies_the_membrane() {
    let f = temp_study("walls-sweep", TUBE);
    let run = rxnet(&[
        "sweep",
        f.p(),
        "--vary",
        "reactor.membrane.0.coefficient=0.001 1/s:0.1 1/s:3",
        "--format",
        "json",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let j = run.json();
    let text = j.to_string();
    assert!(text.contains("reactor.membrane.0.coefficient"), "{text}");
    // The yield of R on A is unchanged by taking S out (S is not a reactant), but the run
    // differs: the outlet S falls as k_m grows.
    let points = j["points"]
        .as_array()
        .or_else(|| j.as_array())
        .expect("points");
    assert_eq!(points.len(), 3, "{text}");
    let s_out: Vec<f64> = points
        .iter()
        .map(|p| {
            p["outlet"]["S"]
                .as_f64()
                .unwrap_or_else(|| panic!("outlet S in {p}"))
        })
        .collect();
    assert!(s_out[0] > s_out[1] && s_out[1] > s_out[2], "{s_out:?}");
}

/// `optimize` over the distributed stream's B (a `--set` path into the list): more B along
/// the tube makes more R at every point (r1 = k1 C_A C_B rises with C_B; from the balance),
/// so the best is the upper bound, found through the full evaluation of each candidate.
#[test]
fn optimize_varies_the_walls() {
    let f = temp_study("walls-optimize", TUBE);
    let run = rxnet(&[
        "optimize",
        f.p(),
        "--maximize",
        "R",
        "--over",
        "reactor.distributed_feeds.0.flows.B",
        "--bounds",
        "0.2 mol/s",
        "3 mol/s",
    ]);
    assert_eq!(run.code, 0, "{}\n{}", run.stdout, run.stderr);
    assert!(
        run.stdout
            .contains("best reactor.distributed_feeds.0.flows.B = 3 mol s^-1")
            && run.stdout.contains("fed along the tube: B 3 mol/s"),
        "{}",
        run.stdout
    );
    // The size search cannot keep the walls as written: refused, not silently wrong.
    let size = rxnet(&["optimize", f.p(), "--maximize", "R", "--format", "json"]);
    assert_eq!(size.code, 2, "{}\n{}", size.stdout, size.stderr);
    assert!(size.stderr.contains("distributed feed"), "{}", size.stderr);
}

/// `compare`: a tube with walls is a contacting pattern of its own: whatever reactor types are
/// asked for, it is screened once as itself (labelled with its pattern) and never run without
/// its walls as a tank or a batch.
#[test]
fn compare_keeps_or_refuses_the_walls() {
    let f = temp_study("walls-compare", TUBE);
    let run = rxnet(&[
        "compare",
        f.p(),
        "--reactors",
        "pfr,cstr,batch",
        "--format",
        "json",
    ]);
    let text = format!("{}{}", run.stdout, run.stderr);
    assert!(!text.contains("panicked"), "{text}");
    let j = run.ok_json();
    let rows = j.as_array().expect("rows");
    assert_eq!(rows.len(), 1, "screened once, as itself: {j}");
    let label = rows[0]["reactor"].as_str().unwrap();
    assert!(label.starts_with("pfr+"), "{label}");
    assert!(rows[0]["error"].is_null(), "{}", rows[0]);
    // Asked directly to move it, the library refuses with the reason.
    let net = rxnet::load_str(TUBE, "tube", &[]).unwrap();
    let e =
        rxnet::studies::compare::as_reactor(&net, rxnet::studies::compare::Kind::Cstr).unwrap_err();
    assert!(e.contains("screened only as itself"), "{e}");
}

/// `size`: the size for a conversion is refused for a tube with walls (the stretch and the
/// wall are fixed along the tube as written), exit 2 with the reason.
#[test]
fn size_refuses_the_walls() {
    let f = temp_study("walls-size", TUBE);
    let run = rxnet(&["size", f.p(), "--conversion", "0.3"]);
    assert_eq!(run.code, 2, "{}\n{}", run.stdout, run.stderr);
    assert!(
        run.stderr.contains("not searched for a tube"),
        "{}",
        run.stderr
    );
}

/// An energy balance needs the heat capacity of a species fed only along the tube (it would
/// otherwise carry no heat into the stream): refused at load with the field and the species
/// named, exit 2 (and by the balances' own setup for a study moved to an energy balance by
/// `compare --heat`).
#[test]
fn an_energy_balance_needs_the_cp_of_a_species_fed_along_the_tube() {
    let y = TUBE
        .replace(
            "  A: {formula: C2H4}\n",
            "  A: {formula: C2H4, cp: 100 J/(mol*K)}\n",
        )
        .replace(
            "  R: {formula: C2H4Br2}\n",
            "  R: {formula: C2H4Br2, cp: 150 J/(mol*K)}\n",
        )
        .replace(
            "  S: {formula: Br4}\n",
            "  S: {formula: Br4, cp: 100 J/(mol*K)}\n",
        )
        .replace("m3/(mol*s)}}\n", "m3/(mol*s), dH: -20 kJ/mol}}\n")
        .replace("  volume: 1 m3\n", "  volume: 1 m3\n  heat: adiabatic\n");
    refused(
        "walls-cp",
        &y,
        "- from: 0 m3",
        &["reactor.distributed_feeds[0]", "heat capacity of `B`"],
    );
    let ok = y.replace(
        "  B: {formula: Br2}\n",
        "  B: {formula: Br2, cp: 50 J/(mol*K)}\n",
    );
    let run = run_args("walls-cp-ok", &ok, &[]);
    assert_eq!(run.code, 0, "{}", run.stderr);
}
