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
    /// The parameter's θ scale ([`Perturbed::scale`]).
    scale: f64,
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

/// The sensitivity of an adiabatic mixing point ([`crate::reactor::mixing::mix`]) of the
/// nominal `streams` into `mixture`, for each parameter; `inputs` gives the streams entering
/// on each side (moved by ±δ·s, or the side network's own join or side feed). Species, and a
/// liquid's volumetric flow, add: their central differences are exact. The temperature is
/// not differenced between two mixing solves (each converged only to ~1e-12 of T, which a
/// step of 1e-5 would turn into 1e-7 K per unit of θ): it is the implicit-function derivative
/// of the enthalpy balance at the nominal mixed T,
///
/// ```text
/// H(T; streams) = Σ_s Σ_j F_sj ∫_{T_s}^{T} Cp_j dT = 0,    ∂T/∂θ = −(∂H/∂θ) / Σ_s Σ_j F_sj Cp_j(T)
/// ```
///
/// with ∂H/∂θ the central difference of H at that T between the two sides' streams (and heat
/// capacities); with a liquid's `mixture_cp` H = Σ_s v_s (T − T_s) and the divisor Σ_s v_s.
/// Streams at one temperature need no heat capacity while they stay at one temperature.
#[allow(clippy::too_many_arguments)]
fn mixed<F>(
    net: &Network,
    u: &Unit,
    streams: &[&Feed],
    mixture: &Feed,
    sides: &[[Side; 2]],
    steps: &[f64],
    inputs: F,
) -> Result<Vec<StreamSensitivity>, SolveError>
where
    F: Fn(usize, &Side) -> Result<Vec<Feed>, SolveError>,
{
    let t = mixture.temperature;
    let temps = || streams.iter().map(|s| s.temperature);
    let t_max = temps().fold(f64::MIN, f64::max);
    let t_min = temps().fold(f64::MAX, f64::min);
    let same = t_max - t_min <= 1e-12 * t_max;
    let volume_weighted =
        net.phase == Phase::Liquid && u.heat.balance().and_then(|e| e.mixture_cp).is_some();
    let n = net.species.len();
    let present: Vec<usize> = (0..n)
        .filter(|&j| streams.iter().any(|s| s.amounts[j] > 0.0))
        .collect();
    let with_cp = |m: &Network| present.iter().all(|&j| m.species[j].thermo.cp.is_some());
    // H at the nominal mixed T for one side's streams and heat capacities.
    let enthalpy = |m: &Network, ss: &[Feed]| -> f64 {
        let mut h = 0.0;
        for s in ss {
            for &j in &present {
                if s.amounts[j] != 0.0 {
                    let cp = m.species[j].thermo.cp.as_ref().expect("checked");
                    h += s.amounts[j] * cp.enthalpy_change(s.temperature, t);
                }
            }
        }
        h
    };
    let capacity: f64 = streams
        .iter()
        .map(|s| {
            present
                .iter()
                .map(|&j| {
                    net.species[j]
                        .thermo
                        .cp
                        .as_ref()
                        .map_or(0.0, |cp| s.amounts[j] * cp.cp(t))
                })
                .sum::<f64>()
        })
        .sum();
    let volume: f64 = streams.iter().map(|s| s.volumetric).sum();
    sides
        .iter()
        .zip(steps)
        .enumerate()
        .map(|(k, ([plus, minus], &step))| {
            let (sp, sm) = (inputs(k, plus)?, inputs(k, minus)?);
            let sum = |ss: &[Feed], f: &dyn Fn(&Feed) -> f64| ss.iter().map(f).sum::<f64>();
            let amounts: Vec<f64> = (0..n)
                .map(|j| (sum(&sp, &|s| s.amounts[j]) - sum(&sm, &|s| s.amounts[j])) / step)
                .collect();
            let temperature = if !same && volume_weighted {
                let g = |ss: &[Feed]| sum(ss, &|s| s.volumetric * (t - s.temperature));
                -(g(&sp) - g(&sm)) / step / volume
            } else if with_cp(net) && with_cp(plus.net) && with_cp(minus.net) && capacity > 0.0 {
                -(enthalpy(plus.net, &sp) - enthalpy(minus.net, &sm)) / step / capacity
            } else if same && volume_weighted {
                let g = |ss: &[Feed]| sum(ss, &|s| s.volumetric * (t - s.temperature));
                -(g(&sp) - g(&sm)) / step / volume
            } else {
                // At one temperature without heat capacities: it must stay one temperature.
                let one = |ss: &[Feed]| {
                    let hi = ss.iter().map(|s| s.temperature).fold(f64::MIN, f64::max);
                    let lo = ss.iter().map(|s| s.temperature).fold(f64::MAX, f64::min);
                    (hi - lo <= 1e-12 * hi).then_some(hi)
                };
                match (one(&sp), one(&sm)) {
                    (Some(a), Some(b)) => (a - b) / step,
                    _ => {
                        return Err(SolveError::Setup(format!(
                            "streams at {t:.2} K meet, and parameter {} moves their temperatures apart: the mixture's temperature then needs the heat capacities `cp` of the species",
                            k + 1
                        )));
                    }
                }
            };
            let pressure = (sp[0].pressure - sm[0].pressure) / step;
            let volumetric = match net.phase {
                Phase::Liquid => {
                    (sum(&sp, &|s| s.volumetric) - sum(&sm, &|s| s.volumetric)) / step
                }
                Phase::Gas => d_gas_volumetric(
                    (mixture.total(), t, mixture.pressure),
                    (amounts.iter().sum(), temperature, pressure),
                ),
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

/// Forward sensitivities of a train (or a tube with side feeds): the nominal solve, identical
/// to [`crate::solve::simulate`], and per parameter the sensitivities at every point of the
/// train's profile and of its outlet.
pub fn sensitivities(
    net: &Network,
    perturbed: &[Perturbed],
    opts: &SolveOptions,
) -> Result<Sensitivities, SolveError> {
    if let crate::solve::Points::At(_) = opts.points {
        return Err(SolveError::Setup(
            "profile points at given positions are not available for a train (or a tube with side feeds or a recycle) yet: ask for evenly spaced points or the outlet".into(),
        ));
    }
    let units = units_of(net);
    let sides: Vec<[Side; 2]> = perturbed
        .iter()
        .map(|p| {
            let h = 0.5 * p.step;
            [(&p.plus, h), (&p.minus, -h)].map(|(n, by)| Side {
                scale: p.scale,
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
    let s_inlet = match &u.join {
        Some(join) => mixed(
            net,
            u,
            &[arriving, join],
            &inlet,
            sides,
            steps,
            |k, side| {
                let j = side.units[i]
                    .join
                    .clone()
                    .expect("the same joins on both sides");
                Ok(vec![moved(arriving, &s_arriving[k], side.by, id)?, j])
            },
        )?,
        None => s_arriving.to_vec(),
    };
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
            s_stream = if u.heat.balance().is_none() {
                // Combined at the held temperature: species and flows add, no balance to solve.
                differentiate(sides, steps, |k, side| {
                    stretch_inlet(
                        side.net,
                        &side.units[i],
                        j,
                        &moved(&out, &s_out[k], side.by, id)?,
                        through.temperature + side.by * s_through[k].temperature,
                    )
                })?
            } else {
                let side_feed = &u.contacting.side_feeds[j - 1].stream;
                mixed(
                    net,
                    u,
                    &[&out, side_feed],
                    &stream,
                    sides,
                    steps,
                    |k, side| {
                        Ok(vec![
                            moved(&out, &s_out[k], side.by, id)?,
                            side.units[i].contacting.side_feeds[j - 1].stream.clone(),
                        ])
                    },
                )?
            };
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
                    scale: plus.scale,
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
        s_product = stretch_outlet(net, &piece, &sens, &directions, &s_stream, opts)?;
        product = Some(out);
        pieces.push(piece);
        stretches.push((sens, s_stream.clone()));
    }
    let product = product.expect("a vessel has a stretch");
    // 4. The bypass rejoins.
    let outlet = rejoined(net, u, product.clone(), &around)?;
    let s_outlet = if u.bypass > 0.0 {
        mixed(
            net,
            u,
            &[&product, &around],
            &outlet,
            sides,
            steps,
            |k, side| {
                Ok(vec![
                    moved(&product, &s_product[k], side.by, id)?,
                    moved(&around, &s_around[k], side.by, id)?,
                ])
            },
        )?
    } else {
        s_product
    };
    let run = unit_run(net, u, offset, inlet, pieces, outlet, None);
    Ok((run, stretches, s_outlet))
}

/// ∂x_end/∂θ: how fast the direction moves the stretch's end.
fn end_moves(d: &Perturbed) -> f64 {
    (d.plus.reactor.size() - d.minus.reactor.size()) / d.step
}

/// dT/dx at a tube stretch's outlet, from its energy balance at the outlet state.
fn outlet_temperature_slope(piece: &Piece, opts: &SolveOptions) -> Result<f64, SolveError> {
    let net = &piece.network;
    let balance = crate::solve::floored(net, &piece.balance, opts);
    let last = piece.sim.x.len() - 1;
    let y = piece.sim.model_state(last, net.feed.pressure);
    let ti = balance.temperature_index();
    match ti {
        Some(ti) if y.len() == balance.dim() => {
            let mut f = vec![0.0; balance.dim()];
            balance.rhs_at(piece.sim.size, &y, &mut f);
            Ok(f[ti])
        }
        _ => Err(SolveError::Setup(
            "the size of a tube with an energy balance and walls that carry states of their own (a membrane's permeate) moves its outlet temperature in a way not carried on yet: sensitivities to it are not supported".into(),
        )),
    }
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
    opts: &SolveOptions,
) -> Result<Vec<StreamSensitivity>, SolveError> {
    let out = outlet_stream(net, piece);
    let f_total: f64 = out.amounts.iter().sum();
    // A size parameter moves a tube's end: its outlet temperature moves by T'(x_end)·∂x_end/∂θ
    // too (the species' share of it is in `d_outlet` already).
    let slope = match (&piece.sim.temperature, piece.sim.steady.is_some()) {
        (Some(_), false) if directions.iter().any(|d| end_moves(d) != 0.0) => {
            Some(outlet_temperature_slope(piece, opts)?)
        }
        _ => None,
    };
    (0..directions.len())
        .map(|k| {
            let amounts = sens.d_outlet[k].clone();
            let temperature = match &sens.d_temperature {
                Some(dt) => {
                    *dt[k].last().expect("a profile has its outlet")
                        + slope
                            .as_ref()
                            .map_or(0.0, |f| f * end_moves(&directions[k]))
                }
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
                // Unknown with the pressure's (NaN carries on).
                Phase::Gas => d_gas_volumetric(
                    (f_total, out.temperature, out.pressure),
                    (amounts.iter().sum(), temperature, pressure),
                ),
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

/// The change of an ideal-gas stream's volumetric flow v = R T F_T/P with its total flow,
/// temperature and pressure: dv = R (T dF_T + F_T dT)/P − R T F_T dP/P², at `(F_T, T, P)`
/// for the changes `(dF_T, dT, dP)`.
fn d_gas_volumetric((f, t, p): (f64, f64, f64), (df, dt, dp): (f64, f64, f64)) -> f64 {
    GAS_CONSTANT * (t * df + f * dt) / p - f * GAS_CONSTANT * t * dp / (p * p)
}
