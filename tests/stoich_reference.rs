//! The exact stoichiometric analysis against an outside reference: rank, independent
//! reactions (greedy in file order), the combination of independent reactions giving each
//! dependent one, and the conservation-law basis, as computed by plain dense Gauss–Jordan
//! elimination with Python's `fractions` (tests/reference/stoich_rank.py, which documents its
//! command and version; `cargo test` never runs Python). The networks are three textbook-sized
//! ones and the generated 50-species, 150-reaction network of seed 1.

use rxnet::exact::{Q, SparseQMatrix, rational_from_decimal};
use serde_json::Value;

fn fixture() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/reference/stoich_rank.json"
    ))
    .expect("fixture");
    serde_json::from_str(&text).expect("fixture is JSON")
}

fn strings(v: &Value) -> Vec<String> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|s| s.as_str().expect("string").to_string())
        .collect()
}

/// "p/q" or "p" as an exact rational.
fn fraction(s: &str) -> Q {
    match s.split_once('/') {
        Some((p, q)) => {
            rational_from_decimal(p).expect("numerator") / rational_from_decimal(q).expect("den")
        }
        None => rational_from_decimal(s).expect("integer"),
    }
}

/// The fixture's matrix, species × reactions.
fn matrix(net: &Value) -> SparseQMatrix {
    let rows = net["species"].as_array().expect("species").len();
    let cols = net["reactions"].as_array().expect("reactions").len();
    let entries = net["entries"].as_array().expect("entries").iter().map(|e| {
        (
            e[0].as_u64().expect("row") as usize,
            e[1].as_u64().expect("col") as usize,
            fraction(e[2].as_str().expect("value")),
        )
    });
    SparseQMatrix::from_entries(rows, cols, entries)
}

#[test]
fn rank_combinations_and_laws_match_the_fraction_reference() {
    let fx = fixture();
    let nets = fx["networks"].as_array().expect("networks");
    assert_eq!(nets.len(), 4);
    for net in nets {
        let name = net["name"].as_str().expect("name");
        let ids = strings(&net["reactions"]);
        let species = strings(&net["species"]);
        let m = matrix(net);
        // The prime-field path with its exact confirmation, and the rational elimination:
        // both must give the reference's answer.
        for (path, dep) in [
            ("modular", m.dependence()),
            ("rational", m.dependence_rational()),
        ] {
            let rank = net["rank"].as_u64().expect("rank") as usize;
            assert_eq!(dep.independent.len(), rank, "{name} ({path}): rank");
            let independent: Vec<String> =
                dep.independent.iter().map(|&i| ids[i].clone()).collect();
            assert_eq!(
                independent,
                strings(&net["independent"]),
                "{name} ({path}): independent reactions"
            );
            let want = net["dependent"].as_object().expect("dependent");
            assert_eq!(dep.dependent.len(), want.len(), "{name} ({path})");
            for (j, terms) in &dep.dependent {
                let expect = want[&ids[*j]].as_object().expect("combination");
                assert_eq!(terms.len(), expect.len(), "{name} ({path}): {}", ids[*j]);
                for (i, c) in terms.iter() {
                    assert_eq!(
                        c.to_q(),
                        fraction(expect[&ids[i]].as_str().expect("coefficient")),
                        "{name} ({path}): coefficient of {} in {}",
                        ids[i],
                        ids[*j]
                    );
                }
            }
            // Nullity = species − rank, and the very same basis vectors.
            let laws: Vec<Vec<(String, String)>> = dep
                .left_null_space
                .iter()
                .map(|y| {
                    y.iter()
                        .map(|(r, v)| (species[*r].clone(), v.to_string()))
                        .collect()
                })
                .collect();
            let want_laws: Vec<Vec<(String, String)>> = net["conservation_laws"]
                .as_array()
                .expect("laws")
                .iter()
                .map(|law| {
                    let mut v: Vec<(String, String)> = law
                        .as_object()
                        .expect("law")
                        .iter()
                        .map(|(s, c)| (s.clone(), c.as_str().expect("integer").to_string()))
                        .collect();
                    v.sort_by_key(|(s, _)| species.iter().position(|x| x == s));
                    v
                })
                .collect();
            assert_eq!(laws.len(), species.len() - rank, "{name} ({path}): nullity");
            assert_eq!(laws, want_laws, "{name} ({path}): conservation laws");
        }
    }
}

/// The whole `check` pipeline on the generated network (made in-process from the same spec
/// as the reference's input) reports the reference's rank, independent set and combinations.
#[test]
fn generated_network_check_matches_the_reference() {
    let fx = fixture();
    let reference = &fx["networks"][3];
    let spec = rxnet::generate::GeneratorSpec {
        species: 50,
        reactions: 150,
        seed: 1,
        ..Default::default()
    };
    let text = rxnet::generate::generate_study(&spec).expect("generated");
    let net = rxnet::load_str(&text, "generated", &[]).expect("loads");
    let c = rxnet::analysis::check(&net);
    assert_eq!(c.rank as u64, reference["rank"].as_u64().expect("rank"));
    assert_eq!(c.independent, strings(&reference["independent"]));
    let want = reference["dependent"].as_object().expect("dependent");
    assert_eq!(c.dependent.len(), want.len());
    for d in &c.dependent {
        let expect = want[&d.reaction].as_object().expect("combination");
        assert_eq!(d.combination.len(), expect.len());
        for (id, v) in d.combination.iter() {
            let q = fraction(expect[id].as_str().expect("coefficient"));
            assert_eq!(v, rxnet::exact::to_f64(&q), "{} in {}", id, d.reaction);
        }
    }
    assert_eq!(
        c.conservation_laws.len(),
        reference["conservation_laws"]
            .as_array()
            .expect("laws")
            .len()
    );
}
