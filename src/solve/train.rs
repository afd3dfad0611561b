//! Vessels in series and the streams between them, solved unit by unit (sequential-modular):
//! each unit maps an inlet stream to an outlet stream.
//!
//! For one unit of a train (or a single vessel with side feeds or a recycle):
//!
//! 1. a `join` stream mixes with the arriving stream ([`crate::reactor::mixing`]);
//! 2. a `bypass` fraction b goes around the unit;
//! 3. the vessel runs on the rest: a tube with side feeds runs stretch by stretch, the stream
//!    mixing with each side feed where it enters (an isothermal tube holds its inlet
//!    temperature, the side feed's heat removed or added at the wall; a co-current coolant
//!    carries on from stretch to stretch);
//! 4. with a recycle ratio R the tube's inlet is the fresh stream plus R/(R+1) of its own outlet,
//!    a fixed point in the recycle stream found by substitution accelerated by Anderson mixing
//!    (Anderson, J. ACM 12, 1965; Walker & Ni, SIAM J. Numer. Anal. 49, 2011), and 1/(R+1) of
//!    the outlet leaves;
//! 5. the bypass rejoins the outlet.
//!
//! The train's profile concatenates the units along one coordinate (V, or W for packed beds):
//! a tube's points, a tank as its outlet point, and a point wherever a stream joins, splits or
//! rejoins, each labelled with its unit.

use super::{Exchanged, Simulation, SolveError, SolveOptions, SolveStats, ode::Extreme};
use crate::model::{Contacting, Coolant, Feed, Heat, Network, Phase, Reactor, Unit};
use crate::reactor::Balance;
use crate::reactor::mixing::{combine, mix, scaled};
use crate::units::GAS_CONSTANT;

/// Most substitutions a recycle loop may take.
pub const RECYCLE_MAX_ITERATIONS: usize = 200;
/// Differences Anderson mixing keeps.
const ANDERSON_DEPTH: usize = 5;

/// One stretch of a vessel (the whole vessel unless side feeds split a tube), solved as a
/// single vessel.
#[derive(Debug, Clone)]
pub struct Piece {
    /// The stretch as a single-vessel study: its reactor and size, heat, walls, and its inlet
    /// stream as the feed.
    pub network: Network,
    pub balance: Balance,
    pub sim: Simulation,
    /// Where the stretch starts on the train's coordinate.
    pub offset: f64,
}

/// The recycle loop of a unit, as converged.
#[derive(Debug, Clone)]
pub struct RecycleRun {
    pub ratio: f64,
    /// Passes through the tube until the recycle stream stopped changing.
    pub iterations: usize,
    /// The last change in the recycle stream, relative to the fresh stream's total flow.
    pub change: f64,
    /// The recycle stream returned to the inlet.
    pub stream: Feed,
}

/// One unit as solved.
#[derive(Debug, Clone)]
pub struct UnitRun {
    pub id: String,
    pub kind: &'static str,
    /// The unit's size (V or W, SI).
    pub size: f64,
    /// Where it starts on the train's coordinate.
    pub offset: f64,
    /// The stream entering (after its join, before the bypass split).
    pub inlet: Feed,
    /// The stretches of the vessel, inlet to outlet.
    pub pieces: Vec<Piece>,
    /// The stream leaving (after the recycle split and the bypass rejoining).
    pub outlet: Feed,
    /// Everything the unit was given, per species: its inlet, side feeds and what entered by
    /// its walls.
    pub fed: Vec<f64>,
    /// Everything it gave: its outlet and what left by its walls.
    pub left: Vec<f64>,
    pub bypass: f64,
    pub recycle: Option<RecycleRun>,
}

/// A train (or a vessel with side feeds or a recycle) as solved.
#[derive(Debug, Clone)]
pub struct TrainRun {
    pub units: Vec<UnitRun>,
    /// The concatenated profile; its last state is the train's outlet, and its `exchanged`
    /// counts every join and side feed (and whatever entered or left by walls) so that the
    /// metrics judge the train on everything fed.
    pub profile: Simulation,
    /// The unit each profile point belongs to (`R1`, or `R1 outlet` after a split or a bypass).
    pub labels: Vec<String>,
    /// Where each profile point comes from: (unit, stretch, point of the stretch's profile);
    /// `None` for the feed and for a unit's outlet after its split or bypass.
    pub places: Vec<Option<(usize, usize, usize)>>,
    pub outlet: Feed,
}

/// Whether the study needs the train solve: vessels in series, or a vessel whose stream is
/// split or joined (side feeds, recycle).
pub fn is_flowsheet(net: &Network) -> bool {
    net.train.is_some() || !net.contacting.side_feeds.is_empty() || net.contacting.recycle.is_some()
}

/// The units to run: the train's, or the single vessel as one unit.
pub fn units_of(net: &Network) -> Vec<Unit> {
    match &net.train {
        Some(t) => t.units.clone(),
        None => vec![Unit {
            id: net.reactor.kind().to_string(),
            reactor: net.reactor.clone(),
            heat: net.heat.clone(),
            contacting: net.contacting.clone(),
            join: None,
            bypass: 0.0,
        }],
    }
}

/// Solve the train of `net` unit by unit.
pub fn solve(net: &Network, opts: &SolveOptions) -> Result<TrainRun, SolveError> {
    if let super::Points::At(_) = opts.points {
        // Each stretch runs on its own coordinate; positions on the train's would land in the
        // wrong vessel.
        return Err(SolveError::Setup(
            "profile points at given positions are not available for a train (or a tube with side feeds or a recycle) yet: ask for evenly spaced points or the outlet".into(),
        ));
    }
    let units = units_of(net);
    let mut stream = net.feed.clone();
    let mut offset = 0.0;
    let mut runs = Vec::with_capacity(units.len());
    for u in &units {
        let run = run_unit(net, u, &stream, offset, opts).map_err(|e| in_unit(u, e))?;
        stream = run.outlet.clone();
        offset += run.size;
        runs.push(run);
    }
    let (profile, labels, places) = concatenate(net, &runs);
    Ok(TrainRun {
        units: runs,
        profile,
        labels,
        places,
        outlet: stream,
    })
}

/// An error of unit `u`, naming it.
pub fn in_unit(u: &Unit, e: SolveError) -> SolveError {
    match e {
        SolveError::Setup(m) => SolveError::Setup(format!("unit `{}`: {m}", u.id)),
        e => SolveError::Unit {
            unit: u.id.clone(),
            source: Box::new(e),
        },
    }
}

fn run_unit(
    net: &Network,
    u: &Unit,
    arriving: &Feed,
    offset: f64,
    opts: &SolveOptions,
) -> Result<UnitRun, SolveError> {
    check_unit(u)?;
    let inlet = unit_inlet(net, u, arriving)?;
    let (through, around) = bypass_split(&inlet, u.bypass);
    let (pieces, product, recycle) = match u.contacting.recycle {
        Some(ratio) if ratio > 0.0 => {
            let (pieces, product, run) = recycle_loop(
                net,
                u,
                &through,
                ratio,
                offset,
                opts,
                RECYCLE_MAX_ITERATIONS,
            )?;
            (pieces, product, Some(run))
        }
        _ => {
            let pieces = run_vessel(net, u, &through, offset, opts)?;
            let out = outlet_stream(net, pieces.last().expect("a vessel has a stretch"));
            (pieces, out, None)
        }
    };
    let outlet = rejoined(net, u, product, &around)?;
    Ok(unit_run(net, u, offset, inlet, pieces, outlet, recycle))
}

/// What a unit cannot be solved with: side feeds or a recycle on a bed with pressure drop or
/// with a counter-current coolant.
pub fn check_unit(u: &Unit) -> Result<(), SolveError> {
    let setup = SolveError::Setup;
    let tube = matches!(u.reactor, Reactor::Pfr { .. } | Reactor::Pbr { .. });
    let split = !u.contacting.side_feeds.is_empty() || u.contacting.recycle.is_some();
    if split {
        if let Reactor::Pbr {
            pressure_drop: Some(_),
            ..
        } = u.reactor
        {
            return Err(setup(
                "side feeds and a recycle are modelled on a bed without pressure drop: the bed constant is defined for the flow at the bed's inlet, which they change"
                    .into(),
            ));
        }
        if let Some(Coolant::Stream {
            counter_current: true,
            ..
        }) = u
            .heat
            .balance()
            .and_then(|e| e.exchange.as_ref())
            .map(|x| &x.coolant)
        {
            return Err(setup(
                "a counter-current coolant is solved over the whole tube at once; with side feeds or a recycle use a co-current stream or a coolant at constant T"
                    .into(),
            ));
        }
    }
    debug_assert!(
        tube || !split,
        "the loader allows side feeds and recycle on tubes only"
    );
    Ok(())
}

/// A unit as solved, from its streams and stretches: with what it was fed (its inlet, side
/// feeds, what entered by its walls) and what it gave (its outlet, what left by its walls).
pub fn unit_run(
    net: &Network,
    u: &Unit,
    offset: f64,
    inlet: Feed,
    pieces: Vec<Piece>,
    outlet: Feed,
    recycle: Option<RecycleRun>,
) -> UnitRun {
    let n = net.species.len();
    let mut fed = inlet.amounts.clone();
    let mut left = outlet.amounts.clone();
    for s in &u.contacting.side_feeds {
        add(&mut fed, &s.stream.amounts);
    }
    for p in &pieces {
        if let Some(ex) = &p.sim.exchanged {
            add(&mut fed, ex.entered.last().map_or(&[][..], |v| &v[..n]));
            add(&mut left, ex.left.last().map_or(&[][..], |v| &v[..n]));
        }
    }
    UnitRun {
        id: u.id.clone(),
        kind: u.reactor.kind(),
        size: u.reactor.size(),
        offset,
        inlet,
        pieces,
        outlet,
        fed,
        left,
        bypass: u.bypass,
        recycle,
    }
}

/// The stream entering unit `u` of `net`: the arriving stream mixed with the unit's `join`
/// stream (adiabatic mixing, [`mix`]), or the arriving stream as it is.
pub fn unit_inlet(net: &Network, u: &Unit, arriving: &Feed) -> Result<Feed, SolveError> {
    match &u.join {
        Some(j) => mix(net, &u.heat, &[arriving, j]).map_err(SolveError::Setup),
        None => Ok(arriving.clone()),
    }
}

/// A unit's inlet split by its bypass fraction b: (1 − b) through the vessel, b around it.
pub fn bypass_split(inlet: &Feed, bypass: f64) -> (Feed, Feed) {
    (scaled(inlet, 1.0 - bypass), scaled(inlet, bypass))
}

/// The unit's outlet: the vessel's product with the bypassed stream mixed back in (none: the
/// product as it is).
pub fn rejoined(net: &Network, u: &Unit, product: Feed, around: &Feed) -> Result<Feed, SolveError> {
    if u.bypass > 0.0 {
        mix(net, &u.heat, &[&product, around]).map_err(SolveError::Setup)
    } else {
        Ok(product)
    }
}

fn add(a: &mut [f64], b: &[f64]) {
    a.iter_mut().zip(b).for_each(|(a, b)| *a += b);
}

/// The stream leaving a stretch: its outlet flows, temperature and pressure, and the
/// volumetric flow that follows (a liquid's inlet flow grown by what entered along it; an
/// ideal gas's from F_T, T and P).
pub fn outlet_stream(net: &Network, p: &Piece) -> Feed {
    let sim = &p.sim;
    let k = sim.x.len() - 1;
    let amounts = sim.outlet().to_vec();
    let temperature = sim.temperature_at(k, p.network.feed.temperature);
    let pressure = sim
        .pressure
        .as_ref()
        .map_or(p.network.feed.pressure, |pr| pr[k]);
    let volumetric = match net.phase {
        Phase::Liquid => liquid_outlet_volumetric(&p.balance, sim.size),
        Phase::Gas => amounts.iter().sum::<f64>() * GAS_CONSTANT * temperature / pressure,
    };
    Feed {
        temperature,
        pressure,
        amounts,
        volumetric,
    }
}

/// A liquid stretch's outlet volumetric flow: its inlet flow grown by what entered along it
/// (distributed feeds), v(x_end).
pub fn liquid_outlet_volumetric(balance: &Balance, size: f64) -> f64 {
    balance.fixed_volume(size)
}

/// Where a unit's stretches start and end on its own coordinate: 0, each side feed's position,
/// the unit's size.
pub fn stretch_bounds(u: &Unit) -> Vec<f64> {
    let mut bounds = vec![0.0];
    bounds.extend(u.contacting.side_feeds.iter().map(|s| s.at));
    bounds.push(u.reactor.size());
    bounds
}

/// The stream entering stretch `k` ≥ 1 of unit `u`: the stretch before's outlet `out` mixed
/// with the side feed at its start. An isothermal tube holds the temperature `held` of the
/// unit's stream (the side feed brought to it at the wall); a tube with an energy balance mixes
/// adiabatically.
pub fn stretch_inlet(
    net: &Network,
    u: &Unit,
    k: usize,
    out: &Feed,
    held: f64,
) -> Result<Feed, SolveError> {
    let side = &u.contacting.side_feeds[k - 1].stream;
    if u.heat.balance().is_none() {
        // At the stream's own pressure, the first's.
        Ok(combine(net, &[out, side], held))
    } else {
        mix(net, &u.heat, &[out, side]).map_err(SolveError::Setup)
    }
}

/// Stretch `k` of unit `u` of `net` as a single-vessel study: the unit's reactor cut to the
/// stretch, its heat (a co-current coolant entering at `coolant` when given: carried on from
/// the stretch before), its walls moved onto the stretch's coordinate, and `inlet` as the feed.
/// The train solve and the train's sensitivities build every vessel they integrate here, at
/// the nominal parameters and at the moved ones alike.
pub fn stretch_network(
    net: &Network,
    u: &Unit,
    k: usize,
    inlet: &Feed,
    coolant: Option<f64>,
) -> Network {
    let bounds = stretch_bounds(u);
    let (a, b) = (bounds[k], bounds[k + 1]);
    let mut n = net.clone();
    n.train = None;
    n.feed = inlet.clone();
    n.reactor = u.reactor.clone();
    n.reactor.set_size(b - a);
    n.heat = u.heat.clone();
    if let (Some(c), Some(t)) = (heat_stream_mut(&mut n.heat), coolant) {
        *c = t;
    }
    n.contacting = shifted_walls(&u.contacting, a);
    n
}

/// The co-current coolant leaving a stretch, which enters the next (`None` without a coolant
/// stream).
pub fn coolant_outlet(sim: &Simulation) -> Option<f64> {
    sim.coolant
        .as_ref()
        .map(|tc| *tc.last().expect("a profile has its outlet"))
}

/// One vessel on `inlet`, stretch by stretch between its side feeds.
fn run_vessel(
    net: &Network,
    u: &Unit,
    inlet: &Feed,
    offset: f64,
    opts: &SolveOptions,
) -> Result<Vec<Piece>, SolveError> {
    let bounds = stretch_bounds(u);
    let mut stream = inlet.clone();
    let mut coolant = None;
    let mut pieces: Vec<Piece> = Vec::with_capacity(bounds.len() - 1);
    for (k, &start) in bounds[..bounds.len() - 1].iter().enumerate() {
        if k > 0 {
            let prev = pieces.last().expect("a stretch before");
            stream = stretch_inlet(net, u, k, &outlet_stream(net, prev), inlet.temperature)?;
            coolant = coolant_outlet(&prev.sim);
        }
        let n = stretch_network(net, u, k, &stream, coolant);
        let balance = Balance::new(&n).map_err(SolveError::Setup)?;
        let sim = super::simulate_with(&n, &balance, opts)?;
        pieces.push(Piece {
            network: n,
            balance,
            sim,
            offset: offset + start,
        });
    }
    Ok(pieces)
}

/// The coolant stream's inlet temperature, to carry a co-current coolant across a side feed.
fn heat_stream_mut(heat: &mut Heat) -> Option<&mut f64> {
    match heat {
        Heat::Balance(e) => match e.exchange.as_mut().map(|x| &mut x.coolant) {
            Some(Coolant::Stream { inlet, .. }) => Some(inlet),
            _ => None,
        },
        Heat::Isothermal => None,
    }
}

/// The walls of a stretch starting at `a`: distributed feeds moved to the stretch's own
/// coordinate (each keeps its per-length intensity), the membrane as it is; side feeds and the
/// recycle are the train's business.
fn shifted_walls(c: &Contacting, a: f64) -> Contacting {
    let mut out = c.clone();
    out.side_feeds.clear();
    out.recycle = None;
    if a != 0.0 {
        for d in &mut out.distributed {
            for p in &mut d.shape.points {
                p.0 -= a;
            }
        }
    }
    out
}

/// The recycle loop around a tube: find r with r = R/(R+1) · tube(mix(fresh, r)), in at most
/// `max_passes` passes through the tube.
#[allow(clippy::too_many_arguments)]
fn recycle_loop(
    net: &Network,
    u: &Unit,
    fresh: &Feed,
    ratio: f64,
    offset: f64,
    opts: &SolveOptions,
    max_passes: usize,
) -> Result<(Vec<Piece>, Feed, RecycleRun), SolveError> {
    let n = net.species.len();
    let isothermal = u.heat.balance().is_none();
    let scale = fresh.amounts.iter().sum::<f64>().max(f64::MIN_POSITIVE);
    let t_scale = fresh.temperature;
    // The loop amplifies the tube's integration error: near a large recycle ratio the map
    // r -> g(r) is close to the identity, and an error ε·(R + 1)F in the tube's flows moves
    // the fixed point by about as much. Each pass therefore integrates with rtol/(R + 1), so
    // the recycle is resolved to the study's rtol on the fresh flow.
    let (rtol, _) = super::tolerances(net, opts);
    let tol = 10.0 * rtol;
    let inner = SolveOptions {
        rtol: Some((rtol / (ratio + 1.0)).max(crate::model::solver_settings::MIN_RTOL)),
        ..opts.clone()
    };
    let opts = &inner;
    let share = ratio / (ratio + 1.0);
    // The state of the loop: the recycled flows, then (a liquid) its volumetric flow and (with
    // an energy balance) its temperature, both scaled to the flows' size.
    let liquid = net.phase == Phase::Liquid;
    // One pass with no recycle: the first guess, r = R × that outlet, and a liquid's volume
    // gained along the tube (a distributed feed), which fixes the recycle's volumetric flow
    // exactly, v_r = R/(R+1) (v_f + v_r + G), so v_r = R (v_f + G).
    let plain = run_vessel(net, u, fresh, offset, opts)?;
    let plain_out = outlet_stream(net, plain.last().expect("a vessel has a stretch"));
    let v_recycle = ratio * plain_out.volumetric;
    // The state of the loop: the recycled flows and (with an energy balance) the recycle's T
    // scaled to the flows' size.
    let t_index = n;
    let dim = n + usize::from(!isothermal);
    let to_stream = |z: &[f64]| -> Feed {
        let amounts: Vec<f64> = z[..n].iter().map(|v| v.max(0.0)).collect();
        let temperature = if isothermal {
            fresh.temperature
        } else {
            (z[t_index] / scale * t_scale).max(1.0)
        };
        let volumetric = if liquid {
            v_recycle
        } else {
            amounts.iter().sum::<f64>() * GAS_CONSTANT * temperature / fresh.pressure
        };
        Feed {
            temperature,
            pressure: fresh.pressure,
            amounts,
            volumetric,
        }
    };
    let run = |z: &[f64]| -> Result<(Vec<Piece>, Feed, Vec<f64>), SolveError> {
        let r = to_stream(z);
        let tube_in = if isothermal {
            combine(net, &[fresh, &r], fresh.temperature)
        } else {
            mix(net, &u.heat, &[fresh, &r]).map_err(SolveError::Setup)?
        };
        let pieces = run_vessel(net, u, &tube_in, offset, opts)?;
        let out = outlet_stream(net, pieces.last().expect("a vessel has a stretch"));
        let mut g: Vec<f64> = out.amounts.iter().map(|f| f * share).collect();
        if !isothermal {
            g.push(out.temperature / t_scale * scale);
        }
        Ok((pieces, out, g))
    };
    let mut z: Vec<f64> = plain_out.amounts.iter().map(|f| ratio * f).collect();
    if !isothermal {
        z.push(plain_out.temperature / t_scale * scale);
    }
    debug_assert_eq!(z.len(), dim);
    let mut history_z: Vec<Vec<f64>> = Vec::new();
    let mut history_f: Vec<Vec<f64>> = Vec::new();
    let mut change = f64::INFINITY;
    // Safeguard: an Anderson step is kept only when it lowers the residual and stays
    // physical; otherwise the loop falls back to plain substitution from the point before
    // (which moves towards a stable operating point even where the residual is not monotone,
    // as for an autocatalytic step) for a few passes, with a fresh history.
    let mut previous: Option<(f64, Vec<f64>)> = None; // (change, g) at the point before
    let mut accelerated = false;
    let mut plain_passes = 0usize;
    for it in 1..=max_passes {
        let (pieces, out, g) = run(&z)?;
        let f: Vec<f64> = g.iter().zip(&z).map(|(g, z)| g - z).collect();
        change = f.iter().fold(0.0f64, |m, v| m.max(v.abs())) / scale;
        if change <= tol {
            let product = scaled(&out, 1.0 / (ratio + 1.0));
            let stream = scaled(&out, share);
            return Ok((
                pieces,
                product,
                RecycleRun {
                    ratio,
                    iterations: it,
                    change,
                    stream,
                },
            ));
        }
        if accelerated
            && let Some((c0, g0)) = &previous
            && change > *c0
        {
            // The accelerated step made it worse: substitute from the point before instead.
            z = g0.clone();
            history_z.clear();
            history_f.clear();
            plain_passes = 3;
            accelerated = false;
            continue;
        }
        history_z.push(z.clone());
        history_f.push(f);
        if history_z.len() > ANDERSON_DEPTH + 1 {
            history_z.remove(0);
            history_f.remove(0);
        }
        previous = Some((change, g.clone()));
        let proposal = (plain_passes == 0 && history_z.len() > 1)
            .then(|| anderson(&history_z, &history_f))
            .filter(|p| p[..n].iter().all(|v| *v >= 0.0) && p.iter().all(|v| v.is_finite()));
        accelerated = proposal.is_some();
        z = proposal.unwrap_or(g);
        plain_passes = plain_passes.saturating_sub(1);
    }
    Err(SolveError::Recycle(format!(
        "the recycle around the tube (R = {ratio}) did not converge in {max_passes} passes: the recycle stream still changes by {change:.2e} of the fresh flow per pass (tolerance {tol:.1e}); a recycle stream that will not settle can mean several operating points (as in a CSTR) or none reachable from no recycle"
    )))
}

/// One Anderson step: with the residuals f_k = g(z_k) − z_k, choose γ minimising
/// ‖f_k − ΔF γ‖ (least squares by SVD) and return g(z_k) − ΔG γ, ΔG = ΔZ + ΔF (Anderson 1965;
/// Walker & Ni 2011); the plain substitution g(z_k) when the problem is degenerate.
fn anderson(zs: &[Vec<f64>], fs: &[Vec<f64>]) -> Vec<f64> {
    let m = zs.len() - 1;
    let (z, last) = (&zs[m], &fs[m]);
    let g: Vec<f64> = z.iter().zip(last).map(|(z, f)| z + f).collect();
    if m == 0 {
        return g;
    }
    let dim = z.len();
    let df = nalgebra::DMatrix::from_fn(dim, m, |i, k| fs[k + 1][i] - fs[k][i]);
    let dz = nalgebra::DMatrix::from_fn(dim, m, |i, k| zs[k + 1][i] - zs[k][i]);
    let rhs = nalgebra::DVector::from_column_slice(last);
    let Ok(gamma) = df.clone().svd(true, true).solve(&rhs, 1e-12) else {
        return g;
    };
    if gamma.iter().any(|v| !v.is_finite()) {
        return g;
    }
    let step = (&dz + &df) * gamma;
    g.iter().zip(step.iter()).map(|(g, s)| g - s).collect()
}

/// Where each point of a train's profile comes from: (unit, stretch, point of the stretch's
/// profile), `None` for the feed and for a unit's outlet after its split or bypass.
pub type Places = Vec<Option<(usize, usize, usize)>>;

/// The train's profile: the feed at x = 0, then every stretch's points on the cumulative
/// coordinate (a tank contributes its outlet), and a point after each split or bypass. Joins
/// and side feeds count as entered from where they join.
pub fn concatenate(net: &Network, runs: &[UnitRun]) -> (Simulation, Vec<String>, Places) {
    let n = net.species.len();
    let first = &runs[0].pieces[0];
    let pieces = || runs.iter().flat_map(|r| &r.pieces);
    let any_pressure = pieces().any(|p| p.sim.pressure.is_some());
    let any_energy = pieces().any(|p| p.sim.temperature.is_some());
    let mut x = Vec::new();
    let mut states = Vec::new();
    let mut pressure = Vec::new();
    let mut temperature = Vec::new();
    let mut labels = Vec::new();
    let mut places = Vec::new();
    let mut entered_now = vec![0.0; n];
    let mut left_now = vec![0.0; n];
    let mut entered = Vec::new();
    let mut left = Vec::new();
    // A train that starts with a tank starts its profile with the feed (a tube's first point
    // is its inlet already).
    if first.sim.x.first().is_none_or(|&x0| x0 > 0.0) {
        x.push(0.0);
        states.push(net.feed.amounts.clone());
        pressure.push(net.feed.pressure);
        temperature.push(net.feed.temperature);
        labels.push("feed".to_string());
        places.push(None);
        entered.push(entered_now.clone());
        left.push(left_now.clone());
    }
    let recycle = runs.iter().any(|r| r.recycle.is_some());
    let mut stats = SolveStats {
        method: match (runs.len() > 1, recycle) {
            (true, false) => {
                "units in series, each solved as a single vessel (a tube stretch by stretch between side feeds); streams mixed by their enthalpy balance"
            }
            (true, true) => {
                "units in series, each solved as a single vessel (a tube stretch by stretch between side feeds); streams mixed by their enthalpy balance; a recycle by Anderson-accelerated substitution"
            }
            (false, false) => {
                "the tube stretch by stretch between its side feeds; streams mixed by their enthalpy balance"
            }
            (false, true) => {
                "the tube with its recycle, by Anderson-accelerated substitution on the recycle stream; streams mixed by their enthalpy balance"
            }
        },
        rtol: first.sim.stats.rtol,
        atol: first.sim.stats.atol,
        ..Default::default()
    };
    let mut range: Option<Extreme> = None;
    let mut warnings = Vec::new();
    for (u, run) in runs.iter().enumerate() {
        if u > 0 {
            // A join: what the unit's inlet has beyond the unit before's outlet.
            let joined: Vec<f64> = run
                .inlet
                .amounts
                .iter()
                .zip(&runs[u - 1].outlet.amounts)
                .map(|(i, o)| i - o)
                .collect();
            add(&mut entered_now, &joined);
        }
        for (k, p) in run.pieces.iter().enumerate() {
            let s = &p.sim;
            if k > 0 {
                add(&mut entered_now, &run_side(run, k - 1));
            }
            for (i, xi) in s.x.iter().enumerate() {
                x.push(p.offset + xi);
                states.push(s.states[i].clone());
                pressure.push(
                    s.pressure
                        .as_ref()
                        .map_or(p.network.feed.pressure, |v| v[i]),
                );
                temperature.push(s.temperature_at(i, p.network.feed.temperature));
                labels.push(run.id.clone());
                places.push(Some((u, k, i)));
                let (mut e, mut l) = (entered_now.clone(), left_now.clone());
                if let Some(ex) = &s.exchanged {
                    add(&mut e, &ex.entered[i]);
                    add(&mut l, &ex.left[i]);
                }
                entered.push(e);
                left.push(l);
            }
            if let Some(ex) = &s.exchanged {
                add(
                    &mut entered_now,
                    ex.entered.last().map_or(&[][..], |v| &v[..]),
                );
                add(&mut left_now, ex.left.last().map_or(&[][..], |v| &v[..]));
            }
            stats.steps += s.stats.steps;
            stats.rhs_evals += s.stats.rhs_evals;
            stats.jac_evals += s.stats.jac_evals;
            stats.lu_factorizations += s.stats.lu_factorizations;
            stats.linear_solves += s.stats.linear_solves;
            stats.krylov_iterations += s.stats.krylov_iterations;
            stats.krylov_fallbacks += s.stats.krylov_fallbacks;
            stats.newton_iterations += s.stats.newton_iterations;
            stats.continuation_stages += s.stats.continuation_stages;
            for (all, one) in [
                (&mut stats.residual, s.stats.residual),
                (&mut stats.newton_step, s.stats.newton_step),
            ] {
                if let Some(v) = one {
                    *all = Some(all.map_or(v, |a: f64| a.max(v)));
                }
            }
            if let Some(r) = &s.temperature_range {
                let r = r.shifted(p.offset);
                range = Some(range.map_or(r, |mut a| {
                    a.include(&r);
                    a
                }));
            }
            warnings.extend(s.warnings.iter().map(|w| format!("unit `{}`: {w}", run.id)));
        }
        let last = run.pieces.last().expect("a vessel has a stretch");
        let tube_outlet = last.sim.outlet();
        if run.recycle.is_some() || run.bypass > 0.0 || tube_outlet != &run.outlet.amounts[..] {
            x.push(run.offset + run.size);
            states.push(run.outlet.amounts.clone());
            pressure.push(run.outlet.pressure);
            temperature.push(run.outlet.temperature);
            labels.push(format!("{} outlet", run.id));
            places.push(None);
            entered.push(entered_now.clone());
            left.push(left_now.clone());
        }
    }
    let profile = Simulation {
        x_name: first.sim.x_name,
        x_unit: first.sim.x_unit,
        size: runs.iter().map(|r| r.size).sum(),
        x,
        states,
        pressure: any_pressure.then_some(pressure),
        temperature: any_energy.then_some(temperature),
        coolant: None,
        temperature_range: range,
        cooling_failure: None,
        warnings,
        stats,
        steady: None,
        counter_current: None,
        exchanged: Some(Exchanged { entered, left }),
    };
    (profile, labels, places)
}

/// The side feed entering before stretch `k + 1` of a unit.
fn run_side(run: &UnitRun, k: usize) -> Vec<f64> {
    // The side feed is the difference between the stretch's inlet and the stretch before's
    // outlet (an isothermal tube and a heated one alike: species add).
    let before = run.pieces[k].sim.outlet();
    run.pieces[k + 1]
        .network
        .feed
        .amounts
        .iter()
        .zip(before)
        .map(|(i, o)| i - o)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::load_str;

    /// A loop that has not settled in its passes is an error naming the recycle, not a result.
    #[test]
    fn a_recycle_that_does_not_settle_is_an_error() {
        let net = load_str(
            "name: t\nphase: liquid\nspecies: {A: null, B: null}\nreactions: [{id: r1, stoich: A -> B, rate: {k: 0.01 1/s}}]\nfeed: {T: 300 K, volumetric: 1 L/s, concentrations: {A: 1 mol/L}}\nreactor: {type: pfr, volume: 0.2 m3, recycle: 3}\n",
            "t",
            &[],
        )
        .unwrap();
        let u = &units_of(&net)[0];
        let opts = SolveOptions::default();
        let e = recycle_loop(&net, u, &net.feed, 3.0, 0.0, &opts, 2).unwrap_err();
        match e {
            SolveError::Recycle(m) => assert!(m.contains("did not converge in 2 passes"), "{m}"),
            e => panic!("{e}"),
        }
        // With its passes it converges (Anderson mixing: a handful).
        let (_, _, run) =
            recycle_loop(&net, u, &net.feed, 3.0, 0.0, &opts, RECYCLE_MAX_ITERATIONS).unwrap();
        assert!(run.iterations < 30, "{}", run.iterations);
    }
}
