//! `rxnet compare`: alternative schemes and reactor types side by side.
//!
//! A flow study becomes another flow reactor at the same volume; a batch at the same space
//! time: t = τ = V/v0, charge N_j0 = F_j0 τ in a vessel of volume V (constant pressure for a
//! gas, matching the isobaric flow reactor). A batch becomes a flow reactor with v0 = V/t and
//! F_j0 = N_j0/t. A packed bed's rates are per catalyst mass, so it is compared only as itself.
//! With `--at-conversion X` every entry is resized to reach that conversion, so yields and
//! selectivities are compared at equal conversion.

use super::conversion::size_for_conversion;
use super::optimize::optimize_size;
use super::study::StudyError;
use super::target::Target;
use crate::model::{BatchMode, EnergyBalance, Heat, Network, Phase, Reactor};
use crate::solve::{self, SolveOptions};

/// A reactor type to screen.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Pfr,
    Cstr,
    Batch,
    /// N equal CSTRs in series of the same total volume.
    Cascade(usize),
}

/// Most tanks a `cascade:N` screen may have.
pub const MAX_CASCADE: usize = 200;

impl Kind {
    /// The reactor type's name, as `Reactor::kind` gives it (`cascade:N` for tanks in series).
    pub fn name(self) -> String {
        match self {
            Kind::Pfr => "pfr".into(),
            Kind::Cstr => "cstr".into(),
            Kind::Batch => "batch".into(),
            Kind::Cascade(n) => format!("cascade:{n}"),
        }
    }

    pub fn parse(s: &str) -> Result<Kind, String> {
        match s.trim() {
            "pfr" => Ok(Kind::Pfr),
            "cstr" => Ok(Kind::Cstr),
            "batch" => Ok(Kind::Batch),
            other => match other
                .strip_prefix("cascade:")
                .map(|n| n.trim().parse::<usize>())
            {
                Some(Ok(n)) if (2..=MAX_CASCADE).contains(&n) => Ok(Kind::Cascade(n)),
                Some(_) => Err(format!(
                    "`{other}`: a cascade is `cascade:N` with N from 2 to {MAX_CASCADE} equal tanks"
                )),
                None => Err(format!(
                    "`{other}` is not a reactor type to screen (pfr, cstr, batch, cascade:N)"
                )),
            },
        }
    }
}

/// What a study's row is called: its reactor type, a train's units joined by `+`, with the
/// contacting pattern of a vessel (`pfr+side feeds`, `batch+dosing`, ...).
pub fn label(net: &Network) -> String {
    if let Some(t) = &net.train {
        let kinds: Vec<&str> = t.units.iter().map(|u| u.reactor.kind()).collect();
        if kinds.iter().all(|k| *k == "cstr") {
            return format!("cascade:{}", kinds.len());
        }
        // Runs of one type compressed: `cstr*2+pfr`.
        let mut parts: Vec<(&str, usize)> = Vec::new();
        for k in kinds {
            match parts.last_mut() {
                Some((last, n)) if *last == k => *n += 1,
                _ => parts.push((k, 1)),
            }
        }
        return parts
            .iter()
            .map(|(k, n)| {
                if *n > 1 {
                    format!("{k}*{n}")
                } else {
                    k.to_string()
                }
            })
            .collect::<Vec<_>>()
            .join("+");
    }
    let c = &net.contacting;
    let mut s = net.reactor.kind().to_string();
    for (on, what) in [
        (!c.side_feeds.is_empty(), "side feeds"),
        (!c.distributed.is_empty(), "distributed feed"),
        (!c.membrane.is_empty(), "membrane"),
        (!c.dosing.is_empty(), "dosing"),
        (c.withdrawal.is_some(), "withdrawal"),
        (c.recycle.is_some(), "recycle"),
    ] {
        if on {
            s.push('+');
            s.push_str(what);
        }
    }
    s
}

/// Whether the study's contacting pattern is its own (a train with joins or bypasses, a vessel
/// with side, distributed or dosed streams, a membrane or a recycle): it is screened as itself,
/// beside the reactor types, not converted to them.
pub fn fixed_pattern(net: &Network) -> bool {
    !net.contacting.is_empty()
        || net.train.as_ref().is_some_and(|t| {
            t.units
                .iter()
                .any(|u| u.join.is_some() || u.bypass > 0.0 || !u.contacting.is_empty())
        })
}

/// A plain train (units in series, nothing joining or bypassing) as one vessel of its total
/// size with the first unit's heat model; refused when the units' heat models differ.
fn as_single_vessel(net: &Network) -> Result<Network, String> {
    let Some(t) = &net.train else {
        return Ok(net.clone());
    };
    if fixed_pattern(net) {
        return Err(
            "a train with joins, bypasses or side streams is screened only as itself".into(),
        );
    }
    let first = &t.units[0];
    if t.units.iter().any(|u| u.heat != first.heat) {
        return Err(
            "the train's units have different heat models: it is screened only as itself".into(),
        );
    }
    let mut n = net.clone();
    n.train = None;
    n.heat = first.heat.clone();
    let total = net.size();
    n.reactor = first.reactor.clone();
    // Every unit has the same heat model: the tanks' U·A add up; a tube's U·a per volume stays.
    if let Some(x) = n.heat_exchange_mut()
        && matches!(first.reactor, Reactor::Cstr { .. })
    {
        x.ua *= t.units.len() as f64;
    }
    Ok(n.with_size(total))
}

/// A single flow vessel as N equal tanks in series of the same total volume; heat exchange
/// moves with the volume (U·a per volume of a tube to U·A = U·a V/N per tank; a tank's U·A
/// split N ways).
fn as_cascade(net: &Network, n_tanks: usize) -> Result<Network, String> {
    let tank = as_reactor(net, Kind::Cstr)?;
    let Reactor::Cstr { volume } = tank.reactor else {
        unreachable!("as_reactor(Cstr) gives a CSTR")
    };
    let mut heat = tank.heat.clone();
    if let Heat::Balance(e) = &mut heat
        && let Some(x) = e.exchange.as_mut()
    {
        x.ua /= n_tanks as f64;
    }
    let units = (1..=n_tanks)
        .map(|k| crate::model::Unit {
            id: format!("T{k}"),
            reactor: Reactor::Cstr {
                volume: volume / n_tanks as f64,
            },
            heat: heat.clone(),
            contacting: Default::default(),
            join: None,
            bypass: 0.0,
        })
        .collect::<Vec<_>>();
    let mut out = tank;
    out.reactor = units[0].reactor.clone();
    out.heat = heat;
    out.train = Some(crate::model::Train { units });
    Ok(out)
}

/// The study with its reactor replaced by `kind` (see the module notes).
/// The heat model a screen runs a study with (`--heat`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HeatChoice {
    /// Held at the feed temperature.
    Isothermal,
    /// No heat exchange (the study's mixture heat capacity, if any, is kept).
    Adiabatic,
    /// As the study file says.
    AsGiven,
}

impl HeatChoice {
    pub fn parse(s: &str) -> Result<HeatChoice, String> {
        match s.trim() {
            "isothermal" => Ok(HeatChoice::Isothermal),
            "adiabatic" => Ok(HeatChoice::Adiabatic),
            "as-given" => Ok(HeatChoice::AsGiven),
            other => Err(format!(
                "unknown heat model `{other}`: use isothermal, adiabatic or as-given"
            )),
        }
    }

    /// The study with this heat model. An adiabatic screen of a study without heat
    /// capacities or heats of reaction fails at its entry with the missing data named.
    pub fn apply(self, net: &Network) -> Network {
        let mut n = net.clone();
        let change = |h: &Heat| -> Heat {
            match self {
                HeatChoice::Isothermal => Heat::Isothermal,
                HeatChoice::Adiabatic => Heat::Balance(EnergyBalance {
                    exchange: None,
                    mixture_cp: h.balance().and_then(|e| e.mixture_cp),
                }),
                HeatChoice::AsGiven => h.clone(),
            }
        };
        n.heat = change(&net.heat);
        // Every unit of a train.
        if let Some(t) = &mut n.train {
            for u in &mut t.units {
                u.heat = change(&u.heat);
            }
        }
        n
    }
}

pub fn as_reactor(net: &Network, kind: Kind) -> Result<Network, String> {
    if !net.contacting.is_empty() {
        return Err(format!("a {} is screened only as itself", label(net)));
    }
    if net.train.is_some() {
        let single = as_single_vessel(net)?;
        return as_reactor(&single, kind);
    }
    if let Kind::Cascade(n) = kind {
        return as_cascade(net, n);
    }
    let mut n = net.clone();
    // Heat exchange moves with the vessel: U·a per reactor volume along a tube is U·A = U·a·V
    // in total for a tank of the same volume (and back); a coolant stream is modelled along
    // a tube only.
    if let Some(x) = n.heat_exchange_mut() {
        let from_tube = matches!(net.reactor, Reactor::Pfr { .. });
        let to_tube = kind == Kind::Pfr;
        let volume = match net.reactor {
            Reactor::Pfr { volume } | Reactor::Cstr { volume } => volume,
            Reactor::Batch { volume, .. } if volume > 0.0 => volume,
            Reactor::Batch { .. } => net.feed.volumetric,
            Reactor::Pbr { .. } => 1.0,
        };
        if !to_tube && matches!(x.coolant, crate::model::Coolant::Stream { .. }) {
            return Err(format!(
                "a coolant stream along the wall is modelled for a tube; a {} needs a coolant temperature",
                kind.name()
            ));
        }
        if kind != Kind::Batch && matches!(x.coolant, crate::model::Coolant::Ramp { .. }) {
            return Err("a jacket ramp is modelled for a batch".into());
        }
        match (from_tube, to_tube) {
            (true, false) => x.ua *= volume,
            (false, true) => x.ua /= volume,
            _ => {}
        }
    }
    match (&net.reactor, kind) {
        (_, Kind::Cascade(_)) => unreachable!("handled above"),
        (Reactor::Pbr { .. }, _) => {
            return Err("a packed bed (rates per catalyst mass) is compared only as itself".into());
        }
        (Reactor::Pfr { volume } | Reactor::Cstr { volume }, Kind::Pfr) => {
            n.reactor = Reactor::Pfr { volume: *volume }
        }
        (Reactor::Pfr { volume } | Reactor::Cstr { volume }, Kind::Cstr) => {
            n.reactor = Reactor::Cstr { volume: *volume }
        }
        (Reactor::Pfr { volume } | Reactor::Cstr { volume }, Kind::Batch) => {
            let tau = volume / net.feed.volumetric;
            n.feed.amounts = net.feed.amounts.iter().map(|f| f * tau).collect();
            n.feed.volumetric = *volume;
            n.reactor = Reactor::Batch {
                volume: *volume,
                time: tau,
                mode: if net.phase == Phase::Gas {
                    BatchMode::ConstantPressure
                } else {
                    BatchMode::ConstantVolume
                },
            };
        }
        (Reactor::Batch { .. }, Kind::Batch) => {}
        (Reactor::Batch { volume, time, .. }, k) => {
            let v0 = net.feed.volumetric / time;
            n.feed.amounts = net.feed.amounts.iter().map(|a| a / time).collect();
            n.feed.volumetric = v0;
            let volume = if *volume > 0.0 {
                *volume
            } else {
                net.feed.volumetric
            };
            n.reactor = if k == Kind::Pfr {
                Reactor::Pfr { volume }
            } else {
                Reactor::Cstr { volume }
            };
        }
    }
    Ok(n)
}

/// One entry of a screen. Numbers in SI; each size is given with its variable and unit.
#[derive(Debug, Clone, serde::Serialize)]
pub struct CompareRow {
    pub file: String,
    pub study: String,
    pub reactor: String,
    /// "V", "W" or "t".
    pub size_variable: &'static str,
    /// "m3", "kg" or "s".
    pub size_unit: &'static str,
    /// V (m3), W (kg) or t (s) used.
    pub size: Option<f64>,
    /// τ = V/v0 of a PFR or CSTR, or t of a batch, s (None for a packed bed).
    pub space_time_s: Option<f64>,
    pub conversion: Option<f64>,
    pub desired: Option<String>,
    /// Yield of the desired product on the key reactant consumed (as `run` defines it).
    pub yield_desired: Option<f64>,
    /// Desired product formed over all other products formed together (molar), the target
    /// `selectivity:D/all`; `run`'s per-product S_D/U is the target `selectivity:D/U`.
    pub selectivity_over_all: Option<f64>,
    /// The ranking target as given, e.g. `selectivity:R/S`.
    pub rank_by: String,
    /// Its value. An amount target is ranked per amount of key reactant fed (F_B/F_A0 or
    /// N_B/N_A0, mol/mol), so that flow and batch entries share one unit.
    pub rank_value: Option<f64>,
    /// "1" (a ratio, or an amount per key fed).
    pub rank_unit: &'static str,
    /// The size that maximises the `--optimum` target (same variable and unit as `size`).
    pub optimum_size: Option<f64>,
    pub optimum_space_time_s: Option<f64>,
    pub optimum_value: Option<f64>,
    /// mol/s, mol or 1.
    pub optimum_unit: Option<&'static str>,
    /// Why there is no optimum size (e.g. the supremum is approached as the size goes to 0).
    pub optimum_note: Option<String>,
    /// With an energy balance: the hot spot, K, and whether it (or a batch's cooling-failure
    /// temperature) exceeds the study's T_max; an entry over the limit ranks after the others.
    pub hot_spot: Option<f64>,
    pub over_limit: bool,
    /// `isothermal`, `adiabatic` or `heat exchange`.
    pub heat: &'static str,
    /// The safety caution of the study (`safety::caution`): with an energy balance, or
    /// isothermal with an exothermic reaction; absent otherwise.
    pub caution: Option<&'static str>,
    pub error: Option<String>,
}

/// The options of one screen.
#[derive(Debug, Clone, Default)]
pub struct Screen<'a> {
    pub rank_by: &'a str,
    pub at_conversion: Option<f64>,
    pub optimum: Option<&'a str>,
    pub min_conversion: Option<f64>,
}

/// τ = V/v0 (PFR, CSTR) or t (batch), s; None for a packed bed. For a train or a tube with
/// side feeds v0 is every stream fed (the feed, the joins, the side feeds).
fn time_scale(n: &Network, size: f64) -> Option<f64> {
    let joined: f64 = n.train.as_ref().map_or(0.0, |t| {
        t.units
            .iter()
            .map(|u| {
                u.join.as_ref().map_or(0.0, |j| j.volumetric)
                    + u.contacting
                        .side_feeds
                        .iter()
                        .map(|s| s.stream.volumetric)
                        .sum::<f64>()
            })
            .sum()
    }) + n
        .contacting
        .side_feeds
        .iter()
        .map(|s| s.stream.volumetric)
        .sum::<f64>();
    match n.reactor {
        Reactor::Pfr { .. } | Reactor::Cstr { .. } => Some(size / (n.feed.volumetric + joined)),
        Reactor::Batch { .. } => Some(size),
        Reactor::Pbr { .. } => None,
    }
}

/// One entry of the screen: the network as `kind` (or as it is), run, measured.
pub fn evaluate(
    file: &str,
    net: &Network,
    kind: Option<Kind>,
    screen: &Screen,
    opts: &SolveOptions,
) -> CompareRow {
    let (xn, xu, _) = solve::reactor_axis(net);
    let mut row = CompareRow {
        file: file.to_string(),
        study: net.name.clone(),
        // The type asked for, so a row that fails still says which screen it was.
        reactor: kind.map_or_else(|| label(net), Kind::name),
        size_variable: xn,
        size_unit: xu,
        size: None,
        space_time_s: None,
        conversion: None,
        desired: net.desired.map(|d| net.species[d].name.clone()),
        yield_desired: None,
        selectivity_over_all: None,
        rank_by: screen.rank_by.to_string(),
        rank_value: None,
        rank_unit: "1",
        optimum_size: None,
        optimum_space_time_s: None,
        optimum_value: None,
        optimum_unit: None,
        optimum_note: None,
        hot_spot: None,
        over_limit: false,
        heat: net.heat_name(),
        caution: crate::safety::caution(net),
        error: None,
    };
    let result = (|| -> Result<(), String> {
        let mut n = match kind {
            Some(k) => as_reactor(net, k)?,
            None => net.clone(),
        };
        row.reactor = label(&n);
        let (xn, xu, _) = solve::reactor_axis(&n);
        row.size_variable = xn;
        row.size_unit = xu;
        if let Some(x) = screen.at_conversion {
            let s = size_for_conversion(&n, x, opts).map_err(|e| e.to_string())?;
            n = n.with_size(s);
        }
        row.size = Some(n.size());
        row.space_time_s = time_scale(&n, n.size());
        // Through the evaluation gate: the same checks as `run` for each entry.
        let ev = super::evaluate::evaluate(&n, opts, false).map_err(|e| e.to_string())?;
        let (fed, out) = (&ev.fed, &ev.left[..]);
        let m = &ev.metrics;
        row.conversion = Some(m.conversion);
        row.hot_spot = ev.heat.as_ref().map(|h| h.hot_spot.temperature);
        row.over_limit = ev.heat.as_ref().is_some_and(|h| h.exceeds_limit());
        if let Some(d) = n.desired {
            row.yield_desired = m
                .yields
                .iter()
                .find(|y| y.species == n.species[d].name)
                .and_then(|y| y.on_key);
            if !super::target::others(&n, d).is_empty() {
                row.selectivity_over_all = Target::SelectivityAll(d).value_against(&n, fed, out);
            }
        }
        let t = Target::parse(screen.rank_by, &n)?;
        row.rank_value = match t {
            Target::Amount(j) => Some(out[j] / fed[n.key]),
            _ => t.value_against(&n, fed, out),
        };
        if let Some(o) = screen.optimum {
            let t = Target::parse(o, &n)?;
            row.optimum_unit = Some(super::optimize::value_unit(&n, &t));
            match optimize_size(&n, &t, 0.0, n.size(), screen.min_conversion, opts) {
                Ok(best) => {
                    row.optimum_size = Some(best.size);
                    row.optimum_space_time_s = time_scale(&n, best.size);
                    row.optimum_value = Some(best.value);
                }
                Err(StudyError::Infeasible(m)) => row.optimum_note = Some(m),
                Err(e) => return Err(e.to_string()),
            }
        }
        Ok(())
    })();
    if let Err(e) = result {
        row.error = Some(e);
    }
    row
}

/// Rank rows by their target value, best first; rows over the process limit T_max after the
/// others, and rows without a value last.
pub fn rank(rows: &mut [CompareRow]) {
    rows.sort_by(|a, b| match (a.rank_value, b.rank_value) {
        (Some(_), Some(_)) if a.over_limit != b.over_limit => a.over_limit.cmp(&b.over_limit),
        (Some(x), Some(y)) => y.total_cmp(&x),
        (Some(_), None) => std::cmp::Ordering::Less,
        (None, Some(_)) => std::cmp::Ordering::Greater,
        (None, None) => std::cmp::Ordering::Equal,
    });
}
