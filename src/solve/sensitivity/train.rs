//! Forward sensitivities through a train of vessels (or a tube with side feeds), unit by unit
//! as [`crate::solve::train`] solves it.
//!
//! A stream's sensitivity to θ_k is s = ∂(F_j, T, P, v)/∂θ_k. For each unit and each
//! parameter:
//!
//! 1. the join: the unit's inlet is mix(arriving, join); its sensitivity is the central
//!    difference of the same mixing function between the arriving stream moved to
//!    arriving ± δ·s_arriving with the join of the network at θ_k ± δ, and the one with both
//!    moved the other way, s_in = (mix⁺ − mix⁻)/2δ (the mixing differentiated to O(δ²));
//! 2. the bypass fraction b: through = (1 − b)·inlet, around = b·inlet, differenced alike
//!    (b may itself be the parameter);
//! 3. each stretch of the vessel (the whole vessel unless side feeds split a tube) is a single
//!    vessel, built by [`crate::solve::train::stretch_network`] from the study network at
//!    θ_k ± δ and its inlet moved to inlet ± δ·s_inlet; the single-vessel sensitivities
//!    ([`super::simulate_sensitivities`]) of that pair give the stretch's profile and outlet
//!    sensitivities; a side feed mixes with the stretch's outlet as a join does;
//! 4. the bypass rejoins the outlet, differenced as in 1.
//!
//! Every moved stream is nominal ± δ·s, so each vessel sees a direction centred on its own
//! nominal inlet, and the chain rule through the train is exact to O(δ²) at every mixing
//! point. The profile's sensitivities follow the train's profile point by point
//! ([`crate::solve::train::concatenate`]): a stretch's points take its own sensitivities, the
//! feed point the feed's, a unit's outlet point (after a bypass) the outlet stream's.
//!
//! A recycle loop is refused: its sensitivity is the derivative of a fixed point,
//! s_r = (I − ∂g/∂r)⁻¹ ∂g/∂θ, which needs the tube's sensitivity to its own inlet as a
//! matrix; not supported yet.

use super::{Perturbed, Sensitivities, simulate_sensitivities};
use crate::model::{Feed, Network, Phase, Unit};
use crate::reactor::Balance;
use crate::solve::train::{
    Piece, UnitRun, bypass_split, check_unit, concatenate, coolant_outlet, in_unit,
    liquid_outlet_volumetric, outlet_stream, rejoined, stretch_bounds, stretch_inlet,
    stretch_network, unit_inlet, unit_run, units_of,
};
use crate::solve::{SolveError, SolveOptions};
use crate::units::GAS_CONSTANT;

/// A stream's sensitivity to one parameter: ∂/∂θ of its species flows (mol/s), temperature
/// (K), pressure (Pa) and volumetric flow (m3/s).
#[derive(Debug, Clone, PartialEq)]
struct StreamSensitivity {
    amounts: Vec<f64>,
    temperature: f64,
    /// NaN where it is not known (the outlet of a bed with pressure drop): using it is an
    /// error, never a number.
    pressure: f64,
    volumetric: f64,
}

impl StreamSensitivity {
    /// (plus − minus)/step, field by field.
    fn between(plus: &Feed, minus: &Feed, step: f64) -> Self {
        StreamSensitivity {
            amounts: plus
                .amounts
                .iter()
                .zip(&minus.amounts)
                .map(|(p, m)| (p - m) / step)
                .collect(),
            temperature: (plus.temperature - minus.temperature) / step,
            pressure: (plus.pressure - minus.pressure) / step,
            volumetric: (plus.volumetric - minus.volumetric) / step,
        }
    }
}

/// The stream `f` moved by `by`·s (by = ±δ).
fn moved(f: &Feed, s: &StreamSensitivity, by: f64, unit: &str) -> Result<Feed, SolveError> {
    if !s.pressure.is_finite() {
        return Err(SolveError::Setup(format!(
            "unit `{unit}`: the stream arriving comes from a packed bed with pressure drop, whose outlet pressure's sensitivity is not carried on: sensitivities through a unit after such a bed are not supported yet"
        )));
    }
    Ok(Feed {
        temperature: f.temperature + by * s.temperature,
        pressure: f.pressure + by * s.pressure,
        amounts: f
            .amounts
            .iter()
            .zip(&s.amounts)
            .map(|(a, d)| a + by * d)
            .collect(),
        volumetric: f.volumetric + by * s.volumetric,
    })
}

/// One parameter's side of the central difference: the study network at θ_k ± δ, its units,
/// and the signed half step ±δ.
struct Side<'a> {
    net: &'a Network,
    units: Vec<Unit>,
    by: f64,
}

/// For each parameter, the sensitivity of `f`'s output: f evaluated on each side (the side's
/// network and unit, the inputs moved by ±δ·s) and differenced.
fn differentiate<F>(
    sides: &[[Side; 2]],
    steps: &[f64],
    f: F,
) -> Result<Vec<StreamSensitivity>, SolveError>
where
    F: Fn(usize, &Side) -> Result<Feed, SolveError>,
{
    sides
        .iter()
        .zip(steps)
        .enumerate()
        .map(|(k, ([plus, minus], step))| {
            Ok(StreamSensitivity::between(
                &f(k, plus)?,
                &f(k, minus)?,
                *step,
            ))
        })
        .collect()
}

/// Forward sensitivities of a train (or a tube with side feeds): the nominal solve, identical
/// to [`crate::solve::simulate`], and per parameter the sensitivities at every point of the
/// train's profile and of its outlet.
pub fn sensitivities(
    net: &Network,
    perturbed: &[Perturbed],
    opts: &SolveOptions,
) -> Result<Sensitivities, SolveError> {
    let units = units_of(net);
    let sides: Vec<[Side; 2]> = perturbed
        .iter()
        .map(|p| {
            let h = 0.5 * p.step;
            [(&p.plus, h), (&p.minus, -h)].map(|(n, by)| Side {
                net: n,
                units: units_of(n),
                by,
            })
        })
        .collect();
    let steps: Vec<f64> = perturbed.iter().map(|p| p.step).collect();
    for side in sides.iter().flatten() {
        let same = side.units.len() == units.len()
            && side.units.iter().zip(&units).all(|(a, b)| {
                a.id == b.id
                    && a.contacting.side_feeds.len() == b.contacting.side_feeds.len()
                    && a.join.is_some() == b.join.is_some()
            });
        if !same {
            return Err(SolveError::Setup(
                "a parameter changes the train's layout (its units, joins or side feeds): sensitivities need the same train on both sides of each step".into(),
            ));
        }
    }
    let n_par = perturbed.len();
    // The feed and its sensitivity.
    let mut stream = net.feed.clone();
    let mut s_stream: Vec<StreamSensitivity> = sides
        .iter()
        .zip(&steps)
        .map(|([p, m], step)| StreamSensitivity::between(&p.net.feed, &m.net.feed, *step))
        .collect();
    let s_feed = s_stream.clone();
    let mut offset = 0.0;
    let mut runs: Vec<UnitRun> = Vec::with_capacity(units.len());
    // Per unit: per stretch its single-vessel sensitivities and its inlet's; the unit's outlet.
    let mut stretch_sens: Vec<Vec<(Sensitivities, Vec<StreamSensitivity>)>> = Vec::new();
    let mut outlet_sens: Vec<Vec<StreamSensitivity>> = Vec::new();
    for (i, u) in units.iter().enumerate() {
        let (run, stretches, s_out) =
            unit_sensitivities(net, u, i, &sides, &steps, &stream, &s_stream, offset, opts)
                .map_err(|e| in_unit(u, e))?;
        stream = run.outlet.clone();
        s_stream = s_out.clone();
        offset += run.size;
        runs.push(run);
        stretch_sens.push(stretches);
        outlet_sens.push(s_out);
    }
    let (profile, _labels, places) = concatenate(net, &runs);
    // Point by point in the profile's order.
    let energy = profile.temperature.is_some();
    let mut d_states = vec![Vec::with_capacity(places.len()); n_par];
    let mut d_temperature = vec![Vec::with_capacity(places.len()); n_par];
    let mut unit = 0usize;
    for (idx, place) in places.iter().enumerate() {
        for k in 0..n_par {
            let (ds, dt) = match *place {
                Some((u, j, i)) => {
                    unit = u;
                    let (s, s_in) = &stretch_sens[u][j];
                    let dt = match &s.d_temperature {
                        Some(dt) => dt[k][i],
                        // An isothermal stretch holds its inlet's temperature.
                        None => s_in[k].temperature,
                    };
                    (s.d_states[k][i].clone(), dt)
                }
                // The feed point of a train that starts with a tank.
                None if idx == 0 => (s_feed[k].amounts.clone(), s_feed[k].temperature),
                // A unit's outlet after its bypass.
                None => (
                    outlet_sens[unit][k].amounts.clone(),
                    outlet_sens[unit][k].temperature,
                ),
            };
            d_states[k].push(ds);
            d_temperature[k].push(dt);
        }
    }
    let d_outlet = s_stream.iter().map(|s| s.amounts.clone()).collect();
    Ok(Sensitivities {
        sim: profile,
        d_states,
        d_temperature: energy.then_some(d_temperature),
        d_outlet,
    })
}

/// One unit: its run as [`crate::solve::train`] records it, each stretch's sensitivities with
/// its inlet's, and the outlet stream's sensitivity per parameter.
#[allow(clippy::too_many_arguments, clippy::type_complexity)]
fn unit_sensitivities(
    net: &Network,
    u: &Unit,
    i: usize,
    sides: &[[Side; 2]],
    steps: &[f64],
    arriving: &Feed,
    s_arriving: &[StreamSensitivity],
    offset: f64,
    opts: &SolveOptions,
) -> Result<
    (
        UnitRun,
        Vec<(Sensitivities, Vec<StreamSensitivity>)>,
        Vec<StreamSensitivity>,
    ),
    SolveError,
> {
    check_unit(u)?;
    if u.contacting.recycle.is_some_and(|r| r > 0.0) {
        return Err(SolveError::Setup(
            "sensitivities through a recycle loop are not supported yet (the loop's fixed point needs the tube's sensitivity to its own inlet); solve the study without sensitivities, or study the tube without its recycle".into(),
        ));
    }
    let id = u.id.as_str();
    // 1. The join.
    let inlet = unit_inlet(net, u, arriving)?;
    let s_inlet = differentiate(sides, steps, |k, side| {
        unit_inlet(
            side.net,
            &side.units[i],
            &moved(arriving, &s_arriving[k], side.by, id)?,
        )
    })?;
    // 2. The bypass split.
    let (through, around) = bypass_split(&inlet, u.bypass);
    let split = |k: usize, side: &Side| -> Result<(Feed, Feed), SolveError> {
        Ok(bypass_split(
            &moved(&inlet, &s_inlet[k], side.by, id)?,
            side.units[i].bypass,
        ))
    };
    let s_through = differentiate(sides, steps, |k, side| Ok(split(k, side)?.0))?;
    let s_around = differentiate(sides, steps, |k, side| Ok(split(k, side)?.1))?;
    // 3. The vessel, stretch by stretch.
    let bounds = stretch_bounds(u);
    let mut pieces: Vec<Piece> = Vec::with_capacity(bounds.len() - 1);
    let mut stretches = Vec::with_capacity(bounds.len() - 1);
    let mut stream = through.clone();
    let mut s_stream = s_through.clone();
    let mut product = None;
    let mut s_product = Vec::new();
    for (j, &start) in bounds[..bounds.len() - 1].iter().enumerate() {
        let mut coolant = None;
        if j > 0 {
            let prev: &Piece = pieces.last().expect("a stretch before");
            let out = outlet_stream(net, prev);
            let s_out = &s_product;
            stream = stretch_inlet(net, u, j, &out, through.temperature)?;
            s_stream = differentiate(sides, steps, |k, side| {
                stretch_inlet(
                    side.net,
                    &side.units[i],
                    j,
                    &moved(&out, &s_out[k], side.by, id)?,
                    through.temperature + side.by * s_through[k].temperature,
                )
            })?;
            coolant = coolant_outlet(&prev.sim);
            if coolant.is_some() {
                return Err(SolveError::Setup(
                    "sensitivities across a side feed with a co-current coolant stream are not supported yet (the coolant's temperature would carry its sensitivity from stretch to stretch)".into(),
                ));
            }
        }
        let network = stretch_network(net, u, j, &stream, coolant);
        let directions = sides
            .iter()
            .enumerate()
            .map(|(k, [plus, minus])| {
                let build = |side: &Side| -> Result<Network, SolveError> {
                    Ok(stretch_network(
                        side.net,
                        &side.units[i],
                        j,
                        &moved(&stream, &s_stream[k], side.by, id)?,
                        coolant,
                    ))
                };
                Ok(Perturbed {
                    plus: build(plus)?,
                    minus: build(minus)?,
                    step: steps[k],
                })
            })
            .collect::<Result<Vec<_>, SolveError>>()?;
        let sens = simulate_sensitivities(&network, &directions, opts)?;
        let balance = Balance::new(&network).map_err(SolveError::Setup)?;
        let piece = Piece {
            network,
            balance,
            sim: sens.sim.clone(),
            offset: offset + start,
        };
        let out = outlet_stream(net, &piece);
        s_product = stretch_outlet(net, &piece, &sens, &directions, &s_stream)?;
        product = Some(out);
        pieces.push(piece);
        stretches.push((sens, s_stream.clone()));
    }
    let product = product.expect("a vessel has a stretch");
    // 4. The bypass rejoins.
    let outlet = rejoined(net, u, product.clone(), &around)?;
    let s_outlet = differentiate(sides, steps, |k, side| {
        rejoined(
            side.net,
            &side.units[i],
            moved(&product, &s_product[k], side.by, id)?,
            &moved(&around, &s_around[k], side.by, id)?,
        )
    })?;
    let run = unit_run(net, u, offset, inlet, pieces, outlet, None);
    Ok((run, stretches, s_outlet))
}

/// The sensitivity of the stream leaving a stretch: its species from the single vessel's
/// outlet sensitivities (a moving end included), its temperature from the energy balance's
/// (an isothermal stretch holds its inlet's), its pressure (a bed with pressure drop: not
/// carried, marked unknown), and its volumetric flow: a liquid's v(x_end) differenced between
/// the moved stretches, an ideal gas's from v = F_T R T / P,
/// ∂v = R (T ∂F_T + F_T ∂T)/P − F_T R T ∂P/P².
fn stretch_outlet(
    net: &Network,
    piece: &Piece,
    sens: &Sensitivities,
    directions: &[Perturbed],
    s_in: &[StreamSensitivity],
) -> Result<Vec<StreamSensitivity>, SolveError> {
    let out = outlet_stream(net, piece);
    let f_total: f64 = out.amounts.iter().sum();
    (0..directions.len())
        .map(|k| {
            let amounts = sens.d_outlet[k].clone();
            let temperature = match &sens.d_temperature {
                Some(dt) => *dt[k].last().expect("a profile has its outlet"),
                None => s_in[k].temperature,
            };
            let pressure = if piece.sim.pressure.is_some() {
                f64::NAN
            } else {
                s_in[k].pressure
            };
            let volumetric = match net.phase {
                Phase::Liquid => {
                    let v = |n: &Network| -> Result<f64, SolveError> {
                        let b = Balance::new(n).map_err(SolveError::Setup)?;
                        Ok(liquid_outlet_volumetric(&b, n.reactor.size()))
                    };
                    (v(&directions[k].plus)? - v(&directions[k].minus)?) / directions[k].step
                }
                Phase::Gas => {
                    // Unknown with the pressure's (NaN carries on).
                    let d_total: f64 = amounts.iter().sum();
                    GAS_CONSTANT * (out.temperature * d_total + f_total * temperature)
                        / out.pressure
                        - f_total * GAS_CONSTANT * out.temperature * pressure
                            / (out.pressure * out.pressure)
                }
            };
            Ok(StreamSensitivity {
                amounts,
                temperature,
                pressure,
                volumetric,
            })
        })
        .collect()
}
