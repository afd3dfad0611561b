//! A sweep's points through the library: what a point reuses from the study (the species, a
//! flow reactor's feed and the reactions built once when only `reactor.…` fields vary) and
//! the pipelined chunks (rows written while the next chunk is evaluated) give the rows a fresh
//! load and evaluation of each point gives, bit for bit, in point order. Every study here is
//! made of test values.

use rxnet::model::{Override, ParsedStudy};
use rxnet::solve::SolveOptions;
use rxnet::studies::evaluate::{self, Findings};
use rxnet::studies::study::Study;
use rxnet::studies::sweep::{self, Axis, Columns, SweepRow};

/// A liquid PFR A -> B, first order, k = 0.01 1/s, v0 = 1 L/s, C_A0 = 1 mol/L: conversion
/// X = 1 − e^(−kτ) with τ = V/v0 (Levenspiel ch. 5).
const FIRST_ORDER: &str = "name: first-order tube (test values)
phase: liquid
species: {A: {formula: C2H4O}, B: {formula: C2H4O}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.01 1/s, Ea: 40 kJ/mol, T_ref: 300 K}}
feed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}
reactor: {type: pfr, volume: 10 L}
key: A
desired: B
";

fn rows_of(study: &Study, axes: &[Axis], shard: Option<(usize, usize)>) -> Vec<SweepRow> {
    let base = study.load(&[]).unwrap();
    let findings = Findings::of(&base);
    let cols = Columns::new(&base, axes);
    let mut rows: Vec<SweepRow> = Vec::new();
    let mut sink = |chunk: &[SweepRow]| -> Result<(), ()> {
        rows.extend_from_slice(chunk);
        Ok(())
    };
    sweep::run(
        study,
        Some(&findings),
        &cols,
        axes,
        shard,
        &SolveOptions::default(),
        &|| {},
        &mut sink,
    )
    .unwrap_or_else(|_| panic!("the sweep runs"));
    rows
}

/// The outlet of a point loaded whole from the parsed text (no reuse) and evaluated afresh.
fn fresh_outlet(parsed: &ParsedStudy, sets: &[Override]) -> Vec<f64> {
    let net = parsed.load(sets).unwrap();
    let ev = evaluate::evaluate(&net, &SolveOptions::default(), false).unwrap();
    ev.sim.outlet().to_vec()
}

#[test]
fn reactor_points_give_the_rows_of_fresh_evaluations_in_order() {
    let study = Study::new(FIRST_ORDER.into(), "<test>".into(), Vec::new()).unwrap();
    let parsed = ParsedStudy::new(FIRST_ORDER.into(), "<test>".into()).unwrap();
    // More points than one chunk, so rows cross a chunk boundary of the pipeline.
    let n = sweep::CHUNK + 77;
    let axes = vec![Axis::parse(&format!("reactor.volume=1 L:200 L:{n}")).unwrap()];
    let rows = rows_of(&study, &axes, None);
    assert_eq!(rows.len(), n);
    for (i, r) in rows.iter().enumerate() {
        assert_eq!(r.point, i, "rows in point order");
        let p = r.result.as_ref().unwrap();
        let sets: Vec<Override> = vec![axes[0].var.set(r.inputs[0])];
        // Every 97th point against a fresh load and evaluation, bit for bit.
        if i % 97 == 0 || i == n - 1 {
            let want = fresh_outlet(&parsed, &sets);
            assert_eq!(
                p.outlet.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                want.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                "point {i}"
            );
        }
        // X = 1 − e^(−kτ), τ = V/v0 with V in L and v0 = 1 L/s (Levenspiel ch. 5).
        let x_closed = 1.0 - (-0.01 * r.inputs[0]).exp();
        assert!(
            (p.conversion - x_closed).abs() < 1e-7 * x_closed.max(1e-3),
            "point {i}: X = {}, closed form {x_closed}",
            p.conversion
        );
    }
    // Shards (chunked differently) give the same rows.
    let mut merged: Vec<SweepRow> = (1..=3)
        .flat_map(|k| rows_of(&study, &axes, Some((k, 3))))
        .collect();
    merged.sort_by_key(|r| r.point);
    assert_eq!(
        sweep::csv_rows(&Columns::new(&study.load(&[]).unwrap(), &axes), &merged),
        sweep::csv_rows(&Columns::new(&study.load(&[]).unwrap(), &axes), &rows)
    );
}

/// A point that also varies a non-reactor input (the feed temperature, which changes the
/// reactions' k and so is loaded whole, with the check at every point) and a point that
/// changes the reactor type (a rate basis of its own) give the rows of fresh evaluations.
#[test]
fn mixed_and_type_changing_points_give_the_rows_of_fresh_evaluations() {
    let study = Study::new(FIRST_ORDER.into(), "<test>".into(), Vec::new()).unwrap();
    let parsed = ParsedStudy::new(FIRST_ORDER.into(), "<test>".into()).unwrap();
    let axes = vec![
        Axis::parse("reactor.volume=1 L:50 L:7").unwrap(),
        Axis::parse("feed.T=290 K:330 K:5").unwrap(),
    ];
    let rows = rows_of(&study, &axes, None);
    assert_eq!(rows.len(), 35);
    for r in &rows {
        let sets: Vec<Override> = axes
            .iter()
            .zip(&r.inputs)
            .map(|(a, v)| a.var.set(*v))
            .collect();
        let want = fresh_outlet(&parsed, &sets);
        assert_eq!(r.result.as_ref().unwrap().outlet, want, "point {}", r.point);
        // Arrhenius: k(T) = k_ref exp(−Ea/R (1/T − 1/T_ref)), X = 1 − e^(−k τ); R from CODATA.
        let r_gas = 8.314_462_618;
        let k = 0.01 * (-(40e3 / r_gas) * (1.0 / r.inputs[1] - 1.0 / 300.0)).exp();
        let x_closed = 1.0 - (-k * r.inputs[0]).exp();
        let x = r.result.as_ref().unwrap().conversion;
        assert!(
            (x - x_closed).abs() < 1e-6,
            "X = {x}, closed form {x_closed}"
        );
    }
    // A CSTR of the same volume: X = kτ/(1 + kτ) (Levenspiel ch. 5).
    let sets: Vec<Override> = vec![
        "reactor.type=cstr".parse().unwrap(),
        "reactor.volume=20 L".parse().unwrap(),
    ];
    let net = study.load(&sets).unwrap();
    assert_eq!(
        format!("{net:?}"),
        format!("{:?}", parsed.load(&sets).unwrap())
    );
    let ev = evaluate::evaluate(&net, &SolveOptions::default(), false).unwrap();
    let x = ev.metrics.conversion;
    assert!((x - 0.2 / 1.2).abs() < 1e-7, "CSTR X = {x}");
}

/// A gas PFR A -> B fed by mass at a gauge pressure (both conversions noted by the loader) and
/// a batch charged by concentration: a point that changes only the reactor takes the flow
/// reactor's feed, with its notes, from the base load; the batch's charge (C·V) is built again
/// at every volume. The networks, notes included, are those of whole loads, and the rows
/// those of fresh evaluations bit for bit.
#[test]
fn reactor_points_reuse_a_flow_feed_and_rebuild_a_batch_charge() {
    // 44.053 g/s of C2H4O (M = 44.053 g/mol from the standard atomic weights) is 1 mol/s.
    let gas_tube = "name: gas tube fed by mass (test values)
phase: gas
species: {A: {formula: C2H4O}, B: {formula: C2H4O}, N2: {formula: N2}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 0.5 1/s, Ea: 40 kJ/mol, T_ref: 500 K}}
feed: {T: 500 K, P: 2 barg, flows: {A: 44.053 g/s, N2: 28.014 g/s}}
reactor: {type: pfr, volume: 100 L}
key: A
desired: B
";
    let batch = "name: batch charged by concentration (test values)
phase: liquid
species: {A: {formula: C2H4O}, B: {formula: C2H4O}}
reactions:
  - {id: r1, stoich: A -> B, rate: {k: 1e-3 1/s, Ea: 40 kJ/mol, T_ref: 300 K}}
feed: {T: 300 K, concentrations: {A: 2 mol/L}}
reactor: {type: batch, volume: 1 m3, time: 10 min}
key: A
desired: B
";
    for (text, axis) in [
        (gas_tube, "reactor.volume=10 L:500 L:40"),
        (batch, "reactor.volume=0.5 m3:3 m3:40"),
    ] {
        let study = Study::new(text.into(), "<test>".into(), Vec::new()).unwrap();
        let parsed = ParsedStudy::new(text.into(), "<test>".into()).unwrap();
        let base = parsed.load(&[]).unwrap();
        if text == gas_tube {
            // the gauge pressure and the two mass flows
            assert_eq!(base.notes.len(), 3, "noted conversions: {:?}", base.notes);
        }
        let axes = vec![Axis::parse(axis).unwrap()];
        let rows = rows_of(&study, &axes, None);
        assert_eq!(rows.len(), 40);
        for r in &rows {
            let sets = vec![axes[0].var.set(r.inputs[0])];
            assert_eq!(
                format!("{:?}", study.load(&sets).unwrap()),
                format!("{:?}", parsed.load(&sets).unwrap()),
                "point {}: the network of a whole load",
                r.point
            );
            let p = r.result.as_ref().unwrap();
            let want = fresh_outlet(&parsed, &sets);
            assert_eq!(
                p.outlet.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                want.iter().map(|v| v.to_bits()).collect::<Vec<_>>(),
                "point {}",
                r.point
            );
        }
        // The tube: A -> B keeps the moles, so v = v0 = F_T0 R T / P (ideal gas, P = 2 barg =
        // 301,325 Pa absolute, R from CODATA) and X = 1 − e^(−kτ), τ = V/v0 (Levenspiel ch. 5).
        if text == gas_tube {
            let v0 = 2.0 * 8.314_462_618 * 500.0 / 301_325.0;
            for r in &rows {
                let x = r.result.as_ref().unwrap().conversion;
                let closed = 1.0 - (-0.5 * r.inputs[0] * 1e-3 / v0).exp();
                assert!(
                    (x - closed).abs() < 1e-6,
                    "V = {} L: X = {x}, closed form {closed}",
                    r.inputs[0]
                );
            }
        }
        // The batch: N_A = C_A0 V e^(−kt), k = 1e-3 1/s, t = 600 s (first order, Levenspiel
        // ch. 3); the charge follows the volume.
        if text == batch {
            for r in &rows {
                let n_a = r.result.as_ref().unwrap().outlet[0];
                let closed = 2000.0 * r.inputs[0] * (-0.6f64).exp();
                assert!(
                    (n_a - closed).abs() < 1e-6 * closed,
                    "V = {} m3: N_A = {n_a}, closed form {closed}",
                    r.inputs[0]
                );
            }
        }
    }
}
